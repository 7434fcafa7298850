package rank

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/optimize"

	"nlens/forward"
	"nlens/knowledge"
)

// Fitted site (DESIGN §5). Before ranking, the nominal site can be fitted
// to a control's absolute values, so that a site unlike its template is
// modelled as itself. The fit is maximum a posteriori:
//
//	−log posterior = Σ_obs r_obs² / (2·(SE_obs² + σ_s²))
//	               + Σ_rates z_j²/2 + Σ_ε −log tri(ε_p; low, mode, high)
//
// with r the model-minus-observed difference of a δ (‰) or ln(model/
// observed) of a pool, flux, net rate or foliar N (SE then taken relative
// to the mean), σ_s the structural level error of the site model, z_j =
// ln(k_j/k_j⁰)/spread_j the log-normal prior of each transfer's rate
// constant (spread from the site file), and tri the triangular density of
// each process's ε over its knowledge range with the mode at the typical
// value (one ε per process: its transfers share it). The rates and ε are
// optimized through unconstrained coordinates (z, and the logit of ε's
// place in its range) by gonum's L-BFGS with central-difference gradients;
// the prior is in the natural parameters, so the optimum is the MAP there.
// Transfers without a spread and ε the site file fixes are not fitted.

// FitTarget is one observed absolute value of a control group.
type FitTarget struct {
	// Observable is a model observable (DESIGN §3), for example foliage,
	// soil-nitrate or pool:nitrate.
	Observable string
	// Mean is the control's mean: ‰ for δ observables; kg N/ha for pools
	// and foliar N; kg N/ha/yr for fluxes and net rates.
	Mean float64
	// SE is the standard error of Mean, in its unit.
	SE float64
}

// FitOptions control FitSite; zero values take the defaults.
type FitOptions struct {
	// StructuralPermil is the structural level error σ_s of the site model
	// for δ observables, ‰ (default DefaultFitStructuralPermil).
	StructuralPermil float64
	// StructuralLog is σ_s for log-ratio observables, on the ln scale
	// (default DefaultFitStructuralLog).
	StructuralLog float64
	// MaxEvaluations bounds the model evaluations of the optimizer
	// (default DefaultFitEvaluations).
	MaxEvaluations int
}

// Defaults of FitOptions.
const (
	// DefaultFitStructuralPermil: the structural error explain adds to each
	// observed shift (--model-error, 0.5 ‰), used here for the level of the
	// control as well; a control the template meets within it is left
	// where the prior holds it.
	DefaultFitStructuralPermil = 0.5
	// DefaultFitStructuralLog: 0.1 on the ln scale (about 10 %) for pools
	// and fluxes, a fifth of the spread between sites of one biome used to
	// weight draws (common practice).
	DefaultFitStructuralLog = 0.1
	// DefaultFitEvaluations bounds the model evaluations; a fit of a
	// ten-pool template takes a few thousand.
	DefaultFitEvaluations = 40000
	// MovedThreshold: a parameter counts as moved when the fit changed it
	// by at least this many prior standard deviations.
	MovedThreshold = 0.1
	// ReproducedSDs: the control counts as reproduced when every target is
	// within this many combined standard deviations (SE and σ_s) of the
	// fitted model.
	ReproducedSDs = 2.0
)

// Kinds of fitted parameters.
const (
	FitRate    = "rate"
	FitEpsilon = "epsilon"
)

// FitParameter is one fitted parameter that moved.
type FitParameter struct {
	// Name is "rate PROCESS FROM→TO" for a transfer's rate and
	// "epsilon PROCESS" for a process's ε.
	Name    string
	Kind    string // FitRate or FitEpsilon
	Process string
	// Transfer is the index of the transfer in Site.Transfers (the first
	// one of the process for an ε).
	Transfer int
	// From and To are the flux at the nominal and at the fitted steady
	// state (kg N/ha/yr) for a rate, the ε (‰) for an ε.
	From, To float64
	Unit     string
	// PriorSDs is the change in prior standard deviations (signed).
	PriorSDs float64
}

// FitObservation is one target and how the site reproduces it.
type FitObservation struct {
	Observable   string
	Observed, SE float64
	// Before is the nominal site's value, After the fitted site's.
	Before, After float64
	Unit          string
	LogRatio      bool
	// Deviation is After − Observed (‰), or ln(After/Observed) for a
	// log-ratio observable, in combined standard deviations.
	Deviation float64
}

// SiteFit is the result of FitSite.
type SiteFit struct {
	// Site is the fitted site: every transfer's rate set to its fitted flux
	// at the fitted steady state, pools set to that steady state (so the
	// site is balanced), and the fitted ε of the processes that moved as
	// the transfers' ε (still within the knowledge range, not marked as
	// given, so draws may vary them; EncodeSite writes them). Its ID is the
	// nominal site's with "-fitted" appended.
	Site *forward.Site
	// Moved lists the parameters that moved by at least MovedThreshold
	// prior standard deviations, largest move first (smaller rate changes
	// are kept in Site but not listed).
	Moved []FitParameter
	// Control lists every target, in the order given.
	Control []FitObservation
	// Reproduced is false when some target lies more than ReproducedSDs
	// combined standard deviations from the fitted model; Warnings then
	// names it.
	Reproduced bool
	Warnings   []string
	// Evaluations is the number of model evaluations; Objective and
	// ObjectiveStart are −log posterior (up to a constant) at the fitted
	// and the nominal site.
	Evaluations               int
	Objective, ObjectiveStart float64
}

// fitParam is one coordinate of the optimization.
type fitParam struct {
	kind      string
	process   string
	transfers []int   // the transfers it sets
	spread    float64 // rate: log sd
	lo, hi    float64 // ε: range
	mode      float64 // ε: typical value
	dist      string
	start     float64 // nominal ε (ε only)
}

// fitTarget is a target bound to the site.
type fitTarget struct {
	FitTarget
	obs    forward.Observable
	logR   bool
	sd     float64 // combined sd on the comparison scale
	needsO bool
}

// ErrNothingToFit is returned when the site has no free parameter.
var ErrNothingToFit = errors.New("the site has no rate with a spread and no ε left to the knowledge base, so there is nothing to fit")

// FitSite fits the site's transfer rates and isotope effects to a
// control's absolute values (see the package comment above) and returns
// the fitted site, what moved and how well the control is reproduced.
// A target whose observable the site cannot compute, or whose mean or SE
// is not a valid number, is an error naming it.
func FitSite(site *forward.Site, targets []FitTarget, opt FitOptions) (*SiteFit, error) {
	if opt.StructuralPermil <= 0 {
		opt.StructuralPermil = DefaultFitStructuralPermil
	}
	if opt.StructuralLog <= 0 {
		opt.StructuralLog = DefaultFitStructuralLog
	}
	if opt.MaxEvaluations <= 0 {
		opt.MaxEvaluations = DefaultFitEvaluations
	}
	if len(targets) == 0 {
		return nil, errors.New("no observed values of the control to fit to")
	}
	bound, err := bindTargets(site, targets, opt)
	if err != nil {
		return nil, err
	}
	params := fitParams(site)
	if len(params) == 0 {
		return nil, ErrNothingToFit
	}
	f := &fitProblem{site: site, model: forward.NewModel(site), base: site.Params(), params: params, targets: bound}
	for _, t := range bound {
		f.withO = f.withO || t.needsO
	}
	x0 := make([]float64, len(params))
	for i, p := range params {
		if p.kind == FitEpsilon {
			x0[i] = logit((p.start - p.lo) / (p.hi - p.lo))
		}
	}
	start := f.objective(x0)
	if math.IsInf(start, 1) {
		return nil, fmt.Errorf("the nominal site %q cannot compute every target (its steady state fails or a log-ratio target is not positive)", site.ID)
	}
	best := slices.Clone(x0)
	bestF := start
	if x, fx, ok := f.minimize(x0, opt.MaxEvaluations); ok && fx < bestF {
		best, bestF = x, fx
	}
	return f.result(best, bestF, start)
}

// bindTargets checks the targets and binds them to the site.
func bindTargets(site *forward.Site, targets []FitTarget, opt FitOptions) ([]fitTarget, error) {
	out := make([]fitTarget, 0, len(targets))
	seen := map[string]bool{}
	for _, t := range targets {
		o, err := site.Observable(t.Observable)
		if err != nil {
			return nil, fmt.Errorf("fit target %q: %w", t.Observable, err)
		}
		if seen[t.Observable] {
			return nil, fmt.Errorf("fit target %q given twice", t.Observable)
		}
		seen[t.Observable] = true
		if math.IsNaN(t.Mean) || math.IsInf(t.Mean, 0) || !(t.SE >= 0) || math.IsInf(t.SE, 0) {
			return nil, fmt.Errorf("fit target %q: mean %g and SE %g must be finite numbers, the SE ≥ 0", t.Observable, t.Mean, t.SE)
		}
		bt := fitTarget{FitTarget: t, obs: o, logR: o.LogRatio(), needsO: o.Kind == forward.KindDelta18}
		if bt.logR {
			if !(t.Mean > 0) {
				return nil, fmt.Errorf("fit target %q: a pool, flux or rate must be positive, got %g", t.Observable, t.Mean)
			}
			bt.sd = math.Hypot(t.SE/t.Mean, opt.StructuralLog)
		} else {
			bt.sd = math.Hypot(t.SE, opt.StructuralPermil)
		}
		out = append(out, bt)
	}
	return out, nil
}

// fitParams lists the free parameters: one log rate constant per transfer
// with a positive rate and spread, one ε per process whose transfers leave
// it to the knowledge base with a range of positive width.
func fitParams(site *forward.Site) []fitParam {
	var out []fitParam
	for j, t := range site.Transfers {
		if t.RateKgPerHaYr > 0 && t.Spread > 0 {
			out = append(out, fitParam{kind: FitRate, process: t.Process, transfers: []int{j}, spread: t.Spread})
		}
	}
	byProcess := map[string]int{}
	for j, t := range site.Transfers {
		e := t.Effect
		if t.EpsilonFixed || t.RateKgPerHaYr <= 0 || len(e.RangePermil) != 2 || !(e.RangePermil[1] > e.RangePermil[0]) || e.Distribution == knowledge.DistFixed {
			continue
		}
		if i, ok := byProcess[t.Process]; ok {
			out[i].transfers = append(out[i].transfers, j)
			continue
		}
		lo, hi := e.RangePermil[0], e.RangePermil[1]
		start := math.Min(math.Max(t.Epsilon, lo+1e-6*(hi-lo)), hi-1e-6*(hi-lo))
		byProcess[t.Process] = len(out)
		out = append(out, fitParam{kind: FitEpsilon, process: t.Process, transfers: []int{j}, lo: lo, hi: hi, mode: e.EpsilonPermil, dist: e.Distribution, start: start})
	}
	return out
}

// epsilon returns the ε of an ε parameter at coordinate u.
func (p *fitParam) epsilon(u float64) float64 { return p.lo + (p.hi-p.lo)*logistic(u) }

// negLogPrior is the parameter's −log prior density at coordinate x, up
// to a constant.
func (p *fitParam) negLogPrior(x float64) float64 {
	if p.kind == FitRate {
		return x * x / 2
	}
	e := p.epsilon(x)
	if p.dist == knowledge.DistUniform {
		return 0
	}
	var d float64
	switch {
	case e < p.mode:
		d = (e - p.lo) / (p.mode - p.lo)
	case p.hi > p.mode:
		d = (p.hi - e) / (p.hi - p.mode)
	default:
		d = 1
	}
	if !(d > 0) {
		return math.Inf(1)
	}
	return -math.Log(d)
}

// priorSD is the prior standard deviation of the parameter in its natural
// unit: 1 for a rate's z, the triangular (or uniform) sd for an ε.
func (p *fitParam) priorSD() float64 {
	if p.kind == FitRate {
		return 1
	}
	a, b, c := p.lo, p.hi, p.mode
	if p.dist == knowledge.DistUniform {
		return (b - a) / math.Sqrt(12)
	}
	return math.Sqrt((a*a + b*b + c*c - a*b - a*c - b*c) / 18)
}

// fitProblem evaluates the objective; it is not safe for concurrent use.
type fitProblem struct {
	site    *forward.Site
	model   *forward.Model
	base    forward.Params
	params  []fitParam
	targets []fitTarget
	withO   bool
	evals   int
	p       forward.Params
	x       forward.State
}

// apply sets f.p to the parameters at coordinates x.
func (f *fitProblem) apply(x []float64) {
	f.p.CopyFrom(&f.base)
	for i, pr := range f.params {
		for _, j := range pr.transfers {
			t := &f.site.Transfers[j]
			if pr.kind == FitRate {
				f.p.K[j] = f.base.K[j] * math.Exp(pr.spread*x[i])
				continue
			}
			e := pr.epsilon(x[i])
			f.p.Eps15[j] = e
			if !t.Epsilon18Fixed {
				f.p.Eps18[j] = t.D18ORatio * e
			}
		}
	}
}

// objective returns −log posterior at coordinates x (+Inf where the
// model fails or a log-ratio observable is not positive).
func (f *fitProblem) objective(x []float64) float64 {
	f.evals++
	f.apply(x)
	if err := f.model.Steady(&f.p, f.withO, &f.x); err != nil {
		return math.Inf(1)
	}
	var sum float64
	for i := range f.params {
		sum += f.params[i].negLogPrior(x[i])
	}
	for _, t := range f.targets {
		r, ok := t.residual(t.obs.Value(&f.x, &f.p))
		if !ok {
			return math.Inf(1)
		}
		sum += r * r / (2 * t.sd * t.sd)
	}
	if math.IsNaN(sum) {
		return math.Inf(1)
	}
	return sum
}

// residual is model − observed on the comparison scale.
func (t *fitTarget) residual(model float64) (float64, bool) {
	if t.logR {
		if !(model > 0) {
			return 0, false
		}
		return math.Log(model / t.Mean), true
	}
	if math.IsNaN(model) || math.IsInf(model, 0) {
		return 0, false
	}
	return model - t.Mean, true
}

// fitPenalty stands in for +Inf inside the optimizer, whose line search
// needs finite values; it is far above any objective a real fit reaches.
const fitPenalty = 1e12

// minimize runs L-BFGS from x0 with central-difference gradients and
// reports the best point it found.
func (f *fitProblem) minimize(x0 []float64, maxEvals int) ([]float64, float64, bool) {
	fn := func(x []float64) float64 {
		v := f.objective(x)
		if math.IsInf(v, 1) {
			return fitPenalty
		}
		return v
	}
	const h = 1e-5 // coordinate step: the coordinates are O(1) (prior sds and logits)
	grad := func(g, x []float64) {
		xx := slices.Clone(x)
		for i := range x {
			xx[i] = x[i] + h
			up := fn(xx)
			xx[i] = x[i] - h
			down := fn(xx)
			xx[i] = x[i]
			g[i] = (up - down) / (2 * h)
		}
	}
	settings := &optimize.Settings{
		FuncEvaluations:   maxEvals,
		GradientThreshold: 1e-7,
		Converger:         &optimize.FunctionConverge{Absolute: 1e-10, Relative: 1e-12, Iterations: 50},
	}
	res, err := optimize.Minimize(optimize.Problem{Func: fn, Grad: grad}, x0, settings, &optimize.LBFGS{})
	if res == nil {
		return nil, 0, false
	}
	// A line search that cannot improve further ends with an error but a
	// usable best location; only a point that improved is taken.
	_ = err
	if math.IsNaN(res.F) || res.F >= fitPenalty {
		return nil, 0, false
	}
	return res.X, res.F, true
}

// move returns how far the parameter at coordinate x is from its nominal
// value, in prior standard deviations (signed).
func (p *fitParam) move(x float64) float64 {
	if p.kind == FitRate {
		return x
	}
	return (p.epsilon(x) - p.start) / p.priorSD()
}

// result builds the SiteFit at the coordinates x. An ε that moved by less
// than MovedThreshold prior sds is first put back at its nominal value, so
// every ε of the fitted site is either the knowledge value or one reported
// as moved; rates keep their fitted values (many small rate changes
// together can matter), and only those that moved by at least the
// threshold are listed.
func (f *fitProblem) result(x []float64, fx, start float64) (*SiteFit, error) {
	x = slices.Clone(x)
	for i := range f.params {
		pr := &f.params[i]
		if pr.kind == FitEpsilon && math.Abs(pr.move(x[i])) < MovedThreshold {
			x[i] = logit((pr.start - pr.lo) / (pr.hi - pr.lo))
		}
	}
	if v := f.objective(x); !math.IsInf(v, 1) {
		fx = v
	}
	out := &SiteFit{Evaluations: f.evals, Objective: fx, ObjectiveStart: start, Reproduced: true}
	// Nominal values.
	var nominal forward.State
	base := f.base
	if err := f.model.Steady(&base, f.withO, &nominal); err != nil {
		return nil, err
	}
	before := make([]float64, len(f.targets))
	for i, t := range f.targets {
		before[i] = t.obs.Value(&nominal, &base)
	}
	f.apply(x)
	var fitted forward.State
	if err := f.model.Steady(&f.p, f.withO, &fitted); err != nil {
		return nil, err
	}
	// The fitted site: pools at the fitted steady state and rates at the
	// fitted fluxes, both to FitDigits significant digits, and the fitted ε
	// of the processes that moved to 0.01 ‰, so the site file is readable
	// and the site returned is exactly the file.
	s := cloneSite(f.site)
	s.ID = f.site.ID + "-fitted"
	for i := range s.PoolKg {
		s.PoolKg[i] = roundSig(fitted.Total(i), FitDigits)
	}
	for j := range s.Transfers {
		t := &s.Transfers[j]
		t.RateKgPerHaYr = roundSig(f.p.K[j]*fitted.Total(t.From), FitDigits)
	}
	for i, pr := range f.params {
		if pr.kind != FitEpsilon || math.Abs(pr.move(x[i])) < MovedThreshold {
			continue
		}
		e := math.Round(pr.epsilon(x[i])*100) / 100
		for _, j := range pr.transfers {
			t := &s.Transfers[j]
			t.Epsilon = e
			if !t.Epsilon18Fixed {
				t.Epsilon18 = t.D18ORatio * e
			}
		}
	}
	s.Warnings = nil
	// The control as the fitted site reproduces it.
	sp := s.Params()
	var sx forward.State
	if err := forward.NewModel(s).Steady(&sp, f.withO, &sx); err != nil {
		return nil, err
	}
	for i, t := range f.targets {
		o, err := s.Observable(t.Observable)
		if err != nil {
			return nil, err
		}
		after := o.Value(&sx, &sp)
		r, _ := t.residual(after)
		fo := FitObservation{Observable: t.Observable, Observed: t.Mean, SE: t.SE, Before: before[i], After: after, Unit: t.obs.Unit(), LogRatio: t.logR, Deviation: r / t.sd}
		out.Control = append(out.Control, fo)
		if math.Abs(fo.Deviation) > ReproducedSDs {
			out.Reproduced = false
			out.Warnings = append(out.Warnings, fmt.Sprintf("the fitted site cannot reproduce the control's %s: observed %s, model %s (%.1f combined standard deviations off); rates within their spreads and ε within their ranges do not reach it, so the site model may lack a process or a source this site has", t.Observable, fmtValue(t.Mean, t.obs.Unit()), fmtValue(after, t.obs.Unit()), fo.Deviation))
		}
	}
	for i, pr := range f.params {
		move := pr.move(x[i])
		if math.Abs(move) < MovedThreshold {
			continue
		}
		j := pr.transfers[0]
		t := f.site.Transfers[j]
		mp := FitParameter{Kind: pr.kind, Process: pr.process, Transfer: j, PriorSDs: move}
		if pr.kind == FitRate {
			to := "out"
			if t.To != forward.Out {
				to = f.site.Pools[t.To]
			}
			mp.Name = fmt.Sprintf("rate %s %s→%s", t.Process, f.site.Pools[t.From], to)
			mp.From = f.base.K[j] * nominal.Total(t.From)
			mp.To = s.Transfers[j].RateKgPerHaYr
			mp.Unit = "kg N/ha/yr"
		} else {
			mp.Name = "epsilon " + t.Process
			mp.From, mp.To, mp.Unit = pr.start, s.Transfers[j].Epsilon, "‰"
		}
		out.Moved = append(out.Moved, mp)
	}
	sort.SliceStable(out.Moved, func(a, b int) bool { return math.Abs(out.Moved[a].PriorSDs) > math.Abs(out.Moved[b].PriorSDs) })
	out.Site = s
	return out, nil
}

// FitDigits is the number of significant digits of the fitted site's pools
// and rates: the rounding moves no δ by more than about 1e-5 ‰ and leaves
// the site balanced to about 1e-6.
const FitDigits = 6

// roundSig rounds v to n significant digits.
func roundSig(v float64, n int) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	p := math.Pow(10, float64(n-1)-math.Floor(math.Log10(math.Abs(v))))
	return math.Round(v*p) / p
}

// cloneSite returns a deep copy of the parts of a site the fit changes.
func cloneSite(s *forward.Site) *forward.Site {
	c := *s
	c.Pools = slices.Clone(s.Pools)
	c.PoolKg = slices.Clone(s.PoolKg)
	c.Inputs = slices.Clone(s.Inputs)
	c.Transfers = slices.Clone(s.Transfers)
	c.References = slices.Clone(s.References)
	return &c
}

// fmtValue prints a value with its unit for a warning.
func fmtValue(v float64, unit string) string {
	if unit == "‰" {
		return fmt.Sprintf("%.2f ‰", v)
	}
	return fmt.Sprintf("%.3g %s", v, unit)
}
