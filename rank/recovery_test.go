package rank

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// truth is a known change used to generate synthetic observations.
type truth struct {
	name   string
	site   string
	years  *float64
	change forward.Change
	share  float64  // if > 0, the nitrate share of uptake is set to it
	want   string   // hypothesis id that generated the data
	obs    []string // observables "measured"
	n      int      // replicates per group
	// noiseFree: group means are the model's values exactly (the SEs stay
	// those of n replicates), to test what the design can identify.
	noiseFree bool
}

// fieldSD is the between-plot sd used to draw synthetic group means, ‰
// (typical field spreads of the measurement catalogue, from memory).
var fieldSD = map[string]float64{"foliage": 0.8, "soil": 0.5, "soil-nitrate": 2.0, "soil-ammonium": 2.0, "nitrate-d18o": 2.0, "fungi": 1.2, "n2o": 3.0}

// synthesize builds a study from the nominal site model under a change,
// with group means drawn around the model's baseline and changed values.
func synthesize(t *testing.T, kb *knowledge.Base, tr truth, seed uint64) *study.Study {
	t.Helper()
	site, err := forward.LoadSite(tr.site, kb)
	if err != nil {
		t.Fatal(err)
	}
	sim, err := forward.Simulate(site, tr.change, tr.years)
	if err != nil {
		t.Fatal(err)
	}
	if tr.share > 0 {
		if err := sim.Changed.SetNitrateShare(site, tr.share); err != nil {
			t.Fatal(err)
		}
		m := forward.NewModel(site)
		if tr.years != nil {
			err = m.Advance(&sim.Changed, &sim.Baseline, *tr.years, true, &sim.Then)
		} else {
			err = m.Steady(&sim.Changed, true, &sim.Then)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	rng := rand.New(rand.NewPCG(seed, 99))
	z := distuv.Normal{Mu: 0, Sigma: 1, Src: rng}
	n := tr.n
	if n == 0 {
		n = 6
	}
	cmp := study.Comparison{Name: tr.name, Control: "control", Treatment: "treatment", Years: tr.years}
	for _, name := range tr.obs {
		o, err := site.Observable(name)
		if err != nil {
			t.Fatal(err)
		}
		b := o.Value(&sim.Baseline, &sim.Base)
		c := o.Value(&sim.Then, &sim.Changed)
		sd := fieldSD[name]
		e1, e2 := z.Rand(), z.Rand()
		if tr.noiseFree {
			e1, e2 = 0, 0
		}
		ctl := study.Stat{Mean: b + e1*sd/math.Sqrt(float64(n)), SD: sd, N: n}
		trt := study.Stat{Mean: c + e2*sd/math.Sqrt(float64(n)), SD: sd, N: n}
		cmp.Observed = append(cmp.Observed, study.Observed{Observable: name, Shift: trt.Mean - ctl.Mean, SE: math.Sqrt(2) * sd / math.Sqrt(float64(n)), Control: ctl, Treatment: trt})
	}
	sort.Slice(cmp.Observed, func(i, j int) bool { return cmp.Observed[i].Observable < cmp.Observed[j].Observable })
	return &study.Study{File: "synthetic", Title: tr.name, Site: site, SiteRef: tr.site, Comparisons: []study.Comparison{cmp}}
}

func years(v float64) *float64 { return &v }

func scale(pairs ...any) forward.Change {
	var c forward.Change
	for i := 0; i < len(pairs); i += 2 {
		c.Factors = append(c.Factors, forward.Factor{Process: pairs[i].(string), Factor: pairs[i+1].(float64)})
	}
	return c
}

func addSource(t *testing.T, kb *knowledge.Base, siteID, src string, rate float64) forward.Change {
	site, _ := forward.LoadSite(siteID, kb)
	in, err := forward.SourceInput(site, kb, src, rate)
	if err != nil {
		t.Fatal(err)
	}
	return forward.Change{Additions: []forward.InputParam{in}}
}

func TestRecoveryScan(t *testing.T) {
	if os.Getenv("NLENS_SCAN") == "" {
		t.Skip("set NLENS_SCAN=1 to run the recovery scan")
	}
	kb := knowledge.MustDefault()
	set, err := rules.Default(kb)
	if err != nil {
		t.Fatal(err)
	}
	A := []string{"foliage", "soil", "soil-nitrate"}
	B := []string{"foliage", "soil", "soil-nitrate", "nitrate-d18o", "soil-ammonium"}
	tdf, dry, bor := "temperate-deciduous-forest", "dryland-shrubland", "boreal-conifer-forest"
	if f := os.Getenv("NLENS_SCAN_SITE"); f != "" {
		tdf = f
	}
	cases := []truth{
		{name: "none", site: tdf, want: "none"},
		{name: "nitrif x3 5y", site: tdf, years: years(5), change: scale("nitrification", 3.0, "nitrifier-gas", 3.0), want: "nitrification"},
		{name: "nitrif x0.3 ss", site: tdf, change: scale("nitrification", 0.3, "nitrifier-gas", 0.3), want: "nitrification"},
		{name: "denit x3 ss", site: tdf, change: scale("denitrification", 3.0), want: "denitrification"},
		{name: "denit x4 10y", site: tdf, years: years(10), change: scale("denitrification", 4.0), want: "denitrification"},
		{name: "leach x4 ss", site: tdf, change: scale("leaching-nitrate", 4.0), want: "nitrate-leaching"},
		{name: "volat x4 ss dry", site: dry, change: scale("volatilization", 4.0), want: "volatilization"},
		{name: "mineral x3 ss", site: tdf, change: scale("mineralization", 3.0), want: "mineralization"},
		{name: "myc x0.3 ss bor", site: bor, change: scale("mycorrhizal-uptake", 0.3, "mycorrhizal-transfer", 0.3, "fungal-turnover", 0.3), want: "mycorrhizal-route", obs: []string{"foliage", "soil", "soil-nitrate", "fungi"}},
		{name: "uptake 0.8 ss", site: tdf, share: 0.8, want: "uptake-form"},
		{name: "manure 40 5y", site: tdf, years: years(5), change: addSource(t, kb, tdf, "manure", 40), want: "source:manure"},
	}
	hits1, hits2, total := 0, 0, 0
	for _, base := range cases {
		for _, obs := range [][]string{A, B} {
			for seed := uint64(1); seed <= 3; seed++ {
				tr := base
				if tr.obs == nil {
					tr.obs = obs
				} else if len(obs) == len(B) {
					tr.obs = append(append([]string(nil), base.obs...), "nitrate-d18o")
				}
				st := synthesize(t, kb, tr, seed)
				res, err := Explain(context.Background(), st, kb, set, Options{Seed: 1})
				if err != nil {
					t.Fatal(err)
				}
				c := res.Comparisons[0]
				var top []string
				rank := -1
				for i, h := range c.Hypotheses {
					if i < 3 {
						top = append(top, fmt.Sprintf("%s=%.2f", h.ID, h.Posterior))
					}
					if h.ID == tr.want && rank < 0 {
						rank = i
					}
				}
				total++
				if rank == 0 {
					hits1++
				}
				if rank >= 0 && rank <= 1 {
					hits2++
				}
				var ob []string
				for _, o := range c.Observed {
					ob = append(ob, fmt.Sprintf("%s%+.1f", o.Observable[:4], o.Shift))
				}
				m := ""
				if len(c.Measurements) > 0 {
					m = fmt.Sprintf("%s(%.2f)", c.Measurements[0].ID, c.Measurements[0].Bits)
				}
				t.Logf("%-16s n%d s%d rank%2d | %s | %s | %s", tr.name, len(tr.obs), seed, rank+1, strings.Join(ob, " "), strings.Join(top, " "), m)
			}
		}
	}
	t.Logf("top-1 %d/%d, top-2 %d/%d", hits1, total, hits2, total)
}
