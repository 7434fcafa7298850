package rank

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// Options control a ranking run.
type Options struct {
	Seed uint64
	// Draws is the number of nuisance draws φ (draw 0 is the nominal site).
	Draws int
	// ModelError is σ_model, the structural error of the model in ‰.
	ModelError float64
	// Workers bounds the goroutines; 0 means GOMAXPROCS.
	Workers int
	// NoSiteFit keeps the nominal site instead of fitting it to the
	// control's absolute values (DESIGN §5).
	NoSiteFit bool
	// MaxDraws bounds the adaptive draws (0: DefaultMaxDraws); FixedDraws
	// turns the adaptation off (Draws are used as given). FirstDraws is set
	// by Explain to the first round's draws (the design's first block).
	MaxDraws   int
	FixedDraws bool
	FirstDraws int
	// Progress, if set, is called with the work done and the total.
	Progress func(done, total int)
	Version  string
}

// Defaults (DESIGN §5; the draw count is a speed–precision balance).
const (
	DefaultDraws      = 48
	DefaultModelError = 0.5
	DefaultSeed       = 1
	// pairsFrom is how many of the best single candidates are paired.
	pairsFrom = 4
	// maxLeading bounds the hypotheses next measurements are scored against.
	maxLeading = 5
	// leadingMass: leading hypotheses cover this much posterior.
	leadingMass = 0.95
	// samplesPerHypothesis for measurement predictions.
	samplesPerHypothesis = 128
	// pairDraws caps the nuisance draws used for a pair (the first draws,
	// nominal included, reweighted among themselves): a pair's 2-D grid
	// costs 49 nodes against 11 for a single, and its evidence needs the
	// nuisance average less finely.
	pairDraws = 16
	// noFitP is the fit-check probability below which a hypothesis does not fit.
	noFitP = 0.01
	// indistinguishableSignal: a candidate whose predictions never depart
	// from no change by more than this many combined standard errors is
	// counted with "none".
	indistinguishableSignal = 1.0
	// defaultReplicates is assumed for a new measurement when the study's
	// groups do not say.
	defaultReplicates = 4
)

// Explain ranks the explanations of every comparison of the study.
func Explain(ctx context.Context, st *study.Study, kb *knowledge.Base, set *rules.Set, opt Options) (*Result, error) {
	if opt.Draws <= 0 {
		opt.Draws = DefaultDraws
	}
	if opt.Draws > 100000 {
		return nil, fmt.Errorf("--draws %d is more than 100000", opt.Draws)
	}
	if opt.ModelError == 0 {
		opt.ModelError = DefaultModelError
	}
	if !(opt.ModelError > 0) || math.IsInf(opt.ModelError, 0) {
		return nil, fmt.Errorf("the model error must be a positive number of ‰, got %g", opt.ModelError)
	}
	if opt.Workers <= 0 {
		opt.Workers = runtime.GOMAXPROCS(0)
	}
	if opt.MaxDraws <= 0 {
		opt.MaxDraws = DefaultMaxDraws
	}
	opt.FirstDraws = opt.Draws
	res := &Result{Version: opt.Version, Seed: opt.Seed, Draws: opt.Draws, ModelError: opt.ModelError,
		StudyTitle: st.Title, StudyFile: st.File, SiteRef: st.SiteRef, SiteID: st.Site.ID, SiteDescription: st.Site.Description, Context: st.Context,
		Method: Method{
			Draws: opt.Draws, ModelErrorPermil: opt.ModelError, ModelErrorLog: modelErrorLog,
			LevelSDPermil: levelSDPermil, LevelSDLog: levelSDLog,
			CoarseNodes: coarse1, FinePoints: fine1, PairCoarseNodes: coarse2, PairFinePoints: fine2,
			PairsFrom: pairsFrom, NoneShare: set.NoneShare, PairPrior: set.PairPrior,
			SamplesPerLeading: samplesPerHypothesis, OutcomeGridStep: outcomeStep,
		}}
	us := units(st)
	prog := &progress{f: opt.Progress, total: len(us) * (2*len(set.Candidates) + maxPairs + 4)}
	// Every unit's engine is prepared first (its site fitted to its
	// controls), so that units of one design (the same fitted site,
	// treatments, years and observables) can share their nuisance draws
	// and forward predictions: such a unit takes the draws of the first
	// unit of its design (its stream), which runs first and fills the
	// shared cache. Results still depend only on (seed, unit, candidate).
	sh := newShared()
	engines := make([]*engine, len(us))
	errs := make([]error, len(us))
	forEach(len(us), opt.Workers, func(i int) {
		engines[i], errs[i] = prepareEngine(st, us[i], kb, set, opt, sh)
		if errs[i] != nil {
			errs[i] = fmt.Errorf("%s: %w", us[i].what(st), errs[i])
		}
	})
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	streams := make([]int, len(us))
	var leaders, followers []int
	for i, e := range engines {
		streams[i] = slices.IndexFunc(engines[:i+1], func(o *engine) bool { return o.key == e.key })
		if streams[i] == i {
			leaders = append(leaders, i)
		} else {
			followers = append(followers, i)
		}
		e.pc = sh.predictions(e.key)
	}
	members := make([][]ComparisonResult, len(us))
	series := make([]*SeriesResult, len(us))
	run := func(idx []int) {
		// Several units run side by side, each on one goroutine; a single
		// unit spreads its candidates over the workers instead.
		inner, outer := opt.Workers, 1
		if len(idx) > 1 {
			inner, outer = 1, opt.Workers
		}
		forEach(len(idx), outer, func(k int) {
			i := idx[k]
			if ctx.Err() != nil {
				errs[i] = ctx.Err()
				return
			}
			e := engines[i]
			e.opt.Workers = inner
			crs, sr, err := explainUnit(ctx, e, uint64(us[streams[i]].idx[0]), us[i], prog)
			if err != nil {
				errs[i] = fmt.Errorf("%s: %w", us[i].what(st), err)
				return
			}
			for k := range crs {
				crs[k].Warnings = append(slices.Clone(st.Warnings), crs[k].Warnings...)
			}
			members[i], series[i] = crs, sr
			engines[i] = nil // its memory can go
		})
	}
	run(leaders)
	run(followers)
	byIndex := make([]*ComparisonResult, len(st.Comparisons))
	for i, err := range errs {
		if err != nil {
			return nil, err
		}
		for k, ci := range us[i].idx {
			byIndex[ci] = &members[i][k]
		}
		if series[i] != nil {
			res.Series = append(res.Series, *series[i])
		}
	}
	for _, cr := range byIndex {
		res.Comparisons = append(res.Comparisons, *cr)
	}
	return res, nil
}

// unit is what is explained at once: one comparison, or the comparisons of
// one series (DESIGN §6).
type unit struct {
	series string
	idx    []int // comparison indices in the study
}

func (u unit) what(st *study.Study) string {
	if u.series != "" {
		return fmt.Sprintf("series %q", u.series)
	}
	return fmt.Sprintf("comparison %q", st.Comparisons[u.idx[0]].Name)
}

// units groups the study's comparisons: each series in the order of its
// first member, every other comparison alone.
func units(st *study.Study) []unit {
	var out []unit
	at := map[string]int{}
	for i, c := range st.Comparisons {
		if c.Series == "" {
			out = append(out, unit{idx: []int{i}})
			continue
		}
		if k, ok := at[c.Series]; ok {
			out[k].idx = append(out[k].idx, i)
			continue
		}
		at[c.Series] = len(out)
		out = append(out, unit{series: c.Series, idx: []int{i}})
	}
	return out
}

// progress counts finished work for the callback.
type progress struct {
	mu          sync.Mutex
	f           func(done, total int)
	done, total int
}

func (p *progress) add(n int) {
	if p.f == nil {
		return
	}
	p.mu.Lock()
	p.done += n
	if p.done > p.total {
		p.total = p.done
	}
	d, t := p.done, p.total
	p.mu.Unlock()
	p.f(d, t)
}

// parallel runs f(i, w) for i in [0, n) on at most workers goroutines, each
// with its own model workspace.
func parallel(n, workers int, site *forward.Site, f func(i int, w *worker)) {
	pool := make([]*worker, max(1, min(workers, n)))
	forEachWorker(n, len(pool), func(i, slot int) {
		if pool[slot] == nil {
			pool[slot] = newWorker(site)
		}
		f(i, pool[slot])
	})
}

// forEach runs f(i) for i in [0, n) on at most workers goroutines.
func forEach(n, workers int, f func(i int)) {
	forEachWorker(n, workers, func(i, _ int) { f(i) })
}

// forEachWorker is the bounded pool behind parallel and forEach: slot
// identifies the goroutine, so per-goroutine state can be kept.
func forEachWorker(n, workers int, f func(i, slot int)) {
	workers = max(1, min(workers, n))
	if workers == 1 {
		for i := range n {
			f(i, 0)
		}
		return
	}
	jobs := make(chan int)
	var wg sync.WaitGroup
	for slot := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				f(i, slot)
			}
		}()
	}
	for i := range n {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
}

type entry struct {
	s      *scored
	prior  float64
	adj    []rules.Adjustment
	cands  []*rules.Candidate
	isPair bool
	// merged: counted with none (its predictions never leave none's by a
	// standard error and it does not fit markedly better than none).
	merged bool
	// pulse: a pulse response (its last knob is the duration).
	pulse bool
}

// mergeEvidenceFactor: a candidate whose evidence exceeds none's by this
// factor is never counted with none (DESIGN §5).
const mergeEvidenceFactor = 3

// newEngine prepares the engine of one unit and makes its draws (with the
// unit's own stream and cache).
func newEngine(st *study.Study, u unit, kb *knowledge.Base, set *rules.Set, opt Options) (*engine, error) {
	e, err := prepareEngine(st, u, kb, set, opt, nil)
	if err != nil {
		return nil, err
	}
	e.pc = &predCache{}
	if err := e.setup(newWorker(e.site), uint64(u.idx[0])); err != nil {
		return nil, err
	}
	return e, nil
}

// prepareEngine prepares the engine of one unit: the site fitted to the
// controls with every transfer the candidates and the treatments may turn
// on, its parts and its design key; the draws are made by setup. sh, if
// not nil, shares site fits between units with the same control targets.
func prepareEngine(st *study.Study, u unit, kb *knowledge.Base, set *rules.Set, opt Options, sh *shared) (*engine, error) {
	var trs []forward.Treatment
	var cmps []study.Comparison
	for _, i := range u.idx {
		trs = append(trs, st.Comparisons[i].Declared())
		cmps = append(cmps, st.Comparisons[i])
	}
	nominal, fit := st.Site, (*SiteFit)(nil)
	var fitWarn []string
	// The control levels: the fit targets, and what weights the draws.
	var levels []FitTarget
	for _, c := range cmps {
		for _, o := range c.Observed {
			if !o.NoLevels() {
				levels = append(levels, FitTarget{Observable: o.Observable, Mean: o.Control.Mean, SE: o.Control.SE()})
			}
		}
	}
	var targets []FitTarget
	if !opt.NoSiteFit {
		targets = levels
		if len(targets) > 0 {
			f, err := sh.fit(st.Site, targets)
			switch {
			case err == nil:
				nominal, fit = f.Site, f
				fitWarn = f.Warnings
			case !errors.Is(err, ErrNothingToFit):
				fitWarn = append(fitWarn, fmt.Sprintf("the site model could not be fitted to the control (%v); the nominal site is used", err))
			}
		}
	}
	var rs []forward.Route
	for _, tr := range trs {
		rs = append(rs, routes(nominal, kb, set, tr)...)
	}
	site, err := nominal.WithRoutes(kb, rs...)
	if err != nil {
		return nil, err
	}
	first := &st.Comparisons[u.idx[0]]
	e := &engine{site: site, kb: kb, set: set, opt: opt, ctx: st.ContextFor(first, kb), fit: fit, siteWarnings: st.Site.Warnings}
	for _, w := range fitWarn {
		e.warnf("%s", w)
	}
	scale := []float64{1}
	if u.series != "" {
		scale = study.DoseScale(cmps)
	}
	for k, i := range u.idx {
		e.parts = append(e.parts, part{cmp: &st.Comparisons[i], tr: trs[k], scale: scale[min(k, len(scale)-1)]})
		e.treated = e.treated || !trs[k].Empty(kb)
	}
	e.key = designKey(targets, e.parts)
	e.levels = targetsKey(levels)
	return e, nil
}

// designKey identifies what a unit's draws and forward predictions depend
// on besides the study's site: the control targets its site was fitted to,
// and each part's treatment, time, dose scale, response and observables.
func designKey(targets []FitTarget, parts []part) string {
	var b strings.Builder
	fmt.Fprintf(&b, "fit %s\n", targetsKey(targets))
	for _, p := range parts {
		c := p.cmp
		years := "steady"
		if c.Years != nil {
			years = strconv.FormatFloat(*c.Years, 'x', -1, 64)
		}
		tr, _ := json.Marshal(p.tr)
		fmt.Fprintf(&b, "part %s %s %x %q", tr, years, p.scale, c.Response)
		for _, o := range c.Observed {
			fmt.Fprintf(&b, " %q", o.Observable)
		}
		b.WriteByte('\n')
	}
	return b.String()
}

// targetsKey writes fit targets exactly.
func targetsKey(targets []FitTarget) string {
	var b strings.Builder
	for _, t := range targets {
		fmt.Fprintf(&b, "%q %x %x;", t.Observable, t.Mean, t.SE)
	}
	return b.String()
}

// shared holds what the units of one explanation share: site fits by
// control targets, and forward predictions by design.
type shared struct {
	mu    sync.Mutex
	fits  map[string]*fitOnce
	preds map[string]*predCache
}

type fitOnce struct {
	once sync.Once
	fit  *SiteFit
	err  error
}

func newShared() *shared {
	return &shared{fits: map[string]*fitOnce{}, preds: map[string]*predCache{}}
}

// fit fits the site to the targets once per distinct set of targets (a
// nil shared fits every time).
func (sh *shared) fit(site *forward.Site, targets []FitTarget) (*SiteFit, error) {
	if sh == nil {
		return FitSite(site, targets, FitOptions{})
	}
	k := targetsKey(targets)
	sh.mu.Lock()
	f, ok := sh.fits[k]
	if !ok {
		f = &fitOnce{}
		sh.fits[k] = f
	}
	sh.mu.Unlock()
	f.once.Do(func() { f.fit, f.err = FitSite(site, targets, FitOptions{}) })
	return f.fit, f.err
}

// predictions returns the prediction cache of a design.
func (sh *shared) predictions(key string) *predCache {
	sh.mu.Lock()
	defer sh.mu.Unlock()
	pc, ok := sh.preds[key]
	if !ok {
		pc = &predCache{}
		sh.preds[key] = pc
	}
	return pc
}

// variant is one single hypothesis to score: a candidate, sustained or as
// a pulse.
type variant struct {
	c     *rules.Candidate
	pulse bool
}

func (v variant) id() string {
	if v.pulse {
		return v.c.ID + pulseSuffix
	}
	return v.c.ID
}

// pulseSuffix marks the id of a pulse response.
const pulseSuffix = ":pulse"

// Adaptive draws (DESIGN §5): the draws double from Options.Draws until the
// Monte Carlo error of the top posteriors is below mcseTarget, at most up
// to Options.MaxDraws.
const (
	mcseTarget      = 0.02
	mcseTop         = 3
	DefaultMaxDraws = 384
	// settledPosterior: a hypothesis below this posterior whose Monte Carlo
	// error contribution p·√relVar is under a quarter of mcseTarget keeps
	// its draws when the others get more (its evidence stays an unbiased
	// estimate, only noisier, and it adds at most that to the error of the
	// leading posteriors).
	settledPosterior = 0.02
	// treatmentAloneDraws: the treatment alone has no magnitude to
	// integrate, so its evidence costs one forward run per draw, and it
	// may take this many times MaxDraws when its evidence is what keeps
	// the Monte Carlo error above target (its likelihood, with nothing to
	// adjust, rests on the few draws that happen to fit).
	treatmentAloneDraws = 8
)

// evaluateOrReuse scores a hypothesis, or returns its score from an earlier
// round of draws if that round found it settled.
func (e *engine) evaluateOrReuse(w *worker, id string, knobs []*knob, none *scored) *scored {
	// Settled, or scored last round on the draws it would take now (a pair
	// between doublings, a single once the draws grow past its cap for the
	// treatment alone) and with the same weights: the same inputs give the
	// same score. The weights are tempered over all the draws (drawWeights),
	// so they can change when draws are added even where a hypothesis
	// takes no more of them.
	if s, ok := e.prev[id]; ok && (e.settled[id] || s.nd == e.drawsFor(id, knobs) && sameWeights(s.logw, e.logwFor(s.nd))) {
		return s
	}
	return e.evaluate(w, id, knobs, none)
}

// sameWeights says whether two sets of log weights agree to 1e-12 (the
// last bits of a renormalisation over a different total may differ).
func sameWeights(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-12 {
			return false
		}
	}
	return true
}

// explainUnit explains a unit with as many draws as its top posteriors
// need (DESIGN §5): the draws double until the Monte Carlo error of the top
// posteriors is below mcseTarget or Options.MaxDraws is reached. The first
// draws of a larger design are those of the smaller one, so each doubling
// only adds draws, and what was computed for the earlier draws is kept.
func explainUnit(ctx context.Context, e *engine, stream uint64, u unit, prog *progress) ([]ComparisonResult, *SeriesResult, error) {
	if err := e.setup(newWorker(e.site), stream); err != nil {
		return nil, nil, err
	}
	opt := e.opt
	maxDraws := max(opt.MaxDraws, opt.Draws)
	for {
		sc, err := e.score(ctx, prog)
		if err != nil {
			return nil, nil, err
		}
		next := min(2*len(e.draws), maxDraws)
		if len(e.draws) >= maxDraws {
			// Only the treatment alone can take more draws; worth it
			// while its own evidence is the noisy one.
			next = 0
			if sc.noneNoise > mcseTarget/2 {
				next = min(2*len(e.draws), treatmentAloneDraws*maxDraws)
			}
		}
		if sc.worst <= mcseTarget || next <= len(e.draws) || opt.FixedDraws {
			// At the most draws, pairs and pulses (pairDraws each) whose
			// error keeps a leading posterior above target take every
			// draw, and the unit is scored again, while there are such
			// (each pair at most once).
			if sc.worst > mcseTarget && !opt.FixedDraws && e.leadPairs(sc) {
				continue // the same draws: all but those given more reused
			}
			if sc.worst > mcseTarget && !opt.FixedDraws {
				sc.warnf("the Monte Carlo error of a leading posterior is still %.2g after the maximum of %d nuisance draws (%d for pairs and pulses; target %.2g): posteriors that differ by less than about twice that may swap places with another --seed", sc.worst, maxDraws, min(maxDraws, maxLeadDraws), mcseTarget)
			}
			return e.report(ctx, sc, u, prog)
		}
		if err := e.grow(newWorker(e.site), next); err != nil {
			return nil, nil, err
		}
	}
}

// scoring is one round of scoring a unit's hypotheses.
type scoring struct {
	ruledOut []string
	// sorted entries, their hypotheses (joint over the parts) and the
	// moments of every observable, by posterior.
	sorted        []entry
	joint         []Hypothesis
	sortedMoments [][]Moments
	leading       []int
	noFit         bool
	// worst is the largest Monte Carlo error of the top posteriors.
	worst float64
	// noneNoise is the treatment alone's own share of that error,
	// p·√relVar.
	noneNoise float64
	warnings  []string
}

func (sc *scoring) warnf(format string, args ...any) {
	sc.warnings = append(sc.warnings, fmt.Sprintf(format, args...))
}

// score scores every hypothesis of the unit with the engine's draws: the
// singles, the pairs they suggest, posteriors with their Monte Carlo error.
func (e *engine) score(ctx context.Context, prog *progress) (*scoring, error) {
	sc := &scoring{}
	site, kb, set, opt := e.site, e.kb, e.set, e.opt
	sustained, pulse := e.parts[0].cmp.Responses()

	// Singles: every response the site can express, sustained and/or as a
	// pulse, and the undeclared sources its context makes possible.
	var singles []variant
	var compiled [][]*knob
	for i := range set.Candidates {
		c := &set.Candidates[i]
		if c.ID == rules.None {
			continue
		}
		if c.Source != "" && !rules.SourcePossible(kb, c, e.ctx) {
			if !slices.Contains(e.ctx.Declared, c.Source) {
				sc.ruledOut = append(sc.ruledOut, c.Source)
			}
			continue
		}
		k, why := e.compile(c, false)
		if k == nil {
			if why != "" {
				sc.warnf("%s not tested: %s", c.ID, why)
			}
			continue
		}
		canPulse := c.Source == ""
		if sustained || !canPulse {
			singles = append(singles, variant{c: c})
			compiled = append(compiled, []*knob{k})
		}
		if pulse && canPulse {
			kp, _ := e.compile(c, true)
			singles = append(singles, variant{c: c, pulse: true})
			compiled = append(compiled, []*knob{kp, durationKnob(c, true)})
		}
	}
	none := e.evaluateOrReuse(newWorker(site), rules.None, nil, nil)
	scores := make([]*scored, len(singles))
	parallel(len(singles), opt.Workers, site, func(i int, w *worker) {
		if ctx.Err() != nil {
			return
		}
		scores[i] = e.evaluateOrReuse(w, singles[i].id(), compiled[i], none)
		prog.add(1)
	})
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	noneCand := set.Candidate(rules.None)
	nonePrior, noneAdj := set.Prior(noneCand, e.ctx)
	entries := []entry{{s: none, prior: nonePrior, adj: noneAdj, cands: []*rules.Candidate{noneCand}}}
	mergeable := func(s *scored) bool {
		return s.signal < indistinguishableSignal && s.logZ <= none.logZ+math.Log(mergeEvidenceFactor)
	}
	for i, v := range singles {
		p, adj := set.Prior(v.c, e.ctx)
		if sustained && pulse && v.c.Source == "" {
			p /= 2 // the sustained and pulse variants share the candidate's prior
		}
		entries = append(entries, entry{s: scores[i], prior: p, adj: adj, cands: []*rules.Candidate{v.c}, merged: mergeable(scores[i]), pulse: v.pulse})
	}

	// Pairs (DESIGN §5), of sustained responses.
	jobs := e.pairJobs(entries, none)
	pairScores := make([]*scored, len(jobs))
	parallel(len(jobs), opt.Workers, site, func(i int, w *worker) {
		if ctx.Err() != nil {
			return
		}
		a, b := jobs[i][0], jobs[i][1]
		ka, _ := e.compile(a.cands[0], true)
		kbb, _ := e.compile(b.cands[0], true)
		pairScores[i] = e.evaluateOrReuse(w, a.cands[0].ID+"+"+b.cands[0].ID, []*knob{ka, kbb}, none)
		prog.add(1)
	})
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	for i, j := range jobs {
		s := pairScores[i]
		cands := []*rules.Candidate{s.knobs[0].cand, s.knobs[1].cand}
		adj := append(slices.Clone(j[0].adj), j[1].adj...)
		entries = append(entries, entry{s: s, prior: set.PairPrior * j[0].prior * j[1].prior, adj: adj, cands: cands, isPair: true, merged: mergeable(s)})
	}

	// Posteriors: "none" holds NoneShare of the prior, the rest is shared
	// in proportion to the context-adjusted weights.
	var weightSum float64
	for _, en := range entries[1:] {
		weightSum += en.prior
	}
	for i := range entries {
		if i == 0 {
			entries[i].prior = set.NoneShare
		} else if weightSum > 0 {
			entries[i].prior = (1 - set.NoneShare) * entries[i].prior / weightSum
		}
	}
	logPost := make([]float64, len(entries))
	for i, en := range entries {
		logPost[i] = en.s.logZ + math.Log(en.prior)
	}
	lz := logSumExp(logPost)
	hyps := make([]Hypothesis, len(entries))
	moments := make([][]Moments, len(entries))
	for i, en := range entries {
		h := Hypothesis{
			ID:                en.s.id,
			LogEvidence:       en.s.logZ,
			PriorProb:         en.prior,
			Posterior:         math.Exp(logPost[i] - lz),
			Adjustments:       en.adj,
			Pair:              en.isPair,
			MaxSignal:         en.s.signal,
			Indistinguishable: en.merged,
		}
		var labels, mechs []string
		for _, c := range en.cands {
			labels = append(labels, c.Label)
			mechs = append(mechs, c.Mechanism)
			h.Refs = append(h.Refs, c.Refs...)
			h.Tests = append(h.Tests, c.Tests...)
		}
		if i == 0 {
			labels = []string{set.NoneLabel(e.treated)}
		}
		if !en.isPair {
			h.Direction = en.cands[0].Direction
		}
		h.Label = strings.Join(labels, " + ")
		if en.pulse {
			h.Label += ", as a pulse"
		}
		h.Mechanism = strings.Join(mechs, "; ")
		h.Refs = uniq(h.Refs)
		h.Tests = uniq(h.Tests)
		moments[i] = en.s.moments()
		h.Fit = en.s.fit(e, moments[i], 0, len(e.obs))
		if i > 0 {
			h.Magnitudes = en.s.magnitudes()
			h.Duration = en.s.duration()
		}
		hyps[i] = h
	}
	// Hypotheses too improbable to matter to the Monte Carlo error of the
	// leading posteriors keep these draws in later rounds.
	e.settled = map[string]bool{}
	e.prev = map[string]*scored{}
	for i, h := range hyps {
		e.prev[h.ID] = entries[i].s
		e.settled[h.ID] = i > 0 && h.Posterior < settledPosterior && h.Posterior*math.Sqrt(entries[i].s.relVar) < mcseTarget/4
	}
	// Candidates indistinguishable from none are counted with it.
	var quiet []string
	for i := range hyps {
		if hyps[i].Indistinguishable {
			hyps[0].Posterior += hyps[i].Posterior
			hyps[i].Posterior = 0
			if !hyps[i].Pair && !entries[i].pulse {
				quiet = append(quiet, hyps[i].Label)
			}
		}
	}
	if len(quiet) > 0 {
		one := len(quiet) == 1
		pick := func(single, plural string) string {
			if one {
				return single
			}
			return plural
		}
		sc.warnf("the data cannot speak to %s: %s: %s keep the observed quantities within their standard errors of what %s predicts over %s whole prior range, so %s counted with it",
			pick("one response", fmt.Sprintf("%d responses", len(quiet))), JoinAnd(quiet), pick("it would", "they would"), hyps[0].Label, pick("its", "their"), pick("it is", "they are"))
	}
	// Monte Carlo error of each posterior: dlog p_H = (1 − p_H)·dlog Z_H −
	// Σ_{k≠H} p_k·dlog Z_k, with the relative variances of the evidences
	// taken as independent.
	var s2 float64
	for i := range hyps {
		s2 += hyps[i].Posterior * hyps[i].Posterior * entries[i].s.relVar
	}
	for i := range hyps {
		p, r := hyps[i].Posterior, entries[i].s.relVar
		hyps[i].PosteriorMCSE = p * math.Sqrt(math.Max(0, (1-p)*(1-p)*r+s2-p*p*r))
	}
	order := make([]int, len(hyps))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool {
		ha, hb := hyps[order[a]], hyps[order[b]]
		if ha.Posterior != hb.Posterior {
			return ha.Posterior > hb.Posterior
		}
		if ha.Indistinguishable != hb.Indistinguishable {
			return !ha.Indistinguishable
		}
		return ha.ID < hb.ID
	})
	sorted := make([]entry, len(order))
	joint := make([]Hypothesis, len(order))
	sortedMoments := make([][]Moments, len(order))
	for i, k := range order {
		sorted[i], joint[i], sortedMoments[i] = entries[k], hyps[k], moments[k]
	}
	sc.sorted, sc.joint, sc.sortedMoments = sorted, joint, sortedMoments
	sc.noFit = joint[0].Fit.P < noFitP
	if sc.noFit {
		top := joint[0]
		sc.warnf("no candidate reproduces the observed shifts: the best, %s, fails its fit check (χ² = %.1f on %d observables, p = %.2g). The cause may be a change nlens does not model, a site model unlike this site, or an error in the data; the ranking below is not evidence for any of them", top.ID, top.Fit.Chi2, top.Fit.DOF, top.Fit.P)
	}
	var leading []int
	var mass float64
	for i, h := range joint {
		if len(leading) >= maxLeading || (mass >= leadingMass && len(leading) >= 2) {
			break
		}
		if h.Posterior <= 0 {
			continue
		}
		leading = append(leading, i)
		mass += h.Posterior
	}
	sc.leading = leading
	for i := range min(mcseTop, len(joint)) {
		sc.worst = math.Max(sc.worst, joint[i].PosteriorMCSE)
	}
	sc.noneNoise = hyps[0].Posterior * math.Sqrt(entries[0].s.relVar)
	return sc, nil
}

// maxLead is the most pairs and pulses that take more than pairDraws
// draws; leadStep the factor by which their draws grow at each marking, up
// to maxLeadDraws. A pair's draw costs 49–81 forward runs against a
// single's 11: at 384 draws three pairs took 48 comparisons from 5.5 to
// 7.7 s (BenchmarkExplain48), at 128 to 5.7 s, and the three published
// cases that ended at the bound (urea on pine, riparian buffer, clear-cut
// series) then all reach the target.
const (
	maxLead      = mcseTop
	leadStep     = 4
	maxLeadDraws = 128
)

// leadPairs gives more draws to the pairs and pulses that keep the leading
// posteriors above their Monte Carlo target once the draws can grow no
// more, and says whether it gave any. A pair or pulse scores on pairDraws
// draws, so its share of a leading posterior's variance, p_H²·p_k²·relVar_k
// (p_H²·(1 − p_H)²·relVar_H for the leader itself), does not fall as the
// draws are added. For each of the top mcseTop, while the variance is above
// target², the pair or pulse whose share would fall most takes leadStep
// times its draws (up to every draw and maxLeadDraws), its share
// projected to fall in proportion. At most maxLead are so chosen, so
// their memory stays bounded whatever the draws (a pair at 128 draws keeps
// about 10 MB of fine-grid predictions for five observables); the unit is
// scored again after each marking (everything else reused), so a pair goes
// 16 → 64 → 128 draws only while it must.
func (e *engine) leadPairs(sc *scoring) bool {
	sorted, joint := sc.sorted, sc.joint
	most := min(len(e.draws), maxLeadDraws)
	marked := false
	for i := range min(mcseTop, len(joint)) {
		pH := joint[i].Posterior
		var total float64
		// gain: what giving a pair or pulse more draws takes off the
		// variance, and the draws it would take.
		type gain struct {
			id   string
			v    float64
			next int
		}
		var gains []gain
		for k, en := range sorted {
			pk := joint[k].Posterior
			if k == i {
				pk = 1 - pH
			}
			v := pH * pH * pk * pk * en.s.relVar
			if len(en.s.knobs) < 2 {
				total += v
				continue
			}
			nd, id := en.s.nd, joint[k].ID
			if d := e.lead[id]; d > nd {
				// Already given more draws than it was scored with.
				total += v * float64(nd) / float64(d)
				continue
			}
			total += v
			if next := min(leadStep*nd, most); next > nd {
				gains = append(gains, gain{id, v * (1 - float64(nd)/float64(next)), next})
			}
		}
		sort.SliceStable(gains, func(a, b int) bool { return gains[a].v > gains[b].v })
		for _, g := range gains {
			if total <= mcseTarget*mcseTarget {
				break
			}
			// A gain below a quarter of the excess is not worth the
			// draws (the excess is then mostly another's, already given).
			if _, ok := e.lead[g.id]; (!ok && len(e.lead) >= maxLead) || g.v < (total-mcseTarget*mcseTarget)/4 {
				continue
			}
			if e.lead == nil {
				e.lead = map[string]int{}
			}
			e.lead[g.id] = g.next
			marked = true
			total -= g.v
		}
	}
	return marked
}

// report writes the results of a scored unit: one per member comparison,
// with the joint ranking, the member's own predicted shifts, fit, fluxes,
// measurements and paths, and for a series its joint result.
func (e *engine) report(ctx context.Context, sc *scoring, u unit, prog *progress) ([]ComparisonResult, *SeriesResult, error) {
	kb := e.kb
	sorted, joint, sortedMoments, leading, noFit, ruledOut := sc.sorted, sc.joint, sc.sortedMoments, sc.leading, sc.noFit, sc.ruledOut
	// Warnings of the whole unit, and each part's own; a comparison of a
	// series carries its own, the series all of them.
	warnings := append(slices.Clone(e.warnings), sc.warnings...)
	// (The shifts-only note is said once for a series.)
	own := make([][]string, len(e.parts))
	var shiftsOnly []string
	for pi, p := range e.parts {
		if p.cmp.Steady {
			own[pi] = append(own[pi], steadyWarning(e, p))
		}
		if p.cmp.ShiftsOnly {
			shiftsOnly = append(shiftsOnly, fmt.Sprintf("%q", p.cmp.Name))
		}
	}
	all := slices.Clone(warnings)
	for pi := range e.parts {
		all = append(all, own[pi]...)
	}
	if len(shiftsOnly) > 0 {
		all = append(all, fmt.Sprintf("the shifts of %s came from a paper without group levels: the model's baseline could not be compared with a control, so the nuisance draws are unweighted", JoinAnd(shiftsOnly)))
	}

	// One result per member comparison: the joint ranking with the member's
	// own predicted shifts, fit, fluxes, measurements and paths.
	var out []ComparisonResult
	for pi, pt := range e.parts {
		cr := ComparisonResult{Name: pt.cmp.Name, Years: pt.cmp.Years, Observed: pt.cmp.Observed, Treatment: describeTreatment(kb, e.site, pt.tr),
			RuledOut: ruledOut, Series: u.series, Steady: pt.cmp.Steady, ShiftsOnly: pt.cmp.ShiftsOnly, NoFit: noFit, FittedSite: e.fit}
		for i, h := range joint {
			h.Predicted = map[string]Moments{}
			for o := pt.lo; o < pt.hi; o++ {
				h.Predicted[e.obs[o].Name] = sortedMoments[i][o]
			}
			if len(e.parts) > 1 {
				h.Fit = sorted[i].s.fit(e, sortedMoments[i], pt.lo, pt.hi)
			}
			h.Magnitudes = slices.Clone(h.Magnitudes)
			cr.Hypotheses = append(cr.Hypotheses, h)
		}
		e.fluxes(&cr, sorted, pi)
		for _, i := range leading {
			cr.Leading = append(cr.Leading, cr.Hypotheses[i].ID)
		}
		if err := e.nextMeasurements(ctx, &cr, sorted, leading, pi, prog); err != nil {
			return nil, nil, err
		}
		cr.Paths = e.paths(&cr, sorted, leading, pi)
		cr.Timeline = e.timeline(pi)
		if u.series == "" {
			cr.Warnings = slices.Clone(all) // one part: all is its own
		} else {
			cr.Warnings = slices.Clone(own[pi])
		}
		out = append(out, cr)
	}
	prog.add(4)
	for k := range out {
		out[k].Draws = min(len(e.draws), max(e.opt.MaxDraws, e.opt.Draws))
		for _, en := range sc.sorted {
			if en.s.id == rules.None {
				out[k].TreatmentAloneDraws = en.s.nd
			}
		}
	}
	if u.series == "" {
		return out, nil, nil
	}
	sr := &SeriesResult{Name: u.series, Kind: "years", NoFit: noFit, Warnings: all}
	for _, p := range e.parts {
		sr.Comparisons = append(sr.Comparisons, p.cmp.Name)
		if p.scale != 1 {
			sr.Kind = "dose"
		}
	}
	for i, h := range joint {
		h.Predicted = map[string]Moments{}
		for _, pt := range e.parts {
			for o := pt.lo; o < pt.hi; o++ {
				h.Predicted[pt.cmp.Name+"/"+e.obs[o].Name] = sortedMoments[i][o]
			}
		}
		h.Magnitudes = out[len(out)-1].Hypotheses[i].Magnitudes
		sr.Hypotheses = append(sr.Hypotheses, h)
	}
	// The series' next measurements are those of the member where the
	// best one tells most (a recovering disturbance says little by its
	// last year; archived samples of an earlier year can still be
	// measured).
	best := len(out) - 1
	for k := range out {
		if len(out[k].Measurements) > 0 && (len(out[best].Measurements) == 0 || out[k].Measurements[0].Bits > out[best].Measurements[0].Bits+BitsTie) {
			best = k
		}
	}
	sr.Measurements, sr.Leading, sr.MeasurementsAt = out[best].Measurements, out[best].Leading, out[best].Name
	return out, sr, nil
}

// steadyWarning says how far from its new steady state the slowest pool
// would still be 100 years after the change (DESIGN §3), for a comparison
// read at the new steady state.
func steadyWarning(e *engine, pt part) string {
	w := newWorker(e.site)
	pi := slices.IndexFunc(e.parts, func(q part) bool { return q.cmp == pt.cmp })
	e.changeFor(w, 0, pi, nil, nil)
	var at100, steady forward.State
	p := &e.draws[0].params
	plain := fmt.Sprintf("%q is read at the new steady state (years: steady)", pt.cmp.Name)
	if err := w.run.Advance(w.model, p, &w.change, &e.base[0], 100, false, &at100); err != nil {
		return plain
	}
	if err := w.run.Steady(w.model, p, &w.change, false, &steady); err != nil {
		return plain
	}
	worst, name := 0.0, ""
	for i, pool := range e.site.Pools {
		d0, d100, dInf := e.base[0].Delta15(i), at100.Delta15(i), steady.Delta15(i)
		if span := math.Abs(dInf - d0); span > 0.05 {
			if f := math.Abs(dInf-d100) / span; f > worst {
				worst, name = f, pool
			}
		}
	}
	if name == "" {
		return plain + "; under the declared treatment alone every pool is within 0.05 ‰ of it after 100 years"
	}
	return fmt.Sprintf("%s: under the declared treatment alone, 100 years after the change the %s pool would still have %.0f %% of its way to the new δ15N ahead of it; a contrast of known age is read more faithfully with years: N", plain, name, 100*worst)
}

// pairsFromWide is how many singles are paired when the best single fails
// its fit check; complementFrom how many are searched for singles that
// explain different observables.
const (
	pairsFromWide  = 7
	complementFrom = 8
	maxPairs       = 20
	// residualFrom singles each take up to residualPartners partners that
	// best explain what they leave unexplained.
	residualFrom     = 3
	residualPartners = 3
)

// pairJobs chooses the pairs to score (DESIGN §5): the best singles with
// each other, the partners that best explain what each of the best few
// leaves unexplained, singles that each explain observables the other
// does not, and a wider set when the best single fails its fit check. Two directions
// of one response are never paired, and each pair lists its parts in the
// order of the rules set.
func (e *engine) pairJobs(entries []entry, none *scored) [][2]entry {
	ranked := slices.Clone(entries[1:])
	sort.SliceStable(ranked, func(a, b int) bool {
		return ranked[a].s.logZ+math.Log(ranked[a].prior) > ranked[b].s.logZ+math.Log(ranked[b].prior)
	})
	var pool []entry
	for _, en := range ranked {
		if !en.merged && en.prior > 0 {
			pool = append(pool, en)
		}
	}
	if len(pool) == 0 {
		return nil
	}
	from := pairsFrom
	if pool[0].s.fit(e, pool[0].s.moments(), 0, len(e.obs)).P < noFitP {
		from = pairsFromWide
	}
	var jobs [][2]entry
	seen := map[string]bool{}
	order := func(c *rules.Candidate) int {
		return slices.IndexFunc(e.set.Candidates, func(o rules.Candidate) bool { return o.ID == c.ID })
	}
	pairable := func(a, b entry) bool {
		ca, cb := a.cands[0], b.cands[0]
		return ca.ID != cb.ID && (ca.Response == "" || ca.Response != cb.Response)
	}
	add := func(a, b entry) {
		if !pairable(a, b) || len(jobs) >= maxPairs {
			return
		}
		if order(b.cands[0]) < order(a.cands[0]) {
			a, b = b, a
		}
		key := a.cands[0].ID + "+" + b.cands[0].ID
		if seen[key] {
			return
		}
		seen[key] = true
		jobs = append(jobs, [2]entry{a, b})
	}
	// The joint screen's pairs first: the only source that searches both
	// magnitudes of every pair.
	for _, p := range e.screenJoint(pool, none, pairable) {
		add(p[0], p[1])
	}
	top := pool[:min(from, len(pool))]
	for i := range top {
		for j := i + 1; j < len(top); j++ {
			add(top[i], top[j])
		}
	}
	noneM := none.moments()
	// Residual partners: what a leading single leaves (observed minus its
	// predicted mean) against each other single's departure from none,
	// scaled by the best factor in [0, 2] (a linear screen: the pair itself
	// is then computed exactly); the partners that remove the most χ²,
	// at least 4 (two standard errors' worth), are paired with it.
	for _, a := range pool[:min(residualFrom, len(pool))] {
		ma := a.s.moments()
		type gain struct {
			b entry
			g float64
		}
		var gains []gain
		for _, b := range pool {
			if b.cands[0].ID == a.cands[0].ID {
				continue
			}
			mb := b.s.moments()
			var rr, rd, dd float64
			for o := range e.obs {
				v := e.variance[o]
				r := e.shift[o] - ma[o].Mean
				d := mb[o].Mean - noneM[o].Mean
				rr += r * r / v
				rd += r * d / v
				dd += d * d / v
			}
			if dd <= 0 {
				continue
			}
			c := math.Min(math.Max(rd/dd, 0), 2)
			if g := 2*c*rd - c*c*dd; g >= 4 {
				gains = append(gains, gain{b, g})
			}
		}
		sort.SliceStable(gains, func(i, j int) bool { return gains[i].g > gains[j].g })
		for _, g := range gains[:min(residualPartners, len(gains))] {
			add(a, g.b)
		}
	}
	// Complements: each explains (moves its predicted mean at least half a
	// standard error closer to the observation than none's) an observable
	// the other does not.
	cand := pool[:min(complementFrom, len(pool))]
	explains := make([][]bool, len(cand))
	for i, en := range cand {
		m := en.s.moments()
		explains[i] = make([]bool, len(e.obs))
		for o := range e.obs {
			se := e.observed[o].SE
			explains[i][o] = math.Abs(e.shift[o]-m[o].Mean) < math.Abs(e.shift[o]-noneM[o].Mean)-0.5*se
		}
	}
	only := func(a, b []bool) bool {
		for o := range a {
			if a[o] && !b[o] {
				return true
			}
		}
		return false
	}
	for i := range cand {
		for j := i + 1; j < len(cand); j++ {
			if only(explains[i], explains[j]) && only(explains[j], explains[i]) {
				add(cand[i], cand[j])
			}
		}
	}
	return jobs
}

// SeverityNotGiven says what a management with severities does when the
// study gives none (rank/draws.go draws the severity).
const SeverityNotGiven = "severity not given: drawn over low, moderate and high (typical values below are " + knowledge.DefaultSeverity + ")"

// describeTreatment records what the treatment applies at typical sizes.
func describeTreatment(kb *knowledge.Base, site *forward.Site, tr forward.Treatment) Treatment {
	out := Treatment{Severity: tr.Severity}
	for _, a := range tr.Additions {
		src, _ := kb.Source(a.Source)
		ap := AppliedAddition{Source: a.Source, Label: src.Label, RateKgPerHaYr: a.RateKgPerHaYr, D15N: src.D15NPermil, DurationYears: a.DurationYears}
		if a.D15N != nil {
			ap.D15N, ap.Measured = *a.D15N, true
		}
		out.Additions = append(out.Additions, ap)
	}
	for _, tag := range tr.Management {
		m, ok := kb.Management(tag)
		if !ok {
			out.Context = append(out.Context, tag)
			continue
		}
		am := AppliedManagement{Tag: tag, Label: m.Label, Refs: m.Refs}
		moves, rates, _ := m.Effect(tr.Severity)
		if len(m.Severity) > 0 && tr.Severity == "" {
			am.Actions = append(am.Actions, SeverityNotGiven)
		}
		pct := func(s knowledge.Size) string {
			return fmt.Sprintf("%.0f %% (%.0f–%.0f %%)", 100*s.Typical, 100*s.Range[0], 100*s.Range[1])
		}
		for _, mv := range moves {
			pool, ok := forward.MoveTarget(site, mv)
			if !ok {
				am.Actions = append(am.Actions, fmt.Sprintf("%s: not applied, the site has no %s pool", mv.Label, mv.From))
				continue
			}
			to := "out of the site"
			if pool != "out" {
				to = "to " + pool
			}
			am.Actions = append(am.Actions, fmt.Sprintf("%s: %s of %s %s at the start", mv.Label, pct(mv.Share), mv.From, to))
		}
		for _, r := range rates {
			a := fmt.Sprintf("%s: %s of the usual rate constant", r.Label, pct(r.Factor))
			if r.Years != nil {
				a += fmt.Sprintf(" for %.3g years (%.3g–%.3g)", r.Years.Typical, r.Years.Range[0], r.Years.Range[1])
			}
			am.Actions = append(am.Actions, a)
		}
		if g := m.Grazing; g != nil {
			am.Actions = append(am.Actions,
				fmt.Sprintf("grazers take %s of the foliage's outflow", pct(g.Offtake)),
				fmt.Sprintf("%s of what they eat leaves the site; of the rest %s returns as urine to soil NH4+ and the remainder as dung", pct(g.Export), pct(g.Urine)))
		}
		out.Management = append(out.Management, am)
	}
	return out
}

func uniq(s []string) []string {
	var out []string
	for _, v := range s {
		if !slices.Contains(out, v) {
			out = append(out, v)
		}
	}
	return out
}

// JoinAnd joins items as prose: "a", "a and b", "a, b and c".
func JoinAnd(items []string) string {
	if len(items) < 2 {
		return strings.Join(items, "")
	}
	return strings.Join(items[:len(items)-1], ", ") + " and " + items[len(items)-1]
}
