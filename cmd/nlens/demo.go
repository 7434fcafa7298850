package main

import (
	"embed"
	"fmt"
	"path"
	"strings"

	"github.com/spf13/cobra"

	"nlens/rank/report"
)

//go:embed demo
var demoFiles embed.FS

// demoStudy is the embedded demo's study file (also in testdata/demo/).
const demoStudy = "demo/study.yaml"

// readDemoFile reads files the demo study refers to from the embedded copy.
func readDemoFile(name string) ([]byte, error) {
	return demoFiles.ReadFile(path.Clean(strings.ReplaceAll(name, "\\", "/")))
}

func newDemoCmd(e *env) *cobra.Command {
	opt := explainOptions{}
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Run explain on the built-in example study (no files needed)",
		Long: strings.TrimSpace(`
demo runs nlens explain on an embedded example: an invented field
experiment, with realistic numbers, made up for this demonstration. The same
study is in testdata/demo/ of the source tree. It takes the flags of explain:
--format text, markdown or html for the e-mail summary or the full report, and
--out DIR to write the report with its references and figures.`),
		Example: "  nlens demo\n  nlens demo --format text\n  nlens demo --format html > demo.html\n  nlens demo --out report/\n  nlens demo --format json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return wrapRun(func() error {
				data, err := demoFiles.ReadFile(demoStudy)
				if err != nil {
					return internal{err}
				}
				opt.studyPath, opt.studyData = demoStudy, data
				if err := runExplain(cmd.Context(), e, opt); err != nil {
					return err
				}
				if opt.format == report.FormatTable {
					fmt.Fprintf(e.stdout, "\nThis was the built-in demo (invented data).\nYour own study: nlens explain study.yaml\n")
					if opt.out == "" {
						fmt.Fprintf(e.stdout, "Full report (Markdown, HTML, BibTeX, figures): nlens demo --out report/\n")
					}
				}
				return nil
			})
		},
	}
	addExplainFlags(cmd, &opt)
	return cmd
}
