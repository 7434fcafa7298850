// Package rank explains a comparison's observed δ15N shifts: which response
// of the N cycle to the known treatment reproduces them, how large it is,
// and which measurement would best tell the leading responses apart
// (DESIGN §4–§5).
//
// The treatment a study declares (additions, clear-cut, fire, grazing) is
// applied to the treatment arm in every hypothesis, with its uncertain
// sizes drawn as nuisance from knowledge/forcings.yaml. A hypothesis is
// "none" (the declared treatment alone), a directional response on top of
// it (more-nitrification, less-mycorrhizal-route, …; sustained, or a pulse
// of a duration of its own), an undeclared source the site context makes
// possible, or a pair of these. For a hypothesis H:
//
//	evidence(H) = ∫∫ Π_obs N(shift_obs; pred(θ, φ), se_obs² + σ_model²) p(θ|H) w(φ) dθ dφ
//
// θ is the response's magnitude (the share of the donor pool's outflow the
// process takes, uniform on its logit between sourced bounds; a pulse adds
// its log-uniform duration), integrated by quadrature: the forward model
// is run exactly, piece by piece in time, at coarse nodes, and its
// predictions, smooth in θ, are carried to a fine grid by natural cubic
// splines (a tensor product for two dimensions). φ are nuisance draws:
// every ε from its knowledge range unless the site fixes it, source δ15N
// from its range unless measured, template rates within their spread, the
// treatment's sizes; draw 0 is the nominal site. The site is first fitted
// to the control's absolute values (fit.go, maximum a posteriori) and the
// draws are weighted by how well each baseline reproduces them, tempered
// so that at least a quarter count. Draws are added adaptively until the
// Monte Carlo error of the top posteriors is below 0.02 or a bound stops
// it (said in a warning). Comparisons that share a `series` are one unit:
// one posterior over hypotheses and magnitudes for all of them.
//
// Posteriors combine evidence with the context priors of package rules
// ("none" holds rules.Set.NoneShare of the prior). A response whose
// predictions never leave the noise around what the treatment alone
// predicts, over its whole prior, and that fits no better than the
// treatment alone by a factor of 3, is counted with "none" rather than
// ranked above it. Each magnitude is summarized by its posterior median
// with a 90 % interval (the median always inside), the prior bound an
// interval reaches, two separated modes as two, and the flux it implies
// at the observation time (in the middle of a pulse). Each posterior
// carries its Monte Carlo error, each hypothesis a posterior-predictive χ²
// fit check. Pairs are formed from the best singles, from singles that
// explain different observables or what a leading single leaves
// unexplained, and from a wider set when the best single fails its fit.
//
// Next measurements: each catalogue measurement not yet made is predicted
// under posterior samples of the leading hypotheses, its measurement noise
// added, and ranked by the mutual information between its outcome and the
// hypothesis's identity, in bits (trapezoid rule on an outcome grid).
//
// Calibration (calibrate.go) draws truths from the priors on sites drawn
// from the templates' spreads and ε ranges and reports top-1 accuracy, the
// reliability of the top posterior and the coverage of 90 % intervals.
//
// All randomness comes from math/rand/v2 PCG streams derived from the seed,
// the comparison and the candidate, so runs are reproducible and do not
// depend on how work is spread over cores.
package rank
