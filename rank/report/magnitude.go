package report

import (
	"fmt"
	"math"
	"strings"

	"nlens/rank"
)

// Magnitudes are worded from their typed fields (kind, direction, bounds,
// flux): a share as "takes 62 % of the NH4+ outflow, up from 21 %" and the
// flux it implies as a ratio to the baseline flux. A rate-constant
// multiplier is never shown (DESIGN §4).

// isShare reports whether a magnitude is a share (0–1).
func isShare(m rank.Magnitude) bool { return m.Kind != "input" }

// value prints one value of the magnitude with its unit.
func (m magnitudeWords) value(v float64) string {
	if isShare(m.Magnitude) {
		return pctText(v) + " %"
	}
	return sig2(v) + " kg N/ha/yr"
}

// magnitudeWords words a magnitude.
type magnitudeWords struct{ rank.Magnitude }

// interval prints the 90 % interval, or the open side where it reaches a
// prior bound: "45–80 %", "≥ 45 %", "≤ 80 %".
func (m magnitudeWords) interval() string { return m.intervalIn(false) }

// intervalWords is interval for running text: "45–80 %", "at least
// 45 %", "at most 80 %".
func (m magnitudeWords) intervalWords() string { return m.intervalIn(true) }

func (m magnitudeWords) intervalIn(prose bool) string {
	atLeast, atMost := "≥ ", "≤ "
	if prose {
		atLeast, atMost = "at least ", "at most "
	}
	switch m.AtBound {
	case "high":
		return atLeast + m.value(m.Low)
	case "low":
		return atMost + m.value(m.High)
	case "both":
		return "anywhere in " + m.value(m.PriorLow) + "–" + m.value(m.PriorHigh)
	}
	return m.span(m.Low, m.High)
}

// span prints a range with its unit once: "36–66 %", "3–25 kg N/ha/yr".
func (m magnitudeWords) span(lo, hi float64) string {
	if isShare(m.Magnitude) {
		return pctText(lo) + "–" + pctText(hi) + " %"
	}
	return sig2(lo) + "–" + sig2(hi) + " kg N/ha/yr"
}

// modes words a two-mode posterior: "either about 52 % (90 % of that mode
// in 36–66 %) or about 86 % (78–90 %)"; "" for one mode.
func (m magnitudeWords) modes() string {
	if len(m.Modes) != 2 {
		return ""
	}
	a, b := m.Modes[0], m.Modes[1]
	return "either about " + m.value(a.Best) + " (" + m.span(a.Low, a.High) + ") or about " + m.value(b.Best) + " (" + m.span(b.Low, b.High) + ")"
}

// fluxWords says what the magnitude means for its flux at the time of
// sampling: "its flux about 85 % lower than at baseline"; "" where there
// is no baseline flux to compare with.
func (m magnitudeWords) fluxWords() string {
	f := m.Flux
	if f == nil || !f.HasRatio || m.Kind == "input" {
		return ""
	}
	if absoluteFlux(f) {
		return "that flux about " + sig2(f.Median) + " kg N/ha/yr against " + sig2(f.Baseline) + " at baseline"
	}
	s := "that flux " + changeAgainst(f.Ratio, "at baseline")
	// A smaller share of a larger throughput (or the reverse) moves the
	// flux against the direction of the share; say why, so it does not
	// read as a contradiction.
	switch {
	case m.Direction == "less" && f.Ratio >= 1.05:
		s += ", as more N now passes through the pool"
	case m.Direction == "more" && f.Ratio <= 1/1.05:
		s += ", as less N now passes through the pool"
	}
	return s
}

// absoluteFluxRatio: from this ratio on, a flux is said in kg N/ha/yr
// beside its baseline rather than as a ratio: a process nearly absent
// before ("flux 1759-fold") is better read as "17 kg N/ha/yr, was 0.01".
const absoluteFluxRatio = 20

func absoluteFlux(f *rank.FluxImplied) bool {
	return f.Ratio >= absoluteFluxRatio && f.Median > 0 && !math.IsInf(f.Median, 0)
}

// short is the compact form for tables: "62% (45–80%), was 21%;
// flux 2.4-fold".
func (m magnitudeWords) short() string {
	var b strings.Builder
	if md := m.modes(); md != "" {
		// A two-mode posterior has no one best value: "52% (36–66%) or 86% (78–90%)".
		b.WriteString(strings.NewReplacer("either ", "", "about ", "").Replace(md))
	} else {
		b.WriteString(m.value(m.Best))
		b.WriteString(" (" + m.interval() + ")")
	}
	if m.Kind != "input" || m.Baseline > 0 {
		b.WriteString(", was " + m.value(m.Baseline))
	}
	if f := m.Flux; f != nil && f.HasRatio && m.Kind != "input" {
		if absoluteFlux(f) {
			b.WriteString("; flux " + sig2(f.Median) + " kg N/ha/yr, was " + sig2(f.Baseline))
		} else {
			b.WriteString("; flux " + changeShort(f.Ratio))
		}
	}
	// Numbers keep their signs and units in one word, so a wrapped table
	// cell never breaks "73 %" or "≤ 53 %" across lines.
	return strings.NewReplacer(" %", "%", "≤ ", "≤", "≥ ", "≥", " kg N/ha/yr", "\u00a0kg\u00a0N/ha/yr").Replace(b.String())
}

// prose is the form for running text, after the hypothesis's name: "about
// 62 % of the NH4+ outflow instead of 21 % (90 % interval 45–80 %), the
// flux about 2.4 times as high as at baseline".
func (m magnitudeWords) prose() string {
	var s string
	switch {
	case m.Kind == "input" && m.Baseline > 0:
		s = fmt.Sprintf("about %s instead of %s (90 %% interval %s)", m.value(m.Best), m.value(m.Baseline), m.intervalWords())
	case m.Kind == "input":
		s = fmt.Sprintf("about %s (90 %% interval %s)", m.value(m.Best), m.intervalWords())
	case m.modes() != "":
		s = fmt.Sprintf("%s of %s instead of %s (two separate modes, each with its 90 %% interval)", m.modes(), m.Of, m.value(m.Baseline))
	default:
		s = fmt.Sprintf("about %s of %s instead of %s (90 %% interval %s)", m.value(m.Best), m.Of, m.value(m.Baseline), m.intervalWords())
	}
	if fw := m.fluxWords(); fw != "" {
		s += ", with " + fw
	}
	return s
}

// MagnitudeText prints a hypothesis's magnitudes compactly, in the order of
// its parts.
func MagnitudeText(h rank.Hypothesis) string {
	var parts []string
	for _, m := range h.Magnitudes {
		parts = append(parts, magnitudeWords{m}.short())
	}
	if d := h.Duration; d != nil {
		parts = append(parts, "lasting "+trimFloat(roundYears(d.Best))+" y ("+trimFloat(roundYears(d.Low))+"–"+trimFloat(roundYears(d.High))+" y)")
	}
	return strings.Join(parts, "; ")
}

// shortLabel names a hypothesis: its label, which carries the direction.
func shortLabel(h rank.Hypothesis) string { return h.Label }
