package rank

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// truth is a known response, on top of a declared treatment, used to
// generate synthetic observations.
type truth struct {
	name      string
	site      string
	years     *float64
	treatment forward.Treatment
	// response is the generating candidate id ("" for none) at magnitude
	// value (a share, or kg N/ha/yr).
	response string
	value    float64
	// response2 at value2, if set, is a second response acting with the
	// first (a pair truth).
	response2 string
	value2    float64
	want      string   // hypothesis id expected to win (response, or "none")
	obs       []string // observables "measured"
	n         int      // replicates per group
	// noiseFree: group means are the model's values exactly (the SEs stay
	// those of n replicates), to test what the design can identify.
	noiseFree bool
	// perturb > 0 generates the data on a site drawn away from the nominal
	// one (rates within their spreads, ε within their ranges, forcing sizes
	// within theirs): the perturb-th draw of its own stream.
	perturb int
}

// synthesize builds a study whose treatment arm is the site under the
// declared treatment plus the truth's response, with group means drawn
// around the model's baseline and changed values.
func synthesize(t *testing.T, kb *knowledge.Base, tr truth, seed uint64) *study.Study {
	t.Helper()
	base, err := forward.LoadSite(tr.site, kb)
	if err != nil {
		t.Fatal(err)
	}
	set := defaultSet(t)
	site, err := base.WithRoutes(kb, routes(base, kb, set, tr.treatment)...)
	if err != nil {
		t.Fatal(err)
	}
	params := site.Params()
	forcing, err := forward.TreatmentChange(site, kb, tr.treatment, forward.Nominal)
	if err != nil {
		t.Fatal(err)
	}
	if tr.perturb > 0 {
		ds, err := makeDraws(site, kb, []forward.Treatment{tr.treatment}, 0, tr.perturb+1, newStratified(seed, 4242, tr.perturb+1))
		if err != nil {
			t.Fatal(err)
		}
		params, forcing = ds[tr.perturb].params, ds[tr.perturb].forcing[0]
	}
	change := forcing
	if tr.response != "" {
		c := set.Candidate(tr.response)
		if c == nil {
			t.Fatalf("unknown candidate %q", tr.response)
		}
		mod, err := ResponseMod(site, kb, c, tr.value)
		if err != nil {
			t.Fatal(err)
		}
		change.Mods = append(append([]forward.Mod(nil), forcing.Mods...), mod)
	}
	if tr.response2 != "" {
		mod, err := ResponseMod(site, kb, set.Candidate(tr.response2), tr.value2)
		if err != nil {
			t.Fatal(err)
		}
		change.Mods = append(slices.Clip(change.Mods), mod)
	}
	m := forward.NewModel(site)
	var before, after forward.State
	if err := m.Steady(&params, true, &before); err != nil {
		t.Fatal(err)
	}
	var r forward.Run
	if tr.years != nil {
		err = r.Advance(m, &params, &change, &before, *tr.years, true, &after)
	} else {
		err = r.Steady(m, &params, &change, true, &after)
	}
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 99))
	z := distuv.Normal{Mu: 0, Sigma: 1, Src: rng}
	n := tr.n
	if n == 0 {
		n = 6
	}
	cmp := study.Comparison{Name: tr.name, Control: "control", Treatment: "treatment", Years: tr.years,
		Management: tr.treatment.Management, Severity: tr.treatment.Severity}
	for _, a := range tr.treatment.Additions {
		cmp.Additions = append(cmp.Additions, study.Addition{Source: a.Source, RateKgPerHaYr: a.RateKgPerHaYr, D15N: a.D15N, D18O: a.D18O, DurationYears: a.DurationYears})
	}
	for _, name := range tr.obs {
		o, err := site.Observable(name)
		if err != nil {
			t.Fatal(err)
		}
		b := o.Value(&before, &params)
		c := o.Value(&after, r.Final())
		sd := fieldSD(kb, name)
		e1, e2 := z.Rand(), z.Rand()
		if tr.noiseFree {
			e1, e2 = 0, 0
		}
		ctl := study.Stat{Mean: b + e1*sd/math.Sqrt(float64(n)), SD: sd, N: n}
		trt := study.Stat{Mean: c + e2*sd/math.Sqrt(float64(n)), SD: sd, N: n}
		cmp.Observed = append(cmp.Observed, study.Observed{Observable: name, Shift: trt.Mean - ctl.Mean, SE: math.Sqrt(2) * sd / math.Sqrt(float64(n)), Control: ctl, Treatment: trt})
	}
	sort.Slice(cmp.Observed, func(i, j int) bool { return cmp.Observed[i].Observable < cmp.Observed[j].Observable })
	st := &study.Study{File: "synthetic", Title: tr.name, Site: base, SiteRef: tr.site, Comparisons: []study.Comparison{cmp}}
	st.Context = rules.Context{LandUse: base.LandUse}
	return st
}

func years(v float64) *float64 { return &v }

// manage is a treatment of management tags only.
func manage(tags ...string) forward.Treatment { return forward.Treatment{Management: tags} }

// add is a treatment of one declared addition.
func add(source string, rate float64) forward.Treatment {
	return forward.Treatment{Additions: []forward.Addition{{Source: source, RateKgPerHaYr: rate}}}
}

// TestRecoveryScan explains the recovery cases over several noise draws on
// perturbed sites and logs where each truth ranks (NLENS_SCAN=1).
func TestRecoveryScan(t *testing.T) {
	if os.Getenv("NLENS_SCAN") == "" {
		t.Skip("set NLENS_SCAN=1 to run the recovery scan")
	}
	kb := knowledge.MustDefault()
	hits1, hits2, total := 0, 0, 0
	for _, tr := range recoveryCases() {
		for seed := uint64(1); seed <= 3; seed++ {
			tr := tr
			tr.perturb = int(seed)
			st := synthesize(t, kb, tr, seed)
			res, err := Explain(context.Background(), st, kb, defaultSet(t), testOptions)
			if err != nil {
				t.Fatal(err)
			}
			c := res.Comparisons[0]
			checkInvariants(t, &c, defaultSet(t))
			var top []string
			for i, h := range c.Hypotheses {
				if i < 3 {
					top = append(top, fmt.Sprintf("%s=%.2f", h.ID, h.Posterior))
				}
			}
			rank := rankOf(&c, tr.wantID())
			// How far the truth's noise-free shifts lie from the treatment
			// alone's on the same (perturbed) site, in standard errors.
			nf, nn := tr, tr
			nf.noiseFree, nn.noiseFree, nn.response = true, true, ""
			a, b := synthesize(t, kb, nf, seed).Comparisons[0].Observed, synthesize(t, kb, nn, seed).Comparisons[0].Observed
			var dist float64
			for i := range a {
				z := (a[i].Shift - b[i].Shift) / a[i].SE
				dist += z * z
			}
			dist = math.Sqrt(dist)
			total++
			if rank == 0 {
				hits1++
			}
			if rank >= 0 && rank <= 1 {
				hits2++
			}
			var ob []string
			for _, o := range c.Observed {
				ob = append(ob, fmt.Sprintf("%s%+.1f", o.Observable[:min(4, len(o.Observable))], o.Shift))
			}
			t.Logf("%-34s s%d rank%2d dist %5.1f | %s | %s", tr.name, seed, rank+1, dist, strings.Join(ob, " "), strings.Join(top, " "))
		}
	}
	t.Logf("top-1 %d/%d, top-2 %d/%d", hits1, total, hits2, total)
}
