package rank

import (
	"math"

	"gonum.org/v1/gonum/interp"

	"nlens/rules"
)

// Quadrature sizes. Coarse nodes are where the forward model runs; fine
// points are where the likelihood is evaluated, from spline-interpolated
// predictions. A log-uniform prior over 0.1–10 spans 4.6 in ln θ: 13 nodes
// are 0.38 apart and 121 fine points 0.04 apart, finer than the likelihood
// width of a well-measured shift.
//
// The share of uptake taken as nitrate bends the predictions sharply near
// its ends (one uptake route vanishes), so a uniform-prior axis gets more
// nodes. TestSplineAccuracy holds the spline to 0.1 ‰ (singles) and 0.2 ‰
// (pairs) of direct forward runs.
const (
	coarse1        = 11
	fine1          = 121
	coarse2        = 7
	fine2          = 41
	coarseUniform1 = 21
	coarseUniform2 = 15
)

// nodesFor returns the coarse node count for a prior in a single (pair
// false) or pair evaluation.
func nodesFor(m rules.Magnitude, pair bool) int {
	switch {
	case m.Prior == rules.PriorUniform && pair:
		return coarseUniform2
	case m.Prior == rules.PriorUniform:
		return coarseUniform1
	case pair:
		return coarse2
	}
	return coarse1
}

// axis is the quadrature of one magnitude prior.
type axis struct {
	prior      string
	lo, hi     float64   // prior bounds in natural units
	nodes      []float64 // coarse magnitudes, natural units
	fine       []float64 // fine magnitudes (midpoints of equal prior mass)
	w          [][]float64
	fixed      bool // a single known magnitude (a declared addition)
	fixedValue float64
}

// newAxis builds nodes and fine points for a prior with nc coarse nodes and
// nf fine points. The fine points are the midpoints of nf cells of equal
// prior mass, so each has weight 1/nf; nodes span the prior's ends, so the
// spline never extrapolates.
func newAxis(m rules.Magnitude, nc, nf int) axis {
	a := axis{prior: m.Prior, lo: m.Min, hi: m.Max}
	to := func(u float64) float64 { return u }
	ulo, uhi := m.Min, m.Max
	if m.Prior == rules.PriorLogUniform {
		to = math.Exp
		ulo, uhi = math.Log(m.Min), math.Log(m.Max)
	}
	uNodes := make([]float64, nc)
	for i := range nc {
		uNodes[i] = ulo + (uhi-ulo)*float64(i)/float64(nc-1)
		a.nodes = append(a.nodes, to(uNodes[i]))
	}
	uFine := make([]float64, nf)
	for i := range nf {
		uFine[i] = ulo + (uhi-ulo)*(float64(i)+0.5)/float64(nf)
		a.fine = append(a.fine, to(uFine[i]))
	}
	a.w = splineWeights(uNodes, uFine)
	return a
}

// fixedAxis is a magnitude known exactly.
func fixedAxis(v float64) axis {
	return axis{prior: "fixed", lo: v, hi: v, nodes: []float64{v}, fine: []float64{v}, w: [][]float64{{1}}, fixed: true, fixedValue: v}
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
