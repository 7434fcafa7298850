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

// share is a share magnitude of a more-/less- response: its median, 90 %
// interval and baseline, with the flux ratio it implies.
func share(cand, dir, process, of string, best, lo, hi, base, flux float64) rank.Magnitude {
	return rank.Magnitude{Candidate: cand, Kind: "share", Direction: dir, Process: process, Of: of, Best: best, Low: lo, High: hi, Unit: "share", Baseline: base,
		PriorLow: 0.001, PriorHigh: 0.95, Flux: &rank.FluxImplied{Baseline: 10, Median: 10 * flux, Low: 5 * flux, High: 15 * flux, Ratio: flux, RatioLow: flux / 2, RatioHi: 1.5 * flux, HasRatio: true}}
}

func method(draws int) rank.Method {
	return rank.Method{Draws: draws, ModelErrorPermil: 0.5, ModelErrorLog: 0.25, LevelSDPermil: 2, LevelSDLog: 0.5,
		CoarseNodes: 13, FinePoints: 121, PairCoarseNodes: 9, PairFinePoints: 41, PairsFrom: 4, NoneShare: 0.3, PairPrior: 0.15,
		SamplesPerLeading: 32, OutcomeGridStep: 0.25}
}

// withBand gives a fixture path a band of ±frac of its median's size.
func withBand(p rank.Path, frac float64) rank.Path {
	p.Low, p.High = map[string][]float64{}, map[string][]float64{}
	for o, med := range p.Shifts {
		lo, hi := make([]float64, len(med)), make([]float64, len(med))
		for i, v := range med {
			lo[i], hi[i] = v-frac*math.Abs(v), v+frac*math.Abs(v)
		}
		p.Low[o], p.High[o] = lo, hi
	}
	return p
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
	nitr := rank.Hypothesis{ID: "more-nitrification", Label: "more nitrification", Direction: "more",
		Mechanism: "nitrifiers discriminate against 15N, so faster nitrification enriches the NH4+ left behind and makes depleted nitrate that can be lost",
		Refs:      []string{"hogberg1997", "mariotti1981", "craine2015"}, Tests: []string{"soil-ammonium-d15n"},
		Posterior: 0.58, PriorProb: 0.14, LogEvidence: -3.1,
		Adjustments: []rules.Adjustment{{Rule: "disturbance-nitrification", Factor: 2, Reason: "removing plant uptake releases NH4+ to nitrifiers", Refs: []string{"pardo2002"}, Status: "confirmed"}},
		Magnitudes:  []rank.Magnitude{share("more-nitrification", "more", "nitrification", "the NH4+ outflow", 0.62, 0.45, 0.8, 0.21, 2.4)},
		Predicted:   map[string]rank.Moments{"foliage": mo(1.3, 0.45), "soil": mo(0.02, 0.04), "soil-nitrate": mo(5.9, 1.4)},
		Fit:         rank.Fit{Chi2: 1.2, DOF: 3, P: 0.75}, MaxSignal: 6}
	denit := rank.Hypothesis{ID: "more-denitrification", Label: "more denitrification", Direction: "more",
		Mechanism: "denitrifiers remove 15N-depleted N as gas, enriching the nitrate left behind",
		Refs:      []string{"houlton2006", "granger2008"}, Posterior: 0.04, PriorProb: 0.07,
		Magnitudes: []rank.Magnitude{share("more-denitrification", "more", "denitrification", "the NO3− outflow", 0.3, 0.12, 0.55, 0.05, 6.1)},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.0, 0.4), "soil": mo(0.05, 0.03), "soil-nitrate": mo(3.4, 1.2)},
		Fit:        rank.Fit{Chi2: 3.9, DOF: 3, P: 0.27}, MaxSignal: 4}
	pair := rank.Hypothesis{ID: "more-nitrification+more-denitrification", Label: "more nitrification + more denitrification",
		Mechanism: nitr.Mechanism + "; " + denit.Mechanism, Refs: append(append([]string{}, nitr.Refs...), denit.Refs...),
		Posterior: 0.17, PriorProb: 0.02, Pair: true,
		Magnitudes: []rank.Magnitude{share("more-nitrification", "more", "nitrification", "the NH4+ outflow", 0.5, 0.3, 0.75, 0.21, 2), share("more-denitrification", "more", "denitrification", "the NO3− outflow", 0.12, 0.05, 0.4, 0.05, 2.1)},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.5, 0.5), "soil": mo(0.03, 0.05), "soil-nitrate": mo(6.3, 1.5)},
		Fit:        rank.Fit{Chi2: 0.8, DOF: 3, P: 0.85}, MaxSignal: 6}
	waste := rank.Hypothesis{ID: "source:wastewater", Label: "undeclared septic or sewage effluent nitrate",
		Mechanism: "septic or sewage effluent nitrate enters with its own δ15N and pulls the pools it feeds toward it",
		Refs:      []string{"kendall1998", "bateman2007"}, Posterior: 0.11, PriorProb: 0.01,
		Magnitudes: []rank.Magnitude{{Candidate: "source:wastewater", Source: "wastewater", Kind: "input", Process: "septic or sewage effluent nitrate", Best: 12, Low: 5.1, High: 31, Unit: "kg N/ha/yr", PriorLow: 1, PriorHigh: 100}},
		Predicted:  map[string]rank.Moments{"foliage": mo(1.1, 0.4), "soil": mo(0.02, 0.01), "soil-nitrate": mo(6.6, 1.5)},
		Fit:        rank.Fit{Chi2: 0.9, DOF: 3, P: 0.82}, MaxSignal: 5}
	none := rank.Hypothesis{ID: "none", Label: "the declared treatment alone", Mechanism: "the treatments differ by sampling noise only",
		Posterior: 0.06, PriorProb: 0.3, Predicted: map[string]rank.Moments{"foliage": mo(0, 0), "soil": mo(0, 0), "soil-nitrate": mo(0, 0)},
		Fit: rank.Fit{Chi2: 26, DOF: 3, P: 0.00001}}
	mine := rank.Hypothesis{ID: "more-mineralization", Label: "more mineralization", Direction: "more", Refs: []string{"philben2018"}, Posterior: 0, PriorProb: 0.07,
		Magnitudes: []rank.Magnitude{share("more-mineralization", "more", "mineralization", "the outflow of soil organic N", 0.6, 0.52, 0.8, 0.5, 1.3)}, Indistinguishable: true,
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
			// Paths with a 90 % band of ±25 % around the median, and the
			// treatment's start marked (invented, like every number here).
			Paths: []rank.Path{
				withBand(rank.Path{Hypothesis: nitr.ID, Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.4, 1.1), "soil": approach(years, 0.05, 20), "soil-nitrate": approach(years, 6.0, 0.2)}}, 0.25),
				withBand(rank.Path{Hypothesis: pair.ID, Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.7, 1.3), "soil": approach(years, 0.08, 25), "soil-nitrate": approach(years, 6.5, 0.2)}}, 0.25),
				withBand(rank.Path{Hypothesis: waste.ID, Years: years, Shifts: map[string][]float64{"foliage": approach(years, 1.3, 1.5), "soil": approach(years, 0.04, 30), "soil-nitrate": approach(years, 6.8, 0.3)}}, 0.25),
			},
			Timeline:          []rank.Event{{Years: 0, Label: "treatment begins"}},
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
	dep := rank.Magnitude{Candidate: "source:deposition", Source: "deposition", Kind: "input", Process: "atmospheric N deposition", Best: 9, Low: 3, High: 25, Unit: "kg N/ha/yr", PriorLow: 1, PriorHigh: 40}
	nshare := rank.Magnitude{Candidate: "less-nitrate-uptake", Kind: "nitrate-share", Direction: "less", Process: "nitrate in plant uptake", Of: "plant uptake", Best: 0.1, Low: 0.03, High: 0.25, Unit: "share", Baseline: 0.48, PriorLow: 0.01, PriorHigh: 0.48, AtBound: "low"}
	uptake := rank.Hypothesis{ID: "less-nitrate-uptake", Label: "less nitrate in plant uptake", Direction: "less",
		Mechanism: "a plant taking more NH4+ and less NO3− moves toward the heavier NH4+ without any change in losses", Refs: []string{"hogberg1997", "pritchard2005"},
		Posterior: 0.2, PriorProb: 0.1, Magnitudes: []rank.Magnitude{nshare},
		Predicted: map[string]rank.Moments{"foliage": mo(1.6, 0.5), "pool:nitrate": mo(0.9, 0.2)}, Fit: rank.Fit{Chi2: 1.5, DOF: 2, P: 0.47}}
	fert := rank.Hypothesis{ID: "source:deposition", Label: "undeclared atmospheric N deposition (wet and dry, NH4+ and NO3−)",
		Mechanism: "atmospheric N deposition that nobody reported enters with its own δ15N and pulls the pools it feeds toward it", Refs: []string{"moore1977"},
		Posterior: 0.15, PriorProb: 0.1, Magnitudes: []rank.Magnitude{dep},
		Predicted: map[string]rank.Moments{"foliage": mo(-0.3, 0.3), "pool:nitrate": mo(0.6, 0.2)}, Fit: rank.Fit{Chi2: 6.5, DOF: 2, P: 0.04}}
	pair := rank.Hypothesis{ID: "less-nitrate-uptake+source:deposition", Label: uptake.Label + " + " + fert.Label, Pair: true,
		Mechanism: uptake.Mechanism + "; " + fert.Mechanism, Refs: []string{"hogberg1997", "pritchard2005", "moore1977"},
		Posterior: 0.45, PriorProb: 0.03, Magnitudes: []rank.Magnitude{nshare, dep},
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

	volM := share("more-volatilization", "more", "NH3 volatilization", "the NH4+ outflow", 0.45, 0.3, 0.49, 0.001, 400)
	volM.PriorHigh, volM.AtBound = 0.5, "high"
	vol := rank.Hypothesis{ID: "more-volatilization", Label: "more NH3 volatilization", Direction: "more", Mechanism: "ammonia lost to the air is strongly depleted",
		Refs: []string{"walters2019"}, Posterior: 0.7, PriorProb: 0.1, Magnitudes: []rank.Magnitude{volM},
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
	mycM := share("less-mycorrhizal-route", "less", "N supply through mycorrhizal fungi", "the plant's N supply", 0.2, 0.05, 0.38, 0.4, 0.5)
	mycM.PriorLow, mycM.PriorHigh, mycM.AtBound = 0.02, 0.4, "both"
	myc := rank.Hypothesis{ID: "less-mycorrhizal-route", Label: "less N supply through mycorrhizal fungi", Direction: "less",
		Mechanism: "mycorrhizal fungi keep 15N-enriched N and pass depleted N to their hosts", Refs: []string{"hobbie2012"},
		Posterior: 0.12, PriorProb: 0.1, Magnitudes: []rank.Magnitude{mycM},
		Predicted: map[string]rank.Moments{"soil": mo(0.3, 0.2)}, Fit: rank.Fit{Chi2: 0.1, DOF: 1, P: 0.75}}
	quiet := rank.ComparisonResult{Name: "limed vs control", Years: f64(2),
		Observed:   []study.Observed{obs("soil", 4.0, 4.2, 0.5, 0.5, 4, false)},
		Hypotheses: []rank.Hypothesis{noneLead, myc}, Leading: []string{"none", myc.ID},
	}
	return &rank.Result{Version: "0.0.0-test", Seed: 11, Draws: 8, ModelError: 0.5,
		StudyTitle: "Three contrasts (test fixture)", StudyFile: "my study.yaml", SiteRef: "site.yaml", SiteID: "custom-site",
		Method: method(8), Comparisons: []rank.ComparisonResult{steady, nofit, quiet}}
}
