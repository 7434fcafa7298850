package study

import (
	"errors"
	"fmt"
	"math"
	"nlens/knowledge/input"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"nlens/knowledge"
)

const goodStudy = `title: test study
site:
  template: temperate-deciduous-forest
  soil_ph: 5.2
  drainage: well
  mean_annual_precip_mm: 1100
  mycorrhizal_type: mixed
comparisons:
  - name: fertilized vs control
    control: control
    treatment: fert
    years: 4
    management: [fertilized]
    additions:
      - {source: ammonium-fertilizer, rate: 50, d15n: -0.8}
groups:
  control:
    foliage: {mean: -1.0, sd: 0.6, n: 5}
    soil: {mean: 4.0, sd: 0.5, n: 5}
    pool:nitrate: {mean: 1.5, sd: 0.5, n: 5}
  fert:
    foliage: {mean: 1.0, sd: 0.8, n: 5}
    soil: {mean: 4.2, sd: 0.5, n: 4}
    pool:nitrate: {mean: 4.5, sd: 1.5, n: 5}
`

func parse(t *testing.T, text string, files map[string]string, opt Options) (*Study, error) {
	t.Helper()
	read := func(name string) ([]byte, error) {
		if v, ok := files[filepath.Base(name)]; ok {
			return []byte(v), nil
		}
		return nil, &os.PathError{Op: "open", Path: name, Err: os.ErrNotExist}
	}
	return Parse("study.yaml", []byte(text), knowledge.MustDefault(), opt, read)
}

// Welch's standard error and Welch–Satterthwaite degrees of freedom (Welch
// 1947): for s_c = 0.6, n_c = 5 and s_t = 0.8, n_t = 5, SE = √(0.072 + 0.128)
// = 0.4472 and df = 0.04/(0.072²/4 + 0.128²/4) = 7.4184 (hand computation).
func TestWelch(t *testing.T) {
	t.Parallel()
	st, err := parse(t, goodStudy, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := st.Comparisons[0]
	var fol, pool Observed
	for _, o := range c.Observed {
		switch o.Observable {
		case "foliage":
			fol = o
		case "pool:nitrate":
			pool = o
		}
	}
	if math.Abs(fol.Shift-2.0) > 1e-12 || math.Abs(fol.SE-0.4472136) > 1e-6 || math.Abs(fol.DF-7.4184) > 1e-3 {
		t.Errorf("foliage: got shift %g se %g df %g, want 2, 0.4472, 7.4184", fol.Shift, fol.SE, fol.DF)
	}
	// Pools shift as ln(4.5/1.5) = 1.0986 with SE by the delta method,
	// √((0.5/1.5)²/5 + (1.5/4.5)²/5) = 0.2108 (hand computation).
	if math.Abs(pool.Shift-math.Log(3)) > 1e-12 || math.Abs(pool.SE-0.21082) > 1e-4 || !pool.LogRatio {
		t.Errorf("pool:nitrate: got shift %g se %g, want ln 3 and 0.2108", pool.Shift, pool.SE)
	}
	if len(c.Additions) != 1 || c.Additions[0].RateKgPerHaYr != 50 || *c.Additions[0].D15N != -0.8 {
		t.Errorf("additions: got %+v", c.Additions)
	}
	ctx := st.ContextFor(&c, knowledge.MustDefault())
	if *ctx.SoilPH != 5.2 || ctx.Drainage != "well" || ctx.Mycorrhizal != "mixed" || ctx.AdditionPools[0] != "ammonium" {
		t.Errorf("context: got %+v", ctx)
	}
}

// Per-sample rows give the same statistics as their summary (mean and
// sample sd computed here by hand: values 1, 2, 3 → mean 2, sd 1).
func TestSamplesCSV(t *testing.T) {
	t.Parallel()
	text := `site: {template: temperate-deciduous-forest}
comparisons:
  - {name: a vs b, control: b, treatment: a, years: 2}
samples: rows.csv
`
	csv := "sample,group,observable,d15n,unit,depth_cm,species,note\n" +
		"s1,a,foliage,1,‰,,Acer,\n" +
		"s2,a,foliage,2,permil,,Acer,\n" +
		"s3,a,foliage,3,,,Acer,\n" +
		"s4,b,foliage,0,,,Acer,\n" +
		"s5,b,foliage,0.5,,,Acer,\n"
	st, err := parse(t, text, map[string]string{"rows.csv": csv}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	o := st.Comparisons[0].Observed[0]
	if o.Treatment.Mean != 2 || math.Abs(o.Treatment.SD-1) > 1e-12 || o.Treatment.N != 3 || o.Control.N != 2 {
		t.Errorf("got %+v", o)
	}
}

// Bad study files: each is refused with the exact message, naming file,
// line and field.
func TestBadStudies(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name  string
		text  string
		files map[string]string
		opt   Options
		want  string
	}{
		{"negative sd", strings.Replace(goodStudy, "foliage: {mean: -1.0, sd: 0.6, n: 5}", "foliage: {mean: -1.0, sd: -0.6, n: 5}", 1), nil, Options{},
			"study.yaml:18: groups.control.foliage.sd: sd must be a number ≥ 0, got -0.6"},
		{"n below 2", strings.Replace(goodStudy, "soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, n: 1}", 1), nil, Options{},
			"study.yaml:23: groups.fert.soil.n: n must be at least 2 to estimate a standard error, got 1"},
		{"unknown observable", strings.Replace(goodStudy, "    soil: {mean: 4.0", "    needles: {mean: 4.0", 1), nil, Options{},
			`study.yaml:19: groups.control.needles: unknown observable "needles"`},
		{"missing group", strings.Replace(goodStudy, "treatment: fert", "treatment: fertilised", 1), nil, Options{},
			`study.yaml:11: comparisons[0].treatment: group "fertilised" is not defined (groups: control, fert)`},
		{"enriched", strings.Replace(goodStudy, "foliage: {mean: 1.0, sd: 0.8", "foliage: {mean: 140, sd: 0.8", 1), nil, Options{},
			"study.yaml:22: groups.fert.foliage.mean: δ15N 140 ‰ is beyond natural abundance (|δ| > 100 ‰); use --allow-enriched for a tracer study"},
		{"unknown key", strings.Replace(goodStudy, "  drainage: well", "  drainge: well", 1), nil, Options{},
			`study.yaml:5: site.drainge: unknown key (keys here: template, file, soil_ph, drainage, mean_annual_precip_mm, mycorrhizal_type, land_use, nearby)`},
		{"bad drainage", strings.Replace(goodStudy, "drainage: well", "drainage: swampy", 1), nil, Options{},
			`study.yaml:5: site.drainage: expected one of well, moderate, poor, got "swampy"`},
		{"unknown template", strings.Replace(goodStudy, "template: temperate-deciduous-forest", "template: rainforest", 1), nil, Options{},
			`study.yaml:3: site.template: unknown site template "rainforest"`},
		{"unknown source", strings.Replace(goodStudy, "source: ammonium-fertilizer", "source: guano", 1), nil, Options{},
			`study.yaml:15: comparisons[0].additions[0].source: unknown source "guano"`},
		{"same groups", strings.Replace(goodStudy, "treatment: fert", "treatment: control", 1), nil, Options{},
			`study.yaml:11: comparisons[0].treatment: treatment and control are the same group "control"`},
		{"negative years", strings.Replace(goodStudy, "years: 4", "years: -4", 1), nil, Options{},
			"study.yaml:12: comparisons[0].years: years since the treatment began must be between 0 and 10000, got -4"},
		{"missing years", strings.Replace(goodStudy, "    years: 4\n", "", 1), nil, Options{},
			"study.yaml:9: comparisons[0].years: missing: give the years since the treatment began (years: 3), or years: steady for a long-standing contrast read at the new steady state"},
		{"years as words", strings.Replace(goodStudy, "years: 4", "years: long", 1), nil, Options{},
			`study.yaml:12: comparisons[0].years: expected a number of years since the treatment began, or steady, got "long"`},
		{"fractional n", strings.Replace(goodStudy, "soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, n: 4.5}", 1), nil, Options{},
			"study.yaml:23: groups.fert.soil.n: n must be a whole number of replicates, got 4.5"},
		{"overflowing n", strings.Replace(goodStudy, "soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, n: 1e300}", 1), nil, Options{},
			"study.yaml:23: groups.fert.soil.n: n must be at most 1e+06 replicates, got 1e+300"},
		{"sd and se", strings.Replace(goodStudy, "soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, se: 0.25, n: 4}", 1), nil, Options{},
			"study.yaml:23: groups.fert.soil: expected {mean, sd, n} or {mean, se, n}"},
		{"bad response", strings.Replace(goodStudy, "years: 4", "years: 4\n    response: transient", 1), nil, Options{},
			`study.yaml:13: comparisons[0].response: expected sustained, pulse or either, got "transient"`},
		{"shifts and groups", strings.Replace(goodStudy, "years: 4", "years: 4\n    shifts: {foliage: {shift: 2, se: 0.5}}", 1), nil, Options{},
			"study.yaml:13: comparisons[0].shifts: give either control and treatment groups or shifts taken from a paper, not both"},
		{"series of unlike treatments", `site: {template: temperate-deciduous-forest}
comparisons:
  - {name: cut 2, control: a, treatment: b, years: 2, series: cut, management: [clear-cut]}
  - {name: burn 4, control: a, treatment: b, years: 4, series: cut, management: [burned]}
groups:
  a: {foliage: {mean: 1, sd: 1, n: 3}}
  b: {foliage: {mean: 2, sd: 1, n: 3}}
`, nil, Options{}, `study.yaml:4: comparisons[1].series: comparisons of series "cut" must share their treatment (repeated years) or differ only in the rates of the same additions (dose levels); "cut 2" and "burn 4" differ otherwise`},
		{"no shared observable", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
groups:
  a: {foliage: {mean: 1, sd: 1, n: 3}}
  b: {soil: {mean: 1, sd: 1, n: 3}}
`, nil, Options{}, `study.yaml:3: comparisons[0].treatment: groups "a" and "b" share no observable, so there is no shift to explain`},
		{"observable the site lacks", `site: {template: fertilized-cropland}
comparisons:
  - {control: a, treatment: b, years: 2}
groups:
  a: {fungi: {mean: 1, sd: 1, n: 3}}
  b: {fungi: {mean: 1, sd: 1, n: 3}}
`, nil, Options{}, `study.yaml:5: groups.a.fungi: observable "fungi" needs a fungi pool`},
		{"csv bad number", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: rows.csv
`, map[string]string{"rows.csv": "sample,group,observable,value\nx1,a,foliage,1.2\nx2,a,foliage,one\n"}, Options{}, `rows.csv:3: value: expected a number, got "one"`},
		{"csv missing column", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: rows.csv
`, map[string]string{"rows.csv": "sample,group,value\nx1,a,1.2\n"}, Options{}, `rows.csv:1: observable: missing column "observable"`},
		{"csv single sample", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: rows.csv
`, map[string]string{"rows.csv": "sample,group,observable,value\nx1,a,foliage,1\nx2,b,foliage,2\nx3,b,foliage,2.5\n"}, Options{}, `rows.csv:2: group: group "a" has only one sample of foliage`},
		{"csv missing file", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: nowhere.csv
`, nil, Options{}, `study.yaml:4: samples: cannot read samples file nowhere.csv: file does not exist`},
		{"csv unreadable row", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: rows.csv
`, map[string]string{"rows.csv": "sample,group,observable,value\nx1,a,foliage,\"1.2\nx2,a,foliage,1\n"}, Options{}, `rows.csv:2: unreadable CSV row`},
		{"csv duplicate sample", `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: a, treatment: b, years: 2}
samples: rows.csv
`, map[string]string{"rows.csv": "sample,group,observable,value\nx1,a,foliage,1\nx1,a,foliage,2\n"}, Options{}, `rows.csv:3: sample: sample "x1" already has a value of foliage on line 2`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := parse(t, tt.text, tt.files, tt.opt)
			if err == nil {
				t.Fatalf("no error; want %q", tt.want)
			}
			if !strings.Contains(err.Error(), tt.want) {
				t.Errorf("got  %q\nwant %q", err.Error(), tt.want)
			}
			var ie *input.Error
			if !errors.As(err, &ie) {
				t.Errorf("error is not positioned: %T", err)
			}
		})
	}
}

// The enriched value passes with AllowEnriched.
func TestAllowEnriched(t *testing.T) {
	t.Parallel()
	text := strings.Replace(goodStudy, "foliage: {mean: 1.0, sd: 0.8", "foliage: {mean: 140, sd: 0.8", 1)
	if _, err := parse(t, text, nil, Options{AllowEnriched: true}); err != nil {
		t.Errorf("with AllowEnriched: %v", err)
	}
}

// A group given as mean ± SE (as papers report it) gives the same shift
// and SE as the same group given as mean ± sd: sd = SE·√n (the definition
// of the standard error of a mean).
func TestSEInputMatchesSD(t *testing.T) {
	t.Parallel()
	bySD, err := parse(t, goodStudy, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// sd 0.8, n 5 → se 0.8/√5 = 0.357771 (hand computation).
	text := strings.Replace(goodStudy, "foliage: {mean: 1.0, sd: 0.8, n: 5}", "foliage: {mean: 1.0, se: 0.35777087639996635, n: 5}", 1)
	bySE, err := parse(t, text, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	a, b := bySD.Comparisons[0].Observed, bySE.Comparisons[0].Observed
	for i := range a {
		if math.Abs(a[i].Shift-b[i].Shift) > 1e-12 || math.Abs(a[i].SE-b[i].SE) > 1e-12 || math.Abs(a[i].DF-b[i].DF) > 1e-9 {
			t.Errorf("%s: sd gives %g ± %g (df %g), se gives %g ± %g (df %g)", a[i].Observable, a[i].Shift, a[i].SE, a[i].DF, b[i].Shift, b[i].SE, b[i].DF)
		}
	}
}

// Shifts taken from a paper (shift ± SE, no groups) are read as given and
// marked, so that explain knows it has no control levels.
func TestShiftsFromAPaper(t *testing.T) {
	t.Parallel()
	st, err := parse(t, `site: {template: temperate-deciduous-forest}
comparisons:
  - name: clear-cut, years 1–2
    years: 2
    management: [clear-cut]
    shifts: {foliage: {shift: 2.9, se: 0.6}, soil: {shift: 0.1, se: 0.3}}
`, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := st.Comparisons[0]
	if !c.ShiftsOnly || len(c.Observed) != 2 || c.Observed[0].Observable != "foliage" || c.Observed[0].Shift != 2.9 || c.Observed[0].SE != 0.6 {
		t.Errorf("got %+v", c)
	}
}

// years: steady is accepted only as written, and marks the comparison.
func TestYearsSteady(t *testing.T) {
	t.Parallel()
	st, err := parse(t, strings.Replace(goodStudy, "years: 4", "years: steady", 1), nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if c := st.Comparisons[0]; !c.Steady || c.Years != nil {
		t.Errorf("years: steady gave Steady %v, Years %v", c.Steady, c.Years)
	}
}

// Dose levels scale with their rate relative to the largest (DESIGN §6).
func TestDoseScale(t *testing.T) {
	t.Parallel()
	cs := []Comparison{
		{Additions: []Addition{{Source: "ammonium-nitrate", RateKgPerHaYr: 35}}},
		{Additions: []Addition{{Source: "ammonium-nitrate", RateKgPerHaYr: 70}}},
		{Additions: []Addition{{Source: "ammonium-nitrate", RateKgPerHaYr: 108}}},
	}
	got := DoseScale(cs)
	for i, want := range []float64{35.0 / 108, 70.0 / 108, 1} { // Norrliden doses, FACTS-2 §1a
		if math.Abs(got[i]-want) > 1e-12 {
			t.Errorf("level %d: %g, want %g", i, got[i], want)
		}
	}
}

// A wetland template implies poor drainage unless the study says otherwise
// (the context default of its land use; DEVELOPERS.md decisions).
func TestWetlandDrainageDefault(t *testing.T) {
	t.Parallel()
	const base = `site: {template: riparian-wetland%s}
comparisons:
  - {name: a, years: steady, shifts: {soil-nitrate: {shift: 8, se: 1.2}}}
`
	for _, tc := range []struct{ extra, want string }{{"", "poor"}, {", drainage: moderate", "moderate"}} {
		st, err := parse(t, fmt.Sprintf(base, tc.extra), nil, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if st.Context.Drainage != tc.want {
			t.Errorf("site%q: drainage %q, want %q", tc.extra, st.Context.Drainage, tc.want)
		}
	}
}
