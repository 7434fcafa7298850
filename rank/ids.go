package rank

import "nlens/rules"

// Hypothesis ids that renderers recognise, given here so that renderers
// read them from the result's package and import no rules (DEVELOPERS.md,
// enforced by deps_test.go).
const (
	// NoneID is the id of the "no change in N cycling" hypothesis.
	NoneID = rules.None
	// SourcePrefix begins the id of a source candidate ("source:urea").
	SourcePrefix = rules.SourcePrefix
)
