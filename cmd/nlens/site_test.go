package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"nlens/forward"
	"nlens/knowledge"
)

// within80 reports the lines of out wider than 80 characters (issue 3).
func within80(t *testing.T, args []string, out string) {
	t.Helper()
	for i, line := range strings.Split(out, "\n") {
		if n := utf8.RuneCountInString(line); n > 80 {
			t.Errorf("%v line %d is %d characters: %q", args, i+1, n, line)
		}
	}
}

// nlens site show prints every template's pools, fluxes with shares of
// the donor pool's outflow, process shares, isotope effects with sources
// and references, within 80 columns; its JSON carries the same.
func TestSiteShowEveryTemplate(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	for _, id := range kb.SiteIDs() {
		t.Run(id, func(t *testing.T) {
			t.Parallel()
			args := []string{"site", "show", id}
			out, errs, code := runArgs(t, args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			within80(t, args, out)
			for _, want := range []string{"Pools (kg N/ha", "share of its\ndonor pool's outflow", "Each process's share", "Isotope effects not given by the site file", "Observables at the baseline", "References", "mycorrhizal type "} {
				if !strings.Contains(out, want) {
					t.Errorf("output lacks %q", want)
				}
			}
			if strings.Contains(out, "warning:") {
				t.Errorf("a built-in template gives a warning:\n%s", out)
			}
			js, errs, code := runArgs(t, "site", "show", id, "--format", "json")
			if code != 0 {
				t.Fatalf("json: exit %d: %s", code, errs)
			}
			var doc struct {
				Site      string `json:"site"`
				Transfers []struct {
					Process string  `json:"process"`
					Share   float64 `json:"share_of_donor_outflow"`
					Source  string  `json:"epsilon_source"`
				} `json:"transfers"`
				Processes   []map[string]any    `json:"processes"`
				Observables map[string]*float64 `json:"observables"`
				References  []string            `json:"references"`
			}
			if err := json.Unmarshal([]byte(js), &doc); err != nil {
				t.Fatal(err)
			}
			if doc.Site != id || len(doc.Transfers) == 0 || len(doc.Processes) == 0 || doc.Observables["soil"] == nil || len(doc.References) == 0 {
				t.Errorf("json: got site %q, %d transfers, %d processes, soil %v, %d references", doc.Site, len(doc.Transfers), len(doc.Processes), doc.Observables["soil"], len(doc.References))
			}
			for _, tr := range doc.Transfers {
				if !(tr.Share > 0 && tr.Share <= 1) || tr.Source == "" {
					t.Errorf("json transfer %s: share %g, ε source %q", tr.Process, tr.Share, tr.Source)
				}
			}
		})
	}
}

// The shares printed are the donor-outflow shares of the site file
// (DESIGN §4): in the boreal template nitrification takes 2.4 % of
// ammonium's outflow and the fungal transfer a quarter of the fungi's
// (the template note, which states the shares it was built from).
func TestSiteShowShares(t *testing.T) {
	t.Parallel()
	out, errs, code := runArgs(t, "site", "show", "boreal-conifer-forest", "--format", "json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var doc struct {
		Processes []struct {
			Process string  `json:"process"`
			Share   float64 `json:"share_of_donor_outflow"`
		} `json:"processes"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{"nitrification": 0.024, "mycorrhizal-transfer": 0.25}
	for _, p := range doc.Processes {
		if w, ok := want[p.Process]; ok && (p.Share < w-0.001 || p.Share > w+0.001) {
			t.Errorf("%s share: got %.4f, want %.3f (template note)", p.Process, p.Share, w)
		}
	}
}

// nlens site export writes a site file that reads back to the template,
// to standard output or to -o FILE, which it does not replace without
// --force.
func TestSiteExport(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	out, errs, code := runArgs(t, "site", "export", "grazed-pasture")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.HasPrefix(out, "# Site file exported by nlens") {
		t.Errorf("export starts %q, want the origin comment", out[:40])
	}
	back, err := forward.ParseSite("exported.yaml", []byte(out), kb)
	if err != nil {
		t.Fatalf("the export does not parse: %v", err)
	}
	orig, _ := forward.LoadSite("grazed-pasture", kb)
	a, b := orig.Params(), back.Params()
	for j := range a.K {
		if a.K[j] != b.K[j] || a.Eps15[j] != b.Eps15[j] {
			t.Errorf("transfer %d: k %g vs %g, ε %g vs %g", j, a.K[j], b.K[j], a.Eps15[j], b.Eps15[j])
		}
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "pasture.yaml")
	if _, errs, code := runArgs(t, "site", "export", "grazed-pasture", "-o", path); code != 0 {
		t.Fatalf("-o: exit %d: %s", code, errs)
	}
	written, err := os.ReadFile(path)
	if err != nil || string(written) != out {
		t.Errorf("-o wrote %d bytes (%v), want the %d bytes of standard output", len(written), err, len(out))
	}
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"exists", []string{"site", "export", "grazed-pasture", "-o", path}, 1, "nlens: " + path + " exists; use --force to replace it\n"},
		{"force", []string{"site", "export", "arctic-tundra", "-o", path, "--force"}, 0, "nlens: wrote " + path + "\n"},
		{"force without -o", []string{"site", "export", "arctic-tundra", "--force"}, 1, "nlens: --force applies only with -o FILE\n"},
		{"unknown template", []string{"site", "export", "rainforest"}, 1, "nlens: rainforest: no built-in site template or file of that name (templates: " + strings.Join(kb.SiteIDs(), ", ") + ")\n"},
		{"no argument", []string{"site", "export"}, 1, "nlens: accepts 1 arg(s), received 0\n"},
	}
	for _, tt := range tests {
		_, errs, code := runArgs(t, tt.args...)
		if code != tt.code || errs != tt.want {
			t.Errorf("%s: got exit %d and %q, want %d and %q", tt.name, code, errs, tt.code, tt.want)
		}
	}
	if data, _ := os.ReadFile(path); !strings.Contains(string(data), "site: arctic-tundra") {
		t.Error("--force did not replace the file")
	}
}

// fitStudy writes a study whose control is far from the template in soil
// and foliage, so the fit must move, and returns its path.
func fitStudy(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	path := filepath.Join(dir, "study.yaml")
	text := `title: Fit test (invented numbers)
site: {template: temperate-conifer-forest}
comparisons:
  - {name: limed vs control, control: control, treatment: limed, years: 5}
  - {name: fertilized vs control, control: control, treatment: fertilized, years: 5}
groups:
  control:
    foliage: {mean: -1.2, sd: 0.6, n: 6}
    soil: {mean: 3.6, sd: 0.5, n: 6}
    forest-floor: {mean: 1.1, sd: 0.5, n: 6}
  limed:
    foliage: {mean: -0.5, sd: 0.6, n: 6}
    soil: {mean: 3.7, sd: 0.5, n: 6}
    forest-floor: {mean: 1.6, sd: 0.5, n: 6}
  fertilized:
    foliage: {mean: 0.5, sd: 0.6, n: 6}
    soil: {mean: 3.7, sd: 0.5, n: 6}
    forest-floor: {mean: 1.9, sd: 0.5, n: 6}
`
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// nlens site fit writes the fitted site as a file that parses and is
// balanced, with what moved in its header; the shared control group is
// fitted once; table and JSON carry the same; -o refuses to replace.
func TestSiteFit(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	study := fitStudy(t)
	out, errs, code := runArgs(t, "site", "fit", study)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if n := strings.Count(out, "\nsite: "); n != 1 {
		t.Errorf("got %d fitted sites, want 1 (one control group shared by two comparisons)", n)
	}
	// The control's foliage, −1.2 ‰ with sd 0.6 and n 6: SE 0.6/√6 = 0.245,
	// printed 0.24 (hand computation).
	for _, want := range []string{"# Moved (from → to):", "# Control (observed ± SE; template; fitted):", "#   foliage: -1.20 ± 0.24;", "site: temperate-conifer-forest-fitted"} {
		if !strings.Contains(out, want) {
			t.Errorf("fitted site file lacks %q:\n%s", want, out)
		}
	}
	s, err := forward.ParseSite("fitted.yaml", []byte(out), kb)
	if err != nil {
		t.Fatalf("the fitted site does not parse: %v", err)
	}
	sim, err := forward.Simulate(s, forward.Change{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(sim.Warnings) != 0 {
		t.Errorf("the fitted site is not balanced: %q", sim.Warnings)
	}
	args := []string{"site", "fit", study, "--format", "table"}
	tab, errs, code := runArgs(t, args...)
	if code != 0 {
		t.Fatalf("table: exit %d: %s", code, errs)
	}
	within80(t, args, tab)
	if !strings.Contains(tab, "Moved (fluxes") || !strings.Contains(tab, "forest-floor") {
		t.Errorf("table lacks the moved parameters or the control:\n%s", tab)
	}
	js, errs, code := runArgs(t, "site", "fit", study, "--format", "json")
	if code != 0 {
		t.Fatalf("json: exit %d: %s", code, errs)
	}
	var doc []struct {
		Control    string `json:"control"`
		FittedSite struct {
			Moved      map[string]struct{ From, To float64 } `json:"moved"`
			ControlFit map[string]struct {
				Observed float64  `json:"observed"`
				Model    *float64 `json:"model"`
			} `json:"control_fit"`
		} `json:"fitted_site"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc) != 1 || doc[0].Control != "control" || len(doc[0].FittedSite.Moved) == 0 || doc[0].FittedSite.ControlFit["foliage"].Model == nil {
		t.Errorf("json: got %+v", doc)
	}
	path := filepath.Join(t.TempDir(), "fitted.yaml")
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"write", []string{"site", "fit", study, "-o", path}, 0, "nlens: wrote " + path + "\n"},
		{"exists", []string{"site", "fit", study, "-o", path}, 1, "nlens: " + path + " exists; use --force to replace it\n"},
		{"unknown comparison", []string{"site", "fit", study, "--comparison", "burned vs control"}, 1, "nlens: " + study + `: no comparison "burned vs control" (comparisons: "limed vs control", "fertilized vs control")` + "\n"},
		{"bad format", []string{"site", "fit", study, "--format", "markdown"}, 1, "nlens: --format \"markdown\": expected one of yaml, table, json\n"},
		{"missing study", []string{"site", "fit", filepath.Join(t.TempDir(), "none.yaml")}, 1, ""},
		{"two controls into one file", []string{"site", "fit", twoControls(t), "-o", filepath.Join(t.TempDir(), "x.yaml")}, 1, ""},
	}
	for _, tt := range tests {
		_, errs, code := runArgs(t, tt.args...)
		if code != tt.code || (tt.want != "" && errs != tt.want) {
			t.Errorf("%s: got exit %d and %q, want %d and %q", tt.name, code, errs, tt.code, tt.want)
		}
	}
}

// twoControls writes a study with two control groups.
func twoControls(t *testing.T) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "two.yaml")
	text := `title: Two controls (invented numbers)
site: {template: temperate-grassland}
comparisons:
  - {name: a, control: c1, treatment: t1, years: 2}
  - {name: b, control: c2, treatment: t2, years: 2}
groups:
  c1: {foliage: {mean: 2.0, sd: 0.5, n: 5}}
  t1: {foliage: {mean: 2.5, sd: 0.5, n: 5}}
  c2: {foliage: {mean: 1.5, sd: 0.5, n: 5}}
  t2: {foliage: {mean: 2.9, sd: 0.5, n: 5}}
`
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	out, errs, code := runArgs(t, "site", "fit", path)
	if code != 0 || strings.Count(out, "\nsite: ") != 2 {
		t.Fatalf("two control groups to standard output: exit %d, %d sites, %s", code, strings.Count(out, "\nsite: "), errs)
	}
	return path
}
