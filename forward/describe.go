package forward

import (
	"math"
	"slices"
)

// SiteSummary is what `nlens site show` prints about a site (DESIGN §7):
// its pools at the file's sizes and at the model's steady state, inputs,
// every transfer's flux and share of its donor pool's outflow with its ε
// and where the ε comes from, each process's share of its donors' outflow,
// and the observables at the baseline.
type SiteSummary struct {
	Site        *Site
	Pools       []PoolSummary
	Inputs      []InputSummary
	Transfers   []TransferSummary
	Processes   []ProcessSummary
	Observables []ObservableValue
	// Warnings from reading the site and from its balance (PoolWarnings).
	Warnings []string
}

// PoolSummary is one pool.
type PoolSummary struct {
	Name string
	// FileKg is the size in the site file, SteadyKg at the steady state,
	// kg N/ha.
	FileKg, SteadyKg float64
	// TurnoverYears is the steady-state pool over its total outflow.
	TurnoverYears float64
	D15N          float64 // ‰ AIR at the steady state
}

// InputSummary is one input.
type InputSummary struct {
	To            string
	RateKgPerHaYr float64
	D15N          float64 // ‰ AIR
	// D18O is the δ18O (‰ VSMOW) of an input to nitrate, NaN otherwise.
	D18O   float64
	Source string // knowledge source id, or ""
}

// Where a transfer's ε comes from.
const (
	EpsilonFromFile      = "site file"
	EpsilonFromKnowledge = "knowledge"
	EpsilonFromType      = "mycorrhizal type"
)

// TransferSummary is one transfer at the steady state.
type TransferSummary struct {
	Process  string
	From, To string // pool names; To is "out" for a loss
	// FluxKgPerHaYr is the flux at the steady state.
	FluxKgPerHaYr float64
	// Share is the share of the donor pool's outflow (Params.TransferShare).
	Share   float64
	Epsilon float64 // ‰
	// EpsilonSource is EpsilonFromFile, EpsilonFromKnowledge or
	// EpsilonFromType; Effect is the knowledge entry behind it.
	EpsilonSource string
	Effect        EffectRef
}

// EffectRef is the part of a knowledge effect a summary shows.
type EffectRef struct {
	Typical     float64
	Range       []float64
	Refs        []string
	Status      string
	Description string
}

// ProcessSummary is one process: its share of the combined outflow of the
// pools it draws from (Params.ProcessShare) and its total flux.
type ProcessSummary struct {
	Process       string
	Donors        []string
	FluxKgPerHaYr float64
	Share         float64
}

// ObservableValue is one observable at the baseline.
type ObservableValue struct {
	Name  string
	Value float64
	Unit  string
}

// Describe computes the site's summary at its steady state (nitrate
// oxygen included). It fails only when the steady state cannot be solved.
func Describe(s *Site) (*SiteSummary, error) {
	sim, err := Simulate(s, Change{}, nil)
	if err != nil {
		return nil, err
	}
	x, p := &sim.Baseline, &sim.Base
	out := &SiteSummary{Site: s, Warnings: sim.Warnings}
	outflow := make([]float64, len(s.Pools))
	flux := make([]float64, len(s.Transfers))
	for j, t := range s.Transfers {
		flux[j] = p.K[j]*x.N14[t.From] + p.K[j]/Alpha(p.Eps15[j])*x.N15[t.From]
		outflow[t.From] += flux[j]
	}
	for i, name := range s.Pools {
		turnover := math.Inf(1)
		if outflow[i] > 0 {
			turnover = x.Total(i) / outflow[i]
		}
		out.Pools = append(out.Pools, PoolSummary{Name: name, FileKg: s.PoolKg[i], SteadyKg: x.Total(i), TurnoverYears: turnover, D15N: x.Delta15(i)})
	}
	for _, in := range s.Inputs {
		d18 := math.NaN()
		if s.Pools[in.To] == "nitrate" {
			d18 = in.D18O
		}
		out.Inputs = append(out.Inputs, InputSummary{To: s.Pools[in.To], RateKgPerHaYr: in.RateKgPerHaYr, D15N: in.D15N, D18O: d18, Source: in.Source})
	}
	var procs []string
	for j, t := range s.Transfers {
		to := "out"
		if t.To != Out {
			to = s.Pools[t.To]
		}
		src := EpsilonFromKnowledge
		switch {
		case t.EpsilonFixed:
			src = EpsilonFromFile
		case t.Process == "mycorrhizal-transfer" && s.MycorrhizalType != "":
			src = EpsilonFromType
		}
		e := t.Effect
		out.Transfers = append(out.Transfers, TransferSummary{
			Process: t.Process, From: s.Pools[t.From], To: to, FluxKgPerHaYr: flux[j],
			Share: p.TransferShare(s, j), Epsilon: t.Epsilon, EpsilonSource: src,
			Effect: EffectRef{Typical: e.EpsilonPermil, Range: e.RangePermil, Refs: e.Refs, Status: e.Status, Description: e.Label},
		})
		if !slices.Contains(procs, t.Process) {
			procs = append(procs, t.Process)
		}
	}
	for _, proc := range procs {
		ps := ProcessSummary{Process: proc, Share: p.ProcessShare(s, proc)}
		for j, t := range s.Transfers {
			if t.Process != proc {
				continue
			}
			ps.FluxKgPerHaYr += flux[j]
			if d := s.Pools[t.From]; !slices.Contains(ps.Donors, d) {
				ps.Donors = append(ps.Donors, d)
			}
		}
		out.Processes = append(out.Processes, ps)
	}
	names := append(append([]string{}, IsotopeNames...), RateNames...)
	for _, name := range names {
		o, err := s.Observable(name)
		if err != nil {
			continue
		}
		v := o.Value(x, p)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		out.Observables = append(out.Observables, ObservableValue{Name: name, Value: v, Unit: unitOf(o)})
	}
	return out, nil
}

// unitOf is the observable's unit, naming the δ18O scale.
func unitOf(o Observable) string {
	if o.Kind == KindDelta18 {
		return "‰ VSMOW"
	}
	if u := o.Unit(); u != "‰" {
		return u
	}
	return "‰ AIR"
}
