package rank

import (
	"context"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rules"
)

// catalogueItem is a measurement bound to the site.
type catalogueItem struct {
	m   knowledge.Measurement
	obs forward.Observable
}

// nextMeasurements scores every catalogue measurement not yet made, as a
// shift at the horizon of part pi.
func (e *engine) nextMeasurements(ctx context.Context, cr *ComparisonResult, entries []entry, leading []int, pi int, prog *progress) error {
	if len(leading) < 2 {
		return nil
	}
	var items []catalogueItem
	for _, m := range e.kb.Measurements {
		if !e.site.Offers(m) {
			continue
		}
		o, err := e.site.Observable(m.Observable)
		if err != nil || e.alreadyObserved(o) {
			continue
		}
		items = append(items, catalogueItem{m, o})
	}
	if len(items) == 0 {
		return nil
	}
	reps := e.replicates(pi)
	cr.ReplicatesAssumed = reps
	// Baseline values of every catalogue observable in every draw.
	baseVals := make([][]float64, len(e.draws))
	for d := range e.draws {
		baseVals[d] = make([]float64, len(items))
		for i, it := range items {
			baseVals[d][i] = it.obs.Value(&e.base[d], &e.draws[d].params)
		}
	}
	// Posterior samples of each leading hypothesis, predicted for every item.
	preds := make([][][]float64, len(leading)) // [hyp][item][sample]
	parallel(len(leading), e.opt.Workers, e.site, func(k int, w *worker) {
		if ctx.Err() != nil {
			return
		}
		s := entries[leading[k]].s
		preds[k] = make([][]float64, len(items))
		rng := newRand(e.opt.Seed, e.stream, 1000+100*uint64(pi)+uint64(k))
		theta := make([]float64, len(s.knobs))
		// "none" is the treatment alone: its samples are nuisance draws.
		for _, fd := range s.sample(samplesPerHypothesis, rng) {
			if len(s.knobs) > 0 {
				theta = s.fineTheta(fd[0], theta)
			}
			d := fd[1]
			ok := e.run(w, d, pi, s.knobs, theta, true) == nil
			for i, it := range items {
				v := math.NaN()
				if ok {
					v = it.obs.Shift(baseVals[d][i], it.obs.Value(&w.x, w.run.Final()))
				}
				if !math.IsNaN(v) && !math.IsInf(v, 0) {
					preds[k][i] = append(preds[k][i], v)
				}
			}
		}
	})
	if err := ctx.Err(); err != nil {
		return err
	}
	p := make([]float64, len(leading))
	for k, i := range leading {
		p[k] = cr.Hypotheses[i].Posterior
	}
	for i, it := range items {
		noise := math.Sqrt(2 * (it.m.AnalyticalSD*it.m.AnalyticalSD + it.m.FieldSD*it.m.FieldSD) / float64(reps))
		// A log ratio of a quantity that can reach zero (a net rate) is
		// undefined in some samples; it is recommended only where nearly
		// all samples of every leading hypothesis define it, so that
		// whether it is listed does not hang on the seed.
		samples := make([][]float64, len(leading))
		usable := true
		for k := range leading {
			samples[k] = preds[k][i]
			usable = usable && float64(len(samples[k])) >= minDefined*float64(samplesPerHypothesis)
		}
		if !usable {
			continue
		}
		meas := Measurement{
			ID: it.m.ID, Label: it.m.Label, Observable: it.m.Observable, Unit: it.m.Unit,
			Cost: it.m.Cost, Method: it.m.Method, NoiseSD: noise,
			Bits:      InformationGain(p, samples, noise),
			Predicted: map[string]Moments{},
		}
		for k, hi := range leading {
			mean, sd := meanSD(samples[k])
			meas.Predicted[cr.Hypotheses[hi].ID] = Moments{Mean: mean, SD: math.Hypot(sd, noise)}
		}
		cr.Measurements = append(cr.Measurements, meas)
	}
	orderMeasurements(cr.Measurements, catalogueIndex(e.kb))
	return nil
}

// BitsTie is the difference in expected information below which two
// measurements count as equally informative. A measurement's bits vary
// over seeds by an sd of 0.03–0.05 bit on the demo study (128 samples per
// hypothesis), so the difference of two has an sd of up to √2·0.05 = 0.07
// bit; two sd of that, 0.14, rounded up: the order of near-equals then
// does not hang on the seed.
const BitsTie = 0.15

// orderMeasurements sorts by expected information (equal bits in
// catalogue order), and within each run of measurements less than BitsTie
// below the run's first, the cheaper first.
func orderMeasurements(ms []Measurement, index map[string]int) {
	sort.SliceStable(ms, func(a, b int) bool {
		if ms[a].Bits != ms[b].Bits {
			return ms[a].Bits > ms[b].Bits
		}
		return index[ms[a].ID] < index[ms[b].ID]
	})
	for i := 0; i < len(ms); {
		j := i + 1
		for j < len(ms) && ms[i].Bits-ms[j].Bits < BitsTie {
			j++
		}
		run := ms[i:j]
		sort.SliceStable(run, func(a, b int) bool {
			if run[a].Cost != run[b].Cost {
				return run[a].Cost < run[b].Cost
			}
			return false // same cost: by bits, as sorted above
		})
		i = j
	}
}

// catalogueIndex maps each measurement id to its place in the catalogue.
func catalogueIndex(kb *knowledge.Base) map[string]int {
	out := map[string]int{}
	for i, m := range kb.Measurements {
		out[m.ID] = i
	}
	return out
}

// minDefined is the share of a hypothesis's samples in which a measurement
// must be defined for it to be recommended.
const minDefined = 0.9

// alreadyObserved reports whether an observed observable measures the same
// quantity (soil-nitrate and leachate-nitrate are both the nitrate pool).
func (e *engine) alreadyObserved(o forward.Observable) bool {
	return slices.ContainsFunc(e.obs, func(x forward.Observable) bool { return x.Same(o) })
}

// replicates is the typical replicate count of part pi's groups (median
// of the smaller n of each observed pair), used for a new measurement.
func (e *engine) replicates(pi int) int {
	var ns []int
	for _, o := range e.parts[pi].cmp.Observed {
		if !o.NoLevels() {
			ns = append(ns, min(o.Control.N, o.Treatment.N))
		}
	}
	if len(ns) == 0 {
		return defaultReplicates
	}
	slices.Sort(ns)
	return ns[len(ns)/2]
}

func meanSD(v []float64) (float64, float64) {
	var m, s float64
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	for _, x := range v {
		s += (x - m) * (x - m)
	}
	return m, math.Sqrt(s / float64(len(v)))
}

// Predicted trajectories: pathPoints times (plus each comparison's
// observed year), each path from pathSamples posterior samples (magnitudes
// and nuisance draws) of its hypothesis. 128 samples, as for the
// measurements, put the Monte Carlo error of the median near 0.11 sd
// (1.2533·sd/√128 for a normal spread), so a figure's median at the
// observed year agrees with the tables' posterior mean.
const (
	pathPoints  = 41
	pathSamples = 128
)

// paths predicts how part pi's observed observables move over time under
// each leading hypothesis: at each time the median and the 5–95 % band of
// the shift over posterior samples, the treatment applied in each sample
// as drawn, so the figures agree with the tables.
func (e *engine) paths(cr *ComparisonResult, entries []entry, leading []int, pi int) []Path {
	pt := e.parts[pi]
	w := newWorker(e.site)
	times, err := e.pathTimes(w, pi)
	if err != nil {
		return nil
	}
	out := make([]Path, len(leading))
	parallel(len(leading), e.opt.Workers, e.site, func(k int, w *worker) {
		i := leading[k]
		s := entries[i].s
		rng := newRand(e.opt.Seed, e.stream, 3000+1000*uint64(pi)+uint64(k))
		theta := make([]float64, len(s.knobs))
		samples := [][2]int{{0, 0}}
		if len(s.knobs) > 0 || s.nd > 1 {
			samples = s.sample(pathSamples, rng)
		}
		// values[o][t] over samples, in one backing array per observable.
		values := make([][][]float64, pt.hi-pt.lo)
		for o := range values {
			values[o] = make([][]float64, len(times))
			flat := make([]float64, 0, len(times)*len(samples))
			for t := range values[o] {
				values[o][t] = flat[t*len(samples) : t*len(samples) : (t+1)*len(samples)]
			}
		}
		var stBuf []forward.State
		var parBuf []forward.Params
		for _, fd := range samples {
			d := fd[1]
			if len(s.knobs) > 0 {
				theta = s.fineTheta(fd[0], theta)
			}
			e.changeFor(w, d, pi, s.knobs, theta)
			states, params, err := w.run.TrajectoryInto(w.model, &e.draws[d].params, &w.change, &e.base[d], times, false, stBuf, parBuf)
			if err != nil {
				continue
			}
			stBuf, parBuf = states, params
			for o := pt.lo; o < pt.hi; o++ {
				ob := e.obs[o]
				if ob.Kind == forward.KindDelta18 {
					continue
				}
				for t := range states {
					v := ob.Shift(e.baseVals[d][o], ob.Value(&states[t], &params[t]))
					if !math.IsNaN(v) && !math.IsInf(v, 0) {
						values[o-pt.lo][t] = append(values[o-pt.lo][t], v)
					}
				}
			}
		}
		pth := Path{Hypothesis: s.id, Years: times, Shifts: map[string][]float64{}, Low: map[string][]float64{}, High: map[string][]float64{}}
		for o := pt.lo; o < pt.hi; o++ {
			name := e.obs[o].Name
			med, lo, hi := make([]float64, len(times)), make([]float64, len(times)), make([]float64, len(times))
			ok := true
			for t := range times {
				v := values[o-pt.lo][t]
				if len(v) == 0 {
					ok = false
					break
				}
				med[t], lo[t], hi[t] = quantiles(v)
			}
			if ok {
				pth.Shifts[name], pth.Low[name], pth.High[name] = med, lo, hi
			}
		}
		out[k] = pth
	})
	return out
}

// pathTimes are the times of the predicted trajectories: evenly to twice
// the unit's longest horizon, or log-spaced to the settling time under the
// treatment alone when every part is read at steady state.
func (e *engine) pathTimes(w *worker, pi int) ([]float64, error) {
	if y := e.horizon(); y > 0 {
		times, err := forward.EvenTimes(math.Max(2*y, 2), pathPoints)
		if err != nil {
			return nil, err
		}
		for _, p := range e.parts {
			if p.cmp.Years != nil {
				times = withTime(times, *p.cmp.Years)
			}
		}
		return times, nil
	}
	e.changeFor(w, 0, pi, nil, nil)
	var p forward.Params
	if err := w.change.ParamsAt(e.site, &e.draws[0].params, math.Inf(1), &p); err != nil {
		return nil, err
	}
	horizon, err := w.model.SettlingTime(&p, &e.base[0], e.obs)
	if err != nil {
		return nil, err
	}
	return forward.LogTimes(horizon, pathPoints)
}

// withTime returns the increasing times with t among them: a time within
// 1e-9 of the span from t becomes t exactly (an even grid's 0.1·3 is
// 0.30000000000000004), otherwise t is inserted in order. Figures then have
// a computed point at every observed year.
func withTime(times []float64, t float64) []float64 {
	tol := 1e-9 * math.Max(1, times[len(times)-1]-times[0])
	i, _ := slices.BinarySearch(times, t)
	for _, j := range []int{i - 1, i} {
		if j >= 0 && j < len(times) && math.Abs(times[j]-t) <= tol {
			times[j] = t
			return times
		}
	}
	return slices.Insert(times, i, t)
}

// timeline lists what the treatment of part pi does and when, at typical
// sizes (the start, the end of each time-limited change), for figures.
func (e *engine) timeline(pi int) []Event {
	c := e.draws[0].forcing[pi]
	var out []Event
	if len(c.Moves) > 0 || len(c.Mods) > 0 {
		out = append(out, Event{Years: 0, Label: "treatment begins"})
	}
	for _, m := range c.Mods {
		if !math.IsInf(m.End, 1) {
			out = append(out, Event{Years: m.End, Label: m.Label + " ends"})
		}
	}
	return out
}

// fluxSamples is the number of posterior samples behind a flux summary.
// The flux is worked out for the first fluxAlways hypotheses and any other
// above fluxMinPosterior (those a reader may look at; the rest of a long
// JSON list goes without).
const (
	fluxSamples      = 32
	fluxAlways       = 10
	fluxMinPosterior = 0.001
)

// fluxes fills each hypothesis's magnitudes with the flux they imply at
// part pi's observation time, or for a pulse in the middle of the pulse
// (half its duration, at most the observation time): over posterior
// samples, the flux of each knob's processes under the treatment against
// the same draw's baseline flux. The baseline printed is the median of the
// draws' baselines, so that it, the median flux and the median ratio
// describe the same samples.
func (e *engine) fluxes(cr *ComparisonResult, entries []entry, pi int) {
	parallel(len(cr.Hypotheses), e.opt.Workers, e.site, func(i int, w *worker) {
		h := &cr.Hypotheses[i]
		if len(h.Magnitudes) == 0 || (i >= fluxAlways && h.Posterior < fluxMinPosterior) {
			return
		}
		s := entries[i].s
		rng := newRand(e.opt.Seed, e.stream, 2000+1000*uint64(pi)+uint64(i))
		n := len(s.knobs)
		vals := make([][]float64, n)
		bases := make([][]float64, n)
		ratios := make([][]float64, n)
		theta := make([]float64, n)
		dur := slices.IndexFunc(s.knobs, func(k *knob) bool { return k.kind == kindDuration })
		var atYears []float64
		for _, fd := range s.sample(fluxSamples, rng) {
			theta = s.fineTheta(fd[0], theta)
			d := fd[1]
			years := e.parts[pi].cmp.Years
			if dur >= 0 {
				mid := theta[dur] / 2
				if years != nil {
					mid = math.Min(mid, *years)
				}
				years = &mid
			}
			if e.runTo(w, d, pi, s.knobs, theta, false, years) != nil {
				continue
			}
			if years != nil {
				atYears = append(atYears, *years)
			}
			for a, k := range s.knobs {
				if k.kind == kindDuration {
					continue
				}
				var now, was float64
				switch {
				case k.kind == rules.KnobSource:
					now = theta[a]
				case k.kind == rules.KnobFixation:
					now = forward.KnobValue(e.site, w.run.Final(), *k.fk)
					was = forward.KnobValue(e.site, &e.draws[d].params, *k.fk)
				default:
					now = forward.FluxAt(e.site, w.run.Final(), &w.x, k.fluxJ)
					was = forward.FluxAt(e.site, &e.draws[d].params, &e.base[d], k.fluxJ)
				}
				vals[a] = append(vals[a], now)
				bases[a] = append(bases[a], was)
				if was > 0 {
					ratios[a] = append(ratios[a], now/was)
				}
			}
		}
		m := 0
		for a, k := range s.knobs {
			if k.kind == kindDuration {
				continue
			}
			mi := m
			m++
			if len(vals[a]) == 0 {
				continue
			}
			f := &FluxImplied{Pulse: dur >= 0}
			if len(atYears) > 0 {
				f.AtYears, _, _ = quantiles(atYears)
			}
			if k.kind != rules.KnobSource {
				f.Baseline, _, _ = quantiles(bases[a])
			}
			f.Median, f.Low, f.High = quantiles(vals[a])
			if len(ratios[a]) == len(vals[a]) {
				f.HasRatio = true
				f.Ratio, f.RatioLow, f.RatioHi = quantiles(ratios[a])
			}
			h.Magnitudes[mi].Flux = f
		}
	})
}

// quantiles returns the median and the 5 % and 95 % points of v.
func quantiles(v []float64) (median, low, high float64) {
	s := slices.Clone(v)
	slices.Sort(s)
	at := func(q float64) float64 { return stat.Quantile(q, stat.LinInterp, s, nil) }
	return at(0.5), at(0.05), at(0.95)
}

// horizon is the longest observation time of the unit's parts (0 when
// every part is read at steady state).
func (e *engine) horizon() float64 {
	var y float64
	for _, p := range e.parts {
		if p.cmp.Years != nil {
			y = math.Max(y, *p.cmp.Years)
		}
	}
	return y
}
