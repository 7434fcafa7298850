package rank

import (
	"math"
	"slices"
	"sort"
)

// outcomeStep is the spacing of the outcome grid of the information
// integral, in units of the measurement noise sd, and outcomeReach how far
// (in sds) each predicted value's Gaussian is carried: beyond 9 sd its
// density is below e^-40 of its peak and changes no sum in double
// precision.
const (
	outcomeStep  = 0.25
	outcomeReach = 9.0
)

// InformationGain returns the mutual information, in bits, between the
// outcome y of a measurement and which candidate is true. Candidate k has
// probability p[k]; its predictive distribution of y is the equal-weight
// mixture of Gaussians with means samples[k][s] and common sd noise:
//
//	I = Σ_k p_k ∫ p(y|k) log2[p(y|k)/p(y)] dy,  p(y) = Σ_k p_k p(y|k).
//
// The integral is taken by the trapezoid rule on a fixed grid of step
// outcomeStep·noise covering every predicted value ± outcomeReach sd (the
// windows of distant values kept apart, so a narrow noise costs no more
// points): each density is evaluated once per grid point instead of once
// per quadrature node of every component, and for these smooth, rapidly
// decaying integrands the trapezoid rule is accurate far beyond the
// Monte Carlo error of the samples (Trefethen & Weideman 2014, SIAM Rev.
// 56:385–458, on its exponential convergence). I is 0 when every candidate
// predicts the same and tends to the entropy of p when the candidates'
// predictions are far apart relative to the noise.
func InformationGain(p []float64, samples [][]float64, noise float64) float64 {
	if !(noise > 0) {
		panic("rank: InformationGain needs a positive noise sd")
	}
	var total float64
	var all []float64
	for k, pk := range p {
		if pk > 0 && len(samples[k]) > 0 {
			total += pk
			all = append(all, samples[k]...)
		}
	}
	if total <= 0 {
		return 0
	}
	grid, weight := outcomeGrid(all, noise)
	dens := make([][]float64, len(p))
	mix := make([]float64, len(grid))
	reach := outcomeReach * noise
	norm := 1 / (noise * math.Sqrt(2*math.Pi))
	for k, pk := range p {
		if pk <= 0 || len(samples[k]) == 0 {
			continue
		}
		d := make([]float64, len(grid))
		c := norm / float64(len(samples[k]))
		for _, mu := range samples[k] {
			g := sort.SearchFloat64s(grid, mu-reach)
			for ; g < len(grid) && grid[g] <= mu+reach; g++ {
				z := (grid[g] - mu) / noise
				d[g] += c * math.Exp(-0.5*z*z)
			}
		}
		for g, v := range d {
			mix[g] += pk / total * v
		}
		dens[k] = d
	}
	var info float64
	for k, pk := range p {
		if dens[k] == nil {
			continue
		}
		var ik float64
		for g, v := range dens[k] {
			if v > 0 && mix[g] > 0 {
				ik += weight[g] * v * math.Log(v/mix[g])
			}
		}
		info += pk / total * ik
	}
	return math.Max(0, info/math.Ln2)
}

// outcomeGrid returns the points of the outcome grid (ascending) and their
// trapezoid weights: the union of the windows mu ± outcomeReach·noise,
// each run of overlapping windows covered by an even grid of step at most
// outcomeStep·noise.
func outcomeGrid(means []float64, noise float64) (grid, weight []float64) {
	ms := slices.Clone(means)
	slices.Sort(ms)
	reach := outcomeReach * noise
	for i := 0; i < len(ms); {
		lo, hi := ms[i]-reach, ms[i]+reach
		j := i + 1
		for j < len(ms) && ms[j]-reach <= hi {
			hi = ms[j] + reach
			j++
		}
		n := int(math.Ceil((hi-lo)/(outcomeStep*noise))) + 1
		h := (hi - lo) / float64(n-1)
		for q := range n {
			grid = append(grid, lo+h*float64(q))
			w := h
			if q == 0 || q == n-1 {
				w = h / 2
			}
			weight = append(weight, w)
		}
		i = j
	}
	return grid, weight
}

// Entropy returns the entropy in bits of a discrete distribution (which
// need not be normalised).
func Entropy(p []float64) float64 {
	var total, h float64
	for _, v := range p {
		total += v
	}
	for _, v := range p {
		if v > 0 {
			q := v / total
			h -= q * math.Log2(q)
		}
	}
	return h
}
