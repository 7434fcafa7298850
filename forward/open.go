package forward

// Open system at steady state: one substrate pool fed at δ_in, a fraction F
// of its influx consumed by a fractionating reaction and 1 − F exported
// unreacted (Hayes 2004; Fry 2006). With α = 1 + ε/1000:
//
//	exact:   R_s = R_in / [(1 − F) + F/α],  R_p = R_s/α
//	approx:  δ_s ≈ δ_in + ε·F,              δ_p ≈ δ_in − ε·(1 − F)
//
// At F = 1 the product equals the input: the effect is not expressed.

// OpenSubstrate returns the exact steady-state δ of the substrate (‰).
func OpenSubstrate(dIn, epsilon, consumed float64) float64 {
	rIn := Ratio(dIn, RAir)
	return Delta(rIn/((1-consumed)+consumed/Alpha(epsilon)), RAir)
}

// OpenProduct returns the exact steady-state δ of the product (‰).
func OpenProduct(dIn, epsilon, consumed float64) float64 {
	return (OpenSubstrate(dIn, epsilon, consumed)+1000)/Alpha(epsilon) - 1000
}

// OpenSubstrateApprox is δ_s ≈ δ_in + ε·F.
func OpenSubstrateApprox(dIn, epsilon, consumed float64) float64 { return dIn + epsilon*consumed }

// OpenProductApprox is δ_p ≈ δ_in − ε·(1 − F).
func OpenProductApprox(dIn, epsilon, consumed float64) float64 {
	return dIn - epsilon*(1-consumed)
}

// OpenParallel returns the exact steady-state δ of a pool fed at δ_in and
// drained by parallel first-order losses with flux fractions fi (summing to
// 1) and effects εi: R_s = R_in / Σ(fi/αi). Its approximation is
// δ_s ≈ δ_in + Σ fi·εi (Amundson et al. 2003 for whole-soil N; FACTS §4.3,
// §4.5).
func OpenParallel(dIn float64, fractions, epsilons []float64) float64 {
	var s float64
	for i, f := range fractions {
		s += f / Alpha(epsilons[i])
	}
	return Delta(Ratio(dIn, RAir)/s, RAir)
}
