package forward

import (
	"fmt"
	"math"
	"testing"
)

// Closed-system Rayleigh check values: FACTS.md §5.1 (computed there from
// the exact and approximate forms of Mariotti et al. 1981 as restated by
// Fry 2006, suppl. 7B). Columns: δ0, ε, f, δs, δp,inst, δp,acc exact, then
// the same three approximate.
func TestRayleighWorkedValues(t *testing.T) {
	t.Parallel()
	rows := [][9]float64{
		{0, 20, 0.5, 13.684, -6.192, -13.684, 13.863, -6.137, -13.863},
		{0, 20, 0.1, 46.183, 25.670, -5.131, 46.052, 26.052, -5.117},
		{5, 25, 0.5, 22.135, -2.795, -12.135, 22.329, -2.671, -12.329},
		{0, 10, 0.9, 1.044, -8.868, -9.393, 1.054, -8.946, -9.482},
		{2, 30, 0.5, 22.435, -7.345, -18.435, 22.794, -7.206, -18.794},
		{0, 30, 0.5, 20.394, -9.326, -20.394, 20.794, -9.206, -20.794},
	}
	for _, r := range rows {
		name := fmt.Sprintf("δ0=%g ε=%g f=%g", r[0], r[1], r[2])
		checkAbs(t, name+" residual", RayleighResidual(r[0], r[1], r[2]), r[3], tolWorked)
		checkAbs(t, name+" instantaneous", RayleighInstant(r[0], r[1], r[2]), r[4], tolWorked)
		checkAbs(t, name+" accumulated", RayleighAccumulated(r[0], r[1], r[2]), r[5], tolWorked)
		checkAbs(t, name+" residual approx", RayleighResidualApprox(r[0], r[1], r[2]), r[6], tolWorked)
		checkAbs(t, name+" instantaneous approx", RayleighInstantApprox(r[0], r[1], r[2]), r[7], tolWorked)
		checkAbs(t, name+" accumulated approx", RayleighAccumulatedApprox(r[0], r[1], r[2]), r[8], tolWorked)
		// Mass balance f·δs + (1−f)·δacc = δ0 (FACTS §5.1, "holds to < 1e-12").
		mb := r[2]*RayleighResidual(r[0], r[1], r[2]) + (1-r[2])*RayleighAccumulated(r[0], r[1], r[2])
		checkAbs(t, name+" mass balance", mb, r[0], 1e-12)
	}
}

// Other Rayleigh fixtures of FACTS.md §5.1.
func TestRayleighFixtures(t *testing.T) {
	t.Parallel()
	// Inverse: δs = 13.684 with ε = 20 from δ0 = 0 means f = 0.500.
	checkAbs(t, "inverse f", RayleighFraction(0, 13.684, 20), 0.5, tolWorked)
	// NH3 volatilization with the observed α of the 2018 IEHS study (C):
	// 50 % loss from δ0 = 0 leaves NH4+ at +13.008 (α 1.019) or +20.394 ‰ (α 1.030).
	checkAbs(t, "volatilization α=1.019", RayleighResidual(0, 19, 0.5), 13.008, tolWorked)
	checkAbs(t, "volatilization α=1.030", RayleighResidual(0, 30, 0.5), 20.394, tolWorked)
	// Denitrification: δ0 = +5, ε = 15, f = 0.2 gives +29.190 ‰.
	checkAbs(t, "denitrification", RayleighResidual(5, 15, 0.2), 29.190, tolWorked)
	// Dual-isotope slopes at f = 0.5, ε15 = 20 (FACTS §5.6).
	checkAbs(t, "slope ε18=20", DualIsotopeSlope(20, 20, 0.5), 1.000, tolWorked)
	checkAbs(t, "slope ε18=10", DualIsotopeSlope(20, 10, 0.5), 0.503, tolWorked)
	checkAbs(t, "slope ε18=16", DualIsotopeSlope(20, 16, 0.5), 0.802, tolWorked)
}

// Open steady-state system: FACTS.md §5.2 (row 1 also reproduces a public
// numeric example, 5.97609561752988 ‰).
func TestOpenSystemWorkedValues(t *testing.T) {
	t.Parallel()
	rows := [][7]float64{
		{0, 10, 0.6, 5.976, -3.984, 6.000, -4.000},
		{0, 20, 0.5, 9.901, -9.901, 10.000, -10.000},
		{-2, 20, 0.3, 3.905, -15.779, 4.000, -16.000},
		{0, 30, 1.0, 30.000, 0.000, 30.000, 0.000},
		{0, 30, 0.0, 0.000, -29.126, 0.000, -30.000},
	}
	for _, r := range rows {
		name := fmt.Sprintf("δin=%g ε=%g F=%g", r[0], r[1], r[2])
		checkAbs(t, name+" substrate", OpenSubstrate(r[0], r[1], r[2]), r[3], tolWorked)
		checkAbs(t, name+" product", OpenProduct(r[0], r[1], r[2]), r[4], tolWorked)
		checkAbs(t, name+" substrate approx", OpenSubstrateApprox(r[0], r[1], r[2]), r[5], tolWorked)
		checkAbs(t, name+" product approx", OpenProductApprox(r[0], r[1], r[2]), r[6], tolWorked)
	}
	checkAbs(t, "RPubs example to 1e-9", OpenSubstrate(0, 10, 0.6), 5.97609561752988, 1e-9)
	// Soil check (FACTS §5.2): δI = 0, ε_G = 15, ε_L = 0, f_gas = 1/3 gives 4.950 exact.
	checkAbs(t, "parallel losses", OpenParallel(0, []float64{1.0 / 3, 2.0 / 3}, []float64{15, 0}), 4.950, tolWorked)
}

// Houlton & Bai (2009) gaseous-loss fraction in their sign convention:
// FACTS.md §5.3 check values; and the same numbers through nlens's
// convention (ε⁺ = −ε).
func TestGasLossFraction(t *testing.T) {
	t.Parallel()
	rows := [][5]float64{
		{5, 0, 0, -15, 0.3333},
		{5, -2, 0, -16, 0.4375},
		{3, -1, -1, -20, 0.1579},
		{2, 0, 0, -10, 0.2000},
	}
	for _, r := range rows {
		name := fmt.Sprintf("δTB=%g δI=%g εL=%g εG=%g", r[0], r[1], r[2], r[3])
		checkAbs(t, name+" (Houlton & Bai signs)", GasLossFractionHB(r[0], r[1], r[3], r[2]), r[4], 1e-4)
		checkAbs(t, name+" (nlens signs)", GasLossFraction(r[0], r[1], -r[3], -r[2]), r[4], 1e-4)
	}
}

// Two-source mixing with Phillips & Gregg (2001) error propagation: FACTS.md
// §5.4 worked example and the published sensitivity statement (SE halves
// when the source difference doubles).
func TestMixTwo(t *testing.T) {
	t.Parallel()
	se := 1 / math.Sqrt(4) // SD 1, n = 4
	fa, fb, err := MixTwo(Value{0, se}, Value{10, se}, Value{4, se})
	if err != nil {
		t.Fatal(err)
	}
	checkAbs(t, "f_A", fa.Fraction, 0.600, tolWorked)
	checkAbs(t, "f_B", fb.Fraction, 0.400, tolWorked)
	checkAbs(t, "Var(f_A)", fa.SE*fa.SE, 0.00380, 1e-5)
	checkAbs(t, "SE(f_A)", fa.SE, 0.0616, 1e-4)
	a, _, _ := MixTwo(Value{0, 0.1}, Value{2, 0.1}, Value{1, 0.1})
	b, _, _ := MixTwo(Value{0, 0.1}, Value{4, 0.1}, Value{2, 0.1})
	checkAbs(t, "SE sources 2 apart", a.SE, 0.0612, 1e-4)
	checkAbs(t, "SE sources 4 apart", b.SE, 0.0306, 1e-4)
	if _, _, err := MixTwo(Value{3, 0}, Value{3, 0}, Value{3, 0}); err == nil {
		t.Error("identical sources: want an error")
	}
}

// Three-source, two-isotope mixing: an exact mixture is recovered, and the
// propagated SE agrees with an independent finite-difference propagation in
// this test; with one isotope uninformative the problem is refused.
func TestMixThree(t *testing.T) {
	t.Parallel()
	src := [3][2]Value{{{0, 0.2}, {22, 1}}, {{10, 0.5}, {2, 1}}, {{4, 0.3}, {-5, 1}}}
	want := [3]float64{0.2, 0.5, 0.3}
	var mix [2]Value
	for k := range 2 {
		for i := range 3 {
			mix[k].Mean += want[i] * src[i][k].Mean
		}
		mix[k].SE = 0.4
	}
	got, err := MixThree(src, mix)
	if err != nil {
		t.Fatal(err)
	}
	for i := range 3 {
		checkAbs(t, fmt.Sprintf("f[%d]", i), got[i].Fraction, want[i], 1e-12)
	}
	// Finite-difference propagation: perturb each mean by its SE.
	var v [3]float64
	perturb := func(apply func(s *[3][2]Value, m *[2]Value, h float64), sd float64) {
		h := 1e-6
		s1, m1 := src, mix
		apply(&s1, &m1, h)
		r, _ := MixThree(s1, m1)
		for i := range 3 {
			d := (r[i].Fraction - want[i]) / h * sd
			v[i] += d * d
		}
	}
	for k := range 2 {
		perturb(func(_ *[3][2]Value, m *[2]Value, h float64) { m[k].Mean += h }, mix[k].SE)
		for j := range 3 {
			perturb(func(s *[3][2]Value, _ *[2]Value, h float64) { s[j][k].Mean += h }, src[j][k].SE)
		}
	}
	for i := range 3 {
		checkAbs(t, fmt.Sprintf("SE f[%d] vs finite differences", i), got[i].SE, math.Sqrt(v[i]), 1e-5)
	}
	collinear := [3][2]Value{{{0, 0}, {0, 0}}, {{1, 0}, {1, 0}}, {{2, 0}, {2, 0}}}
	if _, err := MixThree(collinear, [2]Value{{1, 0}, {1, 0}}); err == nil {
		t.Error("collinear sources: want an error")
	}
}

// %Ndfa: FACTS.md §5.6 (δref = +6, δlegume = +1, B = −1 gives 71.43 %),
// formula of Shearer & Kohl 1986 as quoted by Ledgard 1989.
func TestNdfa(t *testing.T) {
	t.Parallel()
	checkAbs(t, "%Ndfa", Ndfa(6, 1, -1), 71.43, 0.005)
}

// N2O site preference apportioning: FACTS.md §5.6, SP 10 ‰ gives a
// nitrification share of 0.303 with Sutka et al. (2006) end-members 33 and 0.
func TestSitePreference(t *testing.T) {
	t.Parallel()
	checkAbs(t, "share", SitePreferenceShare(10), 0.303, tolWorked)
	checkAbs(t, "round trip", SitePreferenceMix(SitePreferenceShare(10)), 10, 1e-12)
}

// δ ↔ R ↔ atom %: FACTS.md §5.6 fixtures and §3 constants.
func TestDeltaConversions(t *testing.T) {
	t.Parallel()
	// R_AIR = 1/272.0 (Junk & Svec 1958 via CIAAW), conventionally written
	// 0.0036765 (DESIGN §2); the two differ by 8e-6 relative.
	checkAbs(t, "R_AIR vs 1/272", RAir, 1/272.0, 1e-7)
	// FACTS.md §3 and §5.6 computed these with R_std = 1/272.0 exactly, so
	// they are checked with that standard: atom % of air 0.3663004 %;
	// +10 ‰ gives R = 0.003713235 and 0.3699498 atom %; 0.3700 atom % is
	// +10.138 ‰; 1.0 atom % is +1747.5 ‰.
	r272 := 1 / 272.0
	checkAbs(t, "atom % of air", 100*AtomFraction(Ratio(0, r272)), 0.3663004, 1e-7)
	checkAbs(t, "R at +10 ‰", Ratio(10, r272), 0.003713235, 1e-9)
	checkAbs(t, "atom % at +10 ‰", 100*AtomFraction(Ratio(10, r272)), 0.3699498, 1e-7)
	checkAbs(t, "δ at 0.3700 atom %", Delta(RatioFromAtomFraction(0.0037), r272), 10.138, tolWorked)
	checkAbs(t, "δ at 1.0 atom %", Delta(RatioFromAtomFraction(0.01), r272), 1747.5, 0.05)
	// With the contract's R_AIR the same sample reads 0.008 ‰ lower: the
	// standard's 8e-6 relative difference times 1000 ‰.
	checkAbs(t, "δ at 0.3700 atom %, R_AIR = 0.0036765", FromAtomPercent(0.37), 10.138-8.0e-3, 1e-3)
	// Nitrogen reference materials (CIAAW list; IAEA): δ15N round-trips
	// through atom % to 1e-9 ‰.
	for name, d := range map[string]float64{
		"IAEA-N-1": 0.43, "IAEA-N-2": 20.41, "IAEA-NO-3": 4.72, "USGS25": -30.41,
		"USGS26": 53.70, "USGS32": 180, "USGS34": -1.8, "USGS35": 2.7,
		"USGS40": -4.52, "USGS41a": 47.55, "NSVEC": -2.78,
	} {
		checkAbs(t, name+" round trip", FromAtomPercent(AtomPercent(d)), d, 1e-9)
	}
	// CIAAW: most reagents and samples span −15 to +20 ‰, x(15N) 0.00361–0.00374.
	checkAbs(t, "x at −15 ‰", AtomPercent(-15)/100, 0.00361, 0.000005)
	checkAbs(t, "x at +20 ‰", AtomPercent(20)/100, 0.00374, 0.000005)
	// Scale change: a sample +5 ‰ vs a working gas that is +2 ‰ vs AIR is
	// +7.010 ‰ vs AIR (exact composition of ratios, Hayes 2004).
	checkAbs(t, "rescale", Rescale(5, 2), 7.010, 1e-12)
	// Exact mixing of equal amounts at 0 and +1000 ‰ is not the δ-mean
	// 500 ‰: 499.0859 ‰ by independent computation (python3, summing atom
	// fractions x = R/(1+R) with R_AIR = 0.0036765).
	checkAbs(t, "exact mixing of 0 and 1000 ‰", Mix15([]float64{1, 1}, []float64{0, 1000}), 499.0859, 1e-4)
}

// Nitrate δ18O from nitrification by the conventional 2:1 rule: FACTS §5.6
// (water −9 ‰ with O2 +23.5 ‰ gives +1.833 ‰), which the knowledge default
// is set from.
func TestNitrificationD18ORule(t *testing.T) {
	t.Parallel()
	rule := func(water, o2 float64) float64 { return 2.0/3*water + 1.0/3*o2 }
	checkAbs(t, "−9 / 23.5", rule(-9, 23.5), 1.833, tolWorked)
	checkAbs(t, "−9 / 23.88", rule(-9, 23.88), 1.960, tolWorked)
	checkAbs(t, "−5 / 23.5", rule(-5, 23.5), 4.500, tolWorked)
}
