package report

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"nlens/knowledge"
	"nlens/rank"
)

// textWidth is the line length of the e-mail text (the usual 72 columns of
// plain-text mail, common practice).
const textWidth = 72

// Text writes the result as a plain-text e-mail reply of a few short
// paragraphs per comparison: the observed pattern, the leading
// explanations with their posterior and size in plain words, what the data
// cannot yet tell apart, the measurements to make next and why, and a
// one-line caution. Technical terms carry a short gloss the first time.
func Text(w io.Writer, r *rank.Result, kb *knowledge.Base) error {
	var paras []string
	title := "the study"
	if r.StudyTitle != "" {
		title = quoteName(r.StudyTitle)
	}
	paras = append(paras, "Hi,", fmt.Sprintf(
		"I ran %s through nlens, which simulates how changes in N cycling would move δ15N through plants and soil and weighs each candidate explanation against the data.",
		title))
	gloss := glosses{}
	for i, c := range r.Comparisons {
		n := newNamer(kb, c)
		paras = append(paras, patternSentence(c))
		paras = append(paras, leadParagraph(c, n, &gloss, rateText))
		if p := ambiguityParagraph(c, n); p != "" {
			paras = append(paras, p)
		}
		if p := nextParagraph(c, n, &gloss, i == 0, "What I would measure next: "); p != "" {
			paras = append(paras, p)
		}
	}
	paras = append(paras, fmt.Sprintf(
		"One caution: δ15N evidence is indicative, not proof, and these numbers rest on the isotope effects and the %s site model that nlens assumes.", r.SiteID))
	paras = append(paras, "Best,")
	ew := &errWriter{w: w}
	for i, p := range paras {
		if i > 0 {
			ew.printf("\n")
		}
		ew.printf("%s\n", wrap(p, textWidth))
	}
	return ew.err
}

// glosses remembers which terms have been explained already.
type glosses struct{ posterior, bits bool }

func (g *glosses) posteriorGloss() string {
	if g.posterior {
		return ""
	}
	g.posterior = true
	return " (how strongly the data and prior knowledge together favour it; all candidates sum to 1)"
}

func (g *glosses) bitsGloss() string {
	if g.bits {
		return ""
	}
	g.bits = true
	return " (expected information gain; 1 bit would settle an even two-way choice)"
}

// leadParagraph names the leading explanations with posterior and size.
func leadParagraph(c rank.ComparisonResult, n namer, g *glosses, rateUnit string) string {
	if len(c.Hypotheses) == 0 {
		return "nlens found no candidate to score for this comparison."
	}
	top := c.Hypotheses[0]
	if c.NoFit {
		return fmt.Sprintf("None of the explanations nlens considers reproduces this pattern: even the closest, %s, fails the fit check (%s, the chance of a mismatch at least this large if it were right). That points to a process the model leaves out, a site unlike its template, or a problem in the data, so I would check the numbers before reading anything into the ranking.",
			n.name(top), pValue(top.Fit.P))
	}
	second := 0.0
	if len(c.Hypotheses) > 1 {
		second = c.Hypotheses[1].Posterior
	}
	var b strings.Builder
	if top.ID == rank.NoneID {
		fmt.Fprintf(&b, "The most likely reading is that N cycling did not change and the shifts are sampling noise and natural variation: posterior probability %s%s.",
			fmtProb(top.Posterior), g.posteriorGloss())
	} else {
		fmt.Fprintf(&b, "The best-supported explanation is %s, with a posterior probability of %s%s; it is %s.",
			n.sized(top), fmtProb(top.Posterior), g.posteriorGloss(), leadWords(top.Posterior, second))
	}
	var alts []string
	for _, h := range named(c, 3)[1:] {
		alts = append(alts, fmt.Sprintf("%s (%s)", n.name(h), fmtProb(h.Posterior)))
	}
	switch len(alts) {
	case 0:
	case 1:
		fmt.Fprintf(&b, " The only other explanation with real support is %s.", alts[0])
	default:
		fmt.Fprintf(&b, " Next come %s.", joinAnd(alts))
	}
	return b.String()
}

// ambiguityParagraph says which of the named explanations the data cannot
// yet separate, and where they differ most.
func ambiguityParagraph(c rank.ComparisonResult, n namer) string {
	if c.NoFit {
		return ""
	}
	hs := named(c, 3)
	if len(hs) < 2 {
		return "Nothing else comes close, so among the candidates nlens knows the data already single this one out."
	}
	var names []string
	for _, h := range hs {
		names = append(names, n.short(h))
	}
	worst, ratio := spread(c, hs)
	if worst.Observable == "" || ratio < 1 {
		return fmt.Sprintf("What the data cannot yet tell apart: %s predict nearly the same shift in everything measured (within one standard error of each other).", joinAnd(names))
	}
	lo, hi := predictedRange(worst.Observable, hs)
	rng := fmt.Sprintf("%s to %s ‰", plusSigned(lo, 1), plusSigned(hi, 1))
	if worst.LogRatio {
		rng = fmt.Sprintf("ln ratio %s to %s", plusSigned(lo, 2), plusSigned(hi, 2))
	}
	return fmt.Sprintf("What the data cannot yet tell apart: %s. Their predictions differ most for %s (%s), but the uncertainty of the isotope effects and of the data leaves room for each.",
		joinAnd(names), obsName(worst.Observable), rng)
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

// namedIDs are the ids of the hypotheses named in prose, in rank order.
func namedIDs(c rank.ComparisonResult) []string {
	var ids []string
	for _, h := range named(c, 3) {
		ids = append(ids, h.ID)
	}
	return ids
}

// nextParagraph recommends one or two measurements and says why.
// lead opens the recommendation ("What I would measure next: ").
func nextParagraph(c rank.ComparisonResult, n namer, g *glosses, full bool, lead string) string {
	if (len(c.Measurements) == 0 || c.Measurements[0].Bits < minUsefulBits) && c.NoFit {
		return ""
	}
	if len(c.Measurements) == 0 || c.Measurements[0].Bits < minUsefulBits {
		return "No measurement in the nlens catalogue would separate these explanations much; more replicates of what was already measured may help more."
	}
	ids := namedIDs(c)
	m := c.Measurements[0]
	var b strings.Builder
	fmt.Fprintf(&b, "%s%s (%s cost). ", lead, m.Label, costName(m.Cost))
	if a, bb, z := separation(m, ids); a != "" && z > 0 {
		ha, _ := hypothesisByID(c, a)
		hb, _ := hypothesisByID(c, bb)
		fmt.Fprintf(&b, "%s, expect %s; %s, %s. ",
			capitalize(n.ifClause(ha, true)), expectation(m, m.Predicted[a]), n.ifClause(hb, false), expectation(m, m.Predicted[bb]))
	}
	fmt.Fprintf(&b, "On average it should give %s bits about which explanation holds%s.", sig2(m.Bits), g.bitsGloss())
	if len(c.Measurements) > 1 && full {
		m2 := c.Measurements[1]
		if m2.Bits >= minUsefulBits {
			kind := "A second option is"
			if m2.Cost < m.Cost {
				kind = "A cheaper second option is"
			}
			fmt.Fprintf(&b, " %s %s (%s cost, %s bits)", kind, m2.Label, costName(m2.Cost), sig2(m2.Bits))
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

// ifClause is "if nitrification is behind the shift" (full) or "if
// nitrification", and "if nothing changed" for none.
func (n namer) ifClause(h rank.Hypothesis, full bool) string {
	switch {
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
		if h.ID == rank.NoneID {
			return "no response beyond the treatment"
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
