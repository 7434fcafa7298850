package rules

import (
	"errors"
	"math"
	"testing"

	"nlens/knowledge"
	"nlens/knowledge/input"
)

// Fuzzing a user's rules file (issue 15: a fuzz target for the rules file).
//
//	go test ./rules -run '^$' -fuzz '^FuzzParseRules$' -fuzztime 60s -fuzzminimizetime 5s
//
// The fuzzed text is read after the embedded files, as `--rules FILE`
// is. For every input: Parse never panics; a rejection is positioned (an
// input.Error, or a list of them, naming a file and a line); an accepted
// set holds only finite, positive priors and multipliers, shares strictly
// between 0 and 1 and magnitude bounds in order.
func FuzzParseRules(f *testing.F) {
	kb := knowledge.MustDefault()
	base, err := DefaultFiles()
	if err != nil {
		f.Fatal(err)
	}
	for _, seed := range []string{
		"rules:\n  - id: wet\n    when: {drainage: [poor]}\n    candidates: [more-denitrification]\n    multiply: 2\n    reason: wet\n    status: common practice\n",
		"none_share: 0.4\npair_prior: 0.2\n",
		"candidates:\n  - id: x\n    label: x\n    knob: {kind: scale, processes: [nitrification]}\n    magnitude: {prior: log-uniform, min: 0.5, max: 2}\n    prior: 1\n",
		"rules:\n  - {id: a, when: {soil_ph_below: .nan}, candidates: [more-nitrification], multiply: 1e308}\n",
		"none_share: 1e308\n",
		"rules: {}\n",
		"- 1\n- 2\n",
		"",
	} {
		f.Add([]byte(seed))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		set, err := Parse(kb, append(base, File{Name: "user-rules.yaml", Data: data})...)
		if err != nil {
			if set != nil {
				t.Errorf("Parse returned a set and an error: %v", err)
			}
			var ie *input.Error
			var ies input.Errors
			switch {
			case errors.As(err, &ies):
				for _, e := range ies {
					if e.File == "" || e.Line < 0 {
						t.Errorf("unpositioned error in a list: %v", e)
					}
				}
			case errors.As(err, &ie):
				if ie.File == "" || ie.Line < 0 {
					t.Errorf("unpositioned error: %v", err)
				}
			default:
				t.Errorf("error without a position: %T %v", err, err)
			}
			return
		}
		ok := func(v float64) bool { return v > 0 && !math.IsInf(v, 0) && !math.IsNaN(v) }
		if !(set.NoneShare > 0 && set.NoneShare < 1) || !(set.PairPrior > 0 && set.PairPrior <= 1) {
			t.Errorf("none_share %g, pair_prior %g accepted", set.NoneShare, set.PairPrior)
		}
		for _, c := range append(set.Candidates, set.SourceTemplate) {
			if c.ID != None && !ok(c.Prior) {
				t.Errorf("candidate %s: prior %g accepted", c.ID, c.Prior)
			}
			if m := c.Magnitude; m.Prior != "" && !(m.Min < m.Max && !math.IsInf(m.Max, 0) && !math.IsNaN(m.Min)) {
				t.Errorf("candidate %s: magnitude bounds %g–%g accepted", c.ID, m.Min, m.Max)
			}
		}
		for _, r := range set.Rules {
			if !ok(r.Multiply) {
				t.Errorf("rule %s: multiply %g accepted", r.ID, r.Multiply)
			}
		}
	})
}
