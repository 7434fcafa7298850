package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
)

// Numerical safety (issue 5, item 4): NaN or Inf is never printed as a
// result. simulate --format json runs on every built-in template under
// extreme changes; each run either succeeds with a complete, finite JSON
// document (every observable and pool the site has, none dropped) or is
// refused as bad input with a message and no output. explain --format json
// runs on studies with extreme but valid numbers.
//
// The extremes are chosen to reach the edges of the model, not from any
// source: factors 0 (a process switched off), 1e-3 and 1e3 (three orders of
// magnitude), additions of 1e3 and 1e5 kg N/ha/yr (one and three orders
// above the heaviest fertilizer rates), with and without --years.

// extremeFactors multiply a process's rate constants.
var extremeFactors = []string{"x0", "x1e-6", "x1e-3", "x1e3", "x1e6"}

// extremeAdditions are added inputs, kg N/ha/yr.
var extremeAdditions = []string{"1e3", "1e6"}

// extremeYears: the new steady state (no flag), 0.5 and 1000 years.
var extremeYears = [][]string{nil, {"--years", "0.5"}, {"--years", "1000"}}

func TestSimulateNeverPrintsNaN(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	for _, id := range kb.SiteIDs() {
		site, err := forward.LoadSite(id, kb)
		if err != nil {
			t.Fatal(err)
		}
		var runs [][]string
		var processes []string
		for _, tr := range site.Transfers {
			if !slices.Contains(processes, tr.Process) {
				processes = append(processes, tr.Process)
			}
		}
		for _, years := range extremeYears {
			for _, p := range processes {
				for _, f := range extremeFactors {
					runs = append(runs, append([]string{"--change", p + "=" + f}, years...))
				}
			}
			for _, src := range kb.Sources {
				if site.PoolIndex(src.Pool) < 0 {
					continue
				}
				for _, r := range extremeAdditions {
					runs = append(runs, append([]string{"--add", src.ID + "=" + r}, years...))
				}
			}
			// Everything at once: no gas loss, no leaching, a heavy addition.
			runs = append(runs, append([]string{"--change", "denitrification=x0", "--change", "leaching-nitrate=x0",
				"--change", "nitrifier-gas=x0", "--add", "urea=1e5"}, years...))
		}
		t.Run(id, func(t *testing.T) {
			t.Parallel()
			for _, change := range runs {
				args := append([]string{"simulate", "--site", id, "--format", "json"}, change...)
				checkSimulateJSON(t, site, args)
			}
		})
	}
}

// A change beyond what the model can represent is refused with a clear
// message, never answered with garbage. The limits are those of simulate
// (--change factors 0 or 1e-6 to 1e6, --add rates as in a site file); the
// boreal template's fungi lose N only by mycorrhizal transfer and fungal
// turnover (knowledge/sites/boreal-conifer-forest.yaml), so switching both
// off leaves the fungi no way out and no new steady state.
func TestImpossibleChangeRefused(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"addition beyond any site", []string{"--site", "temperate-grassland", "--add", "urea=1e300", "--years", "10"},
			`nlens: --add "urea=1e300": the rate must be 0 or between 1e-09 and 1e+06 kg N/ha/yr, as in a site file` + "\n"},
		{"factor beyond any treatment", []string{"--site", "temperate-grassland", "--change", "nitrification=x1e300", "--years", "5"},
			`nlens: --change "nitrification=x1e300": the factor must be 0 or between 1e-06 and 1e+06` + "\n"},
		{"no way out after the change", []string{"--site", "boreal-conifer-forest", "--change", "mycorrhizal-transfer=x0", "--change", "fungal-turnover=x0"},
			"nlens: after the change the 14N system has no steady state (its matrix is singular: some N has no way out of the site or of a pool); give --years T for the state T years after the change\n"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			var out, errb bytes.Buffer
			args := append([]string{"simulate", "--format", "json"}, tt.args...)
			if code := runEnv(&env{stdout: &out, stderr: &errb}, args); code != exitBadInput {
				t.Errorf("exit code %d, want %d", code, exitBadInput)
			}
			if errb.String() != tt.want {
				t.Errorf("stderr\n got: %q\nwant: %q", errb.String(), tt.want)
			}
			if out.Len() > 0 {
				t.Errorf("stdout should be empty, got %q", out.String())
			}
		})
	}
	// The same change over a finite time is a state the model can give.
	kb := knowledge.MustDefault()
	site, err := forward.LoadSite("boreal-conifer-forest", kb)
	if err != nil {
		t.Fatal(err)
	}
	checkSimulateJSON(t, site, []string{"simulate", "--site", "boreal-conifer-forest", "--format", "json",
		"--change", "mycorrhizal-transfer=x0", "--change", "fungal-turnover=x0", "--years", "10"})
}

// The trajectory of an extreme change is finite at every time as well.
func TestTrajectoryNeverPrintsNaN(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	for _, id := range kb.SiteIDs() {
		site, err := forward.LoadSite(id, kb)
		if err != nil {
			t.Fatal(err)
		}
		for _, change := range [][]string{
			{"--change", "nitrification=x1e3"},
			{"--change", "denitrification=x0", "--add", "urea=1e5"},
			{"--change", "mineralization=x1e-3", "--years", "1000"},
		} {
			args := append([]string{"simulate", "--site", id, "--format", "json", "--trajectory", "--points", "30"}, change...)
			checkSimulateJSON(t, site, args)
		}
	}
}

// checkSimulateJSON runs simulate: exit 0 with complete finite JSON, or
// exit 1 with a message and nothing on stdout.
func checkSimulateJSON(t *testing.T, site *forward.Site, args []string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := runEnv(&env{stdout: &out, stderr: &errb}, args)
	name := strings.Join(args, " ")
	switch code {
	case exitOK:
	case exitBadInput:
		if out.Len() > 0 || !strings.HasPrefix(errb.String(), "nlens: ") {
			t.Errorf("%s: refused, but stdout %q and stderr %q", name, out.String(), errb.String())
		}
		if strings.Contains(errb.String(), "NaN") || strings.Contains(errb.String(), "Inf") {
			t.Errorf("%s: the refusal prints NaN or Inf: %s", name, errb.String())
		}
		t.Logf("%s: refused: %s", name, strings.TrimSpace(errb.String()))
		return
	default:
		t.Errorf("%s: exit code %d: %s", name, code, errb.String())
		return
	}
	text := out.String()
	if strings.Contains(text, "NaN") || strings.Contains(text, "Inf") {
		t.Errorf("%s: output holds NaN or Inf:\n%s", name, text)
	}
	var got struct {
		Baseline, Changed, Shift map[string]*float64
		Pools                    struct{ Baseline, Changed map[string]*float64 }
		Trajectory               []struct {
			Years  *float64
			Values map[string]*float64
		}
	}
	if err := json.Unmarshal(out.Bytes(), &got); err != nil {
		t.Fatalf("%s: output is not JSON: %v", name, err)
	}
	var missing []string
	for _, part := range []struct {
		what  string
		m     map[string]*float64
		names []string
	}{
		{"baseline", got.Baseline, site.DeltaNames()},
		{"changed", got.Changed, site.DeltaNames()},
		{"shift", got.Shift, site.DeltaNames()},
		{"pools.baseline", got.Pools.Baseline, site.Pools},
		{"pools.changed", got.Pools.Changed, site.Pools},
	} {
		for _, n := range part.names {
			if part.m[n] == nil && !slices.Contains(missing, n) {
				missing = append(missing, n)
			}
		}
	}
	// An observable may be undefined after a change (a pool no longer fed,
	// a gas flux switched off); it is then left out, but never silently.
	if len(missing) > 0 {
		warn := errb.String()
		if !strings.Contains(warn, "warning: undefined after the change (no N left in the pool or flux, so no δ): "+strings.Join(missing, ", ")+"; left out of the output\n") {
			t.Errorf("%s: %s left out without a warning naming them; stderr %q", name, strings.Join(missing, ", "), warn)
		}
		for _, n := range missing {
			if got.Baseline[n] == nil {
				t.Errorf("%s: the baseline has no value for %s", name, n)
			}
		}
	}
	for i, p := range got.Trajectory {
		if p.Years == nil || len(p.Values) == 0 {
			t.Errorf("%s: trajectory point %d is empty", name, i)
		}
	}
}

// explain --format json on studies with extreme but valid numbers: tiny
// and huge standard errors, a tracer-sized shift, a pool size shift of
// three orders of magnitude. The numbers are invented for the test.
func TestExplainNeverPrintsNaN(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name  string
		study string
		args  []string
	}{
		{"tiny sd", `site: {template: temperate-grassland}
comparisons:
  - {control: a, treatment: b, years: 2}
groups:
  a: {foliage: {mean: 1, sd: 1e-9, n: 3}, soil: {mean: 4, sd: 1e-9, n: 3}}
  b: {foliage: {mean: 3, sd: 1e-9, n: 3}, soil: {mean: 4.5, sd: 1e-9, n: 3}}
`, nil},
		{"huge sd", `site: {template: boreal-conifer-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
groups:
  a: {foliage: {mean: -4, sd: 1e6, n: 2}}
  b: {foliage: {mean: -2, sd: 1e6, n: 2}}
`, []string{"--allow-enriched"}},
		{"tracer shift", `site: {template: fertilized-cropland}
comparisons:
  - {control: a, treatment: b, years: 1, additions: [{source: urea, rate: 100, d15n: 5000}]}
groups:
  a: {foliage: {mean: 2, sd: 0.5, n: 4}, soil: {mean: 5, sd: 0.5, n: 4}}
  b: {foliage: {mean: 900, sd: 50, n: 4}, soil: {mean: 60, sd: 5, n: 4}}
`, []string{"--allow-enriched"}},
		{"pool shift", `site: {template: dryland-shrubland}
comparisons:
  - {control: a, treatment: b, years: 50}
groups:
  a: {pool:nitrate: {mean: 1, sd: 0.1, n: 3}, soil-nitrate: {mean: 5, sd: 1, n: 3}}
  b: {pool:nitrate: {mean: 1000, sd: 100, n: 3}, soil-nitrate: {mean: 30, sd: 1, n: 3}}
`, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			dir := t.TempDir()
			path := filepath.Join(dir, "study.yaml")
			if err := os.WriteFile(path, []byte(tt.study), 0o644); err != nil {
				t.Fatal(err)
			}
			var out, errb bytes.Buffer
			args := append([]string{"explain", "--format", "json", "--draws", "20", path}, tt.args...)
			code := runEnv(&env{stdout: &out, stderr: &errb}, args)
			if code != exitOK {
				t.Fatalf("exit code %d: %s", code, errb.String())
			}
			text := out.String()
			if strings.Contains(text, "NaN") || strings.Contains(text, "Inf") {
				t.Errorf("output holds NaN or Inf:\n%s", text)
			}
			var v any
			if err := json.Unmarshal(out.Bytes(), &v); err != nil {
				t.Errorf("output is not JSON: %v", err)
			}
			if n := countNulls(v); n > 0 {
				t.Errorf("output has %d null numbers (a non-finite result left out?):\n%s", n, text)
			}
		})
	}
}

// nullable are the JSON fields that are null by contract (DESIGN §7): a
// direction of none, a source or a pair; an interval that reaches no
// bound; a flux ratio where the baseline flux is zero; a severity not
// given; a duration of an addition that lasted to sampling; the flux of a
// magnitude beyond the first ten hypotheses with a posterior below 0.001
// (not worked out).
var nullable = map[string]bool{"direction": true, "at_bound": true, "flux_ratio": true, "flux": true, "flux_baseline": true, "severity": true, "duration_years": true, "duration": true, "modes": true, "series": true, "years": true}

// countNulls counts null values in a decoded JSON document, except the
// magnitude of the "none" hypothesis, which has none, and the fields that
// are null by contract.
func countNulls(v any) int {
	switch v := v.(type) {
	case nil:
		return 1
	case map[string]any:
		n := 0
		for k, x := range v {
			if k == "magnitude" && x == nil && v["id"] == "none" || nullable[k] && x == nil {
				continue
			}
			n += countNulls(x)
		}
		return n
	case []any:
		n := 0
		for _, x := range v {
			n += countNulls(x)
		}
		return n
	}
	return 0
}
