package rules

import (
	"strings"
	"testing"

	"nlens/knowledge"
)

func defaultSet(t *testing.T) *Set {
	t.Helper()
	s, err := Default(knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func ptr(v float64) *float64 { return &v }

// Every candidate DESIGN §4 requires exists, with a source candidate for
// each knowledge source; every candidate names a mechanism and measurements.
func TestCandidates(t *testing.T) {
	t.Parallel()
	s := defaultSet(t)
	kb := knowledge.MustDefault()
	for _, id := range requiredIDs {
		if s.Candidate(id) == nil {
			t.Errorf("candidate %q missing", id)
		}
	}
	for _, src := range kb.Sources {
		c := s.Candidate(SourcePrefix + src.ID)
		if c == nil {
			t.Errorf("source candidate for %q missing", src.ID)
			continue
		}
		if strings.Contains(c.Label, "{source}") || c.Source != src.ID {
			t.Errorf("source candidate %q not expanded: %+v", c.ID, c)
		}
	}
	for _, c := range s.Candidates {
		if c.ID != None && len(c.Tests) == 0 {
			t.Errorf("%s names no measurement that tests it", c.ID)
		}
	}
}

// Context rules move priors as documented in context.yaml.
func TestContextRulesMovePriors(t *testing.T) {
	t.Parallel()
	s := defaultSet(t)
	tests := []struct {
		name      string
		candidate string
		ctx       Context
		want      float64 // prior relative to the candidate's base prior
	}{
		{"acid soil without an ammonium source", "volatilization", Context{SoilPH: ptr(4.8)}, 0.2},
		{"acid soil with urea", "volatilization", Context{SoilPH: ptr(4.8), AdditionPools: []string{"ammonium"}, Declared: []string{"urea"}}, 2},
		{"alkaline soil", "volatilization", Context{SoilPH: ptr(8.2)}, 3},
		{"no context", "volatilization", Context{}, 1},
		{"poorly drained", "denitrification", Context{Drainage: "poor"}, 3},
		{"dry and well drained", "denitrification", Context{Drainage: "well", PrecipMM: ptr(300)}, 0.5},
		{"non-mycorrhizal host", "mycorrhizal-route", Context{Mycorrhizal: "none"}, 0.02},
		{"ectomycorrhizal host", "mycorrhizal-route", Context{Mycorrhizal: "ecto"}, 2},
		{"declared manure", "source:manure", Context{Declared: []string{"manure"}, AdditionPools: []string{"ammonium"}}, 40},
		{"undeclared manure", "source:manure", Context{}, 0.3},
		{"grazed, undeclared manure", "source:manure", Context{Management: []string{"grazed"}}, 0.9},
		{"clear-cut", "nitrification", Context{Management: []string{"clear-cut"}}, 2},
		{"wet climate", "nitrate-leaching", Context{PrecipMM: ptr(2500)}, 1.5},
	}
	for _, tt := range tests {
		c := s.Candidate(tt.candidate)
		got, adj := s.Prior(c, tt.ctx)
		if r := got / c.Prior; r < tt.want*(1-1e-12) || r > tt.want*(1+1e-12) {
			t.Errorf("%s: %s prior ×%g, want ×%g (rules %v)", tt.name, tt.candidate, r, tt.want, adj)
		}
		for _, a := range adj {
			if a.Reason == "" {
				t.Errorf("%s: rule %s has no reason", tt.name, a.Rule)
			}
		}
	}
}

// User rules files add candidates' weights and rules, positioned errors
// otherwise.
func TestUserRules(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	files, err := DefaultFiles()
	if err != nil {
		t.Fatal(err)
	}
	user := File{"mine.yaml", []byte(`rules:
  - id: sandy-soil-leaching
    when: {drainage: [well]}
    candidates: [nitrate-leaching]
    multiply: 2
    reason: "sandy soils drain fast"
    status: common practice
`)}
	s, err := Parse(kb, append(files, user)...)
	if err != nil {
		t.Fatal(err)
	}
	c := s.Candidate("nitrate-leaching")
	if got, _ := s.Prior(c, Context{Drainage: "well"}); got != 2*c.Prior {
		t.Errorf("user rule: prior %g, want %g", got, 2*c.Prior)
	}
	bad := File{"bad.yaml", []byte(`rules:
  - id: no-reason
    candidates: [nitrification]
    multiply: 2
    status: common practice
`)}
	_, err = Parse(kb, append(files, bad)...)
	if err == nil || !strings.Contains(err.Error(), "bad.yaml:2: rules[0].reason: missing: every rule says why") {
		t.Errorf("got %v", err)
	}
	unknown := File{"unknown.yaml", []byte(`rules:
  - id: typo
    candidates: [nitrifcation]
    multiply: 2
    reason: x
    status: common practice
`)}
	_, err = Parse(kb, append(files, unknown)...)
	if err == nil || !strings.Contains(err.Error(), `unknown.yaml:2: typo.candidates: unknown candidate "nitrifcation"`) {
		t.Errorf("got %v", err)
	}
}
