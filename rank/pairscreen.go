package rank

import (
	"math"
	"sort"
)

// The joint pair screen: which two responses, each at any magnitude of its
// prior, together reproduce the observed shifts. Each sustained single's
// departure from none's predictions (draw by draw, averaged with the draw
// weights) is known at its fine points from its own scoring; a pair's
// shifts are approximated as none's plus both departures (the first-order,
// additive approximation of two small perturbations of a linear system),
// and its evidence as the prior mean of the likelihood over both
// magnitudes. The pairs with the highest approximate posterior are then
// computed exactly. Unlike the residual screen it does not hold the first
// response at the magnitude it took alone, so it finds pairs whose parts
// pull the data in opposite directions (one response hiding another).
const (
	// screenStride takes every screenStride-th fine point of a single (121
	// fine points: 15 of equal prior mass, the magnitude resolution of a
	// pair's own grid).
	screenStride = 8
	// screenPairs is how many pairs the screen adds, ahead of the others.
	screenPairs = 4
)

// screenCurve is one single's departure from none at the screen's points:
// dep[k*no+o] for point k and observable o.
type screenCurve struct {
	en  entry
	dep []float64
	n   int
}

// screenPoints returns every screenStride-th fine point of a one-knob
// single's departure from none (scored.dep), and their number.
func (s *scored) screenPoints() ([]float64, int) {
	var dep []float64
	n := 0
	for f := screenStride / 2; f < s.fineCount(); f += screenStride {
		dep = append(dep, s.dep[f*s.no:(f+1)*s.no]...)
		n++
	}
	return dep, n
}

// screenJoint returns up to screenPairs pairs of the pool that explain the
// data better than either part alone, best first by approximate posterior
// (prior of the pair times its screened evidence).
// ok(a, b) says whether a pair may be formed at all.
func (e *engine) screenJoint(pool []entry, none *scored, ok func(a, b entry) bool) [][2]entry {
	no := len(e.obs)
	if no == 0 {
		return nil
	}
	// The residual against none's weighted mean prediction; none's spread
	// over the nuisance draws widens every observable's variance.
	w := none.weights()
	r := make([]float64, no)
	v := make([]float64, no)
	for o := range no {
		var m, m2 float64
		for d := range none.nd {
			p := none.pred[d*no+o]
			m += w[d] * p
			m2 += w[d] * p * p
		}
		r[o] = e.shift[o] - m
		v[o] = e.variance[o] + math.Max(0, m2-m*m)
	}
	var curves []screenCurve
	for _, en := range pool {
		if len(en.s.knobs) != 1 || en.s.fineCount() < screenStride || en.s.dep == nil {
			continue
		}
		dep, n := en.s.screenPoints()
		curves = append(curves, screenCurve{en: en, dep: dep, n: n})
	}
	// Each single alone, on the same approximation.
	alone := make([]float64, len(curves))
	for i, c := range curves {
		ll := make([]float64, c.n)
		for k := range c.n {
			ll[k] = -0.5 * chi2Of(r, c.dep[k*no:][:no], v)
		}
		alone[i] = logSumExp(ll) - math.Log(float64(c.n))
	}
	type scoredPair struct {
		a, b  int
		logPZ float64
	}
	var pairs []scoredPair
	ra := make([]float64, no)
	ll := make([]float64, 0, 256)
	for i := range curves {
		for j := i + 1; j < len(curves); j++ {
			a, b := curves[i], curves[j]
			if !ok(a.en, b.en) {
				continue
			}
			ll = ll[:0]
			for ka := range a.n {
				da := a.dep[ka*no:][:no]
				for o := range no {
					ra[o] = r[o] - da[o]
				}
				for kb := range b.n {
					ll = append(ll, -0.5*chi2Of(ra, b.dep[kb*no:][:no], v))
				}
			}
			z := logSumExp(ll) - math.Log(float64(len(ll)))
			// Only a pair that explains the data better than either of
			// its parts alone, by the factor that keeps a response apart
			// from none (DESIGN §5), is worth its exact computation: a
			// leading single with a partner that does not matter is that
			// single again.
			if math.IsNaN(z) || math.IsInf(z, -1) || z < max(alone[i], alone[j])+math.Log(mergeEvidenceFactor) {
				continue
			}
			pairs = append(pairs, scoredPair{i, j, z + math.Log(a.en.prior*b.en.prior)})
		}
	}
	sort.SliceStable(pairs, func(x, y int) bool { return pairs[x].logPZ > pairs[y].logPZ })
	var out [][2]entry
	for _, p := range pairs[:min(screenPairs, len(pairs))] {
		out = append(out, [2]entry{curves[p.a].en, curves[p.b].en})
	}
	return out
}

// chi2Of is Σ (r − d)²/v.
func chi2Of(r, d, v []float64) float64 {
	var chi2 float64
	for o, x := range r {
		x -= d[o]
		chi2 += x * x / v[o]
	}
	return chi2
}
