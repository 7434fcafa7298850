// Package forward is the compartment model of the terrestrial N cycle,
// solved exactly in 14N and 15N (and in 16O and 18O for nitrate), and the
// published formulas an isotope ecologist reaches for by hand.
//
// Units: pools in kg N ha⁻¹, fluxes in kg N ha⁻¹ yr⁻¹, rate constants in
// yr⁻¹, time in years, δ15N in ‰ versus AIR, δ18O in ‰ versus VSMOW.
//
// Conventions (DESIGN §2): R = 15N/14N; δ = (R/R_std − 1)·1000;
// R_AIR = 0.0036765 (Junk & Svec 1958), R_VSMOW = 0.0020052 (Baertschi
// 1976). An isotope effect ε (‰) is positive when the product is depleted:
// α = 1 + ε/1000 = R_substrate/R_product = k14/k15.
//
// The model (DESIGN §3): every transfer is donor-controlled with rate
// constant k = rate/pool(from) taken from the site file's baseline numbers;
// 14N leaves at k·N14 and 15N at (k/α)·N15. The two isotopes are two linear
// systems dN/dt = K·N + b. The baseline is their steady state (LU with a
// condition check); a change applies at t = 0 to the baseline and the state
// at t years is exact, from the exponential of the augmented matrix
// [[K·t, b·t], [0, 0]] (Higham's scaling and squaring, via gonum). Nitrate
// oxygen is tracked as its own isotope pair with three O per N.
//
// The formulas (Rayleigh, open system, mixing, gas-loss fraction, %Ndfa,
// δ ↔ R ↔ atom %) are documented functions with their sources.
package forward
