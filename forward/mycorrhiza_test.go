package forward

import (
	"strings"
	"testing"

	"nlens/knowledge"
)

// mycSite is a small site with a fungal pool; {type} and {extra} are
// replaced by the tests.
const mycSite = `site: myc
{type}
pools: {organic: 1000, ammonium: 2, nitrate: 1, plant: 100, fungi: 5}
inputs:
  - {to: ammonium, rate: 5, d15n: -1}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 40}
  - {process: mycorrhizal-uptake, from: ammonium, to: fungi, rate: 20}
  - {process: mycorrhizal-transfer, from: fungi, to: plant, rate: 8}
  - {process: fungal-turnover, from: fungi, to: organic, rate: 12}
  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 10}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 15}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 12}
  - {process: leaching-nitrate, from: nitrate, to: out, rate: 3}
  - {process: litterfall, from: plant, to: organic, rate: 30}
  - {process: leaching-organic, from: organic, to: out, rate: 2}
{extra}`

func parseMyc(t *testing.T, typ, extra string) (*Site, error) {
	t.Helper()
	text := strings.NewReplacer("{type}", typ, "{extra}", extra).Replace(mycSite)
	return ParseSite("myc.yaml", []byte(text), knowledge.MustDefault())
}

// The site's mycorrhizal type sets the ε of mycorrhizal-transfer (DESIGN
// §3): ecto- and ericoid fungi pass N depleted by Δf about 8–10 ‰ (Hobbie
// & Hobbie 2006, 2008; from memory, FACTS-2 §3), arbuscular fungi by a
// small 0–3 ‰ (FACTS-2 §3, from memory); a mixed site uses the physiology
// its knowledge entry names; a site without a type gets the generic entry.
// A transfer that gives its own ε keeps it.
func TestMycorrhizalTypeSetsTransferEffect(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name, typ string
		low, high float64 // the published range the ε must lie in
	}{
		{"ecto", "mycorrhizal_type: ecto", 8, 10},
		{"ericoid", "mycorrhizal_type: ericoid", 8, 10},
		{"arbuscular", "mycorrhizal_type: arbuscular", 0, 3},
		{"mixed", "mycorrhizal_type: mixed", 0, 10},
		{"unstated", "", 8, 10},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			s, err := parseMyc(t, tt.typ, "")
			if err != nil {
				t.Fatal(err)
			}
			for _, tr := range s.Transfers {
				if tr.Process != "mycorrhizal-transfer" {
					continue
				}
				if tr.Epsilon < tt.low || tr.Epsilon > tt.high {
					t.Errorf("ε: got %g ‰, want %g to %g ‰", tr.Epsilon, tt.low, tt.high)
				}
				if r := tr.Effect.RangePermil; len(r) != 2 || r[0] < tt.low || r[1] > tt.high {
					t.Errorf("ε range for draws: got %v, want inside [%g, %g]", r, tt.low, tt.high)
				}
				if len(tr.Effect.Refs) == 0 {
					t.Error("effect references: got none, want the type's sources")
				}
			}
		})
	}
	// A mixed site resolves to the type its knowledge entry names.
	kb := knowledge.MustDefault()
	fp, ok := kb.FungalPhysiology("mixed")
	if !ok || fp.Models == "" {
		t.Fatalf("mixed: got %+v, %v, want the type it models", fp, ok)
	}
	mixed, _ := parseMyc(t, "mycorrhizal_type: mixed", "")
	modelled, _ := parseMyc(t, "mycorrhizal_type: "+fp.Models, "")
	if mixed.Transfers[2].Epsilon != modelled.Transfers[2].Epsilon {
		t.Errorf("mixed ε %g, want that of %s (%g)", mixed.Transfers[2].Epsilon, fp.Models, modelled.Transfers[2].Epsilon)
	}
	// The file's own ε wins.
	own, err := ParseSite("myc.yaml", []byte(strings.NewReplacer("{type}", "mycorrhizal_type: arbuscular", "{extra}", "",
		"{process: mycorrhizal-transfer, from: fungi, to: plant, rate: 8}", "{process: mycorrhizal-transfer, from: fungi, to: plant, rate: 8, epsilon: 7}").Replace(mycSite)), kb)
	if err != nil {
		t.Fatal(err)
	}
	if tr := own.Transfers[2]; tr.Epsilon != 7 || !tr.EpsilonFixed {
		t.Errorf("file ε: got %g (fixed %v), want 7 (fixed)", tr.Epsilon, tr.EpsilonFixed)
	}
}

// SetMycorrhizalType (for a study that states its site's type) resolves
// the fungal transfer ε again and refuses none for a site with fungi.
func TestSetMycorrhizalType(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	s, err := parseMyc(t, "mycorrhizal_type: ecto", "")
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SetMycorrhizalType(kb, "arbuscular"); err != nil {
		t.Fatal(err)
	}
	want := kb.MycorrhizalEffect("arbuscular").EpsilonPermil
	if got := s.Transfers[2].Epsilon; got != want || s.MycorrhizalType != "arbuscular" {
		t.Errorf("after SetMycorrhizalType: got ε %g and type %q, want %g and arbuscular", got, s.MycorrhizalType, want)
	}
	if p := s.Params(); p.Eps15[2] != want {
		t.Errorf("Params ε: got %g, want %g", p.Eps15[2], want)
	}
	for _, bad := range []string{"none", "ectomycorrhizal"} {
		if err := s.SetMycorrhizalType(kb, bad); err == nil {
			t.Errorf("SetMycorrhizalType(%q): got no error, want one", bad)
		}
	}
}

// Bad values of the new site keys are positioned errors (DESIGN §3, STYLE
// 11).
func TestSiteKeysOfVersion2Refused(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name, typ, extra, old, new, want string
	}{
		{"unknown type", "mycorrhizal_type: ectomycorrhizal", "", "", "", `myc.yaml:2: mycorrhizal_type: unknown mycorrhizal type "ectomycorrhizal" (types: ecto, ericoid, arbuscular, none, mixed)`},
		{"unknown land use", "land_use: forestry", "", "", "", `myc.yaml:2: land_use: unknown land use "forestry" (land uses: forest, grassland, cropland, pasture, wetland, dryland, urban)`},
		{"none with fungi", "mycorrhizal_type: none", "", "", "", "pools.fungi: the site's mycorrhizal_type is none, but it has a pool of mycorrhizal fungi"},
		{"fixation as a transfer", "", "  - {process: fixation, from: plant, to: organic, rate: 1}\n", "", "", "transfers[10].process: fixation brings N from outside the site: give it as an input"},
		{"n2o pool without a way out", "", "", "nitrate: 1,", "nitrate: 1, n2o: 0.001,", `pools.n2o: pool "n2o" has no way out`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			text := strings.NewReplacer("{type}", tt.typ, "{extra}", tt.extra).Replace(mycSite)
			if tt.old != "" {
				text = strings.Replace(text, tt.old, tt.new, 1)
			}
			_, err := ParseSite("myc.yaml", []byte(text), knowledge.MustDefault())
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Errorf("got %v\nwant it to contain %q", err, tt.want)
			}
		})
	}
}

// The measurement catalogue follows the site (issue 12): every catalogue
// observable is one the model knows; sporocarps are offered only where the
// hosts are ecto-, ericoid or mixed mycorrhizal, never to an arbuscular
// grassland; forest-floor δ15N only where there is a forest floor.
func TestCatalogueFollowsTheSite(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	for _, m := range kb.Measurements {
		if !KnownObservable(m.Observable) {
			t.Errorf("measurement %s: observable %q is not a model observable", m.ID, m.Observable)
		}
	}
	sporocarp, ok := kb.Measurement("fungal-sporocarp-d15n")
	if !ok {
		t.Fatal("no fungal-sporocarp-d15n in the catalogue")
	}
	floor, ok := kb.Measurement("forest-floor-d15n")
	if !ok {
		t.Fatal("no forest-floor-d15n in the catalogue")
	}
	for _, spec := range templateSpecs {
		s, err := LoadSite(spec.id, kb)
		if err != nil {
			t.Fatal(err)
		}
		wantSporocarp := spec.fungi && spec.mycorrhizal != "arbuscular"
		if got := s.Offers(sporocarp); got != wantSporocarp {
			t.Errorf("%s (%s): Offers(sporocarps) = %v, want %v", spec.id, spec.mycorrhizal, got, wantSporocarp)
		}
		if got := s.Offers(floor); got != (s.PoolIndex("forest-floor") >= 0) {
			t.Errorf("%s: Offers(forest-floor δ15N) = %v, want %v", spec.id, got, !got)
		}
		for _, id := range []string{"net-nitrification", "net-mineralization", "n2o-d15n", "foliar-n"} {
			m, _ := kb.Measurement(id)
			if !s.Offers(m) {
				t.Errorf("%s: Offers(%s) = false, want true", spec.id, id)
			}
		}
	}
}
