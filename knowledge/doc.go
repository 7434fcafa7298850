// Package knowledge holds the published facts nlens stands on, as YAML files
// embedded in the binary, with typed, validated access to them: isotope
// effects (effects.yaml), source end-members (sources.yaml), site templates
// (sites/*.yaml, in the site-file format that package forward reads), the
// measurement catalogue (measurements.yaml) and the references every other
// file cites (references.yaml).
//
// Conventions (DESIGN §2): δ15N in ‰ versus atmospheric N2 (AIR), δ18O of
// nitrate in ‰ versus VSMOW. An isotope effect ε is in ‰ and positive when
// the product is depleted: α = 1 + ε/1000 = R_substrate/R_product. Values
// published in other conventions (Mariotti et al. 1981 α < 1; Houlton & Bai
// 2009 ε < 0; Yoneyama et al. 2001 negative uptake ε) are converted on entry
// and the conversion is noted beside the value.
//
// Every fact carries a stable id, reference keys that resolve in
// references.yaml, and a status: "confirmed" (read in the source),
// "from memory" (not verified against the source) or "common practice"
// (a rule of thumb of the trade with no single source).
//
// The package only looks facts up and validates them; it computes nothing.
// Its YAML files are decoded by package knowledge/input, which every input
// file of nlens goes through.
package knowledge
