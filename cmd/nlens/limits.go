package main

import (
	"fmt"

	"nlens/knowledge/input"
	"nlens/rank"
	"nlens/rank/study"
	"nlens/rules"
)

// notFinite is the internal error (exit 2) for a result that holds a NaN
// or an infinity: it is refused before anything is printed, and the
// message names the quantity and why it is not a number.
func notFinite(err error) error {
	return internal{fmt.Errorf("the result holds a quantity that is not a finite number, so nothing was printed: %w; please report this with the input files", err)}
}

// maxModelErrorPermil bounds --model-error: a structural error of 100 ‰
// already dwarfs every natural-abundance shift (DESIGN §2 keeps |δ15N| ≤
// 100 ‰), so larger values say nothing more and, near 1e154, squared
// variances overflow.
const maxModelErrorPermil = 100

func checkModelError(sigma float64) error {
	if !(sigma > 0 && sigma <= maxModelErrorPermil) {
		return badf("--model-error must be a number of ‰ above 0 and at most %d, got %g", maxModelErrorPermil, sigma)
	}
	return nil
}

// checkDraws refuses a draw count (of the flag named) whose estimated
// memory (rank.DrawBytes) exceeds rank.DrawMemoryBudget, before any
// computation.
func checkDraws(flag string, draws int, st *study.Study, set *rules.Set) error {
	if limit := rank.MaxDraws(st, set); draws > limit {
		per := rank.DrawBytes(st, set)
		return badf("%s %d would need about %s of memory for this study (%s per draw); at most %d draws fit in the %s nlens allows",
			flag, draws, input.SizeText(int64(draws)*per), input.SizeText(per), limit, input.SizeText(rank.DrawMemoryBudget))
	}
	return nil
}

// maxYears bounds simulate --years. forward's matrix exponential (scaling
// and squaring with a Padé approximant, Higham 2005) squares about
// log2(‖K‖·t) times, and its relative error grows in proportion to ‖K‖·t.
// Measured against the new steady state, which is the exact limit once the
// change has settled (horizon_test.go), the largest relative pool error on
// the stiffest template, tropical-lowland-forest, was 1e-6 at 1e8 years
// and 8e-6 at 1e9, and on forward/testdata/stiff.yaml, a hundred times
// worse, 5e-7 at 1e6 and 4e-6 at 1e7. At 1e6 years pools are therefore
// good to about 1e-6 (they are printed to 4 digits) for sites a hundred
// times stiffer than any template, while every template has settled to
// within 1e-9 of its new steady state by 1e4 years: beyond the bound, the
// new steady state (simulate without --years) is the answer.
const maxYears = 1e6

func checkYears(years float64) error {
	if !(years >= 0 && years <= maxYears) {
		return badf("--years must be between 0 and %g (beyond that the matrix exponential loses accuracy; leave --years out for the new steady state), got %g", maxYears, years)
	}
	return nil
}
