package forward

import (
	"math"
	"testing"

	"nlens/knowledge"
)

func template(t *testing.T, id string) *Site {
	t.Helper()
	s, err := LoadSite(id, knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// A share knob gives the process exactly that share of its donor's outflow,
// with k_P = s/(1−s)·Σ k_other and every other constant unchanged (DESIGN §4:
// the formula itself is the check; the shares asked for are arbitrary).
func TestShareKnobSetsDonorShare(t *testing.T) {
	t.Parallel()
	s := template(t, "temperate-deciduous-forest")
	base := s.Params()
	procs := []string{"nitrification", "nitrifier-gas"}
	for _, share := range []float64{0.01, 0.21, 0.6, 0.95} {
		var p Params
		c := Sustained([]Knob{{Kind: KnobShare, Processes: procs, Value: share}})
		if err := c.ParamsAt(s, &base, 0, &p); err != nil {
			t.Fatal(err)
		}
		if got := p.ProcessShare(s, procs...); math.Abs(got-share) > 1e-12 {
			t.Errorf("share %g: ProcessShare gives %g", share, got)
		}
		nh4 := s.PoolIndex("ammonium")
		var kP, kOther float64
		for j, tr := range s.Transfers {
			if tr.From != nh4 {
				if p.K[j] != base.K[j] {
					t.Errorf("share %g: %s from another pool changed", share, tr.Process)
				}
				continue
			}
			if tr.Process == "nitrification" || tr.Process == "nitrifier-gas" {
				kP += p.K[j]
			} else {
				kOther += p.K[j]
				if p.K[j] != base.K[j] {
					t.Errorf("share %g: %s changed", share, tr.Process)
				}
			}
		}
		if want := share / (1 - share) * kOther; math.Abs(kP-want) > 1e-12*want {
			t.Errorf("share %g: k_P = %g, want s/(1−s)·Σk_other = %g", share, kP, want)
		}
	}
}

// A process the site lacks is added along its route at rate 0 and can then
// be given a share; the baseline is unchanged by the latent transfer.
func TestLatentTransfer(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	s := template(t, "temperate-deciduous-forest")
	var without []Transfer
	for _, tr := range s.Transfers {
		if tr.Process != "volatilization" {
			without = append(without, tr)
		}
	}
	bare := *s
	bare.Transfers = without
	site, err := bare.WithRoutes(kb, Route{Process: "volatilization", From: "ammonium", To: "out"})
	if err != nil {
		t.Fatal(err)
	}
	if len(site.Transfers) != len(without)+1 {
		t.Fatalf("got %d transfers, want %d", len(site.Transfers), len(without)+1)
	}
	again, _ := site.WithRoutes(kb, Route{Process: "volatilization", From: "ammonium", To: "out"})
	if again != site {
		t.Error("a route the site already has was added twice")
	}
	m0, m1 := NewModel(&bare), NewModel(site)
	p0, p1 := bare.Params(), site.Params()
	var x0, x1 State
	if err := m0.Steady(&p0, false, &x0); err != nil {
		t.Fatal(err)
	}
	if err := m1.Steady(&p1, false, &x1); err != nil {
		t.Fatal(err)
	}
	for i := range bare.Pools {
		if x0.N14[i] != x1.N14[i] || x0.N15[i] != x1.N15[i] {
			t.Errorf("pool %s moved when a zero-rate transfer was added", bare.Pools[i])
		}
	}
	var p Params
	c := Sustained([]Knob{{Kind: KnobShare, Processes: []string{"volatilization"}, Value: 0.1}})
	if err := c.ParamsAt(site, &p1, 0, &p); err != nil {
		t.Fatal(err)
	}
	if got := p.ProcessShare(site, "volatilization"); math.Abs(got-0.1) > 1e-12 {
		t.Errorf("latent volatilization share %g, want 0.1", got)
	}
}

// A one-off removal with an isotope effect leaves the pool on the exact
// closed-system Rayleigh curve (Mariotti et al. 1981, FACTS §4.2):
// δ_s = (δ0 + 1000)·f^(1/α − 1) − 1000 with f the remaining 14N, and the
// total removed is the share asked for.
func TestMoveFollowsRayleigh(t *testing.T) {
	t.Parallel()
	s := template(t, "temperate-deciduous-forest")
	m := NewModel(s)
	p := s.Params()
	var x0 State
	if err := m.Steady(&p, false, &x0); err != nil {
		t.Fatal(err)
	}
	fol := s.PoolIndex("foliage")
	org := s.PoolIndex("organic")
	for _, tt := range []struct{ share, eps float64 }{{0.3, 3}, {0.9, 6}, {0.5, 0}, {0.6, -2}} {
		c := Change{Moves: []Move{{From: "foliage", To: "organic", Share: tt.share, EpsilonPermil: tt.eps}}}
		var x State
		if err := c.ApplyMoves(s, &x0, &x); err != nil {
			t.Fatal(err)
		}
		if got, want := x.Total(fol), (1-tt.share)*x0.Total(fol); math.Abs(got-want) > 1e-12*want {
			t.Errorf("share %g: foliage %g kg N/ha, want %g", tt.share, got, want)
		}
		f14 := x.N14[fol] / x0.N14[fol]
		// RayleighResidual is held to the FACTS.md §5.1 worked values in
		// formula_test.go, so it serves as the closed form here.
		want := RayleighResidual(x0.Delta15(fol), tt.eps, f14)
		if got := x.Delta15(fol); math.Abs(got-want) > 1e-9 {
			t.Errorf("share %g ε %g: residual δ %g, Rayleigh %g", tt.share, tt.eps, got, want)
		}
		// 14N and 15N are conserved between the two pools (absolute
		// tolerances in kg N/ha; 15N is about 1/272 of 14N, so its bound is
		// two orders tighter, round-off only).
		if d := x.N14[fol] + x.N14[org] - x0.N14[fol] - x0.N14[org]; math.Abs(d) > 1e-9 {
			t.Errorf("14N not conserved: %g", d)
		}
		if d := x.N15[fol] + x.N15[org] - x0.N15[fol] - x0.N15[org]; math.Abs(d) > 1e-11 {
			t.Errorf("15N not conserved: %g", d)
		}
	}
}

// Time pieces are exact: a pulse longer than the horizon is the sustained
// change, a sustained change cut into two pieces is the same change, and a
// pulse of D years equals advancing D years changed and then the rest at
// the baseline rates by hand.
func TestPiecesAreExact(t *testing.T) {
	t.Parallel()
	s := template(t, "temperate-deciduous-forest")
	m := NewModel(s)
	base := s.Params()
	var x0 State
	if err := m.Steady(&base, true, &x0); err != nil {
		t.Fatal(err)
	}
	knobs := []Knob{{Kind: KnobShare, Processes: []string{"nitrification", "nitrifier-gas"}, Value: 0.6}, Factor("uptake-nitrate", 0.3)}
	in := InputParam{To: s.PoolIndex("ammonium"), RateKgPerHaYr: 50, D15N: 0}
	sustained := Sustained(knobs, in)
	var r Run
	var a, b, c State
	const years = 7.0
	if err := r.Advance(m, &base, &sustained, &x0, years, true, &a); err != nil {
		t.Fatal(err)
	}
	long := Change{Mods: []Mod{{Start: 0, End: 100, Knobs: knobs, Inputs: []InputParam{in}}}}
	if err := r.Advance(m, &base, &long, &x0, years, true, &b); err != nil {
		t.Fatal(err)
	}
	cut := Change{Mods: []Mod{{Start: 0, End: 2.5, Knobs: knobs, Inputs: []InputParam{in}}, {Start: 2.5, End: math.Inf(1), Knobs: knobs, Inputs: []InputParam{in}}}}
	if err := r.Advance(m, &base, &cut, &x0, years, true, &c); err != nil {
		t.Fatal(err)
	}
	for i := range s.Pools {
		for _, y := range []*State{&b, &c} {
			if math.Abs(y.Delta15(i)-a.Delta15(i)) > 1e-9 || math.Abs(y.Total(i)-a.Total(i)) > 1e-9*a.Total(i) {
				t.Errorf("%s: pieces give %g ‰ / %g kg, one piece %g ‰ / %g kg", s.Pools[i], y.Delta15(i), y.Total(i), a.Delta15(i), a.Total(i))
			}
		}
	}
	// A 3-year pulse by hand.
	pulse := Change{Mods: []Mod{{Start: 0, End: 3, Knobs: knobs, Inputs: []InputParam{in}}}}
	var got, mid, want State
	if err := r.Advance(m, &base, &pulse, &x0, years, true, &got); err != nil {
		t.Fatal(err)
	}
	var p Params
	if err := sustained.ParamsAt(s, &base, 0, &p); err != nil {
		t.Fatal(err)
	}
	if err := m.Advance(&p, &x0, 3, true, &mid); err != nil {
		t.Fatal(err)
	}
	if err := m.Advance(&base, &mid, years-3, true, &want); err != nil {
		t.Fatal(err)
	}
	for i := range s.Pools {
		if math.Abs(got.Delta15(i)-want.Delta15(i)) > 1e-9 {
			t.Errorf("pulse %s: %g ‰, by hand %g ‰", s.Pools[i], got.Delta15(i), want.Delta15(i))
		}
	}
	if math.Abs(got.O18/got.O16-want.O18/want.O16) > 1e-15 {
		t.Error("pulse: nitrate oxygen differs from the hand computation")
	}
}

// The redistributions keep their totals: the uptake form keeps total
// uptake, the transfer ratio total fungal outflow, the route total supply.
func TestRedistributionsKeepTotals(t *testing.T) {
	t.Parallel()
	s := template(t, "temperate-deciduous-forest")
	base := s.Params()
	all := func(p *Params, procs ...string) float64 { return flux(s, p, transfers(s, procs, "")) }
	fungi := func(p *Params) float64 {
		return flux(s, p, transfers(s, []string{"mycorrhizal-transfer", "fungal-turnover"}, "fungi"))
	}
	for _, tt := range []struct {
		kind  KnobKind
		value float64
		kept  func(*Params) float64
		share func(*Params) float64
	}{
		{KnobNitrateShare, 0.8, func(p *Params) float64 { return all(p, "uptake-ammonium", "uptake-nitrate") },
			func(p *Params) float64 {
				return all(p, "uptake-nitrate") / all(p, "uptake-ammonium", "uptake-nitrate")
			}},
		{KnobTransferRatio, 0.7, fungi, func(p *Params) float64 { return all(p, "mycorrhizal-transfer") / fungi(p) }},
		{KnobRoute, 0.2, func(p *Params) float64 { return all(p, "uptake-ammonium", "uptake-nitrate", "mycorrhizal-transfer") },
			func(p *Params) float64 {
				return all(p, "mycorrhizal-transfer") / all(p, "uptake-ammonium", "uptake-nitrate", "mycorrhizal-transfer")
			}},
	} {
		var p Params
		c := Sustained([]Knob{{Kind: tt.kind, Value: tt.value}})
		if err := c.ParamsAt(s, &base, 0, &p); err != nil {
			t.Fatal(err)
		}
		if got, want := tt.kept(&p), tt.kept(&base); math.Abs(got-want) > 1e-9*want {
			t.Errorf("%s: total %g, was %g", tt.kind, got, want)
		}
		if got := tt.share(&p); math.Abs(got-tt.value) > 1e-12 {
			t.Errorf("%s: share %g, want %g", tt.kind, got, tt.value)
		}
	}
}
