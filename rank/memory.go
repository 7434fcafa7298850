package rank

import (
	"nlens/rank/study"
	"nlens/rules"
)

// DrawMemoryBudget is the memory, in bytes, that the nuisance draws of one
// explain run may take (2 GiB): far more than the default draws need
// (a few MB), and within an ordinary laptop's memory.
const DrawMemoryBudget = 2 << 30

// MaxDrawsAbsolute bounds --draws whatever the study (Explain refuses more).
const MaxDrawsAbsolute = 100000

// drawMemoryFactor turns the floats counted by DrawBytes into the memory a
// run takes. Measured as the growth of the peak resident size
// (/usr/bin/time -f %M) between 800 and 3200 (or 1600 and 6400) draws of
// explain --format json, which DrawBytes without this factor predicts as
// 58.1 kB per draw for the demo study (14 single candidates with a knob,
// 3 observables): one comparison took 59 kB per draw (1.02 times), four
// comparisons 114 kB on one core (2.0 times: the garbage collector lets
// the heap grow to twice what is live) and 156 kB on two (2.7 times: two
// comparisons run side by side). 3 covers all three; at the cap so set,
// the demo took 0.72 GiB and four comparisons 1.47 GiB. Measured again on
// the version-2 demo (30 candidates with a knob, 4 observables; 155.8 kB
// per draw by DrawBytes without the factor): the peak grew by 156.6 kB
// per draw between 400 and 1600 draws (1.005 times), so the factor holds.
const drawMemoryFactor = 3

// DrawBytes estimates the memory, in bytes, that each nuisance draw costs
// when explaining st with the candidates of set. Every single candidate
// with a knob keeps, for each draw, a predicted shift of each observable
// at each fine point, a log weight per fine point and its coarse-node
// predictions, all 8-byte floats; the largest comparison counts, times
// drawMemoryFactor. Pairs use at most pairDraws draws, so they cost
// nothing per draw beyond that.
func DrawBytes(st *study.Study, set *rules.Set) int64 {
	var worst int64
	for _, u := range units(st) {
		var no int64
		for _, i := range u.idx {
			no += int64(len(st.Comparisons[i].Observed))
		}
		var floats int64
		for _, cand := range set.Candidates {
			if cand.Magnitude.Prior == "" {
				continue // none: no knob, nothing to evaluate
			}
			floats += fine1*(no+1) + int64(nodesFor(cand.Magnitude.Prior, false))*no
		}
		worst = max(worst, 8*floats)
	}
	return drawMemoryFactor * worst
}

// MaxDraws is the most draws whose estimated memory (DrawBytes) fits in
// DrawMemoryBudget, and at most MaxDrawsAbsolute.
func MaxDraws(st *study.Study, set *rules.Set) int {
	per := DrawBytes(st, set)
	if per <= 0 {
		return MaxDrawsAbsolute
	}
	return int(min(DrawMemoryBudget/per, MaxDrawsAbsolute))
}
