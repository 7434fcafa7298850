package forward

import (
	"fmt"
	"math"
	"slices"

	"nlens/knowledge"
)

// Treatment is what a study declares was done to the treatment arm
// (DESIGN §4): additions of N sources and management. It is applied in
// every hypothesis; its uncertain sizes come from knowledge/forcings.yaml.
type Treatment struct {
	Additions  []Addition
	Management []string
	// Severity of a fire (low, moderate or high); "" when not given.
	Severity string
}

// Addition is a declared input of a knowledge source.
type Addition struct {
	Source        string
	RateKgPerHaYr float64
	// D15N and D18O are the measured δ of the added N, nil when not
	// measured (then drawn from the source's range).
	D15N, D18O *float64
	// DurationYears is how long the addition lasted; 0 when it went on
	// until sampling.
	DurationYears float64
}

// Empty reports whether the treatment does nothing to the model.
func (t Treatment) Empty(kb *knowledge.Base) bool {
	if len(t.Additions) > 0 {
		return false
	}
	for _, tag := range t.Management {
		if _, ok := kb.Management(tag); ok {
			return false
		}
	}
	return true
}

// SizeFunc returns the value to use for an uncertain forcing size; key
// names the size (for the record of what was drawn). Nominal takes the
// typical value.
type SizeFunc func(key string, s knowledge.Size) float64

// Nominal is the SizeFunc of the typical values.
func Nominal(_ string, s knowledge.Size) float64 { return s.Typical }

// Grazing transfers and where they run (DESIGN §4: foliage offtake returned
// as urine to ammonium and dung to organic N, part exported).
var grazingProcs = []string{"grazing-urine", "grazing-dung", "grazing-export"}

// TreatmentRoutes are the transfers a treatment may need that a site can
// lack: the grazing transfers (from foliage, or the plant pool where there
// is no foliage pool).
func TreatmentRoutes(s *Site, kb *knowledge.Base, t Treatment) []Route {
	var out []Route
	for _, tag := range t.Management {
		m, ok := kb.Management(tag)
		if !ok || m.Grazing == nil {
			continue
		}
		from := grazedPool(s)
		out = append(out,
			Route{Process: "grazing-urine", From: from, To: "ammonium"},
			Route{Process: "grazing-dung", From: from, To: "organic"},
			Route{Process: "grazing-export", From: from, To: "out"})
	}
	return out
}

func grazedPool(s *Site) string {
	if s.PoolIndex("foliage") >= 0 {
		return "foliage"
	}
	return "plant"
}

// TreatmentChange returns the Change that applies the treatment to the
// site (DESIGN §4): additions as inputs to their source's receiving pools
// from t = 0 (for their duration), moves at t = 0 and rate changes of each
// management tag that acts on the model. size picks every uncertain size,
// including the δ of an addition's part that was not measured. Management
// tags that are context only are ignored.
func TreatmentChange(s *Site, kb *knowledge.Base, t Treatment, size SizeFunc) (Change, error) {
	var c Change
	for i, a := range t.Additions {
		src, ok := kb.Source(a.Source)
		if !ok {
			return c, fmt.Errorf("unknown source %q", a.Source)
		}
		end := math.Inf(1)
		if a.DurationYears > 0 {
			end = a.DurationYears
		}
		mod := Mod{Start: 0, End: end, Label: "addition of " + src.Label}
		for _, part := range src.Parts {
			to := s.PoolIndex(part.Pool)
			if to < 0 {
				return c, fmt.Errorf("source %q enters the %s pool, which site %q does not have", a.Source, part.Pool, s.ID)
			}
			var d15 float64
			if a.D15N != nil {
				d15 = *a.D15N
			} else {
				d15 = size(fmt.Sprintf("additions[%d].%s.d15n", i, part.Pool), knowledge.Size{Typical: part.D15NPermil, Range: part.D15NRangePermil})
			}
			d18 := s.NitrificationD18O
			switch {
			case part.D18OPermil == nil:
			case a.D18O != nil:
				d18 = *a.D18O
			default:
				d18 = size(fmt.Sprintf("additions[%d].%s.d18o", i, part.Pool), knowledge.Size{Typical: *part.D18OPermil, Range: part.D18ORangePermil})
			}
			mod.Inputs = append(mod.Inputs, InputParam{To: to, RateKgPerHaYr: a.RateKgPerHaYr * part.Share, D15N: d15, D18O: d18})
		}
		c.Mods = append(c.Mods, mod)
	}
	for _, tag := range t.Management {
		m, ok := kb.Management(tag)
		if !ok {
			if !slices.Contains(kb.ManagementTags(), tag) {
				return c, fmt.Errorf("unknown management tag %q", tag)
			}
			continue
		}
		moves, rates, ok := m.Effect(t.Severity)
		if !ok {
			return c, fmt.Errorf("unknown severity %q for %s", t.Severity, tag)
		}
		var mv []Move
		for k, f := range moves {
			to, ok := MoveTarget(s, f)
			if !ok || f.Share.Typical == 0 && f.Share.Range[1] == 0 {
				continue
			}
			key := fmt.Sprintf("%s.moves[%d]", m.ID, k)
			move := Move{From: f.From, To: to, Share: size(key+".share", f.Share), Label: f.Label}
			if f.Epsilon != nil {
				move.EpsilonPermil = size(key+".epsilon", *f.Epsilon)
			}
			mv = append(mv, move)
		}
		c.Moves = append(c.Moves, capShares(mv)...)
		for k, r := range rates {
			key := fmt.Sprintf("%s.rates[%d]", m.ID, k)
			end := math.Inf(1)
			if r.Years != nil {
				end = size(key+".years", *r.Years)
			}
			var procs []string
			for _, p := range r.Processes {
				if siteHas(s, p) {
					procs = append(procs, p)
				}
			}
			if len(procs) == 0 {
				continue
			}
			c.Mods = append(c.Mods, Mod{Start: 0, End: end, Label: r.Label,
				Knobs: []Knob{{Kind: KnobFactor, Processes: procs, Value: size(key+".factor", r.Factor)}}})
		}
		if g := m.Grazing; g != nil {
			mod, err := grazingMod(s, m.ID, g, size)
			if err != nil {
				return c, err
			}
			c.Mods = append(c.Mods, mod)
		}
	}
	return c, nil
}

// capShares scales down the moves from one pool whose shares add up to
// more than 0.98 of it (independent draws of, say, slash and export).
func capShares(mv []Move) []Move {
	total := map[string]float64{}
	for _, m := range mv {
		total[m.From] += m.Share
	}
	for i := range mv {
		if t := total[mv[i].From]; t > 0.98 {
			mv[i].Share *= 0.98 / t
		}
	}
	return mv
}

func siteHas(s *Site, proc string) bool {
	return slices.ContainsFunc(s.Transfers, func(t Transfer) bool { return t.Process == proc })
}

// grazingMod sizes grazing: the grazing transfers take a share offtake of
// the grazed pool's outflow, split into export, urine and dung.
func grazingMod(s *Site, id string, g *knowledge.GrazingForcing, size SizeFunc) (Mod, error) {
	from := grazedPool(s)
	off := size(id+".grazing.offtake", g.Offtake)
	exp := size(id+".grazing.export", g.Export)
	uri := size(id+".grazing.urine", g.Urine)
	js := transfers(s, grazingProcs, from)
	if len(js) != len(grazingProcs) {
		return Mod{}, fmt.Errorf("grazing needs the grazing transfers from %s in site %q (add them with WithRoutes)", from, s.ID)
	}
	weights := make([]float64, len(js))
	for i, j := range js {
		switch s.Transfers[j].Process {
		case "grazing-urine":
			weights[i] = (1 - exp) * uri
		case "grazing-dung":
			weights[i] = (1 - exp) * (1 - uri)
		case "grazing-export":
			weights[i] = exp
		}
	}
	return Mod{Start: 0, End: math.Inf(1), Label: "grazing",
		Knobs: []Knob{{Kind: KnobShare, Processes: grazingProcs, From: from, Value: off, Weights: weights}}}, nil
}

// MoveTarget returns where a management move goes on the site: its pool,
// the fallback where the site lacks that pool, or "out"; ok is false (the
// move is not applied) where the site lacks the donor pool or both
// destinations.
func MoveTarget(s *Site, f knowledge.MoveForcing) (to string, ok bool) {
	to = f.To
	if to != "out" && s.PoolIndex(to) < 0 {
		to = f.Fallback
	}
	if s.PoolIndex(f.From) < 0 || to == "" || (to != "out" && s.PoolIndex(to) < 0) {
		return "", false
	}
	return to, true
}
