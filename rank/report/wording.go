package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/study"
)

// This file decides every word the reports choose from numbers: how
// clear a shift is, how well an explanation fits, how large a change is in
// plain words, plurals, articles and the names of observables and
// hypotheses. Every format (e-mail, Markdown summary and discussion,
// terminal table notes) takes its words from here; number formats are in
// numbers.go.

// The one rule for how clearly an observed shift stands out, by |shift|/SE
// (z): below detectableZ it is within noise, from detectableZ to clearZ
// small but detectable, from clearZ on clear. Two standard errors is the
// usual informal threshold of the trade for "detectable" and three for a
// difference nobody would argue with (common practice).
const (
	detectableZ = 2
	clearZ      = 3
)

// strength is how clearly a shift stands out from its standard error.
type strength int

const (
	withinNoise strength = iota
	smallDetectable
	clearShift
)

// String is the rule's word: "clear", "small but detectable", "within
// noise" (the "reading" column of the observed-shifts tables).
func (s strength) String() string {
	switch s {
	case clearShift:
		return "clear"
	case smallDetectable:
		return "small but detectable"
	}
	return "within noise"
}

// short is the word for a narrow table column: "clear", "detectable",
// "noise".
func (s strength) short() string {
	switch s {
	case clearShift:
		return "clear"
	case smallDetectable:
		return "detectable"
	}
	return "noise"
}

// shiftStrength applies the rule to a shift and its standard error; a
// shift without a positive SE counts as clear when it is not zero.
func shiftStrength(shift, se float64) strength {
	z := math.Inf(1)
	if se > 0 {
		z = math.Abs(shift) / se
	}
	switch {
	case shift == 0 || z < detectableZ:
		return withinNoise
	case z < clearZ:
		return smallDetectable
	}
	return clearShift
}

// poorFitP: an explanation whose posterior-predictive p is below it
// reproduces the data poorly (the usual 5 % level, common practice); below
// the engine's 0.01 it fails (DESIGN §5, reported by the engine as NoFit).
const poorFitP = 0.05

// notable is the posterior below which an explanation is not worth naming
// in prose (it stays in the tables and the JSON).
const notable = 0.05

// obsName names an observable in prose: "foliar δ15N", "the soil nitrate
// pool".
func obsName(o string) string {
	if i := strings.LastIndex(o, "/"); i > 0 {
		return obsName(o[i+1:]) + " in " + quoteName(o[:i]) // a series' "comparison/observable"
	}
	switch o {
	case "foliage":
		return "foliar δ15N"
	case "roots", "wood-roots":
		return "root δ15N"
	case "litter":
		return "litter δ15N"
	case "forest-floor":
		return "forest-floor δ15N"
	case "soil":
		return "bulk-soil δ15N"
	case "soil-ammonium":
		return "soil-ammonium δ15N"
	case "soil-nitrate":
		return "soil-nitrate δ15N"
	case "leachate-nitrate":
		return "leachate-nitrate δ15N"
	case "fungi":
		return "fungal δ15N"
	case "n2o":
		return "δ15N of emitted N2O"
	case "n2o-sp":
		return "the N2O site preference"
	case "nitrate-d18o":
		return "nitrate δ18O"
	case "ecosystem":
		return "whole-ecosystem δ15N"
	case "foliage-n":
		return "foliar N concentration"
	case "net:mineralization":
		return "net N mineralization"
	case "net:nitrification":
		return "net nitrification"
	}
	switch {
	case strings.HasPrefix(o, "pool:"):
		return "the soil " + strings.TrimPrefix(o, "pool:") + " pool"
	case strings.HasPrefix(o, "flux:"):
		return "the " + strings.TrimPrefix(o, "flux:") + " flux"
	}
	return o
}

// obsShort names an observable in a figure or table row.
func obsShort(o string) string {
	switch o {
	case "nitrate-d18o":
		return "nitrate δ18O"
	case "n2o":
		return "N2O δ15N"
	}
	if forward.LogRatioName(o) {
		return strings.Replace(o, ":", " ", 1)
	}
	return o + " δ15N"
}

// changeWords says how a ratio (treatment/control, new/baseline) compares
// with 1 in plain words: "about 65 % higher", "about 2.4 times as high",
// "about 85 % lower", "about the same".
func changeWords(ratio float64) string {
	switch {
	case !(ratio > 0) || math.IsInf(ratio, 0):
		return "changed by an undefined factor"
	case ratio >= 2 && sig2(ratio) == "2":
		return "about twice as high"
	case ratio >= 2:
		return "about " + sig2(ratio) + " times as high"
	case ratio >= 1.05:
		return "about " + percent(ratio-1) + " higher"
	case ratio <= 1/1.05:
		return "about " + percent(1-ratio) + " lower"
	}
	return "about the same"
}

// changeAgainst is changeWords with what the ratio compares with: "about
// 65 % higher than at baseline", "about 17 times as high as at baseline".
func changeAgainst(ratio float64, than string) string {
	cw := changeWords(ratio)
	switch {
	case strings.HasSuffix(cw, " as high"):
		return cw + " as " + than
	case cw == "about the same":
		return cw + " as " + than
	case strings.HasSuffix(cw, "higher"), strings.HasSuffix(cw, "lower"):
		return cw + " than " + than
	}
	return cw
}

// changeShort is changeWords for a table cell: "+65 %", "−85 %", "2.4-fold".
func changeShort(ratio float64) string {
	switch {
	case !(ratio > 0) || math.IsInf(ratio, 0):
		return "n/a"
	case ratio >= 2:
		return sig2(ratio) + "-fold"
	case ratio >= 1:
		return "+" + percent(ratio-1)
	}
	return "−" + percent(1-ratio)
}

// shiftClause describes one observed shift that stands out from noise:
// "foliar δ15N was 3.1 ‰ higher (standard error 0.5 ‰)", "the
// mineralization flux was about 65 % higher, small but detectable (ln
// ratio +0.50, SE 0.25)". first spells out "standard error".
func shiftClause(o study.Observed, first bool) string {
	name := obsName(o.Observable)
	se := "SE"
	if first {
		se = "standard error"
	}
	small := ""
	if shiftStrength(o.Shift, o.SE) == smallDetectable {
		small = ", small but detectable"
	}
	if o.LogRatio {
		return fmt.Sprintf("%s was %s%s (ln ratio %s, %s %s)", name, changeWords(math.Exp(o.Shift)), small, plusSigned(o.Shift, 2), se, signed(o.SE, 2))
	}
	dir := "higher"
	if o.Shift < 0 {
		dir = "lower"
	}
	return fmt.Sprintf("%s was %s ‰ %s%s (%s %s ‰)", name, signed(math.Abs(o.Shift), 1), dir, small, se, signed(o.SE, 1))
}

// noiseClause names the shifts that stay within noise: "fungal and
// bulk-soil δ15N did not differ beyond noise".
func noiseClause(obs []study.Observed) string {
	if len(obs) == 0 {
		return ""
	}
	var names []string
	allDelta := true
	for _, o := range obs {
		names = append(names, obsName(o.Observable))
		allDelta = allDelta && strings.HasSuffix(obsName(o.Observable), " δ15N")
	}
	if allDelta && len(names) > 1 {
		for i := range names {
			names[i] = strings.TrimSuffix(names[i], " δ15N")
		}
		names[len(names)-1] += " δ15N"
	}
	return rank.JoinAnd(names) + " did not differ beyond noise"
}

// patternSentence is the observed pattern of a comparison in one
// sentence, with the known treatment: "In “fertilized vs control”
// (ammonium nitrate fertilizer at 60 kg N/ha per year, sampled twelve
// years after it began), foliar δ15N was 3.1 ‰ higher (standard error
// 0.5 ‰), while fungal and bulk-soil δ15N did not differ beyond noise."
// treatment says whether to name the treatment (the later comparisons of
// a series share the first one's).
func patternSentence(c rank.ComparisonResult, treatment bool) string {
	var clauses []string
	var noise []study.Observed
	for _, o := range orderedObserved(c.Observed) {
		if shiftStrength(o.Shift, o.SE) == withinNoise {
			noise = append(noise, o)
			continue
		}
		clauses = append(clauses, shiftClause(o, len(clauses) == 0 && treatment))
	}
	lead := "In " + quoteName(c.Name)
	var ctx []string
	tw := treatmentWords(c.Treatment)
	if tw != "" && treatment {
		ctx = append(ctx, tw)
	}
	switch {
	case c.Years != nil && tw != "" && !treatment:
		ctx = append(ctx, yearsWords(*c.Years)+" after it")
	case c.Years != nil && len(c.Treatment.Additions) > 0:
		ctx = append(ctx, "sampled "+yearsWords(*c.Years)+" after it began")
	case c.Years != nil && len(ctx) > 0:
		ctx = append(ctx, "sampled "+yearsWords(*c.Years)+" later")
	case c.Years != nil:
		ctx = append(ctx, "sampled "+yearsWords(*c.Years)+" after the treatment began")
	default:
		ctx = append(ctx, "a long-standing contrast")
	}
	lead += " (" + strings.Join(ctx, ", ") + ")"
	switch {
	case len(clauses) == 0:
		return lead + ", " + noiseClause(noise) + "."
	case len(noise) == 0:
		return lead + ", " + rank.JoinAnd(clauses) + "."
	}
	return lead + ", " + rank.JoinAnd(clauses) + ", while " + noiseClause(noise) + "."
}

// treatmentWhen says when a comparison was sampled in terms of its known
// treatment: "after twelve years of ammonium nitrate fertilizer at 60 kg
// N/ha per year", "three years after the clear-cut harvest", "in a
// long-standing contrast with the clear-cut harvest".
func treatmentWhen(c rank.ComparisonResult) string {
	tw := treatmentWords(c.Treatment)
	switch {
	case c.Years == nil && tw != "":
		return "in a long-standing contrast under " + tw
	case c.Years == nil:
		return "in a long-standing contrast"
	case tw == "":
		return yearsWords(*c.Years) + " after the treatment began"
	case len(c.Treatment.Additions) > 0:
		return "after " + yearsWords(*c.Years) + " of " + tw
	}
	return yearsWords(*c.Years) + " after the " + tw
}

// contextTagWords names the management tags that only set priors.
var contextTagWords = map[string]string{
	"limed": "liming", "drained": "drainage", "irrigated": "irrigation", "thinned": "thinning",
	"tilled": "tillage", "fertilized": "fertilization", "harvested": "harvest",
}

// treatmentWords names the known treatment of a comparison: "ammonium
// nitrate fertilizer at 60 kg N/ha per year", "clear-cut harvest", "fire
// (moderate severity)"; "" when nothing was declared.
func treatmentWords(t rank.Treatment) string {
	var parts []string
	for _, a := range t.Additions {
		s := cutParen(a.Label)
		if s == "" {
			s = a.Source
		}
		s += " at " + trimFloat(a.RateKgPerHaYr) + " " + rateText
		if a.DurationYears > 0 {
			s += " for " + yearsWords(a.DurationYears)
		}
		parts = append(parts, s)
	}
	for _, m := range t.Management {
		s := m.Label
		if s == "" {
			s = m.Tag
		}
		if t.Severity != "" && m.Tag == "burned" {
			s += " of " + t.Severity + " severity"
		}
		parts = append(parts, s)
	}
	for _, tag := range t.Context {
		if tag == "fertilized" && len(t.Additions) > 0 {
			continue // the additions name the fertilizer
		}
		if w, ok := contextTagWords[tag]; ok {
			parts = append(parts, w)
		} else {
			parts = append(parts, tag)
		}
	}
	return rank.JoinAnd(parts)
}

// orderedObserved puts clear shifts first, largest relative to their SE,
// so a sentence leads with what moved.
func orderedObserved(obs []study.Observed) []study.Observed {
	out := append([]study.Observed(nil), obs...)
	sort.SliceStable(out, func(i, j int) bool {
		return zScore(out[i]) > zScore(out[j])
	})
	return out
}

func zScore(o study.Observed) float64 {
	if !(o.SE > 0) {
		return math.Inf(1)
	}
	return math.Abs(o.Shift) / o.SE
}

// yearsWords writes a time in years: words for whole numbers up to
// twelve ("one year", "twelve years"), digits otherwise ("2.5 years",
// "20 years").
func yearsWords(y float64) string {
	words := []string{"", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten", "eleven", "twelve"}
	if y == math.Trunc(y) && y >= 1 && int(y) < len(words) {
		return count(y, words[int(y)], "year", "years")
	}
	return count(y, sigG(y, 3), "year", "years")
}

// quoteName puts a comparison's name in typographic quotes.
func quoteName(s string) string { return "“" + plain(s) + "”" }

// plain removes the citation marker runes from user-supplied text, so a
// study's names can never be mistaken for a citation.
func plain(s string) string {
	return strings.Map(func(r rune) rune {
		if r == markOpen || r == markOpenIn || r == markClose {
			return -1
		}
		return r
	}, s)
}

// joinOr is rank.JoinAnd with "or".
func joinOr(s []string) string {
	if len(s) < 2 {
		return rank.JoinAnd(s)
	}
	return strings.Join(s[:len(s)-1], ", ") + " or " + s[len(s)-1]
}

// components maps candidate ids to the single-candidate hypotheses of a
// comparison, which carry each candidate's label, mechanism and references;
// the parts of a pair are looked up here.
func components(c rank.ComparisonResult) map[string]rank.Hypothesis {
	out := map[string]rank.Hypothesis{}
	for _, h := range c.Hypotheses {
		if !h.Pair {
			out[h.ID] = h
		}
	}
	return out
}

// namer words hypotheses using the comparison's singles and the knowledge
// base's source labels.
type namer struct {
	kb    *knowledge.Base
	parts map[string]rank.Hypothesis
	// treated is set when the comparison declares a treatment that acts on
	// the model, so "none" means the treatment acting alone.
	treated bool
}

func newNamer(kb *knowledge.Base, c rank.ComparisonResult) namer {
	return namer{kb: kb, parts: components(c), treated: !c.Treatment.Empty()}
}

// sourceName is a source's label without its parenthetical detail.
func (n namer) sourceName(id string) string {
	if s, ok := n.kb.Source(id); ok {
		return cutParen(s.Label)
	}
	return id
}

// cutParen drops a trailing parenthetical: "nitrate fertilizer (Ca, K or Na
// nitrate)" → "nitrate fertilizer".
func cutParen(s string) string {
	if i := strings.Index(s, " ("); i > 0 {
		return s[:i]
	}
	return s
}

// name is a hypothesis in words with its direction: "more nitrification",
// "an undeclared input of manure", "the declared treatment alone".
func (n namer) name(h rank.Hypothesis) string {
	if len(h.Magnitudes) == 0 {
		return h.Label
	}
	var parts []string
	for _, m := range h.Magnitudes {
		parts = append(parts, n.part(m))
	}
	s := strings.Join(parts, " together with ")
	if h.Duration != nil {
		s += " as a pulse"
	}
	return s
}

// part names one response of a hypothesis with its direction.
func (n namer) part(m rank.Magnitude) string {
	if m.Source != "" {
		return "an undeclared input of " + n.sourceName(m.Source)
	}
	if h, ok := n.parts[m.Candidate]; ok && h.Label != "" {
		return h.Label
	}
	return m.Direction + " " + m.Process
}

// sizes words each part's magnitude for running text: "about 13 % of the
// plant's N supply instead of 73 % (90 % interval at most 53 %)"; the
// parts of a pair are named.
func (n namer) sizes(h rank.Hypothesis) string {
	// A pulse's flux at sampling may be back at baseline, which would read
	// as a contradiction of "more"; its size is the share while it lasts.
	prose := func(m rank.Magnitude) string {
		if h.Duration != nil {
			m.Flux = nil
		}
		return magnitudeWords{m}.prose()
	}
	var s string
	if len(h.Magnitudes) == 1 {
		s = prose(h.Magnitudes[0])
	} else {
		var parts []string
		for _, m := range h.Magnitudes {
			parts = append(parts, n.part(m)+", "+prose(m))
		}
		s = strings.Join(parts, "; and ")
	}
	if d := h.Duration; d != nil {
		s += fmt.Sprintf(", for about %s after the treatment (90 %% interval %s–%s years)", yearsWords(roundYears(d.Best)), trimFloat(roundYears(d.Low)), trimFloat(roundYears(d.High)))
	}
	return s
}

// roundYears rounds a duration for prose: whole years from 3 on, halves
// below.
func roundYears(y float64) float64 {
	if y >= 3 {
		return math.Round(y)
	}
	return math.Round(2*y) / 2
}

// Plain-text and Markdown forms of kg N/ha/yr.
const (
	rateText     = "kg N/ha per year"
	rateMarkdown = "kg N ha⁻¹ yr⁻¹"
)

// named returns the hypotheses worth naming in prose: positive posterior
// at or above notable, at most max, the top one always.
func named(c rank.ComparisonResult, max int) []rank.Hypothesis {
	var out []rank.Hypothesis
	for i, h := range c.Hypotheses {
		if len(out) >= max {
			break
		}
		if i == 0 || (h.Posterior >= notable && !h.Indistinguishable) {
			out = append(out, h)
		}
	}
	return out
}

// leadWords says how far the top explanation is ahead of the second.
func leadWords(top, second float64) string {
	switch {
	case top >= 0.9:
		return "well ahead of everything else"
	case top >= 3*second:
		return "clearly ahead"
	case top >= 1.5*second:
		return "ahead but not decisively"
	}
	return "only marginally ahead"
}

// separation finds the two leading hypotheses a measurement separates
// best, preferring a contrast with the top one: it returns their ids and
// the difference of the predicted means in units of their combined sd.
func separation(m rank.Measurement, leading []string) (a, b string, z float64) {
	var ids []string
	for _, id := range leading {
		if _, ok := m.Predicted[id]; ok {
			ids = append(ids, id)
		}
	}
	score := func(x, y string) float64 {
		px, py := m.Predicted[x], m.Predicted[y]
		s := math.Hypot(px.SD, py.SD)
		if !(s > 0) {
			return 0
		}
		return math.Abs(px.Mean-py.Mean) / s
	}
	if len(ids) < 2 {
		return "", "", 0
	}
	// Contrasts with the top hypothesis first; fall back to any pair when
	// the top one is not separated by at least one combined sd.
	for j := 1; j < len(ids); j++ {
		if s := score(ids[0], ids[j]); s > z {
			a, b, z = ids[0], ids[j], s
		}
	}
	if z >= 1 {
		return a, b, z
	}
	for i := range ids {
		for j := i + 1; j < len(ids); j++ {
			if s := score(ids[i], ids[j]); s > z {
				a, b, z = ids[i], ids[j], s
			}
		}
	}
	return a, b, z
}

// expectation words a predicted measurement shift: "a rise of about 5 ‰
// (± 15 ‰)", "about 1.8 times the control value".
func expectation(m rank.Measurement, p rank.Moments) string {
	if m.Unit == knowledge.UnitLogRatio {
		r := math.Exp(p.Mean)
		switch {
		case r >= 1.15:
			return fmt.Sprintf("about %s times the control value (ln ratio %s ± %s)", sig2(r), plusSigned(p.Mean, 2), signed(p.SD, 2))
		case r <= 1/1.15:
			return fmt.Sprintf("about %d %% below the control value (ln ratio %s ± %s)", int(math.Round(100*(1-r))), plusSigned(p.Mean, 2), signed(p.SD, 2))
		}
		return fmt.Sprintf("little change (ln ratio %s ± %s)", plusSigned(p.Mean, 2), signed(p.SD, 2))
	}
	dec := 1
	switch {
	case math.Abs(p.Mean) < 0.3:
		return fmt.Sprintf("little change (%s ± %s ‰)", plusSigned(p.Mean, dec), signed(p.SD, dec))
	case p.Mean > 0:
		return fmt.Sprintf("a rise of about %s ‰ (± %s)", signed(p.Mean, dec), signed(p.SD, dec))
	}
	return fmt.Sprintf("a fall of about %s ‰ (± %s)", signed(-p.Mean, dec), signed(p.SD, dec))
}

// hypothesisByID finds a hypothesis of a comparison.
func hypothesisByID(c rank.ComparisonResult, id string) (rank.Hypothesis, bool) {
	for _, h := range c.Hypotheses {
		if h.ID == id {
			return h, true
		}
	}
	return rank.Hypothesis{}, false
}

// spread reports, over the hypotheses given, the largest difference of
// predicted means for each observed observable relative to its standard
// error, and the observable where that ratio is largest.
func spread(c rank.ComparisonResult, hs []rank.Hypothesis) (worst study.Observed, ratio float64) {
	for _, o := range c.Observed {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, h := range hs {
			m, ok := h.Predicted[o.Observable]
			if !ok {
				continue
			}
			lo, hi = math.Min(lo, m.Mean), math.Max(hi, m.Mean)
		}
		if !(hi >= lo) || !(o.SE > 0) {
			continue
		}
		if r := (hi - lo) / o.SE; r > ratio || worst.Observable == "" {
			worst, ratio = o, r
		}
	}
	return worst, ratio
}

// siteRefs returns the references of the site template a result used, if
// it used a built-in template.
func siteRefs(r *rank.Result, kb *knowledge.Base) []string {
	sf, ok := kb.Site(r.SiteRef)
	if !ok {
		return nil
	}
	site, err := forward.ParseSite(sf.Name, sf.Data, kb)
	if err != nil {
		return nil
	}
	return site.References
}

func (p patternText) verb(singular, plural string) string {
	if p.plural {
		return plural
	}
	return singular
}

func capitalize(s string) string {
	for i, r := range s {
		return strings.ToUpper(string(r)) + s[i+utf8.RuneLen(r):]
	}
	return s
}

// posteriorCell is a hypothesis's posterior in a table: the number, or,
// for a candidate whose predictions stay within noise of no response
// beyond the treatment, where its probability was counted ("with #2").
func posteriorCell(c rank.ComparisonResult, h rank.Hypothesis) string {
	if !h.Indistinguishable {
		return fmtProb(h.Posterior)
	}
	for i, o := range c.Hypotheses {
		if o.ID == rank.NoneID {
			return "with #" + strconv.Itoa(i+1)
		}
	}
	return "with no change"
}

// fromMemory reports whether a reference has fields not checked against
// the publication, by its status in references.yaml.
func fromMemory(r knowledge.Reference) bool {
	return strings.Contains(strings.ToLower(r.Status), "from memory")
}

// shortCautions are the cautions every format states, in their shortest
// form (the Markdown report gives them in full).
var shortCautions = []string{
	"δ15N evidence is indicative, not proof.",
	"The ranking depends on the assumed isotope effects and on the site model.",
	"Decisions on management or regulation should rest on several lines of evidence, local regulations and licensed professionals.",
}
