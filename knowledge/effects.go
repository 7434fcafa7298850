package knowledge

import (
	"fmt"
	"io/fs"
	"nlens/knowledge/input"
	"slices"
	"strings"
)

// Processes lists the process names of DESIGN §3 in a fixed order: a site
// transfer's process and the id of its isotope effect. Version 2 appends
// the N2O steps (n2o-reduction, n2o-emission), fixation (an input: its ε
// sets the δ15N of fixed N relative to air N2), combustion (a removal by
// fire), incorporation (forest-floor organic N carried into the mineral
// soil) and the three routes of grazed foliage N (urine to ammonium, dung
// to soil organic N, export in animal product).
var Processes = []string{
	"mineralization", "immobilization-ammonium", "immobilization-nitrate",
	"nitrification", "nitrifier-gas", "denitrification", "volatilization",
	"uptake-ammonium", "uptake-nitrate", "mycorrhizal-uptake",
	"mycorrhizal-transfer", "fungal-turnover", "allocation", "retranslocation",
	"litterfall", "leaching-nitrate", "leaching-organic", "harvest", "erosion",
	"n2o-reduction", "n2o-emission", "fixation", "combustion", "incorporation",
	"grazing-urine", "grazing-dung", "grazing-export",
}

// InputProcesses are processes that bring N into a site from outside: they
// are given as inputs (a knowledge source), never as transfers between
// pools.
var InputProcesses = []string{"fixation"}

// MycorrhizalTypes are the values of a site's mycorrhizal_type (DESIGN §3):
// the mycorrhizal association of the dominant plants, which sets the ε of
// mycorrhizal-transfer.
var MycorrhizalTypes = []string{"ecto", "ericoid", "arbuscular", "none", "mixed"}

// LandUses are the values of a site's land_use (DESIGN §6).
var LandUses = []string{"forest", "grassland", "cropland", "pasture", "wetland", "dryland", "urban"}

// FungalPhysiology is the fungal transfer isotope effect of one mycorrhizal
// type: the ε of mycorrhizal-transfer (fungus → host) with its range, and,
// for a mixed type, the type whose physiology the site's single fungal pool
// models.
type FungalPhysiology struct {
	Type string `yaml:"type" json:"type"`
	// Models names the type whose transfer effect a "mixed" site uses.
	Models        string    `yaml:"models" json:"models,omitempty"`
	EpsilonPermil float64   `yaml:"epsilon" json:"epsilon"`
	RangePermil   []float64 `yaml:"range" json:"range,omitempty"`
	Distribution  string    `yaml:"distribution" json:"distribution,omitempty"`
	Note          string    `yaml:"note" json:"note,omitempty"`
	Refs          []string  `yaml:"refs" json:"refs,omitempty"`
	Status        string    `yaml:"status" json:"status,omitempty"`
	Line          int       `yaml:"-" json:"-"`
}

// Distribution names for an uncertain value drawn within its range.
const (
	DistTriangular = "triangular" // mode at the typical value
	DistUniform    = "uniform"
	DistFixed      = "fixed" // the typical value, no spread
)

// Effect is the isotope effect of one process, in ‰ (positive: product
// depleted), with the range and distribution used for uncertainty.
type Effect struct {
	ID    string `yaml:"id" json:"id,omitempty"`
	Label string `yaml:"label" json:"label,omitempty"`
	// EpsilonPermil is the typical ε used as the model default.
	EpsilonPermil float64 `yaml:"epsilon" json:"epsilon"`
	// RangePermil is [low, high] of ε for uncertainty draws.
	RangePermil  []float64 `yaml:"range" json:"range,omitempty"`
	Distribution string    `yaml:"distribution" json:"distribution,omitempty"`
	// Expressed is "intrinsic" (enzyme or culture) or "ecosystem" (as
	// expressed in soils, where substrate pools are consumed).
	Expressed string `yaml:"expressed" json:"expressed,omitempty"`
	// D18ORatio is ε18/ε15 for nitrate-consuming processes (nil otherwise),
	// with its range.
	D18ORatio      *float64  `yaml:"d18o_ratio" json:"d18o_ratio,omitempty"`
	D18ORatioRange []float64 `yaml:"d18o_ratio_range" json:"d18o_ratio_range,omitempty"`
	Note           string    `yaml:"note" json:"note,omitempty"`
	Refs           []string  `yaml:"refs" json:"refs,omitempty"`
	Status         string    `yaml:"status" json:"status,omitempty"`
	Line           int       `yaml:"-" json:"-"`
}

// NitrateOxygen holds the default δ18O (‰ VSMOW) of nitrate oxygen made by
// nitrification and its range.
type NitrateOxygen struct {
	NitrificationD18OPermil float64   `yaml:"nitrification_d18o" json:"nitrification_d18o"`
	RangePermil             []float64 `yaml:"range" json:"range,omitempty"`
	Note                    string    `yaml:"note" json:"note,omitempty"`
	Refs                    []string  `yaml:"refs" json:"refs,omitempty"`
	Status                  string    `yaml:"status" json:"status,omitempty"`
	Line                    int       `yaml:"-" json:"-"`
}

type effectsFile struct {
	NitrateOxygen    NitrateOxygen      `yaml:"nitrate_oxygen" json:"nitrate_oxygen,omitempty"`
	MycorrhizalTypes []FungalPhysiology `yaml:"mycorrhizal_types" json:"mycorrhizal_types,omitempty"`
	Effects          []Effect           `yaml:"effects" json:"effects,omitempty"`
}

func (b *Base) loadEffects(fsys fs.FS) error {
	var f effectsFile
	doc, err := readDoc(fsys, "effects.yaml", &f)
	if err != nil {
		return err
	}
	var errs input.Errors
	b.effectByID = map[string]int{}
	for i := range f.Effects {
		e := &f.Effects[i]
		e.Line = doc.Line("effects", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.ErrorAt([]any{"effects", i, key}, format, args...))
		}
		if !slices.Contains(Processes, e.ID) {
			at("id", "unknown process %q", e.ID)
		}
		if _, dup := b.effectByID[e.ID]; dup {
			at("id", "process %q listed twice", e.ID)
		}
		b.effectByID[e.ID] = i
		if e.Label == "" {
			at("label", "missing")
		}
		if msg := checkRange(e.RangePermil, e.EpsilonPermil); msg != "" {
			at("range", "%s", msg)
		}
		if !slices.Contains([]string{DistTriangular, DistUniform, DistFixed}, e.Distribution) {
			at("distribution", "expected triangular, uniform or fixed, got %q", e.Distribution)
		}
		if e.Expressed != "intrinsic" && e.Expressed != "ecosystem" {
			at("expressed", "expected intrinsic or ecosystem, got %q", e.Expressed)
		}
		if e.D18ORatio != nil {
			if msg := checkRange(e.D18ORatioRange, *e.D18ORatio); msg != "" {
				at("d18o_ratio_range", "%s", msg)
			}
		}
		if len(e.Refs) == 0 && e.Status != CommonPractice {
			at("refs", "a fact needs references unless its status is %q", CommonPractice)
		}
		if !checkStatus(e.Status) {
			at("status", "expected confirmed, from memory or common practice, got %q", e.Status)
		}
	}
	for _, p := range Processes {
		if _, ok := b.effectByID[p]; !ok {
			errs = append(errs, &input.Error{File: doc.File, Field: "effects", Msg: fmt.Sprintf("process %q has no isotope effect", p)})
		}
	}
	for _, p := range []string{"denitrification", "uptake-nitrate", "immobilization-nitrate", "leaching-nitrate"} {
		if i, ok := b.effectByID[p]; ok && f.Effects[i].D18ORatio == nil {
			errs = append(errs, doc.Errorf(fmt.Sprintf("effects[%d].d18o_ratio", i), []any{"effects", i}, "a nitrate-consuming process needs its δ18O:δ15N ratio"))
		}
	}
	no := &f.NitrateOxygen
	no.Line = doc.Line("nitrate_oxygen")
	if msg := checkRange(no.RangePermil, no.NitrificationD18OPermil); msg != "" {
		errs = append(errs, doc.Errorf("nitrate_oxygen.range", []any{"nitrate_oxygen", "range"}, "%s", msg))
	}
	if !checkStatus(no.Status) {
		errs = append(errs, doc.Errorf("nitrate_oxygen.status", []any{"nitrate_oxygen", "status"}, "unknown status %q", no.Status))
	}
	b.Effects = f.Effects
	b.NitrateOxygen = *no
	errs = append(errs, b.loadFungalPhysiology(doc, f.MycorrhizalTypes)...)
	return errs.Err()
}

// loadFungalPhysiology validates the mycorrhizal_types section: one entry
// for each type with fungi (ecto, ericoid, arbuscular) with an ε and its
// range, and an entry for mixed that names the type it models.
func (b *Base) loadFungalPhysiology(doc *input.Doc, list []FungalPhysiology) input.Errors {
	var errs input.Errors
	b.fungal = map[string]FungalPhysiology{}
	for i := range list {
		fp := &list[i]
		fp.Line = doc.Line("mycorrhizal_types", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.ErrorAt([]any{"mycorrhizal_types", i, key}, format, args...))
		}
		switch {
		case !slices.Contains(MycorrhizalTypes, fp.Type) || fp.Type == "none":
			at("type", "expected ecto, ericoid, arbuscular or mixed, got %q", fp.Type)
			continue
		case fp.Type == "mixed":
			if fp.Models == "" || fp.Models == "mixed" || !slices.Contains(MycorrhizalTypes, fp.Models) || fp.Models == "none" {
				at("models", "a mixed type names the type its fungal pool models (ecto, ericoid or arbuscular), got %q", fp.Models)
			}
		default:
			if fp.Models != "" {
				at("models", "only the mixed type names a type it models")
			}
			if msg := checkRange(fp.RangePermil, fp.EpsilonPermil); msg != "" {
				at("range", "%s", msg)
			}
			if !slices.Contains([]string{DistTriangular, DistUniform, DistFixed}, fp.Distribution) {
				at("distribution", "expected triangular, uniform or fixed, got %q", fp.Distribution)
			}
			if len(fp.Refs) == 0 {
				at("refs", "a fungal transfer effect needs references")
			}
		}
		if !checkStatus(fp.Status) {
			at("status", "expected confirmed, from memory or common practice, got %q", fp.Status)
		}
		if _, dup := b.fungal[fp.Type]; dup {
			at("type", "type %q listed twice", fp.Type)
		}
		b.fungal[fp.Type] = *fp
	}
	for _, t := range MycorrhizalTypes {
		if _, ok := b.fungal[t]; !ok && t != "none" {
			errs = append(errs, &input.Error{File: doc.File, Field: "mycorrhizal_types", Msg: fmt.Sprintf("mycorrhizal type %q has no fungal transfer effect", t)})
		}
	}
	if len(errs) == 0 {
		b.MycorrhizalTypes = list
	}
	return errs
}

// FungalPhysiology returns the fungal transfer effect of a mycorrhizal
// type; a mixed type resolves to the type it models, with Type still
// "mixed" and Models set. It reports false for "none" and unknown types.
func (b *Base) FungalPhysiology(mycorrhizalType string) (FungalPhysiology, bool) {
	fp, ok := b.fungal[mycorrhizalType]
	if !ok {
		return FungalPhysiology{}, false
	}
	if fp.Models != "" {
		m, ok := b.fungal[fp.Models]
		if !ok {
			return FungalPhysiology{}, false
		}
		m.Type, m.Models = fp.Type, fp.Models
		m.Note = strings.TrimSpace(fp.Note + " " + m.Note)
		return m, true
	}
	return fp, true
}

// MycorrhizalEffect returns the isotope effect of mycorrhizal-transfer for
// a site of the given mycorrhizal type: the knowledge entry of the process
// with ε, range, distribution, references and status taken from the type's
// fungal physiology. For "none", an unknown or an empty type it returns the
// process's own entry.
func (b *Base) MycorrhizalEffect(mycorrhizalType string) Effect {
	e, _ := b.Effect("mycorrhizal-transfer")
	fp, ok := b.FungalPhysiology(mycorrhizalType)
	if !ok {
		return e
	}
	e.EpsilonPermil = fp.EpsilonPermil
	e.RangePermil = fp.RangePermil
	e.Distribution = fp.Distribution
	e.Note = fp.Note
	e.Refs = fp.Refs
	e.Status = fp.Status
	e.Label = fmt.Sprintf("%s (%s)", e.Label, fp.Type)
	if fp.Models != "" {
		e.Label = fmt.Sprintf("%s, modelled as %s", e.Label, fp.Models)
	}
	return e
}
