package rules

import (
	"slices"
	"strings"
	"testing"

	"nlens/knowledge"
)

// Every citation of an isotope effect, a candidate, a context rule and a
// measurement must be one that the cited work's stated purpose
// (references.yaml `supports`) covers: a pool-dilution paper is not cited
// for a net incubation, and a context rule does not cite a work for a
// response the work contradicts.

// citation is one use of a reference: where it is cited and the purposes
// any one of which the reference must support.
type citation struct {
	where    string
	key      string
	purposes []string
}

// measurementPurpose is what a catalogue measurement's references must
// support: net rates by incubation, gross rates by 15N pool dilution, or
// the meaning of the measured observable.
func measurementPurpose(m knowledge.Measurement) string {
	switch {
	case strings.HasPrefix(m.Observable, "net:"):
		return "net-rates"
	case m.Observable == "flux:nitrification" || m.Observable == "flux:mineralization":
		return "gross-rates"
	}
	return "observable:" + m.Observable
}

// baseResponse strips the direction: more-nitrification → nitrification.
func baseResponse(id string) string {
	for _, p := range []string{"more-", "less-"} {
		if r, ok := strings.CutPrefix(id, p); ok {
			return r
		}
	}
	return id
}

// citations lists every citation the knowledge base and the rules make
// that has a stated purpose to check.
func citations(kb *knowledge.Base, s *Set) []citation {
	var out []citation
	for _, e := range kb.Effects {
		for _, k := range e.Refs {
			out = append(out, citation{"effect " + e.ID, k, []string{"fractionation:" + e.ID}})
		}
	}
	for _, m := range kb.Measurements {
		for _, k := range m.Refs {
			out = append(out, citation{"measurement " + m.ID, k, []string{measurementPurpose(m)}})
		}
	}
	for _, c := range s.Candidates {
		if c.Response == "" {
			continue // none and the undeclared sources (cited by the source catalogue)
		}
		for _, k := range c.Refs {
			out = append(out, citation{"candidate " + c.ID, k, []string{"process:" + c.Response}})
		}
		for _, k := range c.BoundsRefs {
			out = append(out, citation{"bounds of " + c.ID, k, []string{"bounds:" + c.Response, "process:" + c.Response}})
		}
	}
	return out
}

// checkRuleRefs returns the problems of one context rule's references: each
// must support one of the rule's targets, and each target must be
// supported by one of them.
func checkRuleRefs(r Rule, ref func(string) (knowledge.Reference, bool)) []string {
	if len(r.Refs) == 0 {
		return nil
	}
	var problems []string
	supports := func(k, cand string) bool {
		ref, ok := ref(k)
		return ok && (slices.Contains(ref.Supports, "response:"+cand) || slices.Contains(ref.Supports, "process:"+baseResponse(cand)))
	}
	for _, k := range r.Refs {
		if !slices.ContainsFunc(r.Candidates, func(c string) bool { return supports(k, c) }) {
			problems = append(problems, "rule "+r.ID+" cites "+k+", which supports none of "+strings.Join(r.Candidates, ", "))
		}
	}
	for _, c := range r.Candidates {
		if !slices.ContainsFunc(r.Refs, func(k string) bool { return supports(k, c) }) {
			problems = append(problems, "rule "+r.ID+" raises or lowers "+c+", which none of its references supports")
		}
	}
	return problems
}

func checkCitation(c citation, ref func(string) (knowledge.Reference, bool)) string {
	r, ok := ref(c.key)
	if !ok {
		return c.where + " cites unknown reference " + c.key
	}
	for _, p := range c.purposes {
		if slices.Contains(r.Supports, p) {
			return ""
		}
	}
	return c.where + " cites " + c.key + " for " + strings.Join(c.purposes, " or ") + "; it supports " + strings.Join(r.Supports, ", ")
}

func TestCitationsSupportTheirPurpose(t *testing.T) {
	kb := knowledge.MustDefault()
	s := defaultSet(t)
	cs := citations(kb, s)
	if len(cs) < 50 {
		t.Fatalf("only %d citations found; the walk over effects, measurements and candidates is broken", len(cs))
	}
	for _, c := range cs {
		if p := checkCitation(c, kb.Reference); p != "" {
			t.Error(p)
		}
	}
	for _, r := range s.Rules {
		for _, p := range checkRuleRefs(r, kb.Reference) {
			t.Error(p)
		}
	}
}

// The two citations issue 13 found wrong must fail the check, so the check
// can fail: Kirkham & Bartholomew (1954) is the pool-dilution method for
// gross rates, not a net incubation; Högberg et al. (2011) found tree δ15N
// rising as ectomycorrhizal function was lost, the opposite of what less
// fungal transfer to the host predicts.
func TestCitationCheckCatchesMisuse(t *testing.T) {
	kb := knowledge.MustDefault()
	net := knowledge.Measurement{ID: "net-nitrification", Observable: "net:nitrification"}
	if p := checkCitation(citation{"measurement net-nitrification", "kirkham1954", []string{measurementPurpose(net)}}, kb.Reference); p == "" {
		t.Error("kirkham1954 accepted for a net-nitrification incubation")
	}
	gross := knowledge.Measurement{ID: "gross-nitrification", Observable: "flux:nitrification"}
	if p := checkCitation(citation{"measurement gross-nitrification", "kirkham1954", []string{measurementPurpose(gross)}}, kb.Reference); p != "" {
		t.Errorf("kirkham1954 refused for 15N pool dilution: %s", p)
	}
	bad := Rule{ID: "fertilized-mycorrhiza", Candidates: []string{"less-mycorrhizal-route", "less-fungal-transfer"}, Refs: []string{"hogberg2011"}}
	if ps := checkRuleRefs(bad, kb.Reference); len(ps) != 1 || !strings.Contains(ps[0], "less-fungal-transfer") {
		t.Errorf("rule raising less-fungal-transfer on hogberg2011: problems %q, want one naming less-fungal-transfer", ps)
	}
}
