package forward

import "math"

// Standard ratios.
const (
	// RAir is 15N/14N of atmospheric N2: 1/272.0 from Junk & Svec (1958),
	// the value CIAAW recommends, conventionally written 0.0036765.
	RAir = 0.0036765
	// RVSMOW is 18O/16O of Vienna Standard Mean Ocean Water (Baertschi 1976).
	RVSMOW = 0.0020052
)

// Ratio returns R = R_std·(1 + δ/1000) for δ in ‰.
func Ratio(deltaPermil, rStd float64) float64 { return rStd * (1 + deltaPermil/1000) }

// Delta returns δ = (R/R_std − 1)·1000 in ‰.
func Delta(r, rStd float64) float64 { return (r/rStd - 1) * 1000 }

// AtomPercent returns the heavy-isotope atom percent of a δ15N value (‰ AIR):
// 100·R/(1+R), exact for two isotopes (FACTS §4.1). It must be used instead
// of a linear approximation for labelled samples.
func AtomPercent(d15NPermil float64) float64 {
	return 100 * AtomFraction(Ratio(d15NPermil, RAir))
}

// FromAtomPercent returns δ15N (‰ AIR) of a sample with the given 15N atom
// percent: R = x/(1−x) with x the atom fraction.
func FromAtomPercent(atomPercent float64) float64 {
	return Delta(RatioFromAtomFraction(atomPercent/100), RAir)
}

// AtomFraction returns the heavy-isotope atom fraction x = R/(1+R).
func AtomFraction(r float64) float64 { return r / (1 + r) }

// RatioFromAtomFraction returns R = x/(1−x).
func RatioFromAtomFraction(x float64) float64 { return x / (1 - x) }

// Alpha returns α = 1 + ε/1000 for ε in ‰ (DESIGN §2 sign convention).
func Alpha(epsilonPermil float64) float64 { return 1 + epsilonPermil/1000 }

// Rescale re-expresses δ of a sample measured against standard B, when B's
// own δ against standard A is known: δ_s/A = δ_s/B + δ_B/A + δ_s/B·δ_B/A/1000
// (exact; Hayes 2004). For example a working gas calibrated against AIR.
func Rescale(dSampleVsB, dBVsA float64) float64 {
	return dSampleVsB + dBVsA + dSampleVsB*dBVsA/1000
}

// Mix15 returns the exact δ15N (‰ AIR) of a mixture of amounts (any unit of
// total N) with the given δ15N values: 15N and 14N are summed separately, so
// the result is exact in atom fraction (FACTS §4.1).
func Mix15(amounts, deltas []float64) float64 {
	var n14, n15 float64
	for i, a := range amounts {
		r := Ratio(deltas[i], RAir)
		n14 += a / (1 + r)
		n15 += a * r / (1 + r)
	}
	if n14 == 0 {
		return math.NaN()
	}
	return Delta(n15/n14, RAir)
}
