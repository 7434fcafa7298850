package rank

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// modelErrorLog is σ_model for pool sizes and fluxes, on the ln scale: the
// model's structural error for a relative change (common practice; chosen
// to match the 0.5 ‰ default's share of a typical δ shift).
const modelErrorLog = 0.25

// Knob kinds are applied in this order: factors, then the uptake share
// (which rescales what the factors left), then new inputs.
var knobOrder = map[string]int{rules.KnobScale: 0, rules.KnobNitrateShare: 1, rules.KnobSource: 2}

// knob is a candidate compiled against a site.
type knob struct {
	cand     *rules.Candidate
	kind     string
	procs    []string
	source   string
	pool     int
	ax       axis
	baseline float64 // no-change magnitude
}

// worker holds one goroutine's workspaces.
type worker struct {
	model *forward.Model
	p     forward.Params
	x     forward.State
}

func newWorker(site *forward.Site) *worker { return &worker{model: forward.NewModel(site)} }

// engine scores the candidates of one comparison.
type engine struct {
	site  *forward.Site
	kb    *knowledge.Base
	set   *rules.Set
	cmp   *study.Comparison
	opt   Options
	ctx   rules.Context
	draws []draw
	logw  []float64 // ln of the normalised draw weights
	needO bool
	// observed observables, their shifts and variances.
	obs      []forward.Observable
	shift    []float64
	variance []float64
	// per draw: baseline state and baseline value of each observed observable
	base     []forward.State
	baseVals [][]float64
	warnings []string
	// siteCertain is set when no site parameter is drawn (every ε fixed or
	// fixed by knowledge, no rate spreads, no drawn input δ): all draws then
	// share one baseline and only source candidates need more than draw 0.
	siteCertain bool
}

// siteIsCertain reports whether the nuisance draws leave the site itself
// unchanged.
func (e *engine) siteIsCertain() bool {
	s := e.site
	for _, t := range s.Transfers {
		eff, _ := e.kb.Effect(t.Process)
		if t.Spread > 0 || (!t.EpsilonFixed && eff.RangePermil[1] > eff.RangePermil[0]) {
			return false
		}
		if e.needO && t.From == s.PoolIndex("nitrate") && !t.Epsilon18Fixed && eff.D18ORatio != nil && eff.D18ORatioRange[1] > eff.D18ORatioRange[0] && t.Epsilon != 0 {
			return false
		}
	}
	for _, in := range s.Inputs {
		if in.Source != "" && !in.D15NFixed {
			return false
		}
		if e.needO && in.Source != "" && !in.D18OFixed && s.Pools[in.To] == "nitrate" {
			return false
		}
	}
	return !(e.needO && !s.NitrificationD18OFixed)
}

// drawsFor returns how many draws a hypothesis uses: only the nominal one
// when the site is certain and no knob draws a source δ; otherwise all of
// them, at most pairDraws for a pair.
func (e *engine) drawsFor(knobs []*knob) int {
	n := len(e.draws)
	if len(knobs) > 1 {
		n = min(n, pairDraws)
	}
	if !e.siteCertain {
		return n
	}
	for _, k := range knobs {
		if k.kind == rules.KnobSource {
			return n
		}
	}
	return 1
}

func (e *engine) warnf(format string, args ...any) {
	e.warnings = append(e.warnings, fmt.Sprintf(format, args...))
}

// compile turns a candidate into a knob for this site (with the quadrature
// of a single candidate, or of one axis of a pair), or says why it cannot be
// tested here.
func (e *engine) compile(c *rules.Candidate, pair bool) (*knob, string) {
	k := &knob{cand: c, kind: c.Knob.Kind, procs: c.Knob.Processes, source: c.Source}
	s := e.site
	for _, n := range c.Needs {
		switch n {
		case "fungi":
			if s.PoolIndex("fungi") < 0 {
				return nil, "the site has no fungi pool"
			}
		case "uptake-forms":
			if !hasProcess(s, "uptake-ammonium") || !hasProcess(s, "uptake-nitrate") {
				return nil, "the site lacks uptake of both ammonium and nitrate"
			}
		}
	}
	switch k.kind {
	case rules.KnobScale:
		if !slices.ContainsFunc(k.procs, func(p string) bool { return hasProcess(s, p) }) {
			return nil, fmt.Sprintf("the site has no %s transfer", strings.Join(k.procs, " or "))
		}
		k.baseline = 1
	case rules.KnobNitrateShare:
		p := s.Params()
		k.baseline = p.NitrateShare(s)
	case rules.KnobSource:
		src, _ := e.kb.Source(c.Source)
		k.pool = s.PoolIndex(src.Pool)
		if k.pool < 0 {
			return nil, fmt.Sprintf("the site has no %s pool for this source", src.Pool)
		}
		for _, a := range e.cmp.Additions {
			if a.Source == c.Source {
				k.ax = fixedAxis(a.RateKgPerHaYr)
				return k, ""
			}
		}
	default:
		return nil, ""
	}
	fine := fine1
	if pair {
		fine = fine2
	}
	k.ax = newAxis(c.Magnitude, nodesFor(c.Magnitude, pair), fine)
	return k, ""
}

func hasProcess(s *forward.Site, proc string) bool {
	return slices.ContainsFunc(s.Transfers, func(t forward.Transfer) bool { return t.Process == proc && t.RateKgPerHaYr > 0 })
}

// apply sets the knobs at magnitudes theta on a copy of draw d's parameters
// held in w.p.
func (e *engine) apply(w *worker, d int, knobs []*knob, theta []float64) error {
	w.p.CopyFrom(&e.draws[d].params)
	for _, kind := range []string{rules.KnobScale, rules.KnobNitrateShare, rules.KnobSource} {
		for i, k := range knobs {
			if k.kind != kind {
				continue
			}
			switch kind {
			case rules.KnobScale:
				for _, proc := range k.procs {
					w.p.Scale(e.site, proc, theta[i])
				}
			case rules.KnobNitrateShare:
				if err := w.p.SetNitrateShare(e.site, theta[i]); err != nil {
					return err
				}
			case rules.KnobSource:
				d18o, ok := e.draws[d].srcD18O[k.source]
				if !ok {
					d18o = w.p.NitrificationD18O
				}
				w.p.AddInput(k.pool, theta[i], e.draws[d].srcD15N[k.source], d18o)
			}
		}
	}
	return nil
}

// run computes the changed state for knobs at theta under draw d into w.x.
func (e *engine) run(w *worker, d int, knobs []*knob, theta []float64, withO bool) error {
	if err := e.apply(w, d, knobs, theta); err != nil {
		return err
	}
	if e.cmp.Years != nil {
		return w.model.Advance(&w.p, &e.base[d], *e.cmp.Years, withO, &w.x)
	}
	return w.model.Steady(&w.p, withO, &w.x)
}

// predict writes the predicted shifts of the observed observables; a state
// the model cannot produce gives NaN.
func (e *engine) predict(w *worker, d int, knobs []*knob, theta []float64, out []float64) {
	if err := e.run(w, d, knobs, theta, e.needO); err != nil {
		for i := range out {
			out[i] = math.NaN()
		}
		return
	}
	for i, o := range e.obs {
		out[i] = o.Shift(e.baseVals[d][i], o.Value(&w.x, &w.p))
	}
}

// setup makes the draws, baselines and weights.
func (e *engine) setup(w *worker, seedStream uint64) error {
	e.needO = false
	for _, o := range e.cmp.Observed {
		bound, err := e.site.Observable(o.Observable)
		if err != nil {
			return err
		}
		e.obs = append(e.obs, bound)
		e.shift = append(e.shift, o.Shift)
		sm := e.opt.ModelError
		if o.LogRatio {
			sm = modelErrorLog
		}
		e.variance = append(e.variance, o.SE*o.SE+sm*sm)
		e.needO = e.needO || bound.Kind == forward.KindDelta18
	}
	rng := newRand(e.opt.Seed, seedStream, 0)
	e.draws = makeDraws(e.site, e.kb, e.cmp, e.opt.Draws, rng)
	n := len(e.draws)
	e.base = make([]forward.State, n)
	e.baseVals = make([][]float64, n)
	logw := make([]float64, n)
	bestMismatch := math.Inf(1)
	var worstName string
	var worstDiff float64
	for d := range e.draws {
		p := &e.draws[d].params
		if err := w.model.Steady(p, true, &e.base[d]); err != nil {
			if d == 0 {
				return err
			}
			logw[d] = math.Inf(-1)
			e.baseVals[d] = make([]float64, len(e.obs))
			continue
		}
		vals := make([]float64, len(e.obs))
		var mismatch float64
		name, diff := "", 0.0
		for i, o := range e.obs {
			vals[i] = o.Value(&e.base[d], p)
			c := e.cmp.Observed[i].Control
			var z float64
			if o.LogRatio() {
				z = math.Log(c.Mean/vals[i]) / math.Hypot(c.SE()/c.Mean, levelSDLog)
			} else {
				z = (c.Mean - vals[i]) / math.Hypot(c.SE(), levelSDPermil)
			}
			if math.IsNaN(z) {
				z = math.Inf(1)
			}
			logw[d] -= 0.5 * z * z
			if math.Abs(z) > mismatch {
				mismatch, name, diff = math.Abs(z), o.Name, c.Mean-vals[i]
			}
		}
		e.baseVals[d] = vals
		if mismatch < bestMismatch {
			bestMismatch, worstName, worstDiff = mismatch, name, diff
		}
	}
	e.siteCertain = e.siteIsCertain()
	e.logw = make([]float64, n)
	for d, v := range drawWeights(logw) {
		e.logw[d] = math.Log(v)
	}
	if bestMismatch > 3 {
		unit := "‰"
		if forward.LogRatioName(worstName) {
			unit = " (ln ratio)"
		}
		e.warnf("the control's absolute %s differs from the %s site model by %+.1f%s even in the closest draw: the model is used for shifts, but its baseline is not this site's; consider a site file fitted to it", worstName, e.site.ID, worstDiff, unit)
	}
	for _, p := range e.site.Warnings {
		e.warnf("%s", p)
	}
	return nil
}
