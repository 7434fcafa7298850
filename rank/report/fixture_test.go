package report

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"

	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/study"
	"nlens/rules"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// golden compares got with testdata/name, or rewrites the file with
// -update. Golden files are regression pins: they record what the renderer
// wrote when they were last reviewed, not independent truths.
func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./rank/report -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file (run go test ./rank/report -update after reviewing the change)\ngot:\n%s", name, clip(got))
	}
}

func clip(b []byte) string {
	if len(b) > 3000 {
		return string(b[:3000]) + "\n…"
	}
	return string(b)
}

func testKB(t *testing.T) *knowledge.Base {
	t.Helper()
	kb, err := knowledge.Default()
	if err != nil {
		t.Fatal(err)
	}
	return kb
}

func f64(v float64) *float64 { return &v }

func mo(mean, sd float64) rank.Moments { return rank.Moments{Mean: mean, SD: sd} }

// The fixtures below are hand-built results: every number in them is an
// invented input chosen to exercise one branch of the renderers (a clear
// leader, a pair, a declared source, a long-standing contrast, a pool
// observable, a failed fit, "none" leading). They do not come from the
// engine, so the goldens change only when the renderers do.

func obs(name string, ctl, trt float64, sdC, sdT float64, n int, logRatio bool) study.Observed {
	shift := trt - ctl
	if logRatio {
		shift = math.Log(trt / ctl)
	}
	se := math.Sqrt(sdC*sdC/float64(n) + sdT*sdT/float64(n))
	if logRatio {
		se = math.Sqrt(sdC*sdC/(ctl*ctl)/float64(n) + sdT*sdT/(trt*trt)/float64(n))
	}
	return study.Observed{Observable: name, Shift: shift, SE: se, DF: float64(2*n - 2),
		Control: study.Stat{Mean: ctl, SD: sdC, N: n}, Treatment: study.Stat{Mean: trt, SD: sdT, N: n}, LogRatio: logRatio}
}

func factor(cand string, best, lo, hi, probMore float64) rank.Magnitude {
	return rank.Magnitude{Candidate: cand, Best: best, Low: lo, High: hi, Unit: "× rate", Baseline: 1, ProbMore: probMore}
}

func method(draws int) rank.Method {
	return rank.Method{Draws: draws, ModelErrorPermil: 0.5, ModelErrorLog: 0.25, LevelSDPermil: 2, LevelSDLog: 0.5,
		CoarseNodes: 13, FinePoints: 121, PairCoarseNodes: 9, PairFinePoints: 41, PairsFrom: 4, NoneShare: 0.3, PairPrior: 0.15,
		SamplesPerLeading: 32, HermiteNodes: 10}
}

// evenYears is 0, step, …, (n−1)·step.
func evenYears(n int, step float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = float64(i) * step
	}
	return out
}

// approach is a first-order rise to level with time constant tau (years),
// the shape of a compartment model's response; used for fixture paths.
func approach(ts []float64, level, tau float64) []float64 {
	out := make([]float64, len(ts))
	for i, t := range ts {
		out[i] = level * (1 - math.Exp(-t/tau))
	}
	return out
}

// transientResult: one comparison three years after a harvest, a clear
// leader (more nitrification), a pair, an undeclared source and none.
// Its references include craine2015 (a candidate's) and craine2015b (the
// temperate-grassland template's), which must be cited as 2015a and 2015b.
func transientResult() *rank.Result {
	years := evenYears(13, 0.5)
	nitr := rank.Hypothesis{ID: "nitrification", Label: "nitrification",
		Mechanism: "nitrifiers discriminate against 15N, so faster nitrification enriches the NH4+ left behind and makes depleted nitrate that can be lost",
		Refs:      []string{"hogberg1997", "mariotti1981", "craine2015"}, Tests: []string{"soil-ammonium-d15n"},
		Posterior: 0.58, PriorProb: 0.14, LogEvidence: -3.1,
		Adjustments: []rules.Adjustment{{Rule: "disturbance-nitrification", Factor: 2, Reason: "removing plant uptake releases NH4+ to nitrifiers", Refs: []string{"pardo2002"}, Status: "confirmed"}},
		Magnitudes:  []rank.Magnitude{factor("nitrification", 2.6, 1.5, 4.4, 0.97)},
		Predicted:   map[string]rank.Moments{"foliage": mo(1.3, 0.45), "soil": mo(0.02, 0.04), "soil-nitrate": mo(5.9, 1.4)},
		Fit:         rank.Fit{Chi2: 1.2, DOF: 3, P: 0.75}, MaxSignal: 6}
	denit := rank.Hypothesis{ID: "denitrification", Label: "denitrification",
		Mechanism: "denitrifiers remove 15N-depleted N as gas, enriching the nitrate left behind",
		Refs:      []string{"houlton2006", "granger2008"}, Posterior: 0.04, PriorProb: 0.07,
		Magnitudes: []rank.Magnitude{factor("denitrification", 6.1, 2.2, 9.6, 0.99)},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.0, 0.4), "soil": mo(0.05, 0.03), "soil-nitrate": mo(3.4, 1.2)},
		Fit:        rank.Fit{Chi2: 3.9, DOF: 3, P: 0.27}, MaxSignal: 4}
	pair := rank.Hypothesis{ID: "nitrification+denitrification", Label: "nitrification + denitrification",
		Mechanism: nitr.Mechanism + "; " + denit.Mechanism, Refs: append(append([]string{}, nitr.Refs...), denit.Refs...),
		Posterior: 0.17, PriorProb: 0.02, Pair: true,
		Magnitudes: []rank.Magnitude{factor("nitrification", 2.1, 1.2, 3.9, 0.93), factor("denitrification", 1.3, 0.3, 7.9, 0.55)},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.5, 0.5), "soil": mo(0.03, 0.05), "soil-nitrate": mo(6.3, 1.5)},
		Fit:        rank.Fit{Chi2: 0.8, DOF: 3, P: 0.85}, MaxSignal: 6}
	waste := rank.Hypothesis{ID: "source:wastewater", Label: "new input of septic or sewage effluent nitrate",
		Mechanism: "septic or sewage effluent nitrate enters with its own δ15N and pulls the pools it feeds toward it",
		Refs:      []string{"kendall1998", "bateman2007"}, Posterior: 0.11, PriorProb: 0.01,
		Magnitudes: []rank.Magnitude{{Candidate: "source:wastewater", Best: 12, Low: 5.1, High: 31, Unit: "kg N/ha/yr", ProbMore: 1}},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.1, 0.4), "soil": mo(0.02, 0.01), "soil-nitrate": mo(6.6, 1.5)},
		Fit:        rank.Fit{Chi2: 0.9, DOF: 3, P: 0.82}, MaxSignal: 5}
	none := rank.Hypothesis{ID: "none", Label: "no change in N cycling", Mechanism: "the treatments differ by sampling noise only",
		Posterior: 0.06, PriorProb: 0.3, Predicted: map[string]rank.Moments{"foliage": mo(0, 0), "soil": mo(0, 0), "soil-nitrate": mo(0, 0)},
		Fit: rank.Fit{Chi2: 26, DOF: 3, P: 0.00001}}
	mine := rank.Hypothesis{ID: "mineralization", Label: "mineralization", Refs: []string{"philben2018"}, Posterior: 0, PriorProb: 0.07,
		Magnitudes: []rank.Magnitude{factor("mineralization", 1.1, 0.5, 2.0, 0.6)}, Indistinguishable: true,
		Predicted: map[string]rank.Moments{"foliage": mo(0.1, 0.1), "soil": mo(0, 0.01), "soil-nitrate": mo(0.2, 0.3)},
		Fit:       rank.Fit{Chi2: 24, DOF: 3, P: 0.00003}, MaxSignal: 0.4}
	leading := []string{"nitrification", "nitrification+denitrification", "source:wastewater", "none"}
	return &rank.Result{Version: "0.0.0-test", Seed: 7, Draws: 8, ModelError: 0.5,
		StudyTitle: "Harvest trial (test fixture)", StudyFile: "study.yaml", SiteRef: "temperate-grassland", SiteID: "temperate-grassland",
		SiteDescription: "test description of the site", Method: method(8),
		Comparisons: []rank.ComparisonResult{{
			Name: "harvested vs intact", Years: f64(3),
			Observed: []study.Observed{
				obs("foliage", 0.9, 2.4, 0.8, 0.9, 6, false),
				obs("soil", 3.4, 3.5, 0.6, 0.7, 6, false),
				obs("soil-nitrate", -12.1, -6.0, 2.2, 2.6, 5, false),
			},
			Hypotheses: []rank.Hypothesis{nitr, pair, waste, none, denit, mine},
			Leading:    leading,
			Measurements: []rank.Measurement{
				{ID: "soil-ammonium-d15n", Label: "δ15N of soil NH4+", Observable: "soil-ammonium", Unit: "permil", Bits: 0.61, Cost: 2,
					Method: "KCl extraction, diffusion, EA-IRMS", NoiseSD: 1.5,
					Predicted: map[string]rank.Moments{"nitrification": mo(6.5, 2.9), "nitrification+denitrification": mo(5.9, 3.1), "source:wastewater": mo(0.1, 1.5), "none": mo(0, 1.5)}},
				{ID: "net-nitrification", Label: "net nitrification rate", Observable: "flux:nitrification", Unit: "log-ratio", Bits: 0.44, Cost: 1,
					Method: "aerobic incubation", NoiseSD: 0.35,
					Predicted: map[string]rank.Moments{"nitrification": mo(0.95, 0.4), "nitrification+denitrification": mo(0.74, 0.45), "source:wastewater": mo(0, 0.35), "none": mo(0, 0.35)}},
				{ID: "nitrate-d18o", Label: "δ18O of soil NO3− (with δ15N)", Observable: "nitrate-d18o", Unit: "permil", Bits: 0.2, Cost: 2,
					Method: "denitrifier method", NoiseSD: 2,
					Predicted: map[string]rank.Moments{"nitrification": mo(-1, 3), "nitrification+denitrification": mo(1.5, 4), "source:wastewater": mo(-2.3, 2.6), "none": mo(0, 2)}},
			},
			Paths: []rank.Path{
				{Hypothesis: "nitrification", Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.4, 1.1), "soil": approach(years, 0.05, 20), "soil-nitrate": approach(years, 6.0, 0.2)}},
				{Hypothesis: "nitrification+denitrification", Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.7, 1.3), "soil": approach(years, 0.08, 25), "soil-nitrate": approach(years, 6.5, 0.2)}},
				{Hypothesis: "source:wastewater", Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.3, 1.5), "soil": approach(years, 0.04, 30), "soil-nitrate": approach(years, 6.8, 0.3)}},
			},
			ReplicatesAssumed: 6,
		}},
	}
}

// logYears is 0 and then n−1 times log-spaced from 0.1 to horizon, as the
// engine gives a steady-state comparison's paths.
func logYears(n int, horizon float64) []float64 {
	out := make([]float64, n)
	for i := 1; i < n; i++ {
		out[i] = 0.1 * math.Pow(horizon/0.1, float64(i-1)/float64(n-2))
	}
	return out
}

// multiResult: three comparisons: a long-standing contrast with a pool
// observable and a declared addition in a pair, one that no candidate
// fits, and one where "none" leads.
func multiResult() *rank.Result {
	ly := logYears(21, 2000)
	declared := rank.Magnitude{Candidate: "source:ammonium-fertilizer", Best: 50, Low: 50, High: 50, Unit: "kg N/ha/yr", Fixed: true, ProbMore: 1}
	share := rank.Magnitude{Candidate: "uptake-form", Best: 0.1, Low: 0.03, High: 0.25, Unit: "share of uptake as nitrate", Baseline: 0.48, ProbMore: 0.01}
	uptake := rank.Hypothesis{ID: "uptake-form", Label: "form of plant N uptake (NH4+ vs NO3−)",
		Mechanism: "soil NH4+ and NO3− differ in δ15N, so a plant that shifts between them changes its δ15N", Refs: []string{"hogberg1997", "pritchard2005"},
		Posterior: 0.2, PriorProb: 0.1, Magnitudes: []rank.Magnitude{share},
		Predicted: map[string]rank.Moments{"foliage": mo(1.6, 0.5), "pool:nitrate": mo(0.9, 0.2)}, Fit: rank.Fit{Chi2: 1.5, DOF: 2, P: 0.47}}
	fert := rank.Hypothesis{ID: "source:ammonium-fertilizer", Label: "new input of ammonium fertilizer (ammonium sulfate)",
		Mechanism: "ammonium fertilizer enters with its own δ15N and pulls the pools it feeds toward it", Refs: []string{"bateman2007"},
		Posterior: 0.15, PriorProb: 0.1, Magnitudes: []rank.Magnitude{declared},
		Predicted: map[string]rank.Moments{"foliage": mo(-0.3, 0.3), "pool:nitrate": mo(0.6, 0.2)}, Fit: rank.Fit{Chi2: 6.5, DOF: 2, P: 0.04}}
	pair := rank.Hypothesis{ID: "source:ammonium-fertilizer+uptake-form", Label: uptake.Label + " + " + fert.Label, Pair: true,
		Mechanism: uptake.Mechanism + "; " + fert.Mechanism, Refs: []string{"hogberg1997", "pritchard2005", "bateman2007"},
		Posterior: 0.45, PriorProb: 0.03, Magnitudes: []rank.Magnitude{share, declared},
		Predicted: map[string]rank.Moments{"foliage": mo(1.9, 0.5), "pool:nitrate": mo(1.1, 0.2)}, Fit: rank.Fit{Chi2: 0.4, DOF: 2, P: 0.82}}
	none1 := rank.Hypothesis{ID: "none", Label: "no change in N cycling", Posterior: 0.2, PriorProb: 0.3,
		Predicted: map[string]rank.Moments{"foliage": mo(0, 0), "pool:nitrate": mo(0, 0)}, Fit: rank.Fit{Chi2: 30, DOF: 2, P: 0.0000003}}
	steady := rank.ComparisonResult{Name: "fertilized vs control", Years: nil,
		Observed:   []study.Observed{obs("foliage", -1.0, 1.0, 0.6, 0.8, 5, false), obs("pool:nitrate", 1.5, 4.5, 0.5, 1.5, 5, true)},
		Hypotheses: []rank.Hypothesis{pair, uptake, none1, fert},
		Leading:    []string{pair.ID, uptake.ID, "none", fert.ID},
		Measurements: []rank.Measurement{
			{ID: "soil-nitrate-d15n", Label: "δ15N of soil NO3−", Observable: "soil-nitrate", Unit: "permil", Bits: 0.8, Cost: 2, Method: "denitrifier method",
				Predicted: map[string]rank.Moments{pair.ID: mo(-2.7, 2.2), uptake.ID: mo(0.3, 1.6), "none": mo(0, 1.5), fert.ID: mo(-1.5, 1.7)}},
			{ID: "ammonium-pool", Label: "soil ammonium pool size", Observable: "pool:ammonium", Unit: "log-ratio", Bits: 0.5, Cost: 1, Method: "KCl extraction",
				Predicted: map[string]rank.Moments{pair.ID: mo(0.39, 0.38), uptake.ID: mo(-0.12, 0.32), "none": mo(0, 0.3), fert.ID: mo(0.5, 0.3)}},
		},
		Paths: []rank.Path{
			{Hypothesis: pair.ID, Years: ly, Shifts: map[string][]float64{"foliage": approach(ly, 2.1, 3), "pool:nitrate": approach(ly, 1.2, 0.5)}},
			{Hypothesis: uptake.ID, Years: ly, Shifts: map[string][]float64{"foliage": approach(ly, 1.7, 2), "pool:nitrate": approach(ly, 0.9, 0.4)}},
			{Hypothesis: fert.ID, Years: ly, Shifts: map[string][]float64{"foliage": approach(ly, -0.4, 40), "pool:nitrate": approach(ly, 0.6, 0.5)}},
		},
		ReplicatesAssumed: 5,
	}

	vol := rank.Hypothesis{ID: "volatilization", Label: "NH3 volatilization", Mechanism: "ammonia lost to the air is strongly depleted",
		Refs: []string{"nh3volatilisation2018"}, Posterior: 0.7, PriorProb: 0.1, Magnitudes: []rank.Magnitude{factor("volatilization", 9.8, 6, 10, 1)},
		Predicted: map[string]rank.Moments{"foliage": mo(2.0, 0.6)}, Fit: rank.Fit{Chi2: 14, DOF: 1, P: 0.0002}}
	noneNF := rank.Hypothesis{ID: "none", Label: "no change in N cycling", Posterior: 0.3, PriorProb: 0.3,
		Predicted: map[string]rank.Moments{"foliage": mo(0, 0)}, Fit: rank.Fit{Chi2: 80, DOF: 1, P: 1e-19}}
	nofit := rank.ComparisonResult{Name: "burned vs unburned", Years: f64(1.5),
		Observed:   []study.Observed{obs("foliage", 0.5, 9.5, 1, 1, 4, false)},
		Hypotheses: []rank.Hypothesis{vol, noneNF}, Leading: []string{vol.ID, "none"}, NoFit: true,
		Warnings: []string{"no candidate reproduces the observed shifts (test warning)"},
		Paths:    []rank.Path{{Hypothesis: vol.ID, Years: evenYears(7, 0.5), Shifts: map[string][]float64{"foliage": approach(evenYears(7, 0.5), 2.2, 0.6)}}},
	}

	noneLead := rank.Hypothesis{ID: "none", Label: "no change in N cycling", Posterior: 0.64, PriorProb: 0.3,
		Predicted: map[string]rank.Moments{"soil": mo(0, 0)}, Fit: rank.Fit{Chi2: 0.3, DOF: 1, P: 0.58}}
	myc := rank.Hypothesis{ID: "mycorrhizal-route", Label: "N supply through mycorrhizal fungi",
		Mechanism: "mycorrhizal fungi keep 15N-enriched N and pass depleted N to their hosts", Refs: []string{"hobbie2012"},
		Posterior: 0.12, PriorProb: 0.1, Magnitudes: []rank.Magnitude{{Candidate: "mycorrhizal-route", Best: 0.4, Low: 0.12, High: 0.9, Unit: "× flux through fungi", Baseline: 1, ProbMore: 0.05}},
		Predicted: map[string]rank.Moments{"soil": mo(0.3, 0.2)}, Fit: rank.Fit{Chi2: 0.1, DOF: 1, P: 0.75}}
	quiet := rank.ComparisonResult{Name: "limed vs control", Years: f64(2),
		Observed:   []study.Observed{obs("soil", 4.0, 4.2, 0.5, 0.5, 4, false)},
		Hypotheses: []rank.Hypothesis{noneLead, myc}, Leading: []string{"none", myc.ID},
	}
	return &rank.Result{Version: "0.0.0-test", Seed: 11, Draws: 8, ModelError: 0.5,
		StudyTitle: "Three contrasts (test fixture)", StudyFile: "my study.yaml", SiteRef: "site.yaml", SiteID: "custom-site",
		Method: method(8), Comparisons: []rank.ComparisonResult{steady, nofit, quiet}}
}
