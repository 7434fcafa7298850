package knowledge

import (
	"fmt"
	"io/fs"
	"slices"
)

// Source is an end-member N source: the δ15N (‰ AIR) of the N it delivers
// and, for nitrate-bearing sources, its δ18O (‰ VSMOW); Pool is the pool the
// source enters in the model (DESIGN §4).
type Source struct {
	ID              string    `yaml:"id" json:"id,omitempty"`
	Label           string    `yaml:"label" json:"label,omitempty"`
	Pool            string    `yaml:"pool" json:"pool,omitempty"`
	D15NPermil      float64   `yaml:"d15n" json:"d15n"`
	D15NRangePermil []float64 `yaml:"range" json:"range,omitempty"`
	D18OPermil      *float64  `yaml:"d18o" json:"d18o,omitempty"`
	D18ORangePermil []float64 `yaml:"d18o_range" json:"d18o_range,omitempty"`
	Note            string    `yaml:"note" json:"note,omitempty"`
	Refs            []string  `yaml:"refs" json:"refs,omitempty"`
	Status          string    `yaml:"status" json:"status,omitempty"`
	Line            int       `yaml:"-" json:"-"`
}

type sourcesFile struct {
	Sources []Source `yaml:"sources" json:"sources,omitempty"`
}

// Receiving pools a source may name.
var sourcePools = []string{"organic", "ammonium", "nitrate", "plant"}

func (b *Base) loadSources(fsys fs.FS) error {
	var f sourcesFile
	doc, err := readDoc(fsys, "sources.yaml", &f)
	if err != nil {
		return err
	}
	var errs InputErrors
	b.sourceByID = map[string]int{}
	for i := range f.Sources {
		s := &f.Sources[i]
		s.Line = doc.Line("sources", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.Errorf(fmt.Sprintf("sources[%d].%s", i, key), []any{"sources", i, key}, format, args...))
		}
		if s.ID == "" {
			at("id", "missing")
		}
		if _, dup := b.sourceByID[s.ID]; dup {
			at("id", "source %q listed twice", s.ID)
		}
		b.sourceByID[s.ID] = i
		if s.Label == "" {
			at("label", "missing")
		}
		if !slices.Contains(sourcePools, s.Pool) {
			at("pool", "expected one of %v, got %q", sourcePools, s.Pool)
		}
		if msg := checkRange(s.D15NRangePermil, s.D15NPermil); msg != "" {
			at("range", "%s", msg)
		}
		if s.Pool == "nitrate" && s.D18OPermil == nil {
			at("d18o", "a source entering nitrate needs its δ18O")
		}
		if s.D18OPermil != nil {
			if msg := checkRange(s.D18ORangePermil, *s.D18OPermil); msg != "" {
				at("d18o_range", "%s", msg)
			}
		}
		if len(s.Refs) == 0 {
			at("refs", "missing")
		}
		if !checkStatus(s.Status) {
			at("status", "unknown status %q", s.Status)
		}
	}
	b.Sources = f.Sources
	return errs.Err()
}
