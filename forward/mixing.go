package forward

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Value is a mean with the standard error of that mean (for a sample of n
// with standard deviation s, SE = s/√n), in the unit of the quantity.
type Value struct {
	Mean float64
	SE   float64
}

// MixResult is a source fraction with its standard error.
type MixResult struct {
	Fraction float64
	SE       float64
}

// MixTwo solves two-source linear mixing for one isotope and propagates the
// uncertainty of the mixture and source means (Phillips & Gregg 2001,
// Oecologia 127:171–179):
//
//	f_A = (δ_M − δ_B)/(δ_A − δ_B),  f_B = 1 − f_A
//	Var(f_A) = [σ²_M + f_A²·σ²_A + (1 − f_A)²·σ²_B] / (δ_A − δ_B)²
//
// where σ² are the variances of the means. It returns f_A and f_B.
func MixTwo(a, b, m Value) (fa, fb MixResult, err error) {
	d := a.Mean - b.Mean
	if d == 0 {
		return fa, fb, fmt.Errorf("the two sources have the same mean (%g ‰): mixing is undetermined", a.Mean)
	}
	f := (m.Mean - b.Mean) / d
	v := (m.SE*m.SE + f*f*a.SE*a.SE + (1-f)*(1-f)*b.SE*b.SE) / (d * d)
	se := math.Sqrt(v)
	return MixResult{f, se}, MixResult{1 - f, se}, nil
}

// MixThree solves three-source mixing with two isotopes (for example δ15N
// and δ18O of nitrate): f_A + f_B + f_C = 1 and the mixture's two δ values
// as fraction-weighted source means. Standard errors come from first-order
// propagation of every mean's SE, as Phillips & Gregg (2001) do, with the
// isotopes treated as independent. src[i][k] is source i's value of isotope
// k; mix[k] the mixture's.
func MixThree(src [3][2]Value, mix [2]Value) ([3]MixResult, error) {
	var out [3]MixResult
	a := mat.NewDense(3, 3, nil)
	for i := range 3 {
		a.Set(0, i, src[i][0].Mean)
		a.Set(1, i, src[i][1].Mean)
		a.Set(2, i, 1)
	}
	var lu mat.LU
	lu.Factorize(a)
	if c := lu.Cond(); c > 1e12 || math.IsInf(c, 0) {
		return out, fmt.Errorf("the three sources are (nearly) collinear in δ–δ space (condition number %.3g): mixing is undetermined", c)
	}
	var inv mat.Dense
	if err := inv.Inverse(a); err != nil {
		return out, fmt.Errorf("three-source mixing: %w", err)
	}
	m := mat.NewVecDense(3, []float64{mix[0].Mean, mix[1].Mean, 1})
	var f mat.VecDense
	f.MulVec(&inv, m)
	for k := range 3 {
		// ∂f_k/∂m_r = inv[k][r]; ∂f_k/∂A[r][i] = −inv[k][r]·f_i.
		v := 0.0
		for r := range 2 {
			g := inv.At(k, r)
			v += g * g * mix[r].SE * mix[r].SE
			for i := range 3 {
				gi := -inv.At(k, r) * f.AtVec(i)
				v += gi * gi * src[i][r].SE * src[i][r].SE
			}
		}
		out[k] = MixResult{f.AtVec(k), math.Sqrt(v)}
	}
	return out, nil
}

// GasLossFraction returns the fraction of ecosystem N losses that leave as
// gas, from isotope mass balance at steady state (Houlton & Bai 2009, PNAS
// 106:21713), written in nlens's sign convention (ε > 0: product depleted):
//
//	f_gas = (δ_TB − δ_I − ε_L) / (ε_G − ε_L)
//
// δ_TB is the terrestrial biosphere (soil and plant) δ15N, δ_I the inputs',
// ε_G and ε_L the effects of gaseous and leaching losses. Houlton & Bai
// write ε = (15k/14k − 1)·1000 < 0 and f_gas = (δ_TB − δ_I + ε_L)/(ε_L − ε_G);
// GasLossFractionHB takes their convention.
func GasLossFraction(dTB, dI, epsGas, epsLeach float64) float64 {
	return (dTB - dI - epsLeach) / (epsGas - epsLeach)
}

// GasLossFractionHB is GasLossFraction with ε in Houlton & Bai's (2009)
// convention (negative for normal effects): f_gas = (δ_TB − δ_I + ε_L)/(ε_L − ε_G).
func GasLossFractionHB(dTB, dI, epsGasHB, epsLeachHB float64) float64 {
	return (dTB - dI + epsLeachHB) / (epsLeachHB - epsGasHB)
}

// Ndfa returns the percentage of a legume's N derived from the atmosphere by
// the natural-abundance method (Shearer & Kohl 1986; formula as quoted by
// Ledgard 1989): %Ndfa = 100·(δ_ref − δ_legume)/(δ_ref − B), where δ_ref is
// a non-fixing reference plant and B the δ15N of a legume wholly dependent
// on fixation.
func Ndfa(dRef, dLegume, b float64) float64 {
	return 100 * (dRef - dLegume) / (dRef - b)
}

// SitePreferenceMix returns the N2O site preference (‰) expected when a
// fraction fNit of N2O comes from nitrification (hydroxylamine oxidation)
// and the rest from denitrification, by two-end-member mixing with
// SP_nit ≈ 33 ‰ and SP_den ≈ 0 ‰ (Sutka et al. 2006), without any correction
// for N2O reduction. SitePreferenceShare inverts it.
func SitePreferenceMix(fNit float64) float64 {
	return fNit*SPNitrification + (1-fNit)*SPDenitrification
}

// SitePreferenceShare is the nitrification share of N2O implied by a site
// preference: f = (SP − SP_den)/(SP_nit − SP_den) (Sutka et al. 2006).
func SitePreferenceShare(sp float64) float64 {
	return (sp - SPDenitrification) / (SPNitrification - SPDenitrification)
}

// N2O site-preference end-members, ‰ (Sutka et al. 2006, Appl. Environ.
// Microbiol. 72:638–644).
const (
	SPNitrification   = 33.0
	SPDenitrification = 0.0
)
