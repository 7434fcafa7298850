package report

import (
	"encoding/json"
	"io"
	"math"
	"strconv"

	"nlens/knowledge"
	"nlens/rank"
)

// This file holds the JSON contract of `nlens explain` (DESIGN §7) and the
// one encoder every JSON output of the package goes through.

// ExplainJSON is the JSON contract of `nlens explain` (DESIGN §7).
type ExplainJSON struct {
	Version string `json:"version"`
	Seed    uint64 `json:"seed"`
	// NoFit states, before any ranking, each comparison or series where no
	// candidate fits (empty when every one has a fitting explanation).
	NoFit []string `json:"no_fit"`
	// Cautions every report states.
	Cautions    []string         `json:"cautions"`
	Comparisons []ComparisonJSON `json:"comparisons"`
	// Series holds the joint ranking of each series (DESIGN §6).
	Series []SeriesJSON `json:"series"`
}

// SeriesJSON is the joint explanation of one series; its hypotheses'
// predicted values are keyed "comparison/observable".
type SeriesJSON struct {
	Name string `json:"name"`
	// NoCandidateFits is set when the best joint explanation fails its fit
	// check; the ranking below is then not evidence for any candidate.
	NoCandidateFits bool              `json:"no_candidate_fits"`
	Kind            string            `json:"kind"`
	Comparisons     []string          `json:"comparisons"`
	Hypotheses      []HypothesisJSON  `json:"hypotheses"`
	Measurements    []MeasurementJSON `json:"measurements"`
	// MeasurementsAt is the member comparison the measurements were
	// scored at: where the best one tells most.
	MeasurementsAt string   `json:"measurements_at"`
	Warnings       []string `json:"warnings"`
}

// ComparisonJSON is one comparison's result.
type ComparisonJSON struct {
	Name string `json:"name"`
	// NoCandidateFits is set when the best explanation fails its fit
	// check; the ranking below is then not evidence for any candidate.
	NoCandidateFits bool                 `json:"no_candidate_fits"`
	Years           *float64             `json:"years"`
	Series          *string              `json:"series"`
	Draws           int                  `json:"draws"`
	DrawsAlone      int                  `json:"treatment_alone_draws"`
	Observed        map[string]ShiftJSON `json:"observed"`
	Treatment       TreatmentJSON        `json:"treatment"`
	Hypotheses      []HypothesisJSON     `json:"hypotheses"`
	Measurements    []MeasurementJSON    `json:"measurements"`
	// RuledOut lists undeclared sources the site context rules out.
	RuledOut []string `json:"ruled_out_sources"`
	// FittedSite is the site model fitted to the control (null when not
	// fitted: --no-site-fit, shifts from a paper, nothing to fit).
	FittedSite *FittedSite `json:"fitted_site"`
	Warnings   []string    `json:"warnings"`
}

// TreatmentJSON is what was applied to the treatment arm in every
// hypothesis, at typical sizes (the draws vary them within their ranges).
type TreatmentJSON struct {
	Additions  []AdditionJSON   `json:"additions"`
	Management []ManagementJSON `json:"management"`
	Severity   *string          `json:"severity"`
	// Context lists the declared management tags that only set priors.
	Context []string `json:"context_management"`
}

// AdditionJSON is one declared addition.
type AdditionJSON struct {
	Source        string   `json:"source"`
	Rate          float64  `json:"rate_kg_ha_yr"`
	D15N          float64  `json:"d15n"`
	D15NMeasured  bool     `json:"d15n_measured"`
	DurationYears *float64 `json:"duration_years"`
}

// ManagementJSON is one management forcing with what it does.
type ManagementJSON struct {
	Tag     string   `json:"tag"`
	Label   string   `json:"label"`
	Actions []string `json:"actions"`
}

// ShiftJSON is an observed shift and its standard error.
type ShiftJSON struct {
	Shift float64 `json:"shift"`
	SE    float64 `json:"se"`
}

// HypothesisJSON is one ranked explanation.
type HypothesisJSON struct {
	ID        string  `json:"id"`
	Label     string  `json:"label"`
	Direction *string `json:"direction"`
	Posterior float64 `json:"posterior"`
	// PosteriorMCSE is the Monte Carlo standard error of the posterior.
	PosteriorMCSE float64 `json:"posterior_mcse"`
	// Duration is a pulse's length in years (null when sustained).
	Duration *DurationJSON `json:"duration"`
	// Magnitude is the first (for a single, the only) magnitude.
	Magnitude *MagnitudeJSON `json:"magnitude"`
	// Magnitudes lists every magnitude, in the order of the parts of id
	// and label.
	Magnitudes []MagnitudeJSON        `json:"magnitudes"`
	Predicted  map[string]MomentsJSON `json:"predicted"`
	Fit        FitJSON                `json:"fit"`
}

// DurationJSON is a pulse's length: posterior median and 90 % interval.
type DurationJSON struct {
	Best    float64 `json:"best"`
	Low     float64 `json:"low"`
	High    float64 `json:"high"`
	Unit    string  `json:"unit"`
	AtBound *string `json:"at_bound"`
}

// MagnitudeJSON is a magnitude's posterior median with its 90 % interval
// and what it means as a flux (DESIGN §7).
type MagnitudeJSON struct {
	Candidate    string   `json:"candidate"`
	Kind         string   `json:"kind"`
	Baseline     float64  `json:"baseline"`
	Best         float64  `json:"best"`
	Low          float64  `json:"low"`
	High         float64  `json:"high"`
	Unit         string   `json:"unit"`
	Of           string   `json:"of,omitempty"`
	AtBound      *string  `json:"at_bound"`
	FluxBaseline *float64 `json:"flux_baseline"`
	Flux         *float64 `json:"flux"`
	FluxRatio    *float64 `json:"flux_ratio"`
	// Modes holds the two modes of a two-mode posterior (null otherwise).
	Modes []ModeJSON `json:"modes"`
}

// ModeJSON is one mode of a two-mode posterior.
type ModeJSON struct {
	Best float64 `json:"best"`
	Low  float64 `json:"low"`
	High float64 `json:"high"`
	Mass float64 `json:"mass"`
}

// MomentsJSON is a mean and sd.
type MomentsJSON struct {
	Mean float64 `json:"mean"`
	SD   float64 `json:"sd"`
}

// FitJSON is the posterior-predictive check.
type FitJSON struct {
	Chi2 float64 `json:"chi2"`
	DOF  int     `json:"dof"`
	P    float64 `json:"p"`
}

// MeasurementJSON is one recommended measurement.
type MeasurementJSON struct {
	ID        string                 `json:"id"`
	Label     string                 `json:"label"`
	Bits      float64                `json:"bits"`
	Cost      string                 `json:"cost"`
	Method    string                 `json:"method"`
	Predicted map[string]MomentsJSON `json:"predicted"`
}

// round6 keeps JSON compact and stable: 6 significant digits, and a
// non-finite number (never expected) becomes 0 rather than breaking JSON.
func round6(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0
	}
	if v == 0 {
		return 0
	}
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 6, 64), 64)
	return f
}

// ToJSON converts a result to the JSON contract.
func ToJSON(r *rank.Result) ExplainJSON {
	out := ExplainJSON{Version: r.Version, Seed: r.Seed, NoFit: append([]string{}, noFitStatements(r)...), Cautions: shortCautions, Comparisons: []ComparisonJSON{}, Series: []SeriesJSON{}}
	for _, c := range r.Comparisons {
		cj := ComparisonJSON{Name: c.Name, NoCandidateFits: c.NoFit, Observed: map[string]ShiftJSON{}, Hypotheses: []HypothesisJSON{}, Warnings: append([]string{}, c.Warnings...)}
		for _, o := range c.Observed {
			cj.Observed[o.Observable] = ShiftJSON{round6(o.Shift), round6(o.SE)}
		}
		cj.Treatment = treatmentJSON(c.Treatment)
		cj.Years, cj.Series, cj.Draws, cj.DrawsAlone = c.Years, nullable(c.Series), c.Draws, c.TreatmentAloneDraws
		cj.RuledOut = append([]string{}, c.RuledOut...)
		for _, h := range c.Hypotheses {
			cj.Hypotheses = append(cj.Hypotheses, hypothesisJSON(h))
		}
		if c.FittedSite != nil {
			f := FittedSiteJSON(c.FittedSite)
			cj.FittedSite = &f
		}
		cj.Measurements = measurementsJSON(c.Measurements)
		out.Comparisons = append(out.Comparisons, cj)
	}
	for _, sr := range r.Series {
		sj := SeriesJSON{Name: sr.Name, NoCandidateFits: sr.NoFit, Kind: sr.Kind, Comparisons: sr.Comparisons, Hypotheses: []HypothesisJSON{}, Measurements: measurementsJSON(sr.Measurements), MeasurementsAt: sr.MeasurementsAt, Warnings: append([]string{}, sr.Warnings...)}
		for _, h := range sr.Hypotheses {
			sj.Hypotheses = append(sj.Hypotheses, hypothesisJSON(h))
		}
		out.Series = append(out.Series, sj)
	}
	return out
}

// hypothesisJSON converts one hypothesis; for a pair, id, label and
// magnitudes list the parts in one order.
func hypothesisJSON(h rank.Hypothesis) HypothesisJSON {
	hj := HypothesisJSON{ID: h.ID, Label: h.Label, Direction: nullable(h.Direction), Posterior: round6(h.Posterior), PosteriorMCSE: round6(h.PosteriorMCSE), Predicted: map[string]MomentsJSON{},
		Magnitudes: []MagnitudeJSON{}, Fit: FitJSON{round6(h.Fit.Chi2), h.Fit.DOF, round6(h.Fit.P)}}
	for _, m := range h.Magnitudes {
		hj.Magnitudes = append(hj.Magnitudes, magnitudeJSON(m))
	}
	if len(hj.Magnitudes) > 0 {
		hj.Magnitude = &hj.Magnitudes[0]
	}
	if d := h.Duration; d != nil {
		hj.Duration = &DurationJSON{Best: round6(d.Best), Low: round6(d.Low), High: round6(d.High), Unit: "years", AtBound: nullable(d.AtBound)}
	}
	for k, m := range h.Predicted {
		hj.Predicted[k] = MomentsJSON{round6(m.Mean), round6(m.SD)}
	}
	return hj
}

// measurementsJSON converts the recommended measurements.
func measurementsJSON(ms []rank.Measurement) []MeasurementJSON {
	out := []MeasurementJSON{}
	for _, m := range ms {
		mj := MeasurementJSON{ID: m.ID, Label: m.Label, Bits: round6(m.Bits), Cost: knowledge.CostLabel(m.Cost), Method: m.Method, Predicted: map[string]MomentsJSON{}}
		for k, p := range m.Predicted {
			mj.Predicted[k] = MomentsJSON{round6(p.Mean), round6(p.SD)}
		}
		out = append(out, mj)
	}
	return out
}

// nullable is nil for "" (JSON null).
func nullable(s string) *string {
	if s == "" {
		return nil
	}
	return &s
}

func ptr6(v float64) *float64 {
	r := round6(v)
	return &r
}

func magnitudeJSON(m rank.Magnitude) MagnitudeJSON {
	mj := MagnitudeJSON{Candidate: m.Candidate, Kind: m.Kind, Baseline: round6(m.Baseline), Best: round6(m.Best), Low: round6(m.Low), High: round6(m.High),
		Unit: m.Unit, Of: m.Of, AtBound: nullable(m.AtBound)}
	for _, md := range m.Modes {
		mj.Modes = append(mj.Modes, ModeJSON{round6(md.Best), round6(md.Low), round6(md.High), round6(md.Mass)})
	}
	if f := m.Flux; f != nil {
		mj.FluxBaseline, mj.Flux = ptr6(f.Baseline), ptr6(f.Median)
		if f.HasRatio {
			mj.FluxRatio = ptr6(f.Ratio)
		}
	}
	return mj
}

func treatmentJSON(t rank.Treatment) TreatmentJSON {
	out := TreatmentJSON{Additions: []AdditionJSON{}, Management: []ManagementJSON{}, Severity: nullable(t.Severity), Context: append([]string{}, t.Context...)}
	for _, a := range t.Additions {
		aj := AdditionJSON{Source: a.Source, Rate: round6(a.RateKgPerHaYr), D15N: round6(a.D15N), D15NMeasured: a.Measured}
		if a.DurationYears > 0 {
			aj.DurationYears = ptr6(a.DurationYears)
		}
		out.Additions = append(out.Additions, aj)
	}
	for _, m := range t.Management {
		out.Management = append(out.Management, ManagementJSON{Tag: m.Tag, Label: m.Label, Actions: m.Actions})
	}
	return out
}

// JSON writes the result as indented JSON.
func JSON(w io.Writer, r *rank.Result) error {
	return writeJSON(w, ToJSON(r))
}

// writeJSON is the one way nlens writes JSON: indented by two spaces and
// without HTML escaping, so "&", "<" and ">" in labels and references come
// through literally (JSON is not embedded in HTML anywhere).
func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}
