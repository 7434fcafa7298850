package report

import (
	"fmt"
	"io"
	"slices"
	"strings"

	"nlens/forward"
	"nlens/knowledge"
)

// FactSections are the sections `nlens facts` can show.
var FactSections = []string{"effects", "sources", "forcings", "sites", "measurements", "references"}

// Facts writes one section of the knowledge base (or all, for section "")
// as a table, JSON, or (references only) BibTeX.
func Facts(w io.Writer, kb *knowledge.Base, section, format string) error {
	if section != "" && !slices.Contains(FactSections, section) {
		return fmt.Errorf("unknown section %q (sections: %s)", section, strings.Join(FactSections, ", "))
	}
	sections := FactSections
	if section != "" {
		sections = []string{section}
	}
	switch format {
	case FormatJSON:
		return factsJSON(w, kb, sections)
	case FormatBib:
		if section != "references" {
			return fmt.Errorf("--format bib applies to the references section only")
		}
		return BibTeX(w, kb.References)
	case FormatTable, "":
	default:
		return fmt.Errorf("facts cannot write format %q (table, json, or bib for references)", format)
	}
	ew := &errWriter{w: w}
	for i, s := range sections {
		if i > 0 {
			ew.printf("\n")
		}
		var err error
		switch s {
		case "effects":
			err = effectsTable(ew, kb)
		case "sources":
			err = sourcesTable(ew, kb)
		case "forcings":
			err = forcingsTable(ew, kb)
		case "sites":
			err = sitesTable(ew, kb)
		case "measurements":
			err = measurementsTable(ew, kb)
		case "references":
			err = referencesList(ew, kb)
		}
		if err != nil {
			return err
		}
	}
	return ew.err
}

func cites(kb *knowledge.Base, keys []string) string {
	var out []string
	for _, k := range keys {
		if r, ok := kb.Reference(k); ok {
			out = append(out, r.Cite())
		}
	}
	return strings.Join(out, "; ")
}

func fmtRange(r []float64) string {
	if len(r) != 2 {
		return ""
	}
	return fmt.Sprintf("%s to %s", sigG(r[0], 4), sigG(r[1], 4))
}

func effectsTable(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "Isotope effects, ε in ‰ (positive: product depleted; α = 1 + ε/1000)\n")
	fmt.Fprintf(w, "Nitrification δ18O of nitrate O: %g ‰ VSMOW (%s; %s)\n\n", kb.NitrateOxygen.NitrificationD18OPermil, fmtRange(kb.NitrateOxygen.RangePermil), kb.NitrateOxygen.Status)
	var rows [][]string
	for _, e := range kb.Effects {
		ratio := ""
		if e.D18ORatio != nil {
			ratio = sigG(*e.D18ORatio, 3)
		}
		src := cites(kb, e.Refs)
		if src == "" {
			src = e.Status
		}
		id := e.ID
		if e.Expressed == "intrinsic" {
			id += " *"
		}
		rows = append(rows, []string{id, sigG(e.EpsilonPermil, 4), fmtRange(e.RangePermil), ratio, src})
	}
	if err := wrappedTable(w, []string{"process", "ε", "range", "ε18/ε15", "sources"}, "lrlrl", rows, []int{0, 0, 0, 0, 24}); err != nil {
		return err
	}
	_, err := fmt.Fprintf(w, "* intrinsic (culture) value; the others are as expressed in ecosystems\n")
	return err
}

func sourcesTable(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "N sources: δ15N in ‰ vs AIR, δ18O in ‰ vs VSMOW\n\n")
	var rows [][]string
	g4 := func(v float64) string { return sigG(v, 4) }
	for _, s := range kb.Sources {
		if len(s.Parts) <= 1 {
			d18 := ""
			if s.D18OPermil != nil {
				d18 = g4(*s.D18OPermil)
			}
			rows = append(rows, []string{s.ID, s.Pool, g4(s.D15NPermil), fmtRange(s.D15NRangePermil), d18, cites(kb, s.Refs)})
			continue
		}
		// a source with parts (ammonium nitrate, deposition): one line each
		for i, p := range s.Parts {
			id, src := "", ""
			if i == 0 {
				id, src = s.ID, cites(kb, s.Refs)
			}
			d18 := ""
			if p.D18OPermil != nil {
				d18 = g4(*p.D18OPermil)
			}
			rows = append(rows, []string{id, fmt.Sprintf("%s %s %%", p.Pool, g4(100*p.Share)), g4(p.D15NPermil), fmtRange(p.D15NRangePermil), d18, src})
		}
	}
	return wrappedTable(w, []string{"source", "enters", "δ15N", "range", "δ18O", "sources"}, "llrlrl", rows, []int{0, 0, 0, 0, 0, 20})
}

// forcingsTable lists what each management tag applies to the treatment
// arm (DESIGN §4): one row per move or rate change, by severity where the
// tag has severities, with the size drawn as a nuisance (typical, range).
func forcingsTable(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "Known treatments: what each management tag applies in every hypothesis\n")
	fmt.Fprintf(w, "(uncertain sizes are drawn per draw: triangular over the range, mode typical)\n\n")
	size := func(s knowledge.Size, unit string) string {
		return fmt.Sprintf("%s%s (%s)", sigG(s.Typical, 3), unit, fmtRange(s.Range))
	}
	var rows [][]string
	effect := func(tag string, moves []knowledge.MoveForcing, rates []knowledge.RateForcing, src string) {
		for _, m := range moves {
			what := fmt.Sprintf("%s: share %s of %s → %s", m.Label, size(m.Share, ""), m.From, m.To)
			if m.Epsilon != nil {
				what += fmt.Sprintf(", ε %s", size(*m.Epsilon, " ‰"))
			}
			rows = append(rows, []string{tag, what, src})
			tag, src = "", ""
		}
		for _, r := range rates {
			what := fmt.Sprintf("%s: rate constants of %s multiplied by %s", r.Label, strings.Join(r.Processes, ", "), size(r.Factor, ""))
			if r.Years != nil {
				what += fmt.Sprintf(" for %s", size(*r.Years, " yr"))
			}
			rows = append(rows, []string{tag, what, src})
			tag, src = "", ""
		}
	}
	for _, m := range kb.Forcings.Management {
		tag := m.ID
		if len(m.Aliases) > 0 {
			tag += " (" + strings.Join(m.Aliases, ", ") + ")"
		}
		src := cites(kb, m.Refs)
		if m.Status != "" {
			src += " [" + m.Status + "]"
		}
		effect(tag, m.Moves, m.Rates, src)
		for _, sev := range knowledge.Severities {
			if e, ok := m.Severity[sev]; ok {
				effect(tag+"\n  severity "+sev, e.Moves, e.Rates, src)
				tag, src = "", ""
			}
		}
		if g := m.Grazing; g != nil {
			rows = append(rows, []string{tag, fmt.Sprintf("grazing: offtake %s of the foliage outflow, export %s of the intake, urine %s of excreta (the rest dung)",
				size(g.Offtake, ""), size(g.Export, ""), size(g.Urine, "")), src})
		}
	}
	if err := wrappedTable(w, []string{"management", "applied to the treatment arm", "sources"}, "lll", rows, []int{0, 32, 22}); err != nil {
		return err
	}
	_, err := fmt.Fprintf(w, "%s\nDeclared additions are inputs of their source; see `nlens facts sources`.\n",
		wrap("Context only (priors, no forcing): "+strings.Join(kb.Forcings.ContextOnly, ", "), 76))
	return err
}

func sitesTable(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "Site templates (use with --site ID or site: {template: ID})\n\n")
	var rows [][]string
	for _, id := range kb.SiteIDs() {
		sf, _ := kb.Site(id)
		s, err := forward.ParseSite(sf.Name, sf.Data, kb)
		if err != nil {
			return err
		}
		rows = append(rows, []string{id, strings.Join(s.Pools, " "), s.Description})
	}
	return wrappedTable(w, []string{"template", "pools", "description"}, "lll", rows, []int{0, 24, 26})
}

func measurementsTable(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "Measurement catalogue (sd in ‰, or on the log scale for pools and fluxes)\n\n")
	var rows [][]string
	for _, m := range kb.Measurements {
		rows = append(rows, []string{m.ID + "\n  → " + m.Observable, sigG(m.AnalyticalSD, 3), sigG(m.FieldSD, 3), knowledge.CostLabel(m.Cost), m.Method})
	}
	return wrappedTable(w, []string{"measurement → observable", "lab sd", "field sd", "cost", "method"}, "lrrll", rows, []int{0, 0, 0, 0, 25})
}

func referencesList(w io.Writer, kb *knowledge.Base) error {
	fmt.Fprintf(w, "References (%d)\n\n", len(kb.References))
	for _, r := range kb.References {
		text := wrap(fmt.Sprintf("[%s] %s", r.Key, FullReference(r)), 76)
		fmt.Fprintf(w, "%s\n", strings.ReplaceAll(text, "\n", "\n    "))
	}
	return nil
}

type factsOut struct {
	NitrateOxygen *knowledge.NitrateOxygen `json:"nitrate_oxygen,omitempty"`
	Effects       []knowledge.Effect       `json:"effects,omitempty"`
	Sources       []knowledge.Source       `json:"sources,omitempty"`
	Forcings      *knowledge.Forcings      `json:"forcings,omitempty"`
	Sites         []siteOut                `json:"sites,omitempty"`
	Measurements  []knowledge.Measurement  `json:"measurements,omitempty"`
	References    []knowledge.Reference    `json:"references,omitempty"`
}

type siteOut struct {
	ID          string   `json:"id"`
	Description string   `json:"description"`
	Pools       []string `json:"pools"`
	References  []string `json:"references"`
	Note        string   `json:"note"`
}

func factsJSON(w io.Writer, kb *knowledge.Base, sections []string) error {
	var out factsOut
	for _, s := range sections {
		switch s {
		case "effects":
			out.NitrateOxygen = &kb.NitrateOxygen
			out.Effects = kb.Effects
		case "sources":
			out.Sources = kb.Sources
		case "forcings":
			out.Forcings = &kb.Forcings
		case "sites":
			for _, id := range kb.SiteIDs() {
				sf, _ := kb.Site(id)
				site, err := forward.ParseSite(sf.Name, sf.Data, kb)
				if err != nil {
					return err
				}
				out.Sites = append(out.Sites, siteOut{id, site.Description, site.Pools, site.References, site.Note})
			}
		case "measurements":
			out.Measurements = kb.Measurements
		case "references":
			out.References = kb.References
		}
	}
	return writeJSON(w, out)
}
