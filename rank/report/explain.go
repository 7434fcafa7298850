package report

import (
	"fmt"
	"io"
	"slices"
	"sort"
	"strings"

	"nlens/rank/study"
)

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
	if st.Samples != nil {
		ew.printf("%s\n", wrap("samples: "+st.Samples.String(), 78))
	}
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
			ew.printf("%s\n", wrap(fmt.Sprintf("declared addition: %s %s kg N/ha/yr (%s)", a.Source, num(a.RateKgPerHaYr), d), 78))
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
