package forward

import "math"

// Closed-system Rayleigh fractionation (Mariotti et al. 1981, Plant and Soil
// 62:413–430; Fry 2006, Stable Isotope Ecology, suppl. 7B). f is the fraction
// of the substrate REMAINING (0 < f ≤ 1), δ0 the initial substrate δ in ‰,
// ε the isotope effect in ‰ (positive: product depleted), α = 1 + ε/1000.
// The exact forms follow from first-order kinetics with k15 = k14/α, with f
// the remaining fraction of the light isotope (equal to the remaining
// fraction of total N to within the 15N abundance).

// RayleighResidual returns the exact δ of the remaining substrate:
// δ_s = (δ0 + 1000)·f^(1/α − 1) − 1000.
func RayleighResidual(d0, epsilon, f float64) float64 {
	a := Alpha(epsilon)
	return (d0+1000)*math.Pow(f, 1/a-1) - 1000
}

// RayleighInstant returns the exact δ of the product being formed when a
// fraction f remains: δ_p = (δ_s + 1000)/α − 1000.
func RayleighInstant(d0, epsilon, f float64) float64 {
	return (RayleighResidual(d0, epsilon, f)+1000)/Alpha(epsilon) - 1000
}

// RayleighAccumulated returns the exact δ of all product formed so far:
// δ_acc = (δ0 + 1000)·(1 − f^(1/α))/(1 − f) − 1000. At f = 1 it is the
// first instantaneous product, (δ0 + 1000)/α − 1000.
func RayleighAccumulated(d0, epsilon, f float64) float64 {
	a := Alpha(epsilon)
	if f == 1 {
		return (d0+1000)/a - 1000
	}
	return (d0+1000)*(1-math.Pow(f, 1/a))/(1-f) - 1000
}

// RayleighResidualApprox is the δ-space approximation δ_s ≈ δ0 − ε·ln f.
func RayleighResidualApprox(d0, epsilon, f float64) float64 { return d0 - epsilon*math.Log(f) }

// RayleighInstantApprox is δ_p ≈ δ_s − ε with δ_s from the approximation.
func RayleighInstantApprox(d0, epsilon, f float64) float64 {
	return RayleighResidualApprox(d0, epsilon, f) - epsilon
}

// RayleighAccumulatedApprox is δ_acc ≈ δ0 + ε·f·ln f/(1 − f) (δ0 − ε at f = 1).
func RayleighAccumulatedApprox(d0, epsilon, f float64) float64 {
	if f == 1 {
		return d0 - epsilon
	}
	return d0 + epsilon*f*math.Log(f)/(1-f)
}

// RayleighFraction inverts RayleighResidual: the remaining fraction f that
// brings the substrate from δ0 to δs, f = ((δs+1000)/(δ0+1000))^(1/(1/α − 1)).
func RayleighFraction(d0, ds, epsilon float64) float64 {
	a := Alpha(epsilon)
	return math.Pow((ds+1000)/(d0+1000), 1/(1/a-1))
}

// DualIsotopeSlope returns Δδ18O/Δδ15N of the residual substrate after a
// closed-system Rayleigh process with effects ε15 and ε18 (‰) has left a
// fraction f, both isotopes starting from δ = 0. Equal to ε18/ε15 only as
// ε → 0 (FACTS §4.11; Granger et al. 2008 for the culture slopes).
func DualIsotopeSlope(epsilon15, epsilon18, f float64) float64 {
	return RayleighResidual(0, epsilon18, f) / RayleighResidual(0, epsilon15, f)
}
