package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"nlens/forward"
	"nlens/rank/report"
)

// maxChangeFactor bounds --change: six orders of magnitude either way, far
// beyond any treatment effect (the candidates' prior spans 0.1–10, DESIGN
// §4), and within it the changed model stays in floating-point range.
const maxChangeFactor = 1e6

type simulateOptions struct {
	site       string
	changes    []string
	adds       []string
	years      float64
	yearsSet   bool
	trajectory bool
	points     int
	format     string
}

func newSimulateCmd(e *env) *cobra.Command {
	var opt simulateOptions
	cmd := &cobra.Command{
		Use:   "simulate --site ID|FILE [--change PROCESS=xF]... [--add SOURCE=RATE]... [--years T]",
		Short: "Run the N-cycle model: baseline, changed state and the shift of every observable",
		Long: strings.TrimSpace(`
simulate computes a site's baseline steady state, applies a change at t = 0
(rate constants of processes multiplied, new inputs added) and reports the
δ15N of every pool and observable before and after, with the shift
(changed minus baseline) and the pool sizes. Without --years the changed
state is the new steady state; with --years it is the exact state T years
after the change.

--site takes a built-in template id (see nlens facts sites) or a site file.
--change PROCESS=xF multiplies the rate constants of every transfer of the
process by F (x3, x0.5; "x" optional). --add SOURCE=RATE adds RATE kg N/ha/yr
of a knowledge source to its receiving pool at the source's typical δ15N;
SOURCE=RATE@D15N sets the δ15N.`),
		Example: strings.TrimSpace(`
  nlens simulate --site temperate-deciduous-forest --change denitrification=x3 --years 5
  nlens simulate --site fertilized-cropland --add urea=80 --format json
  nlens simulate --site boreal-conifer-forest --change mycorrhizal-transfer=x0.3 --trajectory
  nlens simulate --site my-site.yaml --add manure=40@12 --years 10`),
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			opt.yearsSet = cmd.Flags().Changed("years")
			return wrapRun(func() error { return runSimulate(e, opt) })
		},
	}
	f := cmd.Flags()
	f.StringVar(&opt.site, "site", "", "built-in template id or site file (required)")
	f.StringArrayVar(&opt.changes, "change", nil, "PROCESS=xF: multiply the process's rate constants by F (repeatable)")
	f.StringArrayVar(&opt.adds, "add", nil, "SOURCE=RATE[@D15N]: add RATE kg N/ha/yr of a source (repeatable)")
	f.Float64Var(&opt.years, "years", 0, "years after the change (default: the new steady state)")
	f.BoolVar(&opt.trajectory, "trajectory", false, "also print the path of the δ observables over time")
	f.IntVar(&opt.points, "points", 21, "number of trajectory times")
	f.StringVar(&opt.format, "format", report.FormatTable, "table or json")
	_ = cmd.MarkFlagRequired("site")
	return cmd
}

func runSimulate(e *env, opt simulateOptions) error {
	if err := checkFormat(opt.format, report.FormatTable, report.FormatJSON); err != nil {
		return err
	}
	site, err := forward.LoadSite(opt.site, e.kb)
	if err != nil {
		return err
	}
	change, words, err := parseChange(site, e, opt.changes, opt.adds)
	if err != nil {
		return err
	}
	var years *float64
	if opt.yearsSet {
		if err := checkYears(opt.years); err != nil {
			return err
		}
		years = &opt.years
	}
	sim, err := forward.Simulate(site, change, years)
	if err != nil {
		var ce *forward.ConditionError
		if asCondition(err, &ce) {
			// The baseline passed this check when the site was read, so the
			// changed system failed it.
			if years == nil && math.IsInf(ce.Cond, 1) {
				return badf("after the change the %s system has no steady state (its matrix is singular: some N has no way out of the site or of a pool); give --years T for the state T years after the change", ce.System)
			}
			return err
		}
		return badInput{err}
	}
	if err := finiteState(sim); err != nil {
		return err
	}
	for _, w := range sim.Warnings {
		fmt.Fprintln(e.stderr, "warning:", report.EscapeText(w))
	}
	if names := undefinedAfterChange(sim); len(names) > 0 {
		fmt.Fprintf(e.stderr, "warning: undefined after the change (no N left in the pool or flux, so no δ): %s; left out of the output\n", strings.Join(names, ", "))
	}
	ro := report.SimulationOptions{Format: opt.format, Description: words}
	if opt.trajectory {
		if opt.points < 2 || opt.points > 10000 {
			return badf("--points must be between 2 and 10000, got %d", opt.points)
		}
		ro.Trajectory, err = forward.TrajectoryTimes(sim, years, opt.points)
		if err != nil {
			return err
		}
	}
	if err := report.CheckFinite(sim); err != nil {
		return notFinite(err)
	}
	return report.Simulation(humanOut(e.stdout, opt.format), sim, ro)
}

// parseChange turns --change and --add values into a forward.Change and a
// description in words.
func parseChange(site *forward.Site, e *env, changes, adds []string) (forward.Change, string, error) {
	var c forward.Change
	var words []string
	for _, s := range changes {
		proc, val, ok := strings.Cut(s, "=")
		if !ok {
			return c, "", badf("--change %q: expected PROCESS=xF, for example denitrification=x3", s)
		}
		val = strings.TrimPrefix(strings.TrimPrefix(strings.TrimPrefix(val, "x"), "X"), "×")
		f, err := strconv.ParseFloat(val, 64)
		if err != nil || !(f >= 0) || math.IsInf(f, 0) {
			return c, "", badf("--change %q: the factor must be a number ≥ 0, for example x3 or x0.5", s)
		}
		if f != 0 && (f < 1/maxChangeFactor || f > maxChangeFactor) {
			return c, "", badf("--change %q: the factor must be 0 or between %g and %g", s, 1/maxChangeFactor, maxChangeFactor)
		}
		c.Factors = append(c.Factors, forward.Factor{Process: proc, Factor: f})
		words = append(words, fmt.Sprintf("%s ×%s", proc, strconv.FormatFloat(f, 'g', 4, 64)))
	}
	for _, s := range adds {
		src, val, ok := strings.Cut(s, "=")
		if !ok {
			return c, "", badf("--add %q: expected SOURCE=RATE, for example urea=80", s)
		}
		rateText, d15nText, hasD := strings.Cut(val, "@")
		rate, err := strconv.ParseFloat(rateText, 64)
		if err != nil || !(rate >= 0) || math.IsInf(rate, 0) {
			return c, "", badf("--add %q: the rate must be a number of kg N/ha/yr ≥ 0", s)
		}
		if rate != 0 && (rate < forward.MinRateKgPerHaYr || rate > forward.MaxRateKgPerHaYr) {
			return c, "", badf("--add %q: the rate must be 0 or between %g and %g kg N/ha/yr, as in a site file", s, forward.MinRateKgPerHaYr, forward.MaxRateKgPerHaYr)
		}
		in, err := forward.SourceInput(site, e.kb, src, rate)
		if err != nil {
			return c, "", badInput{fmt.Errorf("--add %q: %w", s, err)}
		}
		if hasD {
			d, err := strconv.ParseFloat(d15nText, 64)
			if err != nil || !(math.Abs(d) <= 100) {
				return c, "", badf("--add %q: δ15N after @ must be a number within ±100 ‰", s)
			}
			in.D15N = d
		}
		c.Additions = append(c.Additions, in)
		words = append(words, fmt.Sprintf("+%s kg N/ha/yr %s (δ15N %s ‰)", strconv.FormatFloat(rate, 'g', 4, 64), src, strconv.FormatFloat(in.D15N, 'f', 1, 64)))
	}
	if len(words) == 0 {
		return c, "no change", nil
	}
	return c, strings.Join(words, ", "), nil
}

// undefinedAfterChange lists the observables that have no finite value in
// the changed state; the report leaves them out (JSON) or prints n/a
// (table), and the user is told why.
func undefinedAfterChange(sim *forward.Simulation) []string {
	var names []string
	for _, name := range sim.Site.DeltaNames() {
		o, err := sim.Site.Observable(name)
		if err != nil {
			continue
		}
		if v := o.Value(&sim.Then, &sim.Changed); math.IsNaN(v) || math.IsInf(v, 0) {
			names = append(names, name)
		}
	}
	return names
}

// finiteState refuses a result whose changed pools are not finite numbers:
// a change so extreme that the model leaves floating-point range.
func finiteState(sim *forward.Simulation) error {
	for i, name := range sim.Site.Pools {
		if v := sim.Then.Total(i); math.IsNaN(v) || math.IsInf(v, 0) {
			return badf("the change takes the %s pool beyond floating-point range; use a smaller change", name)
		}
	}
	return nil
}
