package forward

import (
	"slices"
	"testing"

	"nlens/knowledge"
)

// The built-in site templates (knowledge/sites) stand for typical sites of
// their biome. These tests hold each one's baseline steady state to the
// patterns the literature reports (FACTS.md §6), and check that the
// templates have every process the explanation engine turns. The expected
// values are published patterns, never numbers read off the model.

// templateSpec is what the project issue asks of one template: whether its
// plants are mycorrhizal hosts (so it carries a fungi pool) and whether they
// are perennial (so leaves are their own fast foliage pool).
type templateSpec struct {
	id          string
	mycorrhizal bool
	perennial   bool
}

var templateSpecs = []templateSpec{
	{"temperate-deciduous-forest", true, true},
	{"boreal-conifer-forest", true, true},
	{"tropical-lowland-forest", true, true},
	{"temperate-grassland", true, true},
	{"dryland-shrubland", true, true},
	{"fertilized-cropland", false, false},
}

// Templates whose hosts are arbuscular mycorrhizal, and the strongly
// ectomycorrhizal one (their descriptions and notes say so).
var (
	arbuscularTemplates = []string{"tropical-lowland-forest", "temperate-grassland", "dryland-shrubland"}
	ectoTemplate        = "boreal-conifer-forest"
	forestTemplates     = []string{"temperate-deciduous-forest", "boreal-conifer-forest", "tropical-lowland-forest"}
)

// requiredProcesses must each appear with a non-zero rate in every
// template: the explanation engine multiplies their rate constants, and a
// process a template lacks cannot be tested there (project issue).
var requiredProcesses = []string{
	"mineralization", "nitrification", "nitrifier-gas", "denitrification",
	"volatilization", "leaching-nitrate", "uptake-ammonium", "uptake-nitrate",
	"immobilization-ammonium",
}

// templateBaseline loads a built-in template and its baseline steady state.
func templateBaseline(t *testing.T, id string) (*Site, *Simulation) {
	t.Helper()
	s, err := LoadSite(id, knowledge.MustDefault())
	if err != nil {
		t.Fatalf("load template %q: %v", id, err)
	}
	sim, err := Simulate(s, Change{}, nil)
	if err != nil {
		t.Fatalf("template %q baseline: %v", id, err)
	}
	return s, sim
}

// observe returns the named observable of the site in state x.
func observe(t *testing.T, s *Site, name string, x *State, p *Params) float64 {
	t.Helper()
	o, err := s.Observable(name)
	if err != nil {
		if name == "foliage" {
			// DESIGN §3, observables: "the foliage pool's δ15N where the
			// site has one, else the plant pool's".
			t.Fatalf("template %q: observable foliage: got error %q, want the plant pool's δ15N where a site has no foliage pool (DESIGN §3)", s.ID, err)
		}
		t.Fatalf("template %q: %v", s.ID, err)
	}
	return o.Value(x, p)
}

// baselineValue returns the named observable at the template's baseline.
func baselineValue(t *testing.T, id, name string) float64 {
	t.Helper()
	s, sim := templateBaseline(t, id)
	return observe(t, s, name, &sim.Baseline, &sim.Base)
}

// hasTransfer reports whether the site has a transfer of the process from
// pool from to pool to ("" matches any pool) with a non-zero rate.
func hasTransfer(s *Site, process, from, to string) bool {
	for _, tr := range s.Transfers {
		if tr.Process != process || tr.RateKgPerHaYr <= 0 {
			continue
		}
		if from != "" && s.Pools[tr.From] != from {
			continue
		}
		if to != "" && (tr.To == Out || s.Pools[tr.To] != to) {
			continue
		}
		return true
	}
	return false
}

// Every template is a complete site: its id is its file name, its inputs
// and transfers balance so that the model's steady state reproduces the
// file's pools within 10 % (DESIGN §3: no warning), every transfer carries
// a spread for uncertainty draws (DESIGN §3: the built-in templates carry
// spreads), and it has every process the engine turns (project issue).
// Mycorrhizal hosts carry fungi with uptake, transfer and turnover;
// perennial plants carry a foliage pool fed by current uptake and by
// allocation, and emptied by retranslocation and litterfall (DESIGN §3).
func TestTemplatesAreCompleteSites(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	var ids []string
	for _, spec := range templateSpecs {
		ids = append(ids, spec.id)
	}
	for _, id := range kb.SiteIDs() {
		if !slices.Contains(ids, id) {
			t.Errorf("template %q has no entry in templateSpecs; add one so it is tested", id)
		}
	}
	for _, spec := range templateSpecs {
		t.Run(spec.id, func(t *testing.T) {
			t.Parallel()
			s, sim := templateBaseline(t, spec.id)
			if s.ID != spec.id {
				t.Errorf("site field: got %q, want %q (the file name)", s.ID, spec.id)
			}
			for _, w := range sim.Warnings {
				t.Errorf("baseline warning: got %q, want none", w)
			}
			for _, p := range requiredProcesses {
				if !hasTransfer(s, p, "", "") {
					t.Errorf("process %s: got no transfer with a non-zero rate, want one", p)
				}
			}
			for _, tr := range s.Transfers {
				if !(tr.Spread > 0) {
					t.Errorf("%s transfer at line %d: got spread %g, want > 0", tr.Process, tr.Line, tr.Spread)
				}
			}
			if got := s.PoolIndex("fungi") >= 0; got != spec.mycorrhizal {
				t.Errorf("fungi pool present: got %v, want %v", got, spec.mycorrhizal)
			}
			if spec.mycorrhizal {
				for _, p := range []string{"mycorrhizal-uptake", "mycorrhizal-transfer", "fungal-turnover"} {
					if !hasTransfer(s, p, "", "") {
						t.Errorf("process %s: got none, want one (mycorrhizal host)", p)
					}
				}
			}
			if got := s.PoolIndex("foliage") >= 0; got != spec.perennial {
				t.Errorf("foliage pool present: got %v, want %v", got, spec.perennial)
			}
			if !spec.perennial {
				return
			}
			current := false
			for _, p := range []string{"uptake-ammonium", "uptake-nitrate", "mycorrhizal-transfer"} {
				current = current || hasTransfer(s, p, "", "foliage")
			}
			if !current {
				t.Error("foliage inputs: got no current uptake (uptake-ammonium, uptake-nitrate or mycorrhizal-transfer to foliage), want some")
			}
			for _, want := range [][3]string{
				{"allocation", "plant", "foliage"},
				{"retranslocation", "foliage", "plant"},
				{"litterfall", "foliage", "organic"},
			} {
				if !hasTransfer(s, want[0], want[1], want[2]) {
					t.Errorf("got no %s from %s to %s, want one", want[0], want[1], want[2])
				}
			}
		})
	}
}

// Baseline δ15N of each template against the typical values and rules of
// thumb of FACTS.md §6.
func TestTemplateBaselineRealism(t *testing.T) {
	t.Parallel()
	const (
		// Kendall 1998; Amundson et al. 2003: mineral soil δ15N is
		// typically 0 to +8 ‰ (range from memory, FACTS §6 status M).
		soilLow, soilHigh = 0.0, 8.0
		// Amundson et al. 2003: plants are more negative than soil,
		// typically by 2 to 6 ‰ (pattern confirmed, magnitude from
		// memory, FACTS §6).
		gapLow, gapHigh = 2.0, 6.0
	)
	for _, spec := range templateSpecs {
		t.Run(spec.id, func(t *testing.T) {
			t.Parallel()
			s, sim := templateBaseline(t, spec.id)
			x, p := &sim.Baseline, &sim.Base
			soil := observe(t, s, "soil", x, p)
			foliage := observe(t, s, "foliage", x, p)
			t.Logf("soil %.2f ‰, foliage %.2f ‰, soil − foliage %.2f ‰", soil, foliage, soil-foliage)
			// Kendall 1998; Amundson et al. 2003: mineral soil 0 to +8 ‰.
			if soil < soilLow || soil > soilHigh {
				t.Errorf("soil δ15N: got %.2f ‰, want %g to %g ‰", soil, soilLow, soilHigh)
			}
			// Amundson et al. 2003: foliage 2–6 ‰ below soil.
			if gap := soil - foliage; gap < gapLow || gap > gapHigh {
				t.Errorf("soil − foliage: got %.2f ‰, want %g to %g ‰", gap, gapLow, gapHigh)
			}
			// Högberg 1997: nitrification discriminates more than the
			// processes that feed ammonium, so ammonium is heavier than the
			// nitrate made from it (FACTS §1 and §7).
			nh4 := observe(t, s, "soil-ammonium", x, p)
			no3 := observe(t, s, "soil-nitrate", x, p)
			if !(nh4 > no3) {
				t.Errorf("soil ammonium %.2f ‰ vs nitrate %.2f ‰: got ammonium not heavier, want ammonium > nitrate", nh4, no3)
			}
			// Hobbie & Högberg 2012: mycorrhizal fungi keep 15N-enriched N
			// and pass depleted N to their host, so fungi sit above the
			// host's foliage.
			if spec.mycorrhizal {
				if fungi := observe(t, s, "fungi", x, p); !(fungi > foliage) {
					t.Errorf("fungi %.2f ‰ vs foliage %.2f ‰: got fungi not enriched, want fungi > foliage", fungi, foliage)
				}
			}
		})
	}
}

// Martinelli et al. 1999: foliage of tropical forests is on average 6.5 ‰
// higher than that of temperate forests. Two typical sites stand in for the
// biome means here, so the check asks for at least half of the published
// mean difference (the halving is common practice for comparing single
// sites with a mean, not a published number).
func TestTropicalFoliageAboveTemperate(t *testing.T) {
	t.Parallel()
	const meanDifference = 6.5 // ‰, Martinelli et al. 1999
	tropical := baselineValue(t, "tropical-lowland-forest", "foliage")
	temperate := baselineValue(t, "temperate-deciduous-forest", "foliage")
	if diff := tropical - temperate; diff < meanDifference/2 {
		t.Errorf("tropical − temperate foliage: got %.2f ‰ (%.2f vs %.2f), want ≥ %.2f ‰", diff, tropical, temperate, meanDifference/2)
	}
}

// Craine et al. 2009: relative to non-mycorrhizal plants, foliage of
// arbuscular hosts is 2.0 ‰ lower, of ectomycorrhizal hosts 3.2 ‰ and of
// ericoid hosts 5.9 ‰ lower. The ectomycorrhizal boreal template's foliage
// must therefore lie below that of every arbuscular template, and its
// soil–foliage gap be larger. Amundson et al. 2003: the plant–soil gap also
// grows as mean annual temperature falls, so the boreal gap is the largest
// of all templates with mycorrhizal hosts, the mixed temperate forest
// included.
func TestEctomycorrhizalFoliageDepleted(t *testing.T) {
	t.Parallel()
	gap := func(id string) float64 {
		return baselineValue(t, id, "soil") - baselineValue(t, id, "foliage")
	}
	ectoFoliage := baselineValue(t, ectoTemplate, "foliage")
	ectoGap := gap(ectoTemplate)
	for _, id := range arbuscularTemplates {
		// Craine et al. 2009: ECM foliage below AM foliage.
		if f := baselineValue(t, id, "foliage"); !(ectoFoliage < f) {
			t.Errorf("foliage: got %s %.2f ‰ vs %s %.2f ‰, want the ectomycorrhizal one lower", ectoTemplate, ectoFoliage, id, f)
		}
	}
	for _, spec := range templateSpecs {
		if !spec.mycorrhizal || spec.id == ectoTemplate {
			continue
		}
		// Craine et al. 2009 (mycorrhizal type); Amundson et al. 2003
		// (colder sites, larger gap).
		if g := gap(spec.id); !(ectoGap > g) {
			t.Errorf("soil − foliage: got %s %.2f ‰ vs %s %.2f ‰, want the ectomycorrhizal one larger", ectoTemplate, ectoGap, spec.id, g)
		}
	}
}

// Amundson et al. 2003: soil and plant δ15N decrease as mean annual
// precipitation increases; Craine et al. 2009: foliar δ15N rises as
// precipitation falls. The dry shrubland (about 300 mm) must be enriched
// relative to the mesic temperate grassland in both soil and foliage.
func TestDrySitesEnriched(t *testing.T) {
	t.Parallel()
	for _, obs := range []string{"soil", "foliage"} {
		dry := baselineValue(t, "dryland-shrubland", obs)
		mesic := baselineValue(t, "temperate-grassland", obs)
		if !(dry > mesic) {
			t.Errorf("%s: got dryland %.2f ‰ vs grassland %.2f ‰, want dryland higher", obs, dry, mesic)
		}
	}
}

// Pardo et al. 2002: after a northern hardwood watershed was clear-cut,
// foliar δ15N rose by about 2.9 ‰ within two years, with high nitrate loss.
// The change tested is a clear-cut analogue for every forest template: with
// the trees gone, plant uptake halves by every route (direct uptake of
// ammonium and nitrate, and the mycorrhizal route of uptake, transfer and
// turnover together); nitrification (with its gas) triples, immobilization
// halves for want of fresh litter carbon, and nitrate leaching rises
// fivefold (factors from memory, of the order of clear-cut experiments; the
// sign of every one raises N losses). Foliage must answer fast: the shift at
// two years is positive and at least half of the shift at twenty years,
// when the slow enrichment of soil organic N has begun to add to it (the
// 50 % threshold is the project issue's reading of "within two years",
// common practice, not a published number).
func TestForestFoliageRespondsWithinTwoYears(t *testing.T) {
	t.Parallel()
	clearCut := Sustained([]Knob{
		Factor("uptake-ammonium", 0.5), Factor("uptake-nitrate", 0.5),
		Factor("mycorrhizal-uptake", 0.5), Factor("mycorrhizal-transfer", 0.5), Factor("fungal-turnover", 0.5),
		Factor("nitrification", 3), Factor("nitrifier-gas", 3),
		Factor("immobilization-ammonium", 0.5), Factor("immobilization-nitrate", 0.5),
		Factor("leaching-nitrate", 5),
	})
	const (
		share = 0.5  // project issue, common practice
		early = 2.0  // years: Pardo et al. 2002 saw the rise within two years
		late  = 20.0 // years: the project issue's comparison horizon
	)
	for _, id := range forestTemplates {
		t.Run(id, func(t *testing.T) {
			t.Parallel()
			s, err := LoadSite(id, knowledge.MustDefault())
			if err != nil {
				t.Fatal(err)
			}
			shift := func(years float64) float64 {
				sim, err := Simulate(s, clearCut, &years)
				if err != nil {
					t.Fatalf("%g years: %v", years, err)
				}
				return observe(t, s, "foliage", &sim.Then, &sim.Changed) - observe(t, s, "foliage", &sim.Baseline, &sim.Base)
			}
			at2, at20 := shift(early), shift(late)
			t.Logf("foliar shift %.2f ‰ at %g years, %.2f ‰ at %g years (Pardo et al. 2002: about +2.9 ‰ within two years)", at2, early, at20, late)
			if !(at2 > 0) {
				t.Errorf("foliar shift at %g years: got %.2f ‰, want > 0", early, at2)
			}
			if !(at2 >= share*at20) {
				t.Errorf("foliar shift at %g years: got %.2f ‰, want ≥ %.0f %% of the %.2f ‰ at %g years", early, at2, 100*share, at20, late)
			}
		})
	}
}
