package main

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/report"
	"nlens/rules"
)

// maxChangeFactor bounds --change PROCESS=xF: six orders of magnitude
// either way, far beyond any treatment effect, and within it the changed
// model stays in floating-point range.
const maxChangeFactor = 1e6

type simulateOptions struct {
	site       string
	changes    []string
	adds       []string
	manage     []string
	severity   string
	pulse      float64
	pulseSet   bool
	removes    []string
	years      float64
	yearsSet   bool
	trajectory bool
	points     int
	format     string
}

func newSimulateCmd(e *env) *cobra.Command {
	var opt simulateOptions
	cmd := &cobra.Command{
		Use:   "simulate --site ID|FILE [--change CANDIDATE=VALUE]... [--add SOURCE=RATE]... [--manage TAG]... [--pulse D] [--remove POOL=SHARE]... [--years T]",
		Short: "Run the N-cycle model: baseline, changed state and the shift of every observable",
		Long: strings.TrimSpace(`
simulate computes a site's baseline steady state, applies a change at t = 0
and reports the δ15N of every pool and observable before and after, with the
shift (changed minus baseline) and the pool sizes. Without --years the
changed state is the new steady state; with --years it is the exact state T
years after the change, computed piece by piece.

--site takes a built-in template id (see nlens facts sites) or a site file.

--change CANDIDATE=VALUE applies a candidate response (see nlens explain):
more-nitrification=0.6 gives nitrification 60 % of the NH4+ pool's outflow,
the other outflows unchanged (k = s/(1−s)·Σ k_other); less-plant-uptake=0.2,
more-fungal-transfer=0.8 (the share of fungal N passed to the host),
more-nitrate-uptake=0.7 (the share of uptake taken as nitrate),
more-mycorrhizal-route=0.5 (the share of plant supply through fungi),
more-fixation=5 (kg N/ha/yr), source:manure=40 (kg N/ha/yr). A process the
site lacks is added at its knowledge ε. PROCESS=xF multiplies the rate
constants of every transfer of the process by F (x3, x0.5; "x" optional).

--add SOURCE=RATE[@D15N[@D18O]] adds RATE kg N/ha/yr of a knowledge source
to its receiving pools (ammonium-nitrate half to each) at the source's
typical δ15N unless given. --manage TAG applies a management forcing
(clear-cut, harvested, burned, grazed) at its typical sizes; --severity sets
a fire's. --pulse D makes the --change responses last D years, after which
the baseline rates return. --remove POOL=SHARE[@EPS] takes that share of a
pool out of the site at t = 0; with an isotope effect the remaining N
follows the closed-system Rayleigh law.`),
		Example: strings.Trim(`
  nlens simulate --site temperate-deciduous-forest --change more-nitrification=0.6 --years 5
  nlens simulate --site temperate-deciduous-forest --manage clear-cut --years 2
  nlens simulate --site fertilized-cropland --add urea=80 --format json
  nlens simulate --site boreal-conifer-forest --change less-mycorrhizal-route=0.1 --pulse 3 --years 10
  nlens simulate --site my-site.yaml --remove foliage=0.6@3 --years 1 --trajectory`, "\n"),
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			opt.yearsSet = cmd.Flags().Changed("years")
			opt.pulseSet = cmd.Flags().Changed("pulse")
			return wrapRun(func() error { return runSimulate(e, opt) })
		},
	}
	f := cmd.Flags()
	f.StringVar(&opt.site, "site", "", "built-in template id or site file (required)")
	f.StringArrayVar(&opt.changes, "change", nil, "CANDIDATE=VALUE (a share, or kg N/ha/yr) or PROCESS=xF (repeatable)")
	f.StringArrayVar(&opt.adds, "add", nil, "SOURCE=RATE[@D15N[@D18O]]: add RATE kg N/ha/yr of a source (repeatable)")
	f.StringArrayVar(&opt.manage, "manage", nil, "management forcing at its typical sizes: clear-cut, harvested, burned, grazed (repeatable)")
	f.StringVar(&opt.severity, "severity", "", "severity of a burn: low, moderate (default) or high")
	f.Float64Var(&opt.pulse, "pulse", 0, "the --change responses last this many years, then the baseline rates return")
	f.StringArrayVar(&opt.removes, "remove", nil, "POOL=SHARE[@EPS]: take that share of a pool out at t = 0 (repeatable)")
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
	set, err := loadRules(e, nil)
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
	if opt.pulseSet && !(opt.pulse > 0 && opt.pulse <= 1e4) {
		return badf("--pulse must be a number of years between 0 and 10000, got %g", opt.pulse)
	}
	site, change, words, err := parseChange(site, e, set, opt)
	if err != nil {
		return err
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

// parseChange turns the change flags into a forward.Change on the site
// (with any transfer a candidate needs added at rate 0) and a description
// in words.
func parseChange(site *forward.Site, e *env, set *rules.Set, opt simulateOptions) (*forward.Site, forward.Change, string, error) {
	var c forward.Change
	var words []string
	response := forward.Mod{Start: 0, End: math.Inf(1)}
	if opt.pulseSet {
		response.End = opt.pulse
	}
	for _, s := range opt.changes {
		id, val, ok := strings.Cut(s, "=")
		if !ok {
			return nil, c, "", badf("--change %q: expected CANDIDATE=VALUE (more-nitrification=0.6) or PROCESS=xF (denitrification=x3)", s)
		}
		if cand := set.Candidate(id); cand != nil {
			v, err := strconv.ParseFloat(val, 64)
			if err != nil || !(v >= 0) || math.IsInf(v, 0) {
				return nil, c, "", badf("--change %q: the value must be a number ≥ 0", s)
			}
			if rules.IsShare(cand.Knob.Kind) && !(v > 0 && v < 1) {
				return nil, c, "", badf("--change %q: %s is a share, strictly between 0 and 1 (0.6 for 60 %%)", s, id)
			}
			if !rules.IsShare(cand.Knob.Kind) && v > forward.MaxRateKgPerHaYr {
				return nil, c, "", badf("--change %q: the rate must be at most %g kg N/ha/yr", s, forward.MaxRateKgPerHaYr)
			}
			var err2 error
			if site, err2 = site.WithRoutes(e.kb, rank.ResponseRoutes(cand)...); err2 != nil {
				return nil, c, "", err2
			}
			mod, err := rank.ResponseMod(site, e.kb, cand, v)
			if err != nil {
				return nil, c, "", badInput{fmt.Errorf("--change %q: %w", s, err)}
			}
			response.Knobs = append(response.Knobs, mod.Knobs...)
			response.Inputs = append(response.Inputs, mod.Inputs...)
			if rules.IsShare(cand.Knob.Kind) {
				words = append(words, fmt.Sprintf("%s at %s %%", id, strconv.FormatFloat(100*v, 'g', 3, 64)))
			} else {
				words = append(words, fmt.Sprintf("%s at %s kg N/ha/yr", id, strconv.FormatFloat(v, 'g', 4, 64)))
			}
			continue
		}
		if !slices.Contains(knowledge.Processes, id) {
			return nil, c, "", badf("--change %q: %q is neither a candidate (nlens explain lists them; for example more-nitrification) nor a process (%s)", s, id, strings.Join(knowledge.Processes, ", "))
		}
		val = strings.TrimPrefix(strings.TrimPrefix(strings.TrimPrefix(val, "x"), "X"), "×")
		f, err := strconv.ParseFloat(val, 64)
		if err != nil || !(f >= 0) || math.IsInf(f, 0) {
			return nil, c, "", badf("--change %q: the factor must be a number ≥ 0, for example x3 or x0.5", s)
		}
		if f != 0 && (f < 1/maxChangeFactor || f > maxChangeFactor) {
			return nil, c, "", badf("--change %q: the factor must be 0 or between %g and %g", s, 1/maxChangeFactor, maxChangeFactor)
		}
		response.Knobs = append(response.Knobs, forward.Factor(id, f))
		words = append(words, fmt.Sprintf("%s ×%s", id, strconv.FormatFloat(f, 'g', 4, 64)))
	}
	if len(response.Knobs)+len(response.Inputs) > 0 {
		c.Mods = append(c.Mods, response)
		if opt.pulseSet {
			unit := "years"
			if opt.pulse == 1 {
				unit = "year"
			}
			words = append(words, fmt.Sprintf("for %s %s", strconv.FormatFloat(opt.pulse, 'g', 4, 64), unit))
		}
	}
	var tr forward.Treatment
	for _, s := range opt.adds {
		src, val, ok := strings.Cut(s, "=")
		if !ok {
			return nil, c, "", badf("--add %q: expected SOURCE=RATE, for example urea=80", s)
		}
		if _, known := e.kb.Source(src); !known {
			return nil, c, "", badf("--add %q: unknown source %q (see nlens facts sources)", s, src)
		}
		fields := strings.Split(val, "@")
		if len(fields) > 3 {
			return nil, c, "", badf("--add %q: expected SOURCE=RATE[@D15N[@D18O]]", s)
		}
		rate, err := strconv.ParseFloat(fields[0], 64)
		if err != nil || !(rate >= 0) || math.IsInf(rate, 0) {
			return nil, c, "", badf("--add %q: the rate must be a number of kg N/ha/yr ≥ 0", s)
		}
		if rate != 0 && (rate < forward.MinRateKgPerHaYr || rate > forward.MaxRateKgPerHaYr) {
			return nil, c, "", badf("--add %q: the rate must be 0 or between %g and %g kg N/ha/yr, as in a site file", s, forward.MinRateKgPerHaYr, forward.MaxRateKgPerHaYr)
		}
		a := forward.Addition{Source: src, RateKgPerHaYr: rate}
		for k, name := range []string{"δ15N", "δ18O"} {
			if len(fields) > k+1 {
				d, err := strconv.ParseFloat(fields[k+1], 64)
				if err != nil || !(math.Abs(d) <= 100) {
					return nil, c, "", badf("--add %q: %s after @ must be a number within ±100 ‰", s, name)
				}
				if k == 0 {
					a.D15N = &d
				} else {
					a.D18O = &d
				}
			}
		}
		tr.Additions = append(tr.Additions, a)
		d := "typical δ15N"
		if a.D15N != nil {
			d = "δ15N " + strconv.FormatFloat(*a.D15N, 'f', 1, 64) + " ‰"
		}
		words = append(words, fmt.Sprintf("+%s kg N/ha/yr %s (%s)", strconv.FormatFloat(rate, 'g', 4, 64), src, d))
	}
	tags := e.kb.ManagementTags()
	for _, t := range opt.manage {
		if !slices.Contains(tags, t) {
			return nil, c, "", badf("--manage %q: unknown management tag (known tags: %s)", t, strings.Join(tags, ", "))
		}
		tr.Management = append(tr.Management, t)
		words = append(words, t)
	}
	if opt.severity != "" {
		if !slices.Contains(knowledge.Severities, opt.severity) {
			return nil, c, "", badf("--severity %q: expected one of %s", opt.severity, strings.Join(knowledge.Severities, ", "))
		}
		tr.Severity = opt.severity
	}
	var err error
	if site, err = site.WithRoutes(e.kb, forward.TreatmentRoutes(site, e.kb, tr)...); err != nil {
		return nil, c, "", err
	}
	forcing, err := forward.TreatmentChange(site, e.kb, tr, forward.Nominal)
	if err != nil {
		return nil, c, "", badInput{err}
	}
	c.Moves = append(c.Moves, forcing.Moves...)
	c.Mods = append(c.Mods, forcing.Mods...)
	for _, s := range opt.removes {
		pool, val, ok := strings.Cut(s, "=")
		if !ok {
			return nil, c, "", badf("--remove %q: expected POOL=SHARE[@EPS], for example foliage=0.6", s)
		}
		if site.PoolIndex(pool) < 0 {
			return nil, c, "", badf("--remove %q: site %q has no %s pool (pools: %s)", s, site.ID, pool, strings.Join(site.Pools, ", "))
		}
		shareText, epsText, hasEps := strings.Cut(val, "@")
		share, err := strconv.ParseFloat(shareText, 64)
		if err != nil || !(share >= 0 && share < 1) {
			return nil, c, "", badf("--remove %q: the share must be a number from 0 to below 1", s)
		}
		mv := forward.Move{From: pool, To: "out", Share: share, Label: "--remove " + s}
		if hasEps {
			eps, err := strconv.ParseFloat(epsText, 64)
			if err != nil || !(math.Abs(eps) < 200) {
				return nil, c, "", badf("--remove %q: ε after @ must be a number of ‰ within ±200", s)
			}
			mv.EpsilonPermil = eps
		}
		c.Moves = append(c.Moves, mv)
		words = append(words, fmt.Sprintf("%s %% of %s removed at the start", strconv.FormatFloat(100*share, 'g', 3, 64), pool))
	}
	if len(words) == 0 {
		return site, c, "no change", nil
	}
	return site, c, strings.Join(words, ", "), nil
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
