package main

import (
	"slices"
	"strings"

	"github.com/spf13/cobra"

	"nlens/rank/report"
)

func newFactsCmd(e *env) *cobra.Command {
	var format string
	cmd := &cobra.Command{
		Use:   "facts [effects|sources|forcings|sites|measurements|references]",
		Short: "Show the knowledge base: isotope effects, sources, forcings, site templates, measurements, references",
		Long: strings.TrimSpace(`
facts prints what nlens assumes, with the sources behind every number:
isotope effects (ε, range, ecosystem-expressed or intrinsic, δ18O:δ15N
ratio), source end-members, the known treatments (what clear-cut,
burned and grazed apply in every hypothesis, with their uncertain sizes),
built-in site templates, the measurement
catalogue and the references. Without a section it prints all of them.`),
		Example: strings.Trim(`
  nlens facts effects
  nlens facts forcings
  nlens facts sources --format json
  nlens facts references --format bib > nlens.bib`, "\n"),
		Args:      cobra.MaximumNArgs(1),
		ValidArgs: report.FactSections,
		RunE: func(_ *cobra.Command, args []string) error {
			return wrapRun(func() error {
				section := ""
				if len(args) == 1 {
					section = args[0]
					if !slices.Contains(report.FactSections, section) {
						return badf("unknown section %q (sections: %s)", section, strings.Join(report.FactSections, ", "))
					}
				}
				if err := checkFormat(format, report.FormatTable, report.FormatJSON, report.FormatBib); err != nil {
					return err
				}
				if format == report.FormatBib && section != "references" {
					return badf("--format bib applies to: nlens facts references")
				}
				return report.Facts(e.stdout, e.kb, section, format)
			})
		},
	}
	cmd.Flags().StringVar(&format, "format", report.FormatTable, "table, json, or bib (references only)")
	return cmd
}
