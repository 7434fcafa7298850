package forward

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// Tolerances used by the tests, each with its reason.
const (
	// tolWorked is for published or hand-derived worked values quoted to
	// three decimals (FACTS.md §5 gives them to 1e-3).
	tolWorked = 1e-3
	// tolRel is the relative agreement the issue asks of the compartment
	// model against closed forms and conservation laws.
	tolRel = 1e-9
)

// near reports whether got is within tol of want (absolute).
func near(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

// nearRel reports whether got is within rel of want, relative to |want|
// (absolute below a floor of 1 to guard zeros).
func nearRel(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Max(math.Abs(want), 1)
}

func checkAbs(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if !near(got, want, tol) {
		t.Errorf("%s: got %.6f, want %.6f (±%g)", name, got, want, tol)
	}
}

func asCondition(err error, target **ConditionError) bool { return errors.As(err, target) }

func containsAll(s string, parts ...string) bool {
	for _, p := range parts {
		if !strings.Contains(s, p) {
			return false
		}
	}
	return true
}
