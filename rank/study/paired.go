package study

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"

	"nlens/forward"
)

// noBlocks is pairedObserve's reason when the samples carry no blocks at
// all: an unpaired design, nothing to warn about.
const noBlocks = "no blocks"

// pairedObserve computes the shift of a paired or blocked design from the
// samples of both groups: each block's treatment mean minus its control
// mean (differences of logarithms for pools and fluxes), then the mean of
// those differences and its standard error sd(d)/√b with b − 1 degrees of
// freedom (the paired-sample t statistic; Zar 2010, Biostatistical
// Analysis, 5th ed., §9.1; Snedecor & Cochran 1989, Statistical Methods,
// 8th ed., §6.3). Several samples of one group in a block are averaged
// first. It returns a reason instead when the design cannot be read as
// paired: noBlocks when no sample has a block, otherwise what is missing.
func pairedObserve(obs string, ctl, trt []Sample) (Observed, string) {
	if len(ctl) == 0 || len(trt) == 0 {
		return Observed{}, noBlocks
	}
	blocked := func(s Sample) bool { return s.Block != "" }
	nc, nt := countFunc(ctl, blocked), countFunc(trt, blocked)
	switch {
	case nc == 0 && nt == 0:
		return Observed{}, noBlocks
	case nc < len(ctl) || nt < len(trt):
		return Observed{}, "some samples have no block"
	}
	logRatio := forward.LogRatioName(obs)
	cm, corder := blockMeans(ctl, logRatio)
	tm, _ := blockMeans(trt, logRatio)
	if cm == nil || tm == nil {
		return Observed{}, "a pool or flux value is not positive"
	}
	var diffs []float64
	var unmatched []string
	for _, b := range corder {
		if v, ok := tm[b]; ok {
			diffs = append(diffs, v-cm[b])
		} else {
			unmatched = append(unmatched, b)
		}
	}
	for b := range tm {
		if _, ok := cm[b]; !ok {
			unmatched = append(unmatched, b)
		}
	}
	if len(unmatched) > 0 {
		slices.Sort(unmatched)
		return Observed{}, fmt.Sprintf("block %q is in only one of the groups", unmatched[0])
	}
	if len(diffs) < 2 {
		return Observed{}, "fewer than 2 blocks"
	}
	mean, sd := stat.MeanStdDev(diffs, nil)
	b := float64(len(diffs))
	o := observe(obs, statOf(ctl), statOf(trt))
	o.Shift, o.SE, o.DF, o.Blocks = mean, sd/math.Sqrt(b), b-1, len(diffs)
	if !(o.SE > 0) {
		return Observed{}, "the within-block differences are all equal, so they give no standard error"
	}
	return o, ""
}

// blockMeans averages each block's samples (their logarithms for pools and
// fluxes); order lists the blocks as they first appear. It returns nil if a
// logarithm is undefined.
func blockMeans(ss []Sample, logs bool) (means map[string]float64, order []string) {
	sum, n := map[string]float64{}, map[string]int{}
	for _, s := range ss {
		v := s.Value
		if logs {
			if !(v > 0) {
				return nil, nil
			}
			v = math.Log(v)
		}
		if _, seen := n[s.Block]; !seen {
			order = append(order, s.Block)
		}
		sum[s.Block] += v
		n[s.Block]++
	}
	means = map[string]float64{}
	for b, v := range sum {
		means[b] = v / float64(n[b])
	}
	return means, order
}

// statOf is the mean, sd and n of samples.
func statOf(ss []Sample) Stat {
	v := make([]float64, len(ss))
	for i, s := range ss {
		v[i] = s.Value
	}
	m, sd := stat.MeanStdDev(v, nil)
	return Stat{Mean: m, SD: sd, N: len(ss)}
}

func countFunc[T any](s []T, f func(T) bool) int {
	n := 0
	for _, v := range s {
		if f(v) {
			n++
		}
	}
	return n
}
