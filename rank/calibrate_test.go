package rank

import (
	"context"
	"fmt"
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
		t.Logf("%-27s %-42s %4.0f y  truth %-45s rank %2d%s  top %-40s %.2f  dist %5.1f  cov %d/%d", k.Site, k.Treatment, k.Years, k.Truth, k.Rank+1, with, k.Top, k.TopPosterior, k.Distance, k.Covered, k.Intervals)
	}
	t.Logf("top-1 %.2f, top-2 %.2f, top-1 of the %d identifiable %.2f; ECE %.3f; 90 %% interval coverage %.2f (%d intervals)", c.Top1, c.Top2, c.Identifiable, c.Top1Identifiable, c.ECE, c.Coverage, c.Intervals)
	for _, b := range c.Reliability {
		if b.N > 0 {
			t.Logf("top posterior %.1f–%.1f: %3d cases, mean %.2f, right %.2f", b.Low, b.High, b.N, b.Confidence, b.Accuracy)
		}
	}
	for _, p := range c.Pairs {
		t.Logf("true pair %s ranked %d", p.Truth, p.Rank+1)
	}
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
// hold the truth about 90 % of the time and the top posterior is about as
// often right as it claims. The bounds allow for the sampling noise of so
// few cases: with 24 cases a binomial share of 0.9 has a standard error of
// 0.06, and an ECE over a few occupied bins of about 0.1 arises from noise
// alone (binomial standard errors of the bins, hand computation).
func TestCalibrationSmall(t *testing.T) {
	if testing.Short() {
		t.Skip("explains 24 synthetic studies")
	}
	t.Parallel()
	c, err := Calibrate(context.Background(), knowledge.MustDefault(), defaultSet(t), CalibrationOptions{Cases: 24, Seed: 7,
		Explain: Options{Seed: 1, Draws: 24, FixedDraws: true, Workers: 1}})
	if err != nil {
		t.Fatal(err)
	}
	logCalibration(t, c)
	if c.Coverage < 0.75 {
		t.Errorf("90 %% interval coverage %.2f, want at least 0.75 for 24 cases", c.Coverage)
	}
	if c.ECE > 0.2 {
		t.Errorf("ECE %.3f, want at most 0.2 for 24 cases", c.ECE)
	}
	if c.Top1Identifiable < 0.75 {
		t.Errorf("identifiable truths ranked first %.2f, want at least 0.75", c.Top1Identifiable)
	}
}
