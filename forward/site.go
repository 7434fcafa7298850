package forward

import (
	"fmt"
	"maps"
	"math"
	"os"
	"slices"
	"strings"

	"nlens/knowledge"
	"nlens/knowledge/input"
)

// PoolNames lists the pools a site may define, in the fixed order used for
// state vectors and output. organic, ammonium, nitrate and plant are
// required. organic is the mineral soil's organic N; forest-floor is the
// organic layer above it (litter, Oe and Oa horizons); n2o is the soil
// N2O between its production (nitrifier-gas, denitrification) and its
// reduction to N2 or emission.
var PoolNames = []string{"organic", "ammonium", "nitrate", "plant", "fungi", "foliage", "forest-floor", "n2o"}

var requiredPools = []string{"organic", "ammonium", "nitrate", "plant"}

// Out is the To index of a transfer that leaves the ecosystem.
const Out = -1

// Limits on a site file's numbers. Beyond them a value is not a real site,
// and within them every steady state that passes the condition check
// (MaxCondition) stays far inside floating-point range: each positive rate
// constant k = rate/pool is at least MinRateKgPerHaYr/MaxPoolKgPerHa =
// 1e-15 per year, so ‖K⁻¹‖ ≤ MaxCondition/1e-15 = 1e26 years and the pools
// stay below about 1e33 kg N/ha times the number of inputs.
const (
	// MaxPoolKgPerHa is the largest pool accepted. No ecosystem stores
	// that much N: a 10 m peat at a bulk density of 0.1 g/cm³ with 2 % N
	// holds 2e5 kg N/ha (hand computation).
	MaxPoolKgPerHa = 1e6
	// MinRateKgPerHaYr and MaxRateKgPerHaYr bound a positive input or
	// transfer rate (0 is allowed). Gross N fluxes of the most active soils
	// are of the order of 1e3 kg N/ha/yr (from memory), three orders of
	// magnitude below the maximum; a flux of 1e-9 kg N/ha/yr (0.1 µg N/m²
	// per century) is no flux at all, and write 0 for none.
	MinRateKgPerHaYr = 1e-9
	MaxRateKgPerHaYr = 1e6
)

// checkRate returns a message when a rate is not 0 and not within
// MinRateKgPerHaYr–MaxRateKgPerHaYr.
func checkRate(r float64) string {
	switch {
	case !(r >= 0) || math.IsInf(r, 0):
		return fmt.Sprintf("rate must be a non-negative number of kg N/ha/yr, got %g", r)
	case r != 0 && (r < MinRateKgPerHaYr || r > MaxRateKgPerHaYr):
		return fmt.Sprintf("rate must be 0 or between %g and %g kg N/ha/yr, got %g", MinRateKgPerHaYr, MaxRateKgPerHaYr, r)
	}
	return ""
}

// Site is a validated site: pools, inputs and transfers with every isotope
// effect resolved (from the file or from the knowledge base).
type Site struct {
	ID          string
	Description string
	References  []string
	Note        string
	File        string
	// MycorrhizalType is the mycorrhizal association of the dominant
	// plants (one of knowledge.MycorrhizalTypes, or "" when the file does
	// not say); it sets the ε of mycorrhizal-transfer (DESIGN §3).
	MycorrhizalType string
	// LandUse is one of knowledge.LandUses, or "" when the file does not
	// say.
	LandUse string
	// Pools present, in PoolNames order, with the file's baseline sizes.
	Pools     []string
	PoolKg    []float64
	Inputs    []Input
	Transfers []Transfer
	// NitrificationD18O is the δ18O (‰ VSMOW) of nitrate O made by
	// nitrification; Fixed when the file gives it.
	NitrificationD18O      float64
	NitrificationD18OFixed bool
	Warnings               []string
}

// Input is N entering a pool from outside at a fixed rate.
type Input struct {
	To            int // pool index
	RateKgPerHaYr float64
	D15N          float64 // ‰ AIR
	D15NFixed     bool    // given in the file (not drawn from the source's range)
	D18O          float64 // ‰ VSMOW, for nitrate inputs
	D18OFixed     bool
	Source        string // knowledge source id, if any
	Line          int
}

// Transfer is a donor-controlled flux between pools (or out of the site).
type Transfer struct {
	Process       string
	From, To      int // pool indices; To is Out for losses
	RateKgPerHaYr float64
	// Epsilon (‰) and its δ18O counterpart; Fixed when the file gives them,
	// otherwise the knowledge default that uncertainty draws may vary.
	Epsilon        float64
	EpsilonFixed   bool
	Epsilon18      float64
	Epsilon18Fixed bool
	// D18ORatio is ε18/ε15 used when Epsilon18 is not given.
	D18ORatio float64
	// Spread is the relative sd of the rate for uncertainty draws.
	Spread float64
	// Effect is the knowledge entry behind the transfer's ε: its typical
	// value, the range and distribution for uncertainty draws, references
	// and status. For mycorrhizal-transfer it is the site's mycorrhizal
	// type's fungal physiology (knowledge.Base.MycorrhizalEffect). When
	// EpsilonFixed is set the file's value is used instead of the typical
	// one.
	Effect knowledge.Effect
	Line   int
}

// PoolIndex returns the index of a pool in s.Pools, or −1.
func (s *Site) PoolIndex(name string) int { return slices.Index(s.Pools, name) }

// site file layout (DESIGN §3), decoded strictly.
type siteFile struct {
	Site            string              `yaml:"site"`
	Description     string              `yaml:"description"`
	References      []string            `yaml:"references"`
	Note            string              `yaml:"note"`
	MycorrhizalType string              `yaml:"mycorrhizal_type"`
	LandUse         string              `yaml:"land_use"`
	Pools           map[string]*float64 `yaml:"pools"`
	NitrateOxygen   *struct {
		NitrificationD18O *float64 `yaml:"nitrification_d18o"`
	} `yaml:"nitrate_oxygen"`
	Inputs    []inputEntry    `yaml:"inputs"`
	Transfers []transferEntry `yaml:"transfers"`
}

type inputEntry struct {
	To     string   `yaml:"to"`
	Rate   *float64 `yaml:"rate"`
	D15N   *float64 `yaml:"d15n"`
	D18O   *float64 `yaml:"d18o"`
	Source string   `yaml:"source"`
}

type transferEntry struct {
	Process   string   `yaml:"process"`
	From      string   `yaml:"from"`
	To        string   `yaml:"to"`
	Rate      *float64 `yaml:"rate"`
	Epsilon   *float64 `yaml:"epsilon"`
	Epsilon18 *float64 `yaml:"epsilon18"`
	Spread    *float64 `yaml:"spread"`
}

// LoadSite returns a built-in template by id, or reads a site file.
func LoadSite(idOrPath string, kb *knowledge.Base) (*Site, error) {
	if t, ok := kb.Site(idOrPath); ok {
		return ParseSite(t.Name, t.Data, kb)
	}
	data, err := input.ReadFile(idOrPath, input.Site)
	if err != nil {
		if os.IsNotExist(err) && !strings.ContainsAny(idOrPath, "/\\.") {
			return nil, &input.Error{File: idOrPath, Msg: fmt.Sprintf("no built-in site template or file of that name (templates: %s)", strings.Join(kb.SiteIDs(), ", "))}
		}
		return nil, input.ReadError(input.Site, err)
	}
	return ParseSite(idOrPath, data, kb)
}

// ParseSite decodes and validates a site file. Every problem is reported
// with file, line and field.
func ParseSite(file string, data []byte, kb *knowledge.Base) (site *Site, err error) {
	defer input.Recover(file, "site file", &err)
	var f siteFile
	doc, err := input.Decode(file, data, &f)
	if err != nil {
		return nil, err
	}
	var errs input.Errors
	bad := func(field string, path []any, format string, args ...any) {
		errs = append(errs, doc.Errorf(field, path, format, args...))
	}
	s := &Site{ID: f.Site, Description: f.Description, References: f.References, Note: f.Note, File: file, MycorrhizalType: f.MycorrhizalType, LandUse: f.LandUse}
	if s.ID == "" {
		bad("site", []any{"site"}, "missing site id")
	}
	if f.MycorrhizalType != "" && !slices.Contains(knowledge.MycorrhizalTypes, f.MycorrhizalType) {
		bad("mycorrhizal_type", []any{"mycorrhizal_type"}, "unknown mycorrhizal type %q (types: %s)", f.MycorrhizalType, strings.Join(knowledge.MycorrhizalTypes, ", "))
	}
	if f.LandUse != "" && !slices.Contains(knowledge.LandUses, f.LandUse) {
		bad("land_use", []any{"land_use"}, "unknown land use %q (land uses: %s)", f.LandUse, strings.Join(knowledge.LandUses, ", "))
	}
	for _, k := range f.References {
		if _, ok := kb.Reference(k); !ok {
			bad("references", []any{"references"}, "reference %q is not in the knowledge base", k)
		}
	}
	// Pools, in canonical order.
	for _, name := range slices.Sorted(maps.Keys(f.Pools)) {
		if !slices.Contains(PoolNames, name) {
			bad("pools."+name, []any{"pools", name}, "unknown pool %q (pools: %s)", name, strings.Join(PoolNames, ", "))
		}
	}
	for _, name := range PoolNames {
		v, ok := f.Pools[name]
		if !ok {
			if slices.Contains(requiredPools, name) {
				bad("pools."+name, []any{"pools"}, "missing required pool %q", name)
			}
			continue
		}
		field := "pools." + name
		switch {
		case v == nil:
			bad(field, []any{"pools", name}, "missing size (kg N/ha)")
			continue
		case math.IsNaN(*v) || math.IsInf(*v, 0) || *v < 0:
			bad(field, []any{"pools", name}, "pool size must be a non-negative number of kg N/ha, got %g", *v)
			continue
		case *v > MaxPoolKgPerHa:
			bad(field, []any{"pools", name}, "pool size %g kg N/ha is more than any ecosystem holds (at most %g)", *v, MaxPoolKgPerHa)
			continue
		}
		s.Pools = append(s.Pools, name)
		s.PoolKg = append(s.PoolKg, *v)
	}
	if f.MycorrhizalType == "none" && s.PoolIndex("fungi") >= 0 {
		bad("pools.fungi", []any{"pools", "fungi"}, "the site's mycorrhizal_type is none, but it has a pool of mycorrhizal fungi")
	}
	// Nitrate oxygen.
	s.NitrificationD18O = kb.NitrateOxygen.NitrificationD18OPermil
	if f.NitrateOxygen != nil && f.NitrateOxygen.NitrificationD18O != nil {
		s.NitrificationD18O = *f.NitrateOxygen.NitrificationD18O
		s.NitrificationD18OFixed = true
		if !(math.Abs(s.NitrificationD18O) <= 100) {
			bad("nitrate_oxygen.nitrification_d18o", []any{"nitrate_oxygen", "nitrification_d18o"}, "δ18O %g ‰ is outside natural abundance", s.NitrificationD18O)
		}
	}
	pool := func(name, field string, path []any, allowOut bool) int {
		if allowOut && name == "out" {
			return Out
		}
		if name == "" {
			bad(field, path, "missing")
			return -2
		}
		i := s.PoolIndex(name)
		if _, declared := f.Pools[name]; i < 0 && (declared && slices.Contains(PoolNames, name) || slices.Contains(requiredPools, name)) {
			return -2 // a bad size or a missing required pool, reported under pools
		}
		if i < 0 {
			want := "a defined pool"
			if allowOut {
				want += " or out"
			}
			bad(field, path, "unknown pool %q (expected %s: %s)", name, want, strings.Join(s.Pools, ", "))
			return -2
		}
		return i
	}
	// Inputs.
	for i, e := range f.Inputs {
		field := func(k string) string { return fmt.Sprintf("inputs[%d].%s", i, k) }
		path := func(k string) []any { return []any{"inputs", i, k} }
		in := Input{Source: e.Source, Line: doc.Line("inputs", i)}
		var src knowledge.Source
		if e.Source != "" {
			var ok bool
			src, ok = kb.Source(e.Source)
			if !ok {
				bad(field("source"), path("source"), "unknown source %q (sources: %s)", e.Source, strings.Join(sourceIDs(kb), ", "))
				continue
			}
		}
		to := e.To
		if to == "" && e.Source != "" {
			to = src.Pool
		}
		in.To = pool(to, field("to"), path("to"), false)
		if e.Rate == nil {
			bad(field("rate"), []any{"inputs", i}, "missing rate (kg N/ha/yr)")
		} else if msg := checkRate(*e.Rate); msg != "" {
			bad(field("rate"), path("rate"), "%s", msg)
		} else {
			in.RateKgPerHaYr = *e.Rate
		}
		switch {
		case e.D15N != nil:
			in.D15N, in.D15NFixed = *e.D15N, true
			if math.Abs(in.D15N) > 100 || math.IsNaN(in.D15N) {
				bad(field("d15n"), path("d15n"), "δ15N %g ‰ is outside natural abundance (|δ| ≤ 100 ‰)", in.D15N)
			}
		case e.Source != "":
			in.D15N = src.D15NPermil
		default:
			bad(field("d15n"), []any{"inputs", i}, "give d15n or a knowledge source")
		}
		if in.To >= 0 && s.Pools[in.To] == "nitrate" {
			switch {
			case e.D18O != nil:
				in.D18O, in.D18OFixed = *e.D18O, true
				if !(math.Abs(in.D18O) <= 100) {
					bad(field("d18o"), path("d18o"), "δ18O %g ‰ is outside natural abundance (|δ| ≤ 100 ‰)", in.D18O)
				}
			case e.Source != "" && src.D18OPermil != nil:
				in.D18O = *src.D18OPermil
			default:
				in.D18O = s.NitrificationD18O
				s.Warnings = append(s.Warnings, fmt.Sprintf("%s:%d: input to nitrate has no d18o; its nitrate is taken to be microbial (δ18O %.1f ‰)", file, in.Line, in.D18O))
			}
		} else if e.D18O != nil {
			bad(field("d18o"), path("d18o"), "δ18O applies only to inputs to nitrate")
		}
		s.Inputs = append(s.Inputs, in)
	}
	// Transfers.
	for i, e := range f.Transfers {
		field := func(k string) string { return fmt.Sprintf("transfers[%d].%s", i, k) }
		path := func(k string) []any { return []any{"transfers", i, k} }
		t := Transfer{Process: e.Process, Line: doc.Line("transfers", i)}
		eff, ok := kb.Effect(e.Process)
		switch {
		case !ok && e.Process == "":
			bad(field("process"), []any{"transfers", i}, "missing process")
		case !ok:
			bad(field("process"), path("process"), "unknown process %q (processes: %s)", e.Process, strings.Join(knowledge.Processes, ", "))
		case slices.Contains(knowledge.InputProcesses, e.Process):
			bad(field("process"), path("process"), "%s brings N from outside the site: give it as an input, for example {source: biological-fixation, rate: 2}, not as a transfer", e.Process)
		case e.Process == "mycorrhizal-transfer":
			if s.MycorrhizalType == "none" {
				bad(field("process"), path("process"), "the site's mycorrhizal_type is none, but this transfer passes fungal N to a host (give the type of the fungi, or remove the fungal transfers)")
			}
			eff = kb.MycorrhizalEffect(s.MycorrhizalType)
		}
		t.Effect = eff
		t.From = pool(e.From, field("from"), path("from"), false)
		t.To = pool(e.To, field("to"), path("to"), true)
		if t.From >= 0 && t.From == t.To {
			bad(field("to"), path("to"), "a transfer must go to another pool or out")
		}
		if e.Rate == nil {
			bad(field("rate"), []any{"transfers", i}, "missing rate (kg N/ha/yr)")
		} else if msg := checkRate(*e.Rate); msg != "" {
			bad(field("rate"), path("rate"), "%s", msg)
		} else {
			t.RateKgPerHaYr = *e.Rate
			if t.From >= 0 && s.PoolKg[t.From] == 0 && t.RateKgPerHaYr > 0 {
				bad(field("rate"), path("rate"), "pool %q is empty at baseline but this transfer draws %g kg N/ha/yr from it", s.Pools[t.From], t.RateKgPerHaYr)
			} else if t.From >= 0 && math.IsInf(t.RateKgPerHaYr/s.PoolKg[t.From], 0) {
				bad(field("rate"), path("rate"), "%g kg N/ha/yr drawn from a pool of %g kg N/ha is a turnover too fast to compute", t.RateKgPerHaYr, s.PoolKg[t.From])
			}
		}
		t.Epsilon = eff.EpsilonPermil
		if e.Epsilon != nil {
			t.Epsilon, t.EpsilonFixed = *e.Epsilon, true
			if !(math.Abs(t.Epsilon) < 200) {
				bad(field("epsilon"), path("epsilon"), "ε %g ‰ is implausible (|ε| < 200 ‰ expected)", t.Epsilon)
			}
		}
		t.D18ORatio = 1
		if eff.D18ORatio != nil {
			t.D18ORatio = *eff.D18ORatio
		}
		t.Epsilon18 = t.D18ORatio * t.Epsilon
		if e.Epsilon18 != nil {
			t.Epsilon18, t.Epsilon18Fixed = *e.Epsilon18, true
			if !(math.Abs(t.Epsilon18) < 200) {
				bad(field("epsilon18"), path("epsilon18"), "ε18 %g ‰ is implausible (|ε| < 200 ‰ expected)", t.Epsilon18)
			}
		}
		if e.Spread != nil {
			t.Spread = *e.Spread
			if !(t.Spread >= 0 && t.Spread <= 1) {
				bad(field("spread"), path("spread"), "spread is a relative sd between 0 and 1, got %g", t.Spread)
			}
		}
		s.Transfers = append(s.Transfers, t)
	}
	if len(errs) > 0 {
		return nil, errs
	}
	if err := s.checkTopology(doc); err != nil {
		return nil, err
	}
	// A site whose baseline steady state cannot be solved reliably is refused
	// here, with its condition number, so that every command (check too)
	// says so with the file and line.
	p := s.Params()
	var x State
	if err := NewModel(s).Steady(&p, false, &x); err != nil {
		return nil, doc.WrapAt([]any{"transfers"}, err)
	}
	s.Warnings = append(s.Warnings, PoolWarnings(s, &x)...)
	return s, nil
}

func sourceIDs(kb *knowledge.Base) []string {
	ids := make([]string, len(kb.Sources))
	for i, s := range kb.Sources {
		ids[i] = s.ID
	}
	return ids
}

// checkTopology refuses sites whose steady state does not exist or whose δ
// values are undefined: a pool with no way out (the N piles up forever) and
// a pool that nothing reaches (0/0 isotope ratio).
func (s *Site) checkTopology(doc *input.Doc) error {
	n := len(s.Pools)
	flows := make([][]int, n) // pool → pools it sends N to (Out as n)
	for _, t := range s.Transfers {
		if t.RateKgPerHaYr <= 0 {
			continue
		}
		to := t.To
		if to == Out {
			to = n
		}
		flows[t.From] = append(flows[t.From], to)
	}
	// Pools that can reach out.
	exits := make([]bool, n+1)
	exits[n] = true
	for changed := true; changed; {
		changed = false
		for i := range n {
			if exits[i] {
				continue
			}
			for _, j := range flows[i] {
				if exits[j] {
					exits[i], changed = true, true
					break
				}
			}
		}
	}
	var errs input.Errors
	for i := range n {
		if !exits[i] {
			msg := fmt.Sprintf("pool %q has no way out of the site: its N would accumulate without limit, so there is no steady state (add a transfer from it, or from a pool it feeds, to out)", s.Pools[i])
			if len(flows[i]) == 0 {
				msg = fmt.Sprintf("pool %q has no way out: no transfer draws from it, so there is no steady state", s.Pools[i])
			}
			errs = append(errs, doc.Errorf("pools."+s.Pools[i], []any{"pools", s.Pools[i]}, "%s", msg))
		}
	}
	// Pools reached from an input.
	reached := make([]bool, n)
	var queue []int
	for _, in := range s.Inputs {
		if in.RateKgPerHaYr > 0 && !reached[in.To] {
			reached[in.To] = true
			queue = append(queue, in.To)
		}
	}
	for len(queue) > 0 {
		i := queue[0]
		queue = queue[1:]
		for _, j := range flows[i] {
			if j < n && !reached[j] {
				reached[j] = true
				queue = append(queue, j)
			}
		}
	}
	for i := range n {
		if !reached[i] && exits[i] {
			errs = append(errs, doc.Errorf("pools."+s.Pools[i], []any{"pools", s.Pools[i]}, "pool %q receives no N from any input: at steady state it is empty and its δ15N undefined", s.Pools[i]))
		}
	}
	return errs.Err()
}
