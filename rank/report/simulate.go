package report

import (
	"fmt"
	"io"
	"math"
	"strings"

	"nlens/forward"
)

// SimulationJSON is the JSON contract of `nlens simulate` (DESIGN §7).
type SimulationJSON struct {
	Site       string             `json:"site"`
	Years      *float64           `json:"years"`
	Baseline   map[string]float64 `json:"baseline"`
	Changed    map[string]float64 `json:"changed"`
	Shift      map[string]float64 `json:"shift"`
	Pools      PoolsJSON          `json:"pools"`
	Trajectory []TrajectoryPoint  `json:"trajectory,omitempty"`
}

// PoolsJSON holds pool sizes in kg N/ha.
type PoolsJSON struct {
	Baseline map[string]float64 `json:"baseline"`
	Changed  map[string]float64 `json:"changed"`
}

// TrajectoryPoint is the state of every δ observable at one time (years
// since the change); it is only written with --trajectory.
type TrajectoryPoint struct {
	Years  float64            `json:"years"`
	Values map[string]float64 `json:"values"`
}

// SimulationOptions says what to render.
type SimulationOptions struct {
	Format      string
	Description string // the change in words, for the table title
	Trajectory  []float64
}

// simRow is one δ observable before and after.
type simRow struct {
	name                 string
	base, changed, shift float64
	unit                 string
}

func simulationRows(sim *forward.Simulation) []simRow {
	s := sim.Site
	var rows []simRow
	for _, name := range s.DeltaNames() {
		o, err := s.Observable(name)
		if err != nil {
			continue
		}
		b := o.Value(&sim.Baseline, &sim.Base)
		c := o.Value(&sim.Then, &sim.Changed)
		rows = append(rows, simRow{name, b, c, o.Shift(b, c), o.Unit()})
	}
	return rows
}

// Simulation writes a simulate result as a table or JSON.
func Simulation(w io.Writer, sim *forward.Simulation, opt SimulationOptions) error {
	var traj []forward.State
	var params []forward.Params
	if len(opt.Trajectory) > 0 {
		var err error
		if traj, params, err = sim.Trajectory(opt.Trajectory); err != nil {
			return err
		}
	}
	switch opt.Format {
	case FormatJSON:
		return simulationJSON(w, sim, opt.Trajectory, traj, params)
	case FormatTable, "":
		return simulationTable(w, sim, opt, traj, params)
	}
	return fmt.Errorf("simulate cannot write format %q (table or json)", opt.Format)
}

func simulationJSON(w io.Writer, sim *forward.Simulation, times []float64, traj []forward.State, params []forward.Params) error {
	out := SimulationJSON{
		Site:     sim.Site.ID,
		Years:    sim.Years,
		Baseline: map[string]float64{},
		Changed:  map[string]float64{},
		Shift:    map[string]float64{},
		Pools:    PoolsJSON{Baseline: map[string]float64{}, Changed: map[string]float64{}},
	}
	put := func(m map[string]float64, k string, v float64) {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			m[k] = v
		}
	}
	for _, r := range simulationRows(sim) {
		put(out.Baseline, r.name, r.base)
		put(out.Changed, r.name, r.changed)
		put(out.Shift, r.name, r.shift)
	}
	for i, name := range sim.Site.Pools {
		put(out.Pools.Baseline, name, sim.Baseline.Total(i))
		put(out.Pools.Changed, name, sim.Then.Total(i))
	}
	for k, x := range traj {
		pt := TrajectoryPoint{Years: times[k], Values: map[string]float64{}}
		for _, name := range sim.Site.DeltaNames() {
			o, _ := sim.Site.Observable(name)
			put(pt.Values, name, o.Value(&x, &params[k]))
		}
		out.Trajectory = append(out.Trajectory, pt)
	}
	return writeJSON(w, out)
}

func simulationTable(w io.Writer, sim *forward.Simulation, opt SimulationOptions, traj []forward.State, params []forward.Params) error {
	ew := &errWriter{w: w}
	when := "at the new steady state"
	if sim.Years != nil {
		when = count(*sim.Years, sigG(*sim.Years, 6), "year", "years") + " after the change"
	}
	title := sim.Site.ID
	if opt.Description != "" {
		title += ": " + opt.Description
	}
	ew.printf("%s, %s\n\n", title, when)
	var rows [][]string
	for _, r := range simulationRows(sim) {
		unit := "‰ AIR"
		if r.name == "nitrate-d18o" {
			unit = "‰ VSMOW"
		}
		rows = append(rows, []string{r.name, signed(r.base, 2), signed(r.changed, 2), plusSigned(r.shift, 2), unit})
	}
	if err := table(ew, []string{"δ observable", "baseline", "changed", "shift", "unit"}, "lrrrl", rows); err != nil {
		return err
	}
	ew.printf("\n")
	rows = rows[:0]
	for i, name := range sim.Site.Pools {
		b, c := sim.Baseline.Total(i), sim.Then.Total(i)
		rows = append(rows, []string{name, num(b), num(c), plusSigned(100*(c-b)/b, 1)})
	}
	if err := table(ew, []string{"pool (kg N/ha)", "baseline", "changed", "change %"}, "lrrr", rows); err != nil {
		return err
	}
	if len(traj) > 0 {
		ew.printf("\nTrajectory (δ in ‰; years since the change)\n\n")
		names := trajectoryNames(sim.Site)
		headers := append([]string{"years"}, names...)
		rows = rows[:0]
		for k, x := range traj {
			row := []string{num(opt.Trajectory[k])}
			for _, name := range names {
				o, _ := sim.Site.Observable(name)
				row = append(row, signed(o.Value(&x, &params[k]), 2))
			}
			rows = append(rows, row)
		}
		if err := table(ew, headers, "r"+strings.Repeat("r", len(names)), rows); err != nil {
			return err
		}
	}
	return ew.err
}

// trajectoryNames picks the observables that fit an 80-column trajectory
// table: the ones people measure most.
func trajectoryNames(s *forward.Site) []string {
	var out []string
	for _, name := range []string{"foliage", "soil", "soil-ammonium", "soil-nitrate", "fungi", "nitrate-d18o"} {
		if _, err := s.Observable(name); err == nil {
			out = append(out, name)
		}
	}
	return out
}
