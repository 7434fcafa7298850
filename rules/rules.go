package rules

import (
	"embed"
	"fmt"
	"math"
	"nlens/knowledge/input"
	"slices"
	"strings"

	"nlens/knowledge"
)

//go:embed *.yaml
var files embed.FS

// Knob kinds: what a candidate changes in the model (DESIGN §4).
const (
	KnobNone          = "none"
	KnobShare         = "share"          // share of the donor pools' outflow taken by Processes
	KnobNitrateShare  = "nitrate-share"  // share of plant uptake taken as nitrate, total kept
	KnobTransferRatio = "transfer-ratio" // share of the fungal outflow passed to the host, total kept
	KnobRoute         = "route"          // share of the plant's N supply arriving through fungi, total kept
	KnobFixation      = "fixation"       // the biological N fixation input, kg N/ha/yr
	KnobSource        = "source"         // an undeclared input of a knowledge source, kg N/ha/yr
)

// knobKinds a candidate may name.
var knobKinds = []string{KnobNone, KnobShare, KnobNitrateShare, KnobTransferRatio, KnobRoute, KnobFixation, KnobSource}

// IsShare reports whether the knob's magnitude is a share (0–1).
func IsShare(kind string) bool {
	return kind == KnobShare || kind == KnobNitrateShare || kind == KnobTransferRatio || kind == KnobRoute
}

// Prior shapes of a magnitude.
const (
	PriorLogitUniform = "logit-uniform" // shares: uniform on logit(s)
	PriorLogUniform   = "log-uniform"   // rates: uniform on ln(x)
)

// Directions of a response.
const (
	More = "more"
	Less = "less"
)

// None is the id of the no-response candidate.
const None = "none"

// SourcePrefix starts the id of an undeclared-source candidate: "source:manure".
const SourcePrefix = "source:"

// Candidate is one candidate response: a knob, a direction, a magnitude
// prior and what supports and tests it.
type Candidate struct {
	ID    string `yaml:"id" json:"id"`
	Label string `yaml:"label" json:"label"`
	// LabelTreated is none's label when the study declares a treatment.
	LabelTreated string `yaml:"label_treated" json:"label_treated,omitempty"`
	// Direction is More or Less for a process response, "" otherwise.
	Direction string    `yaml:"direction" json:"direction,omitempty"`
	Knob      Knob      `yaml:"knob" json:"knob"`
	Magnitude Magnitude `yaml:"magnitude" json:"magnitude"`
	// Routes are transfers added at rate 0 where the site lacks them.
	Routes []Route `yaml:"routes" json:"routes,omitempty"`
	// Prior is the base prior weight before context rules (relative).
	Prior float64 `yaml:"prior" json:"prior"`
	// Needs names what the site must have: "fungi" (a mycorrhizal route),
	// "uptake-forms" (both uptake-ammonium and uptake-nitrate).
	Needs     []string `yaml:"needs" json:"needs,omitempty"`
	Mechanism string   `yaml:"mechanism" json:"mechanism"`
	Refs      []string `yaml:"refs" json:"refs"`
	// Bounds says where the magnitude's bounds come from.
	Bounds     string   `yaml:"bounds" json:"bounds,omitempty"`
	BoundsRefs []string `yaml:"bounds_refs" json:"bounds_refs,omitempty"`
	// Tests lists catalogue measurement ids that test the candidate.
	Tests []string `yaml:"tests" json:"tests"`
	// Response is the response id a more-/less- candidate was made from,
	// and Noun its label without direction ("nitrification").
	Response string `yaml:"-" json:"response,omitempty"`
	Noun     string `yaml:"noun" json:"noun,omitempty"`
	// Source is set for undeclared-source candidates.
	Source string `yaml:"-" json:"source,omitempty"`
	Line   int    `yaml:"-" json:"-"`
	File   string `yaml:"-" json:"-"`
}

// Knob is what a candidate changes in the model.
type Knob struct {
	Kind      string   `yaml:"kind" json:"kind"`
	Processes []string `yaml:"processes" json:"processes,omitempty"`
	// From restricts a share knob to transfers leaving this pool.
	From string `yaml:"from" json:"from,omitempty"`
}

// Magnitude is the prior over a candidate's size. For a share the bounds
// are the field's extremes; the site's baseline share closes the interval
// on the other side (more: baseline–Max; less: Min–baseline).
type Magnitude struct {
	Prior string  `yaml:"prior" json:"prior"`
	Min   float64 `yaml:"min" json:"min"`
	Max   float64 `yaml:"max" json:"max"`
	Unit  string  `yaml:"unit" json:"unit"`
	// Of says what a share is of ("the NH4+ outflow"), for reports.
	Of string `yaml:"of" json:"of,omitempty"`
}

// Route is where a process runs when a site lacks it.
type Route struct {
	Process  string `yaml:"process" json:"process"`
	From     string `yaml:"from" json:"from"`
	To       string `yaml:"to" json:"to"`
	Fallback string `yaml:"fallback" json:"fallback,omitempty"`
}

// Rule multiplies the prior of some candidates when the context matches.
type Rule struct {
	ID   string `yaml:"id" json:"id"`
	When When   `yaml:"when" json:"when"`
	// Candidates the rule applies to: ids, or "source:*" (every undeclared
	// source).
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
	LandUse       []string `yaml:"land_use" json:"land_use,omitempty"`
	Nearby        []string `yaml:"nearby" json:"nearby,omitempty"`
	// Management holds if any of these tags is declared.
	Management []string `yaml:"management" json:"management,omitempty"`
	// AdditionTo holds if a declared addition enters one of these pools;
	// NoAdditionTo if none does.
	AdditionTo   []string `yaml:"addition_to" json:"addition_to,omitempty"`
	NoAdditionTo []string `yaml:"no_addition_to" json:"no_addition_to,omitempty"`
	// Declared holds when the comparison declares at least one addition;
	// DeclaredSource when it declares an addition of one of these sources.
	Declared       *bool    `yaml:"declared" json:"declared,omitempty"`
	DeclaredSource []string `yaml:"declared_source" json:"declared_source,omitempty"`
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
	// SourceTemplate is the candidate that every possible source becomes.
	SourceTemplate Candidate
}

type candidatesFile struct {
	NoneShare  *float64        `yaml:"none_share"`
	PairPrior  *float64        `yaml:"pair_prior"`
	Source     *Candidate      `yaml:"source_candidate"`
	Responses  []responseEntry `yaml:"responses"`
	Candidates []Candidate     `yaml:"candidates"`
}

// responseEntry makes the two candidates more-ID and less-ID.
type responseEntry struct {
	ID         string         `yaml:"id"`
	Label      string         `yaml:"label"`
	Of         string         `yaml:"of"`
	Knob       Knob           `yaml:"knob"`
	Routes     []Route        `yaml:"routes"`
	Share      *bounds        `yaml:"share"`
	Rate       *bounds        `yaml:"rate"`
	Bounds     string         `yaml:"bounds"`
	BoundsRefs []string       `yaml:"bounds_refs"`
	Prior      float64        `yaml:"prior"`
	Needs      []string       `yaml:"needs"`
	Refs       []string       `yaml:"refs"`
	More       directionEntry `yaml:"more"`
	Less       directionEntry `yaml:"less"`
}

type bounds struct {
	Min float64 `yaml:"min"`
	Max float64 `yaml:"max"`
}

type directionEntry struct {
	Label     string   `yaml:"label"`
	Mechanism string   `yaml:"mechanism"`
	Tests     []string `yaml:"tests"`
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
	LandUse       string
	Nearby        []string
	Management    []string
	AdditionPools []string // pools that declared additions enter
	Declared      []string // source ids of declared additions
}

// RequiredResponses are the response ids every rules set has (DESIGN §4);
// each gives a more- and a less- candidate.
var RequiredResponses = []string{"nitrification", "denitrification", "volatilization", "nitrate-leaching", "mineralization", "immobilization", "plant-uptake", "mycorrhizal-route", "fungal-transfer", "nitrate-uptake", "fixation"}

// Limits on numbers in rules files: beyond them a prior weight or factor
// is not a judgement but an overflow waiting to happen.
const (
	maxWeight = 1e6
	maxRate   = 1e4 // kg N/ha/yr
)

// Default returns the embedded rules, expanded with a candidate for every
// source that may be undeclared.
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

// Parse reads rules files. A file may hold candidates and responses (with
// pair_prior, none_share and source_candidate), context rules, or both;
// later files add candidates and rules, and a candidate whose id is already
// defined replaces the earlier one.
func Parse(kb *knowledge.Base, fs ...File) (set *Set, err error) {
	set = &Set{PairPrior: math.NaN(), NoneShare: math.NaN()}
	var errs input.Errors
	for _, f := range fs {
		var raw struct {
			candidatesFile `yaml:",inline"`
			contextFile    `yaml:",inline"`
		}
		doc, err := input.Decode(f.Name, f.Data, &raw)
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
			errs = append(errs, checkCandidate(kb, doc, &c, "source_candidate", []any{"source_candidate"}, true)...)
			set.SourceTemplate = c
		}
		add := func(c Candidate) {
			if j := slices.IndexFunc(set.Candidates, func(o Candidate) bool { return o.ID == c.ID }); j >= 0 {
				set.Candidates[j] = c
			} else {
				set.Candidates = append(set.Candidates, c)
			}
		}
		for i, r := range raw.Responses {
			cs, es := expandResponse(kb, doc, f.Name, i, r)
			errs = append(errs, es...)
			for _, c := range cs {
				add(c)
			}
		}
		nones := 0
		for i := range raw.Candidates {
			c := raw.Candidates[i]
			c.File, c.Line = f.Name, doc.Line("candidates", i)
			field := fmt.Sprintf("candidates[%d]", i)
			errs = append(errs, checkCandidate(kb, doc, &c, field, []any{"candidates", i}, false)...)
			if strings.HasPrefix(c.ID, SourcePrefix) || c.Knob.Kind == KnobSource {
				errs = append(errs, doc.Errorf(field+".id", []any{"candidates", i, "id"}, "undeclared-source candidates are made from source_candidate for every knowledge source with contexts; define %q as a knowledge source instead", c.ID))
			}
			if c.ID == None || c.Knob.Kind == KnobNone {
				nones++
				if nones > 1 || (c.ID == None) != (c.Knob.Kind == KnobNone) {
					errs = append(errs, doc.Errorf(field+".id", []any{"candidates", i, "id"}, "only the candidate \"none\" has knob kind none, and a file defines it once"))
				}
			}
			add(c)
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
	if set.Candidate(None) == nil {
		return nil, &input.Error{File: fs[0].Name, Field: "candidates", Msg: "required candidate \"none\" is missing"}
	}
	for _, id := range RequiredResponses {
		for _, dir := range []string{More, Less} {
			if set.Candidate(dir+"-"+id) == nil {
				return nil, &input.Error{File: fs[0].Name, Field: "responses", Msg: fmt.Sprintf("required response %q is missing", id)}
			}
		}
	}
	if math.IsNaN(set.PairPrior) || math.IsNaN(set.NoneShare) || set.SourceTemplate.ID == "" {
		return nil, &input.Error{File: fs[0].Name, Msg: "none_share, pair_prior and source_candidate must be defined"}
	}
	for _, s := range kb.Sources {
		if s.Contexts.Empty() {
			continue
		}
		c := set.SourceTemplate
		c.ID = SourcePrefix + s.ID
		c.Label = strings.ReplaceAll(c.Label, "{source}", s.Label)
		c.Mechanism = strings.ReplaceAll(c.Mechanism, "{source}", s.Label)
		c.Refs = append(append([]string(nil), c.Refs...), s.Refs...)
		c.Source = s.ID
		c.Magnitude = Magnitude{Prior: PriorLogUniform, Min: s.RateRange[0], Max: s.RateRange[1], Unit: "kg N/ha/yr"}
		set.Candidates = append(set.Candidates, c)
	}
	// Rules may name candidates defined in any file.
	for _, r := range set.Rules {
		for _, id := range r.Candidates {
			if id == "source:*" {
				continue
			}
			if set.Candidate(id) == nil {
				errs = append(errs, &input.Error{File: r.File, Line: r.Line, Field: r.ID + ".candidates", Msg: fmt.Sprintf("unknown candidate %q", id)})
			}
		}
	}
	return set, errs.Err()
}

// expandResponse makes the more- and less- candidates of one response.
func expandResponse(kb *knowledge.Base, doc *input.Doc, file string, i int, r responseEntry) ([]Candidate, input.Errors) {
	var errs input.Errors
	path := []any{"responses", i}
	field := fmt.Sprintf("responses[%d]", i)
	at := func(key, format string, args ...any) {
		errs = append(errs, doc.Errorf(field+"."+key, append(slices.Clone(path), key), format, args...))
	}
	if r.ID == "" {
		at("id", "missing")
	}
	var m Magnitude
	switch {
	case IsShare(r.Knob.Kind):
		if r.Share == nil {
			at("share", "a share knob needs share: {min, max}")
			break
		}
		if !(r.Share.Min > 0 && r.Share.Min < r.Share.Max && r.Share.Max < 1) {
			at("share", "expected 0 < min < max < 1, got %g–%g", r.Share.Min, r.Share.Max)
		}
		m = Magnitude{Prior: PriorLogitUniform, Min: r.Share.Min, Max: r.Share.Max, Unit: "share", Of: r.Of}
	case r.Knob.Kind == KnobFixation:
		if r.Rate == nil {
			at("rate", "a fixation knob needs rate: {min, max} in kg N/ha/yr")
			break
		}
		if !(r.Rate.Min > 0 && r.Rate.Min < r.Rate.Max && r.Rate.Max <= maxRate) {
			at("rate", "expected 0 < min < max ≤ %g kg N/ha/yr, got %g–%g", maxRate, r.Rate.Min, r.Rate.Max)
		}
		m = Magnitude{Prior: PriorLogUniform, Min: r.Rate.Min, Max: r.Rate.Max, Unit: "kg N/ha/yr"}
	default:
		at("knob", "a response turns a share, nitrate-share, transfer-ratio, route or fixation knob, got %q", r.Knob.Kind)
	}
	var out []Candidate
	for _, d := range []struct {
		dir string
		e   directionEntry
	}{{More, r.More}, {Less, r.Less}} {
		c := Candidate{
			ID: d.dir + "-" + r.ID, Label: d.e.Label, Direction: d.dir, Knob: r.Knob, Magnitude: m,
			Routes: r.Routes, Prior: r.Prior, Needs: r.Needs, Mechanism: d.e.Mechanism, Refs: r.Refs,
			Bounds: r.Bounds, BoundsRefs: r.BoundsRefs, Tests: d.e.Tests, Response: r.ID, Noun: r.Label,
			File: file, Line: doc.Line("responses", i),
		}
		if c.Label == "" {
			c.Label = d.dir + " " + r.Label
		}
		errs = append(errs, checkCandidate(kb, doc, &c, field+"."+d.dir, append(slices.Clone(path), d.dir), true)...)
		out = append(out, c)
	}
	return out, errs
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

// checkCandidate validates one candidate. generated is set for candidates
// made from responses or the source template, whose magnitude is filled in
// by the maker.
func checkCandidate(kb *knowledge.Base, doc *input.Doc, c *Candidate, field string, path []any, generated bool) input.Errors {
	var errs input.Errors
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
	if !(c.Prior > 0 && c.Prior <= maxWeight) {
		at("prior", "expected a positive weight of at most %g, got %g", maxWeight, c.Prior)
	}
	if c.Direction != "" && c.Direction != More && c.Direction != Less {
		at("direction", "expected more or less, got %q", c.Direction)
	}
	if !slices.Contains(knobKinds, c.Knob.Kind) {
		at("knob", "expected kind %s, got %q", strings.Join(knobKinds, ", "), c.Knob.Kind)
	}
	if c.Knob.Kind == KnobShare {
		if len(c.Knob.Processes) == 0 {
			at("knob", "a share knob needs processes")
		}
	}
	for _, p := range c.Knob.Processes {
		if !slices.Contains(knowledge.Processes, p) {
			at("knob", "unknown process %q", p)
		}
	}
	for _, r := range c.Routes {
		if !slices.Contains(knowledge.Processes, r.Process) {
			at("routes", "unknown process %q", r.Process)
		}
	}
	if !generated && c.Knob.Kind != KnobNone && c.Knob.Kind != KnobSource {
		m := c.Magnitude
		finite := !math.IsNaN(m.Min) && !math.IsNaN(m.Max) && !math.IsInf(m.Min, 0) && !math.IsInf(m.Max, 0)
		switch {
		case IsShare(c.Knob.Kind):
			if m.Prior != PriorLogitUniform || !finite || !(m.Min > 0 && m.Min < m.Max && m.Max < 1) {
				at("magnitude", "a share needs prior logit-uniform with 0 < min < max < 1, got %s %g–%g", m.Prior, m.Min, m.Max)
			}
			if c.Direction == "" {
				at("direction", "a share response needs a direction: more or less")
			}
		case c.Knob.Kind == KnobFixation:
			if m.Prior != PriorLogUniform || !finite || !(m.Min > 0 && m.Min < m.Max && m.Max <= maxRate) {
				at("magnitude", "a rate needs prior log-uniform with 0 < min < max ≤ %g kg N/ha/yr, got %s %g–%g", maxRate, m.Prior, m.Min, m.Max)
			}
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
	for _, k := range append(slices.Clone(c.Refs), c.BoundsRefs...) {
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

// Drainages are the values a study's drainage may take.
var Drainages = drainages

func checkRule(kb *knowledge.Base, doc *input.Doc, r *Rule, field string, path []any) input.Errors {
	var errs input.Errors
	at := func(key, format string, args ...any) {
		errs = append(errs, doc.Errorf(field+"."+key, append(append([]any(nil), path...), key), format, args...))
	}
	if r.ID == "" {
		at("id", "missing")
	}
	if len(r.Candidates) == 0 {
		at("candidates", "missing")
	}
	if !(r.Multiply >= 0 && r.Multiply <= maxWeight) {
		at("multiply", "expected a factor between 0 and %g, got %g", maxWeight, r.Multiply)
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
	w := r.When
	for _, v := range []struct {
		key string
		p   *float64
		lo  float64
		hi  float64
	}{{"soil_ph_below", w.SoilPHBelow, 0, 14}, {"soil_ph_above", w.SoilPHAbove, 0, 14}, {"precip_below_mm", w.PrecipBelowMM, 0, 20000}, {"precip_above_mm", w.PrecipAboveMM, 0, 20000}} {
		if v.p != nil && !(*v.p >= v.lo && *v.p <= v.hi) {
			at("when", "%s must be a number between %g and %g, got %g", v.key, v.lo, v.hi, *v.p)
		}
	}
	for _, d := range w.Drainage {
		if !slices.Contains(drainages, d) {
			at("when", "unknown drainage %q (well, moderate, poor)", d)
		}
	}
	for _, m := range w.Mycorrhizal {
		if !slices.Contains(knowledge.MycorrhizalTypes, m) {
			at("when", "unknown mycorrhizal type %q", m)
		}
	}
	for _, l := range w.LandUse {
		if !slices.Contains(knowledge.LandUses, l) {
			at("when", "unknown land use %q (%s)", l, strings.Join(knowledge.LandUses, ", "))
		}
	}
	for _, n := range w.Nearby {
		if !slices.Contains(knowledge.NearbyKinds, n) {
			at("when", "unknown nearby activity %q (%s)", n, strings.Join(knowledge.NearbyKinds, ", "))
		}
	}
	for _, src := range w.DeclaredSource {
		if _, ok := kb.Source(src); !ok {
			at("when", "unknown source %q", src)
		}
	}
	tags := kb.ManagementTags()
	for _, m := range w.Management {
		if !slices.Contains(tags, m) {
			at("when", "unknown management tag %q (%s)", m, strings.Join(tags, ", "))
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
	if len(w.LandUse) > 0 && !slices.Contains(w.LandUse, c.LandUse) {
		return false
	}
	if len(w.Nearby) > 0 && !slices.ContainsFunc(w.Nearby, func(n string) bool { return slices.Contains(c.Nearby, n) }) {
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
	if len(w.DeclaredSource) > 0 && !slices.ContainsFunc(w.DeclaredSource, func(s string) bool { return slices.Contains(c.Declared, s) }) {
		return false
	}
	return true
}

// Targets reports whether the rule applies to the candidate.
func (r Rule) Targets(c *Candidate) bool {
	for _, id := range r.Candidates {
		if id == c.ID || (c.Source != "" && id == "source:*") {
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
		if r.When.Applies(ctx) && r.Targets(c) {
			p *= r.Multiply
			adj = append(adj, Adjustment{r.ID, r.Multiply, r.Reason, r.Refs, r.Status})
		}
	}
	return p, adj
}

// SourcePossible reports whether an undeclared input of the candidate's
// source is possible in the context: the source's contexts allow it and the
// comparison does not declare it.
func SourcePossible(kb *knowledge.Base, c *Candidate, ctx Context) bool {
	src, ok := kb.Source(c.Source)
	if !ok || slices.Contains(ctx.Declared, c.Source) {
		return false
	}
	return src.Contexts.Possible(ctx.LandUse, ctx.Nearby, ctx.Management)
}

// NoneLabel returns none's label: "the declared treatment alone" when the
// comparison applies a treatment, "no change in N cycling" otherwise.
func (s *Set) NoneLabel(treated bool) string {
	c := s.Candidate(None)
	if treated && c.LabelTreated != "" {
		return c.LabelTreated
	}
	return c.Label
}
