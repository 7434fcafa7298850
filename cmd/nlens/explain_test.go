package main

import (
	"bytes"
	"encoding/json"
	"math"
	"nlens/rank"
	"strings"
	"testing"
	"time"
)

func runArgs(t *testing.T, args ...string) (string, string, int) {
	t.Helper()
	var out, errb bytes.Buffer
	code := runEnv(&env{stdout: &out, stderr: &errb}, args)
	return out.String(), errb.String(), code
}

// The same input and seed give byte-identical output, in every format.
func TestExplainByteIdentical(t *testing.T) {
	t.Parallel()
	for _, format := range []string{"json", "table", "text", "markdown"} {
		a, _, ca := runArgs(t, "explain", "../../testdata/demo/study.yaml", "--seed", "5", "--draws", "8", "--format", format)
		b, _, cb := runArgs(t, "explain", "../../testdata/demo/study.yaml", "--seed", "5", "--draws", "8", "--format", format)
		if ca != 0 || cb != 0 {
			t.Fatalf("%s: exit codes %d %d", format, ca, cb)
		}
		if a != b {
			t.Errorf("%s: two runs with the same seed differ", format)
		}
	}
}

// The JSON follows DESIGN §7: field names and sorting.
func TestExplainJSONContract(t *testing.T) {
	t.Parallel()
	out, errs, code := runArgs(t, "explain", "../../testdata/demo/study.yaml", "--draws", "8", "--format", "json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var doc map[string]any
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"version", "seed", "comparisons"} {
		if _, ok := doc[k]; !ok {
			t.Errorf("missing top-level %q", k)
		}
	}
	cmp := doc["comparisons"].([]any)[0].(map[string]any)
	for _, k := range []string{"name", "observed", "hypotheses", "measurements", "warnings"} {
		if _, ok := cmp[k]; !ok {
			t.Errorf("missing comparison field %q", k)
		}
	}
	obs := cmp["observed"].(map[string]any)["foliage"].(map[string]any)
	if _, ok := obs["shift"]; !ok {
		t.Error("observed.foliage lacks shift")
	}
	if _, ok := obs["se"]; !ok {
		t.Error("observed.foliage lacks se")
	}
	prev := 2.0
	for _, h := range cmp["hypotheses"].([]any) {
		hm := h.(map[string]any)
		for _, k := range []string{"id", "label", "posterior", "magnitude", "predicted", "fit"} {
			if _, ok := hm[k]; !ok {
				t.Errorf("hypothesis %v lacks %q", hm["id"], k)
			}
		}
		fit := hm["fit"].(map[string]any)
		for _, k := range []string{"chi2", "dof", "p"} {
			if _, ok := fit[k]; !ok {
				t.Errorf("fit lacks %q", k)
			}
		}
		if m, ok := hm["magnitude"].(map[string]any); ok {
			for _, k := range []string{"best", "low", "high", "unit"} {
				if _, ok := m[k]; !ok {
					t.Errorf("magnitude lacks %q", k)
				}
			}
		}
		p := hm["posterior"].(float64)
		if p > prev {
			t.Error("hypotheses not sorted by posterior")
		}
		prev = p
	}
	prevBits := 1e9
	for _, m := range cmp["measurements"].([]any) {
		mm := m.(map[string]any)
		for _, k := range []string{"id", "label", "bits", "cost", "method", "predicted"} {
			if _, ok := mm[k]; !ok {
				t.Errorf("measurement lacks %q", k)
			}
		}
		// Sorted by bits; measurements within rank.BitsTie of each other
		// may come in order of cost (rank.orderMeasurements).
		if b := mm["bits"].(float64); b > prevBits+rank.BitsTie {
			t.Errorf("measurements not sorted by bits (%g after %g)", b, prevBits)
		} else {
			prevBits = math.Min(prevBits, b)
		}
	}
	if strings.Contains(out, "NaN") || strings.Contains(out, "Inf") {
		t.Error("JSON contains NaN or Inf")
	}
}

// simulate --format json follows DESIGN §7 to the letter.
func TestSimulateJSONContract(t *testing.T) {
	t.Parallel()
	out, errs, code := runArgs(t, "simulate", "--site", "temperate-deciduous-forest", "--change", "denitrification=x3", "--years", "5", "--format", "json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var doc map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	var keys []string
	for k := range doc {
		keys = append(keys, k)
	}
	want := map[string]bool{"site": true, "years": true, "baseline": true, "changed": true, "shift": true, "pools": true}
	if len(doc) != len(want) {
		t.Errorf("top-level keys %v, want exactly %v", keys, want)
	}
	var sim struct {
		Site     string             `json:"site"`
		Years    *float64           `json:"years"`
		Baseline map[string]float64 `json:"baseline"`
		Shift    map[string]float64 `json:"shift"`
		Pools    struct {
			Baseline map[string]float64 `json:"baseline"`
			Changed  map[string]float64 `json:"changed"`
		} `json:"pools"`
	}
	if err := json.Unmarshal([]byte(out), &sim); err != nil {
		t.Fatal(err)
	}
	if sim.Site != "temperate-deciduous-forest" || sim.Years == nil || *sim.Years != 5 {
		t.Errorf("site %q years %v", sim.Site, sim.Years)
	}
	for _, k := range []string{"organic", "ammonium", "nitrate", "plant", "fungi", "foliage", "soil", "ecosystem", "n2o", "nitrate-d18o", "soil-nitrate", "roots"} {
		if _, ok := sim.Shift[k]; !ok {
			t.Errorf("shift lacks %q", k)
		}
	}
	if _, ok := sim.Pools.Baseline["organic"]; !ok {
		t.Error("pools.baseline lacks organic")
	}
	out, _, _ = runArgs(t, "simulate", "--site", "temperate-deciduous-forest", "--format", "json")
	if !strings.Contains(out, `"years": null`) {
		t.Error("steady state: years should be null")
	}
}

// The progress indicator draws only after its delay and clears itself.
func TestProgressBar(t *testing.T) {
	t.Parallel()
	var b bytes.Buffer
	p := newProgressBar(&b, time.Hour)
	p.update(1, 2)
	p.finish()
	if b.Len() != 0 {
		t.Errorf("drew before the delay: %q", b.String())
	}
	p = newProgressBar(&b, 0)
	p.update(1, 4)
	p.update(1, 4)
	p.update(4, 4)
	p.finish()
	if got := b.String(); !strings.Contains(got, " 25 %") || !strings.Contains(got, "100 %") || strings.Count(got, "25 %") != 1 || !strings.HasSuffix(got, "\r") {
		t.Errorf("progress output %q", got)
	}
	// Not a terminal: explain writes no progress to a buffer.
	_, errs, _ := runArgs(t, "explain", "../../testdata/demo/study.yaml", "--draws", "4")
	if strings.Contains(errs, "explaining") {
		t.Errorf("progress drawn on a non-terminal: %q", errs)
	}
}

// Every JSON nlens writes keeps "&" literal (no HTML escaping): the
// measurement notes cite "Stark & Hart 1997".
func TestJSONKeepsAmpersand(t *testing.T) {
	t.Parallel()
	out, errs, code := runArgs(t, "facts", "measurements", "--format", "json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "Stark & Hart") || strings.Contains(out, `\u0026`) {
		t.Errorf("facts JSON does not carry \"&\" literally")
	}
}
