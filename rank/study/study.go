package study

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/knowledge/input"
	"nlens/rules"
)

// MaxNaturalPermil is the largest |δ15N| natural abundance allows; larger
// values need --allow-enriched (tracer studies). CIAAW lists groundwater
// nitrate after partial denitrification up to about +103 ‰ as the extreme
// natural case; 100 ‰ is the design's threshold (DESIGN §6).
const MaxNaturalPermil = 100

// Options control reading.
type Options struct {
	// AllowEnriched accepts |δ15N| > 100 ‰ (15N tracer studies).
	AllowEnriched bool
}

// Study is a validated study.
type Study struct {
	File        string
	Title       string
	Site        *forward.Site
	SiteRef     string // template id or site file path
	Context     rules.Context
	Comparisons []Comparison
	Warnings    []string
	Samples     *SampleSource // how the samples file was read; nil without one
}

// Comparison is one treatment-versus-control contrast with its observed
// shifts.
type Comparison struct {
	Name               string
	Control, Treatment string
	Years              *float64 // years since the treatment began; nil with years: steady
	Management         []string
	// Severity of a fire (low, moderate, high); "" when not given.
	Severity  string
	Additions []Addition
	Observed  []Observed // sorted by observable name
	// Steady is set for years: steady (Years is then nil): the contrast is
	// read at the new steady state.
	Steady bool
	// Response is sustained, pulse or either ("" for the default:
	// sustained alone, either within a series).
	Response string
	// Series names the series the comparison belongs to ("" for none).
	Series string
	// ShiftsOnly is set when the shifts come from a paper without group
	// levels: no control absolutes, so no draw weighting or site fit.
	ShiftsOnly bool
	Line       int
}

// Responses a comparison may allow.
const (
	ResponseSustained = "sustained"
	ResponsePulse     = "pulse"
	ResponseEither    = "either"
)

// Responses returns whether sustained and pulse responses are considered
// for the comparison: sustained alone by default, both within a series.
func (c *Comparison) Responses() (sustained, pulse bool) {
	switch c.Response {
	case ResponseSustained:
		return true, false
	case ResponsePulse:
		return false, true
	case ResponseEither:
		return true, true
	}
	return true, c.Series != ""
}

// Declared is what the comparison declares was done to the treatment
// arm, as the model applies it (DESIGN §4).
func (c *Comparison) Declared() forward.Treatment {
	t := forward.Treatment{Management: c.Management, Severity: c.Severity}
	for _, a := range c.Additions {
		t.Additions = append(t.Additions, forward.Addition{Source: a.Source, RateKgPerHaYr: a.RateKgPerHaYr, D15N: a.D15N, D18O: a.D18O, DurationYears: a.DurationYears})
	}
	return t
}

// Addition is an input the study declares for the treatment.
type Addition struct {
	Source        string
	RateKgPerHaYr float64
	D15N          *float64 // measured δ15N, ‰ AIR
	D18O          *float64 // measured δ18O, ‰ VSMOW (nitrate sources)
	// DurationYears is how long the addition lasted when it stopped before
	// sampling; 0 when it went on until sampling.
	DurationYears float64
}

// Stat is a group's summary of one observable.
type Stat struct {
	Mean, SD float64
	N        int
}

// SE is the standard error of the mean.
func (s Stat) SE() float64 { return s.SD / math.Sqrt(float64(s.N)) }

// Observed is the shift of one observable.
type Observed struct {
	Observable string
	// Shift and SE are treatment minus control; DF is the Welch degrees
	// of freedom of SE (0 when unknown: a shift given from a paper).
	Shift, SE, DF      float64
	Control, Treatment Stat
	LogRatio           bool // pool or flux: shift is ln(treatment/control)
	// Blocks is the number of blocks of a paired design whose
	// within-block differences gave Shift and SE (0 when unpaired).
	Blocks int
}

// NoLevels reports whether the shift came without group levels (from a
// paper): there are then no control absolutes to compare a model with.
func (o Observed) NoLevels() bool { return o.Control.N == 0 }

// Context returns the rules context of one comparison.
func (s *Study) ContextFor(c *Comparison, kb *knowledge.Base) rules.Context {
	ctx := s.Context
	ctx.Management = c.Management
	ctx.AdditionPools = nil
	ctx.Declared = nil
	for _, a := range c.Additions {
		if src, ok := kb.Source(a.Source); ok {
			for _, p := range src.Parts {
				if !slices.Contains(ctx.AdditionPools, p.Pool) {
					ctx.AdditionPools = append(ctx.AdditionPools, p.Pool)
				}
			}
		}
		ctx.Declared = append(ctx.Declared, a.Source)
	}
	return ctx
}

type studyFile struct {
	Title       string                           `yaml:"title"`
	Site        *siteEntry                       `yaml:"site"`
	Comparisons []comparisonEntry                `yaml:"comparisons"`
	Groups      map[string]map[string]*statEntry `yaml:"groups"`
	Samples     SamplesSpec                      `yaml:"samples"`
}

type siteEntry struct {
	Template    string   `yaml:"template"`
	File        string   `yaml:"file"`
	SoilPH      *float64 `yaml:"soil_ph"`
	Drainage    string   `yaml:"drainage"`
	PrecipMM    *float64 `yaml:"mean_annual_precip_mm"`
	Mycorrhizal string   `yaml:"mycorrhizal_type"`
	LandUse     string   `yaml:"land_use"`
	Nearby      []string `yaml:"nearby"`
}

type comparisonEntry struct {
	Name       string                 `yaml:"name"`
	Control    string                 `yaml:"control"`
	Treatment  string                 `yaml:"treatment"`
	Years      yaml.Node              `yaml:"years"`
	Management []string               `yaml:"management"`
	Severity   string                 `yaml:"severity"`
	Additions  []additionEntry        `yaml:"additions"`
	Response   string                 `yaml:"response"`
	Series     string                 `yaml:"series"`
	Shifts     map[string]*shiftEntry `yaml:"shifts"`
}

type shiftEntry struct {
	Shift *float64 `yaml:"shift"`
	SE    *float64 `yaml:"se"`
}

type additionEntry struct {
	Source   string   `yaml:"source"`
	Rate     *float64 `yaml:"rate"`
	D15N     *float64 `yaml:"d15n"`
	D18O     *float64 `yaml:"d18o"`
	Duration *float64 `yaml:"duration"`
}

type statEntry struct {
	Mean *float64 `yaml:"mean"`
	SD   *float64 `yaml:"sd"`
	SE   *float64 `yaml:"se"`
	N    *float64 `yaml:"n"`
}

// group statistics with where they came from, for error messages.
type groupStat struct {
	Stat
	file string
	line int
	// samples are the rows of a samples file (nil for a group written in
	// the study file).
	samples []Sample
}

// Load reads a study file from disk.
func Load(path string, kb *knowledge.Base, opt Options) (*Study, error) {
	data, err := input.Read(path, input.Study)
	if err != nil {
		return nil, err
	}
	return Parse(path, data, kb, opt, func(p string) ([]byte, error) { return input.ReadFile(p, input.Named) })
}

// Parse reads a study from its text. readFile resolves the site file and
// samples CSV named in the study (relative to the study file's directory).
func Parse(file string, data []byte, kb *knowledge.Base, opt Options, readFile func(string) ([]byte, error)) (st *Study, err error) {
	defer input.Recover(file, "study", &err)
	var f studyFile
	doc, err := input.Decode(file, data, &f)
	if err != nil {
		return nil, err
	}
	var errs input.Errors
	bad := func(field string, path []any, format string, args ...any) {
		errs = append(errs, doc.Errorf(field, path, format, args...))
	}
	st = &Study{File: file, Title: f.Title}
	dir := filepath.Dir(file)

	// Site and context.
	if f.Site == nil {
		bad("site", nil, "missing: give site: {template: ID} or site: {file: site.yaml}")
	} else {
		se := f.Site
		switch {
		case se.Template != "" && se.File != "":
			bad("site", []any{"site"}, "give either template or file, not both")
		case se.Template != "":
			sf, ok := kb.Site(se.Template)
			if !ok {
				bad("site.template", []any{"site", "template"}, "unknown site template %q (templates: %s)", se.Template, strings.Join(kb.SiteIDs(), ", "))
			} else if st.Site, err = forward.ParseSite(sf.Name, sf.Data, kb); err != nil {
				return nil, err
			}
			st.SiteRef = se.Template
		case se.File != "":
			path := se.File
			if !filepath.IsAbs(path) {
				path = filepath.Join(dir, path)
			}
			sdata, err := readFile(path)
			if err != nil {
				bad("site.file", []any{"site", "file"}, "cannot read site file %s: %v", path, unwrapPathError(err))
			} else if st.Site, err = forward.ParseSite(path, sdata, kb); err != nil {
				return nil, err
			}
			st.SiteRef = se.File
		default:
			bad("site", []any{"site"}, "give template: ID (see nlens facts sites) or file: site.yaml")
		}
		ctx := &st.Context
		if se.SoilPH != nil {
			if !(*se.SoilPH >= 2 && *se.SoilPH <= 11) {
				bad("site.soil_ph", []any{"site", "soil_ph"}, "soil pH %g is outside 2–11", *se.SoilPH)
			}
			ctx.SoilPH = se.SoilPH
		}
		if se.Drainage != "" && !slices.Contains(rules.Drainages, se.Drainage) {
			bad("site.drainage", []any{"site", "drainage"}, "expected one of %s, got %q", strings.Join(rules.Drainages, ", "), se.Drainage)
		}
		ctx.Drainage = se.Drainage
		if se.PrecipMM != nil {
			if !(*se.PrecipMM >= 0 && *se.PrecipMM <= 15000) {
				bad("site.mean_annual_precip_mm", []any{"site", "mean_annual_precip_mm"}, "precipitation %g mm/yr is outside 0–15000", *se.PrecipMM)
			}
			ctx.PrecipMM = se.PrecipMM
		}
		if se.Mycorrhizal != "" && !slices.Contains(knowledge.MycorrhizalTypes, se.Mycorrhizal) {
			bad("site.mycorrhizal_type", []any{"site", "mycorrhizal_type"}, "expected one of %s, got %q", strings.Join(knowledge.MycorrhizalTypes, ", "), se.Mycorrhizal)
		} else if se.Mycorrhizal != "" && st.Site != nil {
			// The study's statement of its site's mycorrhizal type sets the
			// fungal transfer effect of the site model (DESIGN §3).
			if err := st.Site.SetMycorrhizalType(kb, se.Mycorrhizal); err != nil {
				bad("site.mycorrhizal_type", []any{"site", "mycorrhizal_type"}, "%v", err)
			}
		}
		ctx.Mycorrhizal = se.Mycorrhizal
		if ctx.Mycorrhizal == "" && st.Site != nil {
			ctx.Mycorrhizal = st.Site.MycorrhizalType
		}
		if se.LandUse != "" && !slices.Contains(knowledge.LandUses, se.LandUse) {
			bad("site.land_use", []any{"site", "land_use"}, "expected one of %s, got %q", strings.Join(knowledge.LandUses, ", "), se.LandUse)
		}
		ctx.LandUse = se.LandUse
		if ctx.LandUse == "" && st.Site != nil {
			ctx.LandUse = st.Site.LandUse
		}
		if ctx.Drainage == "" && ctx.LandUse == "wetland" {
			// A wetland is poorly drained unless the study says otherwise
			// (the context default its land use implies, DEVELOPERS.md).
			ctx.Drainage = "poor"
		}
		for k, n := range se.Nearby {
			if !slices.Contains(knowledge.NearbyKinds, n) {
				bad(fmt.Sprintf("site.nearby[%d]", k), []any{"site", "nearby", k}, "expected one of %s, got %q", strings.Join(knowledge.NearbyKinds, ", "), n)
			}
		}
		ctx.Nearby = se.Nearby
	}

	// Groups from the study file; badGroups had an entry refused, so a
	// missing shared observable is a consequence, not a second error.
	groups := map[string]map[string]groupStat{}
	badGroups := map[string]bool{}
	for _, g := range sortedKeys(f.Groups) {
		if g == "" {
			bad("groups", []any{"groups"}, "a group needs a name")
			continue
		}
		groups[g] = map[string]groupStat{}
		nBad := len(errs)
		for _, obs := range sortedKeys(f.Groups[g]) {
			field := fmt.Sprintf("groups.%s.%s", g, obs)
			path := []any{"groups", g, obs}
			e := f.Groups[g][obs]
			if msg := checkObservable(st.Site, obs); msg != "" {
				bad(field, path, "%s", msg)
				continue
			}
			if e == nil || e.Mean == nil || e.N == nil || (e.SD == nil) == (e.SE == nil) {
				bad(field, path, "expected {mean, sd, n} or {mean, se, n}")
				continue
			}
			n, msg := replicates(*e.N)
			if msg != "" {
				bad(field+".n", append(path, "n"), "%s", msg)
				continue
			}
			s := Stat{Mean: *e.Mean, N: n}
			if e.SD != nil {
				s.SD = *e.SD
			} else {
				// A standard error of the mean from a paper: sd = se·√n, so
				// the shift's SE is the same as from the group's sd.
				s.SD = *e.SE * math.Sqrt(float64(n))
				if !(*e.SE >= 0) || math.IsInf(*e.SE, 0) {
					bad(field+".se", append(path, "se"), "se must be a number ≥ 0, got %g", *e.SE)
					continue
				}
			}
			if msg := checkStat(obs, s, opt); msg != "" {
				key := map[bool]string{true: "n", false: "sd"}[s.N < 2]
				if strings.HasPrefix(msg, "mean") || strings.HasPrefix(msg, "δ") || strings.HasPrefix(msg, "a pool") {
					key = "mean"
				}
				bad(field+"."+key, append(path, key), "%s", msg)
				continue
			}
			groups[g][obs] = groupStat{s, file, doc.Line(path...), nil}
		}
		if len(errs) > nBad {
			badGroups[g] = true
		}
	}
	// Groups from the samples CSV.
	samplesUnread := false // then groups it would define are not reported missing
	if f.Samples.given() {
		res, unread, err := f.Samples.load(doc, readFile, st.Site, opt)
		switch {
		case unread != nil:
			errs = append(errs, unread)
			samplesUnread = true
		case err != nil:
			return nil, err
		default:
			path := res.Source.File
			st.Samples = &res.Source
			st.Warnings = append(st.Warnings, res.Warnings...)
			for _, r := range res.Groups {
				if groups[r.Group] == nil {
					groups[r.Group] = map[string]groupStat{}
				}
				if prev, dup := groups[r.Group][r.Observable]; dup {
					errs = append(errs, &input.Error{File: path, Line: r.Line, Field: "observable", Msg: fmt.Sprintf("group %q already has %s from %s line %d; give each group's observable in one place", r.Group, r.Observable, prev.file, prev.line)})
					continue
				}
				groups[r.Group][r.Observable] = groupStat{r.Stat, path, r.Line, r.Samples}
			}
		}
	}

	// Comparisons.
	if len(f.Comparisons) == 0 {
		bad("comparisons", []any{"comparisons"}, "the study needs at least one comparison {name, control, treatment}")
	}
	names := map[string]int{}
	for i, ce := range f.Comparisons {
		field := func(k string) string { return fmt.Sprintf("comparisons[%d].%s", i, k) }
		path := func(k ...any) []any { return append([]any{"comparisons", i}, k...) }
		c := Comparison{Name: ce.Name, Control: ce.Control, Treatment: ce.Treatment, Management: ce.Management, Series: ce.Series, Line: doc.Line("comparisons", i)}
		if c.Name == "" && len(ce.Shifts) > 0 && ce.Treatment == "" {
			c.Name = fmt.Sprintf("comparison %d", i+1)
		}
		if c.Name == "" {
			c.Name = fmt.Sprintf("%s vs %s", ce.Treatment, ce.Control)
		}
		if j, dup := names[c.Name]; dup {
			bad(field("name"), path("name"), "comparison name %q is already used by comparisons[%d]", c.Name, j)
		}
		names[c.Name] = i
		ok := true
		shiftsOnly := len(ce.Shifts) > 0
		if shiftsOnly && (ce.Control != "" || ce.Treatment != "") {
			bad(field("shifts"), path("shifts"), "give either control and treatment groups or shifts taken from a paper, not both")
			shiftsOnly = false
		}
		for _, role := range []struct{ key, name string }{{"control", ce.Control}, {"treatment", ce.Treatment}} {
			switch {
			case shiftsOnly:
				ok = false
			case role.name == "":
				bad(field(role.key), path(), "missing %s group (or give shifts: {OBSERVABLE: {shift, se}} from a paper)", role.key)
				ok = false
			case groups[role.name] == nil && samplesUnread:
				ok = false
			case groups[role.name] == nil:
				bad(field(role.key), path(role.key), "group %q is not defined (groups: %s)", role.name, strings.Join(sortedKeys(groups), ", "))
				ok = false
			}
		}
		if ok && ce.Control == ce.Treatment {
			bad(field("treatment"), path("treatment"), "treatment and control are the same group %q", ce.Control)
			ok = false
		}
		switch y := ce.Years; {
		case y.Kind == 0:
			bad(field("years"), path(), "missing: give the years since the treatment began (years: 3), or years: steady for a long-standing contrast read at the new steady state")
		case y.Kind == yaml.ScalarNode && y.Value == "steady":
			c.Steady = true
		default:
			var v float64
			if err := y.Decode(&v); err != nil || y.Kind != yaml.ScalarNode {
				bad(field("years"), path("years"), "expected a number of years since the treatment began, or steady, got %s", quoteNode(&y))
			} else if !(v >= 0) || math.IsInf(v, 0) || v > 10000 {
				bad(field("years"), path("years"), "years since the treatment began must be between 0 and 10000, got %g", v)
			} else {
				c.Years = &v
			}
		}
		switch ce.Response {
		case "", ResponseSustained, ResponsePulse, ResponseEither:
			c.Response = ce.Response
		default:
			bad(field("response"), path("response"), "expected sustained, pulse or either, got %q", ce.Response)
		}
		tags := kb.ManagementTags()
		for k, t := range c.Management {
			if !slices.Contains(tags, t) {
				bad(field(fmt.Sprintf("management[%d]", k)), path("management", k), "unknown management tag %q (known tags: %s)", t, strings.Join(tags, ", "))
			}
		}
		c.Severity = ce.Severity
		if ce.Severity != "" {
			if !slices.Contains(knowledge.Severities, ce.Severity) {
				bad(field("severity"), path("severity"), "expected one of %s, got %q", strings.Join(knowledge.Severities, ", "), ce.Severity)
			} else if !slices.ContainsFunc(c.Management, func(t string) bool {
				m, ok := kb.Management(t)
				return ok && len(m.Severity) > 0
			}) {
				bad(field("severity"), path("severity"), "severity applies to a management that has one (burned); this comparison declares none")
			}
		}
		for k, ae := range ce.Additions {
			af := func(key string) string { return fmt.Sprintf("comparisons[%d].additions[%d].%s", i, k, key) }
			ap := func(key string) []any { return path("additions", k, key) }
			src, known := kb.Source(ae.Source)
			if !known {
				bad(af("source"), ap("source"), "unknown source %q (sources: %s)", ae.Source, strings.Join(sourceIDs(kb), ", "))
				continue
			}
			for _, part := range src.Parts {
				if st.Site != nil && st.Site.PoolIndex(part.Pool) < 0 {
					bad(af("source"), ap("source"), "source %q enters the %s pool, which the site does not have", ae.Source, part.Pool)
				}
			}
			if ae.Rate == nil || !(*ae.Rate > 0) || math.IsInf(*ae.Rate, 0) {
				bad(af("rate"), path("additions", k), "the addition needs a rate > 0 in kg N/ha/yr")
				continue
			}
			a := Addition{Source: ae.Source, RateKgPerHaYr: *ae.Rate, D15N: ae.D15N, D18O: ae.D18O}
			if ae.Duration != nil {
				if !(*ae.Duration > 0 && *ae.Duration <= 10000) {
					bad(af("duration"), ap("duration"), "an addition's duration is a number of years between 0 and 10000, got %g", *ae.Duration)
				} else {
					a.DurationYears = *ae.Duration
				}
			}
			if a.D15N != nil {
				if msg := deltaProblem("δ15N", *a.D15N, true, opt); msg != "" {
					bad(af("d15n"), ap("d15n"), "%s", msg)
				}
			}
			if a.D18O != nil {
				if src.D18OPermil == nil {
					bad(af("d18o"), ap("d18o"), "δ18O applies only to nitrate sources; %q enters %s", ae.Source, src.Pool)
				} else if msg := deltaProblem("δ18O", *a.D18O, true, opt); msg != "" {
					bad(af("d18o"), ap("d18o"), "%s", msg)
				}
			}
			c.Additions = append(c.Additions, a)
		}
		if shiftsOnly {
			c.ShiftsOnly = true
			for _, obs := range sortedKeys(ce.Shifts) {
				e := ce.Shifts[obs]
				sp := path("shifts", obs)
				sf := field("shifts." + obs)
				if msg := checkObservable(st.Site, obs); msg != "" {
					bad(sf, sp, "%s", msg)
					continue
				}
				if e == nil || e.Shift == nil || e.SE == nil {
					bad(sf, sp, "expected {shift, se}")
					continue
				}
				if math.IsNaN(*e.Shift) || math.IsInf(*e.Shift, 0) || math.Abs(*e.Shift) > 1000 {
					bad(sf+".shift", append(sp, "shift"), "a shift must be a finite number within ±1000, got %g", *e.Shift)
					continue
				}
				if !(*e.SE > 0) || math.IsInf(*e.SE, 0) {
					bad(sf+".se", append(sp, "se"), "se must be a number > 0, got %g", *e.SE)
					continue
				}
				c.Observed = append(c.Observed, Observed{Observable: obs, Shift: *e.Shift, SE: *e.SE, DF: 0, LogRatio: forward.LogRatioName(obs)})
			}
		}
		if ok {
			ctl, trt := groups[ce.Control], groups[ce.Treatment]
			for _, obs := range sortedKeys(ctl) {
				t, both := trt[obs]
				if !both {
					continue
				}
				o := observe(obs, ctl[obs].Stat, t.Stat)
				if po, why := pairedObserve(obs, ctl[obs].samples, t.samples); why == "" {
					o = po
				} else if why != noBlocks {
					st.Warnings = append(st.Warnings, fmt.Sprintf("%s: %s of %q vs %q is not read as paired (%s): the standard error treats the samples as independent", c.Name, obs, ce.Treatment, ce.Control, why))
				}
				if math.IsNaN(o.Shift) || math.IsInf(o.Shift, 0) || math.IsNaN(o.SE) || math.IsInf(o.SE, 0) {
					bad(field("treatment"), path("treatment"), "the shift of %s between groups %q and %q or its standard error is beyond floating-point range; check their means and sds", obs, ce.Control, ce.Treatment)
					continue
				}
				c.Observed = append(c.Observed, o)
			}
			if len(c.Observed) == 0 && !badGroups[ce.Control] && !badGroups[ce.Treatment] {
				bad(field("treatment"), path("treatment"), "groups %q and %q share no observable, so there is no shift to explain", ce.Control, ce.Treatment)
			}
		}
		st.Comparisons = append(st.Comparisons, c)
	}
	errs = append(errs, checkSeries(doc, st.Comparisons)...)
	if len(errs) > 0 {
		return nil, errs
	}
	return st, nil
}

// checkSeries refuses a series whose comparisons are neither repeated
// years of one treatment nor dose levels of one addition (DESIGN §6).
func checkSeries(doc *input.Doc, cs []Comparison) input.Errors {
	var errs input.Errors
	first := map[string]int{}
	for i, c := range cs {
		if c.Series == "" {
			continue
		}
		j, seen := first[c.Series]
		if !seen {
			first[c.Series] = i
			continue
		}
		a, b := cs[j], c
		same := slices.Equal(a.Management, b.Management) && a.Severity == b.Severity && len(a.Additions) == len(b.Additions)
		for k := range a.Additions {
			if !same {
				break
			}
			x, y := a.Additions[k], b.Additions[k]
			same = x.Source == y.Source && x.DurationYears == y.DurationYears
		}
		if !same {
			errs = append(errs, doc.Errorf(fmt.Sprintf("comparisons[%d].series", i), []any{"comparisons", i, "series"},
				"comparisons of series %q must share their treatment (repeated years) or differ only in the rates of the same additions (dose levels); %q and %q differ otherwise", c.Series, a.Name, b.Name))
		}
	}
	return errs
}

// DoseScale returns, for each comparison of a series, the rate of its
// additions relative to the largest in the series (1 for every comparison
// when the rates are equal or there are none): the factor by which the
// series' response scales at each dose level (DESIGN §6).
func DoseScale(cs []Comparison) []float64 {
	total := make([]float64, len(cs))
	var maxTotal float64
	for i, c := range cs {
		for _, a := range c.Additions {
			total[i] += a.RateKgPerHaYr
		}
		maxTotal = math.Max(maxTotal, total[i])
	}
	out := make([]float64, len(cs))
	for i := range out {
		out[i] = 1
		if maxTotal > 0 {
			out[i] = total[i] / maxTotal
		}
	}
	return out
}

// observe computes one shift with its Welch standard error and degrees of
// freedom.
func observe(obs string, c, t Stat) Observed {
	o := Observed{Observable: obs, Control: c, Treatment: t}
	sc, st := c.SD, t.SD
	o.LogRatio = forward.LogRatioName(obs)
	if o.LogRatio {
		o.Shift = math.Log(t.Mean) - math.Log(c.Mean)
		sc /= c.Mean
		st /= t.Mean
	} else {
		o.Shift = t.Mean - c.Mean
	}
	vc, vt := sc*sc/float64(c.N), st*st/float64(t.N)
	o.SE = math.Sqrt(vc + vt)
	// Welch–Satterthwaite, (vc+vt)²/(vc²/(nc−1) + vt²/(nt−1)), written with
	// the shares of the variance so that no square overflows.
	if v := vc + vt; v > 0 {
		a, b := vc/v, vt/v
		o.DF = 1 / (a*a/float64(c.N-1) + b*b/float64(t.N-1))
	} else {
		o.DF = float64(c.N) + float64(t.N) - 2
	}
	return o
}

// MaxReplicates bounds a group's n: far beyond any field design, and
// within it every count is exact in a float64.
const MaxReplicates = 1e6

// replicates checks a replicate count from a study file: a whole number
// from 2 to MaxReplicates.
func replicates(v float64) (int, string) {
	switch {
	case math.IsNaN(v) || math.IsInf(v, 0) || v != math.Trunc(v):
		return 0, fmt.Sprintf("n must be a whole number of replicates, got %g", v)
	case v < 2:
		return 0, fmt.Sprintf("n must be at least 2 to estimate a standard error, got %g", v)
	case v > MaxReplicates:
		return 0, fmt.Sprintf("n must be at most %g replicates, got %g", MaxReplicates, v)
	}
	return int(v), ""
}

// checkObservable returns a message if the observable is unknown or the site
// cannot compute it.
func checkObservable(site *forward.Site, obs string) string {
	if !forward.KnownObservable(obs) {
		return fmt.Sprintf("unknown observable %q (use foliage, roots, litter, soil, soil-ammonium, soil-nitrate, leachate-nitrate, fungi, n2o, n2o-sp, nitrate-d18o, ecosystem, pool:<pool>, flux:<process>)", obs)
	}
	if site != nil {
		if _, err := site.Observable(obs); err != nil {
			return err.Error()
		}
	}
	return ""
}

// checkStat validates one group's summary.
func checkStat(obs string, s Stat, opt Options) string {
	switch {
	case math.IsNaN(s.Mean) || math.IsInf(s.Mean, 0):
		return "mean must be a finite number"
	}
	if msg := valueProblem(obs, s.Mean, opt); msg != "" {
		return msg
	}
	switch {
	case !(s.SD >= 0) || math.IsInf(s.SD, 0):
		return fmt.Sprintf("sd must be a number ≥ 0, got %g", s.SD)
	case s.N < 2:
		return fmt.Sprintf("n must be at least 2 to estimate a standard error, got %d", s.N)
	}
	return ""
}

// valueProblem returns a message when a finite value of an observable is
// impossible or, without --allow-enriched, beyond natural abundance: pool
// sizes and fluxes must be positive; a δ15N (or δ18O of nitrate) below
// −1000 ‰ would be a negative isotope ratio; |δ15N| above
// MaxNaturalPermil needs AllowEnriched. The N2O site preference, a
// difference of two δ values, is not checked.
func valueProblem(obs string, v float64, opt Options) string {
	switch {
	case forward.LogRatioName(obs):
		if !(v > 0) {
			return fmt.Sprintf("a pool size or flux must be positive, got %g", v)
		}
	case obs == "n2o-sp":
	case obs == "nitrate-d18o":
		return deltaProblem("δ18O", v, false, opt)
	default:
		return deltaProblem("δ15N", v, true, opt)
	}
	return ""
}

// deltaProblem returns a message when a δ value (‰) is not a finite number,
// is below −1000 ‰ (a negative isotope ratio) or, when natural is set and
// the study is not a tracer study, beyond natural abundance.
func deltaProblem(name string, v float64, natural bool, opt Options) string {
	switch {
	case math.IsNaN(v) || math.IsInf(v, 0):
		return fmt.Sprintf("%s must be a finite number of ‰, got %g", name, v)
	case v < -1000:
		return fmt.Sprintf("%s %g ‰ is below −1000 ‰, which would be a negative isotope ratio", name, v)
	case natural && math.Abs(v) > MaxNaturalPermil && !opt.AllowEnriched:
		return fmt.Sprintf("%s %g ‰ is beyond natural abundance (|δ| > %d ‰); use --allow-enriched for a tracer study", name, v, MaxNaturalPermil)
	}
	return ""
}

// quoteNode shows a YAML value in an error message.
func quoteNode(n *yaml.Node) string {
	if n.Kind == yaml.ScalarNode {
		return strconv.Quote(n.Value)
	}
	return "a " + map[yaml.Kind]string{yaml.SequenceNode: "list", yaml.MappingNode: "mapping"}[n.Kind]
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

func sourceIDs(kb *knowledge.Base) []string {
	ids := make([]string, len(kb.Sources))
	for i, s := range kb.Sources {
		ids[i] = s.ID
	}
	return ids
}

func unwrapPathError(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
