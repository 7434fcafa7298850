package rank

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"

	"nlens/rules"
)

// scored is one hypothesis evaluated on its quadrature grid.
type scored struct {
	id     string
	knobs  []*knob
	nf     []int // fine points per axis
	nc     []int // coarse nodes per axis
	nd, no int   // draws, observables
	// pred[(f·nd + d)·no + o]: predicted shift at fine point f, draw d.
	pred []float64
	// mom caches moments() for the current q (reset by likelihood).
	mom []Moments
	// q[f·nd + d]: posterior weight within the hypothesis (summing to 1;
	// exponentiated once, as every summary uses it).
	q []float64
	// logw are the log weights of the draws used (all draws, or only draw 0
	// with weight 1 when the site is certain).
	logw []float64
	logZ float64 // log evidence
	// dep is the departure of the predictions from none's at each fine
	// point (departure; shared, read only); signal its largest size over
	// fine points and observables, in observed standard errors.
	dep    []float64
	signal float64
	// relVar is the relative Monte Carlo variance of the evidence over the
	// nuisance draws: Var(Ẑ)/Z² = Σ_d (q_d − w_d)², with q_d the posterior
	// mass of draw d and w_d its weight (the self-normalised importance
	// estimator's delta-method variance; Owen 2013, Monte Carlo theory,
	// methods and examples, ch. 9).
	relVar float64
}

// fineCount is the number of fine points of the hypothesis.
func (s *scored) fineCount() int {
	n := 1
	for _, v := range s.nf {
		n *= v
	}
	return n
}

// fineTheta writes the magnitudes of fine point f into theta.
func (s *scored) fineTheta(f int, theta []float64) []float64 {
	theta = theta[:len(s.knobs)]
	for a := len(s.knobs) - 1; a >= 0; a-- {
		theta[a] = s.knobs[a].ax.fine[f%s.nf[a]]
		f /= s.nf[a]
	}
	return theta
}

// evaluate runs the forward model at the coarse nodes, carries predictions
// to the fine grid, and computes the likelihood of every (fine point, draw)
// and the departure from none (nil when evaluating none itself).
func (e *engine) evaluate(w *worker, id string, knobs []*knob, none *scored) *scored {
	s := &scored{id: id, knobs: knobs, nd: e.drawsFor(id, knobs), no: len(e.obs)}
	s.logw = e.logwFor(s.nd)
	for _, k := range knobs {
		s.nc = append(s.nc, len(k.ax.nodes))
		s.nf = append(s.nf, len(k.ax.fine))
	}
	nd, no := s.nd, s.no
	nCoarse := 1
	for _, v := range s.nc {
		nCoarse *= v
	}
	coarse := make([]float64, nCoarse*nd*no)
	// Draws scored in an earlier round, or by an earlier unit of the same
	// design, keep their predictions.
	done := e.pc.load(id, nCoarse, nd, no, coarse)
	theta := make([]float64, len(knobs))
	for c := range nCoarse {
		rem := c
		for a := len(knobs) - 1; a >= 0; a-- {
			theta[a] = knobs[a].ax.nodes[rem%s.nc[a]]
			rem /= s.nc[a]
		}
		for d := done; d < nd; d++ {
			e.predict(w, d, knobs, theta, coarse[(c*nd+d)*no:(c*nd+d+1)*no])
		}
	}
	e.pc.store(id, nCoarse, nd, no, coarse)
	fc := e.pc.finePred(id, nCoarse, nd, func() []float64 { return interpolate(coarse, knobs, s.nc, s.nf, nd*no) })
	s.pred = fc.pred
	s.likelihood(e)
	if none != nil {
		// The departure from none depends on the design and draws, not on
		// the observed shifts: computed once for every comparison of it.
		// Keyed also by none's draws (the weights of the first nd draws,
		// renormalised, differ in the last bit with the total) and by the
		// control levels that weight the draws.
		s.dep = e.pc.departure(fmt.Sprintf("%s@%d/%d %s", id, nd, none.nd, e.levels), func() []float64 { return s.departure(none) })
		for i, d := range s.dep {
			if v := math.Abs(d) / e.observed[i%no].SE; !math.IsNaN(v) {
				s.signal = math.Max(s.signal, v)
			}
		}
	}
	return s
}

// logwFor returns the log weights of the first nd draws, renormalised
// among themselves (kept per nd until the weights change; read only).
func (e *engine) logwFor(nd int) []float64 {
	if nd >= len(e.draws) {
		return e.logw
	}
	e.logwMu.Lock()
	defer e.logwMu.Unlock()
	if out, ok := e.logwBy[nd]; ok {
		return out
	}
	out := make([]float64, nd)
	lz := logSumExp(e.logw[:nd])
	for d := range nd {
		out[d] = e.logw[d] - lz
	}
	if e.logwBy == nil {
		e.logwBy = map[int][]float64{}
	}
	e.logwBy[nd] = out
	return out
}

// weights returns the draw weights of the hypothesis (exp of logw).
func (s *scored) weights() []float64 {
	w := make([]float64, len(s.logw))
	for d, lw := range s.logw {
		w[d] = math.Exp(lw)
	}
	return w
}

// departure returns, at every fine point f and observable o
// (dep[f·no + o]), the departure of the predictions from none's, draw by
// draw, averaged with the draw weights.
func (s *scored) departure(none *scored) []float64 {
	nF, nd, no := s.fineCount(), s.nd, s.no
	w := s.weights()
	out := make([]float64, nF*no)
	for f := range nF {
		mean := out[f*no : (f+1)*no]
		for d := range nd {
			p := s.pred[(f*nd+d)*no:][:no]
			p0 := none.pred[min(d, none.nd-1)*no:][:no]
			for o, v := range p {
				mean[o] += w[d] * (v - p0[o])
			}
		}
	}
	return out
}

// coarseCache holds one hypothesis's coarse predictions for its first nd
// draws, laid out [(c·nd + d)·no + o].
type coarseCache struct {
	nCoarse, nd int
	data        []float64
}

// predCache holds coarse predictions by hypothesis id. Hypotheses are
// scored in parallel, and units of one design share a cache.
type predCache struct {
	mu sync.Mutex
	m  map[string]*coarseCache
	// fine are the predictions carried to the fine grid, by id and number
	// of draws; deps their largest departures from none's, by id, number
	// of draws and none's draws; bases the baseline share of each draw, by
	// candidate id.
	fine  map[string]*fineCache
	deps  map[string]*depOnce
	bases map[string][]float64
	// draws are the design's nuisance draws made so far (read only).
	draws []draw
}

// drawsFor returns draws from to to (exclusive), making with mk only those
// not made yet by a unit of the same design.
func (pc *predCache) drawsFor(from, to int, mk func(from, to int) ([]draw, error)) ([]draw, error) {
	pc.mu.Lock()
	have := pc.draws
	pc.mu.Unlock()
	if len(have) >= to {
		return have[from:to:to], nil
	}
	more, err := mk(len(have), to)
	if err != nil {
		return nil, err
	}
	all := append(have[:len(have):len(have)], more...)
	pc.mu.Lock()
	if len(pc.draws) < len(all) {
		pc.draws = all
	}
	pc.mu.Unlock()
	return all[from:to:to], nil
}

// fineCache is one hypothesis's fine-grid predictions for nd draws.
type fineCache struct {
	nCoarse, nd int
	pred        []float64
}

// depOnce is a departure from none computed once.
type depOnce struct {
	once sync.Once
	dep  []float64
}

// departure returns the departure kept under key, computing it once. The
// returned slice is shared: callers must not change it.
func (pc *predCache) departure(key string, compute func() []float64) []float64 {
	pc.mu.Lock()
	if pc.deps == nil {
		pc.deps = map[string]*depOnce{}
	}
	d, ok := pc.deps[key]
	if !ok {
		d = &depOnce{}
		pc.deps[key] = d
	}
	pc.mu.Unlock()
	d.once.Do(func() { d.dep = compute() })
	return d.dep
}

// finePred returns the fine-grid predictions of the hypothesis for nd
// draws, interpolating (and keeping) them if they are not kept yet. The
// returned predictions are shared: callers must not change them.
func (pc *predCache) finePred(id string, nCoarse, nd int, make func() []float64) *fineCache {
	pc.mu.Lock()
	key := fmt.Sprintf("%s@%d", id, nd)
	if f, ok := pc.fine[key]; ok && f.nCoarse == nCoarse {
		pc.mu.Unlock()
		return f
	}
	pc.mu.Unlock()
	f := &fineCache{nCoarse: nCoarse, nd: nd, pred: make()}
	pc.mu.Lock()
	if pc.fine == nil {
		pc.fine = map[string]*fineCache{}
	}
	if old, ok := pc.fine[key]; ok && old.nCoarse == nCoarse {
		f = old // another unit of the design was first
	} else {
		pc.fine[key] = f
	}
	pc.mu.Unlock()
	return f
}

// baselines returns the baseline share of a candidate's knob in each of n
// draws, computing with value only the draws not kept yet. The returned
// slice is shared: callers must not change it.
func (pc *predCache) baselines(id string, n int, value func(d int) float64) []float64 {
	pc.mu.Lock()
	have := pc.bases[id]
	pc.mu.Unlock()
	if len(have) >= n {
		return have[:n:n]
	}
	out := make([]float64, n)
	copy(out, have)
	for d := len(have); d < n; d++ {
		out[d] = value(d)
	}
	pc.mu.Lock()
	if pc.bases == nil {
		pc.bases = map[string][]float64{}
	}
	if len(pc.bases[id]) < n {
		pc.bases[id] = out
	}
	pc.mu.Unlock()
	return out[:n:n]
}

// load copies into coarse (laid out for nd draws of no observables) the
// cached predictions of the hypothesis, for at most nd draws, and returns
// how many draws it copied.
func (pc *predCache) load(id string, nCoarse, nd, no int, coarse []float64) int {
	pc.mu.Lock()
	defer pc.mu.Unlock()
	cc, ok := pc.m[id]
	if !ok || cc.nCoarse != nCoarse {
		return 0
	}
	done := min(cc.nd, nd)
	for c := range nCoarse {
		copy(coarse[c*nd*no:(c*nd+done)*no], cc.data[c*cc.nd*no:(c*cc.nd+done)*no])
	}
	return done
}

// store keeps the predictions of nd draws unless more are kept already.
func (pc *predCache) store(id string, nCoarse, nd, no int, coarse []float64) {
	pc.mu.Lock()
	defer pc.mu.Unlock()
	if cc, ok := pc.m[id]; ok && cc.nCoarse == nCoarse && cc.nd >= nd {
		return
	}
	if pc.m == nil {
		pc.m = map[string]*coarseCache{}
	}
	pc.m[id] = &coarseCache{nCoarse: nCoarse, nd: nd, data: slices.Clone(coarse)}
}

// interpolate carries coarse predictions (blocks of size blk per node) to
// the fine grid axis by axis with each axis's spline weights.
func interpolate(coarse []float64, knobs []*knob, nc, nf []int, blk int) []float64 {
	cur := coarse
	shape := slices.Clone(nc)
	for a := range knobs {
		w := knobs[a].ax.w
		outer := 1
		for _, v := range shape[:a] {
			outer *= v
		}
		inner := blk
		for _, v := range shape[a+1:] {
			inner *= v
		}
		next := make([]float64, outer*nf[a]*inner)
		for o := range outer {
			for f := range nf[a] {
				dst := next[(o*nf[a]+f)*inner : (o*nf[a]+f+1)*inner]
				for k, wk := range w[f] {
					if wk == 0 {
						continue
					}
					src := cur[(o*nc[a]+k)*inner : (o*nc[a]+k+1)*inner]
					for i, v := range src {
						dst[i] += wk * v
					}
				}
			}
		}
		cur = next
		shape[a] = nf[a]
	}
	return cur
}

// likelihood fills q and logZ from the predictions.
func (s *scored) likelihood(e *engine) {
	nF, nd, no := s.fineCount(), s.nd, s.no
	logq := make([]float64, nF*nd)
	logPrior := -math.Log(float64(nF))
	var norm float64
	for o := range no {
		norm += -0.5 * math.Log(2*math.Pi*e.variance[o])
	}
	halfInv := make([]float64, no) // 0.5/variance
	for o := range no {
		halfInv[o] = 0.5 / e.variance[o]
	}
	shift := e.shift[:no]
	w := s.weights()
	for f := range nF {
		for d := range nd {
			var ll float64
			p := s.pred[(f*nd+d)*no : (f*nd+d+1)*no]
			for o, v := range p {
				r := shift[o] - v
				ll -= r * r * halfInv[o]
			}
			if math.IsNaN(ll) {
				ll = math.Inf(-1)
			}
			logq[f*nd+d] = s.logw[d] + logPrior + ll + norm
		}
	}
	// Normalise: q = exp(logq − max)/Σ, ln Z = max + ln Σ (one exp each).
	mx := math.Inf(-1)
	for _, x := range logq {
		if x > mx { // NaN never: ll is −Inf where it was NaN
			mx = x
		}
	}
	s.q = logq // reused in place
	if math.IsInf(mx, -1) {
		s.logZ = mx
		clear(s.q)
	} else {
		var sum float64
		for i, x := range logq {
			// Below e^−50 of the largest term a weight cannot move any
			// summary; skipping its exp halves the cost on sharp data.
			v := 0.0
			if x-mx > -50 {
				v = math.Exp(x - mx)
			}
			s.q[i] = v
			sum += v
		}
		s.logZ = mx + math.Log(sum)
		for i := range s.q {
			s.q[i] /= sum
		}
	}
	if nd > 1 {
		q := make([]float64, nd)
		for i, v := range s.q {
			q[i%nd] += v
		}
		for d := range nd {
			s.relVar += (q[d] - w[d]) * (q[d] - w[d])
		}
	}
}

// moments returns the posterior mean and sd of each observed observable's
// predicted shift.
func (s *scored) moments() []Moments {
	if s.mom != nil {
		return s.mom // callers read, never write, the moments
	}
	out := make([]Moments, s.no)
	for i, q := range s.q {
		if q == 0 {
			continue
		}
		p := s.pred[i*s.no : (i+1)*s.no]
		for o, v := range p {
			out[o].Mean += q * v
			out[o].SD += q * v * v
		}
	}
	for o := range out {
		out[o].SD = math.Sqrt(math.Max(0, out[o].SD-out[o].Mean*out[o].Mean))
	}
	s.mom = out
	return out
}

// fit is the posterior-predictive χ² check over observables lo to hi.
func (s *scored) fit(e *engine, m []Moments, lo, hi int) Fit {
	var chi2 float64
	for o := lo; o < hi; o++ {
		r := e.shift[o] - m[o].Mean
		chi2 += r * r / (e.variance[o] + m[o].SD*m[o].SD)
	}
	p := distuv.ChiSquared{K: float64(hi - lo)}.Survival(chi2)
	return Fit{Chi2: chi2, DOF: hi - lo, P: p}
}

// atBoundShare is the share of the prior range (on its integration scale)
// within which a 5 % or 95 % quantile counts as reaching the bound: a flat
// posterior reaches both bounds, a posterior piled against one reaches it.
const atBoundShare = 0.05

// interval returns the 5 % quantile, median and 95 % quantile (natural
// units) of a marginal on the axis's fine grid, and which prior bounds the
// interval reaches ("low", "high", "both" or "").
func (ax *axis) interval(marg []float64) (low, best, high float64, atBound string) {
	u05, u50, u95 := quantileU(marg, ax.ulo, ax.uhi, 0.05), quantileU(marg, ax.ulo, ax.uhi, 0.5), quantileU(marg, ax.ulo, ax.uhi, 0.95)
	w := atBoundShare * (ax.uhi - ax.ulo)
	switch lowAt, highAt := u05 <= ax.ulo+w, u95 >= ax.uhi-w; {
	case lowAt && highAt:
		atBound = "both"
	case lowAt:
		atBound = "low"
	case highAt:
		atBound = "high"
	}
	return ax.toNatural(u05), ax.toNatural(u50), ax.toNatural(u95), atBound
}

// marginal returns the posterior mass of each fine point of axis a.
func (s *scored) marginal(a int) []float64 {
	marg := make([]float64, s.nf[a])
	inner := s.nd
	for _, v := range s.nf[a+1:] {
		inner *= v
	}
	// q is laid out [outer][fine point of a][inner]: sum each inner run.
	for i := 0; i < len(s.q); i += inner {
		var sum float64
		for _, q := range s.q[i : i+inner] {
			sum += q
		}
		marg[(i/inner)%s.nf[a]] += sum
	}
	return marg
}

// magnitudes summarises each knob's marginal posterior on its fine axis:
// the median with the 5–95 % interval (quantiles interpolated within the
// equal-prior-mass cells on the integration scale, so the median always
// lies inside the interval), and which prior bounds the interval reaches.
func (s *scored) magnitudes() []Magnitude {
	var out []Magnitude
	for a, k := range s.knobs {
		if k.kind == kindDuration {
			continue
		}
		marg := s.marginal(a)
		c := k.cand
		noun := c.Noun
		if noun == "" {
			noun = c.Label
		}
		m := Magnitude{Candidate: c.ID, Kind: magnitudeKind(k.kind), Direction: c.Direction, Process: noun, Of: c.Magnitude.Of, Source: c.Source,
			Processes: c.Knob.Processes, Unit: c.Magnitude.Unit, Baseline: k.baseline}
		if k.kind == rules.KnobSource {
			m.Baseline = 0
		}
		ax := &k.ax
		m.Low, m.Best, m.High, m.AtBound = ax.interval(marg)
		m.PriorLow, m.PriorHigh = ax.lo, ax.hi
		m.Modes = modes(marg, ax)
		out = append(out, m)
	}
	return out
}

// Two modes are reported as two when each holds at least modeMass of the
// posterior and the density between them falls below modeDip of the lower
// peak (after a 5-point running mean over the fine grid).
const (
	modeMass = 0.1
	modeDip  = 0.5
)

// modes returns the two separated modes of a marginal, each with its
// median and 90 % interval, or nil when the posterior has one.
func modes(marg []float64, ax *axis) []Mode {
	n := len(marg)
	sm := make([]float64, n)
	for i := range n {
		var s float64
		var k int
		for j := max(0, i-2); j <= min(n-1, i+2); j++ {
			s += marg[j]
			k++
		}
		sm[i] = s / float64(k)
	}
	var total float64
	for _, v := range marg {
		total += v
	}
	// The valley that best separates the mass: for each cut, the lower of
	// the two peaks on either side against the dip at the cut.
	best, cut := 0.0, -1
	for c := 1; c < n-1; c++ {
		var left, right, lp, rp float64
		for i := range c {
			left += marg[i]
			lp = math.Max(lp, sm[i])
		}
		for i := c + 1; i < n; i++ {
			right += marg[i]
			rp = math.Max(rp, sm[i])
		}
		if left/total < modeMass || right/total < modeMass {
			continue
		}
		low := math.Min(lp, rp)
		if sm[c] < modeDip*low && low-sm[c] > best {
			best, cut = low-sm[c], c
		}
	}
	if cut < 0 {
		return nil
	}
	h := (ax.uhi - ax.ulo) / float64(n)
	var out []Mode
	for _, r := range [][2]int{{0, cut}, {cut + 1, n}} {
		part := marg[r[0]:r[1]]
		lo, hi := ax.ulo+h*float64(r[0]), ax.ulo+h*float64(r[1])
		var mass float64
		for _, v := range part {
			mass += v
		}
		q := func(p float64) float64 { return ax.toNatural(quantileU(part, lo, hi, p)) }
		out = append(out, Mode{Best: q(0.5), Low: q(0.05), High: q(0.95), Mass: mass / total})
	}
	return out
}

// duration summarises the pulse duration of a hypothesis, nil for a
// sustained one.
func (s *scored) duration() *Duration {
	for a, k := range s.knobs {
		if k.kind != kindDuration {
			continue
		}
		ax := &k.ax
		d := &Duration{PriorLow: ax.lo, PriorHigh: ax.hi}
		d.Low, d.Best, d.High, d.AtBound = ax.interval(s.marginal(a))
		return d
	}
	return nil
}

// magnitudeKind is the JSON kind of a knob's magnitude (DESIGN §7).
func magnitudeKind(kind string) string {
	switch kind {
	case rules.KnobShare, rules.KnobRoute:
		return "share"
	case rules.KnobTransferRatio:
		return "transfer-ratio"
	case rules.KnobNitrateShare:
		return "nitrate-share"
	}
	return "input"
}

// quantileU returns the q quantile of a marginal over nf equal cells
// spanning [ulo, uhi] on the integration scale, linear within a cell.
func quantileU(marg []float64, ulo, uhi, q float64) float64 {
	var total float64
	for _, v := range marg {
		total += v
	}
	h := (uhi - ulo) / float64(len(marg))
	var c float64
	for i, v := range marg {
		p := v / total
		if c+p >= q && p > 0 {
			return ulo + h*(float64(i)+(q-c)/p)
		}
		c += p
	}
	return uhi
}

// sample draws n (fine point, draw) pairs from the hypothesis's posterior.
func (s *scored) sample(n int, rng *rand.Rand) [][2]int {
	cum := make([]float64, len(s.q))
	var c float64
	for i, q := range s.q {
		c += q
		cum[i] = c
	}
	out := make([][2]int, n)
	for i := range out {
		u := rng.Float64() * c
		j := sort.SearchFloat64s(cum, u)
		if j >= len(cum) {
			j = len(cum) - 1
		}
		out[i] = [2]int{j / s.nd, j % s.nd}
	}
	return out
}

// logSumExp returns ln Σ exp(v) stably.
func logSumExp(v []float64) float64 {
	mx := math.Inf(-1)
	for _, x := range v {
		mx = math.Max(mx, x)
	}
	if math.IsInf(mx, -1) {
		return mx
	}
	var s float64
	for _, x := range v {
		s += math.Exp(x - mx)
	}
	return mx + math.Log(s)
}

// newRand returns a PCG stream for (seed, comparison, purpose) so that
// every stream is reproducible and independent of scheduling.
func newRand(seed, comparison, purpose uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, comparison<<20|purpose))
}
