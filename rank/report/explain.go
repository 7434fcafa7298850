package report

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"nlens/rank"
	"nlens/rank/study"
)

// ExplainJSON is the JSON contract of `nlens explain` (DESIGN §7).
type ExplainJSON struct {
	Version     string           `json:"version"`
	Seed        uint64           `json:"seed"`
	Comparisons []ComparisonJSON `json:"comparisons"`
}

// ComparisonJSON is one comparison's result.
type ComparisonJSON struct {
	Name         string               `json:"name"`
	Observed     map[string]ShiftJSON `json:"observed"`
	Hypotheses   []HypothesisJSON     `json:"hypotheses"`
	Measurements []MeasurementJSON    `json:"measurements"`
	Warnings     []string             `json:"warnings"`
}

// ShiftJSON is an observed shift and its standard error.
type ShiftJSON struct {
	Shift float64 `json:"shift"`
	SE    float64 `json:"se"`
}

// HypothesisJSON is one ranked explanation.
type HypothesisJSON struct {
	ID        string         `json:"id"`
	Label     string         `json:"label"`
	Posterior float64        `json:"posterior"`
	Magnitude *MagnitudeJSON `json:"magnitude"`
	// Magnitudes lists both magnitudes of a pair (the first is also in
	// Magnitude).
	Magnitudes []MagnitudeJSON        `json:"magnitudes,omitempty"`
	Predicted  map[string]MomentsJSON `json:"predicted"`
	Fit        FitJSON                `json:"fit"`
}

// MagnitudeJSON is a best magnitude with its 90 % interval.
type MagnitudeJSON struct {
	Best float64 `json:"best"`
	Low  float64 `json:"low"`
	High float64 `json:"high"`
	Unit string  `json:"unit"`
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
	out := ExplainJSON{Version: r.Version, Seed: r.Seed, Comparisons: []ComparisonJSON{}}
	for _, c := range r.Comparisons {
		cj := ComparisonJSON{Name: c.Name, Observed: map[string]ShiftJSON{}, Hypotheses: []HypothesisJSON{}, Measurements: []MeasurementJSON{}, Warnings: append([]string{}, c.Warnings...)}
		for _, o := range c.Observed {
			cj.Observed[o.Observable] = ShiftJSON{round6(o.Shift), round6(o.SE)}
		}
		for _, h := range c.Hypotheses {
			hj := HypothesisJSON{ID: h.ID, Label: h.Label, Posterior: round6(h.Posterior), Predicted: map[string]MomentsJSON{},
				Fit: FitJSON{round6(h.Fit.Chi2), h.Fit.DOF, round6(h.Fit.P)}}
			for _, m := range h.Magnitudes {
				mj := MagnitudeJSON{round6(m.Best), round6(m.Low), round6(m.High), m.Unit}
				if hj.Magnitude == nil {
					hj.Magnitude = &mj
				}
				if h.Pair {
					hj.Magnitudes = append(hj.Magnitudes, mj)
				}
			}
			for k, m := range h.Predicted {
				hj.Predicted[k] = MomentsJSON{round6(m.Mean), round6(m.SD)}
			}
			cj.Hypotheses = append(cj.Hypotheses, hj)
		}
		for _, m := range c.Measurements {
			mj := MeasurementJSON{ID: m.ID, Label: m.Label, Bits: round6(m.Bits), Cost: costName(m.Cost), Method: m.Method, Predicted: map[string]MomentsJSON{}}
			for k, p := range m.Predicted {
				mj.Predicted[k] = MomentsJSON{round6(p.Mean), round6(p.SD)}
			}
			cj.Measurements = append(cj.Measurements, mj)
		}
		out.Comparisons = append(out.Comparisons, cj)
	}
	return out
}

func costName(tier int) string {
	return map[int]string{1: "low", 2: "moderate", 3: "high"}[tier]
}

// JSON writes the result as indented JSON.
func JSON(w io.Writer, r *rank.Result) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(ToJSON(r))
}

// Observed writes a study's observed shifts as a table (nlens check).
func Observed(w io.Writer, st *study.Study) error {
	ew := &errWriter{w: w}
	title := st.Title
	if title == "" {
		title = st.File
	}
	site := st.SiteRef
	if st.SiteRef != st.Site.ID {
		site = fmt.Sprintf("%s (site %s)", st.SiteRef, st.Site.ID)
	}
	ew.printf("%s\nsite model: %s\n", title, site)
	for _, c := range st.Comparisons {
		ew.printf("\n%s\n\n", wrap(fmt.Sprintf("%s (treatment %q, control %q), %s", c.Name, c.Treatment, c.Control, when(c.Years)), 78))
		if err := observedTable(ew, c.Observed); err != nil {
			return err
		}
		for _, a := range c.Additions {
			d := "δ15N from the source's range"
			if a.D15N != nil {
				d = fmt.Sprintf("δ15N %s ‰ measured", signed(*a.D15N, 1))
			}
			ew.printf("declared addition: %s %s kg N/ha/yr (%s)\n", a.Source, num(a.RateKgPerHaYr), d)
		}
		if len(c.Management) > 0 {
			ew.printf("management: %s\n", strings.Join(c.Management, ", "))
		}
	}
	for _, wmsg := range append(slices.Clone(st.Site.Warnings), st.Warnings...) {
		ew.printf("%s\n", wrap("warning: "+wmsg, 78))
	}
	return ew.err
}

func when(years *float64) string {
	if years == nil {
		return "long-standing contrast (compared at steady state)"
	}
	return fmt.Sprintf("%s years after the treatment began", strconv.FormatFloat(*years, 'g', 4, 64))
}

func observedTable(w io.Writer, obs []study.Observed) error {
	var rows [][]string
	for _, o := range obs {
		unit := "‰"
		shift, se := plusSigned(o.Shift, 2), signed(o.SE, 2)
		ctl, trt := signed(o.Control.Mean, 2), signed(o.Treatment.Mean, 2)
		if o.LogRatio {
			unit = "ln ratio"
			shift, se = plusSigned(o.Shift, 3), signed(o.SE, 3)
			ctl, trt = num(o.Control.Mean), num(o.Treatment.Mean)
		}
		rows = append(rows, []string{o.Observable, ctl, trt, shift, se, unit})
	}
	return table(w, []string{"observable", "control", "treatment", "shift", "SE", "unit"}, "lrrrrl", rows)
}

// sortedKeys returns a map's keys in order.
func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
