package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"nlens/knowledge"
	"nlens/rank"
)

// MarkdownOptions say what the Markdown report links to.
type MarkdownOptions struct {
	// Figures links the figures WriteBundle writes beside report.md.
	Figures bool
	// MaxHypotheses shown in the explanations table (result.json has all).
	MaxHypotheses int
	// MaxMeasurements shown in the measurements tables.
	MaxMeasurements int
}

func (o MarkdownOptions) withDefaults() MarkdownOptions {
	t := ExplainOptions{MaxHypotheses: o.MaxHypotheses, MaxMeasurements: o.MaxMeasurements}.withDefaults()
	o.MaxHypotheses, o.MaxMeasurements = t.MaxHypotheses, t.MaxMeasurements
	return o
}

// Markdown writes the full report: summary, observed shifts, explanations,
// next measurements, a discussion draft with author–year citations,
// cautions, methods and the references cited.
func Markdown(w io.Writer, r *rank.Result, kb *knowledge.Base, opt MarkdownOptions) error {
	text, _ := markdownReport(r, kb, opt)
	_, err := io.WriteString(w, text)
	return err
}

// markdownReport composes the report and returns it with the references it
// cites, in reference-list order.
func markdownReport(r *rank.Result, kb *knowledge.Base, opt MarkdownOptions) (string, []citedRef) {
	opt = opt.withDefaults()
	text, refs := twoPass(kb, func(ci citer) string { return markdownBody(r, kb, ci, opt) })
	var b strings.Builder
	b.WriteString(text)
	b.WriteString("## References\n\n")
	if len(refs) == 0 {
		b.WriteString("No references were cited.\n")
	}
	memory := false
	for _, cr := range refs {
		line := mdEscape(fullReference(cr.Ref, cr.Suffix))
		if fromMemory(cr.Ref) {
			line += " †"
			memory = true
		}
		b.WriteString("- " + line + "\n")
	}
	if memory {
		b.WriteString("\n† Some details of this entry (authors, title, volume or pages) are from memory and were not checked against the publication; verify them before citing.\n")
	}
	return b.String(), refs
}

// markdownBody is the report up to its reference list.
func markdownBody(r *rank.Result, kb *knowledge.Base, ci citer, opt MarkdownOptions) string {
	var b strings.Builder
	title := r.StudyTitle
	if title == "" {
		title = r.StudyFile
	}
	fmt.Fprintf(&b, "# %s\n\n", mdEscape(plain(title)))
	fmt.Fprintf(&b, "*Draft report written by nlens %s from the study file; check every statement before sending it on.*\n\n", mdEscape(r.Version))

	units := summaryUnits(r)
	for _, s := range unitsNoFit(units) {
		fmt.Fprintf(&b, "**%s**\n\n", mdEscape(s))
	}
	b.WriteString("## Summary\n\n")
	g := glosses{report: true}
	for _, u := range units {
		fmt.Fprintf(&b, "%s\n\n", mdEscape(u.paragraph(kb, &g, fullDetail)))
	}

	plan := figurePlan(r)
	for i, c := range r.Comparisons {
		// Each comparison: its observations, its ranking, figures and
		// warnings. A member of a series has no ranking of its own: the
		// joint ranking comes once, after the last member.
		comparisonHead(&b, c)
		sr, last := seriesOf(r, c)
		if sr == nil {
			rankingSection(&b, c, kb, ci, opt)
		} else {
			fmt.Fprintf(&b, "Part of %s; the ranking is given once for the series below.\n\n", mdEscape(seriesHeading(sr)))
		}
		comparisonFigures(&b, i, opt, plan)
		markdownWarnings(&b, c.Warnings)
		if last {
			view := seriesAsComparison(r, sr)
			fmt.Fprintf(&b, "## Series: %s\n\n", mdEscape(plain(sr.Name)))
			fmt.Fprintf(&b, "%s. Observables are named by comparison (“comparison/observable”).\n\n", mdEscape(capitalize(seriesHeading(sr))))
			rankingSection(&b, view, kb, ci, opt)
			markdownWarnings(&b, view.Warnings)
		}
	}

	b.WriteString("## Discussion draft\n\n")
	b.WriteString("*Generated from the result for adaptation into a manuscript; the wording is deliberately hedged.*\n\n")
	for _, p := range discussion(r, kb, ci) {
		b.WriteString(p + "\n\n")
	}

	b.WriteString("## Cautions\n\n")
	for _, c := range cautions(r) {
		b.WriteString("- " + c + "\n")
	}
	b.WriteString("\n## Methods\n\n")
	b.WriteString(methods(r, kb, ci))
	return b.String()
}

// comparisonHead writes a comparison's heading and observed shifts.
func comparisonHead(b *strings.Builder, c rank.ComparisonResult) {
	fmt.Fprintf(b, "## Comparison: %s\n\n", mdEscape(plain(c.Name)))
	fmt.Fprintf(b, "%s.", capitalize(when(c.Years)))
	if tw := treatmentWords(c.Treatment); tw != "" {
		fmt.Fprintf(b, " Treatment applied in every explanation: %s.", mdEscape(tw))
	}
	b.WriteString("\n\n")

	b.WriteString("### Observed shifts\n\n")
	reading := "reading: clear at |shift| ≥ 3 SE, small but detectable at 2–3 SE, within noise below 2 SE."
	if c.ShiftsOnly {
		b.WriteString("Treatment minus control as given (from a paper, without group levels); δ15N and δ18O in ‰, pools and fluxes as ln(treatment/control); " + reading + "\n\n")
	} else {
		b.WriteString("Treatment minus control; δ15N and δ18O in ‰, pools and fluxes as ln(treatment/control); SE is Welch's standard error of the difference; " + reading + "\n\n")
	}
	var rows [][]string
	for _, o := range c.Observed {
		dec := 2
		unit := "‰"
		ctl, trt := signed(o.Control.Mean, 2), signed(o.Treatment.Mean, 2)
		if o.LogRatio {
			dec, unit = 3, "ln ratio"
			ctl, trt = num(o.Control.Mean), num(o.Treatment.Mean)
		}
		ns := fmt.Sprintf("%d / %d", o.Control.N, o.Treatment.N)
		if o.NoLevels() {
			ctl, trt, ns = "—", "—", "—" // a shift as given in a paper
		}
		rows = append(rows, []string{o.Observable, ctl, trt, plusSigned(o.Shift, dec), signed(o.SE, dec), unit, ns, shiftStrength(o.Shift, o.SE).String()})
	}
	writeTable(b, []string{"observable", "control", "treatment", "shift", "SE", "unit", "n (control / treatment)", "reading"}, "lrrrrlrl", rows)
}

// rankingSection writes the explanations, predictions and next
// measurements of a comparison or of a series' joint view.
func rankingSection(b *strings.Builder, c rank.ComparisonResult, kb *knowledge.Base, ci citer, opt MarkdownOptions) {
	n := newNamer(kb, c)
	var rows [][]string
	b.WriteString("### Explanations\n\n")
	b.WriteString("Posterior: probability of each explanation given the data and the priors (all candidates sum to 1). Magnitude: posterior median with its 90 % credible interval (≤ or ≥ where it reaches the prior's bound), “was” the site's baseline, and the change of that flux at sampling (for a pulse, while it lasts). Fit p: the probability of a fit at least this poor if the explanation were right (posterior-predictive check); below 0.01 the explanation does not reproduce the data. “with #k”: its predictions stay within noise of explanation #k, so its probability is counted there.\n\n")
	for i, h := range c.Hypotheses {
		if i >= opt.MaxHypotheses {
			break
		}
		post := posteriorCell(c, h)
		rows = append(rows, []string{strconv.Itoa(i + 1), shortLabel(h), "`" + h.ID + "`", post, fmtProb(h.PriorProb), MagnitudeText(h), fmtP(h.Fit.P)})
	}
	writeTable(b, []string{"#", "explanation", "id", "posterior", "prior", "magnitude (90 % interval)", "fit p"}, "rllrrlr", rows)
	if k := len(c.Hypotheses) - opt.MaxHypotheses; k > 0 {
		fmt.Fprintf(b, "%s listed in result.json (`--format json`).\n\n", count(float64(k), strconv.Itoa(k), "further candidate is", "further candidates are"))
	}
	lead := leadingIndex(c)
	for _, i := range lead {
		h := c.Hypotheses[i]
		fmt.Fprintf(b, "- **#%d %s** (posterior %s)", i+1, mdEscape(shortLabel(h)), fmtProb(h.Posterior))
		if len(h.Magnitudes) > 0 {
			fmt.Fprintf(b, ": %s", mdEscape(n.sizes(h)))
		}
		b.WriteString(".")
		if h.Mechanism != "" {
			fmt.Fprintf(b, " Mechanism: %s", mdEscape(strings.TrimSuffix(h.Mechanism, ".")))
			if c := ci.cite(h.Refs...); c != "" {
				b.WriteString(" " + c)
			}
			b.WriteString(".")
		}
		seen := map[string]bool{} // a pair carries the rules of both parts, often the same
		for _, a := range h.Adjustments {
			if seen[a.Rule] {
				continue
			}
			seen[a.Rule] = true
			fmt.Fprintf(b, " Prior ×%s by context rule `%s`", sig2(a.Factor), a.Rule)
			if c := ci.cite(a.Refs...); c != "" {
				b.WriteString(" " + c)
			}
			fmt.Fprintf(b, ": %s.", mdEscape(strings.TrimSuffix(a.Reason, ".")))
		}
		b.WriteString("\n")
	}
	if len(lead) > 0 {
		b.WriteString("\n")
		fmt.Fprintf(b, "Predicted shifts under the leading explanations (posterior mean ± sd; observed ± SE):\n\n")
		headers, rows := predictionTable(c, lead, 2)
		writeTable(b, headers, "l"+strings.Repeat("r", len(headers)-1), rows)
	}

	b.WriteString("### Next measurements\n\n")
	if len(c.Measurements) == 0 {
		b.WriteString("No catalogue measurement is left that the study has not already made.\n\n")
	} else {
		b.WriteString("Ranked by expected information gain: how much, on average, the measurement would tell about which explanation holds, in bits (1 bit settles an even two-way choice); within " + sigG(rank.BitsTie, 2) + " bit of each other the cheaper comes first.")
		if c.MeasurementsAt != "" {
			fmt.Fprintf(b, " Scored as at %s, where a measurement tells most (archived samples of that time, or the same design elsewhere).", mdEscape(quoteName(c.MeasurementsAt)))
		}
		b.WriteString("\n\n")
		rows = rows[:0]
		for i, m := range c.Measurements {
			if i >= opt.MaxMeasurements {
				break
			}
			method := mdEscape(m.Method)
			if km, ok := kb.Measurement(m.ID); ok {
				if c := ci.cite(km.Refs...); c != "" {
					method += " " + c
				}
			}
			rows = append(rows, []string{strconv.Itoa(i + 1), m.Label, "`" + m.ID + "`", fixed(m.Bits, 2), knowledge.CostLabel(m.Cost), method})
		}
		writeTable(b, []string{"#", "measurement", "id", "bits", "cost", "method"}, "rllrll", rows)
		if len(lead) > 0 {
			fmt.Fprintf(b, "Predicted shift of each measurement under the leading explanations (mean ± sd including measurement noise for %d replicates per group; ‰, or ln ratio for pools and fluxes):\n\n", c.ReplicatesAssumed)
			headers, rows := measurementTable(c, lead, opt.MaxMeasurements, false)
			writeTable(b, headers, "l"+strings.Repeat("r", len(headers)-1), rows)
		}
		if why := whyMeasure(c, n); why != "" && len(c.Measurements) > 0 {
			b.WriteString(mdEscape(why) + "\n\n")
		}
	}

}

// comparisonFigures writes the figures of comparison idx.
func comparisonFigures(b *strings.Builder, idx int, opt MarkdownOptions, plan []figureSpec) {
	if opt.Figures {
		var figs []figureSpec
		for _, f := range plan {
			if f.Comparison == idx {
				figs = append(figs, f)
			}
		}
		if len(figs) > 0 {
			b.WriteString("### Figures\n\n")
			for _, f := range figs {
				fmt.Fprintf(b, "![%s](%s.svg)\n\n*%s* PNG: [%s.png](%s.png).\n\n", mdEscape(f.Alt), f.Base, mdEscape(f.Caption), f.Base, f.Base)
			}
		}
	}
}

// markdownWarnings writes a warnings list (nothing when empty).
func markdownWarnings(b *strings.Builder, warnings []string) {
	if len(warnings) > 0 {
		b.WriteString("### Warnings\n\n")
		for _, w := range warnings {
			b.WriteString("- " + mdEscape(plain(w)) + "\n")
		}
		b.WriteString("\n")
	}
}

// whyMeasure recommends one or two measurements and says why (bits are
// explained above the table).
func whyMeasure(c rank.ComparisonResult, n namer) string {
	if !worthMeasuring(c) {
		if c.NoFit {
			return ""
		}
		return noUsefulMeasurement
	}
	ids := namedIDs(c)
	m := c.Measurements[0]
	var b strings.Builder
	fmt.Fprintf(&b, "Recommended next: %s (%s cost). ", m.Label, knowledge.CostLabel(m.Cost))
	if a, bb, z := separation(m, ids); a != "" && z > 0 {
		ha, _ := hypothesisByID(c, a)
		hb, _ := hypothesisByID(c, bb)
		fmt.Fprintf(&b, "%s, expect %s; %s, %s. ",
			capitalize(n.ifClause(ha, true)), expectation(m, m.Predicted[a]), n.ifClause(hb, false), expectation(m, m.Predicted[bb]))
	}
	fmt.Fprintf(&b, "On average it should give %s about which explanation holds.", bits(m.Bits))
	if len(c.Measurements) > 1 {
		m2 := c.Measurements[1]
		if m2.Bits >= minUsefulBits {
			kind := "A second option is"
			if m2.Cost < m.Cost {
				kind = "A cheaper second option is"
			}
			fmt.Fprintf(&b, " %s %s (%s cost, %s)", kind, m2.Label, knowledge.CostLabel(m2.Cost), bits(m2.Bits))
			if a, bb, z := separation(m2, ids); a != "" && z >= 1 {
				ha, _ := hypothesisByID(c, a)
				hb, _ := hypothesisByID(c, bb)
				fmt.Fprintf(&b, ", which mainly separates %s from %s", n.short(ha), n.short(hb))
			}
			b.WriteString(".")
		}
	}
	return b.String()
}

// writeTable writes a Markdown table followed by a blank line.
func writeTable(b *strings.Builder, headers []string, align string, rows [][]string) {
	// markdownTable writes to a strings.Builder, which never fails.
	_ = markdownTable(b, headers, align, rows)
	b.WriteString("\n")
}

// cautions are the report's cautions: general ones always, and the
// result's own when it has them.
func cautions(r *rank.Result) []string {
	out := []string{
		"δ15N evidence is indicative, not proof. Different processes can leave similar isotope signatures, and a posterior probability ranks only the candidates nlens considers; a change it does not model cannot win.",
		fmt.Sprintf("The results depend on the assumed isotope effects (ε and their ranges in the nlens knowledge base, `nlens facts effects`) and on the site model `%s`. Where the real site differs from the template in pool sizes, fluxes or the routes N takes, the predicted shifts and the ranking can change.", r.SiteID),
		"Decisions on management, regulation or liability should rest on several independent lines of evidence, on local regulations and on the advice of licensed professionals, not on this analysis alone.",
	}
	for _, c := range r.Comparisons {
		if c.NoFit {
			out = append(out, fmt.Sprintf("In %s no explanation reproduces the observed shifts, so its ranking is not evidence for any of them.", mdEscape(quoteName(c.Name))))
		}
	}
	return out
}

// methods says how the result was computed, with every setting a reader
// needs to reproduce it.
func methods(r *rank.Result, kb *knowledge.Base, ci citer) string {
	m := r.Method
	var b strings.Builder
	site := fmt.Sprintf("`%s`", r.SiteID)
	if r.SiteDescription != "" {
		site += " (" + mdEscape(strings.TrimSuffix(r.SiteDescription, ".")) + ")"
	}
	if c := ci.cite(siteRefs(r, kb)...); c != "" {
		site += " " + c
	}
	fmt.Fprintf(&b, "Shifts were taken as treatment minus control, with Welch standard errors from the group statistics. Each candidate change in N cycling was simulated on the site model %s, a compartment model of the N cycle solved exactly in 14N and 15N; a comparison with a stated time since the treatment began was evaluated at that time, a long-standing contrast at the new steady state. ", site)
	fmt.Fprintf(&b, "The evidence for each candidate integrates the likelihood of the observed shifts over its magnitude prior (quadrature on %d nodes interpolated to %d points for single candidates, %d × %d nodes interpolated to %d × %d points for pairs, more nodes for the share of uptake taken as nitrate) and over %d nuisance draws of isotope effects, source δ15N and site fluxes, draw 0 being the nominal site. ",
		m.CoarseNodes, m.FinePoints, m.PairCoarseNodes, m.PairCoarseNodes, m.PairFinePoints, m.PairFinePoints, m.Draws)
	fmt.Fprintf(&b, "Draws were weighted by how well their baseline reproduces the control's absolute values (allowed offset %s ‰, or %s on the ln scale for pools and fluxes). A structural model error σ_model = %s ‰ (%s on the ln scale) was added to each observation's variance. ",
		trimFloat(m.LevelSDPermil), trimFloat(m.LevelSDLog), trimFloat(m.ModelErrorPermil), trimFloat(m.ModelErrorLog))
	fmt.Fprintf(&b, "Priors: no change in N cycling held %s of the prior probability and the candidates shared the rest by their context-adjusted weights; pairs were formed from the %d best single candidates with a prior of %s × the product of their priors. ",
		trimFloat(m.NoneShare), m.PairsFrom, trimFloat(m.PairPrior))
	fmt.Fprintf(&b, "Next measurements were predicted from %d posterior samples of each leading explanation with catalogue measurement noise added, and ranked by the mutual information between the outcome and the explanation, in bits, integrated by the trapezoid rule on an outcome grid of step %s noise sd.\n\n", m.SamplesPerLeading, trimFloat(m.OutcomeGridStep))

	rows := [][]string{
		{"nlens version", r.Version},
		{"study file", "`" + plain(r.StudyFile) + "`"},
		{"site model", "`" + r.SiteID + "`"},
		{"seed", strconv.FormatUint(r.Seed, 10)},
		{"nuisance draws", strconv.Itoa(m.Draws)},
		{"σ_model (‰ / ln scale)", trimFloat(m.ModelErrorPermil) + " / " + trimFloat(m.ModelErrorLog)},
		{"control-level sd (‰ / ln scale)", trimFloat(m.LevelSDPermil) + " / " + trimFloat(m.LevelSDLog)},
		{"prior share of no change", trimFloat(m.NoneShare)},
		{"pair prior factor", trimFloat(m.PairPrior)},
		{"pairs formed from best singles", strconv.Itoa(m.PairsFrom)},
		{"quadrature nodes / points (single)", fmt.Sprintf("%d / %d", m.CoarseNodes, m.FinePoints)},
		{"quadrature nodes / points per axis (pair)", fmt.Sprintf("%d / %d", m.PairCoarseNodes, m.PairFinePoints)},
		{"posterior samples per leading explanation", strconv.Itoa(m.SamplesPerLeading)},
		{"outcome grid step (noise sd)", trimFloat(m.OutcomeGridStep)},
	}
	if ctx := r.Context; ctx.SoilPH != nil || ctx.Drainage != "" || ctx.PrecipMM != nil || ctx.Mycorrhizal != "" {
		var parts []string
		if ctx.SoilPH != nil {
			parts = append(parts, "soil pH "+trimFloat(*ctx.SoilPH))
		}
		if ctx.Drainage != "" {
			parts = append(parts, ctx.Drainage+" drainage")
		}
		if ctx.PrecipMM != nil {
			parts = append(parts, trimFloat(*ctx.PrecipMM)+" mm/yr precipitation")
		}
		if ctx.Mycorrhizal != "" {
			parts = append(parts, ctx.Mycorrhizal+" mycorrhizal hosts")
		}
		rows = append(rows, []string{"site context (for the priors)", strings.Join(parts, ", ")})
	}
	for _, f := range r.RulesFiles {
		rows = append(rows, []string{"extra rules file", "`" + plain(f) + "`"})
	}
	writeTable(&b, []string{"setting", "value"}, "ll", rows)
	cmd := "nlens explain " + shellQuote(plain(r.StudyFile))
	if r.Demo {
		cmd = "nlens demo"
	}
	for _, f := range r.RulesFiles {
		cmd += " --rules " + shellQuote(plain(f))
	}
	fmt.Fprintf(&b, "To reproduce: `%s --seed %d --draws %d --model-error %s` with nlens %s and the same knowledge base.\n\n",
		cmd, r.Seed, m.Draws, trimFloat(m.ModelErrorPermil), r.Version)
	return b.String()
}

// shellQuote quotes a path for a POSIX shell when it needs it.
func shellQuote(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r == '/' || r == '.' || r == '-' || r == '_' || r >= '0' && r <= '9' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z')
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// mdEscape escapes the characters Markdown would read as formatting in
// running text.
func mdEscape(s string) string {
	return strings.NewReplacer(`\`, `\\`, "*", `\*`, "_", `\_`, "`", "\\`", "[", `\[`, "]", `\]`, "<", `\<`, ">", `\>`).Replace(s)
}
