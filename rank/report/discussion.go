package report

import (
	"fmt"
	"math"
	"strings"

	"nlens/knowledge"
	"nlens/rank"
)

// discussion drafts one to three paragraphs in the hedged register of a
// journal discussion: which explanations lead and how large they are, by
// what mechanism, what the data leave open and which measurement would
// settle it. Every statement about a mechanism, a source or a method
// carries the knowledge base's references for it; statements about this
// result rest on the Methods section.
func discussion(r *rank.Result, kb *knowledge.Base, ci citer) []string {
	d := drafter{kb: kb, ci: ci, site: r.SiteID}
	units := summaryUnits(r)
	switch n := len(units); {
	case n == 0:
		return []string{"The study defines no comparison, so there is nothing to discuss."}
	case n == 1 && units[0].series == "":
		c := units[0].ranked
		d.n = newNamer(kb, c)
		first := d.interpretation(units[0], false)
		if second := d.openQuestions(c); second != "" {
			return []string{first, second}
		}
		return []string{first}
	default:
		var out []string
		for i, u := range units {
			if i == 2 && n > 3 {
				var rest []rank.ComparisonResult
				for _, v := range units[2:] {
					rest = append(rest, v.ranked)
				}
				out = append(out, d.remaining(rest))
				break
			}
			d.n = newNamer(kb, u.ranked)
			p := d.interpretation(u, true)
			if q := d.openQuestions(u.ranked); q != "" {
				p += " " + q
			}
			out = append(out, p)
		}
		return out
	}
}

// drafter holds what the discussion's sentences need.
type drafter struct {
	kb   *knowledge.Base
	ci   citer
	n    namer
	site string
	// explained lists candidate ids whose mechanism has been given.
	explained []string
}

// interpretation is the leading explanation: the pattern, the candidate,
// its size and its mechanism. named says the comparison by name.
func (d *drafter) interpretation(u summaryUnit, named bool) string {
	c := u.ranked
	var b strings.Builder
	intro := ""
	switch {
	case u.series != "":
		intro = "In the series " + quoteName(u.series) + ", explained jointly, "
	case named:
		intro = "In the " + quoteName(c.Name) + " comparison, "
	}
	if len(c.Hypotheses) == 0 {
		return intro + "no candidate explanation could be scored."
	}
	top := c.Hypotheses[0]
	pattern := d.pattern(c)
	if u.series != "" {
		pattern = seriesPattern(u)
	}
	switch {
	case c.NoFit:
		fmt.Fprintf(&b, "%s%s %s not reproduced by any of the candidate changes in N cycling considered here: the closest, %s, fails the posterior-predictive check (%s). This suggests that a process not represented in the model, a site that departs from the `%s` template, or a problem in the data is involved, and the ranking should not be read as support for any candidate.",
			intro, pattern.text, pattern.verb("is", "are"), d.n.name(top), pValue(top.Fit.P), d.site)
		return capitalize(b.String())
	case top.ID == rank.NoneID && !c.Treatment.Empty():
		fmt.Fprintf(&b, "%s%s %s most simply explained by the declared treatment itself, without a change in N-cycle processes beyond it (posterior probability %s).",
			intro, pattern.text, pattern.verb("is", "are"), fmtProb(top.Posterior))
		return capitalize(b.String())
	case top.ID == rank.NoneID && !anyStandsOut(c.Observed):
		fmt.Fprintf(&b, "%s%s %s within the uncertainty of the data, and the most probable interpretation is that N cycling did not change (posterior probability %s).",
			intro, pattern.text, pattern.verb("is", "are"), fmtProb(top.Posterior))
		return capitalize(b.String())
	case top.ID == rank.NoneID:
		fmt.Fprintf(&b, "%sAlthough %s %s, no candidate change in N cycling reproduces %s better than no change, given the uncertainty of the data and the model's structural error (posterior probability of no change %s).",
			intro, pattern.text, pattern.verb("stands out", "stand out"), pattern.verb("it", "them"), fmtProb(top.Posterior))
		return capitalize(b.String())
	}
	fmt.Fprintf(&b, "%s%s %s most consistent with %s; this explanation carries a posterior probability of %s.",
		intro, pattern.text, pattern.verb("is", "are"), d.academic(top), fmtProb(top.Posterior))
	if m := d.mechanism(top, "Under this interpretation, "); m != "" {
		b.WriteString(" " + m)
	}
	return capitalize(b.String())
}

// openQuestions names the alternatives the data cannot exclude and the
// measurement that would best separate them.
func (d *drafter) openQuestions(c rank.ComparisonResult) string {
	if len(c.Hypotheses) == 0 {
		return ""
	}
	var b strings.Builder
	hs := named(c, 3)
	if !c.NoFit && len(hs) > 1 {
		var good, poor []rank.Hypothesis
		for _, h := range hs[1:] {
			if h.Fit.P >= poorFitP {
				good = append(good, h)
			} else {
				poor = append(poor, h)
			}
		}
		var sentences []string
		if len(good) > 0 {
			var names, ps []string
			for _, h := range good {
				names = append(names, fmt.Sprintf("%s (posterior probability %s)", d.n.name(h), fmtProb(h.Posterior)))
				ps = append(ps, fmtP(h.Fit.P))
			}
			s := fmt.Sprintf("Alternative interpretations cannot be excluded on the present data: %s %s the observed shifts comparably well (posterior-predictive p = %s)",
				rank.JoinAnd(names), verb(len(good), "reproduces", "reproduce"), rank.JoinAnd(ps))
			set := append([]rank.Hypothesis{hs[0]}, good...)
			worst, ratio := spread(c, set)
			all := "all of them predict"
			if len(set) == 2 {
				all = "both predict"
			}
			if worst.Observable == "" || ratio < 1 {
				s += fmt.Sprintf(", as %s shifts within one standard error of each other for every quantity measured.", all)
			} else {
				lo, hi := predictedRange(worst.Observable, set)
				rng := fmt.Sprintf("%s to %s ‰", plusSigned(lo, 1), plusSigned(hi, 1))
				if worst.LogRatio {
					rng = fmt.Sprintf("ln ratio %s to %s", plusSigned(lo, 2), plusSigned(hi, 2))
				}
				s += fmt.Sprintf("; their predictions diverge most for %s (%s), but not beyond the combined uncertainty of the isotope effects and the observations.", obsName(worst.Observable), rng)
			}
			sentences = append(sentences, s)
		}
		for _, h := range poor {
			sentences = append(sentences, fmt.Sprintf("%s retains a posterior probability of %s but reproduces the observations poorly (posterior-predictive %s).",
				capitalize(d.n.name(h)), fmtProb(h.Posterior), pValue(h.Fit.P)))
		}
		for _, h := range good {
			if h.ID == rank.NoneID {
				continue
			}
			if m := d.mechanism(h, "Under the alternative involving "+d.n.short(h)+", "); m != "" {
				sentences = append(sentences, m)
				break
			}
		}
		b.WriteString(strings.Join(sentences, " "))
	}
	if s := d.resolution(c, hs); s != "" {
		if b.Len() > 0 {
			b.WriteString(" ")
		}
		b.WriteString(s)
	}
	return b.String()
}

// resolution is the measurement sentence.
func (d *drafter) resolution(c rank.ComparisonResult, hs []rank.Hypothesis) string {
	if len(c.Measurements) == 0 || c.Measurements[0].Bits < minUsefulBits {
		if c.NoFit {
			return ""
		}
		return "None of the catalogued measurements is expected to discriminate substantially among these explanations, so additional replication of the existing measurements may be the more efficient next step."
	}
	m := c.Measurements[0]
	refs := d.measurementRefs(m.ID)
	if c.NoFit {
		return fmt.Sprintf("A direct constraint such as %s %s may help to identify what the model is missing.", m.Label, refs)
	}
	var ids []string
	for _, h := range hs {
		ids = append(ids, h.ID)
	}
	var b strings.Builder
	at := ""
	if c.MeasurementsAt != "" {
		at = " in the samples of " + quoteName(c.MeasurementsAt)
	}
	fmt.Fprintf(&b, "Measuring %s%s would probably be the most effective way to discriminate among these explanations (expected information gain %s)", m.Label, at, bits(m.Bits))
	if a, bb, z := separation(m, ids); a != "" && z > 0 {
		ha, _ := hypothesisByID(c, a)
		hb, _ := hypothesisByID(c, bb)
		fmt.Fprintf(&b, ": the model predicts %s under %s but %s under %s", expectation(m, m.Predicted[a]), d.under(ha), expectation(m, m.Predicted[bb]), d.under(hb))
	}
	if refs != "" {
		b.WriteString(" " + refs)
	}
	b.WriteString(".")
	if len(c.Measurements) > 1 {
		m2 := c.Measurements[1]
		if m2.Bits >= minUsefulBits && m2.Cost < m.Cost {
			fmt.Fprintf(&b, " %s, which is cheaper, would add about %s", capitalize(m2.Label), bits(m2.Bits))
			if r := d.measurementRefs(m2.ID); r != "" {
				b.WriteString(" " + r)
			}
			b.WriteString(".")
		}
	}
	return b.String()
}

// under names a hypothesis after "under": "more nitrification", "a
// change in uptake form", "no change beyond the treatment".
func (d *drafter) under(h rank.Hypothesis) string {
	return d.n.short(h)
}

func (d *drafter) measurementRefs(id string) string {
	if km, ok := d.kb.Measurement(id); ok {
		return d.ci.cite(km.Refs...)
	}
	return ""
}

// remaining summarises comparisons beyond the second in one paragraph.
func (d *drafter) remaining(cs []rank.ComparisonResult) string {
	var parts []string
	for _, c := range cs {
		if len(c.Hypotheses) == 0 {
			continue
		}
		n := newNamer(d.kb, c)
		top := c.Hypotheses[0]
		s := fmt.Sprintf("%s in %s (posterior probability %s)", n.name(top), quoteName(c.Name), fmtProb(top.Posterior))
		if c.NoFit {
			s = fmt.Sprintf("no adequate explanation in %s", quoteName(c.Name))
		}
		parts = append(parts, s)
	}
	return "In the remaining comparisons, the leading interpretations were " + rank.JoinAnd(parts) + "; their tables above give the alternatives and the measurements that would separate them."
}

// mechanism explains how the hypothesis's candidates would produce the
// shift, once per candidate in a discussion, with their references. For a
// source it adds the source's δ15N range and references.
func (d *drafter) mechanism(h rank.Hypothesis, lead string) string {
	parts := d.n.parts
	var clauses []string
	var refs []string
	ids := []string{h.ID}
	if h.Pair {
		ids = ids[:0]
		for _, m := range h.Magnitudes {
			ids = append(ids, m.Candidate)
		}
	}
	var sources []string
	for _, id := range ids {
		if contains(d.explained, id) {
			continue
		}
		single, ok := parts[id]
		if !ok {
			if id == h.ID {
				single = h
			} else {
				continue
			}
		}
		if single.Mechanism == "" {
			continue
		}
		d.explained = append(d.explained, id)
		clauses = append(clauses, strings.TrimSuffix(single.Mechanism, "."))
		refs = append(refs, single.Refs...)
		for _, m := range single.Magnitudes {
			if m.Source != "" {
				sources = append(sources, m.Source)
			}
		}
	}
	if len(clauses) == 0 {
		return ""
	}
	s := lead + strings.Join(clauses, "; ")
	if c := d.ci.cite(refs...); c != "" {
		s += " " + c
	}
	s += "."
	for _, id := range sources {
		src, ok := d.kb.Source(id)
		if !ok || len(src.D15NRangePermil) != 2 {
			continue
		}
		s += fmt.Sprintf(" %s typically carries δ15N of %s to %s ‰",
			capitalize(cutParen(src.Label)), plusSigned(src.D15NRangePermil[0], 1), plusSigned(src.D15NRangePermil[1], 1))
		if c := d.ci.cite(src.Refs...); c != "" {
			s += " " + c
		}
		s += "."
	}
	return capitalize(s)
}

// academic words a hypothesis with its size for the discussion: "an
// approximately 2.3-fold increase in nitrification (90 % credible interval
// 1.4–3.8)".
func (d *drafter) academic(h rank.Hypothesis) string {
	if len(h.Magnitudes) == 0 {
		return d.n.name(h)
	}
	if len(h.Magnitudes) == 1 {
		return d.n.name(h) + ", " + d.n.sizes(h)
	}
	return d.n.sizes(h)
}

// seriesPattern words the time course of a series as the subject of a
// sentence: "the shifts of foliar δ15N (+2.6, +1.1 and +0.1 ‰) and
// soil-nitrate δ15N (+7.5, +4.5 and +1.0 ‰) two, five and ten years after
// the clear-cut harvest".
func seriesPattern(u summaryUnit) patternText {
	yw := func(y float64) string {
		return strings.TrimSuffix(strings.TrimSuffix(yearsWords(y), " years"), " year")
	}
	var whens []string
	for _, c := range u.comparisons {
		if c.Years != nil {
			whens = append(whens, yw(*c.Years))
		}
	}
	// Observables in order of first appearance, each with its shifts and
	// the years it was measured (not every comparison of a series need
	// measure every observable).
	var names []string
	vals, at := map[string][]string{}, map[string][]string{}
	logr := map[string]bool{}
	for _, c := range u.comparisons {
		for _, oc := range c.Observed {
			if _, ok := vals[oc.Observable]; !ok {
				names = append(names, oc.Observable)
			}
			if oc.LogRatio {
				vals[oc.Observable] = append(vals[oc.Observable], "ln ratio "+plusSigned(oc.Shift, 2))
			} else {
				vals[oc.Observable] = append(vals[oc.Observable], plusSigned(oc.Shift, 1))
			}
			logr[oc.Observable] = oc.LogRatio
			if c.Years != nil {
				at[oc.Observable] = append(at[oc.Observable], yw(*c.Years))
			}
		}
	}
	everywhere := len(whens) == len(u.comparisons)
	for _, n := range names {
		everywhere = everywhere && len(vals[n]) == len(u.comparisons)
	}
	var parts []string
	for _, n := range names {
		unit := " ‰"
		if logr[n] {
			unit = ""
		}
		part := obsName(n) + " (" + rank.JoinAnd(vals[n]) + unit
		if !everywhere && len(at[n]) == len(vals[n]) {
			part += " at " + rank.JoinAnd(at[n]) + " " + map[bool]string{true: "year", false: "years"}[len(at[n]) == 1 && at[n][0] == "one"]
		}
		parts = append(parts, part+")")
	}
	when := ""
	if tw := treatmentWords(u.comparisons[0].Treatment); tw != "" && len(whens) == len(u.comparisons) {
		if everywhere {
			when = " " + rank.JoinAnd(whens) + " years after the " + tw
		} else {
			when = " after the " + tw
		}
	}
	return patternText{text: "the shifts of " + rank.JoinAnd(parts) + when, plural: true}
}

// patternText is a comparison's observed pattern as a noun phrase, and
// whether it is grammatically plural.
type patternText struct {
	text   string
	plural bool
}

func verb(n int, singular, plural string) string {
	if n == 1 {
		return singular
	}
	return plural
}

// pattern words the observed shifts as the subject of a sentence: "the
// enrichment of soil-nitrate δ15N (+6.5 ± 1.6 ‰) and foliar δ15N (+2.1 ±
// 0.5 ‰) three years after the treatment began, with no clear change in
// bulk-soil δ15N (+0.1 ± 0.4 ‰),".
func (d *drafter) pattern(c rank.ComparisonResult) patternText {
	var up, down, bigger, smaller, unclear []string
	for _, o := range orderedObserved(c.Observed) {
		name := obsName(o.Observable)
		if o.LogRatio {
			v := fmt.Sprintf("%s (%s; ln ratio %s ± %s)", name, changeWords(math.Exp(o.Shift)), plusSigned(o.Shift, 2), signed(o.SE, 2))
			switch {
			case shiftStrength(o.Shift, o.SE) == withinNoise:
				unclear = append(unclear, v)
			case o.Shift > 0:
				bigger = append(bigger, v)
			default:
				smaller = append(smaller, v)
			}
			continue
		}
		v := fmt.Sprintf("%s (%s ± %s ‰)", name, plusSigned(o.Shift, 1), signed(o.SE, 1))
		switch {
		case shiftStrength(o.Shift, o.SE) == withinNoise:
			unclear = append(unclear, v)
		case o.Shift > 0:
			up = append(up, v)
		default:
			down = append(down, v)
		}
	}
	var parts []string
	if len(up) > 0 {
		parts = append(parts, "the enrichment of "+rank.JoinAnd(up))
	}
	if len(down) > 0 {
		parts = append(parts, "the depletion of "+rank.JoinAnd(down))
	}
	if len(bigger) > 0 {
		parts = append(parts, "the increase in "+rank.JoinAnd(bigger))
	}
	if len(smaller) > 0 {
		parts = append(parts, "the decrease in "+rank.JoinAnd(smaller))
	}
	when := " " + treatmentWhen(c)
	if len(parts) == 0 {
		if len(unclear) == 1 {
			return patternText{text: "the difference in " + unclear[0] + when}
		}
		return patternText{text: "the differences in " + rank.JoinAnd(unclear) + when, plural: true}
	}
	text := rank.JoinAnd(parts) + when
	if len(unclear) > 0 {
		text += ", with no clear change in " + joinOr(unclear) + ","
	}
	return patternText{text: text, plural: len(parts) > 1}
}
