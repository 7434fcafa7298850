package report

import (
	"io"
	"sort"

	"nlens/rank/study"
)

func when(years *float64) string {
	if years == nil {
		return "long-standing contrast (compared at steady state)"
	}
	return count(*years, sigG(*years, 4), "year", "years") + " after the treatment began"
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
		if o.NoLevels() {
			ctl, trt = "—", "—" // a shift from a paper: no group levels
		}
		rows = append(rows, []string{o.Observable, ctl, trt, shift, se, unit, shiftStrength(o.Shift, o.SE).short()})
	}
	if err := table(w, []string{"observable", "control", "treatment", "shift", "SE", "unit", "reading"}, "lrrrrll", rows); err != nil {
		return err
	}
	_, err := io.WriteString(w, "(reading: clear at |shift| ≥ 3 SE, detectable at 2–3 SE, noise below 2 SE)\n")
	return err
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
