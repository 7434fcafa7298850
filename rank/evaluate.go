package rank

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
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
	// logq[f·nd + d]: log posterior weight within the hypothesis.
	logq []float64
	// logw are the log weights of the draws used (all draws, or only draw 0
	// with weight 1 when the site is certain).
	logw   []float64
	logZ   float64 // log evidence
	signal float64 // max over f of √Σ_o (E_d pred)²/var
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
// to the fine grid, and computes the likelihood of every (fine point, draw).
func (e *engine) evaluate(w *worker, id string, knobs []*knob) *scored {
	s := &scored{id: id, knobs: knobs, nd: e.drawsFor(knobs), no: len(e.obs)}
	s.logw = e.logw
	if s.nd < len(e.draws) {
		// The first nd draws, their weights renormalised among themselves.
		s.logw = make([]float64, s.nd)
		lz := logSumExp(e.logw[:s.nd])
		for d := range s.nd {
			s.logw[d] = e.logw[d] - lz
		}
	}
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
	theta := make([]float64, len(knobs))
	for c := range nCoarse {
		rem := c
		for a := len(knobs) - 1; a >= 0; a-- {
			theta[a] = knobs[a].ax.nodes[rem%s.nc[a]]
			rem /= s.nc[a]
		}
		for d := range nd {
			e.predict(w, d, knobs, theta, coarse[(c*nd+d)*no:(c*nd+d+1)*no])
		}
	}
	s.pred = interpolate(coarse, knobs, s.nc, s.nf, nd*no)
	s.likelihood(e)
	return s
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

// likelihood fills logq and logZ from the predictions, and the signal.
func (s *scored) likelihood(e *engine) {
	nF, nd, no := s.fineCount(), s.nd, s.no
	s.logq = make([]float64, nF*nd)
	logPrior := -math.Log(float64(nF))
	var norm float64
	for o := range no {
		norm += -0.5 * math.Log(2*math.Pi*e.variance[o])
	}
	mean := make([]float64, no)
	w := make([]float64, nd)
	for d, lw := range s.logw {
		w[d] = math.Exp(lw)
	}
	for f := range nF {
		clear(mean)
		for d := range nd {
			var ll float64
			p := s.pred[(f*nd+d)*no:]
			for o := range no {
				r := e.shift[o] - p[o]
				ll -= 0.5 * r * r / e.variance[o]
				mean[o] += w[d] * p[o]
			}
			if math.IsNaN(ll) {
				ll = math.Inf(-1)
			}
			s.logq[f*nd+d] = s.logw[d] + logPrior + ll + norm
		}
		var sig float64
		for o := range no {
			sig += mean[o] * mean[o] / e.variance[o]
		}
		if !math.IsNaN(sig) {
			s.signal = math.Max(s.signal, math.Sqrt(sig))
		}
	}
	s.logZ = logSumExp(s.logq)
	for i := range s.logq {
		s.logq[i] -= s.logZ
	}
}

// noneScored is the no-change hypothesis: every prediction is zero.
func (e *engine) noneScored() *scored {
	s := &scored{id: "none", nd: 1, no: len(e.obs), pred: make([]float64, len(e.obs))}
	var ll float64
	for o := range s.no {
		ll += -0.5*e.shift[o]*e.shift[o]/e.variance[o] - 0.5*math.Log(2*math.Pi*e.variance[o])
	}
	s.logq = []float64{0}
	s.logZ = ll
	return s
}

// moments returns the posterior mean and sd of each observed observable's
// predicted shift.
func (s *scored) moments() []Moments {
	out := make([]Moments, s.no)
	for i, lq := range s.logq {
		q := math.Exp(lq)
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
	return out
}

// fit is the posterior-predictive χ² check.
func (s *scored) fit(e *engine, m []Moments) Fit {
	var chi2 float64
	for o := range s.no {
		r := e.shift[o] - m[o].Mean
		chi2 += r * r / (e.variance[o] + m[o].SD*m[o].SD)
	}
	p := distuv.ChiSquared{K: float64(s.no)}.Survival(chi2)
	return Fit{Chi2: chi2, DOF: s.no, P: p}
}

// magnitudes summarises each knob's marginal posterior on its fine axis.
func (s *scored) magnitudes() []Magnitude {
	var out []Magnitude
	for a, k := range s.knobs {
		marg := make([]float64, s.nf[a])
		inner := s.nd
		for _, v := range s.nf[a+1:] {
			inner *= v
		}
		for i, lq := range s.logq {
			f := (i / inner) % s.nf[a]
			marg[f] += math.Exp(lq)
		}
		m := Magnitude{Candidate: k.cand.ID, Unit: k.cand.Magnitude.Unit, Baseline: k.baseline, Fixed: k.ax.fixed}
		best := 0
		for f, v := range marg {
			if v > marg[best] {
				best = f
			}
		}
		m.Best = k.ax.fine[best]
		m.Low, m.High = quantile(marg, k.ax.fine, 0.05), quantile(marg, k.ax.fine, 0.95)
		var total float64
		for f, v := range marg {
			total += v
			if k.ax.fine[f] > k.baseline {
				m.ProbMore += v
			}
		}
		m.ProbMore /= total
		out = append(out, m)
	}
	return out
}

// quantile returns the fine value at which the cumulative marginal reaches q.
func quantile(marg, values []float64, q float64) float64 {
	var total, c float64
	for _, v := range marg {
		total += v
	}
	for i, v := range marg {
		c += v / total
		if c >= q {
			return values[i]
		}
	}
	return values[len(values)-1]
}

// sample draws n (fine point, draw) pairs from the hypothesis's posterior.
func (s *scored) sample(n int, rng *rand.Rand) [][2]int {
	cum := make([]float64, len(s.logq))
	var c float64
	for i, lq := range s.logq {
		c += math.Exp(lq)
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
