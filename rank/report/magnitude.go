package report

import (
	"fmt"
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
func (m magnitudeWords) interval() string {
	if len(m.Modes) == 2 {
		a, b := m.Modes[0], m.Modes[1]
		return "two modes: " + m.value(a.Best) + " (" + m.value(a.Low) + "–" + m.value(a.High) + ") or " + m.value(b.Best) + " (" + m.value(b.Low) + "–" + m.value(b.High) + ")"
	}
	switch m.AtBound {
	case "high":
		return "≥ " + m.value(m.Low)
	case "low":
		return "≤ " + m.value(m.High)
	case "both":
		return "anywhere in " + m.value(m.PriorLow) + "–" + m.value(m.PriorHigh)
	}
	if isShare(m.Magnitude) {
		return pctText(m.Low) + "–" + pctText(m.High) + " %"
	}
	return sig2(m.Low) + "–" + sig2(m.High) + " kg N/ha/yr"
}

// short is the compact form for tables: "62 % (45–80 %), was 21 %;
// flux ×2.4".
func (m magnitudeWords) short() string {
	var b strings.Builder
	b.WriteString(m.value(m.Best))
	b.WriteString(" (" + m.interval() + ")")
	if m.Kind != "input" || m.Baseline > 0 {
		b.WriteString(", was " + m.value(m.Baseline))
	}
	if f := m.Flux; f != nil && f.HasRatio && m.Kind != "input" {
		b.WriteString("; flux ×" + sig2(f.Ratio))
	}
	return b.String()
}

// sentence is the full form: "nitrification takes 62 % (90 % interval
// 45–80 %) of the NH4+ outflow, up from 21 %; its flux is about 2.4 times
// the baseline (1.6–3.9) at the time of sampling".
func (m magnitudeWords) sentence(process string) string {
	var s string
	switch m.Kind {
	case "input":
		if m.Baseline > 0 {
			s = fmt.Sprintf("%s of about %s (90 %% interval %s), against %s in the site model", process, m.value(m.Best), m.interval(), m.value(m.Baseline))
		} else {
			s = fmt.Sprintf("%s of about %s (90 %% interval %s)", process, m.value(m.Best), m.interval())
		}
	default:
		dir := "up"
		if m.Direction == "less" {
			dir = "down"
		}
		s = fmt.Sprintf("%s taking %s (90 %% interval %s) of %s, %s from %s", process, m.value(m.Best), m.interval(), m.Of, dir, m.value(m.Baseline))
	}
	if f := m.Flux; f != nil && f.HasRatio && m.Kind != "input" {
		s += fmt.Sprintf("; the flux is then about %s times its baseline (%s–%s)", sig2(f.Ratio), sig2(f.RatioLow), sig2(f.RatioHi))
	}
	return s
}

// prose is the form for running text, after the hypothesis's name: "about
// 62 % of the NH4+ outflow (90 % interval 45–80 %) instead of 21 %, the
// flux about 2.4 times its baseline".
func (m magnitudeWords) prose() string {
	var s string
	switch {
	case m.Kind == "input" && m.Baseline > 0:
		s = fmt.Sprintf("about %s (90 %% interval %s) instead of %s", m.value(m.Best), m.interval(), m.value(m.Baseline))
	case m.Kind == "input":
		s = fmt.Sprintf("about %s (90 %% interval %s)", m.value(m.Best), m.interval())
	default:
		s = fmt.Sprintf("about %s of %s (90 %% interval %s) instead of %s", m.value(m.Best), m.Of, m.interval(), m.value(m.Baseline))
	}
	if f := m.Flux; f != nil && f.HasRatio && m.Kind != "input" {
		s += fmt.Sprintf(", the flux about %s times its baseline", sig2(f.Ratio))
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
	return strings.Join(parts, "; ")
}

// shortLabel names a hypothesis: its label, which carries the direction.
func shortLabel(h rank.Hypothesis) string { return h.Label }
