package rank

import (
	"context"
	"math"
	"slices"
	"strings"
	"sync"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rules"
)

// The synthetic data of these tests are invented: the forward model of a
// built-in template under a known change, with the between-plot spreads of
// fieldSD and 6 replicates per group.

var (
	testSetOnce sync.Once
	testSet     *rules.Set
)

func defaultSet(t *testing.T) *rules.Set {
	t.Helper()
	testSetOnce.Do(func() {
		var err error
		testSet, err = rules.Default(knowledge.MustDefault())
		if err != nil {
			panic(err)
		}
	})
	return testSet
}

func explainSynthetic(t *testing.T, tr truth, seed uint64) *ComparisonResult {
	t.Helper()
	kb := knowledge.MustDefault()
	st := synthesize(t, kb, tr, seed)
	res, err := Explain(context.Background(), st, kb, defaultSet(t), testOptions)
	if err != nil {
		t.Fatal(err)
	}
	checkInvariants(t, &res.Comparisons[0], defaultSet(t))
	return &res.Comparisons[0]
}

func rankOf(c *ComparisonResult, id string) int {
	return slices.IndexFunc(c.Hypotheses, func(h Hypothesis) bool { return h.ID == id })
}

var (
	obsRich  = []string{"foliage", "soil", "soil-nitrate", "soil-ammonium", "nitrate-d18o"}
	obsFungi = []string{"foliage", "soil", "soil-nitrate", "soil-ammonium", "fungi"}
)

// recoveryCases are one truth per candidate kind and both directions, each
// on top of a declared treatment, and none under a treatment alone.
// Shares are set well away from each template's baseline share (magnitudes
// of the order of the field cases of FACTS-2 §10; the exact values are
// arbitrary).
func recoveryCases() []truth {
	tdf, bor, crop, grass := "temperate-deciduous-forest", "boreal-conifer-forest", "fertilized-cropland", "temperate-grassland"
	cut, an := manage("clear-cut"), add("ammonium-nitrate", 50)
	return []truth{
		{name: "clear-cut alone", site: tdf, years: years(3), treatment: cut, want: "none", obs: obsRich},
		{name: "more nitrification after clear-cut", site: tdf, years: years(3), treatment: cut, response: "more-nitrification", value: 0.6, obs: obsRich},
		{name: "less nitrification, NH4NO3", site: tdf, years: years(10), treatment: an, response: "less-nitrification", value: 0.004, obs: obsRich},
		{name: "more denitrification, NH4NO3", site: tdf, years: years(10), treatment: an, response: "more-denitrification", value: 0.5, obs: obsRich},
		{name: "less denitrification, boreal", site: bor, years: years(10), treatment: manage("thinned"), response: "less-denitrification", value: 0.005, obs: obsRich},
		{name: "more nitrate leaching after clear-cut", site: tdf, years: years(3), treatment: cut, response: "more-nitrate-leaching", value: 0.85, obs: obsRich},
		{name: "more volatilization, urea on cropland", site: crop, years: years(5), treatment: add("urea", 100), response: "more-volatilization", value: 0.35, obs: obsRich},
		{name: "more mineralization, grassland", site: grass, years: years(10), treatment: manage("grazed"), response: "less-mineralization", value: 0.5, obs: obsRich},
		{name: "less mineralization, NH4NO3", site: tdf, years: years(10), treatment: an, response: "less-mineralization", value: 0.12, obs: obsRich},
		{name: "more immobilization, NH4NO3", site: tdf, years: years(10), treatment: an, response: "more-immobilization", value: 0.88, obs: obsRich},
		{name: "less mycorrhizal route, NH4NO3 boreal", site: bor, years: years(10), treatment: add("ammonium-nitrate", 70), response: "less-mycorrhizal-route", value: 0.1, obs: obsFungi},
		{name: "more fungal transfer, boreal", site: bor, years: years(10), treatment: manage("thinned"), response: "more-fungal-transfer", value: 0.85, obs: obsFungi},
		{name: "more nitrate uptake, grazed grassland", site: grass, years: years(10), treatment: manage("grazed"), response: "more-nitrate-uptake", value: 0.9, obs: obsRich},
		{name: "less plant uptake after clear-cut", site: tdf, years: years(8), treatment: cut, response: "less-plant-uptake", value: 0.04, obs: obsRich},
		{name: "more fixation, grassland", site: grass, years: years(20), treatment: manage("grazed"), response: "more-fixation", value: 40, obs: obsRich},
		{name: "undeclared manure on cropland", site: crop, years: years(5), treatment: add("ammonium-nitrate", 100), response: "source:manure", value: 150, obs: obsRich},
	}
}

// want is the hypothesis a truth should rank: its response, or none.
func (tr truth) wantID() string {
	if tr.want != "" {
		return tr.want
	}
	return tr.response
}

// testOptions keeps the recovery tests fast: a fixed, moderate number of
// draws (the adaptive draws are tested on the demo).
var testOptions = Options{Seed: 1, Workers: 1, Draws: 192, FixedDraws: true}

// identifiable is the distance, in standard errors, between the truth's
// noise-free shifts and the treatment alone's on the same site: above
// identifiableSE the data can tell the response from no response.
func identifiable(t *testing.T, tr truth, seed uint64) float64 {
	t.Helper()
	kb := knowledge.MustDefault()
	nf, nn := tr, tr
	nf.noiseFree, nn.noiseFree, nn.response = true, true, ""
	a, b := synthesize(t, kb, nf, seed).Comparisons[0].Observed, synthesize(t, kb, nn, seed).Comparisons[0].Observed
	var d float64
	for i := range a {
		z := (a[i].Shift - b[i].Shift) / a[i].SE
		d += z * z
	}
	return math.Sqrt(d)
}

// identifiableSE, 6 SE: the project's definition of "the data can tell",
// the same as the calibration harness's identifiable truths (calibrate.go;
// engineering choice).
const identifiableSE = 6

// checkDeclaredAndContext fails if a declared addition or a source outside
// its context is ranked (issue 9).
func checkDeclaredAndContext(t *testing.T, c *ComparisonResult, tr truth) {
	t.Helper()
	kb := knowledge.MustDefault()
	ctx := rules.Context{LandUse: mustSite(t, tr.site).LandUse, Management: tr.treatment.Management}
	for _, a := range tr.treatment.Additions {
		ctx.Declared = append(ctx.Declared, a.Source)
	}
	for _, h := range c.Hypotheses {
		for _, m := range h.Magnitudes {
			src, ok := strings.CutPrefix(m.Candidate, rules.SourcePrefix)
			if !ok {
				continue
			}
			if slices.Contains(ctx.Declared, src) {
				t.Errorf("declared addition %s ranked as %s", src, h.ID)
			}
			if !rules.SourcePossible(kb, defaultSet(t).Candidate(m.Candidate), ctx) {
				t.Errorf("%s ranked outside its context (land use %q)", h.ID, ctx.LandUse)
			}
		}
	}
}

func mustSite(t *testing.T, id string) *forward.Site {
	t.Helper()
	s, err := forward.LoadSite(id, knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// Truth recovery without noise on the nominal site: every truth the data
// can identify ranks first; one too close to the treatment alone keeps a
// posterior of at least 0.01 (or is counted with none) and no other
// hypothesis gets more than 0.9; no pair outranks a
// generating single; no declared addition and no source outside its
// context is ranked.
func TestRecoversTruthNoiseFree(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the full explanation for every candidate kind")
	}
	t.Parallel()
	for _, tr := range recoveryCases() {
		t.Run(tr.name, func(t *testing.T) {
			t.Parallel()
			tr.noiseFree = true
			want := tr.wantID()
			c := explainSynthetic(t, tr, 1)
			checkDeclaredAndContext(t, c, tr)
			r := rankOf(c, want)
			dist := identifiable(t, tr, 1)
			top := c.Hypotheses[0]
			switch {
			case want == "none" || dist >= identifiableSE:
				if r != 0 {
					t.Errorf("%s (%.1f SE from the treatment alone) at rank %d; top %s %.2f", want, dist, r+1, top.ID, top.Posterior)
				}
			case r < 0:
				t.Errorf("%s not ranked", want)
			// 0.9 ("confident") and 0.01 ("ruled out") are the project's
			// thresholds (engineering choices; no source recorded).
			case r > 0 && top.Posterior > 0.9:
				// Too close to the treatment alone to be identified: the
				// answer must stay open, not name another with confidence.
				t.Errorf("%s is only %.1f SE from the treatment alone, yet %s is given %.2f", want, dist, top.ID, top.Posterior)
			case !c.Hypotheses[r].Indistinguishable && c.Hypotheses[r].Posterior < 0.01:
				t.Errorf("%s (%.1f SE from the treatment alone) ruled out: posterior %.3f at rank %d", want, dist, c.Hypotheses[r].Posterior, r+1)
			}
			if r > 0 {
				t.Logf("%s (%.1f SE) at rank %d, posterior %.3f; top %s %.2f", want, dist, r+1, c.Hypotheses[r].Posterior, top.ID, top.Posterior)
			}
			for i := range max(r, 0) {
				if h := c.Hypotheses[i]; h.Pair && dist >= identifiableSE {
					t.Errorf("pair %s (rank %d, %.2f) outranks the generating single %s", h.ID, i+1, h.Posterior, want)
				}
			}
		})
	}
}

// With sampling noise, on a site drawn away from the nominal one (rates
// within their spreads, ε within their ranges, treatment sizes within
// theirs): truths the perturbed site leaves identifiable rank first in at
// least three of four noise draws. A truth the perturbed site leaves within
// identifiableSE of the treatment alone is for the calibration run to judge
// (its posterior should be modest, not its rank high); here it must only
// not be answered with a confident wrong hypothesis (top posterior > 0.9).
func TestRecoversTruthWithNoise(t *testing.T) {
	if testing.Short() {
		t.Skip("runs many full explanations")
	}
	t.Parallel()
	for _, tr := range recoveryCases() {
		t.Run(tr.name, func(t *testing.T) {
			t.Parallel()
			want := tr.wantID()
			hits, tried := 0, 0
			for seed := uint64(11); seed < 15; seed++ {
				tr := tr
				tr.perturb = int(seed - 10)
				dist := identifiable(t, tr, seed)
				c := explainSynthetic(t, tr, seed)
				checkDeclaredAndContext(t, c, tr)
				r := rankOf(c, want)
				top := c.Hypotheses[0]
				if want != "none" && dist < identifiableSE {
					if r != 0 && top.Posterior > 0.9 {
						t.Errorf("seed %d: %s is only %.1f SE from the treatment alone, yet %s is given %.2f", seed, want, dist, top.ID, top.Posterior)
					}
					continue
				}
				tried++
				if r == 0 {
					hits++
				} else {
					t.Logf("seed %d (%.1f SE): top %s %.2f, truth at %d", seed, dist, top.ID, top.Posterior, r+1)
				}
			}
			// Three in four: the project's acceptance rate (engineering
			// choice; no source recorded).
			if tried > 0 && hits < (3*tried+3)/4 {
				t.Errorf("%s ranked first in %d of %d identifiable noise draws, want at least three in four", want, hits, tried)
			}
		})
	}
}

// On pure noise "none" ranks first. A noise draw that is itself significant
// (χ² of the shifts against zero beyond its 95th percentile) is not pure
// noise to any analysis and is skipped; the test needs four usable draws.
func TestNoneWinsOnNoise(t *testing.T) {
	if testing.Short() {
		t.Skip("runs several full explanations")
	}
	t.Parallel()
	for _, site := range []string{"temperate-deciduous-forest", "dryland-shrubland"} {
		t.Run(site, func(t *testing.T) {
			t.Parallel()
			used := 0
			for seed := uint64(21); used < 4 && seed < 40; seed++ {
				tr := truth{name: "noise", site: site, years: years(5), want: "none", obs: obsRich}
				st := synthesize(t, knowledge.MustDefault(), tr, seed)
				var chi2 float64
				for _, o := range st.Comparisons[0].Observed {
					chi2 += o.Shift * o.Shift / (o.SE * o.SE)
				}
				// 5 degrees of freedom: the five observables of obsRich.
				if chi2 > 11.07 { // χ²(5) 95th percentile, 11.070 in standard statistical tables
					continue
				}
				used++
				res, err := Explain(context.Background(), st, knowledge.MustDefault(), defaultSet(t), testOptions)
				if err != nil {
					t.Fatal(err)
				}
				c := res.Comparisons[0]
				checkInvariants(t, &c, defaultSet(t))
				if c.Hypotheses[0].ID != "none" {
					t.Errorf("seed %d (χ² %.1f): %s ranks first (%.2f), none %.2f", seed, chi2, c.Hypotheses[0].ID, c.Hypotheses[0].Posterior, c.Hypotheses[rankOf(&c, "none")].Posterior)
				}
			}
			if used < 4 {
				t.Fatalf("only %d usable noise draws", used)
			}
		})
	}
}
