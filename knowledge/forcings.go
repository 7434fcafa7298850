package knowledge

import (
	"io/fs"
	"maps"
	"math"
	"nlens/knowledge/input"
	"slices"
	"strings"
)

// Size is an uncertain size of a forcing: its typical value and the range
// over which draws vary it (triangular, mode at the typical value).
type Size struct {
	Typical float64   `yaml:"typical" json:"typical"`
	Range   []float64 `yaml:"range" json:"range"`
}

// Forcings are the known treatments of DESIGN §4: how each management tag
// acts on the model. (A declared addition is an input of its source and
// needs no entry.)
type Forcings struct {
	Management  []Management `yaml:"management" json:"management"`
	ContextOnly []string     `yaml:"context_only" json:"context_only"`
}

// Management is a management tag that acts on the model: one-off moves of N
// at t = 0 and rate changes over a window, possibly by severity, or grazing.
type Management struct {
	ID       string                    `yaml:"id" json:"id"`
	Aliases  []string                  `yaml:"aliases" json:"aliases,omitempty"`
	Label    string                    `yaml:"label" json:"label"`
	Moves    []MoveForcing             `yaml:"moves" json:"moves,omitempty"`
	Rates    []RateForcing             `yaml:"rates" json:"rates,omitempty"`
	Severity map[string]SeverityEffect `yaml:"severity" json:"severity,omitempty"`
	Grazing  *GrazingForcing           `yaml:"grazing" json:"grazing,omitempty"`
	Note     string                    `yaml:"note" json:"note,omitempty"`
	Refs     []string                  `yaml:"refs" json:"refs,omitempty"`
	Status   string                    `yaml:"status" json:"status,omitempty"`
	Line     int                       `yaml:"-" json:"-"`
}

// DefaultSeverity is the severity whose sizes stand for a management with
// severities when a study gives none (the draws then cover every severity).
const DefaultSeverity = "moderate"

// Effect returns what m does at severity sev (DefaultSeverity for ""):
// its moves and rate changes, and false for a severity m does not know.
// A management without severities does the same at any.
func (m Management) Effect(sev string) ([]MoveForcing, []RateForcing, bool) {
	if len(m.Severity) == 0 {
		return m.Moves, m.Rates, true
	}
	if sev == "" {
		sev = DefaultSeverity
	}
	e, ok := m.Severity[sev]
	return e.Moves, e.Rates, ok
}

// SeverityEffect is what a management does at one severity.
type SeverityEffect struct {
	Moves []MoveForcing `yaml:"moves" json:"moves,omitempty"`
	Rates []RateForcing `yaml:"rates" json:"rates,omitempty"`
}

// MoveForcing takes a share of a pool at t = 0 to another pool or out.
type MoveForcing struct {
	From     string `yaml:"from" json:"from"`
	To       string `yaml:"to" json:"to"`
	Fallback string `yaml:"fallback" json:"fallback,omitempty"`
	Share    Size   `yaml:"share" json:"share"`
	// Epsilon of the move (‰); nil moves the isotopes in proportion.
	Epsilon *Size  `yaml:"epsilon" json:"epsilon,omitempty"`
	Label   string `yaml:"label" json:"label"`
	Note    string `yaml:"note" json:"note,omitempty"`
}

// RateForcing multiplies the rate constants of processes by Factor for
// Years from t = 0 (sustained when Years is nil).
type RateForcing struct {
	Processes []string `yaml:"processes" json:"processes"`
	Factor    Size     `yaml:"factor" json:"factor"`
	Years     *Size    `yaml:"years" json:"years,omitempty"`
	Label     string   `yaml:"label" json:"label"`
	Note      string   `yaml:"note" json:"note,omitempty"`
}

// GrazingForcing sizes grazing: the share of the foliage's outflow eaten
// (Offtake), the share of the intake leaving the site (Export) and the
// share of excreta returned as urine (the rest as dung).
type GrazingForcing struct {
	Offtake Size `yaml:"offtake" json:"offtake"`
	Export  Size `yaml:"export" json:"export"`
	Urine   Size `yaml:"urine" json:"urine"`
}

// Severities of a fire (DESIGN §6).
var Severities = []string{"low", "moderate", "high"}

// movePools may be moved from or to.
var movePools = []string{"organic", "ammonium", "nitrate", "plant", "fungi", "foliage", "forest-floor", "out"}

func (b *Base) loadForcings(fsys fs.FS) error {
	var f Forcings
	doc, err := readDoc(fsys, "forcings.yaml", &f)
	if err != nil {
		return err
	}
	var errs input.Errors
	at := func(path []any, format string, args ...any) {
		errs = append(errs, doc.ErrorAt(path, format, args...))
	}
	checkSize := func(path []any, s Size, lo, hi float64) {
		if len(s.Range) != 2 || !(s.Range[0] <= s.Typical && s.Typical <= s.Range[1]) || s.Range[0] < lo || s.Range[1] > hi || math.IsNaN(s.Typical) {
			at(path, "expected {typical, range: [low, high]} with %g ≤ low ≤ typical ≤ high ≤ %g", lo, hi)
		}
	}
	checkEffect := func(path []any, moves []MoveForcing, rates []RateForcing) {
		for k, m := range moves {
			p := append(slices.Clone(path), "moves", k)
			if !slices.Contains(movePools, m.From) || m.From == "out" {
				at(append(p, "from"), "expected a pool, got %q", m.From)
			}
			if !slices.Contains(movePools, m.To) {
				at(append(p, "to"), "expected a pool or out, got %q", m.To)
			}
			if m.Fallback != "" && !slices.Contains(movePools, m.Fallback) {
				at(append(p, "fallback"), "expected a pool, got %q", m.Fallback)
			}
			checkSize(append(p, "share"), m.Share, 0, 1)
			if m.Epsilon != nil {
				checkSize(append(p, "epsilon"), *m.Epsilon, -50, 50)
			}
			if m.Label == "" {
				at(p, "missing label")
			}
		}
		for k, r := range rates {
			p := append(slices.Clone(path), "rates", k)
			for _, proc := range r.Processes {
				if !slices.Contains(Processes, proc) {
					at(append(p, "processes"), "unknown process %q", proc)
				}
			}
			checkSize(append(p, "factor"), r.Factor, 0, 100)
			if r.Years != nil {
				checkSize(append(p, "years"), *r.Years, 0, 1000)
			}
			if r.Label == "" {
				at(p, "missing label")
			}
		}
	}
	seen := map[string]bool{}
	for i := range f.Management {
		m := &f.Management[i]
		m.Line = doc.Line("management", i)
		for _, tag := range append([]string{m.ID}, m.Aliases...) {
			if tag == "" || seen[tag] || slices.Contains(f.ContextOnly, tag) {
				at([]any{"management", i, "id"}, "tag %q is empty or used twice", tag)
			}
			seen[tag] = true
		}
		if m.Label == "" {
			at([]any{"management", i, "label"}, "missing")
		}
		checkEffect([]any{"management", i}, m.Moves, m.Rates)
		for _, sev := range slices.Sorted(maps.Keys(m.Severity)) {
			if !slices.Contains(Severities, sev) {
				at([]any{"management", i, "severity", sev}, "unknown severity %q (%s)", sev, strings.Join(Severities, ", "))
			}
			checkEffect([]any{"management", i, "severity", sev}, m.Severity[sev].Moves, m.Severity[sev].Rates)
		}
		if len(m.Severity) > 0 && len(m.Severity) != len(Severities) {
			at([]any{"management", i, "severity"}, "give all of %s", strings.Join(Severities, ", "))
		}
		if g := m.Grazing; g != nil {
			for _, s := range []struct {
				key string
				v   Size
			}{{"offtake", g.Offtake}, {"export", g.Export}, {"urine", g.Urine}} {
				checkSize([]any{"management", i, "grazing", s.key}, s.v, 0, 0.95)
			}
		}
		if !checkStatus(m.Status) {
			at([]any{"management", i, "status"}, "unknown status %q", m.Status)
		}
		if len(m.Refs) == 0 {
			at([]any{"management", i, "refs"}, "missing")
		}
	}
	for _, t := range f.ContextOnly {
		if seen[t] {
			at([]any{"context_only"}, "tag %q is also a forcing", t)
		}
	}
	b.Forcings = f
	return errs.Err()
}

// Management returns the forcing of a management tag (by id or alias), or
// false for a context-only or unknown tag.
func (b *Base) Management(tag string) (*Management, bool) {
	for i := range b.Forcings.Management {
		m := &b.Forcings.Management[i]
		if m.ID == tag || slices.Contains(m.Aliases, tag) {
			return m, true
		}
	}
	return nil, false
}

// ManagementTags lists every management tag a study may use: the forcings
// (ids and aliases) and the context-only tags.
func (b *Base) ManagementTags() []string {
	var out []string
	for _, m := range b.Forcings.Management {
		out = append(out, m.ID)
		out = append(out, m.Aliases...)
	}
	return append(out, b.Forcings.ContextOnly...)
}
