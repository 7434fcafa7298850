package rules

import (
	"embed"
	"fmt"
	"math"
	"slices"
	"strings"

	"nlens/knowledge"
)

//go:embed *.yaml
var files embed.FS

// Knob kinds.
const (
	KnobScale        = "scale"         // multiply the rate constants of Processes
	KnobNitrateShare = "nitrate-share" // share of plant uptake taken as nitrate
	KnobSource       = "source"        // add an input of a knowledge source
	KnobNone         = "none"
)

// Prior shapes of a magnitude.
const (
	PriorLogUniform = "log-uniform"
	PriorUniform    = "uniform"
)

// None is the id of the no-change candidate.
const None = "none"

// SourcePrefix starts the id of a source candidate: "source:manure".
const SourcePrefix = "source:"

// Candidate is one explanation: a knob, a magnitude prior and what supports
// and tests it.
type Candidate struct {
	ID        string    `yaml:"id" json:"id"`
	Label     string    `yaml:"label" json:"label"`
	Knob      Knob      `yaml:"knob" json:"knob"`
	Magnitude Magnitude `yaml:"magnitude" json:"magnitude"`
	// Prior is the base prior weight before context rules (relative).
	Prior float64 `yaml:"prior" json:"prior"`
	// Needs names what the site must have: "fungi" (a mycorrhizal route),
	// "uptake-forms" (both uptake-ammonium and uptake-nitrate).
	Needs     []string `yaml:"needs" json:"needs,omitempty"`
	Mechanism string   `yaml:"mechanism" json:"mechanism"`
	Refs      []string `yaml:"refs" json:"refs"`
	// Tests lists catalogue measurement ids that test the candidate.
	Tests []string `yaml:"tests" json:"tests"`
	// Source is set for source candidates (the knowledge source id).
	Source string `yaml:"-" json:"source,omitempty"`
	Line   int    `yaml:"-" json:"-"`
	File   string `yaml:"-" json:"-"`
}

// Knob is what a candidate changes in the model.
type Knob struct {
	Kind      string   `yaml:"kind" json:"kind"`
	Processes []string `yaml:"processes" json:"processes,omitempty"`
}

// Magnitude is the prior over a candidate's size.
type Magnitude struct {
	Prior string  `yaml:"prior" json:"prior"`
	Min   float64 `yaml:"min" json:"min"`
	Max   float64 `yaml:"max" json:"max"`
	Unit  string  `yaml:"unit" json:"unit"`
}

// Rule multiplies the prior of some candidates when the context matches.
type Rule struct {
	ID   string `yaml:"id" json:"id"`
	When When   `yaml:"when" json:"when"`
	// Candidates the rule applies to: ids, "source:*" (every source),
	// "source:declared" (sources the comparison declares as additions) or
	// "source:undeclared".
	Candidates []string `yaml:"candidates" json:"candidates"`
	Multiply   float64  `yaml:"multiply" json:"multiply"`
	Reason     string   `yaml:"reason" json:"reason"`
	Refs       []string `yaml:"refs" json:"refs,omitempty"`
	Status     string   `yaml:"status" json:"status"`
	Line       int      `yaml:"-" json:"-"`
	File       string   `yaml:"-" json:"-"`
}

// When is a rule's condition; every field given must hold.
type When struct {
	SoilPHBelow   *float64 `yaml:"soil_ph_below" json:"soil_ph_below,omitempty"`
	SoilPHAbove   *float64 `yaml:"soil_ph_above" json:"soil_ph_above,omitempty"`
	Drainage      []string `yaml:"drainage" json:"drainage,omitempty"`
	PrecipBelowMM *float64 `yaml:"precip_below_mm" json:"precip_below_mm,omitempty"`
	PrecipAboveMM *float64 `yaml:"precip_above_mm" json:"precip_above_mm,omitempty"`
	Mycorrhizal   []string `yaml:"mycorrhizal_type" json:"mycorrhizal_type,omitempty"`
	// Management holds if any of these tags is declared.
	Management []string `yaml:"management" json:"management,omitempty"`
	// AdditionTo holds if a declared addition enters one of these pools;
	// NoAdditionTo if none does.
	AdditionTo   []string `yaml:"addition_to" json:"addition_to,omitempty"`
	NoAdditionTo []string `yaml:"no_addition_to" json:"no_addition_to,omitempty"`
	// Declared holds when the comparison declares at least one addition.
	Declared *bool `yaml:"declared" json:"declared,omitempty"`
}

// Set is a validated set of candidates and context rules.
type Set struct {
	Candidates []Candidate
	Rules      []Rule
	// PairPrior multiplies the product of two candidates' priors to give
	// the prior of the pair a+b.
	PairPrior float64
	// NoneShare is the prior probability of "none"; the other candidates
	// share the rest in proportion to their weights.
	NoneShare float64
	// SourceTemplate is the candidate that every knowledge source becomes.
	SourceTemplate Candidate
}

type candidatesFile struct {
	NoneShare  *float64    `yaml:"none_share"`
	PairPrior  *float64    `yaml:"pair_prior"`
	Source     *Candidate  `yaml:"source_candidate"`
	Candidates []Candidate `yaml:"candidates"`
}

type contextFile struct {
	Rules []Rule `yaml:"rules"`
}

// Context is what the study says about its site and treatment, as the
// rules read it. Nil pointers and empty strings are "not given".
type Context struct {
	SoilPH        *float64
	Drainage      string
	PrecipMM      *float64
	Mycorrhizal   string
	Management    []string
	AdditionPools []string // pools that declared additions enter
	Declared      []string // source ids of declared additions
}

// Required candidate ids (DESIGN §4).
var requiredIDs = []string{None, "nitrification", "denitrification", "volatilization", "nitrate-leaching", "mineralization", "mycorrhizal-route", "uptake-form"}

// Default returns the embedded rules, expanded with a source candidate for
// every knowledge source.
func Default(kb *knowledge.Base) (*Set, error) {
	fs, err := DefaultFiles()
	if err != nil {
		return nil, err
	}
	return Parse(kb, fs...)
}

// DefaultFiles returns the embedded rules files, to which user files may be
// appended before Parse.
func DefaultFiles() ([]File, error) {
	var out []File
	for _, name := range []string{"candidates.yaml", "context.yaml"} {
		data, err := files.ReadFile(name)
		if err != nil {
			return nil, err
		}
		out = append(out, File{"rules/" + name, data})
	}
	return out, nil
}

// File is one rules file's name and text.
type File struct {
	Name string
	Data []byte
}

// Parse reads rules files. A file may hold candidates (with pair_prior and
// source_candidate), context rules, or both; later files add candidates and
// rules, and a candidate whose id is already defined replaces the earlier one.
func Parse(kb *knowledge.Base, fs ...File) (*Set, error) {
	set := &Set{PairPrior: math.NaN(), NoneShare: math.NaN()}
	var errs knowledge.InputErrors
	for _, f := range fs {
		var raw struct {
			candidatesFile `yaml:",inline"`
			contextFile    `yaml:",inline"`
		}
		doc, err := knowledge.Decode(f.Name, f.Data, &raw)
		if err != nil {
			return nil, err
		}
		if raw.PairPrior != nil {
			if !(*raw.PairPrior > 0 && *raw.PairPrior <= 1) {
				errs = append(errs, doc.Errorf("pair_prior", []any{"pair_prior"}, "expected a number in (0, 1], got %g", *raw.PairPrior))
			}
			set.PairPrior = *raw.PairPrior
		}
		if raw.NoneShare != nil {
			if !(*raw.NoneShare > 0 && *raw.NoneShare < 1) {
				errs = append(errs, doc.Errorf("none_share", []any{"none_share"}, "expected a probability strictly between 0 and 1, got %g", *raw.NoneShare))
			}
			set.NoneShare = *raw.NoneShare
		}
		if raw.Source != nil {
			c := *raw.Source
			c.File, c.Line = f.Name, doc.Line("source_candidate")
			errs = append(errs, checkCandidate(kb, doc, &c, "source_candidate", []any{"source_candidate"})...)
			set.SourceTemplate = c
		}
		for i := range raw.Candidates {
			c := raw.Candidates[i]
			c.File, c.Line = f.Name, doc.Line("candidates", i)
			field := fmt.Sprintf("candidates[%d]", i)
			errs = append(errs, checkCandidate(kb, doc, &c, field, []any{"candidates", i})...)
			if strings.HasPrefix(c.ID, SourcePrefix) {
				errs = append(errs, doc.Errorf(field+".id", []any{"candidates", i, "id"}, "source candidates are generated from source_candidate for every knowledge source; define %q as a knowledge source instead", c.ID))
			}
			if j := slices.IndexFunc(set.Candidates, func(o Candidate) bool { return o.ID == c.ID }); j >= 0 {
				set.Candidates[j] = c
			} else {
				set.Candidates = append(set.Candidates, c)
			}
		}
		for i := range raw.Rules {
			r := raw.Rules[i]
			r.File, r.Line = f.Name, doc.Line("rules", i)
			errs = append(errs, checkRule(kb, doc, &r, fmt.Sprintf("rules[%d]", i), []any{"rules", i})...)
			set.Rules = append(set.Rules, r)
		}
	}
	if len(errs) > 0 {
		return nil, errs
	}
	for _, id := range requiredIDs {
		if set.Candidate(id) == nil {
			return nil, &knowledge.InputError{File: fs[0].Name, Field: "candidates", Msg: fmt.Sprintf("required candidate %q is missing", id)}
		}
	}
	if math.IsNaN(set.PairPrior) || math.IsNaN(set.NoneShare) || set.SourceTemplate.ID == "" {
		return nil, &knowledge.InputError{File: fs[0].Name, Msg: "none_share, pair_prior and source_candidate must be defined"}
	}
	for _, s := range kb.Sources {
		c := set.SourceTemplate
		c.ID = SourcePrefix + s.ID
		c.Label = strings.ReplaceAll(c.Label, "{source}", s.Label)
		c.Mechanism = strings.ReplaceAll(c.Mechanism, "{source}", s.Label)
		c.Refs = append(append([]string(nil), c.Refs...), s.Refs...)
		c.Source = s.ID
		set.Candidates = append(set.Candidates, c)
	}
	// Rules may name candidates defined in any file.
	for _, r := range set.Rules {
		for _, id := range r.Candidates {
			if strings.HasPrefix(id, SourcePrefix) && (id == "source:*" || id == "source:declared" || id == "source:undeclared") {
				continue
			}
			if set.Candidate(id) == nil {
				errs = append(errs, &knowledge.InputError{File: r.File, Line: r.Line, Field: r.ID + ".candidates", Msg: fmt.Sprintf("unknown candidate %q", id)})
			}
		}
	}
	return set, errs.Err()
}

// Candidate returns the candidate with the given id, or nil.
func (s *Set) Candidate(id string) *Candidate {
	for i := range s.Candidates {
		if s.Candidates[i].ID == id {
			return &s.Candidates[i]
		}
	}
	return nil
}

func checkCandidate(kb *knowledge.Base, doc *knowledge.Doc, c *Candidate, field string, path []any) knowledge.InputErrors {
	var errs knowledge.InputErrors
	at := func(key, format string, args ...any) {
		errs = append(errs, doc.Errorf(field+"."+key, append(append([]any(nil), path...), key), format, args...))
	}
	if c.ID == "" {
		at("id", "missing")
	}
	if c.Label == "" {
		at("label", "missing")
	}
	if c.Mechanism == "" {
		at("mechanism", "missing: say in one line how this change moves δ15N")
	}
	if !(c.Prior > 0) || math.IsInf(c.Prior, 0) {
		at("prior", "expected a positive weight, got %g", c.Prior)
	}
	switch c.Knob.Kind {
	case KnobScale:
		if len(c.Knob.Processes) == 0 {
			at("knob", "a scale knob needs processes")
		}
		for _, p := range c.Knob.Processes {
			if !slices.Contains(knowledge.Processes, p) {
				at("knob", "unknown process %q", p)
			}
		}
	case KnobNitrateShare, KnobSource, KnobNone:
	default:
		at("knob", "expected kind scale, nitrate-share, source or none, got %q", c.Knob.Kind)
	}
	if c.Knob.Kind != KnobNone {
		m := c.Magnitude
		switch m.Prior {
		case PriorLogUniform:
			if !(m.Min > 0 && m.Max > m.Min) {
				at("magnitude", "a log-uniform prior needs 0 < min < max, got %g–%g", m.Min, m.Max)
			}
		case PriorUniform:
			if !(m.Max > m.Min) {
				at("magnitude", "a uniform prior needs min < max, got %g–%g", m.Min, m.Max)
			}
		default:
			at("magnitude", "expected prior log-uniform or uniform, got %q", m.Prior)
		}
		if m.Unit == "" {
			at("magnitude", "missing unit")
		}
	}
	for _, n := range c.Needs {
		if n != "fungi" && n != "uptake-forms" {
			at("needs", "expected fungi or uptake-forms, got %q", n)
		}
	}
	for _, k := range c.Refs {
		if _, ok := kb.Reference(k); !ok {
			at("refs", "reference %q is not in the knowledge base", k)
		}
	}
	for _, m := range c.Tests {
		if _, ok := kb.Measurement(m); !ok {
			at("tests", "measurement %q is not in the catalogue", m)
		}
	}
	return errs
}

var drainages = []string{"well", "moderate", "poor"}

// MycorrhizalTypes are the values a study's mycorrhizal_type may take.
var MycorrhizalTypes = []string{"arbuscular", "ecto", "ericoid", "none", "mixed"}

// Drainages are the values a study's drainage may take.
var Drainages = drainages

func checkRule(kb *knowledge.Base, doc *knowledge.Doc, r *Rule, field string, path []any) knowledge.InputErrors {
	var errs knowledge.InputErrors
	at := func(key, format string, args ...any) {
		errs = append(errs, doc.Errorf(field+"."+key, append(append([]any(nil), path...), key), format, args...))
	}
	if r.ID == "" {
		at("id", "missing")
	}
	if len(r.Candidates) == 0 {
		at("candidates", "missing")
	}
	if !(r.Multiply >= 0) || math.IsInf(r.Multiply, 0) {
		at("multiply", "expected a factor ≥ 0, got %g", r.Multiply)
	}
	if r.Reason == "" {
		at("reason", "missing: every rule says why")
	}
	switch r.Status {
	case knowledge.Confirmed, knowledge.FromMemory:
		if len(r.Refs) == 0 {
			at("refs", "a rule with status %q needs references", r.Status)
		}
	case knowledge.CommonPractice:
	default:
		at("status", "expected confirmed, from memory or common practice, got %q", r.Status)
	}
	for _, k := range r.Refs {
		if _, ok := kb.Reference(k); !ok {
			at("refs", "reference %q is not in the knowledge base", k)
		}
	}
	for _, d := range r.When.Drainage {
		if !slices.Contains(drainages, d) {
			at("when", "unknown drainage %q (well, moderate, poor)", d)
		}
	}
	for _, m := range r.When.Mycorrhizal {
		if !slices.Contains(MycorrhizalTypes, m) {
			at("when", "unknown mycorrhizal type %q", m)
		}
	}
	return errs
}

// Applies reports whether the rule's condition holds in the context. A
// condition on a context value the study did not give does not hold.
func (w When) Applies(c Context) bool {
	if w.SoilPHBelow != nil && (c.SoilPH == nil || !(*c.SoilPH < *w.SoilPHBelow)) {
		return false
	}
	if w.SoilPHAbove != nil && (c.SoilPH == nil || !(*c.SoilPH > *w.SoilPHAbove)) {
		return false
	}
	if len(w.Drainage) > 0 && !slices.Contains(w.Drainage, c.Drainage) {
		return false
	}
	if w.PrecipBelowMM != nil && (c.PrecipMM == nil || !(*c.PrecipMM < *w.PrecipBelowMM)) {
		return false
	}
	if w.PrecipAboveMM != nil && (c.PrecipMM == nil || !(*c.PrecipMM > *w.PrecipAboveMM)) {
		return false
	}
	if len(w.Mycorrhizal) > 0 && !slices.Contains(w.Mycorrhizal, c.Mycorrhizal) {
		return false
	}
	if len(w.Management) > 0 && !slices.ContainsFunc(w.Management, func(t string) bool { return slices.Contains(c.Management, t) }) {
		return false
	}
	if len(w.AdditionTo) > 0 && !slices.ContainsFunc(w.AdditionTo, func(p string) bool { return slices.Contains(c.AdditionPools, p) }) {
		return false
	}
	if len(w.NoAdditionTo) > 0 && slices.ContainsFunc(w.NoAdditionTo, func(p string) bool { return slices.Contains(c.AdditionPools, p) }) {
		return false
	}
	if w.Declared != nil && *w.Declared != (len(c.Declared) > 0) {
		return false
	}
	return true
}

// Targets reports whether the rule applies to the candidate in the context.
func (r Rule) Targets(c *Candidate, ctx Context) bool {
	for _, id := range r.Candidates {
		switch {
		case id == c.ID:
			return true
		case c.Source != "" && id == "source:*":
			return true
		case c.Source != "" && id == "source:declared" && slices.Contains(ctx.Declared, c.Source):
			return true
		case c.Source != "" && id == "source:undeclared" && !slices.Contains(ctx.Declared, c.Source):
			return true
		}
	}
	return false
}

// Adjustment is one applied rule, for reports.
type Adjustment struct {
	Rule   string
	Factor float64
	Reason string
	Refs   []string
	Status string
}

// Prior returns the candidate's prior weight in the context and the rules
// that moved it.
func (s *Set) Prior(c *Candidate, ctx Context) (float64, []Adjustment) {
	p := c.Prior
	var adj []Adjustment
	for _, r := range s.Rules {
		if r.When.Applies(ctx) && r.Targets(c, ctx) {
			p *= r.Multiply
			adj = append(adj, Adjustment{r.ID, r.Multiply, r.Reason, r.Refs, r.Status})
		}
	}
	return p, adj
}
