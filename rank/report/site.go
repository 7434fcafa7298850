package report

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"strings"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank"
)

// FormatYAML is the site-file format (DESIGN §3), for site export and fit.
const FormatYAML = "yaml"

// SiteShowFormats and SiteFitFormats are the formats of `nlens site show`
// and `nlens site fit`, in the order the help lists them.
var (
	SiteShowFormats = []string{FormatTable, FormatJSON}
	SiteFitFormats  = []string{FormatYAML, FormatTable, FormatJSON}
)

// SiteShow writes a site's summary (forward.Describe) as a table or JSON:
// pools, inputs, fluxes with each transfer's share of its donor pool's
// outflow, each process's share, isotope effects with their source, the
// observables at the baseline, the note and the references.
func SiteShow(w io.Writer, sum *forward.SiteSummary, kb *knowledge.Base, format string) error {
	switch format {
	case FormatJSON:
		return writeJSON(w, siteJSON(sum))
	case FormatTable, "":
		return siteTable(w, sum, kb)
	}
	return fmt.Errorf("site show cannot write format %q (table or json)", format)
}

// SiteJSON is the JSON of `nlens site show`; field names are a contract.
type SiteJSON struct {
	Site            string               `json:"site"`
	Description     string               `json:"description,omitempty"`
	MycorrhizalType string               `json:"mycorrhizal_type,omitempty"`
	LandUse         string               `json:"land_use,omitempty"`
	Pools           []SitePoolJSON       `json:"pools"`
	Inputs          []SiteInputJSON      `json:"inputs"`
	Transfers       []SiteTransferJSON   `json:"transfers"`
	Processes       []SiteProcessJSON    `json:"processes"`
	Observables     map[string]*float64  `json:"observables"`
	Units           map[string]string    `json:"units"`
	References      []string             `json:"references"`
	Note            string               `json:"note,omitempty"`
	Warnings        []string             `json:"warnings"`
	Effects         map[string]SiteEpsJS `json:"effects"`
}

// SitePoolJSON is one pool: kg N/ha in the file and at the steady state,
// turnover in years, δ15N ‰ AIR.
type SitePoolJSON struct {
	Name          string   `json:"name"`
	FileKg        float64  `json:"file_kg_n_per_ha"`
	SteadyKg      float64  `json:"steady_kg_n_per_ha"`
	TurnoverYears *float64 `json:"turnover_years"`
	D15N          *float64 `json:"d15n"`
}

// SiteInputJSON is one input, kg N/ha/yr.
type SiteInputJSON struct {
	To     string   `json:"to"`
	Rate   float64  `json:"rate_kg_n_per_ha_yr"`
	D15N   float64  `json:"d15n"`
	D18O   *float64 `json:"d18o,omitempty"`
	Source string   `json:"source,omitempty"`
}

// SiteTransferJSON is one transfer at the steady state.
type SiteTransferJSON struct {
	Process       string  `json:"process"`
	From          string  `json:"from"`
	To            string  `json:"to"`
	Flux          float64 `json:"flux_kg_n_per_ha_yr"`
	Share         float64 `json:"share_of_donor_outflow"`
	Epsilon       float64 `json:"epsilon"`
	EpsilonSource string  `json:"epsilon_source"`
}

// SiteProcessJSON is one process's share of its donors' outflow.
type SiteProcessJSON struct {
	Process string   `json:"process"`
	Donors  []string `json:"donors"`
	Flux    float64  `json:"flux_kg_n_per_ha_yr"`
	Share   float64  `json:"share_of_donor_outflow"`
}

// SiteEpsJS is the knowledge entry behind a process's ε on this site.
type SiteEpsJS struct {
	Typical float64   `json:"epsilon"`
	Range   []float64 `json:"range,omitempty"`
	Refs    []string  `json:"refs"`
	Status  string    `json:"status"`
}

func siteJSON(sum *forward.SiteSummary) SiteJSON {
	s := sum.Site
	out := SiteJSON{Site: s.ID, Description: s.Description, MycorrhizalType: s.MycorrhizalType, LandUse: s.LandUse,
		Observables: map[string]*float64{}, Units: map[string]string{}, References: s.References, Note: s.Note,
		Warnings: sum.Warnings, Effects: map[string]SiteEpsJS{}}
	if out.References == nil {
		out.References = []string{}
	}
	if out.Warnings == nil {
		out.Warnings = []string{}
	}
	for _, p := range sum.Pools {
		out.Pools = append(out.Pools, SitePoolJSON{p.Name, p.FileKg, p.SteadyKg, finite(p.TurnoverYears), finite(p.D15N)})
	}
	out.Inputs = []SiteInputJSON{}
	for _, in := range sum.Inputs {
		out.Inputs = append(out.Inputs, SiteInputJSON{in.To, in.RateKgPerHaYr, in.D15N, finite(in.D18O), in.Source})
	}
	for _, t := range sum.Transfers {
		out.Transfers = append(out.Transfers, SiteTransferJSON{t.Process, t.From, t.To, t.FluxKgPerHaYr, t.Share, t.Epsilon, t.EpsilonSource})
		refs := t.Effect.Refs
		if refs == nil {
			refs = []string{}
		}
		out.Effects[t.Process] = SiteEpsJS{t.Effect.Typical, t.Effect.Range, refs, t.Effect.Status}
	}
	for _, p := range sum.Processes {
		out.Processes = append(out.Processes, SiteProcessJSON{p.Process, p.Donors, p.FluxKgPerHaYr, p.Share})
	}
	for _, o := range sum.Observables {
		out.Observables[o.Name] = finite(o.Value)
		out.Units[o.Name] = o.Unit
	}
	return out
}

// route names a transfer as "from→to".
func route(from, to string) string { return from + "→" + to }

func siteTable(w io.Writer, sum *forward.SiteSummary, kb *knowledge.Base) error {
	s := sum.Site
	ew := &errWriter{w: w}
	ew.printf("%s\n", wrap(s.ID+": "+s.Description, 78))
	ew.printf("%s\n\n", wrap(mycorrhizaLine(s, kb), 78))
	ew.printf("Pools (kg N/ha; turnover in years; δ15N ‰ AIR at the steady state)\n\n")
	var rows [][]string
	for _, p := range sum.Pools {
		rows = append(rows, []string{p.Name, num(p.FileKg), num(p.SteadyKg), num(p.TurnoverYears), signed(p.D15N, 2)})
	}
	if err := table(ew, []string{"pool", "file", "steady", "turnover", "δ15N"}, "lrrrr", rows); err != nil {
		return err
	}
	if len(sum.Inputs) > 0 {
		ew.printf("\nInputs (kg N/ha/yr; δ15N ‰ AIR, δ18O ‰ VSMOW)\n\n")
		rows = rows[:0]
		for _, in := range sum.Inputs {
			d18 := ""
			if !math.IsNaN(in.D18O) {
				d18 = signed(in.D18O, 1)
			}
			src := in.Source
			if src == "" {
				src = "(site file)"
			}
			rows = append(rows, []string{in.To, num(in.RateKgPerHaYr), signed(in.D15N, 1), d18, src})
		}
		if err := table(ew, []string{"to", "rate", "δ15N", "δ18O", "source"}, "lrrrl", rows); err != nil {
			return err
		}
	}
	ew.printf("\nFluxes at the steady state (kg N/ha/yr), each transfer's share of its\ndonor pool's outflow, and ε (‰; from the site file, the mycorrhizal type\nor the knowledge base)\n\n")
	rows = rows[:0]
	for _, t := range sum.Transfers {
		rows = append(rows, []string{t.Process, route(t.From, t.To), num(t.FluxKgPerHaYr), fixed(t.Share, 3), signed(t.Epsilon, 1), epsSource(t)})
	}
	if err := wrappedTable(ew, []string{"process", "from→to", "flux", "share", "ε", "ε from"}, "llrrrl", rows, []int{0, 24, 0, 0, 0, 10}); err != nil {
		return err
	}
	ew.printf("\nEach process's share of the combined outflow of the pools it draws from\n\n")
	rows = rows[:0]
	for _, p := range sum.Processes {
		rows = append(rows, []string{p.Process, strings.Join(p.Donors, ", "), num(p.FluxKgPerHaYr), fixed(p.Share, 3)})
	}
	if err := wrappedTable(ew, []string{"process", "donor pools", "flux", "share"}, "llrr", rows, []int{0, 30, 0, 0}); err != nil {
		return err
	}
	ew.printf("\nIsotope effects not given by the site file (nlens facts effects)\n\n")
	rows = rows[:0]
	seen := map[string]bool{}
	for _, t := range sum.Transfers {
		if seen[t.Process] || t.EpsilonSource == forward.EpsilonFromFile {
			continue
		}
		seen[t.Process] = true
		src := cites(kb, t.Effect.Refs)
		if src == "" {
			src = t.Effect.Status
		} else {
			src += " (" + t.Effect.Status + ")"
		}
		rows = append(rows, []string{t.Process, sigG(t.Effect.Typical, 4), fmtRange(t.Effect.Range), src})
	}
	if err := wrappedTable(ew, []string{"process", "ε", "range", "sources"}, "lrll", rows, []int{0, 0, 0, 34}); err != nil {
		return err
	}
	ew.printf("\nObservables at the baseline\n\n")
	rows = rows[:0]
	for _, o := range sum.Observables {
		dec := 2
		if !strings.HasPrefix(o.Unit, "‰") {
			rows = append(rows, []string{o.Name, num(o.Value), o.Unit})
			continue
		}
		rows = append(rows, []string{o.Name, signed(o.Value, dec), o.Unit})
	}
	if err := table(ew, []string{"observable", "value", "unit"}, "lrl", rows); err != nil {
		return err
	}
	for _, warn := range sum.Warnings {
		ew.printf("\nwarning: %s\n", wrap(warn, 76))
	}
	if s.Note != "" {
		ew.printf("\nNote: %s\n", wrap(s.Note, 72))
	}
	if len(s.References) > 0 {
		ew.printf("\nReferences\n\n")
		for _, k := range s.References {
			if r, ok := kb.Reference(k); ok {
				ew.printf("%s\n", strings.ReplaceAll(wrap(fmt.Sprintf("[%s] %s", k, FullReference(r)), 76), "\n", "\n    "))
			}
		}
	}
	return ew.err
}

// mycorrhizaLine says which fungal physiology the site uses.
func mycorrhizaLine(s *forward.Site, kb *knowledge.Base) string {
	typ := s.MycorrhizalType
	if typ == "" {
		typ = "not stated"
	}
	line := "mycorrhizal type " + typ
	if fp, ok := kb.FungalPhysiology(s.MycorrhizalType); ok && s.PoolIndex("fungi") >= 0 {
		if fp.Models != "" {
			line += fmt.Sprintf(" (the fungal pool is modelled as %s)", fp.Models)
		}
		line += fmt.Sprintf(", fungal transfer ε %s ‰", sigG(fp.EpsilonPermil, 4))
	}
	lu := s.LandUse
	if lu == "" {
		lu = "not stated"
	}
	return line + "; land use " + lu
}

// epsSource is the short source of a transfer's ε for the flux table.
func epsSource(t forward.TransferSummary) string {
	switch t.EpsilonSource {
	case forward.EpsilonFromFile:
		return "file"
	case forward.EpsilonFromType:
		return "type"
	}
	return "knowledge"
}

// ExportSite writes a site as a site file (DESIGN §3) to start from, with
// a header that says where it came from and, after each transfer whose ε
// the file leaves to the knowledge base, the value it will take.
func ExportSite(w io.Writer, s *forward.Site, kb *knowledge.Base, origin string) error {
	return forward.EncodeSite(w, s, kb, forward.EncodeOptions{
		Comment: []string{
			origin,
			"Format: DESIGN §3 site file. Pools in kg N/ha, rates in kg N/ha/yr, δ15N ‰ AIR,",
			"δ18O ‰ VSMOW, ε ‰ (positive: product depleted). An epsilon written here is taken as",
			"known; one left out comes from the knowledge base (its value is noted after the transfer).",
		},
		EffectComments: true,
	})
}

// SiteFitResult is one fitted control group of a study.
type SiteFitResult struct {
	Study, Comparison, Control string
	Fit                        *rank.SiteFit
}

// FittedSite is the JSON of a fitted site (DESIGN §7, fitted_site):
// the parameters that moved (from → to) and how the control is reproduced.
type FittedSite struct {
	Moved      map[string]FromTo     `json:"moved"`
	ControlFit map[string]ControlFit `json:"control_fit"`
	Reproduced bool                  `json:"reproduced"`
	Warnings   []string              `json:"warnings"`
}

// FromTo is a moved parameter: a flux in kg N/ha/yr or an ε in ‰, with
// the move in prior standard deviations.
type FromTo struct {
	From     float64 `json:"from"`
	To       float64 `json:"to"`
	Unit     string  `json:"unit"`
	PriorSDs float64 `json:"prior_sds"`
}

// ControlFit is one observed control value and the fitted model's.
type ControlFit struct {
	Observed float64  `json:"observed"`
	SE       float64  `json:"se"`
	Nominal  *float64 `json:"nominal"`
	Model    *float64 `json:"model"`
	Unit     string   `json:"unit"`
}

// FittedSiteJSON converts a fit to its JSON form.
func FittedSiteJSON(f *rank.SiteFit) FittedSite {
	out := FittedSite{Moved: map[string]FromTo{}, ControlFit: map[string]ControlFit{}, Reproduced: f.Reproduced, Warnings: f.Warnings}
	if out.Warnings == nil {
		out.Warnings = []string{}
	}
	for _, m := range f.Moved {
		out.Moved[m.Name] = FromTo{m.From, m.To, m.Unit, round6(m.PriorSDs)}
	}
	for _, c := range f.Control {
		out.ControlFit[c.Observable] = ControlFit{c.Observed, c.SE, finite(c.Before), finite(c.After), c.Unit}
	}
	return out
}

// siteFitJSON is one element of the `site fit --format json` array.
type siteFitJSON struct {
	Study      string     `json:"study"`
	Comparison string     `json:"comparison"`
	Control    string     `json:"control"`
	Site       string     `json:"site"`
	FittedSite FittedSite `json:"fitted_site"`
}

// SiteFits writes fitted sites: as site files (yaml, one document per
// control group, each with a header saying what moved and how the control
// is reproduced), as tables, or as JSON.
func SiteFits(w io.Writer, fits []SiteFitResult, kb *knowledge.Base, format string) error {
	switch format {
	case FormatJSON:
		out := []siteFitJSON{}
		for _, f := range fits {
			out = append(out, siteFitJSON{f.Study, f.Comparison, f.Control, f.Fit.Site.ID, FittedSiteJSON(f.Fit)})
		}
		return writeJSON(w, out)
	case FormatTable, "":
		ew := &errWriter{w: w}
		for i, f := range fits {
			if i > 0 {
				ew.printf("\n")
			}
			if err := siteFitTable(ew, f); err != nil {
				return err
			}
		}
		return ew.err
	case FormatYAML:
		var b bytes.Buffer
		for i, f := range fits {
			if i > 0 {
				b.WriteString("---\n")
			}
			if err := forward.EncodeSite(&b, f.Fit.Site, kb, forward.EncodeOptions{Comment: fitComment(f), EffectComments: true}); err != nil {
				return err
			}
		}
		_, err := w.Write(b.Bytes())
		return err
	}
	return fmt.Errorf("site fit cannot write format %q (yaml, table or json)", format)
}

// fitComment is the header of a fitted site file.
func fitComment(f SiteFitResult) []string {
	out := []string{
		fmt.Sprintf("Site fitted by nlens to the control group %q of comparison %q", f.Control, f.Comparison),
		fmt.Sprintf("in %s: rates within their spreads and ε within their knowledge ranges,", f.Study),
		"maximum a posteriori (DESIGN §5); pools are the fitted steady state.",
	}
	if len(f.Fit.Moved) == 0 {
		out = append(out, "Nothing moved: the template already reproduces the control.")
	} else {
		out = append(out, "Moved (from → to):")
		for _, m := range f.Fit.Moved {
			out = append(out, fmt.Sprintf("  %s: %s → %s %s (%+.1f prior sd)", m.Name, sig3(m.From), sig3(m.To), m.Unit, m.PriorSDs))
		}
	}
	out = append(out, "Control (observed ± SE; template; fitted):")
	for _, c := range f.Fit.Control {
		out = append(out, fmt.Sprintf("  %s: %s ± %s; %s; %s %s", c.Observable, sig3(c.Observed), sig3(c.SE), sig3(c.Before), sig3(c.After), c.Unit))
	}
	for _, warn := range f.Fit.Warnings {
		out = append(out, strings.Split(wrap("warning: "+warn, 86), "\n")...)
	}
	return out
}

func siteFitTable(ew *errWriter, f SiteFitResult) error {
	ew.printf("%s\n", wrap(fmt.Sprintf("%s: control group %q of %q, fitted as %s", f.Study, f.Control, f.Comparison, f.Fit.Site.ID), 78))
	if len(f.Fit.Moved) == 0 {
		ew.printf("\nNothing moved: the template already reproduces the control.\n")
	} else {
		ew.printf("\nMoved (fluxes at the steady state in kg N/ha/yr, ε in ‰; move in prior sd)\n\n")
		var rows [][]string
		for _, m := range f.Fit.Moved {
			rows = append(rows, []string{m.Name, sig3(m.From), sig3(m.To), m.Unit, plusSigned(m.PriorSDs, 1)})
		}
		if err := wrappedTable(ew, []string{"parameter", "from", "to", "unit", "move"}, "lrrlr", rows, []int{42, 0, 0, 0, 0}); err != nil {
			return err
		}
	}
	ew.printf("\nControl: observed ± SE, the template's value and the fitted site's\n\n")
	var rows [][]string
	for _, c := range f.Fit.Control {
		rows = append(rows, []string{c.Observable, sig3(c.Observed) + " ± " + sig3(c.SE), sig3(c.Before), sig3(c.After), c.Unit})
	}
	if err := table(ew, []string{"observable", "observed", "template", "fitted", "unit"}, "lrrrl", rows); err != nil {
		return err
	}
	for _, warn := range f.Fit.Warnings {
		ew.printf("\nwarning: %s\n", wrap(warn, 76))
	}
	return ew.err
}
