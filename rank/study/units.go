package study

import (
	"fmt"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"nlens/forward"
)

// Units of δ15N values in a samples file.
const (
	UnitPermil      = "permil" // ‰ vs AIR
	UnitAtomPercent = "atom%"  // 15N atom percent, converted to ‰ vs AIR
)

// AtomPercentConversion names the conversion of 15N atom percent to δ15N,
// for the Methods of a report: exact for two isotopes (FACTS §4.1), done by
// forward.FromAtomPercent.
const AtomPercentConversion = "15N atom % converted to δ15N (‰ vs AIR) exactly: x = atom %/100, R = x/(1 − x), δ15N = (R/R_AIR − 1)·1000, R_AIR = 0.0036765 (Junk & Svec 1958)"

// unitAliases are the spellings of each unit that a samples file or the
// long form's unit may use (compared in lower case, spaces collapsed). An
// empty unit cell means permil.
var unitAliases = map[string][]string{
	UnitPermil:      {"", "‰", "permil", "per mil", "per mille", "permille", "o/oo", "‰ air", "‰ vs air", "‰ vsmow", "‰ vs vsmow"},
	UnitAtomPercent: {"atom%", "atom %", "atom-%", "atom percent", "at%", "at %", "at-%", "at.%", "at. %", "at.-%", "atom% 15n", "atom % 15n", "at% 15n"},
}

// acceptedUnits lists the units in messages.
const acceptedUnits = "permil (‰, the default) or atom% (15N atom percent)"

// deltaUnit returns UnitPermil or UnitAtomPercent for a unit as written, or
// "" when it is neither.
func deltaUnit(s string) string {
	s = strings.ToLower(strings.Join(strings.Fields(s), " "))
	for _, u := range []string{UnitPermil, UnitAtomPercent} {
		if slices.Contains(unitAliases[u], s) {
			return u
		}
	}
	return ""
}

// reNumber is a number as a person writes it in a table: decimal digits
// with an optional sign, decimal mark and exponent. Hexadecimal, "Inf",
// "NaN" and digit separators are not numbers here.
var reNumber = regexp.MustCompile(`^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$`)

// parseNumber reads a decimal number; with decimalComma the decimal mark is
// a comma (and a point is refused). A minus sign may be the Unicode minus
// (U+2212), as typeset tables write it.
func parseNumber(s string, decimalComma bool) (float64, bool) {
	s = strings.TrimSpace(s)
	s = strings.Replace(s, "\u2212", "-", 1)
	if decimalComma {
		if strings.Contains(s, ".") {
			return 0, false
		}
		s = strings.Replace(s, ",", ".", 1)
	}
	if !reNumber.MatchString(s) {
		return 0, false
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false
	}
	return v, true
}

// fromAtomPercent converts a 15N atom percent to δ15N (‰ vs AIR) with
// forward.FromAtomPercent, or says why it cannot.
func fromAtomPercent(v float64) (float64, string) {
	if !(v > 0 && v < 100) {
		return 0, fmt.Sprintf("a 15N atom percent must be between 0 and 100, got %g", v)
	}
	return forward.FromAtomPercent(v), ""
}
