package rank

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"nlens/forward"
	"nlens/knowledge"
)

// draw is one nuisance realisation φ: the site's parameters, the δ of every
// undeclared source's parts (key "source/pool": δ15N, δ18O) and the known
// treatment with its uncertain sizes drawn.
type draw struct {
	params   forward.Params
	srcDelta map[string][2]float64
	// forcing is the treatment of each part, with the uncertain sizes of
	// this draw shared between parts.
	forcing  []forward.Change
	severity string
}

// sampleWithin maps a uniform u in (0, 1) to a knowledge distribution over
// [lo, hi] with mode (or typical value) mode, by its quantile function.
func sampleWithin(dist string, lo, hi, mode, u float64) float64 {
	if dist == knowledge.DistFixed || !(hi > lo) {
		return mode
	}
	if dist == knowledge.DistUniform {
		return lo + u*(hi-lo)
	}
	return distuv.NewTriangle(lo, hi, math.Min(math.Max(mode, lo), hi), nil).Quantile(u)
}

// stratified hands out the uniforms of the nuisance draws as a Latin
// hypercube design in blocks (McKay, Beckman & Conover 1979): within a
// block of B draws, the k-th uniform each draw asks for (its dimension k)
// falls once into each of the B strata [i/B, (i+1)/B). Blocks are [1, n0)
// and then [n0·2^(j−1), n0·2^j), so doubling the draws adds a block and
// keeps every earlier draw. Each stratum's permutation and jitter come from
// their own PCG stream, so a draw does not depend on how many there are.
type stratified struct {
	seed, stream uint64
	n0           int
	block, size  int // current draw's block index and block size
	i, dim       int // its index in the block and the next dimension
	strata       map[[2]int][]float64
}

func newStratified(seed, stream uint64, n0 int) *stratified {
	return &stratified{seed: seed, stream: stream, n0: max(n0, 2), strata: map[[2]int][]float64{}}
}

// startDraw positions the design at draw d ≥ 1.
func (s *stratified) startDraw(d int) {
	start, size, b := 1, s.n0-1, 0
	for d >= start+size {
		start += size
		size = start
		b++
	}
	s.block, s.size, s.i, s.dim = b, size, d-start, 0
}

// uniform returns the current draw's next stratified uniform in (0, 1).
func (s *stratified) uniform() float64 {
	key := [2]int{s.block, s.dim}
	s.dim++
	us, ok := s.strata[key]
	if !ok {
		rng := newRand(s.seed, s.stream, 1<<40|uint64(s.block)<<20|uint64(key[1]))
		perm := rng.Perm(s.size)
		us = make([]float64, s.size)
		for i := range us {
			us[i] = (float64(perm[i]) + rng.Float64()) / float64(s.size)
		}
		s.strata[key] = us
	}
	return math.Min(math.Max(us[s.i], 1e-12), 1-1e-12)
}

// makeDraws returns the nuisance draws from to to (exclusive); draw 0 is
// the nominal site with the
// treatment at its typical sizes. Every ε the site file does not fix is
// drawn from its knowledge distribution (ε18 from its ε15 times a ratio
// drawn from the knowledge ratio range); rates with a spread are multiplied
// by exp(spread·z), z ~ N(0,1) (median kept); inputs named by a knowledge
// source take δ15N (and δ18O) from its range unless the file fixes them;
// the nitrification δ18O likewise; every forcing size (removal shares,
// uptake reductions and their recovery time, unmeasured δ of additions)
// from its triangular range, and a fire's severity, when the
// study does not give it, uniformly from low, moderate and high.
func makeDraws(site *forward.Site, kb *knowledge.Base, trs []forward.Treatment, from, to int, lhs *stratified) ([]draw, error) {
	out := make([]draw, to-from)
	for k := range out {
		d := from + k
		if d > 0 {
			lhs.startDraw(d)
		}
		p := site.Params()
		dr := draw{srcDelta: map[string][2]float64{}}
		part := func(s knowledge.Source, pt knowledge.SourcePart) {
			d15, d18 := pt.D15NPermil, site.NitrificationD18O
			if pt.D18OPermil != nil {
				d18 = *pt.D18OPermil
			}
			if d > 0 {
				d15 = sampleWithin(knowledge.DistTriangular, pt.D15NRangePermil[0], pt.D15NRangePermil[1], pt.D15NPermil, lhs.uniform())
				if pt.D18OPermil != nil {
					d18 = sampleWithin(knowledge.DistTriangular, pt.D18ORangePermil[0], pt.D18ORangePermil[1], *pt.D18OPermil, lhs.uniform())
				}
			}
			dr.srcDelta[s.ID+"/"+pt.Pool] = [2]float64{d15, d18}
		}
		if d > 0 {
			for j, t := range site.Transfers {
				eff := t.Effect
				if !t.EpsilonFixed {
					p.Eps15[j] = sampleWithin(eff.Distribution, eff.RangePermil[0], eff.RangePermil[1], eff.EpsilonPermil, lhs.uniform())
				}
				if !t.Epsilon18Fixed {
					ratio := t.D18ORatio
					if eff.D18ORatio != nil && len(eff.D18ORatioRange) == 2 {
						ratio = sampleWithin(knowledge.DistTriangular, eff.D18ORatioRange[0], eff.D18ORatioRange[1], *eff.D18ORatio, lhs.uniform())
					}
					p.Eps18[j] = ratio * p.Eps15[j]
				}
				if t.Spread > 0 {
					p.K[j] *= math.Exp(t.Spread * distuv.UnitNormal.Quantile(lhs.uniform()))
				}
			}
			for i, in := range site.Inputs {
				src, ok := kb.Source(in.Source)
				if !ok {
					continue
				}
				pt, ok := src.PartFor(site.Pools[in.To])
				if !ok {
					pt = src.Parts[0]
				}
				if !in.D15NFixed {
					p.Inputs[i].D15N = sampleWithin(knowledge.DistTriangular, pt.D15NRangePermil[0], pt.D15NRangePermil[1], pt.D15NPermil, lhs.uniform())
				}
				if !in.D18OFixed && pt.D18OPermil != nil {
					p.Inputs[i].D18O = sampleWithin(knowledge.DistTriangular, pt.D18ORangePermil[0], pt.D18ORangePermil[1], *pt.D18OPermil, lhs.uniform())
				}
			}
			if !site.NitrificationD18OFixed {
				no := kb.NitrateOxygen
				p.NitrificationD18O = sampleWithin(knowledge.DistTriangular, no.RangePermil[0], no.RangePermil[1], no.NitrificationD18OPermil, lhs.uniform())
			}
		}
		for _, s := range kb.Sources {
			for _, pt := range s.Parts {
				part(s, pt)
			}
		}
		// Sizes are drawn once per key, so the parts of a series share the
		// same removal shares, recovery time and δ of an addition.
		sizes := map[string]float64{}
		size := forward.Nominal
		if d > 0 {
			size = func(key string, sz knowledge.Size) float64 {
				v, ok := sizes[key]
				if !ok {
					v = sampleWithin(knowledge.DistTriangular, sz.Range[0], sz.Range[1], sz.Typical, lhs.uniform())
					sizes[key] = v
				}
				return v
			}
			dr.severity = knowledge.Severities[min(int(lhs.uniform()*float64(len(knowledge.Severities))), len(knowledge.Severities)-1)]
		}
		for _, tr := range trs {
			t := tr
			if t.Severity == "" && d > 0 {
				t.Severity = dr.severity
			}
			c, err := forward.TreatmentChange(site, kb, t, size)
			if err != nil {
				return nil, err
			}
			dr.forcing = append(dr.forcing, c)
		}
		dr.params = p
		out[k] = dr
	}
	return out, nil
}

// Weighting of draws by the control's absolute values.
const (
	// levelSDPermil is the structural error allowed between a site model's
	// absolute δ and a real control plot's: sites of one biome differ by a
	// few ‰ in foliar and soil δ15N (the scatter of Craine et al. 2009 and
	// Amundson et al. 2003; value from memory).
	levelSDPermil = 2.0
	// levelSDLog is the same for pool sizes and fluxes, on the ln scale.
	levelSDLog = 0.5
	// minESSFraction: weights are tempered until the effective number of
	// draws is at least this share of all draws.
	minESSFraction = 0.25
)

// drawWeights turns the draws' log-likelihoods of the control means into
// normalised weights, tempered so that at least a quarter of the draws
// count (effective sample size).
func drawWeights(logw []float64) []float64 {
	n := len(logw)
	w := make([]float64, n)
	ess := func(tau float64) float64 {
		mx := math.Inf(-1)
		for _, l := range logw {
			mx = math.Max(mx, tau*l)
		}
		var s, s2 float64
		for i, l := range logw {
			w[i] = math.Exp(tau*l - mx)
			s += w[i]
		}
		for i := range w {
			w[i] /= s
			s2 += w[i] * w[i]
		}
		return 1 / s2
	}
	target := minESSFraction * float64(n)
	if ess(1) >= target {
		return w
	}
	lo, hi := 0.0, 1.0
	for range 50 {
		mid := (lo + hi) / 2
		if ess(mid) >= target {
			lo = mid
		} else {
			hi = mid
		}
	}
	ess(lo)
	return w
}
