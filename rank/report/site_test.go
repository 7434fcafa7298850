package report

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/rank"
)

// The site summary of a template as a table and as JSON (regression pins:
// refresh with go test ./rank/report -update after reviewing the change).
func TestSiteShowGolden(t *testing.T) {
	t.Parallel()
	kb := testKB(t)
	s, err := forward.LoadSite("boreal-conifer-forest", kb)
	if err != nil {
		t.Fatal(err)
	}
	sum, err := forward.Describe(s)
	if err != nil {
		t.Fatal(err)
	}
	for _, tt := range []struct{ format, file string }{
		{FormatTable, "site-show-boreal.golden"},
		{FormatJSON, "site-show-boreal-json.golden"},
	} {
		var buf bytes.Buffer
		if err := SiteShow(&buf, sum, kb, tt.format); err != nil {
			t.Fatal(err)
		}
		golden(t, tt.file, buf.Bytes())
	}
	if err := SiteShow(&bytes.Buffer{}, sum, kb, "markdown"); err == nil {
		t.Error("format markdown: got no error, want one")
	}
}

// A fitted site in every format: the file carries what moved and the
// control fit in its header; the JSON has the fitted_site fields of DESIGN
// §7 (moved: from, to; control_fit: observed, model).
func TestSiteFitsFormats(t *testing.T) {
	t.Parallel()
	kb := testKB(t)
	s, err := forward.LoadSite("temperate-grassland", kb)
	if err != nil {
		t.Fatal(err)
	}
	// An invented control 1.5 ‰ above the template in foliage and soil.
	fit, err := rank.FitSite(s, []rank.FitTarget{{Observable: "foliage", Mean: 3.7, SE: 0.3}, {Observable: "soil", Mean: 7.2, SE: 0.3}}, rank.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	fits := []SiteFitResult{{Study: "study.yaml", Comparison: "a vs b", Control: "b", Fit: fit}}
	var y, tab, js bytes.Buffer
	for _, f := range []struct {
		format string
		buf    *bytes.Buffer
	}{{FormatYAML, &y}, {FormatTable, &tab}, {FormatJSON, &js}} {
		if err := SiteFits(f.buf, fits, kb, f.format); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := forward.ParseSite("fitted.yaml", y.Bytes(), kb); err != nil {
		t.Errorf("the yaml does not parse: %v", err)
	}
	for _, want := range []string{"# Moved (from → to):", "#   foliage: 3.70 ± 0.30;", "site: temperate-grassland-fitted"} {
		if !strings.Contains(y.String(), want) {
			t.Errorf("yaml lacks %q", want)
		}
	}
	if !strings.Contains(tab.String(), "Control: observed ± SE") {
		t.Errorf("table lacks the control:\n%s", tab.String())
	}
	var doc []map[string]any
	if err := json.Unmarshal(js.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	fs := doc[0]["fitted_site"].(map[string]any)
	for _, k := range []string{"moved", "control_fit", "reproduced", "warnings"} {
		if _, ok := fs[k]; !ok {
			t.Errorf("fitted_site lacks %q", k)
		}
	}
	for name, m := range fs["moved"].(map[string]any) {
		mm := m.(map[string]any)
		if _, ok := mm["from"]; !ok {
			t.Errorf("moved %s lacks from", name)
		}
		if _, ok := mm["to"]; !ok {
			t.Errorf("moved %s lacks to", name)
		}
	}
	cf := fs["control_fit"].(map[string]any)["foliage"].(map[string]any)
	if cf["observed"] != 3.7 || cf["model"] == nil {
		t.Errorf("control_fit foliage: got %v", cf)
	}
	if err := SiteFits(&bytes.Buffer{}, fits, kb, "markdown"); err == nil {
		t.Error("format markdown: got no error, want one")
	}
}
