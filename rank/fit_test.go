package rank

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
)

// fitTemplate loads a built-in template.
func fitTemplate(t *testing.T, id string) *forward.Site {
	t.Helper()
	s, err := forward.LoadSite(id, knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// truthFor returns the template's parameters with some rates and ε moved
// within their spreads and ranges, and its steady state.
type truthMove struct {
	process string
	from    string // donor pool ("" for an ε move of the process)
	z       float64
	eps     float64 // new ε (‰) when from is ""
}

func truthState(t testing.TB, s *forward.Site, moves []truthMove) (forward.Params, forward.State) {
	t.Helper()
	p := s.Params()
	for _, m := range moves {
		found := false
		for j, tr := range s.Transfers {
			if tr.Process != m.process {
				continue
			}
			if m.from == "" {
				p.Eps15[j] = m.eps
				p.Eps18[j] = tr.D18ORatio * m.eps
				found = true
				continue
			}
			if s.Pools[tr.From] == m.from {
				p.K[j] *= math.Exp(tr.Spread * m.z)
				found = true
			}
		}
		if !found {
			t.Fatalf("no transfer for move %+v", m)
		}
	}
	var x forward.State
	if err := forward.NewModel(s).Steady(&p, true, &x); err != nil {
		t.Fatal(err)
	}
	return p, x
}

// controlTargets observes the named observables in state x, with a
// standard error of seD ‰ for δ values and seRel of the mean for pools and
// rates.
func controlTargets(t *testing.T, s *forward.Site, p *forward.Params, x *forward.State, names []string, seD, seRel float64) []FitTarget {
	t.Helper()
	var out []FitTarget
	for _, name := range names {
		o, err := s.Observable(name)
		if err != nil {
			t.Fatal(err)
		}
		v := o.Value(x, p)
		se := seD
		if o.LogRatio() {
			se = seRel * v
		}
		out = append(out, FitTarget{Observable: name, Mean: v, SE: se})
	}
	return out
}

// distanceToTruth is the prior-scaled distance between coordinates of the
// fitted parameters and the truth, for the parameters the truth moved.
func paramValue(s *forward.Site, p *forward.Params, process, from string) float64 {
	for j, tr := range s.Transfers {
		if tr.Process == process && (from == "" || s.Pools[tr.From] == from) {
			if from == "" {
				return p.Eps15[j]
			}
			return p.K[j]
		}
	}
	return math.NaN()
}

// Site fit (issue 12): a control generated from a template with rates and
// ε moved within their spreads and ranges is reproduced within its SE
// after the fit, and the fitted parameters move toward the truth. The
// control is the template's own model at the moved parameters, observed
// with a standard error of 0.3 ‰ for δ values (a field SE of the mean with
// n ≈ 6, common practice) and 5 % for pools and rates; it has no model
// error, so the structural error of the fit is set small (0.1 ‰, 0.02 on
// the ln scale) instead of the default that allows for a real site.
func TestFitRecoversMovedTemplate(t *testing.T) {
	t.Parallel()
	tests := []struct {
		id    string
		moves []truthMove
		obs   []string
	}{
		{
			id: "temperate-deciduous-forest",
			moves: []truthMove{
				{process: "nitrification", from: "ammonium", z: 1.5},
				{process: "leaching-organic", from: "organic", z: -1.2},
				{process: "nitrification", eps: 26},
			},
			obs: []string{"foliage", "soil", "forest-floor", "soil-ammonium", "soil-nitrate", "fungi", "litter", "n2o", "pool:nitrate", "pool:ammonium", "net:nitrification", "flux:mineralization"},
		},
		{
			id: "grazed-pasture",
			moves: []truthMove{
				{process: "volatilization", from: "ammonium", z: 1.5},
				{process: "denitrification", from: "nitrate", z: 1.2},
				{process: "nitrification", eps: 24},
			},
			obs: []string{"foliage", "soil", "soil-ammonium", "soil-nitrate", "fungi", "n2o", "pool:nitrate", "pool:ammonium", "net:mineralization", "flux:volatilization"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.id, func(t *testing.T) {
			t.Parallel()
			s := fitTemplate(t, tt.id)
			truthP, truthX := truthState(t, s, tt.moves)
			targets := controlTargets(t, s, &truthP, &truthX, tt.obs, 0.3, 0.05)
			fit, err := FitSite(s, targets, FitOptions{StructuralPermil: 0.1, StructuralLog: 0.02})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%d evaluations, −log posterior %.3f → %.3f, %d parameters moved", fit.Evaluations, fit.ObjectiveStart, fit.Objective, len(fit.Moved))
			for _, c := range fit.Control {
				sd := c.SE
				dev := c.After - c.Observed
				if c.LogRatio {
					dev = math.Log(c.After / c.Observed)
					sd = c.SE / c.Observed
				}
				t.Logf("%-22s observed %9.3f before %9.3f after %9.3f", c.Observable, c.Observed, c.Before, c.After)
				if math.Abs(dev) > sd {
					t.Errorf("%s: fitted %.3f vs observed %.3f, off by %.2f SE, want within 1 SE", c.Observable, c.After, c.Observed, math.Abs(dev)/sd)
				}
			}
			if !fit.Reproduced || len(fit.Warnings) > 0 {
				t.Errorf("reproduced %v with warnings %q, want reproduced and no warning", fit.Reproduced, fit.Warnings)
			}
			// Toward the truth: every moved parameter of the truth ends
			// closer to its true value than the nominal site was, in prior
			// units (log of the rate constant over its spread; ε over its
			// range's triangular sd).
			fitP := fit.Site.Params()
			nominal := s.Params()
			for _, m := range tt.moves {
				truth := paramValue(s, &truthP, m.process, m.from)
				got := paramValue(fit.Site, &fitP, m.process, m.from)
				start := paramValue(s, &nominal, m.process, m.from)
				if m.from != "" {
					truth, got, start = math.Log(truth), math.Log(got), math.Log(start)
				}
				t.Logf("%s %s: nominal %.4g, truth %.4g, fitted %.4g", m.process, m.from, start, truth, got)
				if !(math.Abs(got-truth) < math.Abs(start-truth)) {
					t.Errorf("%s %s: fitted %.4g is no closer to the truth %.4g than the nominal %.4g", m.process, m.from, got, truth, start)
				}
			}
		})
	}
}

// A control that is the template itself moves nothing; the fitted site is
// balanced (its steady state is its pools, so simulate gives no warning)
// and reproduces the fit's own values; written as a site file and read
// back it gives the same steady state.
func TestFitOfTheTemplateItself(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	s := fitTemplate(t, "boreal-conifer-forest")
	p := s.Params()
	var x forward.State
	if err := forward.NewModel(s).Steady(&p, true, &x); err != nil {
		t.Fatal(err)
	}
	targets := controlTargets(t, s, &p, &x, []string{"foliage", "soil", "soil-nitrate", "fungi", "forest-floor"}, 0.3, 0.05)
	fit, err := FitSite(s, targets, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(fit.Moved) != 0 || !fit.Reproduced {
		t.Errorf("got %d moved parameters (%+v) and reproduced %v, want none moved and reproduced", len(fit.Moved), fit.Moved, fit.Reproduced)
	}
	// A moved control, then the balance of the fitted site.
	truthP, truthX := truthState(t, s, []truthMove{{process: "nitrification", from: "ammonium", z: 2}})
	targets = controlTargets(t, s, &truthP, &truthX, []string{"foliage", "soil", "soil-nitrate", "soil-ammonium", "pool:nitrate"}, 0.3, 0.05)
	fit, err = FitSite(s, targets, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(fit.Moved) == 0 {
		t.Fatal("a control with three times the nitrification moved nothing")
	}
	sim, err := forward.Simulate(fit.Site, forward.Change{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range sim.Warnings {
		t.Errorf("fitted site warning: %s", w)
	}
	for _, c := range fit.Control {
		o, _ := fit.Site.Observable(c.Observable)
		if got := o.Value(&sim.Baseline, &sim.Base); math.Abs(got-c.After) > 1e-9*math.Max(1, math.Abs(c.After)) {
			t.Errorf("%s: fitted site gives %.12g, the fit reported %.12g", c.Observable, got, c.After)
		}
	}
	var buf bytes.Buffer
	if err := forward.EncodeSite(&buf, fit.Site, kb, forward.EncodeOptions{}); err != nil {
		t.Fatal(err)
	}
	back, err := forward.ParseSite("fitted.yaml", buf.Bytes(), kb)
	if err != nil {
		t.Fatalf("the fitted site file does not parse: %v\n%s", err, buf.String())
	}
	sim2, err := forward.Simulate(back, forward.Change{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i := range back.Pools {
		if sim2.Baseline.N15[i] != sim.Baseline.N15[i] || sim2.Baseline.N14[i] != sim.Baseline.N14[i] {
			t.Errorf("%s: the file's steady state differs from the fitted site's", back.Pools[i])
		}
	}
}

// A control no rate within its spread and no ε within its range can
// reach is reported, naming the observable; bad targets are errors.
func TestFitWarnsAndRefuses(t *testing.T) {
	t.Parallel()
	s := fitTemplate(t, "temperate-grassland")
	fit, err := FitSite(s, []FitTarget{{Observable: "foliage", Mean: 25, SE: 0.3}, {Observable: "soil", Mean: 5, SE: 0.3}}, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fit.Reproduced || len(fit.Warnings) == 0 || !strings.Contains(fit.Warnings[0], "control's foliage") {
		t.Errorf("got reproduced %v and warnings %q, want a first warning naming foliage", fit.Reproduced, fit.Warnings)
	}
	for _, tt := range []struct {
		name    string
		targets []FitTarget
		want    string
	}{
		{"none", nil, "no observed values"},
		{"unknown", []FitTarget{{Observable: "forest-floor", Mean: 1, SE: 0.2}}, `fit target "forest-floor"`},
		{"twice", []FitTarget{{Observable: "soil", Mean: 1, SE: 0.2}, {Observable: "soil", Mean: 2, SE: 0.2}}, "given twice"},
		{"negative pool", []FitTarget{{Observable: "pool:nitrate", Mean: -1, SE: 0.2}}, "must be positive"},
		{"bad SE", []FitTarget{{Observable: "soil", Mean: 1, SE: -0.2}}, "SE ≥ 0"},
	} {
		if _, err := FitSite(s, tt.targets, FitOptions{}); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: got %v, want an error containing %q", tt.name, err, tt.want)
		}
	}
}

// BenchmarkFitSite fits the deciduous template to a control three means
// away (the demo's control: foliage, soil, soil nitrate) and to twelve
// means of a moved template.
func BenchmarkFitSite(b *testing.B) {
	s, err := forward.LoadSite("temperate-deciduous-forest", knowledge.MustDefault())
	if err != nil {
		b.Fatal(err)
	}
	demo := []FitTarget{{"foliage", -0.4, 0.33}, {"soil", 3.7, 0.24}, {"soil-nitrate", -9.6, 1.07}}
	b.Run("three-means", func(b *testing.B) {
		for b.Loop() {
			if _, err := FitSite(s, demo, FitOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	p, x := truthState(b, s, []truthMove{{process: "nitrification", from: "ammonium", z: 1.5}, {process: "leaching-organic", from: "organic", z: -1.2}, {process: "nitrification", eps: 26}})
	names := []string{"foliage", "soil", "forest-floor", "soil-ammonium", "soil-nitrate", "fungi", "litter", "n2o", "pool:nitrate", "pool:ammonium", "net:nitrification", "flux:mineralization"}
	var twelve []FitTarget
	for _, n := range names {
		o, _ := s.Observable(n)
		v := o.Value(&x, &p)
		se := 0.3
		if o.LogRatio() {
			se = 0.05 * v
		}
		twelve = append(twelve, FitTarget{n, v, se})
	}
	b.Run("twelve-means", func(b *testing.B) {
		for b.Loop() {
			if _, err := FitSite(s, twelve, FitOptions{}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
