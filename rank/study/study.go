package study

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"

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
}

// Comparison is one treatment-versus-control contrast with its observed
// shifts.
type Comparison struct {
	Name               string
	Control, Treatment string
	Years              *float64 // years since the treatment began; nil for a long-standing contrast
	Management         []string
	Additions          []Addition
	Observed           []Observed // sorted by observable name
	Line               int
}

// Addition is an input the study declares for the treatment.
type Addition struct {
	Source        string
	RateKgPerHaYr float64
	D15N          *float64 // measured δ15N, ‰ AIR
	D18O          *float64 // measured δ18O, ‰ VSMOW (nitrate sources)
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
	Observable         string
	Shift, SE, DF      float64
	Control, Treatment Stat
	LogRatio           bool // pool or flux: shift is ln(treatment/control)
}

// Context returns the rules context of one comparison.
func (s *Study) ContextFor(c *Comparison, kb *knowledge.Base) rules.Context {
	ctx := s.Context
	ctx.Management = c.Management
	ctx.AdditionPools = nil
	ctx.Declared = nil
	for _, a := range c.Additions {
		if src, ok := kb.Source(a.Source); ok {
			ctx.AdditionPools = append(ctx.AdditionPools, src.Pool)
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
	Samples     string                           `yaml:"samples"`
}

type siteEntry struct {
	Template    string   `yaml:"template"`
	File        string   `yaml:"file"`
	SoilPH      *float64 `yaml:"soil_ph"`
	Drainage    string   `yaml:"drainage"`
	PrecipMM    *float64 `yaml:"mean_annual_precip_mm"`
	Mycorrhizal string   `yaml:"mycorrhizal_type"`
}

type comparisonEntry struct {
	Name       string          `yaml:"name"`
	Control    string          `yaml:"control"`
	Treatment  string          `yaml:"treatment"`
	Years      *float64        `yaml:"years"`
	Management []string        `yaml:"management"`
	Additions  []additionEntry `yaml:"additions"`
}

type additionEntry struct {
	Source string   `yaml:"source"`
	Rate   *float64 `yaml:"rate"`
	D15N   *float64 `yaml:"d15n"`
	D18O   *float64 `yaml:"d18o"`
}

type statEntry struct {
	Mean *float64 `yaml:"mean"`
	SD   *float64 `yaml:"sd"`
	N    *int     `yaml:"n"`
}

// group statistics with where they came from, for error messages.
type groupStat struct {
	Stat
	file string
	line int
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
	defer knowledge.Recover(file, "study", &err)
	var f studyFile
	doc, err := knowledge.Decode(file, data, &f)
	if err != nil {
		return nil, err
	}
	var errs knowledge.InputErrors
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
		if se.Mycorrhizal != "" && !slices.Contains(rules.MycorrhizalTypes, se.Mycorrhizal) {
			bad("site.mycorrhizal_type", []any{"site", "mycorrhizal_type"}, "expected one of %s, got %q", strings.Join(rules.MycorrhizalTypes, ", "), se.Mycorrhizal)
		}
		ctx.Mycorrhizal = se.Mycorrhizal
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
			if e == nil || e.Mean == nil || e.SD == nil || e.N == nil {
				bad(field, path, "expected {mean, sd, n}")
				continue
			}
			s := Stat{Mean: *e.Mean, SD: *e.SD, N: *e.N}
			if msg := checkStat(obs, s, opt); msg != "" {
				key := map[bool]string{true: "n", false: "sd"}[s.N < 2]
				if strings.HasPrefix(msg, "mean") || strings.HasPrefix(msg, "δ") || strings.HasPrefix(msg, "a pool") {
					key = "mean"
				}
				bad(field+"."+key, append(path, key), "%s", msg)
				continue
			}
			groups[g][obs] = groupStat{s, file, doc.Line(path...)}
		}
		if len(errs) > nBad {
			badGroups[g] = true
		}
	}
	// Groups from the samples CSV.
	samplesUnread := false // then groups it would define are not reported missing
	if f.Samples != "" {
		path := f.Samples
		if !filepath.IsAbs(path) {
			path = filepath.Join(dir, path)
		}
		cdata, err := readFile(path)
		if err != nil {
			bad("samples", []any{"samples"}, "cannot read samples file %s: %v", path, unwrapPathError(err))
			samplesUnread = true
		} else {
			rows, warns, err := ParseSamples(path, cdata, st.Site, opt)
			if err != nil {
				return nil, err
			}
			st.Warnings = append(st.Warnings, warns...)
			for _, r := range rows {
				if groups[r.Group] == nil {
					groups[r.Group] = map[string]groupStat{}
				}
				if prev, dup := groups[r.Group][r.Observable]; dup {
					errs = append(errs, &knowledge.InputError{File: path, Line: r.Line, Field: "observable", Msg: fmt.Sprintf("group %q already has %s from %s line %d; give each group's observable in one place", r.Group, r.Observable, prev.file, prev.line)})
					continue
				}
				groups[r.Group][r.Observable] = groupStat{r.Stat, path, r.Line}
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
		c := Comparison{Name: ce.Name, Control: ce.Control, Treatment: ce.Treatment, Years: ce.Years, Management: ce.Management, Line: doc.Line("comparisons", i)}
		if c.Name == "" {
			c.Name = fmt.Sprintf("%s vs %s", ce.Treatment, ce.Control)
		}
		if j, dup := names[c.Name]; dup {
			bad(field("name"), path("name"), "comparison name %q is already used by comparisons[%d]", c.Name, j)
		}
		names[c.Name] = i
		ok := true
		for _, role := range []struct{ key, name string }{{"control", ce.Control}, {"treatment", ce.Treatment}} {
			switch {
			case role.name == "":
				bad(field(role.key), path(), "missing %s group", role.key)
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
		if c.Years != nil && (!(*c.Years >= 0) || math.IsInf(*c.Years, 0) || *c.Years > 10000) {
			bad(field("years"), path("years"), "years since the treatment began must be between 0 and 10000, got %g", *c.Years)
		}
		for k, t := range c.Management {
			if strings.TrimSpace(t) == "" {
				bad(field(fmt.Sprintf("management[%d]", k)), path("management", k), "empty management tag")
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
			if st.Site != nil && st.Site.PoolIndex(src.Pool) < 0 {
				bad(af("source"), ap("source"), "source %q enters the %s pool, which the site does not have", ae.Source, src.Pool)
			}
			if ae.Rate == nil || !(*ae.Rate > 0) || math.IsInf(*ae.Rate, 0) {
				bad(af("rate"), path("additions", k), "the addition needs a rate > 0 in kg N/ha/yr")
				continue
			}
			a := Addition{Source: ae.Source, RateKgPerHaYr: *ae.Rate, D15N: ae.D15N, D18O: ae.D18O}
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
		if ok {
			ctl, trt := groups[ce.Control], groups[ce.Treatment]
			for _, obs := range sortedKeys(ctl) {
				t, both := trt[obs]
				if !both {
					continue
				}
				o := observe(obs, ctl[obs].Stat, t.Stat)
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
	if len(errs) > 0 {
		return nil, errs
	}
	return st, nil
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
	if ok := asPathError(err, &pe); ok {
		return pe.Err
	}
	return err
}
