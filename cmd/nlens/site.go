package main

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"nlens/forward"
	"nlens/rank"
	"nlens/rank/report"
	"nlens/rank/study"
)

func newSiteCmd(e *env) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "site show|export|fit",
		Short: "Look inside a site model, export it as a site file, or fit it to a study's control",
		Long: strings.TrimSpace(`
site works with the site models that explain and simulate run on: the
built-in templates (nlens facts sites) and your own site files (DESIGN §3
format).

  show    pools, fluxes, each transfer's and process's share of its donor
          pool's outflow, isotope effects with their sources, the
          observables at the baseline and the references
  export  a complete site file to start your own from
  fit     the site of a study fitted to each comparison's control group:
          rates within their spreads and ε within their ranges, with what
          moved and how well the control is reproduced`),
		Example: strings.Trim(`
  nlens site show boreal-conifer-forest
  nlens site export grazed-pasture -o my-pasture.yaml
  nlens site fit study.yaml -o fitted-site.yaml`, "\n"),
		Args: cobra.NoArgs,
	}
	cmd.AddCommand(newSiteShowCmd(e), newSiteExportCmd(e), newSiteFitCmd(e))
	return cmd
}

type siteShowOptions struct {
	site   string
	format string
}

func newSiteShowCmd(e *env) *cobra.Command {
	var opt siteShowOptions
	cmd := &cobra.Command{
		Use:   "show ID|FILE",
		Short: "Show a site model: pools, fluxes, shares of outflow, isotope effects, references",
		Long: strings.TrimSpace(`
show computes the site's baseline steady state and prints its pools (in the
file and at the steady state, with turnover times and δ15N), its inputs,
every transfer's flux with its share of the donor pool's outflow and its ε
(from the site file, the site's mycorrhizal type or the knowledge base),
each process's share of the outflow of the pools it draws from, the
sources of the isotope effects, the observables at the baseline, the
site's note and its references. A site whose file pools are off its
steady state by more than 10 % gets a warning.`),
		Example: strings.Trim(`
  nlens site show temperate-deciduous-forest
  nlens site show my-site.yaml --format json`, "\n"),
		Args: cobra.ExactArgs(1),
		RunE: func(_ *cobra.Command, args []string) error {
			opt.site = args[0]
			return wrapRun(func() error { return runSiteShow(e, opt) })
		},
	}
	cmd.Flags().StringVar(&opt.format, "format", report.FormatTable, "table or json")
	return cmd
}

func runSiteShow(e *env, opt siteShowOptions) error {
	if err := checkFormat(opt.format, report.SiteShowFormats...); err != nil {
		return err
	}
	s, err := forward.LoadSite(opt.site, e.kb)
	if err != nil {
		return err
	}
	sum, err := forward.Describe(s)
	if err != nil {
		return err
	}
	return report.SiteShow(e.stdout, sum, e.kb, opt.format)
}

type siteExportOptions struct {
	site  string
	out   string
	force bool
}

func newSiteExportCmd(e *env) *cobra.Command {
	var opt siteExportOptions
	cmd := &cobra.Command{
		Use:   "export ID|FILE [-o FILE]",
		Short: "Write a site model as a complete site file to start your own from",
		Long: strings.TrimSpace(`
export writes a built-in template (or a site file, normalized) in the site
file format of DESIGN §3: pools, inputs and every transfer with its rate
and spread. An ε that the template leaves to the knowledge base is left out
and its value noted after the transfer, so uncertainty draws still vary it;
write an epsilon there to fix it. The file reads back to the same model,
bit for bit. Without -o it goes to standard output; -o FILE does not
replace an existing file unless --force is given.`),
		Example: strings.Trim(`
  nlens site export temperate-conifer-forest
  nlens site export riparian-wetland -o my-buffer.yaml
  nlens site export riparian-wetland -o my-buffer.yaml --force`, "\n"),
		Args: cobra.ExactArgs(1),
		RunE: func(_ *cobra.Command, args []string) error {
			opt.site = args[0]
			return wrapRun(func() error { return runSiteExport(e, opt) })
		},
	}
	cmd.Flags().StringVarP(&opt.out, "out", "o", "", "write the site file here instead of standard output")
	cmd.Flags().BoolVar(&opt.force, "force", false, "with -o, replace an existing file")
	return cmd
}

func runSiteExport(e *env, opt siteExportOptions) error {
	if opt.force && opt.out == "" {
		return badf("--force applies only with -o FILE")
	}
	s, err := forward.LoadSite(opt.site, e.kb)
	if err != nil {
		return err
	}
	origin := fmt.Sprintf("Site file exported by nlens %s from the site file %s.", version, opt.site)
	if _, ok := e.kb.Site(opt.site); ok {
		origin = fmt.Sprintf("Site file exported by nlens %s from the built-in template %s.", version, opt.site)
	}
	var b bytes.Buffer
	if err := report.ExportSite(&b, s, e.kb, origin); err != nil {
		return err
	}
	return writeOutput(e, opt.out, opt.force, b.Bytes())
}

// writeOutput writes data to standard output, or to path, refusing to
// replace an existing file unless force is set.
func writeOutput(e *env, path string, force bool, data []byte) error {
	if path == "" {
		_, err := e.stdout.Write(data)
		return err
	}
	flags := os.O_WRONLY | os.O_CREATE | os.O_EXCL
	if force {
		flags = os.O_WRONLY | os.O_CREATE | os.O_TRUNC
	}
	f, err := os.OpenFile(path, flags, 0o644)
	if errors.Is(err, fs.ErrExist) {
		return badf("%s exists; use --force to replace it", path)
	}
	if err != nil {
		return badf("cannot write %s: %v", path, err)
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		return badf("cannot write %s: %v", path, err)
	}
	if err := f.Close(); err != nil {
		return badf("cannot write %s: %v", path, err)
	}
	fmt.Fprintf(e.stderr, "nlens: wrote %s\n", report.EscapeText(path))
	return nil
}

type siteFitOptions struct {
	studyPath     string
	comparison    string
	format        string
	out           string
	force         bool
	allowEnriched bool
}

func newSiteFitCmd(e *env) *cobra.Command {
	var opt siteFitOptions
	cmd := &cobra.Command{
		Use:   "fit STUDY.yaml",
		Short: "Fit a study's site model to the absolute values of each comparison's control group",
		Long: strings.TrimSpace(`
fit reads a study and fits its site model to the control group of each
comparison (each control group once): the mean of every observed pool's
δ15N, and pool sizes and rates where they were measured, each with its
standard error plus a structural error of the site model (0.5 ‰, 0.1 on the
ln scale). Transfer rates move within their spreads (log-normal priors) and
isotope effects within their knowledge ranges (triangular priors), maximum
a posteriori; the fitted site's pools are its new steady state, so it is
balanced.

Formats: yaml (default) writes the fitted site file, one document per
control group, with a header saying which rates and ε moved (from → to)
and how the control is reproduced; table prints the same as tables; json
for scripts. A control the site cannot reproduce within two combined
standard deviations gets a warning naming the observable: the site model
may lack a process or a source that site has.`),
		Example: strings.Trim(`
  nlens site fit study.yaml
  nlens site fit study.yaml --format table
  nlens site fit study.yaml --comparison "harvested vs intact" -o fitted-site.yaml`, "\n"),
		Args: cobra.ExactArgs(1),
		RunE: func(_ *cobra.Command, args []string) error {
			opt.studyPath = args[0]
			return wrapRun(func() error { return runSiteFit(e, opt) })
		},
	}
	f := cmd.Flags()
	f.StringVar(&opt.format, "format", report.FormatYAML, "yaml, table or json")
	f.StringVar(&opt.comparison, "comparison", "", "fit only the control group of this comparison")
	f.StringVarP(&opt.out, "out", "o", "", "write to this file instead of standard output")
	f.BoolVar(&opt.force, "force", false, "with -o, replace an existing file")
	f.BoolVar(&opt.allowEnriched, "allow-enriched", false, "accept |δ15N| > 100 ‰ (15N tracer studies)")
	return cmd
}

func runSiteFit(e *env, opt siteFitOptions) error {
	if err := checkFormat(opt.format, report.SiteFitFormats...); err != nil {
		return err
	}
	if opt.force && opt.out == "" {
		return badf("--force applies only with -o FILE")
	}
	st, err := study.Load(opt.studyPath, e.kb, study.Options{AllowEnriched: opt.allowEnriched})
	if err != nil {
		return err
	}
	var fits []report.SiteFitResult
	done := map[string]bool{}
	found := opt.comparison == ""
	for _, c := range st.Comparisons {
		if opt.comparison != "" && c.Name != opt.comparison {
			continue
		}
		found = true
		if done[c.Control] {
			continue
		}
		done[c.Control] = true
		targets := controlTargets(c)
		if len(targets) == 0 {
			fmt.Fprintf(e.stderr, "warning: comparison %q has no control values to fit to\n", c.Name)
			continue
		}
		fit, err := rank.FitSite(st.Site, targets, rank.FitOptions{})
		if err != nil {
			return badInput{fmt.Errorf("%s: comparison %q, control %q: %w", opt.studyPath, c.Name, c.Control, err)}
		}
		fits = append(fits, report.SiteFitResult{Study: opt.studyPath, Comparison: c.Name, Control: c.Control, Fit: fit})
	}
	if !found {
		var names []string
		for _, c := range st.Comparisons {
			names = append(names, fmt.Sprintf("%q", c.Name))
		}
		return badf("%s: no comparison %q (comparisons: %s)", opt.studyPath, opt.comparison, strings.Join(names, ", "))
	}
	if len(fits) == 0 {
		return badf("%s: no control group with observed values to fit to", opt.studyPath)
	}
	if opt.format == report.FormatYAML && opt.out != "" && len(fits) > 1 {
		var names []string
		for _, f := range fits {
			names = append(names, fmt.Sprintf("%q", f.Comparison))
		}
		return badf("%s has %d control groups and a site file holds one site: choose one with --comparison (%s)", opt.studyPath, len(fits), strings.Join(names, ", "))
	}
	if opt.format != report.FormatTable {
		for _, f := range fits {
			for _, w := range f.Fit.Warnings {
				fmt.Fprintf(e.stderr, "warning: control %q: %s\n", f.Control, report.EscapeText(w))
			}
		}
	}
	var b bytes.Buffer
	if err := report.SiteFits(&b, fits, e.kb, opt.format); err != nil {
		return err
	}
	return writeOutput(e, opt.out, opt.force, b.Bytes())
}

// controlTargets are the control group's observed means with their
// standard errors.
func controlTargets(c study.Comparison) []rank.FitTarget {
	var out []rank.FitTarget
	for _, o := range c.Observed {
		out = append(out, rank.FitTarget{Observable: o.Observable, Mean: o.Control.Mean, SE: o.Control.SE()})
	}
	return out
}
