package report

import (
	"fmt"
	"io"
	"slices"
	"strings"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/study"
)

// Observed writes what `nlens check` shows of a study: each comparison's
// observed shifts and the treatment applied to its treatment arm in every
// hypothesis (DESIGN §4), with the forcing sizes at their typical values
// and the ranges the draws cover.
func Observed(w io.Writer, st *study.Study, kb *knowledge.Base) error {
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
		head := c.Name
		if c.ShiftsOnly {
			head += ", shifts as given (no group levels: no site fit to the control)"
		} else {
			head += fmt.Sprintf(" (treatment group %q vs control %q)", c.Treatment, c.Control)
		}
		head += ", " + when(c.Years)
		if c.Series != "" {
			head += fmt.Sprintf("; part of series %q, explained jointly", c.Series)
		}
		ew.printf("\n%s\n\n", wrap(head, 78))
		if err := observedTable(ew, c.Observed); err != nil {
			return err
		}
		for _, line := range appliedTreatment(st, &c, kb) {
			if rest, ok := strings.CutPrefix(line, "  - "); ok {
				ew.printf("  - %s\n", strings.ReplaceAll(wrap(rest, 74), "\n", "\n    "))
				continue
			}
			ew.printf("%s\n", wrap(line, 78))
		}
	}
	for _, wmsg := range append(slices.Clone(st.Site.Warnings), st.Warnings...) {
		ew.printf("%s\n", wrap("warning: "+wmsg, 78))
	}
	return ew.err
}

// appliedTreatment lists what the declared treatment does to the model in
// every hypothesis: additions as inputs, and each management tag's moves
// and rate changes (or that it is context only).
func appliedTreatment(st *study.Study, c *study.Comparison, kb *knowledge.Base) []string {
	var out []string
	for _, a := range c.Additions {
		d := "δ15N drawn from the source's range"
		if a.D15N != nil {
			d = fmt.Sprintf("δ15N %s ‰ as measured", signed(*a.D15N, 1))
		}
		label := a.Source
		if src, ok := kb.Source(a.Source); ok {
			label = src.Label
			var pools []string
			for _, p := range src.Parts {
				pools = append(pools, fmt.Sprintf("%s %s", percent(p.Share), p.Pool))
			}
			if len(src.Parts) > 1 {
				d += "; enters as " + strings.Join(pools, " and ")
			}
		}
		out = append(out, fmt.Sprintf("applied in every hypothesis: addition of %s, %s kg N/ha/yr (%s)", label, sigG(a.RateKgPerHaYr, 4), d))
	}
	for _, tag := range c.Management {
		m, ok := kb.Management(tag)
		if !ok {
			out = append(out, fmt.Sprintf("management %q: context for the priors only (no forcing)", tag))
			continue
		}
		moves, rates, _ := m.Effect(c.Severity)
		label := m.Label
		switch {
		case len(m.Severity) == 0:
		case c.Severity != "":
			label += ", " + c.Severity + " severity"
		default:
			label += ", " + rank.SeverityNotGiven
		}
		out = append(out, fmt.Sprintf("applied in every hypothesis: %s (%s)", label, tag))
		for _, mv := range moves {
			to, ok := forward.MoveTarget(st.Site, mv)
			if !ok {
				out = append(out, fmt.Sprintf("  - %s: not applied, the site has no %s pool", mv.Label, mv.From))
				continue
			}
			line := fmt.Sprintf("  - %s: %s of the %s pool (%s) at the start", mv.Label, percent(mv.Share.Typical), mv.From, percentRange(mv.Share.Range))
			if to != "out" {
				line += ", moved to " + to
			}
			out = append(out, line)
		}
		for _, r := range rates {
			line := fmt.Sprintf("  - %s: rate constants of %s multiplied by %s (%s–%s)", r.Label, strings.Join(r.Processes, ", "), sigG(r.Factor.Typical, 3), sigG(r.Factor.Range[0], 3), sigG(r.Factor.Range[1], 3))
			if r.Years != nil {
				line += fmt.Sprintf(" for %s years (%s–%s)", sigG(r.Years.Typical, 3), sigG(r.Years.Range[0], 3), sigG(r.Years.Range[1], 3))
			}
			out = append(out, line)
		}
		if g := m.Grazing; g != nil {
			out = append(out, fmt.Sprintf("  - offtake %s of the foliage outflow (%s), %s of it exported (%s), excreta %s as urine (%s), the rest as dung",
				percent(g.Offtake.Typical), percentRange(g.Offtake.Range), percent(g.Export.Typical), percentRange(g.Export.Range),
				percent(g.Urine.Typical), percentRange(g.Urine.Range)))
		}
	}
	if len(out) == 0 {
		out = append(out, "no treatment declared that acts on the model: every hypothesis starts from the control")
	}
	return out
}
