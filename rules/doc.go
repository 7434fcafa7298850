// Package rules holds the candidate explanations of a δ15N shift and the
// context rules that raise or lower their prior probability, as YAML
// embedded in the binary (candidates.yaml, context.yaml) plus user files.
//
// A candidate turns one knob of the forward model with a magnitude and a
// prior over it (DESIGN §4): a factor on the rate constants of one or more
// processes (log-uniform 0.1–10), the share of plant uptake taken as nitrate
// (uniform 0–1), or a new input of a knowledge source (log-uniform 1–300
// kg N/ha/yr; the source's δ15N is drawn from its range unless the study
// measured it). "none" is always a candidate; pairs a+b are formed at run
// time. A context rule multiplies the prior of candidates when the study's
// context matches (soil pH, drainage, mean annual precipitation in mm,
// mycorrhizal type, management tags, declared additions), and says why with
// a reference or "common practice".
//
// The package only describes candidates and priors; it runs no model.
package rules
