package forward

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// The model solves thousands of small systems per explanation, so it calls
// gonum's BLAS and LAPACK directly on preallocated workspaces: mat.LU
// estimates a condition number on every factorization (half the cost of a
// 5×5 steady state) and mat.Dense.Exp allocates its Padé table and LU on
// every call (28 allocations for a 6×6 exponential, measured with
// go test -bench). The numerics are gonum's; only the orchestration of the
// Padé approximant is written here.

func newGeneral(r, c int) blas64.General {
	return blas64.General{Rows: r, Cols: c, Stride: c, Data: make([]float64, r*c)}
}

// luSolver solves n×n systems A·x = b in place, without allocating.
type luSolver struct {
	a     blas64.General
	b     blas64.General
	ipiv  []int
	work  []float64
	iwork []int
}

func newLUSolver(n int) *luSolver {
	return &luSolver{a: newGeneral(n, n), b: newGeneral(n, 1), ipiv: make([]int, n), work: make([]float64, 4*n), iwork: make([]int, n)}
}

// factor computes the LU factorization of s.a in place. With cond set it
// also returns the 1-norm condition number estimate (LAPACK dgecon); an
// exactly singular matrix gives +Inf.
func (s *luSolver) factor(cond bool) float64 {
	var anorm float64
	if cond {
		anorm = lapack64.Lange(lapack.MaxColumnSum, s.a, s.work)
	}
	if !lapack64.Getrf(s.a, s.ipiv) {
		return math.Inf(1)
	}
	if !cond {
		return 0
	}
	rc := lapack64.Gecon(lapack.MaxColumnSum, s.a, anorm, s.work, s.iwork)
	if rc == 0 {
		return math.Inf(1)
	}
	return 1 / rc
}

// solve overwrites s.b with the solution of A·x = b (A factored).
func (s *luSolver) solve() { lapack64.Getrs(blas.NoTrans, s.a, s.b, s.ipiv) }

// expWork computes matrix exponentials of one size without allocating.
type expWork struct {
	r                        int
	a, a2, a4, a6, u, v, tmp blas64.General
	lu                       *luSolver
}

func newExpWork(r int) *expWork {
	w := &expWork{r: r, lu: newLUSolver(r)}
	for _, g := range []*blas64.General{&w.a, &w.a2, &w.a4, &w.a6, &w.u, &w.v, &w.tmp} {
		*g = newGeneral(r, r)
	}
	return w
}

// Padé coefficients b_k and the largest 1-norms θ_m for which the degree-m
// approximant is accurate to double precision (Higham 2005, Table 2.3 and
// eq. 2.5; SIAM J. Matrix Anal. Appl. 26:1179–1193).
var (
	padeTheta = [...]float64{1.495585217958292e-2, 2.539398330063230e-1, 9.504178996162932e-1, 2.097847961257068e0}
	padeB     = [...][]float64{
		{120, 60, 12, 1},
		{30240, 15120, 3360, 420, 30, 1},
		{17297280, 8648640, 1995840, 277200, 25200, 1512, 56, 1},
		{17643225600, 8821612800, 2075673600, 302702400, 30270240, 2162160, 110880, 3960, 90, 1},
	}
	theta13 = 5.371920351148152
	b13     = [...]float64{64764752532480000, 32382376266240000, 7771770303897600, 1187353796428800,
		129060195264000, 10559470521600, 670442572800, 33522128640,
		1323241920, 40840800, 960960, 16380, 182, 1}
)

// gemm sets c = a·b for square matrices. Below smallGemm rows it uses
// gemmSmall: gonum's Dgemm dispatches through blocking and goroutine
// machinery tuned for large matrices, which cost 45 % of an explanation's
// time on 7×7 exponentials (CPU profile of BenchmarkExplainDemo). Larger
// matrices go to gonum.
func gemm(a, b, c blas64.General) {
	n := a.Rows
	if n > smallGemm {
		blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, a, b, 0, c)
		return
	}
	gemmSmall(n, a.Data[:n*n], b.Data[:n*n], c.Data[:n*n])
}

// gemmSmall multiplies n×n row-major matrices in 2×4 blocks of c held in
// registers: 8 multiply-adds per 6 loads and no stores, where the plain
// i-k-j loop loads and stores c once per multiply-add (larger blocks spill
// amd64's 16 vector registers). The columns and row left over go by dot
// products. Measured against the i-k-j loop (BenchmarkGemm9, 2-vCPU
// Intel Xeon VM): 2.5× faster on 6×6, 1.75× on 9×9, 1.6× on 19×19.
func gemmSmall(n int, a, b, c []float64) {
	n2, n4 := n&^1, n&^3
	for i := 0; i < n2; i += 2 {
		a0, a1 := a[i*n:(i+1)*n], a[(i+1)*n:(i+2)*n]
		a1 = a1[:len(a0)]
		for j := 0; j < n4; j += 4 {
			var c00, c01, c02, c03, c10, c11, c12, c13 float64
			for k, x := range a0 {
				bk := b[k*n+j : k*n+j+4 : k*n+j+4]
				b0, b1, b2, b3 := bk[0], bk[1], bk[2], bk[3]
				c00 += x * b0
				c01 += x * b1
				c02 += x * b2
				c03 += x * b3
				y := a1[k]
				c10 += y * b0
				c11 += y * b1
				c12 += y * b2
				c13 += y * b3
			}
			r := c[i*n+j : i*n+j+4 : i*n+j+4]
			r[0], r[1], r[2], r[3] = c00, c01, c02, c03
			r = c[(i+1)*n+j : (i+1)*n+j+4 : (i+1)*n+j+4]
			r[0], r[1], r[2], r[3] = c10, c11, c12, c13
		}
		for j := n4; j < n; j++ {
			var s0, s1 float64
			for k, x := range a0 {
				v := b[k*n+j]
				s0 += x * v
				s1 += a1[k] * v
			}
			c[i*n+j], c[(i+1)*n+j] = s0, s1
		}
	}
	if n2 < n {
		i := n2
		ai := a[i*n : (i+1)*n]
		for j := range n {
			var s float64
			for k, x := range ai {
				s += x * b[k*n+j]
			}
			c[i*n+j] = s
		}
	}
}

// smallGemm is the largest size multiplied by the plain loop.
const smallGemm = 32

// setIdentityScaled sets g = s·I.
func setIdentityScaled(g blas64.General, s float64) {
	clear(g.Data)
	for i := range g.Rows {
		g.Data[i*g.Stride+i] = s
	}
}

// axpy adds alpha·x to y elementwise (same shape).
func axpy(alpha float64, x, y blas64.General) {
	for i, v := range x.Data {
		y.Data[i] += alpha * v
	}
}

// exp writes exp(A) into dst (r×r), by scaling and squaring with Padé
// approximants of degree 3, 5, 7, 9 or 13 chosen from ‖A‖₁ (Higham 2005,
// Algorithm 2.3; the same algorithm as gonum's mat.Dense.Exp, which the
// tests compare against).
func (w *expWork) exp(dst, src blas64.General) {
	copy(w.a.Data, src.Data)
	norm := lapack64.Lange(lapack.MaxColumnSum, w.a, w.lu.work)
	for m, th := range padeTheta {
		if norm <= th {
			w.padeLow(padeB[m])
			w.finish(dst)
			return
		}
	}
	s := 0
	if norm > theta13 {
		s = int(math.Ceil(math.Log2(norm / theta13)))
		scale := math.Ldexp(1, -s)
		for i := range w.a.Data {
			w.a.Data[i] *= scale
		}
	}
	b := b13[:]
	gemm(w.a, w.a, w.a2)
	gemm(w.a2, w.a2, w.a4)
	gemm(w.a2, w.a4, w.a6)
	// U = A·[A6·(b13·A6 + b11·A4 + b9·A2) + b7·A6 + b5·A4 + b3·A2 + b1·I]
	clear(w.tmp.Data)
	axpy(b[13], w.a6, w.tmp)
	axpy(b[11], w.a4, w.tmp)
	axpy(b[9], w.a2, w.tmp)
	gemm(w.a6, w.tmp, w.v) // v used as scratch
	axpy(b[7], w.a6, w.v)
	axpy(b[5], w.a4, w.v)
	axpy(b[3], w.a2, w.v)
	for i := range w.r {
		w.v.Data[i*w.r+i] += b[1]
	}
	gemm(w.a, w.v, w.u)
	// V = A6·(b12·A6 + b10·A4 + b8·A2) + b6·A6 + b4·A4 + b2·A2 + b0·I
	clear(w.tmp.Data)
	axpy(b[12], w.a6, w.tmp)
	axpy(b[10], w.a4, w.tmp)
	axpy(b[8], w.a2, w.tmp)
	gemm(w.a6, w.tmp, w.v)
	axpy(b[6], w.a6, w.v)
	axpy(b[4], w.a4, w.v)
	axpy(b[2], w.a2, w.v)
	for i := range w.r {
		w.v.Data[i*w.r+i] += b[0]
	}
	w.finish(dst)
	for range s {
		gemm(dst, dst, w.tmp)
		copy(dst.Data, w.tmp.Data)
	}
}

// padeLow computes U (odd part) and V (even part) of a low-degree Padé
// approximant of exp(A): V = Σ b_{2j}·A^{2j}, U = A·Σ b_{2j+1}·A^{2j}.
func (w *expWork) padeLow(b []float64) {
	gemm(w.a, w.a, w.a2)
	setIdentityScaled(w.v, b[0])
	setIdentityScaled(w.tmp, b[1])
	setIdentityScaled(w.a4, 1) // running power A^{2j}
	for j := 1; 2*j < len(b); j++ {
		gemm(w.a4, w.a2, w.a6)
		copy(w.a4.Data, w.a6.Data)
		axpy(b[2*j], w.a4, w.v)
		if 2*j+1 < len(b) {
			axpy(b[2*j+1], w.a4, w.tmp)
		}
	}
	gemm(w.a, w.tmp, w.u)
}

// finish solves (V − U)·X = (V + U) into dst.
func (w *expWork) finish(dst blas64.General) {
	for i := range w.u.Data {
		vi, ui := w.v.Data[i], w.u.Data[i]
		w.lu.a.Data[i] = vi - ui
		dst.Data[i] = vi + ui
	}
	lapack64.Getrf(w.lu.a, w.lu.ipiv)
	lapack64.Getrs(blas.NoTrans, w.lu.a, dst, w.lu.ipiv)
}
