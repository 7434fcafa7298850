package rank

import (
	"fmt"
	"math"
	"slices"
	"sync"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// modelErrorLog is σ_model for pool sizes and fluxes, on the ln scale: the
// model's structural error for a relative change (common practice; chosen
// to match the 0.5 ‰ default's share of a typical δ shift).
const modelErrorLog = 0.25

// kindDuration is the pseudo-knob of a pulse: its magnitude is the pulse's
// duration in years, and it ends the response of the knobs before it.
const kindDuration = "duration"

// Pulse durations: log-uniform from half a year to twenty years (DESIGN §4).
const (
	pulseMinYears = 0.5
	pulseMaxYears = 20
)

// knob is a candidate response compiled against a site.
type knob struct {
	cand *rules.Candidate
	kind string
	// fk is the forward knob with its value unset (shares, fixation); nil
	// for a source.
	fk *forward.Knob
	// source and its receiving pools (source candidates).
	source string
	parts  []sourcePart
	ax     axis
	// baseline is the no-change magnitude on the nominal site (a share, the
	// fixation rate; 0 for a source); baseD is the baseline share in each
	// draw, so that a share moves by the same logit step in every draw.
	baseline float64
	baseD    []float64
	// fluxJ are the transfers whose flux the magnitude implies.
	fluxJ []int
}

type sourcePart struct {
	pool  int
	share float64
	name  string // pool name, for the draws' δ
}

// worker holds one goroutine's workspaces.
type worker struct {
	model  *forward.Model
	run    forward.Run
	change forward.Change
	mods   []forward.Mod
	x      forward.State
}

func newWorker(site *forward.Site) *worker { return &worker{model: forward.NewModel(site)} }

// part is one comparison of a unit: a single comparison, or one member of
// a series explained jointly with the others (DESIGN §6).
type part struct {
	cmp *study.Comparison
	tr  forward.Treatment
	// scale is the dose level relative to the series' largest (1 outside a
	// dose series): the share change of a response scales with it.
	scale float64
	// lo and hi delimit its observables in the engine's lists.
	lo, hi int
}

// engine scores the candidate responses of one unit (a comparison or a
// series).
type engine struct {
	site  *forward.Site
	kb    *knowledge.Base
	set   *rules.Set
	parts []part
	opt   Options
	ctx   rules.Context
	draws []draw
	logw  []float64 // ln of the normalised draw weights
	// logwBy keeps logwFor's renormalised prefixes of logw by length
	// (hypotheses are scored in parallel, hence the lock).
	logwMu sync.Mutex
	logwBy map[int][]float64
	needO  bool
	// treated is set when a part's treatment acts on the model.
	treated bool
	// stream seeds this unit's random streams.
	stream uint64
	// fit is the site fitted to the controls (nil when not fitted);
	// siteWarnings are the study's site file's own warnings.
	fit          *SiteFit
	siteWarnings []string
	// trs are the parts' treatments and lhs the stratified design the
	// draws come from (kept so that grow can add draws).
	trs []forward.Treatment
	lhs *stratified
	// rawLogW are the draws' log-likelihoods of the control levels, before
	// tempering; the closest draw's worst mismatch is kept for a warning.
	rawLogW                 []float64
	bestMismatch, worstDiff float64
	worstName               string
	// pc holds coarse predictions by hypothesis id across rounds of draws,
	// shared by the units of one design (key).
	pc  *predCache
	key string
	// levels writes the control levels that weight the draws (setup):
	// what a cached quantity depending on the weights is keyed by too,
	// since without a site fit the design key does not hold them.
	levels string
	// prev holds every hypothesis scored in the previous round, reused
	// where it would take the same draws again; settled names those whose
	// posterior was too small to matter to the Monte Carlo error of the
	// leading ones: later rounds reuse them instead of adding draws.
	prev    map[string]*scored
	settled map[string]bool
	// lead holds the draws given to pairs and pulses whose Monte Carlo
	// error kept a leading posterior above target (leadPairs), instead of
	// pairDraws.
	lead map[string]int
	// observed observables of every part, their shifts and variances.
	obs      []forward.Observable
	observed []study.Observed
	shift    []float64
	variance []float64
	// per draw: baseline state and baseline value of each observed observable
	base     []forward.State
	baseVals [][]float64
	warnings []string
	// siteCertain is set when no site parameter or forcing size is drawn:
	// all draws then share one baseline and only source candidates need
	// more than draw 0.
	siteCertain bool
}

// siteIsCertain reports whether the nuisance draws leave the site and the
// treatment unchanged.
func (e *engine) siteIsCertain() bool {
	if e.treated {
		return false
	}
	s := e.site
	for _, t := range s.Transfers {
		eff := t.Effect
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

// drawsFor returns how many draws hypothesis id uses: only the nominal one
// when the site is certain and no knob draws a source δ; otherwise all of
// them, at most pairDraws for a pair or pulse (two axes) unless leadPairs
// gave it more (e.lead, at most maxLeadDraws), and at
// most the larger of Options.MaxDraws and Options.Draws for any hypothesis
// with a magnitude (the treatment alone, one forward run per draw, may use
// every draw: see treatmentAloneDraws).
func (e *engine) drawsFor(id string, knobs []*knob) int {
	n := len(e.draws)
	if len(knobs) > 0 {
		n = min(n, max(e.opt.MaxDraws, e.opt.Draws))
	}
	if len(knobs) > 1 {
		n = min(n, max(pairDraws, e.lead[id]))
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

// routes lists every transfer the candidates and the treatment may turn on.
func routes(site *forward.Site, kb *knowledge.Base, set *rules.Set, tr forward.Treatment) []forward.Route {
	out := forward.TreatmentRoutes(site, kb, tr)
	for i := range set.Candidates {
		out = append(out, ResponseRoutes(&set.Candidates[i])...)
	}
	return out
}

// forwardKnob maps a candidate's knob kind to the model's.
var forwardKnob = map[string]forward.KnobKind{
	rules.KnobShare:         forward.KnobShare,
	rules.KnobNitrateShare:  forward.KnobNitrateShare,
	rules.KnobTransferRatio: forward.KnobTransferRatio,
	rules.KnobRoute:         forward.KnobRoute,
	rules.KnobFixation:      forward.KnobFixation,
}

// compile turns a candidate into a knob for this site (with the quadrature
// of a single candidate, or of one axis of a pair), or says why it cannot be
// tested here.
func (e *engine) compile(c *rules.Candidate, pair bool) (*knob, string) {
	k := &knob{cand: c, kind: c.Knob.Kind, source: c.Source}
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
	m := c.Magnitude
	lo, hi := m.Min, m.Max
	switch k.kind {
	case rules.KnobSource:
		src, _ := e.kb.Source(c.Source)
		for _, p := range src.Parts {
			i := s.PoolIndex(p.Pool)
			if i < 0 {
				return nil, fmt.Sprintf("the site has no %s pool for this source", p.Pool)
			}
			k.parts = append(k.parts, sourcePart{pool: i, share: p.Share, name: p.Pool})
		}
	case rules.KnobShare, rules.KnobNitrateShare, rules.KnobTransferRatio, rules.KnobRoute, rules.KnobFixation:
		fk := responseKnob(s, e.kb, c)
		forward.PrepareKnob(s, &fk)
		k.fluxJ = forward.KnobTransfers(s, fk)
		if k.kind == rules.KnobShare && len(k.fluxJ) == 0 {
			return nil, "the site has no transfer for it"
		}
		k.fk = &fk
		k.baseline = forward.KnobValue(s, &e.draws[0].params, fk)
		if rules.IsShare(k.kind) {
			k.baseD = e.pc.baselines(c.ID, len(e.draws), func(d int) float64 {
				return forward.KnobValue(s, &e.draws[d].params, fk)
			})
		}
		switch c.Direction {
		case rules.More:
			lo = math.Max(k.baseline, m.Min)
		case rules.Less:
			hi = k.baseline
		}
		if !(hi > lo*(1+1e-6)) {
			if c.Direction == rules.More {
				return nil, fmt.Sprintf("its baseline %s is already at the largest value considered (%s)", fmtShare(k.baseline, k.kind), fmtShare(m.Max, k.kind))
			}
			return nil, fmt.Sprintf("its baseline %s is already at the smallest value considered (%s)", fmtShare(k.baseline, k.kind), fmtShare(m.Min, k.kind))
		}
	default:
		return nil, ""
	}
	k.ax = newAxis(m.Prior, lo, hi, nodesFor(m.Prior, pair), fineFor(pair))
	return k, ""
}

func fmtShare(v float64, kind string) string {
	if rules.IsShare(kind) {
		return fmt.Sprintf("%.3g %%", 100*v)
	}
	return fmt.Sprintf("%.3g kg N/ha/yr", v)
}

func hasProcess(s *forward.Site, proc string) bool {
	return slices.ContainsFunc(s.Transfers, func(t forward.Transfer) bool { return t.Process == proc && t.RateKgPerHaYr > 0 })
}

// shareInDraw moves a nominal share θ to draw d: the same step in logit
// from the draw's own baseline as from the nominal baseline, so that a
// response keeps its direction in every draw.
func (k *knob) shareInDraw(theta float64, d int) float64 {
	b0, bd := k.baseline, k.baseD[d]
	if !(b0 > 0 && b0 < 1 && bd > 0 && bd < 1) {
		return theta
	}
	return logistic(logit(theta) - logit(b0) + logit(bd))
}

// changeFor writes into w.change the treatment of part pi in draw d with
// the knobs at magnitudes theta added as a response: sustained, or a pulse
// ending at the duration knob's value; scaled by the part's dose level.
func (e *engine) changeFor(w *worker, d, pi int, knobs []*knob, theta []float64) {
	f := &e.draws[d].forcing[pi]
	scale := e.parts[pi].scale
	w.mods = append(w.mods[:0], f.Mods...)
	if len(knobs) > 0 {
		mod := forward.Mod{Start: 0, End: math.Inf(1)}
		for i, k := range knobs {
			switch k.kind {
			case kindDuration:
				mod.End = theta[i]
			case rules.KnobSource:
				for _, p := range k.parts {
					ds := e.draws[d].srcDelta[k.source+"/"+p.name]
					mod.Inputs = append(mod.Inputs, forward.InputParam{To: p.pool, RateKgPerHaYr: scale * theta[i] * p.share, D15N: ds[0], D18O: ds[1]})
				}
			default:
				fk := *k.fk
				v, b := theta[i], k.baseline
				if k.baseD != nil {
					v, b = k.shareInDraw(theta[i], d), k.baseD[d]
				}
				fk.Value = b + scale*(v-b)
				mod.Knobs = append(mod.Knobs, fk)
			}
		}
		w.mods = append(w.mods, mod)
	}
	w.change = forward.Change{Moves: f.Moves, Mods: w.mods}
}

// run computes the state of part pi at its horizon for knobs at theta under
// draw d into w.x; the parameters then in force are w.run.Final().
func (e *engine) run(w *worker, d, pi int, knobs []*knob, theta []float64, withO bool) error {
	return e.runTo(w, d, pi, knobs, theta, withO, e.parts[pi].cmp.Years)
}

// runTo is run to the time years after the treatment began (the new
// steady state when years is nil).
func (e *engine) runTo(w *worker, d, pi int, knobs []*knob, theta []float64, withO bool, years *float64) error {
	e.changeFor(w, d, pi, knobs, theta)
	p := &e.draws[d].params
	if years != nil {
		return w.run.Advance(w.model, p, &w.change, &e.base[d], *years, withO, &w.x)
	}
	return w.run.Steady(w.model, p, &w.change, withO, &w.x)
}

// predict writes the predicted shifts of the observed observables of every
// part; a state the model cannot produce gives NaN.
func (e *engine) predict(w *worker, d int, knobs []*knob, theta []float64, out []float64) {
	for pi, pt := range e.parts {
		if err := e.run(w, d, pi, knobs, theta, e.needO); err != nil {
			for i := pt.lo; i < pt.hi; i++ {
				out[i] = math.NaN()
			}
			continue
		}
		p := w.run.Final()
		for i := pt.lo; i < pt.hi; i++ {
			out[i] = e.obs[i].Shift(e.baseVals[d][i], e.obs[i].Value(&w.x, p))
		}
	}
}

// durationKnob is the pulse duration of a response.
func durationKnob(c *rules.Candidate, pair bool) *knob {
	return &knob{cand: c, kind: kindDuration, ax: newAxis(rules.PriorLogUniform, pulseMinYears, pulseMaxYears, nodesFor(rules.PriorLogUniform, pair), fineFor(pair))}
}

// setup makes the draws, baselines and weights.
func (e *engine) setup(w *worker, seedStream uint64) error {
	e.needO = false
	var trs []forward.Treatment
	for pi := range e.parts {
		pt := &e.parts[pi]
		pt.lo = len(e.obs)
		for _, o := range pt.cmp.Observed {
			bound, err := e.site.Observable(o.Observable)
			if err != nil {
				return err
			}
			e.obs = append(e.obs, bound)
			e.observed = append(e.observed, o)
			e.shift = append(e.shift, o.Shift)
			sm := e.opt.ModelError
			if o.LogRatio {
				sm = modelErrorLog
			}
			e.variance = append(e.variance, o.SE*o.SE+sm*sm)
			e.needO = e.needO || bound.Kind == forward.KindDelta18
		}
		pt.hi = len(e.obs)
		trs = append(trs, pt.tr)
	}
	e.stream = seedStream
	e.trs = trs
	e.lhs = newStratified(e.opt.Seed, seedStream, e.opt.FirstDraws)
	if err := e.grow(w, e.opt.Draws); err != nil {
		return err
	}
	// The closest draw's worst mismatch with the control, over the first
	// draws (more draws only refine it).
	if e.bestMismatch > 3 {
		unit := "‰"
		if forward.LogRatioName(e.worstName) {
			unit = " (ln ratio)"
		}
		e.warnf("the control's absolute %s differs from the %s site model by %+.1f%s even in the closest draw: the model is used for shifts, but its baseline is not this site's; consider a site file fitted to it", e.worstName, e.site.ID, e.worstDiff, unit)
	}
	for _, p := range e.siteWarnings {
		e.warnf("%s", p)
	}
	return nil
}

// grow extends the draws to n: the new draws, their baselines and baseline
// values, and the weights of all draws (the tempering depends on all).
func (e *engine) grow(w *worker, n int) error {
	from := len(e.draws)
	if n <= from {
		return nil
	}
	ds, err := e.pc.drawsFor(from, n, func(from, to int) ([]draw, error) {
		return makeDraws(e.site, e.kb, e.trs, from, to, e.lhs)
	})
	if err != nil {
		return err
	}
	e.draws = append(e.draws, ds...)
	e.base = append(e.base, make([]forward.State, n-from)...)
	e.baseVals = append(e.baseVals, make([][]float64, n-from)...)
	e.rawLogW = append(e.rawLogW, make([]float64, n-from)...)
	if from == 0 {
		e.bestMismatch = math.Inf(1)
	}
	for d := from; d < n; d++ {
		p := &e.draws[d].params
		if err := w.model.Steady(p, true, &e.base[d]); err != nil {
			if d == 0 {
				return err
			}
			e.rawLogW[d] = math.Inf(-1)
			e.baseVals[d] = make([]float64, len(e.obs))
			continue
		}
		vals := make([]float64, len(e.obs))
		var mismatch float64
		name, diff := "", 0.0
		for i, o := range e.obs {
			vals[i] = o.Value(&e.base[d], p)
			if e.observed[i].NoLevels() {
				continue
			}
			c := e.observed[i].Control
			var z float64
			if o.LogRatio() {
				z = math.Log(c.Mean/vals[i]) / math.Hypot(c.SE()/c.Mean, levelSDLog)
			} else {
				z = (c.Mean - vals[i]) / math.Hypot(c.SE(), levelSDPermil)
			}
			if math.IsNaN(z) {
				z = math.Inf(1)
			}
			e.rawLogW[d] -= 0.5 * z * z
			if math.Abs(z) > mismatch {
				mismatch, name, diff = math.Abs(z), o.Name, c.Mean-vals[i]
			}
		}
		e.baseVals[d] = vals
		if mismatch < e.bestMismatch {
			e.bestMismatch, e.worstName, e.worstDiff = mismatch, name, diff
		}
	}
	e.siteCertain = e.siteIsCertain()
	e.logw = make([]float64, n)
	e.logwBy = nil
	for d, v := range drawWeights(e.rawLogW) {
		e.logw[d] = math.Log(v)
	}
	return nil
}

// ResponseRoutes are the transfers a candidate may turn on that a site can
// lack (add them with forward.Site.WithRoutes before ResponseMod).
func ResponseRoutes(c *rules.Candidate) []forward.Route {
	var out []forward.Route
	for _, r := range c.Routes {
		out = append(out, forward.Route{Process: r.Process, From: r.From, To: r.To, FallbackTo: r.Fallback})
	}
	return out
}

// ResponseMod returns the sustained modification a candidate makes at
// magnitude value on the site: a share (or transfer ratio, nitrate share,
// route share) set to value, the fixation input set to value kg N/ha/yr,
// or an undeclared source entering at value kg N/ha/yr at its typical δ.
// It is how `simulate --change CANDIDATE=VALUE` applies a candidate, the
// same mapping explain uses on the nominal site.
func ResponseMod(site *forward.Site, kb *knowledge.Base, c *rules.Candidate, value float64) (forward.Mod, error) {
	mod := forward.Mod{Start: 0, End: math.Inf(1), Label: c.Label}
	switch c.Knob.Kind {
	case rules.KnobSource:
		ins, err := forward.SourceInputs(site, kb, c.Source, value)
		if err != nil {
			return mod, err
		}
		mod.Inputs = ins
	case rules.KnobNone:
		return mod, fmt.Errorf("%s changes nothing", c.ID)
	default:
		fk := responseKnob(site, kb, c)
		fk.Value = value
		mod.Knobs = []forward.Knob{fk}
	}
	return mod, nil
}

// responseKnob is the model knob a (non-source) candidate turns, value unset;
// a fixation knob adds its N to the fixation source's pool on a site that
// has no fixation input.
func responseKnob(site *forward.Site, kb *knowledge.Base, c *rules.Candidate) forward.Knob {
	fk := forward.Knob{Kind: forwardKnob[c.Knob.Kind], Processes: c.Knob.Processes, From: c.Knob.From}
	if c.Knob.Kind == rules.KnobFixation {
		src, _ := kb.Source(forward.FixationSource)
		if to := site.PoolIndex(src.Pool); to >= 0 {
			fk.Input = &forward.InputParam{To: to, D15N: src.D15NPermil}
		}
	}
	return fk
}
