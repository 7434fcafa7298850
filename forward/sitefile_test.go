package forward

import (
	"bytes"
	"reflect"
	"strings"
	"testing"

	"nlens/knowledge"
)

// roundTrip encodes the site and parses the text back.
func roundTrip(t *testing.T, s *Site, opt EncodeOptions) (*Site, string) {
	t.Helper()
	kb := knowledge.MustDefault()
	var buf bytes.Buffer
	if err := EncodeSite(&buf, s, kb, opt); err != nil {
		t.Fatal(err)
	}
	back, err := ParseSite("exported.yaml", buf.Bytes(), kb)
	if err != nil {
		t.Fatalf("the exported file does not parse: %v\n%s", err, buf.String())
	}
	return back, buf.String()
}

// sameSite compares what the model uses: pools, parameters and everything
// the draws read (fixed flags, spreads, effects, sources), and the text
// fields of the file.
func sameSite(t *testing.T, got, want *Site) {
	t.Helper()
	if got.ID != want.ID || got.Description != want.Description || got.Note != want.Note || got.MycorrhizalType != want.MycorrhizalType || got.LandUse != want.LandUse || !reflect.DeepEqual(got.References, want.References) {
		t.Errorf("header fields differ: got %q %q %q %q, want %q %q %q %q", got.ID, got.MycorrhizalType, got.LandUse, got.References, want.ID, want.MycorrhizalType, want.LandUse, want.References)
	}
	if !reflect.DeepEqual(got.Pools, want.Pools) || !reflect.DeepEqual(got.PoolKg, want.PoolKg) {
		t.Errorf("pools: got %v %v, want %v %v", got.Pools, got.PoolKg, want.Pools, want.PoolKg)
	}
	gp, wp := got.Params(), want.Params()
	if !reflect.DeepEqual(gp, wp) {
		t.Errorf("parameters differ:\ngot  %+v\nwant %+v", gp, wp)
	}
	if got.NitrificationD18OFixed != want.NitrificationD18OFixed {
		t.Errorf("nitrification δ18O fixed: got %v, want %v", got.NitrificationD18OFixed, want.NitrificationD18OFixed)
	}
	if len(got.Transfers) != len(want.Transfers) || len(got.Inputs) != len(want.Inputs) {
		t.Fatalf("got %d transfers and %d inputs, want %d and %d", len(got.Transfers), len(got.Inputs), len(want.Transfers), len(want.Inputs))
	}
	for j := range want.Transfers {
		g, w := got.Transfers[j], want.Transfers[j]
		g.Line, w.Line = 0, 0
		if !reflect.DeepEqual(g, w) {
			t.Errorf("transfer %d: got %+v, want %+v", j, g, w)
		}
	}
	for i := range want.Inputs {
		g, w := got.Inputs[i], want.Inputs[i]
		g.Line, w.Line = 0, 0
		if g != w {
			t.Errorf("input %d: got %+v, want %+v", i, g, w)
		}
	}
}

// `site export` of every template loads back and reproduces the template's
// steady state exactly (issue 12): the same float64 in every pool and
// isotope, not merely close.
func TestExportedTemplatesReproduceSteadyState(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	for _, id := range kb.SiteIDs() {
		t.Run(id, func(t *testing.T) {
			t.Parallel()
			s, err := LoadSite(id, kb)
			if err != nil {
				t.Fatal(err)
			}
			back, text := roundTrip(t, s, EncodeOptions{Comment: []string{"exported for a test"}, EffectComments: true})
			sameSite(t, back, s)
			var a, b State
			p, q := s.Params(), back.Params()
			if err := NewModel(s).Steady(&p, true, &a); err != nil {
				t.Fatal(err)
			}
			if err := NewModel(back).Steady(&q, true, &b); err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(a, b) {
				t.Errorf("steady states differ:\ngot  %+v\nwant %+v", b, a)
			}
			if !strings.HasPrefix(text, "# exported for a test\nsite: "+id+"\n") {
				t.Errorf("file start: got %q", text[:min(len(text), 60)])
			}
		})
	}
}

// Values a file fixes stay fixed after a round trip; values it took from
// the knowledge base stay with the knowledge base (the draws vary them);
// strings with quotes, colons and non-ASCII survive.
func TestEncodeKeepsWhatIsFixed(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	text := `site: "odd: name"
description: 'a "quoted" description: with colons, ‰ and δ'
mycorrhizal_type: arbuscular
land_use: grassland
note: "yes"
references: [amundson2003]
pools: {organic: 1000.000000001, ammonium: 2, nitrate: 1, plant: 100, fungi: 3, n2o: 0.001}
nitrate_oxygen: {nitrification_d18o: -3.25}
inputs:
  - {source: deposition, rate: 4.1}
  - {source: deposition, rate: 1, d15n: 0.3}
  - {source: wastewater, rate: 2, d18o: 7}
  - {to: nitrate, rate: 0.5, d15n: -2}
  - {source: manure, to: nitrate, rate: 0.7}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 40, spread: 0.3}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 15.123456789, epsilon: 17.5, epsilon18: 3}
  - {process: denitrification, from: nitrate, to: n2o, rate: 2}
  - {process: n2o-reduction, from: n2o, to: out, rate: 1.2, epsilon: 5}
  - {process: n2o-emission, from: n2o, to: out, rate: 0.8}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 15.923456789}
  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 20.07}
  - {process: mycorrhizal-uptake, from: ammonium, to: fungi, rate: 9.9}
  - {process: mycorrhizal-transfer, from: fungi, to: plant, rate: 4}
  - {process: fungal-turnover, from: fungi, to: organic, rate: 5.9}
  - {process: litterfall, from: plant, to: organic, rate: 40}
  - {process: leaching-organic, from: organic, to: out, rate: 5.8}
`
	s, err := ParseSite("odd.yaml", []byte(text), kb)
	if err != nil {
		t.Fatal(err)
	}
	back, out := roundTrip(t, s, EncodeOptions{EffectComments: true})
	sameSite(t, back, s)
	for _, want := range []string{
		`site: "odd: name"`,
		`note: "yes"`,
		"nitrification_d18o: -3.25",
		"{source: deposition, rate: 4.1}",
		"{source: deposition, rate: 1, d15n: 0.3}",
		"{source: manure, to: nitrate, rate: 0.7}",
		"{to: nitrate, rate: 0.5, d15n: -2}",
		"rate: 15.123456789, epsilon: 17.5, epsilon18: 3}",
		"organic: 1000.000000001",
		"{process: denitrification, from: nitrate, to: n2o, rate: 2}  # ε 15 ‰ (3 to 30, from memory)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("exported file lacks %q:\n%s", want, out)
		}
	}
}
