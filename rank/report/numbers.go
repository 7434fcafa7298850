package report

import (
	"math"
	"strconv"
	"strings"
)

// This file holds every number format of the reports: signs and decimals
// of shifts, probabilities, p values, shares as percentages, ratios, and
// the settings of the Methods table. Words chosen from numbers live in
// wording.go.

// decimalsFor shows small numbers with enough digits.
func decimalsFor(v float64) int {
	switch a := math.Abs(v); {
	case a == 0 || a >= 1:
		return 3
	case a >= 0.01:
		return 4
	}
	return 7
}

// pValue is "p = 0.27" or "p < 0.001".
func pValue(p float64) string {
	s := fmtP(p)
	if strings.HasPrefix(s, "<") {
		return "p " + s
	}
	return "p = " + s
}

// sig2 prints two significant digits (three at or above 100).
func sig2(v float64) string {
	if v >= 100 {
		return strconv.FormatFloat(v, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'g', 2, 64)
}

func fmtProb(p float64) string {
	switch {
	case p >= 0.995:
		return "> 0.99"
	case p < 0.005:
		return "< 0.01"
	}
	return strconv.FormatFloat(p, 'f', 2, 64)
}

func fmtP(p float64) string {
	if p < 0.001 {
		return "< 0.001"
	}
	return strconv.FormatFloat(p, 'f', 2, 64)
}

func pm(mean, sd float64, dec int) string {
	return plusSigned(mean, dec) + "±" + signed(sd, dec)
}

// pctText prints a share as a percentage with two significant digits
// (three at or above 99.5 %, so 0.996 is not rounded to 100 %).
func pctText(v float64) string {
	p := 100 * v
	switch {
	case p >= 99.5:
		return strconv.FormatFloat(p, 'f', 1, 64)
	case p >= 10:
		return strconv.FormatFloat(p, 'f', 0, 64)
	case p >= 1:
		return strconv.FormatFloat(p, 'f', 1, 64)
	}
	return strconv.FormatFloat(p, 'g', 2, 64)
}

// trimFloat prints a setting with up to 6 significant digits.
func trimFloat(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "n/a"
	}
	return strconv.FormatFloat(v, 'g', 6, 64)
}

// signed formats a δ or shift with sign and fixed decimals; a non-finite
// value prints as "n/a" so that NaN or Inf never reach a user.
func signed(v float64, decimals int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "n/a"
	}
	if v == 0 || math.Abs(v) < 0.5*math.Pow(10, -float64(decimals)) {
		v = 0
	}
	return strconv.FormatFloat(v, 'f', decimals, 64)
}

// plusSigned is signed with an explicit + for positive values.
func plusSigned(v float64, decimals int) string {
	s := signed(v, decimals)
	if v > 0 && s != "n/a" && strings.Trim(s, "0.") != "" {
		return "+" + s
	}
	return s
}

// num formats a positive quantity with about four significant digits.
func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "n/a"
	}
	switch a := math.Abs(v); {
	case a == 0:
		return "0"
	case a >= 1e5 || a < 1e-3:
		return strconv.FormatFloat(v, 'g', 3, 64)
	case a >= 100:
		return strconv.FormatFloat(v, 'f', 0, 64)
	case a >= 10:
		return strconv.FormatFloat(v, 'f', 1, 64)
	case a >= 1:
		return strconv.FormatFloat(v, 'f', 2, 64)
	}
	return strconv.FormatFloat(v, 'f', 3, 64)
}

// finite replaces a non-finite value by nil for JSON.
func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// percent prints a fraction as a whole percentage: 0.648 → "65 %"; below
// 1 % it keeps one significant digit ("0.4 %").
func percent(f float64) string {
	p := 100 * math.Abs(f)
	if p < 1 {
		return strconv.FormatFloat(p, 'g', 1, 64) + " %"
	}
	return strconv.FormatFloat(math.Round(p), 'f', 0, 64) + " %"
}

// count writes a whole number with its noun in the right number: "1 bit",
// "0.64 bits", "3 further candidates".
func count(n float64, text, singular, plural string) string {
	if n == 1 {
		return text + " " + singular
	}
	return text + " " + plural
}

// bits writes an information gain with its unit: "0.62 bits", "1 bit".
func bits(b float64) string {
	s := sig2(b)
	if s == "1" {
		return "1 bit"
	}
	return s + " bits"
}

// percentRange writes a range of fractions as percentages with up to
// three significant digits: [0.2, 0.5] → "20–50 %".
func percentRange(r []float64) string {
	if len(r) != 2 {
		return ""
	}
	return sigG(100*r[0], 3) + "–" + sigG(100*r[1], 3) + " %"
}

// sigG prints a value with at most n significant digits, trailing zeros
// dropped (settings, ε and δ in the knowledge tables).
func sigG(v float64, n int) string { return strconv.FormatFloat(v, 'g', n, 64) }

// fixed prints a value with a fixed number of decimals (bits, shares in
// site tables).
func fixed(v float64, decimals int) string { return strconv.FormatFloat(v, 'f', decimals, 64) }

// sig3 formats a value with about three significant digits (at least two
// decimals for δ-sized numbers).
func sig3(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "n/a"
	}
	if math.Abs(v) < 100 {
		return fixed(v, 2)
	}
	return sigG(v, 4)
}
