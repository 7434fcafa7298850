package report

import (
	"bytes"
	"math"
	"slices"
	"testing"

	"nlens/rank"
	"nlens/rank/study"
)

// Tolerance of the trajectory figure against the tables, in units of the
// predicted shift's posterior sd, plus an absolute part:
//   - 0.33 sd: three Monte Carlo standard errors of a median from 128
//     posterior samples (1.2533·sd/√128 = 0.11 sd for a normal spread,
//     the asymptotic variance of the sample median);
//   - up to 1 sd for the gap between the median (drawn) and the mean (in
//     the tables): |mean − median| ≤ sd for any distribution (Hotelling &
//     Solomons 1932, Ann. Math. Stat. 3:141), and a pulse's posterior is
//     skewed enough to use much of it; 0.67 sd of it is allowed here;
//   - 0.05 (‰ or ln ratio): the tables' predictions are splines over the
//     magnitude grid, the paths exact forward runs (DEVELOPERS.md: the
//     spline is within 0.07 ‰ on three sites, mostly far less).
const (
	trajMedianTolSD  = 1.0
	trajMedianTolAbs = 0.05
)

// TestTrajectoryMatchesTables: at every observed year the median the
// trajectory figure draws equals the predicted shift of the tables within
// the samples' Monte Carlo error, and the 90 % band holds it, for each
// leading explanation and observable of the demo and of a real engine
// result (transient and long-standing comparisons).
func TestTrajectoryMatchesTables(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	for _, tc := range []struct {
		name string
		r    *rank.Result
	}{
		{"demo", demoResult(t)},
		{"engine", engineResult(t)},
		{"series of years", seriesResult(t)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			checked := 0
			for ci, c := range tc.r.Comparisons {
				if c.Years == nil {
					continue
				}
				for _, dp := range pathsToDraw(c) {
					for _, o := range c.Observed {
						band, median := pathXYs(dp.path, o.Observable, false)
						if len(median) < 2 || len(band) == 0 {
							t.Errorf("%s, %s: no path for %s", c.Name, dp.h.ID, o.Observable)
							continue
						}
						pred, ok := dp.h.Predicted[o.Observable]
						if !ok {
							continue
						}
						var ys, meds []float64
						for _, xy := range median {
							ys, meds = append(ys, xy.X), append(meds, xy.Y)
						}
						got := pathAt(ys, meds, *c.Years)
						tol := trajMedianTolSD*pred.SD + trajMedianTolAbs
						if !(math.Abs(got-pred.Mean) <= tol) {
							t.Errorf("%s, %s, %s: figure's median %.3f at %g years, table's prediction %.3f ± %.3f (tolerance %.3f)",
								c.Name, dp.h.ID, o.Observable, got, *c.Years, pred.Mean, pred.SD, tol)
						}
						lo := pathAt(dp.path.Years, dp.path.Low[o.Observable], *c.Years)
						hi := pathAt(dp.path.Years, dp.path.High[o.Observable], *c.Years)
						if !(lo-trajMedianTolAbs <= pred.Mean && pred.Mean <= hi+trajMedianTolAbs) {
							t.Errorf("%s, %s, %s: table's prediction %.3f outside the figure's band %.3f–%.3f",
								c.Name, dp.h.ID, o.Observable, pred.Mean, lo, hi)
						}
						if k := indexOf(dp.path.Years, *c.Years); k < 0 {
							t.Errorf("%s: the observed year %g is not one of the path's times", c.Name, *c.Years)
						}
						checked++
					}
				}
				// Every observation is drawn at its year.
				for _, o := range c.Observed {
					pts := observationsAt(tc.r, ci, o.Observable)
					if !slices.ContainsFunc(pts, func(p observedPoint) bool { return p.years == *c.Years && p.shift == o.Shift }) {
						t.Errorf("%s: observation of %s not drawn at %g years: %+v", c.Name, o.Observable, *c.Years, pts)
					}
				}
			}
			if checked == 0 {
				t.Fatal("no path was checked")
			}
		})
	}
}

// seriesStudy is an invented study (numbers made up for this test): one
// clear-cut sampled after 1 and after 4 years, as a series of years.
const seriesStudy = `title: series figure test
site:
  template: temperate-deciduous-forest
comparisons:
  - {name: year 1, control: intact1, treatment: cut1, years: 1, series: cut, management: [clear-cut]}
  - {name: year 4, control: intact4, treatment: cut4, years: 4, series: cut, management: [clear-cut]}
groups:
  intact1:
    foliage: {mean: 0.9, sd: 0.8, n: 6}
    soil-nitrate: {mean: -12.1, sd: 2.2, n: 5}
  cut1:
    foliage: {mean: 1.6, sd: 0.9, n: 6}
    soil-nitrate: {mean: -7.0, sd: 2.6, n: 5}
  intact4:
    foliage: {mean: 1.0, sd: 0.8, n: 6}
    soil-nitrate: {mean: -11.8, sd: 2.2, n: 5}
  cut4:
    foliage: {mean: 2.6, sd: 0.9, n: 6}
    soil-nitrate: {mean: -5.5, sd: 2.6, n: 5}
`

func seriesResult(t *testing.T) *rank.Result {
	t.Helper()
	return explainStudyData(t, "study.yaml", []byte(seriesStudy), rank.Options{Seed: 3, Draws: 8, Version: "test"})
}

// TestTrajectorySeriesObservations: in a series of years each
// comparison's trajectories show every year's observation at its year, and
// the paths were computed at each of those years.
func TestTrajectorySeriesObservations(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := seriesResult(t)
	if len(r.Series) != 1 || r.Series[0].Kind != "years" {
		t.Fatalf("want one series of years, got %+v", r.Series)
	}
	for ci, c := range r.Comparisons {
		pts := observationsAt(r, ci, "foliage")
		var years []float64
		for _, p := range pts {
			years = append(years, p.years)
		}
		if !slices.Equal(years, []float64{1, 4}) {
			t.Errorf("%s: foliage observations drawn at %v years, want [1 4]", c.Name, years)
		}
		for _, p := range c.Paths {
			for _, y := range []float64{1, 4} {
				if indexOf(p.Years, y) < 0 {
					t.Errorf("%s, %s: path has no point at %g years", c.Name, p.Hypothesis, y)
				}
			}
		}
		var b bytes.Buffer
		if err := Figure(&b, r, ci, FigureTrajectories, FigureSVG); err != nil {
			t.Fatal(err)
		}
	}
}

func indexOf(xs []float64, v float64) int {
	for i, x := range xs {
		if x == v {
			return i
		}
	}
	return -1
}

func TestPathAt(t *testing.T) {
	ys, vs := []float64{0, 1, 3}, []float64{0, 2, 6}
	for _, tc := range []struct{ t, want float64 }{
		{0, 0}, {0.5, 1}, {1, 2}, {2, 4}, {3, 6}, // straight lines by hand
	} {
		if got := pathAt(ys, vs, tc.t); got != tc.want {
			t.Errorf("pathAt(%g) = %g, want %g", tc.t, got, tc.want)
		}
	}
	if got := pathAt(ys, vs, 4); !math.IsNaN(got) {
		t.Errorf("pathAt beyond the last time = %g, want NaN", got)
	}
}

// TestObservationsAt: which observations a comparison's trajectories show.
// A series of years is one treatment read at several times, so all its
// years are drawn; a dose series' other levels had other treatments, and
// a comparison outside any series shows only its own (hand-built results,
// shifts invented).
func TestObservationsAt(t *testing.T) {
	cmp := func(name, series string, years, shift float64) rank.ComparisonResult {
		return rank.ComparisonResult{Name: name, Series: series, Years: f64(years),
			Observed: []study.Observed{{Observable: "foliage", Shift: shift, SE: 0.3}}}
	}
	for _, tc := range []struct {
		name string
		kind string
		want []float64 // years drawn for the first comparison
	}{
		{"years", "years", []float64{1, 4}},
		{"dose", "dose", []float64{1}},
		{"none", "", []float64{1}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			series := "s"
			if tc.kind == "" {
				series = ""
			}
			r := &rank.Result{Comparisons: []rank.ComparisonResult{cmp("a", series, 1, 0.5), cmp("b", series, 4, 1.5)}}
			if tc.kind != "" {
				r.Series = []rank.SeriesResult{{Name: "s", Kind: tc.kind, Comparisons: []string{"a", "b"}}}
			}
			var got []float64
			for _, p := range observationsAt(r, 0, "foliage") {
				got = append(got, p.years)
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("drawn at %v years, want %v", got, tc.want)
			}
		})
	}
}
