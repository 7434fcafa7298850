package knowledge

import (
	"embed"
	"fmt"
	"io/fs"
	"nlens/knowledge/input"
	"path"
	"slices"
	"sort"
	"strings"
	"sync"
)

//go:embed *.yaml sites/*.yaml
var files embed.FS

// Status values a fact may carry.
const (
	Confirmed      = "confirmed"
	FromMemory     = "from memory"
	CommonPractice = "common practice"
)

// Base is the whole knowledge base, validated.
type Base struct {
	Effects       []Effect
	NitrateOxygen NitrateOxygen
	// MycorrhizalTypes holds the fungal transfer effect of each
	// mycorrhizal type (effects.yaml, mycorrhizal_types).
	MycorrhizalTypes []FungalPhysiology
	Sources          []Source
	Forcings         Forcings
	Measurements     []Measurement
	References       []Reference
	// Sites maps a template id to its YAML text and embedded file name; the
	// site format is parsed by package forward.
	sites map[string]SiteFile

	effectByID map[string]int
	fungal     map[string]FungalPhysiology
	sourceByID map[string]int
	measByID   map[string]int
	refByKey   map[string]int
}

// SiteFile is the text of one built-in site template.
type SiteFile struct {
	ID   string
	Name string // file name inside the embedded knowledge folder, e.g. sites/boreal-conifer-forest.yaml
	Data []byte
}

var (
	defaultOnce sync.Once
	defaultBase *Base
	defaultErr  error
)

// Default returns the embedded knowledge base, loaded and validated once.
func Default() (*Base, error) {
	defaultOnce.Do(func() { defaultBase, defaultErr = Load(files) })
	return defaultBase, defaultErr
}

// MustDefault is Default for callers that cannot recover from a broken
// embedded knowledge base (a programmer error caught by the package tests).
func MustDefault() *Base {
	b, err := Default()
	if err != nil {
		panic(fmt.Sprintf("embedded knowledge base: %v", err))
	}
	return b
}

// Load reads and validates a knowledge base laid out like the embedded one:
// effects.yaml, sources.yaml, forcings.yaml, measurements.yaml, references.yaml and
// sites/*.yaml at the root of fsys.
func Load(fsys fs.FS) (*Base, error) {
	b := &Base{sites: map[string]SiteFile{}}
	var errs input.Errors
	collect := func(err error) {
		if err == nil {
			return
		}
		if list, ok := err.(input.Errors); ok {
			errs = append(errs, list...)
			return
		}
		if e, ok := err.(*input.Error); ok {
			errs = append(errs, e)
			return
		}
		errs = append(errs, &input.Error{Msg: err.Error()})
	}
	collect(b.loadReferences(fsys))
	collect(b.loadEffects(fsys))
	collect(b.loadSources(fsys))
	if len(errs) == 0 {
		collect(b.loadForcings(fsys))
	}
	collect(b.loadMeasurements(fsys))
	collect(b.loadSites(fsys))
	if len(errs) > 0 {
		return nil, errs
	}
	collect(b.checkCitations())
	return b, errs.Err()
}

func readDoc(fsys fs.FS, name string, v any) (*input.Doc, error) {
	data, err := fs.ReadFile(fsys, name)
	if err != nil {
		return nil, &input.Error{File: name, Msg: err.Error()}
	}
	return input.Decode(name, data, v)
}

func (b *Base) loadSites(fsys fs.FS) error {
	names, err := fs.Glob(fsys, "sites/*.yaml")
	if err != nil {
		return err
	}
	for _, name := range names {
		data, err := fs.ReadFile(fsys, name)
		if err != nil {
			return &input.Error{File: name, Msg: err.Error()}
		}
		id := strings.TrimSuffix(path.Base(name), ".yaml")
		b.sites[id] = SiteFile{ID: id, Name: "knowledge/" + name, Data: data}
	}
	if len(b.sites) == 0 {
		return &input.Error{File: "sites/", Msg: "no site templates"}
	}
	return nil
}

// Site returns the built-in site template with the given id.
func (b *Base) Site(id string) (SiteFile, bool) {
	s, ok := b.sites[id]
	return s, ok
}

// SiteIDs lists the built-in site templates, sorted.
func (b *Base) SiteIDs() []string {
	ids := make([]string, 0, len(b.sites))
	for id := range b.sites {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	return ids
}

// Effect returns the isotope effect of a process.
func (b *Base) Effect(process string) (Effect, bool) {
	i, ok := b.effectByID[process]
	if !ok {
		return Effect{}, false
	}
	return b.Effects[i], true
}

// Source returns the source end-member with the given id.
func (b *Base) Source(id string) (Source, bool) {
	i, ok := b.sourceByID[id]
	if !ok {
		return Source{}, false
	}
	return b.Sources[i], true
}

// Measurement returns the catalogue entry with the given id.
func (b *Base) Measurement(id string) (Measurement, bool) {
	i, ok := b.measByID[id]
	if !ok {
		return Measurement{}, false
	}
	return b.Measurements[i], true
}

// Reference returns the reference with the given citation key.
func (b *Base) Reference(key string) (Reference, bool) {
	i, ok := b.refByKey[key]
	if !ok {
		return Reference{}, false
	}
	return b.References[i], true
}

// citing is one fact's list of reference keys, with its position.
type citing struct {
	file  string
	line  int
	field string
	keys  []string
}

func (b *Base) checkCitations() error {
	var errs input.Errors
	for _, c := range b.citations() {
		for _, k := range c.keys {
			if _, ok := b.refByKey[k]; !ok {
				errs = append(errs, &input.Error{File: c.file, Line: c.line, Field: c.field, Msg: fmt.Sprintf("reference %q is not in references.yaml", k)})
			}
		}
	}
	return errs.Err()
}

func (b *Base) citations() []citing {
	var out []citing
	for _, e := range b.Effects {
		out = append(out, citing{"effects.yaml", e.Line, e.ID + ".refs", e.Refs})
	}
	out = append(out, citing{"effects.yaml", b.NitrateOxygen.Line, "nitrate_oxygen.refs", b.NitrateOxygen.Refs})
	for _, fp := range b.MycorrhizalTypes {
		out = append(out, citing{"effects.yaml", fp.Line, "mycorrhizal_types." + fp.Type + ".refs", fp.Refs})
	}
	for _, s := range b.Sources {
		out = append(out, citing{"sources.yaml", s.Line, s.ID + ".refs", s.Refs})
	}
	for _, m := range b.Measurements {
		out = append(out, citing{"measurements.yaml", m.Line, m.ID + ".refs", m.Refs})
	}
	for _, m := range b.Forcings.Management {
		out = append(out, citing{"forcings.yaml", m.Line, "management." + m.ID + ".refs", m.Refs})
	}
	return out
}

// checkStatus validates a status value.
func checkStatus(s string) bool {
	return slices.Contains([]string{Confirmed, FromMemory, CommonPractice}, s)
}

// checkRange validates a [low, high] pair around a typical value.
func checkRange(r []float64, typical float64) string {
	if len(r) != 2 {
		return "expected [low, high]"
	}
	if r[0] > r[1] {
		return fmt.Sprintf("low %g is above high %g", r[0], r[1])
	}
	if typical < r[0] || typical > r[1] {
		return fmt.Sprintf("typical value %g lies outside [%g, %g]", typical, r[0], r[1])
	}
	return ""
}
