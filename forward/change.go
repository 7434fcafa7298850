package forward

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"nlens/knowledge"
)

// Change is the one description of what happens to a site from t = 0
// (DESIGN §3–4): one-off moves of N at t = 0 (harvest export, combustion,
// slash left on the ground) and modifications of rates and inputs, each
// active over a window of time. A sustained response is a modification
// from 0 to +Inf; a pulse of D years is one from 0 to D, after which the
// baseline rates return. rank, simulate and the tests all apply changes
// through this type.
type Change struct {
	Moves []Move
	Mods  []Mod
}

// Move takes a share of a pool at t = 0 to another pool or out of the site.
type Move struct {
	From string // pool name
	To   string // pool name, or "out"
	// Share is the fraction of the pool's N moved, 0–1.
	Share float64
	// EpsilonPermil is the isotope effect of the move: 0 moves both
	// isotopes in proportion; otherwise the N left behind follows the
	// closed-system Rayleigh law (Mariotti et al. 1981) and the moved N
	// carries the complement.
	EpsilonPermil float64
	Label         string
}

// Mod is a set of knobs and extra inputs active from Start to End years
// (End = +Inf: to the end).
type Mod struct {
	Start, End float64
	Knobs      []Knob
	Inputs     []InputParam
	Label      string
}

// KnobKind is what a knob changes.
type KnobKind int

// Knob kinds. Within one piece of time they are applied in this order,
// whatever the order of the mods: shares (computed from the baseline
// parameters, DESIGN §4), then the redistributions (nitrate share of
// uptake, fungal transfer ratio, mycorrhizal route) on the result, then
// factors and the fixation input.
const (
	// KnobShare sets the share s of the donor pools' outflow taken by the
	// processes: their combined flux becomes s/(1−s) times the baseline
	// flux of every other outflow of the same pools (at the file's pool
	// sizes); with one donor this is k_P = s/(1−s)·Σ k_other (DESIGN §4).
	// The new flux is spread over the processes' transfers in proportion to
	// their baseline fluxes, or by Weights, or equally when all are zero.
	KnobShare KnobKind = iota
	// KnobNitrateShare sets the share of plant uptake (uptake-ammonium plus
	// uptake-nitrate) taken as nitrate, total uptake kept.
	KnobNitrateShare
	// KnobTransferRatio sets Tr, the share of the fungal pool's outflow
	// passed to the host (mycorrhizal-transfer), total fungal outflow kept.
	KnobTransferRatio
	// KnobRoute sets the share of the plant's N supply (direct uptake plus
	// mycorrhizal transfer) that arrives through fungi, total supply kept:
	// the fungal route (mycorrhizal-uptake, mycorrhizal-transfer,
	// fungal-turnover) and direct uptake are rescaled in opposite
	// directions.
	KnobRoute
	// KnobFactor multiplies the rate constants of the processes.
	KnobFactor
	// KnobFixation sets the biological N fixation input to Value kg N/ha/yr
	// (the site's fixation inputs rescaled, or one added to the fixation
	// source's pool).
	KnobFixation
)

var knobNames = map[KnobKind]string{KnobShare: "share", KnobNitrateShare: "nitrate-share", KnobTransferRatio: "transfer-ratio", KnobRoute: "route", KnobFactor: "factor", KnobFixation: "fixation"}

func (k KnobKind) String() string { return knobNames[k] }

// Knob is one change of rates.
type Knob struct {
	Kind      KnobKind
	Processes []string
	// From restricts the knob to transfers leaving this pool ("" for all).
	From    string
	Value   float64
	Weights []float64
	// Input is where a fixation knob adds N on a site that has no fixation
	// input of its own (its rate is replaced by Value).
	Input *InputParam
	// Transfers caches the transfers a share or factor knob acts on
	// (Processes leaving From) for one site; PrepareKnob fills it, and a
	// knob without it looks them up on every application.
	Transfers []int
}

// PrepareKnob fills k.Transfers for site s, so that applying the knob many
// times (one per draw and magnitude) does not search the transfers by name
// each time. The knob must then be applied to s only.
func PrepareKnob(s *Site, k *Knob) {
	if k.Kind == KnobShare || k.Kind == KnobFactor {
		k.Transfers = transfers(s, k.Processes, k.From)
	}
}

// knobTransfers is k.Transfers, or the lookup when it was not prepared.
// Every use of a share or factor knob's transfers goes through it.
func knobTransfers(s *Site, k Knob) []int {
	if k.Transfers != nil {
		return k.Transfers
	}
	return transfers(s, k.Processes, k.From)
}

// Processes of the plant-supply and fungal knobs.
const (
	procUptakeAmmonium = "uptake-ammonium"
	procUptakeNitrate  = "uptake-nitrate"
	procMycUptake      = "mycorrhizal-uptake"
	procMycTransfer    = "mycorrhizal-transfer"
	procFungalTurnover = "fungal-turnover"
	// FixationSource is the knowledge source of biological N fixation.
	FixationSource = "biological-fixation"
)

// Route is where a process runs when a site lacks it: a change that needs
// it adds a transfer at rate 0 along this route (with the knowledge ε).
type Route struct {
	Process  string
	From, To string
	// FallbackTo is used when To is not a pool of the site ("" for none).
	FallbackTo string
}

// WithRoutes returns the site with a zero-rate ("latent") transfer added
// for each route whose process does not yet leave its From pool, so that a
// change can turn it on. Routes whose From pool the site lacks are skipped. The
// result shares nothing mutable with s; s itself is returned when nothing
// is added.
func (s *Site) WithRoutes(kb *knowledge.Base, routes ...Route) (*Site, error) {
	var add []Transfer
	for _, r := range routes {
		from := s.PoolIndex(r.From)
		if from < 0 {
			continue
		}
		if slices.ContainsFunc(s.Transfers, func(t Transfer) bool { return t.Process == r.Process && t.From == from }) ||
			slices.ContainsFunc(add, func(t Transfer) bool { return t.Process == r.Process && t.From == from }) {
			continue
		}
		to := Out
		if r.To != "out" {
			to = s.PoolIndex(r.To)
			if to < 0 && r.FallbackTo != "" {
				to = s.PoolIndex(r.FallbackTo)
			}
			if to < 0 {
				continue
			}
		}
		eff, ok := kb.Effect(r.Process)
		if !ok {
			return nil, fmt.Errorf("route for unknown process %q", r.Process)
		}
		t := Transfer{Process: r.Process, From: from, To: to, Epsilon: eff.EpsilonPermil, D18ORatio: 1, Effect: eff}
		if eff.D18ORatio != nil {
			t.D18ORatio = *eff.D18ORatio
		}
		t.Epsilon18 = t.D18ORatio * t.Epsilon
		add = append(add, t)
	}
	if len(add) == 0 {
		return s, nil
	}
	c := *s
	c.Transfers = append(slices.Clone(s.Transfers), add...)
	return &c, nil
}

// ApplyMoves writes into dst the state x after the change's moves at t = 0.
func (c *Change) ApplyMoves(s *Site, x *State, dst *State) error {
	dst.CopyFrom(x)
	// Shares are of the pool at t = 0; moves from one pool act in turn on
	// what is left, so each takes its share of the original amount.
	taken := make([]float64, len(s.Pools))
	for _, mv := range c.Moves {
		from := s.PoolIndex(mv.From)
		if from < 0 {
			return fmt.Errorf("move %q: site %q has no %s pool", mv.Label, s.ID, mv.From)
		}
		to := Out
		if mv.To != "out" {
			if to = s.PoolIndex(mv.To); to < 0 {
				return fmt.Errorf("move %q: site %q has no %s pool", mv.Label, s.ID, mv.To)
			}
		}
		if !(mv.Share >= 0 && mv.Share <= 1) {
			return fmt.Errorf("move %q: share must be between 0 and 1, got %g", mv.Label, mv.Share)
		}
		if mv.Share == 0 {
			continue
		}
		left := 1 - taken[from]
		if mv.Share > left+1e-12 {
			return fmt.Errorf("move %q: shares moved from %s add up to more than the whole pool (%.3g)", mv.Label, mv.From, taken[from]+mv.Share)
		}
		frac := math.Min(1, mv.Share/left)
		taken[from] += mv.Share
		n14, n15 := dst.N14[from], dst.N15[from]
		r14, r15 := rayleighRemaining(n14, n15, frac, mv.EpsilonPermil)
		d14, d15 := n14*(1-r14), n15*(1-r15)
		dst.N14[from], dst.N15[from] = n14*r14, n15*r15
		if to != Out {
			dst.N14[to] += d14
			dst.N15[to] += d15
		}
		if dst.HasO && s.Pools[from] == "nitrate" {
			f := (n14*r14 + n15*r15) / (n14 + n15)
			dst.O16 *= f
			dst.O18 *= f
		}
	}
	return nil
}

// rayleighRemaining returns the remaining fractions of 14N and 15N after a
// share frac of the total is removed with isotope effect eps (‰): with
// ε = 0 both are 1 − frac; otherwise 15N remains as the 1/α power of 14N
// (closed-system Rayleigh, Mariotti et al. 1981), with the 14N fraction
// found so that the total removed is exactly frac.
func rayleighRemaining(n14, n15, frac, eps float64) (r14, r15 float64) {
	if eps == 0 || frac == 0 || frac == 1 {
		return 1 - frac, 1 - frac
	}
	inv := 1 / Alpha(eps)
	target := (1 - frac) * (n14 + n15)
	// g(r) = n14·r + n15·r^(1/α) − target is increasing in r on (0, 1];
	// Newton from r = 1 − frac converges in a few steps (the two fractions
	// differ by a few per mil).
	r := 1 - frac
	for range 50 {
		p := math.Pow(r, inv)
		g := n14*r + n15*p - target
		dg := n14 + n15*inv*p/r
		step := g / dg
		r -= step
		if r <= 0 {
			r = 1e-300
		}
		if math.Abs(step) <= 1e-15*r {
			break
		}
	}
	return r, math.Pow(r, inv)
}

// breaks returns the times in (0, horizon) where some mod starts or ends,
// sorted and without repeats.
func (c *Change) breaks(horizon float64) []float64 {
	var out []float64
	for _, m := range c.Mods {
		for _, t := range []float64{m.Start, m.End} {
			if t > 0 && t < horizon && !slices.Contains(out, t) {
				out = append(out, t)
			}
		}
	}
	sort.Float64s(out)
	return out
}

// active reports whether the mod acts at time t (years): Start ≤ t < End.
func (m *Mod) active(t float64) bool { return t >= m.Start && t < m.End }

// ParamsAt writes into dst the parameters in force at time t (years since
// the change; +Inf for the final regime) given the baseline parameters.
func (c *Change) ParamsAt(s *Site, base *Params, t float64, dst *Params) error {
	dst.CopyFrom(base)
	var act []*Mod
	for i := range c.Mods {
		m := &c.Mods[i]
		if m.active(t) || (math.IsInf(t, 1) && math.IsInf(m.End, 1)) {
			act = append(act, m)
		}
	}
	for _, phase := range [][]KnobKind{{KnobShare}, {KnobNitrateShare, KnobTransferRatio, KnobRoute}, {KnobFactor}, {KnobFixation}} {
		for _, m := range act {
			for _, k := range m.Knobs {
				if slices.Contains(phase, k.Kind) {
					if err := applyKnob(s, base, dst, k); err != nil {
						return err
					}
				}
			}
		}
	}
	for _, m := range act {
		for _, in := range m.Inputs {
			dst.AddInput(in.To, in.RateKgPerHaYr, in.D15N, in.D18O)
		}
	}
	return nil
}

// transfers returns the indices of the transfers of the processes (all
// processes when procs is nil), leaving pool from when it is not "".
func transfers(s *Site, procs []string, from string) []int {
	fi := -2
	if from != "" {
		fi = s.PoolIndex(from)
	}
	var out []int
	for j, t := range s.Transfers {
		if (procs == nil || slices.Contains(procs, t.Process)) && (fi == -2 || t.From == fi) {
			out = append(out, j)
		}
	}
	return out
}

// flux returns Σ k_j·pool(from_j) over js under p, at the file's pool sizes.
func flux(s *Site, p *Params, js []int) float64 {
	var f float64
	for _, j := range js {
		f += p.K[j] * s.PoolKg[s.Transfers[j].From]
	}
	return f
}

// setFlux sets the transfers js to a combined flux total (at file pool
// sizes): spread as in ref (the fluxes under ref), by weights, or equally.
func setFlux(s *Site, ref, dst *Params, js []int, total float64, weights []float64) {
	share := make([]float64, len(js))
	switch {
	case len(weights) == len(js):
		copy(share, weights)
	default:
		for i, j := range js {
			share[i] = ref.K[j] * s.PoolKg[s.Transfers[j].From]
		}
	}
	var sum float64
	for _, v := range share {
		sum += v
	}
	for i, j := range js {
		w := 1 / float64(len(js))
		if sum > 0 {
			w = share[i] / sum
		}
		dst.K[j] = w * total / s.PoolKg[s.Transfers[j].From]
	}
}

func errKnob(s *Site, k Knob, format string, args ...any) error {
	return fmt.Errorf("%s %s: %s", k.Kind, strings.Join(k.Processes, "+"), fmt.Sprintf(format, args...)+fmt.Sprintf(" (site %q)", s.ID))
}

func applyKnob(s *Site, base, p *Params, k Knob) error {
	if math.IsNaN(k.Value) || math.IsInf(k.Value, 0) || k.Value < 0 {
		return errKnob(s, k, "value must be a finite number ≥ 0, got %g", k.Value)
	}
	switch k.Kind {
	case KnobShare:
		if k.Value >= 1 {
			return errKnob(s, k, "a share must be below 1, got %g", k.Value)
		}
		js := knobTransfers(s, k)
		if len(js) == 0 {
			return errKnob(s, k, "the site has no such transfer")
		}
		donor := make([]bool, len(s.Pools))
		for _, j := range js {
			donor[s.Transfers[j].From] = true
		}
		var other float64
		for j, t := range s.Transfers {
			if donor[t.From] && !slices.Contains(js, j) {
				other += base.K[j] * s.PoolKg[t.From]
			}
		}
		if other == 0 && k.Value > 0 {
			return errKnob(s, k, "nothing else leaves the donor pool, so a share below 1 is undefined")
		}
		setFlux(s, base, p, js, k.Value/(1-k.Value)*other, k.Weights)
	case KnobNitrateShare:
		if k.Value > 1 {
			return errKnob(s, k, "a share must be at most 1, got %g", k.Value)
		}
		a, n := transfers(s, []string{procUptakeAmmonium}, ""), transfers(s, []string{procUptakeNitrate}, "")
		if len(a) == 0 || len(n) == 0 {
			return errKnob(s, k, "the site needs both uptake-ammonium and uptake-nitrate")
		}
		total := flux(s, p, a) + flux(s, p, n)
		ref := *p
		ref.K = slices.Clone(p.K)
		setFlux(s, &ref, p, a, (1-k.Value)*total, nil)
		setFlux(s, &ref, p, n, k.Value*total, nil)
	case KnobTransferRatio:
		if k.Value > 1 {
			return errKnob(s, k, "a transfer ratio must be at most 1, got %g", k.Value)
		}
		fungi := s.PoolIndex("fungi")
		if fungi < 0 {
			return errKnob(s, k, "the site has no fungi pool")
		}
		var tr, rest []int
		for j, t := range s.Transfers {
			if t.From == fungi {
				if t.Process == procMycTransfer {
					tr = append(tr, j)
				} else {
					rest = append(rest, j)
				}
			}
		}
		if len(tr) == 0 || len(rest) == 0 {
			return errKnob(s, k, "the fungi need both a mycorrhizal-transfer and another outflow")
		}
		total := flux(s, p, tr) + flux(s, p, rest)
		ref := *p
		ref.K = slices.Clone(p.K)
		setFlux(s, &ref, p, tr, k.Value*total, nil)
		setFlux(s, &ref, p, rest, (1-k.Value)*total, nil)
	case KnobRoute:
		if k.Value >= 1 || k.Value == 0 {
			return errKnob(s, k, "the mycorrhizal share of supply must be strictly between 0 and 1, got %g", k.Value)
		}
		direct := transfers(s, []string{procUptakeAmmonium, procUptakeNitrate}, "")
		tr := transfers(s, []string{procMycTransfer}, "")
		fungal := transfers(s, []string{procMycUptake, procMycTransfer, procFungalTurnover}, "")
		d, t := flux(s, p, direct), flux(s, p, tr)
		if d == 0 || t == 0 {
			return errKnob(s, k, "the site needs both direct uptake and a mycorrhizal transfer to the plant")
		}
		mf, md := k.Value*(d+t)/t, (1-k.Value)*(d+t)/d
		for _, j := range fungal {
			p.K[j] *= mf
		}
		for _, j := range direct {
			p.K[j] *= md
		}
	case KnobFactor:
		js := knobTransfers(s, k)
		if len(js) == 0 {
			return errKnob(s, k, "the site has no such transfer")
		}
		for _, j := range js {
			p.K[j] *= k.Value
		}
	case KnobFixation:
		var fix []int
		var have float64
		for i, in := range s.Inputs {
			if in.Source == FixationSource && i < len(p.Inputs) {
				fix = append(fix, i)
				have += p.Inputs[i].RateKgPerHaYr
			}
		}
		if have > 0 {
			for _, i := range fix {
				p.Inputs[i].RateKgPerHaYr *= k.Value / have
			}
			return nil
		}
		if k.Input != nil {
			p.AddInput(k.Input.To, k.Value, k.Input.D15N, k.Input.D18O)
			return nil
		}
		if k.Value == 0 {
			return nil
		}
		return errKnob(s, k, "the site has no fixation input to change")
	default:
		return fmt.Errorf("unknown knob kind %d", k.Kind)
	}
	return nil
}

// Run is a reusable workspace for applying a change: its buffers are kept
// between calls, so a Run must not be shared by goroutines.
type Run struct {
	x, y   State
	params []Params
}

// Final returns the parameters in force at the end of the last Advance or
// Steady call (for flux observables).
func (r *Run) Final() *Params { return &r.params[len(r.params)-1] }

// Advance writes into dst the state t years after the change starting from
// x0 (the baseline steady state), piece by piece: one exact exponential per
// piece of constant rates (DESIGN §3).
func (r *Run) Advance(m *Model, base *Params, c *Change, x0 *State, t float64, withO bool, dst *State) error {
	if !(t >= 0) || math.IsInf(t, 0) {
		return fmt.Errorf("time must be a finite number of years ≥ 0, got %g", t)
	}
	if err := c.ApplyMoves(m.Site, x0, &r.x); err != nil {
		return err
	}
	cuts := append(c.breaks(t), t)
	if cap(r.params) < len(cuts) {
		r.params = make([]Params, len(cuts))
	}
	r.params = r.params[:len(cuts)]
	prev := 0.0
	for i, cut := range cuts {
		p := &r.params[i]
		if err := c.ParamsAt(m.Site, base, prev, p); err != nil {
			return err
		}
		if err := m.Advance(p, &r.x, cut-prev, withO, &r.y); err != nil {
			return err
		}
		r.x, r.y = r.y, r.x
		prev = cut
	}
	dst.CopyFrom(&r.x)
	return nil
}

// Steady writes into dst the steady state of the change's final regime
// (the modifications that last forever).
func (r *Run) Steady(m *Model, base *Params, c *Change, withO bool, dst *State) error {
	if cap(r.params) < 1 {
		r.params = make([]Params, 1)
	}
	r.params = r.params[:1]
	if err := c.ParamsAt(m.Site, base, math.Inf(1), &r.params[0]); err != nil {
		return err
	}
	return m.Steady(&r.params[0], withO, dst)
}

// Trajectory returns the state at each of the times (years since the
// change, ascending) and the parameters in force at each.
func (r *Run) Trajectory(m *Model, base *Params, c *Change, x0 *State, times []float64, withO bool) ([]State, []Params, error) {
	return r.TrajectoryInto(m, base, c, x0, times, withO, nil, nil)
}

// TrajectoryInto is Trajectory writing into states and params, reused
// when they are long enough (their buffers too), so that many
// trajectories of one site allocate once.
func (r *Run) TrajectoryInto(m *Model, base *Params, c *Change, x0 *State, times []float64, withO bool, states []State, params []Params) ([]State, []Params, error) {
	if cap(states) < len(times) {
		states = make([]State, len(times))
	}
	if cap(params) < len(times) {
		params = make([]Params, len(times))
	}
	states, params = states[:len(times)], params[:len(times)]
	var cur State
	if err := c.ApplyMoves(m.Site, x0, &cur); err != nil {
		return nil, nil, err
	}
	prev, lastDt := 0.0, 0.0
	var p Params
	var next State
	for i, t := range times {
		if t < prev || math.IsNaN(t) || math.IsInf(t, 0) {
			return nil, nil, fmt.Errorf("trajectory times must be finite, ascending and ≥ 0 (got %g after %g)", t, prev)
		}
		for _, cut := range append(c.breaks(t), t) {
			if cut <= prev {
				continue
			}
			// A step from the previous time starts under the parameters
			// already found for it (prev is then times[i-1]); a step from
			// a break needs its own.
			pp := &p
			if i > 0 && prev == times[i-1] {
				pp = &params[i-1]
			} else if err := c.ParamsAt(m.Site, base, prev, &p); err != nil {
				return nil, nil, err
			}
			// Steps of an even grid differ in their last bits (i·h −
			// (i−1)·h); taking them as equal lets the model reuse the
			// step's exponential, at a time error of 1e-12 of a step.
			dt := cut - prev
			if math.Abs(dt-lastDt) <= 1e-12*lastDt {
				dt = lastDt
			}
			if err := m.Advance(pp, &cur, dt, withO, &next); err != nil {
				return nil, nil, err
			}
			cur, next = next, cur
			prev, lastDt = cut, dt
		}
		states[i].CopyFrom(&cur)
		if err := c.ParamsAt(m.Site, base, t, &params[i]); err != nil {
			return nil, nil, err
		}
	}
	return states, params, nil
}

// Sustained returns a change that applies the knobs and inputs from t = 0
// on, with no moves.
func Sustained(knobs []Knob, inputs ...InputParam) Change {
	return Change{Mods: []Mod{{Start: 0, End: math.Inf(1), Knobs: knobs, Inputs: inputs}}}
}

// Factor is a knob multiplying the rate constants of a process by f.
func Factor(process string, f float64) Knob {
	return Knob{Kind: KnobFactor, Processes: []string{process}, Value: f}
}

// KnobValue returns the value a share-type knob (share, nitrate share,
// transfer ratio, route) has under p: the inverse of applying it. For a
// fixation knob it is the fixation input rate. It is 0 where the site has
// none of the knob's transfers.
func KnobValue(s *Site, p *Params, k Knob) float64 {
	ratio := func(num, den []int) float64 {
		d := flux(s, p, den)
		if d == 0 {
			return 0
		}
		return flux(s, p, num) / d
	}
	switch k.Kind {
	case KnobShare:
		js := knobTransfers(s, k)
		donor := make([]bool, len(s.Pools))
		for _, j := range js {
			donor[s.Transfers[j].From] = true
		}
		var all []int
		for j, t := range s.Transfers {
			if donor[t.From] {
				all = append(all, j)
			}
		}
		return ratio(js, all)
	case KnobNitrateShare:
		return ratio(transfers(s, []string{procUptakeNitrate}, ""), transfers(s, []string{procUptakeAmmonium, procUptakeNitrate}, ""))
	case KnobTransferRatio:
		return ratio(transfers(s, []string{procMycTransfer}, "fungi"), transfers(s, nil, "fungi"))
	case KnobRoute:
		return ratio(transfers(s, []string{procMycTransfer}, ""), transfers(s, []string{procUptakeAmmonium, procUptakeNitrate, procMycTransfer}, ""))
	case KnobFixation:
		var r float64
		for i, in := range s.Inputs {
			if in.Source == FixationSource && i < len(p.Inputs) {
				r += p.Inputs[i].RateKgPerHaYr
			}
		}
		return r
	}
	return 0
}

// KnobTransfers returns the transfers whose flux a knob's magnitude
// implies: the processes of a share knob, uptake of nitrate for the uptake
// form, the mycorrhizal transfer for the transfer ratio and the route.
func KnobTransfers(s *Site, k Knob) []int {
	switch k.Kind {
	case KnobShare, KnobFactor:
		return knobTransfers(s, k)
	case KnobNitrateShare:
		return transfers(s, []string{procUptakeNitrate}, "")
	case KnobTransferRatio, KnobRoute:
		return transfers(s, []string{procMycTransfer}, "")
	}
	return nil
}

// FluxAt returns the flux (kg N/ha/yr) of the transfers js in state x under
// parameters p: Σ k_j·N(from_j), both isotopes.
func FluxAt(s *Site, p *Params, x *State, js []int) float64 {
	var f float64
	for _, j := range js {
		f += p.K[j] * x.Total(s.Transfers[j].From)
	}
	return f
}
