package rank

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// Simulation-based calibration (issue 11; the check of Talts et al. 2018,
// "Validating Bayesian inference algorithms with simulation-based
// calibration", arXiv:1804.06788, applied to the model choice and the
// magnitudes): truths are drawn from the priors (none, a single response,
// or a pair, with its magnitude from its prior) on a declared treatment,
// on sites drawn from the templates' spreads and ε ranges (misspecified,
// as real sites are), observed with field noise; explain then ranks them.
// If the posteriors mean what they say, among the cases whose top
// posterior is about p the top hypothesis is right about a share p of the
// time, and the 90 % intervals hold the truth about 90 % of the time.

// CalibrationOptions control a calibration run.
type CalibrationOptions struct {
	Cases int
	Seed  uint64
	// Explain are the options of each explanation (seed, draws).
	Explain Options
	// Templates restricts the sites (nil: every built-in template).
	Templates []string
	// Progress, if set, is called after each case.
	Progress func(done, total int)
	// Inspect, if set, sees each case's result (tests check invariants).
	Inspect func(*ComparisonResult)
}

// CalibrationCase is one synthetic study and what explain made of it.
type CalibrationCase struct {
	Site, Treatment, Truth string
	Years                  float64
	// Rank of the truth among the hypotheses (0 first; −1 not listed).
	Rank int
	// Rivals counts the other single responses that reproduce a single
	// truth's noise-free shifts on the truth site within RivalSE somewhere
	// in their prior range (for a pair, the singles that reproduce the
	// pair, its own parts included; −1 for none): a truth with rivals
	// cannot be told from them by these observables.
	Rivals int
	// Top is the leading hypothesis and its posterior; TruthPosterior the
	// truth's.
	Top            string
	TopPosterior   float64
	TruthPosterior float64
	// Distance is how far, in observed standard errors, the truth's
	// noise-free shifts lie from the treatment alone's on the same site:
	// a truth closer than a few standard errors cannot be identified.
	Distance float64
	// Covered counts the truth's magnitudes whose 90 % interval holds the
	// truth value, out of Intervals (for the truth hypothesis, when ranked).
	Covered, Intervals int
	Pair               bool
	// CountedWithNone: the truth was found unable to move the observables
	// beyond their standard errors anywhere in its prior range, so explain
	// counted it with none (DESIGN §5); none is then the right answer and
	// Rank is none's.
	CountedWithNone bool
}

// Calibration summarises a run.
type Calibration struct {
	Cases []CalibrationCase
	// Top1 and Top2 are the shares of cases whose truth ranks first and in
	// the first two; Top1Identifiable over cases with Distance ≥
	// IdentifiableSE.
	Top1, Top2, Top1Identifiable float64
	Identifiable                 int
	// Top1Unique is the share ranked first of the identifiable single
	// truths that no other single reproduces (Rivals 0), Top2OneRival the
	// share in the first two of those that at most one reproduces.
	Top1Unique, Top2OneRival float64
	Unique, OneRival         int
	// NoiseECE is the ECE a perfectly calibrated top posterior would show
	// on these cases from sampling alone (the mean over outcomes drawn
	// with the reported confidences).
	NoiseECE float64
	// Reliability bins the top posterior: for each bin the count, mean
	// confidence and share correct; ECE is Σ n_b/N·|acc_b − conf_b|.
	Reliability []ReliabilityBin
	ECE         float64
	// Coverage is the share of magnitude intervals holding the truth.
	Coverage  float64
	Intervals int
	// Pairs are the cases whose truth was a pair, with its rank.
	Pairs []CalibrationCase
}

// ReliabilityBin is one bin of the reliability table.
type ReliabilityBin struct {
	Low, High  float64
	N          int
	Confidence float64
	Accuracy   float64
}

// IdentifiableSE is the distance from the treatment alone (in standard
// errors, over the observed quantities) above which a truth counts as
// identifiable in the calibration summary.
const IdentifiableSE = 6

// RivalSE is the distance (in observed standard errors) within which
// another response's predicted shifts count as reproducing a truth's.
const RivalSE = 2

// calibrationPairShare is the share of non-none truths drawn as pairs (the
// pairs' share of the prior is of this order: pair_prior 0.15 times the
// number of pairs over the number of singles).
const calibrationPairShare = 0.1

// Calibrate runs the simulation-based calibration.
func Calibrate(ctx context.Context, kb *knowledge.Base, set *rules.Set, opt CalibrationOptions) (*Calibration, error) {
	templates := opt.Templates
	if len(templates) == 0 {
		templates = kb.SiteIDs()
	}
	rng := rand.New(rand.NewPCG(opt.Seed, 0xca1))
	var cases []CalibrationCase
	for i := range opt.Cases {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		c, err := calibrationCase(ctx, kb, set, opt, templates[rng.IntN(len(templates))], rng, uint64(i))
		if err != nil {
			return nil, fmt.Errorf("calibration case %d: %w", i+1, err)
		}
		cases = append(cases, c)
		if opt.Progress != nil {
			opt.Progress(i+1, opt.Cases)
		}
	}
	return summarise(cases), nil
}

// calibrationTreatments are the treatments drawn for a site of each land
// use (rates within the experimental range of FACTS-2 §1a).
func calibrationTreatment(landUse string, rng *rand.Rand) forward.Treatment {
	an := func() forward.Treatment {
		return forward.Treatment{Additions: []forward.Addition{{Source: "ammonium-nitrate", RateKgPerHaYr: 20 + 100*rng.Float64()}}}
	}
	urea := func() forward.Treatment {
		return forward.Treatment{Additions: []forward.Addition{{Source: "urea", RateKgPerHaYr: 40 + 120*rng.Float64()}}}
	}
	tag := func(t string) func() forward.Treatment {
		return func() forward.Treatment { return forward.Treatment{Management: []string{t}} }
	}
	var menu []func() forward.Treatment
	switch landUse {
	case "forest":
		menu = []func() forward.Treatment{tag("clear-cut"), tag("burned"), an, urea, tag("thinned")}
	case "grassland", "pasture", "dryland":
		menu = []func() forward.Treatment{tag("grazed"), an, urea, tag("burned")}
	case "cropland":
		menu = []func() forward.Treatment{urea, an, tag("tilled")}
	default:
		menu = []func() forward.Treatment{an, tag("drained")}
	}
	return menu[rng.IntN(len(menu))]()
}

// calibrationObservables are those measured in each case: the common
// δ15N set, with sporocarps where ecto- or ericoid fungi grow and the
// forest floor where there is one.
func calibrationObservables(s *forward.Site) []string {
	out := []string{"foliage", "soil", "soil-ammonium", "soil-nitrate", "nitrate-d18o"}
	if s.PoolIndex("fungi") >= 0 && s.MycorrhizalType != "arbuscular" {
		out = append(out, "fungi")
	}
	if s.PoolIndex("forest-floor") >= 0 {
		out = append(out, "forest-floor")
	}
	return out
}

func calibrationCase(ctx context.Context, kb *knowledge.Base, set *rules.Set, opt CalibrationOptions, siteID string, rng *rand.Rand, index uint64) (CalibrationCase, error) {
	base, err := forward.LoadSite(siteID, kb)
	if err != nil {
		return CalibrationCase{}, err
	}
	tr := calibrationTreatment(base.LandUse, rng)
	years := []float64{2, 5, 10, 20}[rng.IntN(4)]
	cmp := study.Comparison{Name: "case", Control: "control", Treatment: "treatment", Years: &years,
		Management: tr.Management, Severity: tr.Severity}
	for _, a := range tr.Additions {
		cmp.Additions = append(cmp.Additions, study.Addition{Source: a.Source, RateKgPerHaYr: a.RateKgPerHaYr})
	}
	st := &study.Study{File: "calibration", Title: "calibration", Site: base, SiteRef: siteID, Context: rules.Context{LandUse: base.LandUse, Mycorrhizal: base.MycorrhizalType}}
	st.Comparisons = []study.Comparison{cmp}
	// The engine on the nominal site gives the candidates that can be
	// tested here, their priors and the nominal baselines.
	o := opt.Explain
	o.Draws, o.FirstDraws = 1, 1
	o.NoSiteFit = true
	e, err := newEngine(st, unit{idx: []int{0}}, kb, set, o)
	if err != nil {
		return CalibrationCase{}, err
	}
	type option struct {
		c *rules.Candidate
		k *knob
		w float64
	}
	var opts []option
	for i := range set.Candidates {
		c := &set.Candidates[i]
		if c.ID == rules.None || (c.Source != "" && !rules.SourcePossible(kb, c, e.ctx)) {
			continue
		}
		k, _ := e.compile(c, false)
		if k == nil {
			continue
		}
		w, _ := set.Prior(c, e.ctx)
		if w > 0 {
			opts = append(opts, option{c, k, w})
		}
	}
	pick := func(exclude string) option {
		var total float64
		for _, op := range opts {
			if op.c.Response == "" || op.c.Response != exclude {
				total += op.w
			}
		}
		u := rng.Float64() * total
		for _, op := range opts {
			if op.c.Response != "" && op.c.Response == exclude {
				continue
			}
			if u -= op.w; u <= 0 {
				return op
			}
		}
		return opts[len(opts)-1]
	}
	// The truth: none, a single or a pair, magnitudes from their priors.
	var truth []option
	var theta []float64
	switch u := rng.Float64(); {
	case u < set.NoneShare:
	case u < set.NoneShare+(1-set.NoneShare)*calibrationPairShare:
		a := pick("")
		b := pick(a.c.Response)
		for b.c.ID == a.c.ID {
			b = pick(a.c.Response)
		}
		truth = []option{a, b}
	default:
		truth = []option{pick("")}
	}
	for _, t := range truth {
		ax := t.k.ax
		theta = append(theta, ax.toNatural(ax.ulo+(ax.uhi-ax.ulo)*rng.Float64()))
	}
	// The truth site: a draw of its own design, away from the nominal one.
	site := e.site
	ds, err := makeDraws(site, kb, []forward.Treatment{tr}, 0, 2, newStratified(opt.Seed, 1<<30|index, 2))
	if err != nil {
		return CalibrationCase{}, err
	}
	p, forcing := ds[1].params, ds[1].forcing[0]
	change := forcing
	var mods []forward.Mod
	for a, t := range truth {
		mod, err := ResponseMod(site, kb, t.c, theta[a])
		if err != nil {
			return CalibrationCase{}, err
		}
		// A share moves by the same logit step from the truth site's own
		// baseline as from the nominal one (as explain assumes).
		for j := range mod.Knobs {
			if t.k.baseD != nil {
				b := forward.KnobValue(site, &p, *t.k.fk)
				if b > 0 && b < 1 {
					mod.Knobs[j].Value = logistic(logit(theta[a]) - logit(t.k.baseline) + logit(b))
				}
			}
		}
		mods = append(mods, mod)
	}
	change.Mods = append(slices.Clone(forcing.Mods), mods...)
	obs := calibrationObservables(site)
	shifts, before, err := simulateShifts(site, &p, &forcing, &change, years, obs)
	if err != nil {
		return CalibrationCase{}, err
	}
	none, _, err := simulateShifts(site, &p, &forcing, &forcing, years, obs)
	if err != nil {
		return CalibrationCase{}, err
	}
	// Observations: 6 replicates per group with each measurement's field sd.
	const n = 6
	z := distuv.Normal{Mu: 0, Sigma: 1, Src: rng}
	cmp.Observed = nil
	var dist float64
	for i, name := range obs {
		sd := fieldSD(kb, name)
		se := sd / math.Sqrt(n)
		ctl := study.Stat{Mean: before[i] + z.Rand()*se, SD: sd, N: n}
		trt := study.Stat{Mean: before[i] + shifts[i] + z.Rand()*se, SD: sd, N: n}
		cmp.Observed = append(cmp.Observed, study.Observed{Observable: name, Shift: trt.Mean - ctl.Mean, SE: math.Sqrt2 * se, DF: 2*n - 2, Control: ctl, Treatment: trt})
		d := (shifts[i] - none[i]) / (math.Sqrt2 * se)
		dist += d * d
	}
	sort.Slice(cmp.Observed, func(i, j int) bool { return cmp.Observed[i].Observable < cmp.Observed[j].Observable })
	st.Comparisons = []study.Comparison{cmp}
	res, err := Explain(ctx, st, kb, set, opt.Explain)
	if err != nil {
		return CalibrationCase{}, err
	}
	cr := res.Comparisons[0]
	if opt.Inspect != nil {
		opt.Inspect(&cr)
	}
	id := rules.None
	if len(truth) > 0 {
		var ids []string
		for _, t := range truth {
			ids = append(ids, t.c.ID)
		}
		// A pair's id lists its parts in the order of the rules set.
		sort.SliceStable(ids, func(a, b int) bool {
			return slices.IndexFunc(set.Candidates, func(c rules.Candidate) bool { return c.ID == ids[a] }) <
				slices.IndexFunc(set.Candidates, func(c rules.Candidate) bool { return c.ID == ids[b] })
		})
		id = ids[0]
		if len(ids) > 1 {
			id += "+" + ids[1]
		}
	}
	out := CalibrationCase{Site: siteID, Treatment: treatmentWords(tr), Truth: id, Years: years, Rank: -1, Top: cr.Hypotheses[0].ID,
		TopPosterior: cr.Hypotheses[0].Posterior, Distance: math.Sqrt(dist), Pair: len(truth) > 1, Rivals: -1}
	if len(truth) > 0 {
		// Rivals: the other singles (every single, for a pair) scanned
		// over their prior range on the truth site, each share moved by
		// its logit step as explain does.
		ses := make([]float64, len(obs))
		for i, name := range obs {
			ses[i] = math.Sqrt2 * fieldSD(kb, name) / math.Sqrt(n)
		}
		out.Rivals = 0
		for _, op := range opts {
			if len(truth) == 1 && op.c.ID == truth[0].c.ID {
				continue
			}
			best := math.Inf(1)
			const scan = 25
			for j := range scan {
				ax := op.k.ax
				v := ax.toNatural(ax.ulo + (ax.uhi-ax.ulo)*(float64(j)+0.5)/scan)
				mod, err := ResponseMod(site, kb, op.c, v)
				if err != nil {
					continue
				}
				if op.k.baseD != nil {
					if b := forward.KnobValue(site, &p, *op.k.fk); b > 0 && b < 1 {
						for q := range mod.Knobs {
							mod.Knobs[q].Value = logistic(logit(v) - logit(op.k.baseline) + logit(b))
						}
					}
				}
				ch := forcing
				ch.Mods = append(slices.Clone(forcing.Mods), mod)
				other, _, err := simulateShifts(site, &p, &forcing, &ch, years, obs)
				if err != nil {
					continue
				}
				var d2 float64
				for i := range obs {
					d := (other[i] - shifts[i]) / ses[i]
					d2 += d * d
				}
				best = math.Min(best, math.Sqrt(d2))
			}
			if best < RivalSE {
				out.Rivals++
			}
		}
	}
	for r, h := range cr.Hypotheses {
		if h.ID != id {
			continue
		}
		out.Rank, out.TruthPosterior = r, h.Posterior
		if h.Indistinguishable && h.ID != rules.None {
			// Counted with none: explain's answer for it is none's.
			out.CountedWithNone = true
			out.Rank = slices.IndexFunc(cr.Hypotheses, func(h Hypothesis) bool { return h.ID == rules.None })
			out.TruthPosterior = cr.Hypotheses[out.Rank].Posterior
		}
		for _, m := range h.Magnitudes {
			a := slices.IndexFunc(truth, func(t option) bool { return t.c.ID == m.Candidate })
			if a < 0 {
				continue
			}
			v := theta[a]
			if truth[a].k.baseD != nil && m.Baseline > 0 && m.Baseline < 1 {
				v = logistic(logit(theta[a]) - logit(truth[a].k.baseline) + logit(m.Baseline))
			}
			out.Intervals++
			if v >= m.Low && v <= m.High {
				out.Covered++
			}
		}
		break
	}
	return out, nil
}

// simulateShifts returns each observable's shift under change against the
// baseline, and the baseline values, at years after the start.
func simulateShifts(site *forward.Site, p *forward.Params, forcing, change *forward.Change, years float64, obs []string) (shifts, before []float64, err error) {
	m := forward.NewModel(site)
	var x0, x forward.State
	if err := m.Steady(p, true, &x0); err != nil {
		return nil, nil, err
	}
	var r forward.Run
	if err := r.Advance(m, p, change, &x0, years, true, &x); err != nil {
		return nil, nil, err
	}
	for _, name := range obs {
		o, err := site.Observable(name)
		if err != nil {
			return nil, nil, err
		}
		b := o.Value(&x0, p)
		before = append(before, b)
		shifts = append(shifts, o.Shift(b, o.Value(&x, r.Final())))
	}
	return shifts, before, nil
}

// fieldSD is the between-plot sd of an observable from the measurement
// catalogue (1 ‰ where the catalogue has none).
func fieldSD(kb *knowledge.Base, obs string) float64 {
	for _, m := range kb.Measurements {
		if m.Observable == obs && m.FieldSD > 0 {
			return math.Hypot(m.FieldSD, m.AnalyticalSD)
		}
	}
	return 1
}

func treatmentWords(t forward.Treatment) string {
	var parts []string
	for _, a := range t.Additions {
		parts = append(parts, fmt.Sprintf("%s %.0f kg N/ha/yr", a.Source, a.RateKgPerHaYr))
	}
	parts = append(parts, t.Management...)
	if len(parts) == 0 {
		return "none"
	}
	return fmt.Sprint(parts)
}

// summarise computes the calibration summary of the cases.
func summarise(cases []CalibrationCase) *Calibration {
	c := &Calibration{Cases: cases}
	bins := make([]ReliabilityBin, 10)
	for b := range bins {
		bins[b].Low, bins[b].High = float64(b)/10, float64(b+1)/10
	}
	var hits1, hits2, idHits, covered, uniqueHits, rivalHits int
	for _, k := range cases {
		if k.Rivals >= 0 && !k.Pair && k.Distance >= IdentifiableSE {
			if k.Rivals == 0 {
				c.Unique++
				if k.Rank == 0 {
					uniqueHits++
				}
			}
			if k.Rivals <= 1 {
				c.OneRival++
				if k.Rank == 0 || k.Rank == 1 {
					rivalHits++
				}
			}
		}
		if k.Rank == 0 {
			hits1++
		}
		if k.Rank == 0 || k.Rank == 1 {
			hits2++
		}
		if k.Distance >= IdentifiableSE || k.Truth == rules.None {
			c.Identifiable++
			if k.Rank == 0 {
				idHits++
			}
		}
		b := min(int(k.TopPosterior*10), 9)
		bins[b].N++
		bins[b].Confidence += k.TopPosterior
		if k.Rank == 0 {
			bins[b].Accuracy++
		}
		covered += k.Covered
		c.Intervals += k.Intervals
		if k.Pair {
			c.Pairs = append(c.Pairs, k)
		}
	}
	n := float64(len(cases))
	c.Top1, c.Top2 = float64(hits1)/n, float64(hits2)/n
	if c.Identifiable > 0 {
		c.Top1Identifiable = float64(idHits) / float64(c.Identifiable)
	}
	for b := range bins {
		if bins[b].N == 0 {
			continue
		}
		bins[b].Confidence /= float64(bins[b].N)
		bins[b].Accuracy /= float64(bins[b].N)
		c.ECE += float64(bins[b].N) / n * math.Abs(bins[b].Accuracy-bins[b].Confidence)
	}
	c.Reliability = bins
	c.NoiseECE = noiseECE(cases, bins)
	if c.Unique > 0 {
		c.Top1Unique = float64(uniqueHits) / float64(c.Unique)
	}
	if c.OneRival > 0 {
		c.Top2OneRival = float64(rivalHits) / float64(c.OneRival)
	}
	if c.Intervals > 0 {
		c.Coverage = float64(covered) / float64(c.Intervals)
	}
	return c
}

// noiseECE is the mean ECE, over outcomes drawn right with exactly the
// reported top posteriors, of a perfectly calibrated forecaster on these
// cases and bins: the ECE that sampling alone gives (it is not zero for a
// finite set; from memory: Bröcker 2012, "Estimating reliability and resolution of
// probability forecasts through decomposition of the empirical score",
// Clim. Dyn. 39:655–667, on the bias of binned reliability).
func noiseECE(cases []CalibrationCase, bins []ReliabilityBin) float64 {
	if len(cases) == 0 {
		return 0
	}
	rng := rand.New(rand.NewPCG(1, 2))
	const reps = 2000
	var total float64
	right := make([]float64, len(bins))
	for range reps {
		clear(right)
		for _, k := range cases {
			if rng.Float64() < k.TopPosterior {
				right[min(int(k.TopPosterior*10), 9)]++
			}
		}
		var ece float64
		for b := range bins {
			if bins[b].N > 0 {
				ece += math.Abs(right[b]-bins[b].Confidence*float64(bins[b].N)) / float64(len(cases))
			}
		}
		total += ece
	}
	return total / reps
}
