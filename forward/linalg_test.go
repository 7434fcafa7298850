package forward

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The workspace exponential agrees with gonum's mat.Dense.Exp (the same
// Higham 2005 algorithm, an independent implementation) to 1e-12 relative in
// the max norm, over norms that exercise every Padé degree and scaling.
func TestExpMatchesGonum(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(3, 4))
	for _, r := range []int{2, 5, 7, 13} {
		w := newExpWork(r)
		for _, scale := range []float64{1e-3, 0.1, 0.5, 1.5, 4, 50, 3000} {
			a := newGeneral(r, r)
			for i := range a.Data {
				a.Data[i] = scale * (rng.Float64() - 0.5) / float64(r)
			}
			dst := newGeneral(r, r)
			w.exp(dst, a)
			var want mat.Dense
			want.Exp(mat.NewDense(r, r, append([]float64(nil), a.Data...)))
			var worst, big float64
			for i := range r {
				for j := range r {
					big = math.Max(big, math.Abs(want.At(i, j)))
				}
			}
			for i := range r {
				for j := range r {
					worst = math.Max(worst, math.Abs(dst.Data[i*r+j]-want.At(i, j)))
				}
			}
			if worst > 1e-12*big {
				t.Errorf("r=%d scale=%g: max difference %.3g relative to max entry %.3g", r, scale, worst/big, big)
			}
		}
	}
}

// The LU solver reports exactly singular matrices as infinitely
// ill-conditioned, and solves a known system (x = [1, 2], hand computed).
func TestLUSolver(t *testing.T) {
	t.Parallel()
	s := newLUSolver(2)
	copy(s.a.Data, []float64{2, 1, 1, 3})
	copy(s.b.Data, []float64{4, 7})
	if c := s.factor(true); !(c > 1 && c < 10) {
		t.Errorf("condition of [[2 1] [1 3]]: got %g", c)
	}
	s.solve()
	if math.Abs(s.b.Data[0]-1) > 1e-15 || math.Abs(s.b.Data[1]-2) > 1e-15 {
		t.Errorf("solution: got %v, want [1 2]", s.b.Data)
	}
	copy(s.a.Data, []float64{1, 2, 2, 4})
	if c := s.factor(true); !math.IsInf(c, 1) {
		t.Errorf("singular matrix: got condition %g, want +Inf", c)
	}
}

// The small-matrix product agrees with gonum's Dgemm (same sums, possibly
// in a different order: 1e-14 relative).
func TestGemmSmall(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 3, 7, 17, 40} {
		a, b, c := newGeneral(n, n), newGeneral(n, n), newGeneral(n, n)
		for i := range a.Data {
			a.Data[i], b.Data[i] = rng.Float64()-0.5, rng.Float64()-0.5
		}
		gemm(a, b, c)
		var want mat.Dense
		want.Mul(mat.NewDense(n, n, a.Data), mat.NewDense(n, n, b.Data))
		for i := range n {
			for j := range n {
				if d := math.Abs(c.Data[i*n+j] - want.At(i, j)); d > 1e-14*float64(n) {
					t.Errorf("n=%d (%d,%d): differs by %g", n, i, j, d)
				}
			}
		}
	}
}
