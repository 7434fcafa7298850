package knowledge

import (
	"io/fs"
	"nlens/knowledge/input"
	"slices"
	"strings"
)

// Units of a measurement.
const (
	UnitPermil   = "permil"    // a δ value, ‰
	UnitLogRatio = "log-ratio" // a pool size or flux, compared as ln(treatment/control)
)

// Measurement is one assay of the catalogue: what it observes and how noisy
// and costly it is. SDs are in the measurement's unit: ‰ for δ values, and
// on the natural-log scale (about a relative sd) for pools and fluxes.
type Measurement struct {
	ID         string `yaml:"id" json:"id,omitempty"`
	Label      string `yaml:"label" json:"label,omitempty"`
	Observable string `yaml:"observable" json:"observable,omitempty"`
	Unit       string `yaml:"unit" json:"unit,omitempty"`
	// AnalyticalSD is the instrument and preparation repeatability.
	AnalyticalSD float64 `yaml:"analytical_sd" json:"analytical_sd"`
	// FieldSD is the typical spread between replicate plots of one treatment.
	FieldSD float64 `yaml:"field_sd" json:"field_sd"`
	Cost    int     `yaml:"cost" json:"cost"` // 1 low, 2 moderate, 3 high
	Method  string  `yaml:"method" json:"method,omitempty"`
	// MycorrhizalTypes, when given, limits the measurement to sites whose
	// mycorrhizal_type is one of them (sporocarps exist only where the
	// fungi fruit above ground).
	MycorrhizalTypes []string `yaml:"mycorrhizal_types" json:"mycorrhizal_types,omitempty"`
	Note             string   `yaml:"note" json:"note,omitempty"`
	Refs             []string `yaml:"refs" json:"refs,omitempty"`
	Status           string   `yaml:"status" json:"status,omitempty"`
	Line             int      `yaml:"-" json:"-"`
}

// CostLabel names a cost tier.
func CostLabel(tier int) string {
	switch tier {
	case 1:
		return "low"
	case 2:
		return "moderate"
	case 3:
		return "high"
	}
	return "unknown"
}

type measurementsFile struct {
	Measurements []Measurement `yaml:"measurements" json:"measurements,omitempty"`
}

func (b *Base) loadMeasurements(fsys fs.FS) error {
	var f measurementsFile
	doc, err := readDoc(fsys, "measurements.yaml", &f)
	if err != nil {
		return err
	}
	var errs input.Errors
	b.measByID = map[string]int{}
	for i := range f.Measurements {
		m := &f.Measurements[i]
		m.Line = doc.Line("measurements", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.ErrorAt([]any{"measurements", i, key}, format, args...))
		}
		if m.ID == "" {
			at("id", "missing")
		}
		if _, dup := b.measByID[m.ID]; dup {
			at("id", "measurement %q listed twice", m.ID)
		}
		b.measByID[m.ID] = i
		if m.Label == "" {
			at("label", "missing")
		}
		if m.Observable == "" {
			at("observable", "missing")
		}
		if m.Unit != UnitPermil && m.Unit != UnitLogRatio {
			at("unit", "expected %s or %s, got %q", UnitPermil, UnitLogRatio, m.Unit)
		}
		if m.AnalyticalSD <= 0 {
			at("analytical_sd", "must be positive, got %g", m.AnalyticalSD)
		}
		if m.FieldSD < 0 {
			at("field_sd", "must not be negative, got %g", m.FieldSD)
		}
		if m.Cost < 1 || m.Cost > 3 {
			at("cost", "expected a tier 1 (low), 2 (moderate) or 3 (high), got %d", m.Cost)
		}
		if m.Method == "" {
			at("method", "missing")
		}
		if !checkStatus(m.Status) {
			at("status", "unknown status %q", m.Status)
		}
		for _, t := range m.MycorrhizalTypes {
			if !slices.Contains(MycorrhizalTypes, t) {
				at("mycorrhizal_types", "unknown mycorrhizal type %q (types: %s)", t, strings.Join(MycorrhizalTypes, ", "))
			}
		}
	}
	b.Measurements = f.Measurements
	return errs.Err()
}
