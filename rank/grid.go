package rank

import (
	"math"

	"gonum.org/v1/gonum/interp"

	"nlens/rules"
)

// Quadrature sizes. Coarse nodes are where the forward model runs; fine
// points are where the likelihood is evaluated, from spline-interpolated
// predictions. Shares are integrated on logit(s) and rates on ln(x): a
// share prior from 0.2 to 0.95 spans 4.3 logit units, so 13 nodes are 0.36
// apart and 121 fine points 0.035 apart, finer than the likelihood width
// of a well-measured shift. Near a share of 1 the predictions bend sharply
// (the other outflows of the pool vanish), so share axes get more nodes
// than rate axes. TestSplineAccuracy holds the spline to 0.1 ‰ (singles)
// and 0.2 ‰ (pairs) of direct forward runs.
const (
	coarse1      = 11
	fine1        = 121
	coarse2      = 7
	fine2        = 41
	coarseShare1 = 11
	coarseShare2 = 9
)

// fineFor returns the fine point count of a single (pair false) or pair
// evaluation.
func fineFor(pair bool) int {
	if pair {
		return fine2
	}
	return fine1
}

// nodesFor returns the coarse node count for a prior in a single (pair
// false) or pair evaluation.
func nodesFor(prior string, pair bool) int {
	switch {
	case prior == rules.PriorLogitUniform && pair:
		return coarseShare2
	case prior == rules.PriorLogitUniform:
		return coarseShare1
	case pair:
		return coarse2
	}
	return coarse1
}

// axis is the quadrature of one magnitude prior.
type axis struct {
	prior    string
	lo, hi   float64   // prior bounds in natural units
	ulo, uhi float64   // the same on the integration scale (ln or logit)
	nodes    []float64 // coarse magnitudes, natural units
	fine     []float64 // fine magnitudes (midpoints of equal prior mass)
	w        [][]float64
}

// newAxis builds nodes and fine points for a prior (log-uniform on
// lo–hi, or logit-uniform for a share) with nc coarse nodes and nf fine
// points. The fine points are the midpoints of nf cells of equal prior
// mass, so each has weight 1/nf; nodes span the prior's ends, so the spline
// never extrapolates.
func newAxis(prior string, lo, hi float64, nc, nf int) axis {
	a := axis{prior: prior, lo: lo, hi: hi}
	ulo, uhi := math.Log(lo), math.Log(hi)
	if prior == rules.PriorLogitUniform {
		ulo, uhi = logit(lo), logit(hi)
	}
	a.ulo, a.uhi = ulo, uhi
	uNodes := make([]float64, nc)
	for i := range nc {
		uNodes[i] = ulo + (uhi-ulo)*float64(i)/float64(nc-1)
		a.nodes = append(a.nodes, a.toNatural(uNodes[i]))
	}
	uFine := make([]float64, nf)
	for i := range nf {
		uFine[i] = ulo + (uhi-ulo)*(float64(i)+0.5)/float64(nf)
		a.fine = append(a.fine, a.toNatural(uFine[i]))
	}
	a.w = splineWeights(uNodes, uFine)
	return a
}

// splineWeights returns W with W[f][k] the weight of node k at fine point f
// for a natural cubic spline through the nodes. A natural cubic spline is
// linear in the node values, so W is found once by fitting gonum's
// interp.NaturalCubic to each unit vector.
func splineWeights(xs, at []float64) [][]float64 {
	w := make([][]float64, len(at))
	for f := range w {
		w[f] = make([]float64, len(xs))
	}
	ys := make([]float64, len(xs))
	for k := range xs {
		clear(ys)
		ys[k] = 1
		var nc interp.NaturalCubic
		if err := nc.Fit(xs, ys); err != nil {
			panic(err) // xs strictly increasing by construction
		}
		for f, x := range at {
			w[f][k] = nc.Predict(x)
		}
	}
	return w
}

// logit is ln(s/(1−s)).
func logit(s float64) float64 { return math.Log(s / (1 - s)) }

// logistic is the inverse of logit.
func logistic(u float64) float64 { return 1 / (1 + math.Exp(-u)) }

// toNatural maps a point of the integration scale to the magnitude.
func (a *axis) toNatural(u float64) float64 {
	if a.prior == rules.PriorLogitUniform {
		return logistic(u)
	}
	return math.Exp(u)
}
