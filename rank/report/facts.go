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
var FactSections = []string{"effects", "sources", "sites", "measurements", "references"}

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
	for _, s := range kb.Sources {
		d18 := ""
		if s.D18OPermil != nil {
			d18 = sigG(*s.D18OPermil, 4)
		}
		rows = append(rows, []string{s.ID, s.Pool, sigG(s.D15NPermil, 4), fmtRange(s.D15NRangePermil), d18, cites(kb, s.Refs)})
	}
	return wrappedTable(w, []string{"source", "enters", "δ15N", "range", "δ18O", "sources"}, "llrlrl", rows, []int{0, 0, 0, 0, 0, 24})
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
