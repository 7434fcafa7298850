package forward

import (
	"math"
	"slices"
	"testing"

	"nlens/knowledge"
)

// The built-in site templates (knowledge/sites) stand for typical sites of
// their ecosystem. These tests hold each one's baseline steady state to the
// patterns the literature reports (FACTS.md §6, FACTS-2.md §2–§6), and check
// that the templates have every process the explanation engine turns. The
// expected values are published patterns, never numbers read off the model.

// templateSpec is what the project issues ask of one template: its
// mycorrhizal type and land use (DESIGN §3, §6), whether it is a forest (a
// forest floor is then required), whether its plants are mycorrhizal hosts
// with a modelled fungal pool, and whether they are perennial (so leaves
// are their own fast foliage pool).
type templateSpec struct {
	id          string
	mycorrhizal string
	landUse     string
	forest      bool
	fungi       bool
	perennial   bool
}

var templateSpecs = []templateSpec{
	{"temperate-deciduous-forest", "mixed", "forest", true, true, true},
	{"temperate-conifer-forest", "ecto", "forest", true, true, true},
	{"boreal-conifer-forest", "ecto", "forest", true, true, true},
	{"tropical-lowland-forest", "arbuscular", "forest", true, true, true},
	{"arctic-tundra", "ericoid", "grassland", false, true, true},
	{"temperate-grassland", "arbuscular", "grassland", false, true, true},
	{"dryland-shrubland", "arbuscular", "dryland", false, true, true},
	{"grazed-pasture", "arbuscular", "pasture", false, true, true},
	{"riparian-wetland", "mixed", "wetland", false, true, true},
	{"fertilized-cropland", "arbuscular", "cropland", false, false, false},
}

// forestTemplates are the templates whose land use is forest.
func forestTemplates() []string {
	var out []string
	for _, s := range templateSpecs {
		if s.forest {
			out = append(out, s.id)
		}
	}
	return out
}

// requiredProcesses must each appear with a non-zero rate in every
// template: the explanation engine changes them, and a process a template
// lacks cannot be tested there (project issues 5 and 12).
var requiredProcesses = []string{
	"mineralization", "nitrification", "nitrifier-gas", "denitrification",
	"volatilization", "leaching-nitrate", "uptake-ammonium", "uptake-nitrate",
	"immobilization-ammonium", "n2o-reduction", "n2o-emission",
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
// pool from to pool to ("" matches any pool, "out" a loss) with a non-zero
// rate.
func hasTransfer(s *Site, process, from, to string) bool {
	for _, tr := range s.Transfers {
		if tr.Process != process || tr.RateKgPerHaYr <= 0 {
			continue
		}
		if from != "" && s.Pools[tr.From] != from {
			continue
		}
		switch {
		case to == "out" && tr.To != Out:
			continue
		case to != "" && to != "out" && (tr.To == Out || s.Pools[tr.To] != to):
			continue
		}
		return true
	}
	return false
}

// Every template is a complete site: its id is its file name, it states
// its mycorrhizal type and land use (DESIGN §3), its inputs and transfers
// balance so that the model's steady state reproduces the file's pools
// within 10 % (DESIGN §3: no warning), every transfer carries a spread for
// uncertainty draws, and it has every process the engine turns (project
// issues). N2O is an intermediate (DESIGN §3): nitrifier gas and
// denitrification feed the n2o pool, which is reduced to N2 or emitted.
// Every forest has a forest floor fed by litterfall, with its own
// mineralization and incorporation into the mineral soil (issue 12).
// Mycorrhizal hosts carry fungi with uptake, transfer and turnover;
// perennial plants carry a foliage pool fed by current uptake and by
// allocation, and emptied by retranslocation and litterfall.
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
			if s.MycorrhizalType != spec.mycorrhizal {
				t.Errorf("mycorrhizal_type: got %q, want %q", s.MycorrhizalType, spec.mycorrhizal)
			}
			if s.LandUse != spec.landUse {
				t.Errorf("land_use: got %q, want %q", s.LandUse, spec.landUse)
			}
			if len(s.References) == 0 || s.Note == "" || s.Description == "" {
				t.Errorf("description, references and note: got %d references and a note of %d bytes, want a description, references and a note saying what is from memory", len(s.References), len(s.Note))
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
			for _, want := range [][3]string{
				{"denitrification", "nitrate", "n2o"},
				{"nitrifier-gas", "ammonium", "n2o"},
				{"n2o-reduction", "n2o", "out"},
				{"n2o-emission", "n2o", "out"},
			} {
				if !hasTransfer(s, want[0], want[1], want[2]) {
					t.Errorf("got no %s from %s to %s, want one (N2O as an intermediate, DESIGN §3)", want[0], want[1], want[2])
				}
			}
			if got := s.PoolIndex("forest-floor") >= 0; spec.forest && !got {
				t.Error("forest-floor pool: got none, want one in every forest template (issue 12)")
			}
			if spec.forest {
				for _, want := range [][3]string{
					{"litterfall", "foliage", "forest-floor"},
					{"mineralization", "forest-floor", "ammonium"},
					{"incorporation", "forest-floor", "organic"},
				} {
					if !hasTransfer(s, want[0], want[1], want[2]) {
						t.Errorf("got no %s from %s to %s, want one (forest floor, issue 12)", want[0], want[1], want[2])
					}
				}
			}
			if got := s.PoolIndex("fungi") >= 0; got != spec.fungi {
				t.Errorf("fungi pool present: got %v, want %v", got, spec.fungi)
			}
			if spec.fungi {
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
			litterTo := "organic"
			if s.PoolIndex("forest-floor") >= 0 {
				litterTo = "forest-floor"
			}
			for _, want := range [][3]string{
				{"allocation", "plant", "foliage"},
				{"retranslocation", "foliage", "plant"},
				{"litterfall", "foliage", litterTo},
			} {
				if !hasTransfer(s, want[0], want[1], want[2]) {
					t.Errorf("got no %s from %s to %s, want one", want[0], want[1], want[2])
				}
			}
		})
	}
}

// The grazed pasture returns grazed shoot N as urine to ammonium and dung
// to soil organic N and exports some in animal product (DESIGN §4,
// grazing); the riparian wetland receives groundwater nitrate (issue 12).
func TestTemplateSpecialRoutes(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	pasture, err := LoadSite("grazed-pasture", kb)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range [][3]string{
		{"grazing-urine", "foliage", "ammonium"},
		{"grazing-dung", "foliage", "organic"},
		{"grazing-export", "foliage", "out"},
		{"volatilization", "ammonium", "out"},
	} {
		if !hasTransfer(pasture, want[0], want[1], want[2]) {
			t.Errorf("grazed-pasture: got no %s from %s to %s, want one", want[0], want[1], want[2])
		}
	}
	riparian, err := LoadSite("riparian-wetland", kb)
	if err != nil {
		t.Fatal(err)
	}
	// 10 kg N/ha/yr: a floor for "fed by groundwater nitrate" below the
	// template's own 25 kg N/ha/yr (its note, from memory); the floor itself
	// has no recorded source (engineering choice).
	nitrate := riparian.PoolIndex("nitrate")
	found := false
	for _, in := range riparian.Inputs {
		found = found || (in.To == nitrate && in.Source == "" && in.RateKgPerHaYr >= 10)
	}
	if !found {
		t.Error("riparian-wetland: got no groundwater nitrate input (an input to nitrate of at least 10 kg N/ha/yr that is not deposition), want one")
	}
}

// A realism bound is one published pattern with its range and source.
type realismBound struct {
	pattern   string
	low, high float64
	source    string
}

// Template classes for the realism table.
var (
	// N-limited sites: little nitrification, plants fed largely through
	// ectomycorrhizal or ericoid fungi.
	nLimited = []string{"boreal-conifer-forest", "temperate-conifer-forest", "temperate-deciduous-forest", "arctic-tundra"}
	// Nitrifying sites: a large share of ammonium turnover is nitrified.
	nitrifying = []string{"tropical-lowland-forest", "temperate-grassland", "dryland-shrubland", "grazed-pasture", "fertilized-cropland"}
	// Denitrifying sites fed by nitrate from outside.
	denitrifying = []string{"riparian-wetland"}
)

// Patterns of the realism table, each computed from the baseline.
const (
	patSoil            = "soil"
	patFoliage         = "foliage"
	patSoilMinusFol    = "soil − foliage"
	patNH4MinusNO3     = "soil-ammonium − soil-nitrate"
	patNH4MinusSoil    = "soil-ammonium − soil"
	patNH4             = "soil-ammonium"
	patNO3             = "soil-nitrate"
	patFungiMinusFol   = "fungi − foliage"
	patSoilMinusFloor  = "soil − forest-floor"
	patFloorMinusLit   = "forest-floor − litter"
	patNO3MinusN2O     = "soil-nitrate − n2o"
	patN2O             = "n2o"
	patNetGrossMin     = "net:mineralization / flux:mineralization"
	patNetGrossNit     = "net:nitrification / flux:nitrification"
	patFloorPoolKg     = "forest-floor pool (file), kg N/ha"
	patMineralOrgPoolK = "organic pool (file), kg N/ha"
)

// realismTable returns the bounds each template must meet, with their
// sources. Ranges marked "from memory" are FACTS status M; "derived" means
// computed here from confirmed values with the formula named.
func realismTable() map[string][]realismBound {
	all := map[string][]realismBound{}
	add := func(ids []string, b realismBound) {
		for _, id := range ids {
			all[id] = append(all[id], b)
		}
	}
	var every []string
	for _, s := range templateSpecs {
		every = append(every, s.id)
	}
	add(every, realismBound{patSoil, 0, 8, "Kendall 1998; Amundson et al. 2003: mineral soil δ15N typically 0 to +8 ‰ (FACTS.md §6, from memory)"})
	add(every, realismBound{patFoliage, -10, 10, "Craine et al. 2009: foliar δ15N mostly −10 to +10 ‰ (FACTS.md §6, range from memory)"})
	add(every, realismBound{patSoilMinusFol, 2, 6, "Amundson et al. 2003: plants 2 to 6 ‰ below soil (pattern confirmed, magnitude from memory, FACTS.md §6)"})
	add(nLimited, realismBound{patNH4MinusNO3, 3, 14, "Högberg 1997: forest NH4+ −2 to +8 ‰ and NO3− −10 to +3 ‰, NH4+ above NO3− (numbers from memory, FACTS-2 §2); Koba et al. 1998: NH4+ above NO3− at every depth (confirmed); 17–19 ‰ is above the field data for N-limited soils (issue 12)"})
	add(nitrifying, realismBound{patNH4MinusNO3, 3, 20, "Koba et al. 1998: NH4+ above NO3− (confirmed); the difference is an expressed nitrification ε, bounded above by the 20 ‰ typical ecosystem value of the knowledge base (FACTS-2 §2, derived)"})
	add(denitrifying, realismBound{patNH4MinusNO3, -15, 0, "Granger et al. 2008; Kendall 1998: denitrification enriches the nitrate left (confirmed), so where it consumes most nitrate and little is nitrified, nitrate rises above ammonium"})
	add(nLimited, realismBound{patNH4MinusSoil, -3, 3, "Koba et al. 1998: where ammonium dominates, total N > NH4+ > NO3− (confirmed); Högberg 1997 (from memory)"})
	add(denitrifying, realismBound{patNH4MinusSoil, -3, 3, "Koba et al. 1998: little nitrification leaves NH4+ near total N (confirmed)"})
	add(nitrifying, realismBound{patNH4MinusSoil, 0, 10, "Koba et al. 1998: with high net nitrification NH4+ > total N, NH4+ at most +15.6 ‰ where total N at most +6.8 ‰ (confirmed)"})
	forestsNL := []string{"boreal-conifer-forest", "temperate-conifer-forest", "temperate-deciduous-forest"}
	add(forestsNL, realismBound{patNH4, -2, 8, "Högberg 1997: forest soil NH4+ −2 to +8 ‰ (FACTS-2 §2, from memory)"})
	add(forestTemplates(), realismBound{patNO3, -10, 3, "Högberg 1997: forest soil NO3− −10 to +3 ‰ (FACTS-2 §2, from memory)"})
	for _, spec := range templateSpecs {
		if !spec.fungi {
			continue
		}
		switch spec.mycorrhizal {
		case "arbuscular":
			add([]string{spec.id}, realismBound{patFungiMinusFol, 0, 3, "Klink et al. 2020: arbuscular hyphae enriched over leaves (confirmed); arbuscular transfer fractionation 0–3 ‰ (FACTS-2 §3, from memory)"})
		default:
			add([]string{spec.id}, realismBound{patFungiMinusFol, 4, 10, "FACTS.md §4.9 (derived): δ_fungus − δ_plant = Δf·(Tr + f_m·(1 − Tr)), with Δf 8–10 ‰ (Hobbie & Hobbie 2006, 2008, from memory), Tr 0.3–0.9 (Hobbie & Hobbie 2008, from memory) and f_m 0.5–0.9, is 5.2 to 9.9 ‰; ericoid and ectomycorrhizal plants fall 5–6 ‰ once sporocarps appear (Hobbie et al. 2005, confirmed)"})
		}
	}
	withFloor := append(forestTemplates(), "arctic-tundra")
	add(withFloor, realismBound{patSoilMinusFloor, 1, 8, "Pardo et al. 2002: Oie −0.02 ‰ to Bs2 +7.7 ‰ (confirmed); Nadelhoffer & Fry 1988: litter to deep mineral soil +3 to +10 ‰ (from memory)"})
	add(withFloor, realismBound{patFloorMinusLit, 0, 5, "Philben et al. 2018: δ15N rises 3–7 ‰ down the organic horizons (confirmed); Pardo et al. 2002: Oie above foliage (−0.02 vs −1.2 ‰, confirmed)"})
	add(every, realismBound{patNO3MinusN2O, 5, 60, "Well & Flessa 2009: N2O made from nitrate is 48–54 ‰ lighter without reduction (confirmed, FACTS-2 §5); Jinuntuya 2007: reduction enriches the N2O left by 4–9 ‰ (confirmed)"})
	var upland []string
	for _, id := range every {
		if !slices.Contains(denitrifying, id) {
			upland = append(upland, id)
		}
	}
	add(upland, realismBound{patN2O, -50, -5, "Snider et al. 2015 (cited in FACTS-2 §5): bulk δ15N of soil-emitted N2O −50 to −10 ‰ (from memory); −5 allows the enrichment by partial reduction (Jinuntuya 2007)"})
	add([]string{"boreal-conifer-forest", "temperate-conifer-forest", "temperate-deciduous-forest", "arctic-tundra"}, realismBound{patNetGrossMin, 0.1, 0.5, "Booth et al. 2005: net:gross mineralization about 0.1–0.5 in forests (FACTS-2 §6, from memory)"})
	add([]string{"boreal-conifer-forest", "temperate-conifer-forest"}, realismBound{patNetGrossNit, 0, 0.5, "Stark & Hart 1997: in undisturbed conifer forests net nitrification ≪ gross (confirmed, qualitative)"})
	add(every, realismBound{patNetGrossNit, 0, 1, "net rates must be positive (a log-ratio observable, DESIGN §3) and below gross (definition)"})
	add(every, realismBound{patNetGrossMin, 0, 1, "net rates must be positive (a log-ratio observable, DESIGN §3) and below gross (definition)"})
	add([]string{"boreal-conifer-forest"}, realismBound{patFloorPoolKg, 300, 1000, "boreal forest floor (mor) 300–1000 kg N/ha (FACTS-2 §4, from memory)"})
	add([]string{"boreal-conifer-forest"}, realismBound{patMineralOrgPoolK, 1000, 3000, "boreal mineral soil 0–30 cm 1000–3000 kg N/ha (FACTS-2 §4, from memory)"})
	add([]string{"temperate-conifer-forest", "temperate-deciduous-forest"}, realismBound{patFloorPoolKg, 500, 1500, "temperate forest floor 500–1500 kg N/ha (FACTS-2 §4, from memory)"})
	add([]string{"temperate-conifer-forest", "temperate-deciduous-forest"}, realismBound{patMineralOrgPoolK, 2000, 6000, "temperate mineral soil 0–30 cm 2000–6000 kg N/ha (FACTS-2 §4, from memory)"})
	return all
}

// patternValue computes one pattern of the realism table at the baseline.
func patternValue(t *testing.T, s *Site, sim *Simulation, pattern string) float64 {
	t.Helper()
	x, p := &sim.Baseline, &sim.Base
	v := func(name string) float64 { return observe(t, s, name, x, p) }
	switch pattern {
	case patSoil, patFoliage, patNH4, patNO3, patN2O:
		return v(pattern)
	case patSoilMinusFol:
		return v("soil") - v("foliage")
	case patNH4MinusNO3:
		return v("soil-ammonium") - v("soil-nitrate")
	case patNH4MinusSoil:
		return v("soil-ammonium") - v("soil")
	case patFungiMinusFol:
		return v("fungi") - v("foliage")
	case patSoilMinusFloor:
		return v("soil") - v("forest-floor")
	case patFloorMinusLit:
		return v("forest-floor") - v("litter")
	case patNO3MinusN2O:
		return v("soil-nitrate") - v("n2o")
	case patNetGrossMin:
		return v("net:mineralization") / v("flux:mineralization")
	case patNetGrossNit:
		return v("net:nitrification") / v("flux:nitrification")
	case patFloorPoolKg:
		return s.PoolKg[s.PoolIndex("forest-floor")]
	case patMineralOrgPoolK:
		return s.PoolKg[s.PoolIndex("organic")]
	}
	t.Fatalf("unknown pattern %q", pattern)
	return math.NaN()
}

// The realism table: every template's baseline against each published
// pattern for its ecosystem, including the NH4+–NO3− difference and the
// fungi–foliage difference by mycorrhizal type (issue 12).
func TestTemplateRealismTable(t *testing.T) {
	t.Parallel()
	table := realismTable()
	for _, spec := range templateSpecs {
		t.Run(spec.id, func(t *testing.T) {
			t.Parallel()
			s, sim := templateBaseline(t, spec.id)
			if len(table[spec.id]) == 0 {
				t.Fatal("no realism bounds for this template")
			}
			for _, b := range table[spec.id] {
				got := patternValue(t, s, sim, b.pattern)
				t.Logf("%-42s %8.3f  in [%g, %g]", b.pattern, got, b.low, b.high)
				if !(got >= b.low && got <= b.high) {
					t.Errorf("%s: got %.3f, want %g to %g (%s)", b.pattern, got, b.low, b.high, b.source)
				}
			}
		})
	}
}

// Martinelli et al. 1999: foliage of tropical forests is on average 6.5 ‰
// higher than that of temperate forests. Typical sites stand in for the
// biome means here, so the check asks for at least half of the published
// mean difference (the halving is common practice for comparing single
// sites with a mean, not a published number).
func TestTropicalFoliageAboveTemperate(t *testing.T) {
	t.Parallel()
	const meanDifference = 6.5 // ‰, Martinelli et al. 1999
	tropical := baselineValue(t, "tropical-lowland-forest", "foliage")
	for _, id := range []string{"temperate-deciduous-forest", "temperate-conifer-forest"} {
		temperate := baselineValue(t, id, "foliage")
		if diff := tropical - temperate; diff < meanDifference/2 {
			t.Errorf("tropical − %s foliage: got %.2f ‰ (%.2f vs %.2f), want ≥ %.2f ‰", id, diff, tropical, temperate, meanDifference/2)
		}
	}
}

// Craine et al. 2009: relative to non-mycorrhizal plants, foliage of
// arbuscular hosts is 2.0 ‰ lower, of ectomycorrhizal hosts 3.2 ‰ and of
// ericoid hosts 5.9 ‰ lower. The ericoid tundra's foliage lies below that of
// every ectomycorrhizal template, and theirs below every arbuscular one.
func TestFoliageByMycorrhizalType(t *testing.T) {
	t.Parallel()
	foliage := map[string]float64{}
	byType := map[string][]string{}
	for _, spec := range templateSpecs {
		if !spec.fungi {
			continue
		}
		foliage[spec.id] = baselineValue(t, spec.id, "foliage")
		byType[spec.mycorrhizal] = append(byType[spec.mycorrhizal], spec.id)
	}
	below := func(low, high string) {
		for _, a := range byType[low] {
			for _, b := range byType[high] {
				// Craine et al. 2009: the offsets order ericoid < ecto < arbuscular.
				if !(foliage[a] < foliage[b]) {
					t.Errorf("foliage: got %s (%s) %.2f ‰ vs %s (%s) %.2f ‰, want the first lower", a, low, foliage[a], b, high, foliage[b])
				}
			}
		}
	}
	below("ericoid", "ecto")
	below("ecto", "arbuscular")
}

// Amundson et al. 2003: the plant–soil gap grows as mean annual
// temperature falls (pattern confirmed). Ordered from warm to cold, the
// forest templates and the tundra must show a growing soil − foliage gap.
func TestPlantSoilGapGrowsWithCold(t *testing.T) {
	t.Parallel()
	warmToCold := []string{"tropical-lowland-forest", "temperate-deciduous-forest", "temperate-conifer-forest", "boreal-conifer-forest", "arctic-tundra"}
	prev, prevID := math.Inf(-1), ""
	for _, id := range warmToCold {
		g := baselineValue(t, id, "soil") - baselineValue(t, id, "foliage")
		if !(g > prev) {
			t.Errorf("soil − foliage: got %s %.2f ‰ not above %s %.2f ‰, want the gap to grow from warm to cold sites", id, g, prevID, prev)
		}
		prev, prevID = g, id
	}
}

// Amundson et al. 2003: soil and plant δ15N decrease as mean annual
// precipitation increases, and the plant–soil gap grows with it; Craine et
// al. 2009: foliar δ15N rises as precipitation falls. The dry shrubland
// (about 300 mm) must be enriched relative to the mesic temperate grassland
// in both soil and foliage, with a smaller gap.
func TestDrySitesEnriched(t *testing.T) {
	t.Parallel()
	for _, obs := range []string{"soil", "foliage"} {
		dry := baselineValue(t, "dryland-shrubland", obs)
		mesic := baselineValue(t, "temperate-grassland", obs)
		if !(dry > mesic) {
			t.Errorf("%s: got dryland %.2f ‰ vs grassland %.2f ‰, want dryland higher", obs, dry, mesic)
		}
	}
	gap := func(id string) float64 { return baselineValue(t, id, "soil") - baselineValue(t, id, "foliage") }
	if d, m := gap("dryland-shrubland"), gap("temperate-grassland"); !(d < m) {
		t.Errorf("soil − foliage: got dryland %.2f ‰ vs grassland %.2f ‰, want dryland smaller", d, m)
	}
}

// Frank & Evans 1997: grazed grassland soils were 0.7 ‰ above long-term
// exclosures (confirmed); Conen et al. 2013: perturbed soils (overgrazing,
// fire) are enriched at a given C:N (secondary citation). The grazed
// pasture's soil lies above the lightly used temperate grassland's.
func TestGrazedSoilEnriched(t *testing.T) {
	t.Parallel()
	grazed := baselineValue(t, "grazed-pasture", "soil")
	ungrazed := baselineValue(t, "temperate-grassland", "soil")
	if !(grazed > ungrazed) {
		t.Errorf("soil: got grazed-pasture %.2f ‰ vs temperate-grassland %.2f ‰, want grazed higher", grazed, ungrazed)
	}
}

// Riparian denitrification (Kendall 1998; Granger et al. 2008, confirmed):
// nitrate leaving a denitrifying riparian zone is enriched in 15N over the
// groundwater nitrate entering it, and its δ18O rises too. The δ18O check
// compares with the O-flux-weighted δ18O of every nitrate source (the
// inputs at their δ18O and nitrification at the site's nitrification δ18O),
// computed here by hand from the file: without fractionating consumers the
// nitrate would sit at that mixture.
func TestRiparianNitrateEnriched(t *testing.T) {
	t.Parallel()
	s, sim := templateBaseline(t, "riparian-wetland")
	x, p := &sim.Baseline, &sim.Base
	no3 := observe(t, s, "leachate-nitrate", x, p)
	d18 := observe(t, s, "nitrate-d18o", x, p)
	nitrate := s.PoolIndex("nitrate")
	var groundwater Input
	var oFlux, oWeighted float64
	for _, in := range s.Inputs {
		if in.To != nitrate {
			continue
		}
		if in.RateKgPerHaYr > groundwater.RateKgPerHaYr {
			groundwater = in
		}
		oFlux += in.RateKgPerHaYr
		oWeighted += in.RateKgPerHaYr * in.D18O
	}
	for _, tr := range s.Transfers {
		if tr.To == nitrate {
			oFlux += tr.RateKgPerHaYr
			oWeighted += tr.RateKgPerHaYr * s.NitrificationD18O
		}
	}
	const minEnrichment = 3.0 // ‰: at least a fifth of the 15 ‰ typical denitrification ε (common practice for "clearly enriched")
	if no3-groundwater.D15N < minEnrichment {
		t.Errorf("leachate nitrate δ15N: got %.2f ‰ against groundwater nitrate %.2f ‰, want at least %.0f ‰ above", no3, groundwater.D15N, minEnrichment)
	}
	if mix := oWeighted / oFlux; !(d18 > mix+minEnrichment) {
		t.Errorf("nitrate δ18O: got %.2f ‰ against its sources' mixture %.2f ‰, want at least %.0f ‰ above", d18, mix, minEnrichment)
	}
}

// Pardo et al. 2002: after a northern hardwood watershed was clear-cut,
// foliar δ15N rose by about 2.9 ‰ within two years, with high nitrate loss,
// and the O horizons rose (Oie +1.3 ‰, Oa +0.9 ‰ at three years) while the
// mineral horizons did not change. The change tested is a clear-cut
// analogue for every forest template: with the trees gone, plant uptake
// halves by every route (direct uptake of ammonium and nitrate, and the
// mycorrhizal route of uptake, transfer and turnover together);
// nitrification (with its gas) triples, immobilization halves for want of
// fresh litter carbon, and nitrate leaching rises fivefold (factors from
// memory, of the order of clear-cut experiments; the sign of every one
// raises N losses). Foliage must answer fast: the shift at two years is
// positive and at least half of the shift at five years (Pardo's foliar
// signal peaked at 1–2 years; by five years the slower forest floor has
// begun to add to it; the 50 % threshold is the project's reading of
// "within two years", common practice, not a published number). At three
// years the forest floor has moved more than the mineral soil.
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
		share = 0.5 // project issue, common practice
		early = 2.0 // years: Pardo et al. 2002 saw the rise within two years
		later = 5.0 // years: Pardo et al. 2002 saw the foliar signal fall by 3–5 years
		floor = 3.0 // years: Pardo et al. 2002 sampled the O horizons at three years
	)
	for _, id := range forestTemplates() {
		t.Run(id, func(t *testing.T) {
			t.Parallel()
			s, err := LoadSite(id, knowledge.MustDefault())
			if err != nil {
				t.Fatal(err)
			}
			shift := func(name string, years float64) float64 {
				sim, err := Simulate(s, clearCut, &years)
				if err != nil {
					t.Fatalf("%g years: %v", years, err)
				}
				return observe(t, s, name, &sim.Then, &sim.Changed) - observe(t, s, name, &sim.Baseline, &sim.Base)
			}
			at2, at5 := shift("foliage", early), shift("foliage", later)
			t.Logf("foliar shift %.2f ‰ at %g years, %.2f ‰ at %g years (Pardo et al. 2002: about +2.9 ‰ within two years)", at2, early, at5, later)
			if !(at2 > 0) {
				t.Errorf("foliar shift at %g years: got %.2f ‰, want > 0", early, at2)
			}
			if !(at2 >= share*at5) {
				t.Errorf("foliar shift at %g years: got %.2f ‰, want ≥ %.0f %% of the %.2f ‰ at %g years", early, at2, 100*share, at5, later)
			}
			ff, soil := shift("forest-floor", floor), shift("soil", floor)
			t.Logf("at %g years: forest floor %+.2f ‰, mineral soil %+.2f ‰ (Pardo et al. 2002: Oie +1.3 ‰, mineral horizons unchanged)", floor, ff, soil)
			if !(ff > 0 && ff > soil) {
				t.Errorf("at %g years: got forest floor %+.2f ‰ and mineral soil %+.2f ‰, want the forest floor up and above the mineral soil's shift", floor, ff, soil)
			}
		})
	}
}
