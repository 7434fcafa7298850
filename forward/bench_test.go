package forward

import (
	"testing"
)

// benchSite is the five-pool site of testdata, the size the performance
// targets of issue 5 are stated for.
func benchSite(b *testing.B) (*Model, Params, State) {
	b.Helper()
	s := loadTestSite(b, "testdata/five-pool.yaml")
	if len(s.Pools) != 5 {
		b.Fatalf("the benchmark site has %d pools, want 5", len(s.Pools))
	}
	m := NewModel(s)
	p := s.Params()
	var x State
	if err := m.Steady(&p, false, &x); err != nil {
		b.Fatal(err)
	}
	return m, p, x
}

// BenchmarkSteady: one baseline steady state (14N and 15N solves).
func BenchmarkSteady(b *testing.B) {
	m, p, _ := benchSite(b)
	var x State
	b.ReportAllocs()
	for b.Loop() {
		if err := m.Steady(&p, false, &x); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSteadyWithOxygen adds nitrate δ18O.
func BenchmarkSteadyWithOxygen(b *testing.B) {
	m, p, _ := benchSite(b)
	var x State
	b.ReportAllocs()
	for b.Loop() {
		if err := m.Steady(&p, true, &x); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAdvance: the exact state 5 years after a change.
func BenchmarkAdvance(b *testing.B) {
	m, p, x0 := benchSite(b)
	p.Scale(m.Site, "denitrification", 3)
	var x State
	b.ReportAllocs()
	for b.Loop() {
		if err := m.Advance(&p, &x0, 5, false, &x); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAdvanceWithOxygen: the same with nitrate oxygen.
func BenchmarkAdvanceWithOxygen(b *testing.B) {
	m, p, _ := benchSite(b)
	var xo State
	if err := m.Steady(&p, true, &xo); err != nil {
		b.Fatal(err)
	}
	p.Scale(m.Site, "denitrification", 3)
	var x State
	b.ReportAllocs()
	for b.Loop() {
		if err := m.Advance(&p, &xo, 5, true, &x); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkTrajectory50: 50 evenly spaced times (one exponential, 50
// matrix–vector products).
func BenchmarkTrajectory50(b *testing.B) {
	m, p, x0 := benchSite(b)
	p.Scale(m.Site, "denitrification", 3)
	times, _ := EvenTimes(10, 50)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := m.Trajectory(&p, &x0, times, false); err != nil {
			b.Fatal(err)
		}
	}
}
