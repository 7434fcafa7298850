package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/study"
)

// textWidth is the line length of the e-mail text (the usual 72 columns of
// plain-text mail, common practice).
const textWidth = 72

// E-mail length limits (issue 13): one comparison in 100–250 words;
// several comparisons or a series in at most 400, one paragraph each
// between a shared opening and closing, the rest left to the report.
const (
	emailMaxOne  = 250
	emailMaxMany = 400
)

// Text writes the result as a plain-text e-mail reply: a warning first
// where no candidate fits, an opening naming the study, one paragraph per
// comparison or series (the pattern with the known treatment, the leading
// explanations with their size in plain words, the measurement that would
// separate them), and a closing with the cautions and a pointer to the
// full report. It keeps to the length limits above by shortening the
// paragraphs, then by leaving the last ones to the report.
func Text(w io.Writer, r *rank.Result, kb *knowledge.Base) error {
	ew := &errWriter{w: w}
	for i, p := range emailParagraphs(r, kb) {
		if i > 0 {
			ew.printf("\n")
		}
		ew.printf("%s\n", wrap(p, textWidth))
	}
	return ew.err
}

// emailParagraphs composes the e-mail within its word limit: every
// paragraph at full detail if that fits, else at less detail, and at the
// least detail as many paragraphs as fit, the rest left to the report.
func emailParagraphs(r *rank.Result, kb *knowledge.Base) []string {
	units := summaryUnits(r)
	limit := emailMaxMany
	if len(units) == 1 && units[0].series == "" {
		limit = emailMaxOne
	}
	noFit := unitsNoFit(units)
	compose := func(level detail, keep int) []string {
		paras := []string{"Hi,"}
		paras = append(paras, noFit...)
		paras = append(paras, emailOpening(r))
		g := glosses{}
		for _, u := range units[:keep] {
			paras = append(paras, u.paragraph(kb, &g, level))
		}
		paras = append(paras, emailClosing(r, len(units)-keep))
		return append(paras, "Best,")
	}
	var paras []string
	for level := fullDetail; level >= leastDetail; level-- {
		if paras = compose(level, len(units)); words(paras) <= limit {
			return paras
		}
	}
	for keep := len(units) - 1; words(paras) > limit && keep >= 1; keep-- {
		paras = compose(leastDetail, keep)
	}
	return paras
}

// detail is how much a summary paragraph says.
type detail int

const (
	// leastDetail: the pattern (of a series, its first comparison), the
	// leading explanation and one alternative.
	leastDetail detail = iota
	// namedDetail adds the series' other comparisons and names the next
	// measurement.
	namedDetail
	// sizedDetail adds the size of the leading explanation and a second
	// alternative.
	sizedDetail
	// fullDetail adds what the next measurement would show under the two
	// explanations it separates best.
	fullDetail
)

// words counts the words of some paragraphs as a reader would: runs of
// letters or digits separated by spaces ("±" and "‰" alone do not count).
func words(paras []string) int {
	n := 0
	for _, p := range paras {
		for _, f := range strings.Fields(p) {
			if strings.IndexFunc(f, func(r rune) bool { return unicode.IsLetter(r) || unicode.IsDigit(r) }) >= 0 {
				n++
			}
		}
	}
	return n
}

// emailOpening says what was run.
func emailOpening(r *rank.Result) string {
	title := "your data"
	if r.StudyTitle != "" {
		title = quoteName(r.StudyTitle)
	}
	return fmt.Sprintf("I ran %s through nlens (site model %s), which weighs candidate changes in N cycling against the δ15N data.", title, r.SiteID)
}

// emailClosing carries the cautions every report states and points to the
// full report; left is the number of comparisons or series not summarised.
func emailClosing(r *rank.Result, left int) string {
	s := "Please read this as a pointer: δ15N evidence is indicative, not proof, and the ranking depends on the isotope effects nlens assumes and on the site model. Decisions on management or regulation should rest on several lines of evidence, local regulations and licensed professionals. "
	if left > 0 {
		return s + fmt.Sprintf("The full report covers the other %s and has the tables, alternatives, a discussion draft and references.", count(float64(left), numberWord(left), "comparison", "comparisons"))
	}
	return s + "The full report has the tables, alternatives, a discussion draft and references."
}

// numberWord writes small counts as words.
func numberWord(n int) string {
	words := []string{"no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten"}
	if n >= 0 && n < len(words) {
		return words[n]
	}
	return strconv.Itoa(n)
}

// noFitStatements say, before anything else, where no candidate fits.
func noFitStatements(r *rank.Result) []string {
	return unitsNoFit(summaryUnits(r))
}

// unitsNoFit is noFitStatements for units already formed.
func unitsNoFit(units []summaryUnit) []string {
	var out []string
	for _, u := range units {
		if s := u.noFitStatement(); s != "" {
			out = append(out, s)
		}
	}
	return out
}

// summaryUnit is what one paragraph of a summary covers: a comparison on
// its own, or the comparisons of a series with their joint ranking.
type summaryUnit struct {
	comparisons []rank.ComparisonResult
	// ranked carries the ranking: the comparison itself, or the series'
	// joint hypotheses and measurements.
	ranked rank.ComparisonResult
	series string
}

// summaryUnits groups a result's comparisons: each series once, at its
// first comparison, and every other comparison on its own.
func summaryUnits(r *rank.Result) []summaryUnit {
	var out []summaryUnit
	done := map[string]bool{}
	for _, c := range r.Comparisons {
		if c.Series == "" {
			out = append(out, summaryUnit{comparisons: []rank.ComparisonResult{c}, ranked: c})
			continue
		}
		if done[c.Series] {
			continue
		}
		done[c.Series] = true
		u := summaryUnit{series: c.Series, ranked: c}
		for _, cc := range r.Comparisons {
			if cc.Series == c.Series {
				u.comparisons = append(u.comparisons, cc)
			}
		}
		if sr, _ := seriesOf(r, c); sr != nil {
			// The series' joint view, told with its first comparison's
			// treatment and years.
			u.ranked = seriesAsComparison(r, sr)
			u.ranked.Treatment, u.ranked.Years = c.Treatment, c.Years
		}
		out = append(out, u)
	}
	return out
}

// what names the unit: “fertilized vs control”, the series “cut”.
func (u summaryUnit) what() string {
	if u.series != "" {
		return "the series " + quoteName(u.series)
	}
	return quoteName(u.comparisons[0].Name)
}

// noFitStatement is the warning that leads every format when the unit's
// best explanation fails its fit check; "" otherwise.
func (u summaryUnit) noFitStatement() string {
	c := u.ranked
	if !c.NoFit || len(c.Hypotheses) == 0 {
		return ""
	}
	return fmt.Sprintf("No candidate fits %s: none of the explanations nlens considers reproduces the observed shifts (the closest fails its fit check, %s), so the ranking there is not evidence for any of them. A process the model leaves out, a site unlike the template or a problem in the data is more likely; check those before anything else.",
		u.what(), pValue(c.Hypotheses[0].Fit.P))
}

// paragraph is the unit's summary at a level of detail: the observed
// pattern with the known treatment, the leading explanations and the next
// measurement.
func (u summaryUnit) paragraph(kb *knowledge.Base, g *glosses, level detail) string {
	var parts []string
	if u.series != "" {
		var names []string
		for _, c := range u.comparisons {
			names = append(names, quoteName(c.Name))
		}
		parts = append(parts, fmt.Sprintf("The %s comparisons of the series %s (%s) were explained jointly, with one response for all of them.", numberWord(len(u.comparisons)), quoteName(u.series), rank.JoinAnd(names)))
	}
	for i, c := range u.comparisons {
		if level == leastDetail && i > 0 {
			break
		}
		parts = append(parts, patternSentence(c, i == 0))
	}
	n := newNamer(kb, u.ranked)
	parts = append(parts, leadSentences(u.ranked, n, g, level))
	if level >= namedDetail && !u.ranked.NoFit {
		if s := nextSentence(u.ranked, n, level == fullDetail, g.report); s != "" {
			parts = append(parts, s)
		}
	}
	return strings.Join(parts, " ")
}

// leadSentences name the leading explanations with posterior and size, or
// say that none fits.
func leadSentences(c rank.ComparisonResult, n namer, g *glosses, level detail) string {
	if len(c.Hypotheses) == 0 {
		return "nlens found no candidate to score here."
	}
	top := c.Hypotheses[0]
	if c.NoFit {
		if g.report {
			return fmt.Sprintf("Even the closest explanation, %s, fails the fit check (%s), so the ranking should not be read as support for any candidate.", n.name(top), pValue(top.Fit.P))
		}
		return fmt.Sprintf("Even the closest explanation, %s, fails the fit check (%s), so I would not read anything into the ranking yet.", n.name(top), pValue(top.Fit.P))
	}
	second := 0.0
	if len(c.Hypotheses) > 1 {
		second = c.Hypotheses[1].Posterior
	}
	var b strings.Builder
	if top.ID == rank.NoneID {
		b.WriteString(noneReading(c, top, g))
	} else {
		fmt.Fprintf(&b, "The best-supported explanation is %s, with a posterior probability of %s%s, %s.", n.name(top), fmtProb(top.Posterior), g.posteriorGloss(), leadWords(top.Posterior, second))
		if len(top.Magnitudes) > 0 && level >= sizedDetail {
			b.WriteString(" In the model that means " + n.sizes(top) + ".")
		}
	}
	max := 2
	if level >= sizedDetail {
		max = 3
	}
	var alts []string
	for _, h := range named(c, max)[1:] {
		alts = append(alts, fmt.Sprintf("%s (%s)", n.name(h), fmtProb(h.Posterior)))
	}
	switch len(alts) {
	case 0:
		b.WriteString(" Nothing else comes close.")
	case 1:
		fmt.Fprintf(&b, " %s remains possible.", capitalize(alts[0]))
	default:
		fmt.Fprintf(&b, " %s remain possible.", capitalize(rank.JoinAnd(alts)))
	}
	return b.String()
}

// noneReading words a ranking led by no response beyond the treatment,
// by the shift rule: with a declared treatment the treatment alone
// reproduces the shifts; without one, the shifts are within noise, or
// clear but no change in N cycling explains them better.
func noneReading(c rank.ComparisonResult, top rank.Hypothesis, g *glosses) string {
	p := fmtProb(top.Posterior) + g.posteriorGloss()
	switch {
	case !c.Treatment.Empty():
		return fmt.Sprintf("The most likely reading is that the treatment alone produced these shifts, with no change in N-cycle processes beyond it (posterior probability %s).", p)
	case !anyStandsOut(c.Observed):
		return fmt.Sprintf("The most likely reading is that N cycling did not change: every shift is within noise (posterior probability %s).", p)
	}
	return fmt.Sprintf("No candidate change in N cycling explains the shifts better than no change at all (posterior probability %s): they are within the model's structural error and the data's uncertainty.", p)
}

// anyStandsOut reports whether any observed shift is at least detectable.
func anyStandsOut(obs []study.Observed) bool {
	for _, o := range obs {
		if shiftStrength(o.Shift, o.SE) != withinNoise {
			return true
		}
	}
	return false
}

// nextSentence recommends the measurement that would best separate the
// leading explanations, with what each predicts.
func nextSentence(c rank.ComparisonResult, n namer, predictions, report bool) string {
	if !worthMeasuring(c) {
		return noUsefulMeasurement
	}
	m := c.Measurements[0]
	lead, verb := "To tell them apart", "I would measure %s next (%s cost)"
	if len(c.Hypotheses) > 0 && c.Hypotheses[0].Posterior >= 0.9 {
		lead = "To pin down its size"
	}
	if report {
		verb = "the most useful next measurement is %s (%s cost)"
	}
	s := lead + ", " + fmt.Sprintf(verb, m.Label, knowledge.CostLabel(m.Cost))
	if c.MeasurementsAt != "" {
		// a series: scored at the comparison where it tells most
		s += " in the samples of " + quoteName(c.MeasurementsAt)
	}
	if a, b, z := separation(m, namedIDs(c)); predictions && a != "" && z > 0 {
		ha, _ := hypothesisByID(c, a)
		hb, _ := hypothesisByID(c, b)
		s += fmt.Sprintf(": %s %s, %s %s", expectation(m, m.Predicted[a]), n.ifClause(ha, false), expectation(m, m.Predicted[b]), n.ifClause(hb, false))
	}
	return s + "."
}

// glosses remembers which terms have been explained already.
type glosses struct {
	posterior bool
	// report writes for a report rather than a reply: no first person.
	report bool
}

func (g *glosses) posteriorGloss() string {
	if g.posterior {
		return ""
	}
	g.posterior = true
	return " (all candidates sum to 1)"
}

// predictedRange is the lowest and highest predicted mean of an observable
// over some hypotheses.
func predictedRange(obs string, hs []rank.Hypothesis) (lo, hi float64) {
	first := true
	for _, h := range hs {
		m, ok := h.Predicted[obs]
		if !ok {
			continue
		}
		if first || m.Mean < lo {
			lo = m.Mean
		}
		if first || m.Mean > hi {
			hi = m.Mean
		}
		first = false
	}
	return lo, hi
}

// minUsefulBits: below this expected information no measurement is worth
// recommending in prose (a design choice: a twentieth of a bit barely
// moves any posterior).
const minUsefulBits = 0.05

// noUsefulMeasurement is said when no measurement reaches minUsefulBits.
const noUsefulMeasurement = "No measurement in the nlens catalogue would separate these explanations much; more replicates of what was already measured may help more."

// worthMeasuring says whether the best measurement reaches minUsefulBits.
func worthMeasuring(c rank.ComparisonResult) bool {
	return len(c.Measurements) > 0 && c.Measurements[0].Bits >= minUsefulBits
}

// namedIDs are the ids of the hypotheses named in prose, in rank order.
func namedIDs(c rank.ComparisonResult) []string {
	var ids []string
	for _, h := range named(c, 3) {
		ids = append(ids, h.ID)
	}
	return ids
}

// ifClause is "if nitrification is behind the shift" (full) or "if
// nitrification", and "if nothing changed" for none.
func (n namer) ifClause(h rank.Hypothesis, full bool) string {
	switch {
	case h.ID == rank.NoneID && n.treated:
		return "if the treatment acted alone"
	case h.ID == rank.NoneID:
		return "if nothing changed"
	case full:
		return "if " + n.short(h) + " is behind the shift"
	}
	return "if " + n.short(h)
}

// short names a hypothesis briefly, for "if … is behind the shift".
func (n namer) short(h rank.Hypothesis) string {
	if len(h.Magnitudes) == 0 {
		switch {
		case h.ID == rank.NoneID && n.treated:
			return "no response beyond the treatment"
		case h.ID == rank.NoneID:
			return "no change in N cycling"
		}
		return h.Label
	}
	var parts []string
	for _, m := range h.Magnitudes {
		parts = append(parts, n.part(m))
	}
	return strings.Join(parts, " plus ")
}

// wrap breaks a paragraph into lines of at most width characters (runes),
// at spaces; a word longer than width gets a line of its own. A unit (‰,
// %) stays on the line of its number, and "±" on the line of what follows.
func wrap(p string, width int) string {
	var words []string
	for _, w := range strings.Fields(p) {
		if k := len(words) - 1; k >= 0 && (strings.HasPrefix(w, "‰") || strings.HasPrefix(w, "%") || strings.HasSuffix(words[k], "±")) {
			words[k] += " " + w
			continue
		}
		words = append(words, w)
	}
	var b strings.Builder
	line := 0
	for i, word := range words {
		n := utf8.RuneCountInString(word)
		switch {
		case i == 0:
		case line+1+n > width:
			b.WriteString("\n")
			line = 0
		default:
			b.WriteString(" ")
			line++
		}
		b.WriteString(word)
		line += n
	}
	return b.String()
}
