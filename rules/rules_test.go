package rules

import (
	"regexp"
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
	for _, id := range RequiredResponses {
		for _, dir := range []string{More, Less} {
			c := s.Candidate(dir + "-" + id)
			if c == nil {
				t.Errorf("candidate %s-%s missing", dir, id)
				continue
			}
			if c.Direction != dir || !strings.HasPrefix(c.Label, dir+" ") && c.Label == "" {
				t.Errorf("%s: direction %q, label %q", c.ID, c.Direction, c.Label)
			}
			if !(c.Magnitude.Min > 0 && c.Magnitude.Min < c.Magnitude.Max) {
				t.Errorf("%s: bounds %g–%g", c.ID, c.Magnitude.Min, c.Magnitude.Max)
			}
		}
	}
	for _, src := range kb.Sources {
		c := s.Candidate(SourcePrefix + src.ID)
		if src.Contexts.Empty() {
			if c != nil {
				t.Errorf("source %q has no contexts but is a candidate", src.ID)
			}
			continue
		}
		if c == nil {
			t.Errorf("source candidate for %q missing", src.ID)
			continue
		}
		if strings.Contains(c.Label, "{source}") || c.Source != src.ID || c.Magnitude.Min != src.RateRange[0] {
			t.Errorf("source candidate %q not expanded: %+v", c.ID, c)
		}
	}
	for _, c := range s.Candidates {
		if c.ID != None && len(c.Tests) == 0 {
			t.Errorf("%s names no measurement that tests it", c.ID)
		}
	}
}

// Context rules move priors as documented in context.yaml. Each expected
// factor is the multiply of the matching rule in rules/context.yaml, whose
// source (or "common practice") stands beside the rule there; this test
// pins the engine's choice and combination of rules, not their sizes.
// Combinations by hand: acid soil with urea = ammonium-addition 2 ×
// urea-manure-ammonia 3 = 6 (acid-soil-no-ammonia-source does not fire
// with an ammonium addition); acid soil with ammonium nitrate = 2.
func TestContextRulesMovePriors(t *testing.T) {
	t.Parallel()
	s := defaultSet(t)
	tests := []struct {
		name      string
		candidate string
		ctx       Context
		want      float64 // prior relative to the candidate's base prior
	}{
		{"acid soil without an ammonium source", "more-volatilization", Context{SoilPH: ptr(4.8)}, 0.2},
		{"acid soil with urea", "more-volatilization", Context{SoilPH: ptr(4.8), AdditionPools: []string{"ammonium"}, Declared: []string{"urea"}}, 2 * 3},
		{"acid soil with ammonium nitrate", "more-volatilization", Context{SoilPH: ptr(4.8), AdditionPools: []string{"ammonium", "nitrate"}, Declared: []string{"ammonium-nitrate"}}, 2},
		{"alkaline soil", "more-volatilization", Context{SoilPH: ptr(8.2)}, 3},
		{"no context", "more-volatilization", Context{}, 1},
		{"no context, less", "less-volatilization", Context{SoilPH: ptr(8.2)}, 1},
		{"poorly drained", "more-denitrification", Context{Drainage: "poor"}, 3},
		{"dry and well drained", "more-denitrification", Context{Drainage: "well", PrecipMM: ptr(300)}, 0.5},
		{"non-mycorrhizal host", "less-mycorrhizal-route", Context{Mycorrhizal: "none"}, 0.02},
		{"ectomycorrhizal host", "more-mycorrhizal-route", Context{Mycorrhizal: "ecto"}, 1.5},
		{"undeclared manure", "source:manure", Context{}, 1},
		{"grazed", "more-volatilization", Context{Management: []string{"grazed"}}, 2},
		{"clear-cut", "more-nitrification", Context{Management: []string{"clear-cut"}}, 2},
		{"harvested", "more-nitrate-leaching", Context{Management: []string{"harvested"}}, 2},
		{"N load: mycorrhiza", "less-mycorrhizal-route", Context{Declared: []string{"ammonium-nitrate"}, AdditionPools: []string{"ammonium", "nitrate"}}, 2},
		{"N load: fixation", "less-fixation", Context{Declared: []string{"ammonium-nitrate"}, AdditionPools: []string{"ammonium", "nitrate"}}, 2},
		{"wet climate", "more-nitrate-leaching", Context{PrecipMM: ptr(2500)}, 1.5},
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
    candidates: [more-nitrate-leaching]
    multiply: 2
    reason: "sandy soils drain fast"
    status: common practice
`)}
	s, err := Parse(kb, append(files, user)...)
	if err != nil {
		t.Fatal(err)
	}
	c := s.Candidate("more-nitrate-leaching")
	if got, _ := s.Prior(c, Context{Drainage: "well"}); got != 2*c.Prior {
		t.Errorf("user rule: prior %g, want %g", got, 2*c.Prior)
	}
	bad := File{"bad.yaml", []byte(`rules:
  - id: no-reason
    candidates: [more-nitrification]
    multiply: 2
    status: common practice
`)}
	_, err = Parse(kb, append(files, bad)...)
	if err == nil || !strings.Contains(err.Error(), "bad.yaml:2: rules[0].reason: missing: every rule says why") {
		t.Errorf("got %v", err)
	}
	unknown := File{"unknown.yaml", []byte(`rules:
  - id: typo
    candidates: [more-nitrifcation]
    multiply: 2
    reason: x
    status: common practice
`)}
	_, err = Parse(kb, append(files, unknown)...)
	if err == nil || !strings.Contains(err.Error(), `unknown.yaml:2: typo.candidates: unknown candidate "more-nitrifcation"`) {
		t.Errorf("got %v", err)
	}
}

// Rules files are validated as strictly as study files: numbers that would
// overflow or mean nothing are refused with file, line and field (the
// hostile inputs of the hardening issue).
func TestRulesFilesStrict(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	files, err := DefaultFiles()
	if err != nil {
		t.Fatal(err)
	}
	candidate := func(knob, magnitude, extra string) string {
		return "candidates:\n  - id: more-odd\n    label: odd\n    direction: more\n    knob: " + knob + "\n    magnitude: " + magnitude + "\n    prior: 1\n    mechanism: m\n    refs: []\n    tests: []\n" + extra
	}
	rule := func(when, multiply string) string {
		return "rules:\n  - id: r\n    when: " + when + "\n    candidates: [more-nitrification]\n    multiply: " + multiply + "\n    reason: x\n    status: common practice\n"
	}
	tests := []struct{ name, text, want string }{
		{"infinite share bound", candidate("{kind: share, processes: [nitrification]}", "{prior: logit-uniform, min: 0.1, max: .inf, unit: share}", ""), "x.yaml:6: candidates[0].magnitude: a share needs prior logit-uniform with 0 < min < max < 1, got logit-uniform 0.1–+Inf"},
		{"share above 1", candidate("{kind: share, processes: [nitrification]}", "{prior: logit-uniform, min: 0.1, max: 1.5, unit: share}", ""), "candidates[0].magnitude: a share needs"},
		{"negative rate bound", candidate("{kind: fixation}", "{prior: log-uniform, min: -1, max: 5, unit: kg N/ha/yr}", ""), "candidates[0].magnitude: a rate needs prior log-uniform with 0 < min < max"},
		{"huge prior", strings.Replace(candidate("{kind: fixation}", "{prior: log-uniform, min: 1, max: 5, unit: kg N/ha/yr}", ""), "prior: 1\n", "prior: 1e308\n", 1), "candidates[0].prior: expected a positive weight of at most 1e+06, got 1e+308"},
		{"source knob", candidate("{kind: source}", "{prior: log-uniform, min: 1, max: 5, unit: kg N/ha/yr}", ""), "undeclared-source candidates are made from source_candidate"},
		{"second none", "candidates:\n  - id: none\n    label: a\n    knob: {kind: none}\n    prior: 1\n    mechanism: m\n  - id: none2\n    label: b\n    knob: {kind: none}\n    prior: 1\n    mechanism: m\n", "only the candidate \"none\" has knob kind none"},
		{"nan condition", rule("{soil_ph_below: .nan}", "2"), "x.yaml:3: rules[0].when: soil_ph_below must be a number between 0 and 14, got NaN"},
		{"huge multiply", rule("{drainage: [poor]}", "1e308"), "rules[0].multiply: expected a factor between 0 and 1e+06, got 1e+308"},
		{"unknown management", rule("{management: [mowed]}", "2"), `rules[0].when: unknown management tag "mowed"`},
	}
	for _, tt := range tests {
		_, err := Parse(kb, append(files, File{"x.yaml", []byte(tt.text)})...)
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: got %v\nwant it to contain %q", tt.name, err, tt.want)
		}
	}
}

// A mechanism carries no citation of its own: the reports append the
// candidate's refs after it, so an inline "(Author Year)" was printed twice
// ("… predicts (Hobbie & Hobbie 2008) (Hobbie & Hobbie 2008; …)").
func TestMechanismsCiteThroughRefs(t *testing.T) {
	t.Parallel()
	cite := regexp.MustCompile(`\([^()]*\b(1[89]|20)\d\d[a-z]?\)`)
	for _, c := range defaultSet(t).Candidates {
		if m := cite.FindString(c.Mechanism); m != "" {
			t.Errorf("%s: mechanism cites %s inline; list it in refs", c.ID, m)
		}
	}
}
