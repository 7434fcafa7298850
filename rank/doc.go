// Package rank scores candidate explanations of observed δ15N shifts and
// says which measurement would best tell the leading ones apart.
//
// For a comparison and a candidate H (DESIGN §5):
//
//	evidence(H) = ∫∫ Π_obs N(shift_obs; pred(θ, φ), se_obs² + σ_model²) p(θ|H) w(φ) dθ dφ
//
// θ is the candidate's magnitude, integrated over its prior by quadrature:
// the forward model is run at coarse nodes and its predictions, smooth in
// θ, are carried to a fine grid by natural cubic splines (one dimension for
// a single candidate, a tensor product for a pair). φ are nuisance draws:
// every ε from its knowledge range unless the site fixes it, source δ15N
// from its range unless the study measured it, template rates within their
// stated spread; draw 0 is the nominal site. Draws are weighted by how well
// each baseline reproduces the control's absolute values, tempered so that
// at least a quarter of them count. Probabilities are kept in log space.
//
// Posteriors combine evidence with the context priors of package rules;
// "none" is always a candidate and a candidate whose predictions never
// leave the noise over its whole prior is counted with "none" rather than
// ranked above it. Each candidate gets a best magnitude (posterior mode on
// the fine grid) with a 90 % interval, predicted shifts and a posterior-
// predictive χ² check.
//
// Next measurements: each catalogue measurement not yet made is predicted
// under posterior samples of the leading candidates, its measurement noise
// added, and ranked by the mutual information between its outcome and the
// candidate's identity, in bits, computed by Gauss–Hermite quadrature.
//
// All randomness comes from math/rand/v2 PCG streams derived from the seed,
// the comparison and the candidate, so runs are reproducible and do not
// depend on how work is spread over cores.
package rank
