package forward

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/blas/blas64"
)

// MaxCondition is the largest condition number of a steady-state system
// that nlens accepts. A solve loses about log10(cond) digits; at 1e11 the
// worst-case relative error cond·ε_machine ≈ 1e-5 would be 0.01 ‰ on δ,
// half the 0.02 ‰ to which the model is held.
const MaxCondition = 1e11

// ConditionError reports a near-singular site with its condition number.
type ConditionError struct {
	Site   string
	System string // "14N" or "15N"
	Cond   float64
}

func (e *ConditionError) Error() string {
	return fmt.Sprintf("site %q is numerically ill-conditioned: the %s steady-state system has condition number %.3g (limit %.0e); check for pools that barely exchange with the rest or rates many orders of magnitude apart", e.Site, e.System, e.Cond, MaxCondition)
}

// State is the amount of each isotope in each pool, kg N/ha (14N and 15N
// summed give the pool), and of nitrate oxygen when it was computed (in
// the same units times three O per N).
type State struct {
	N14, N15 []float64
	O16, O18 float64
	HasO     bool
}

// Total returns the N in pool i, kg N/ha.
func (x *State) Total(i int) float64 { return x.N14[i] + x.N15[i] }

// Delta15 returns the δ15N (‰ AIR) of pool i.
func (x *State) Delta15(i int) float64 { return Delta(x.N15[i]/x.N14[i], RAir) }

// CopyFrom makes x a copy of y, reusing x's storage.
func (x *State) CopyFrom(y *State) {
	x.N14 = append(x.N14[:0], y.N14...)
	x.N15 = append(x.N15[:0], y.N15...)
	x.O16, x.O18, x.HasO = y.O16, y.O18, y.HasO
}

// Model evaluates one site. It keeps workspaces between calls, so a Model
// must not be used by two goroutines at once; make one per worker. Calls
// allocate nothing once the workspaces exist.
type Model struct {
	Site    *Site
	n       int
	nitrate int
	lu      *luSolver
	// exponentials: one isotope's augmented system (n+1), or the coupled
	// system with nitrate oxygen (2n+3); e1/e2 hold the last results.
	expN, expO   *expWork
	augN, augO   blas64.General
	e14, e15, eO blas64.General
	// last14, last15, lastO are the matrices whose exponentials e14, e15
	// and eO hold (nil before the first): a trajectory's equal steps under
	// constant rates reuse them instead of recomputing.
	last14, last15, lastO []float64
	z                     []float64
	oRows                 [2][]float64 // nitrate-oxygen rows (see fillOxygen)
}

// NewModel prepares a model of the site.
func NewModel(s *Site) *Model {
	n := len(s.Pools)
	return &Model{
		Site:    s,
		n:       n,
		nitrate: s.PoolIndex("nitrate"),
		lu:      newLUSolver(n),
		expN:    newExpWork(n + 1),
		augN:    newGeneral(n+1, n+1),
		e14:     newGeneral(n+1, n+1),
		e15:     newGeneral(n+1, n+1),
		z:       make([]float64, 2*n+2),
		oRows:   [2][]float64{make([]float64, 2*n+3), make([]float64, 2*n+3)},
	}
}

// rate constant of transfer j for isotope iso (0: 14N, 1: 15N).
func kIso(p *Params, j, iso int) float64 {
	if iso == 0 {
		return p.K[j]
	}
	return p.K[j] / Alpha(p.Eps15[j])
}

// inputSplit returns the 14N and 15N (or 16O and 18O) parts of an amount F
// with ratio R: F/(1+R) and F·R/(1+R).
func inputSplit(f, r float64) (light, heavy float64) {
	return f / (1 + r), f * r / (1 + r)
}

// fillN writes K·scale into the top-left n×n block of a (row stride
// stride) and b·scale into column bcol of the same rows (when bcol ≥ 0) or
// into b (when b is not nil), for one N isotope. The block must be zero.
func (m *Model) fillN(p *Params, iso int, a []float64, stride int, scale float64, bcol int, b []float64) {
	for j, t := range m.Site.Transfers {
		k := kIso(p, j, iso) * scale
		if k == 0 {
			continue
		}
		a[t.From*stride+t.From] -= k
		if t.To != Out {
			a[t.To*stride+t.From] += k
		}
	}
	for _, in := range p.Inputs {
		l, h := inputSplit(in.RateKgPerHaYr, Ratio(in.D15N, RAir))
		v := l
		if iso == 1 {
			v = h
		}
		if bcol >= 0 {
			a[in.To*stride+bcol] += v * scale
		}
		if b != nil {
			b[in.To] += v * scale
		}
	}
}

// Steady writes the steady state of the system with parameters p into dst;
// nitrate oxygen is computed when withO is set. The condition number is
// checked on the 14N system: the 15N system has the same structure with
// every rate constant divided by its α (1.00–1.05), so its conditioning
// differs by at most that factor.
func (m *Model) Steady(p *Params, withO bool, dst *State) error {
	n := m.n
	dst.N14 = resize(dst.N14, n)
	dst.N15 = resize(dst.N15, n)
	for iso := range 2 {
		clear(m.lu.a.Data)
		clear(m.lu.b.Data)
		m.fillN(p, iso, m.lu.a.Data, n, 1, -1, m.lu.b.Data)
		c := m.lu.factor(iso == 0)
		if math.IsInf(c, 1) || c > MaxCondition {
			return &ConditionError{Site: m.Site.ID, System: [2]string{"14N", "15N"}[iso], Cond: c}
		}
		for i := range m.lu.b.Data {
			m.lu.b.Data[i] = -m.lu.b.Data[i]
		}
		m.lu.solve()
		out := dst.N14
		if iso == 1 {
			out = dst.N15
		}
		copy(out, m.lu.b.Data)
	}
	dst.HasO = withO
	dst.O16, dst.O18 = 0, 0
	if withO {
		// Steady state of each O row: gain from the N state and inputs over
		// the first-order loss on the diagonal.
		m.fillOxygen(p)
		n := m.n
		for k, row := range m.oRows {
			g := row[2*n+2]
			for i := range n {
				g += row[i]*dst.N14[i] + row[n+i]*dst.N15[i]
			}
			if k == 0 {
				dst.O16 = g / -row[2*n]
			} else {
				dst.O18 = g / -row[2*n+1]
			}
		}
	}
	return nil
}

// fillOxygen writes the two nitrate-oxygen rows of the full system into
// m.oRows, in the layout of the augmented state [N14 (n), N15 (n), 16O, 18O,
// 1]: dO/dt = row·[N14; N15; O; 1]. O enters with every N flux into nitrate
// (three O per N) at the nitrification δ18O and with nitrate inputs at their
// δ18O; each transfer out of nitrate removes 16O at k and 18O at k/α18. The
// steady state and the transient both read these rows, so the oxygen
// budget is written once.
func (m *Model) fillOxygen(p *Params) {
	n, q := m.n, m.nitrate
	o16, o18, c := 2*n, 2*n+1, 2*n+2
	r16, r18 := m.oRows[0], m.oRows[1]
	clear(r16)
	clear(r18)
	ln, hn := inputSplit(3, Ratio(p.NitrificationD18O, RVSMOW))
	for j, t := range m.Site.Transfers {
		if t.To == q {
			k14, k15 := kIso(p, j, 0), kIso(p, j, 1)
			r16[t.From] += ln * k14
			r16[n+t.From] += ln * k15
			r18[t.From] += hn * k14
			r18[n+t.From] += hn * k15
		}
		if t.From == q {
			r16[o16] -= p.K[j]
			r18[o18] -= p.K[j] / Alpha(p.Eps18[j])
		}
	}
	for _, in := range p.Inputs {
		if in.To == q {
			l, h := inputSplit(3*in.RateKgPerHaYr, Ratio(in.D18O, RVSMOW))
			r16[c] += l
			r18[c] += h
		}
	}
}

func resize(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// Advance writes into dst the state t years after x0 under parameters p,
// exactly: z(t) = exp(A·t)·z0 + ∫exp(A·s)ds·c, read from the exponential of
// the augmented matrix [[A·t, c·t], [0, 0]] (DESIGN §3). Without oxygen the
// 14N and 15N systems are advanced separately; with withO the nitrate
// oxygen pair is advanced together with them (x0 must then carry oxygen).
func (m *Model) Advance(p *Params, x0 *State, t float64, withO bool, dst *State) error {
	if t < 0 || math.IsNaN(t) || math.IsInf(t, 0) {
		return fmt.Errorf("time must be a finite number of years ≥ 0, got %g", t)
	}
	if withO && !x0.HasO {
		return fmt.Errorf("advance with nitrate oxygen needs a start state that has it")
	}
	m.expAugmented(p, t, withO)
	m.applyExp(x0, withO, dst)
	return nil
}

// expAugmented computes the exponentials of the augmented systems for a
// step of t years into m.e14 and m.e15 (or m.eO with oxygen).
func (m *Model) expAugmented(p *Params, t float64, withO bool) {
	n := m.n
	if !withO {
		for iso := range 2 {
			e := m.e14
			if iso == 1 {
				e = m.e15
			}
			clear(m.augN.Data)
			m.fillN(p, iso, m.augN.Data, n+1, t, n, nil)
			last := &m.last14
			if iso == 1 {
				last = &m.last15
			}
			if *last != nil && slices.Equal(*last, m.augN.Data) {
				continue
			}
			m.expN.exp(e, m.augN)
			*last = append((*last)[:0], m.augN.Data...)
		}
		return
	}
	d := 2*n + 2
	if m.expO == nil {
		m.expO = newExpWork(d + 1)
		m.augO = newGeneral(d+1, d+1)
		m.eO = newGeneral(d+1, d+1)
	}
	a := m.augO.Data
	clear(a)
	st := d + 1
	m.fillN(p, 0, a, st, t, d, nil)
	// The 15N block sits at offset (n, n) and its inputs in column d.
	m.fillN(p, 1, a[n*st+n:], st, t, d-n, nil)
	m.fillOxygen(p)
	for k, row := range m.oRows {
		dst := a[(2*n+k)*st : (2*n+k+1)*st]
		for c, v := range row {
			dst[c] += v * t
		}
	}
	if m.lastO != nil && slices.Equal(m.lastO, a) {
		return
	}
	m.expO.exp(m.eO, m.augO)
	m.lastO = append(m.lastO[:0], a...)
}

// applyExp computes dst from x0 with the exponentials of expAugmented.
func (m *Model) applyExp(x0 *State, withO bool, dst *State) {
	n := m.n
	dst.N14 = resize(dst.N14, n)
	dst.N15 = resize(dst.N15, n)
	if !withO {
		for iso := range 2 {
			e, src, out := m.e14, x0.N14, dst.N14
			if iso == 1 {
				e, src, out = m.e15, x0.N15, dst.N15
			}
			z := m.z[:n]
			copy(z, src)
			for i := range n {
				row := e.Data[i*(n+1):]
				v := row[n]
				for j := range n {
					v += row[j] * z[j]
				}
				out[i] = v
			}
		}
		dst.HasO, dst.O16, dst.O18 = false, 0, 0
		return
	}
	d := 2*n + 2
	z := m.z[:d]
	copy(z, x0.N14)
	copy(z[n:], x0.N15)
	z[2*n], z[2*n+1] = x0.O16, x0.O18
	for i := range d {
		row := m.eO.Data[i*(d+1):]
		v := row[d]
		for j := range d {
			v += row[j] * z[j]
		}
		switch {
		case i < n:
			dst.N14[i] = v
		case i < 2*n:
			dst.N15[i-n] = v
		case i == 2*n:
			dst.O16 = v
		default:
			dst.O18 = v
		}
	}
	dst.HasO = true
}

// Trajectory returns the states at the given times (years after x0, sorted
// ascending, ≥ 0). Equal steps reuse one exponential: a uniform grid of m
// points costs one matrix exponential and m matrix–vector products.
func (m *Model) Trajectory(p *Params, x0 *State, times []float64, withO bool) ([]State, error) {
	out := make([]State, len(times))
	prev := 0.0
	cur := State{}
	cur.CopyFrom(x0)
	lastStep := math.NaN()
	for i, t := range times {
		if t < prev || math.IsNaN(t) || math.IsInf(t, 0) {
			return nil, fmt.Errorf("trajectory times must be finite, ascending and ≥ 0 (got %g after %g)", t, prev)
		}
		step := t - prev
		if !(math.Abs(step-lastStep) <= 1e-12*step) {
			m.expAugmented(p, step, withO)
			lastStep = step
		}
		m.applyExp(&cur, withO, &out[i])
		cur.CopyFrom(&out[i])
		prev = t
	}
	return out, nil
}
