package knowledge

import (
	"fmt"
	"io/fs"
	"slices"
)

// Processes lists the process names of DESIGN §3 in a fixed order: a site
// transfer's process and the id of its isotope effect.
var Processes = []string{
	"mineralization", "immobilization-ammonium", "immobilization-nitrate",
	"nitrification", "nitrifier-gas", "denitrification", "volatilization",
	"uptake-ammonium", "uptake-nitrate", "mycorrhizal-uptake",
	"mycorrhizal-transfer", "fungal-turnover", "allocation", "retranslocation",
	"litterfall", "leaching-nitrate", "leaching-organic", "harvest", "erosion",
	"grazing-urine", "grazing-dung", "grazing-export",
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
	NitrateOxygen NitrateOxygen `yaml:"nitrate_oxygen" json:"nitrate_oxygen,omitempty"`
	Effects       []Effect      `yaml:"effects" json:"effects,omitempty"`
}

func (b *Base) loadEffects(fsys fs.FS) error {
	var f effectsFile
	doc, err := readDoc(fsys, "effects.yaml", &f)
	if err != nil {
		return err
	}
	var errs InputErrors
	b.effectByID = map[string]int{}
	for i := range f.Effects {
		e := &f.Effects[i]
		e.Line = doc.Line("effects", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.Errorf(fmt.Sprintf("effects[%d].%s", i, key), []any{"effects", i, key}, format, args...))
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
			errs = append(errs, &InputError{File: doc.File, Field: "effects", Msg: fmt.Sprintf("process %q has no isotope effect", p)})
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
	return errs.Err()
}
