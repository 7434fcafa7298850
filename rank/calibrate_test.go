package rank

import (
	"context"
	"fmt"
	"math"
	"os"
	"strconv"
	"testing"

	"nlens/knowledge"
)

// logCalibration writes a calibration summary to the test log.
func logCalibration(t *testing.T, c *Calibration) {
	t.Helper()
	for _, k := range c.Cases {
		with := ""
		if k.CountedWithNone {
			with = " (counted with none)"
		}
		t.Logf("%-27s %-42s %4.0f y  truth %-45s rank %2d%s  top %-40s %.2f  dist %5.1f  rivals %2d  cov %d/%d", k.Site, k.Treatment, k.Years, k.Truth, k.Rank+1, with, k.Top, k.TopPosterior, k.Distance, k.Rivals, k.Covered, k.Intervals)
	}
	t.Logf("top-1 %.2f, top-2 %.2f, top-1 of the %d identifiable %.2f", c.Top1, c.Top2, c.Identifiable, c.Top1Identifiable)
	t.Logf("identifiable single truths no other single reproduces: %d, ranked first %.2f; with at most one rival: %d, in the top two %.2f", c.Unique, c.Top1Unique, c.OneRival, c.Top2OneRival)
	t.Logf("ECE %.3f (sampling alone gives %.3f); 90 %% interval coverage %.2f (%d intervals)", c.ECE, c.NoiseECE, c.Coverage, c.Intervals)
	for _, b := range c.Reliability {
		if b.N > 0 {
			t.Logf("top posterior %.1f–%.1f: %3d cases, mean %.2f, right %.2f", b.Low, b.High, b.N, b.Confidence, b.Accuracy)
		}
	}
	var listed, apart, apartListed int
	for _, p := range c.Pairs {
		t.Logf("true pair %s ranked %d (dist %.1f, singles reproducing it %d)", p.Truth, p.Rank+1, p.Distance, p.Rivals)
		if p.Rank >= 0 {
			listed++
		}
		if p.Rivals == 0 && p.Distance >= IdentifiableSE {
			apart++
			if p.Rank >= 0 {
				apartListed++
			}
		}
	}
	t.Logf("true pairs listed %d of %d; of the %d that no single reproduces and that move the data ≥ %d SE, %d", listed, len(c.Pairs), apart, IdentifiableSE, apartListed)
}

// The full calibration run: NLENS_CALIBRATE=400 go test ./rank -run
// TestCalibrationFull -v -timeout 0 (DEVELOPERS.md).
func TestCalibrationFull(t *testing.T) {
	n, _ := strconv.Atoi(os.Getenv("NLENS_CALIBRATE"))
	if n <= 0 {
		t.Skip("set NLENS_CALIBRATE=N to run N calibration cases")
	}
	draws, _ := strconv.Atoi(os.Getenv("NLENS_CALIBRATE_DRAWS"))
	opt := Options{Seed: 1}
	if draws > 0 {
		opt.Draws, opt.FixedDraws = draws, true
	}
	c, err := Calibrate(context.Background(), knowledge.MustDefault(), defaultSet(t), CalibrationOptions{Cases: n, Seed: 2026, Explain: opt,
		Progress: func(done, total int) { fmt.Fprintf(os.Stderr, "\rcalibration %d/%d", done, total) }})
	if err != nil {
		t.Fatal(err)
	}
	logCalibration(t, c)
}

// A small fixed calibration set (seeded, deterministic): the 90 % intervals
// hold the truth between 85 and 95 % of the time, and the top posterior is
// as often right as it claims within 0.05 beyond what sampling alone gives
// on so few cases (NoiseECE: with 24 cases it is about 0.1, so an ECE bound
// without it would test the sample size, not the posteriors).
func TestCalibrationSmall(t *testing.T) {
	if testing.Short() {
		t.Skip("explains 24 synthetic studies")
	}
	t.Parallel()
	c, err := Calibrate(context.Background(), knowledge.MustDefault(), defaultSet(t), CalibrationOptions{Cases: 24, Seed: 7,
		Explain: Options{Seed: 1, Draws: 24, FixedDraws: true, Workers: 1},
		Inspect: func(c *ComparisonResult) { checkInvariants(t, c, defaultSet(t)) }})
	if err != nil {
		t.Fatal(err)
	}
	logCalibration(t, c)
	// 0.85–0.95 coverage and at most 0.05 of ECE beyond sampling noise are
	// issue 11's acceptance bounds (its tests and "Done when"); 0.75 for the
	// top-1 rate of identifiable truths on this small set is the project's
	// floor (engineering choice, below the 0.91 of the 200-case run).
	if c.Coverage < 0.85 || c.Coverage > 0.95 {
		t.Errorf("90 %% interval coverage %.2f, want 0.85–0.95", c.Coverage)
	}
	if c.ECE > c.NoiseECE+0.05 {
		t.Errorf("ECE %.3f, want at most 0.05 beyond the %.3f sampling alone gives", c.ECE, c.NoiseECE)
	}
	if c.Top1Identifiable < 0.75 {
		t.Errorf("identifiable truths ranked first %.2f, want at least 0.75", c.Top1Identifiable)
	}
}

// The ECE that sampling alone gives: a forecaster whose confidences are
// all 0.5 is right about half the time; on 100 such cases the mean
// |right − 50|/100 of a binomial(100, 0.5) is about 0.04 (E|X − np| ≈
// √(2np(1−p)/π) = 3.99 for n = 100, the normal approximation; hand
// computation).
func TestNoiseECE(t *testing.T) {
	t.Parallel()
	cases := make([]CalibrationCase, 100)
	for i := range cases {
		cases[i].TopPosterior = 0.5
	}
	c := summarise(cases)
	if want := math.Sqrt(2*100*0.25/math.Pi) / 100; math.Abs(c.NoiseECE-want) > 0.004 {
		t.Errorf("NoiseECE %.4f, want about %.4f", c.NoiseECE, want)
	}
}
