package rank

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// hermiteNodes is the Gauss–Hermite order used for the information integral:
// exact for polynomials to degree 19 in y within each Gaussian component.
const hermiteNodes = 10

var ghX, ghW = func() ([]float64, []float64) {
	x := make([]float64, hermiteNodes)
	w := make([]float64, hermiteNodes)
	quad.Hermite{}.FixedLocations(x, w, math.Inf(-1), math.Inf(1))
	for i := range w {
		w[i] /= math.Sqrt(math.Pi) // weights of E[g(Z)], Z ~ N(0, 1), at z = √2·x
	}
	return x, w
}()

// InformationGain returns the mutual information, in bits, between the
// outcome y of a measurement and which candidate is true. Candidate k has
// probability p[k]; its predictive distribution of y is the equal-weight
// mixture of Gaussians with means samples[k][s] and common sd noise:
//
//	I = Σ_k p_k ∫ p(y|k) log2[p(y|k)/p(y)] dy,  p(y) = Σ_k p_k p(y|k).
//
// Each component's integral is done by Gauss–Hermite quadrature centred on
// that component, so narrow noise costs no accuracy. I is 0 when every
// candidate predicts the same and tends to the entropy of p when the
// candidates' predictions are far apart relative to the noise.
func InformationGain(p []float64, samples [][]float64, noise float64) float64 {
	if !(noise > 0) {
		panic("rank: InformationGain needs a positive noise sd")
	}
	var total float64
	for _, pk := range p {
		total += pk
	}
	logDens := func(k int, y float64) float64 {
		// log of (1/S) Σ_s φ((y − μ_s)/σ)/σ, stably.
		ss := samples[k]
		m := math.Inf(-1)
		for _, mu := range ss {
			z := (y - mu) / noise
			m = math.Max(m, -0.5*z*z)
		}
		var s float64
		for _, mu := range ss {
			z := (y - mu) / noise
			// Terms below e^-40 of the largest change nothing in double
			// precision once summed with it; skip their exp.
			if d := -0.5*z*z - m; d > -40 {
				s += math.Exp(d)
			}
		}
		return m + math.Log(s/float64(len(ss))) - math.Log(noise) - 0.5*math.Log(2*math.Pi)
	}
	lk := make([]float64, len(p))
	var info float64
	for k, pk := range p {
		if pk <= 0 || len(samples[k]) == 0 {
			continue
		}
		pk /= total
		var ek float64
		for _, mu := range samples[k] {
			for j, x := range ghX {
				y := mu + math.Sqrt2*noise*x
				// log p(y) = logsumexp_k' (log p_k' + log p(y|k')).
				mx := math.Inf(-1)
				for k2, p2 := range p {
					if p2 <= 0 || len(samples[k2]) == 0 {
						lk[k2] = math.Inf(-1)
						continue
					}
					lk[k2] = math.Log(p2/total) + logDens(k2, y)
					mx = math.Max(mx, lk[k2])
				}
				var s float64
				for _, v := range lk {
					s += math.Exp(v - mx)
				}
				logPy := mx + math.Log(s)
				ek += ghW[j] * (lk[k] - math.Log(pk) - logPy)
			}
		}
		info += pk * ek / float64(len(samples[k]))
	}
	return math.Max(0, info/math.Ln2)
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
