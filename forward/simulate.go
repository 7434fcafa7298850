package forward

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"

	"nlens/knowledge"
)

// SourceInputs returns the inputs of rate kg N/ha/yr of a knowledge source:
// one per receiving pool of the source (a split source such as
// ammonium-nitrate enters several), at the part's typical δ15N (and δ18O
// for nitrate).
func SourceInputs(s *Site, kb *knowledge.Base, source string, rate float64) ([]InputParam, error) {
	src, ok := kb.Source(source)
	if !ok {
		return nil, fmt.Errorf("unknown source %q", source)
	}
	var out []InputParam
	for _, part := range src.Parts {
		to := s.PoolIndex(part.Pool)
		if to < 0 {
			return nil, fmt.Errorf("source %q enters the %s pool, which site %q does not have", source, part.Pool, s.ID)
		}
		in := InputParam{To: to, RateKgPerHaYr: rate * part.Share, D15N: part.D15NPermil, D18O: s.NitrificationD18O}
		if part.D18OPermil != nil {
			in.D18O = *part.D18OPermil
		}
		out = append(out, in)
	}
	return out, nil
}

// Simulation is a site's baseline steady state and its state after a change,
// either t years later or at the new steady state.
type Simulation struct {
	Site *Site
	// Change is what was applied; its windows may end at +Inf (sustained),
	// so the finiteness guard of the renderers skips it.
	Change Change   `finite:"-"`
	Years  *float64 // nil: the new steady state
	// Base are the baseline parameters; Changed those in force at the
	// observation time (or in the final regime).
	Base, Changed  Params
	Baseline, Then State
	Warnings       []string
	model          *Model
}

// PoolTolerance is the relative difference between a file's pool size and
// the model's steady state above which Simulate warns (DESIGN §3: 10 %).
const PoolTolerance = 0.10

// Simulate computes the baseline steady state of the site and the state
// after the change (at years, or the new steady state of its final regime
// when years is nil). Nitrate oxygen is always included.
func Simulate(s *Site, c Change, years *float64) (*Simulation, error) {
	sim := &Simulation{Site: s, Change: c, Years: years, Base: s.Params(), model: NewModel(s)}
	sim.Warnings = append(sim.Warnings, s.Warnings...)
	if err := sim.model.Steady(&sim.Base, true, &sim.Baseline); err != nil {
		return nil, err
	}
	var r Run
	var err error
	if years == nil {
		err = r.Steady(sim.model, &sim.Base, &c, true, &sim.Then)
	} else {
		err = r.Advance(sim.model, &sim.Base, &c, &sim.Baseline, *years, true, &sim.Then)
	}
	if err != nil {
		return nil, err
	}
	sim.Changed.CopyFrom(r.Final())
	return sim, nil
}

// PoolWarnings compares the steady state with the file's pool sizes.
func PoolWarnings(s *Site, x *State) []string {
	var out []string
	for i, name := range s.Pools {
		file, model := s.PoolKg[i], x.Total(i)
		if file > 0 && math.Abs(model-file) > PoolTolerance*file {
			out = append(out, fmt.Sprintf("site %q: the steady-state %s pool is %.4g kg N/ha, %+.0f %% from the file's %.4g (the file's inputs and transfers do not balance for this pool; the model's value is used)", s.ID, name, model, 100*(model-file)/file, file))
		}
	}
	return out
}

// Trajectory returns the changed state at each of the times (years after
// the change, ascending) and the parameters in force at each.
func (sim *Simulation) Trajectory(times []float64) ([]State, []Params, error) {
	var r Run
	return r.Trajectory(sim.model, &sim.Base, &sim.Change, &sim.Baseline, times, true)
}

// Horizon settings for trajectories that run to the new steady state.
const (
	// SettleToleranceDelta: a δ observable within this of its new steady
	// state (‰) counts as settled.
	SettleToleranceDelta = 0.01
	// MaxHorizonYears caps the search for the settling time.
	MaxHorizonYears = 1e5
	// FirstLogTimeYears is the first non-zero time of a log-spaced trajectory.
	FirstLogTimeYears = 0.1
)

// TrajectoryTimes returns n times (years since the change) for a
// trajectory: evenly spaced from 0 to years when years is given; otherwise 0
// and then log-spaced from 0.1 year to the settling time of the change
// (see SettlingTime).
func TrajectoryTimes(sim *Simulation, years *float64, n int) ([]float64, error) {
	if years != nil {
		return EvenTimes(*years, n)
	}
	var obs []Observable
	for _, name := range sim.Site.DeltaNames() {
		o, _ := sim.Site.Observable(name)
		obs = append(obs, o)
	}
	horizon, err := sim.model.SettlingTime(&sim.Changed, &sim.Baseline, obs)
	if err != nil {
		return nil, err
	}
	return LogTimes(horizon, n)
}

// EvenTimes returns n times evenly spaced from 0 to horizon years.
func EvenTimes(horizon float64, n int) ([]float64, error) {
	if n < 2 {
		return nil, fmt.Errorf("a trajectory needs at least 2 times, got %d", n)
	}
	times := make([]float64, n)
	floats.Span(times, 0, horizon)
	return times, nil
}

// LogTimes returns 0 and then n−1 times log-spaced from 0.1 year to horizon.
func LogTimes(horizon float64, n int) ([]float64, error) {
	if n < 2 {
		return nil, fmt.Errorf("a trajectory needs at least 2 times, got %d", n)
	}
	horizon = math.Max(horizon, 10*FirstLogTimeYears)
	times := make([]float64, n)
	if n == 2 {
		times[1] = horizon
		return times, nil
	}
	floats.LogSpan(times[1:], FirstLogTimeYears, horizon)
	return times, nil
}

// SettlingTime returns the time (years, found by doubling from 1 and at
// most MaxHorizonYears) by which every observable is within
// SettleToleranceDelta of its new steady state after the system moves from
// x0 under parameters p.
func (m *Model) SettlingTime(p *Params, x0 *State, obs []Observable) (float64, error) {
	withO := x0.HasO
	var steady, x State
	if err := m.Steady(p, withO, &steady); err != nil {
		return 0, err
	}
	horizon := 1.0
	for ; horizon < MaxHorizonYears; horizon *= 2 {
		if err := m.Advance(p, x0, horizon, withO, &x); err != nil {
			return 0, err
		}
		settled := true
		for _, o := range obs {
			if o.Kind == KindDelta18 && !withO {
				continue
			}
			// A NaN (a pool emptied by the change) never counts as settled.
			if !(math.Abs(o.Value(&x, p)-o.Value(&steady, p)) <= SettleToleranceDelta) && !math.IsNaN(o.Value(&steady, p)) {
				settled = false
				break
			}
		}
		if settled {
			break
		}
	}
	return math.Min(horizon, MaxHorizonYears), nil
}
