package knowledge

import (
	"fmt"
	"io/fs"
	"math"
	"nlens/knowledge/input"
	"slices"
)

// Source is an end-member N source: the δ15N (‰ AIR) of the N it delivers
// and, for nitrate-bearing sources, its δ18O (‰ VSMOW). Parts say which
// pools its N enters and in what shares (DESIGN §4: ammonium-nitrate enters
// ammonium and nitrate half and half); a source with one receiving pool may
// give it as Pool. Contexts say where an undeclared input of the source is
// possible at all, and RateRange how large it plausibly is.
type Source struct {
	ID              string       `yaml:"id" json:"id,omitempty"`
	Label           string       `yaml:"label" json:"label,omitempty"`
	Pool            string       `yaml:"pool" json:"pool,omitempty"`
	Parts           []SourcePart `yaml:"parts" json:"parts,omitempty"`
	D15NPermil      float64      `yaml:"d15n" json:"d15n"`
	D15NRangePermil []float64    `yaml:"range" json:"range,omitempty"`
	D18OPermil      *float64     `yaml:"d18o" json:"d18o,omitempty"`
	D18ORangePermil []float64    `yaml:"d18o_range" json:"d18o_range,omitempty"`
	// Contexts in which an undeclared input of the source is possible; a
	// source with none is never an undeclared candidate.
	Contexts SourceContexts `yaml:"contexts" json:"contexts"`
	// RateRange is [low, high] of a plausible undeclared input, kg N/ha/yr.
	RateRange []float64 `yaml:"rate" json:"rate,omitempty"`
	Note      string    `yaml:"note" json:"note,omitempty"`
	Refs      []string  `yaml:"refs" json:"refs,omitempty"`
	Status    string    `yaml:"status" json:"status,omitempty"`
	Line      int       `yaml:"-" json:"-"`
}

// SourcePart is the share of a source's N that enters one pool, with its own
// δ values where they differ from the source's. After loading every field
// is filled: D15NPermil and the ranges are the source's unless the part
// gives its own.
type SourcePart struct {
	Pool            string    `yaml:"pool" json:"pool"`
	Share           float64   `yaml:"share" json:"share"`
	D15N            *float64  `yaml:"d15n" json:"-"`
	D15NPermil      float64   `yaml:"-" json:"d15n"`
	D15NRangePermil []float64 `yaml:"range" json:"range,omitempty"`
	D18OPermil      *float64  `yaml:"d18o" json:"d18o,omitempty"`
	D18ORangePermil []float64 `yaml:"d18o_range" json:"d18o_range,omitempty"`
}

// SourceContexts lists the site contexts that make an undeclared input of a
// source possible: any land use, nearby activity or management tag listed,
// or anywhere.
type SourceContexts struct {
	Anywhere   bool     `yaml:"anywhere" json:"anywhere,omitempty"`
	LandUse    []string `yaml:"land_use" json:"land_use,omitempty"`
	Nearby     []string `yaml:"nearby" json:"nearby,omitempty"`
	Management []string `yaml:"management" json:"management,omitempty"`
}

// Possible reports whether the contexts allow the source where the land use,
// nearby activities and management tags are as given.
func (c SourceContexts) Possible(landUse string, nearby, management []string) bool {
	if c.Anywhere || slices.Contains(c.LandUse, landUse) {
		return true
	}
	for _, n := range nearby {
		if slices.Contains(c.Nearby, n) {
			return true
		}
	}
	for _, m := range management {
		if slices.Contains(c.Management, m) {
			return true
		}
	}
	return false
}

// Empty reports whether no context is listed.
func (c SourceContexts) Empty() bool {
	return !c.Anywhere && len(c.LandUse) == 0 && len(c.Nearby) == 0 && len(c.Management) == 0
}

// NearbyKinds are the values of a study's site.nearby (DESIGN §6).
var NearbyKinds = []string{"cropland", "pasture", "livestock", "settlement", "septic", "road", "industry"}

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
	var errs input.Errors
	b.sourceByID = map[string]int{}
	for i := range f.Sources {
		s := &f.Sources[i]
		s.Line = doc.Line("sources", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.ErrorAt([]any{"sources", i, key}, format, args...))
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
		if msg := checkRange(s.D15NRangePermil, s.D15NPermil); msg != "" {
			at("range", "%s", msg)
		}
		if s.D18OPermil != nil {
			if msg := checkRange(s.D18ORangePermil, *s.D18OPermil); msg != "" {
				at("d18o_range", "%s", msg)
			}
		}
		switch {
		case s.Pool != "" && len(s.Parts) > 0:
			at("parts", "give either pool or parts, not both")
		case s.Pool != "":
			s.Parts = []SourcePart{{Pool: s.Pool, Share: 1}}
		case len(s.Parts) == 0:
			at("pool", "missing: name the pool the source enters, or its parts")
		}
		var total float64
		for k := range s.Parts {
			p := &s.Parts[k]
			pat := func(key, format string, args ...any) {
				at(fmt.Sprintf("parts[%d].%s", k, key), format, args...)
			}
			if !slices.Contains(sourcePools, p.Pool) {
				pat("pool", "expected one of %v, got %q", sourcePools, p.Pool)
			}
			if !(p.Share > 0 && p.Share <= 1) {
				pat("share", "expected a share in (0, 1], got %g", p.Share)
			}
			total += p.Share
			own := p.D15N != nil || p.D15NRangePermil != nil
			p.D15NPermil = s.D15NPermil
			if p.D15N != nil {
				p.D15NPermil = *p.D15N
			}
			if p.D15NRangePermil == nil {
				p.D15NRangePermil = s.D15NRangePermil
			}
			if msg := checkRange(p.D15NRangePermil, p.D15NPermil); msg != "" && own {
				pat("range", "%s", msg)
			}
			if p.D18OPermil == nil && p.Pool == "nitrate" {
				p.D18OPermil, p.D18ORangePermil = s.D18OPermil, s.D18ORangePermil
			}
			if p.Pool == "nitrate" && p.D18OPermil == nil {
				pat("d18o", "a part entering nitrate needs its δ18O")
			}
			if p.D18OPermil != nil {
				if msg := checkRange(p.D18ORangePermil, *p.D18OPermil); msg != "" {
					pat("d18o_range", "%s", msg)
				}
			}
		}
		if len(s.Parts) > 0 {
			if math.Abs(total-1) > 1e-9 {
				at("parts", "shares add up to %g, not 1", total)
			}
			s.Pool = s.Parts[0].Pool
		}
		for _, lu := range s.Contexts.LandUse {
			if !slices.Contains(LandUses, lu) {
				at("contexts", "unknown land use %q (land uses: %v)", lu, LandUses)
			}
		}
		for _, n := range s.Contexts.Nearby {
			if !slices.Contains(NearbyKinds, n) {
				at("contexts", "unknown nearby activity %q (expected one of %v)", n, NearbyKinds)
			}
		}
		if !s.Contexts.Empty() {
			if len(s.RateRange) != 2 || !(s.RateRange[0] > 0 && s.RateRange[1] > s.RateRange[0]) || math.IsInf(s.RateRange[1], 0) {
				at("rate", "a source that may be undeclared needs its plausible rate as [low, high] kg N/ha/yr with 0 < low < high")
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

// PartFor returns the source's part entering pool, if any.
func (s Source) PartFor(pool string) (SourcePart, bool) {
	for _, p := range s.Parts {
		if p.Pool == pool {
			return p, true
		}
	}
	return SourcePart{}, false
}
