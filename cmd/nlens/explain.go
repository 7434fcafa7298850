package main

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"nlens/knowledge/input"
	"nlens/rank"
	"nlens/rank/report"
	"nlens/rank/study"
	"nlens/rules"
)

type explainOptions struct {
	studyPath     string
	studyData     []byte // set for the embedded demo
	format        string
	seed          uint64
	draws         int
	modelError    float64
	rulesFiles    []string
	allowEnriched bool
	out           string
	force         bool
	noSiteFit     bool
	maxDraws      int
}

func newExplainCmd(e *env) *cobra.Command {
	opt := explainOptions{}
	cmd := &cobra.Command{
		Use:   "explain STUDY.yaml",
		Short: "Rank the explanations of observed δ15N shifts and say what to measure next",
		Long: strings.TrimSpace(`
explain reads a study (site, comparisons, group means or per-sample rows),
simulates every candidate change in N cycling on the site model, scores each
against the observed shifts with the uncertainty of every isotope effect
propagated, and ranks them by posterior probability. For the leading
explanations it predicts every measurement not yet made and ranks them by
the information they would give about which explanation holds.

Formats: table (default, for a terminal), text (a plain-text summary to
paste into an e-mail), markdown (the full report with a discussion draft,
cautions, methods and references), html (the same report as one
self-contained page with its figures, for a browser or to print) and json
(for scripts). --out DIR writes the full report into DIR: report.md,
report.html, result.json, references.bib and the
figures as SVG and PNG; an existing non-empty DIR needs --force (your other
files in it are kept). DIR is replaced whole, so it holds the previous
report or the new one, never a mix, and a second run on the same DIR at the
same time is refused.`),
		Example: strings.Trim(`
  nlens explain study.yaml
  nlens explain study.yaml --format text
  nlens explain study.yaml --format html > report.html
  nlens explain study.yaml --out report/
  nlens explain study.yaml --format json --seed 7
  nlens explain study.yaml --draws 200 --model-error 0.3
  nlens explain study.yaml --no-site-fit
  nlens explain study.yaml --rules my-rules.yaml`, "\n"),
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opt.studyPath = args[0]
			return wrapRun(func() error { return runExplain(cmd.Context(), e, opt) })
		},
	}
	addExplainFlags(cmd, &opt)
	return cmd
}

func addExplainFlags(cmd *cobra.Command, opt *explainOptions) {
	f := cmd.Flags()
	f.StringVar(&opt.format, "format", report.FormatTable, "table, text, markdown, html or json")
	f.StringVar(&opt.out, "out", "", "also write the full report (Markdown, HTML, JSON, BibTeX, figures) into this directory")
	f.BoolVar(&opt.force, "force", false, "with --out, replace the report files in a directory that is not empty")
	f.Uint64Var(&opt.seed, "seed", rank.DefaultSeed, "random seed: the same seed gives the same output")
	f.IntVar(&opt.draws, "draws", rank.DefaultDraws, "nuisance draws of isotope effects, source δ, rates and treatment sizes to start with; they double while the top posteriors' Monte Carlo error exceeds 0.02")
	f.IntVar(&opt.maxDraws, "max-draws", rank.DefaultMaxDraws, "the most nuisance draws the doubling may reach")
	f.BoolVar(&opt.noSiteFit, "no-site-fit", false, "keep the site model as given instead of fitting it to the control's absolute values")
	f.Float64Var(&opt.modelError, "model-error", rank.DefaultModelError, "structural model error σ_model, ‰")
	f.StringArrayVar(&opt.rulesFiles, "rules", nil, "extra candidates or context rules (YAML; repeatable)")
	f.BoolVar(&opt.allowEnriched, "allow-enriched", false, "accept |δ15N| > 100 ‰ (15N tracer studies)")
}

func runExplain(ctx context.Context, e *env, opt explainOptions) error {
	if err := checkFormat(opt.format, report.ExplainFormats...); err != nil {
		return err
	}
	if opt.force && opt.out == "" {
		return badf("--force applies only with --out DIR")
	}
	if opt.draws < 1 || opt.draws > rank.MaxDrawsAbsolute {
		return badf("--draws must be between 1 and %d, got %d", rank.MaxDrawsAbsolute, opt.draws)
	}
	if err := checkModelError(opt.modelError); err != nil {
		return err
	}
	var out *report.OutDir
	if opt.out != "" {
		// Reserved (checked, locked, cleaned of an interrupted run's
		// leftovers) before any computation, released at the end.
		var err error
		if out, err = report.ReserveOutDir(opt.out, opt.force); err != nil {
			return badInput{err}
		}
		defer out.Release()
	}
	st, err := loadStudy(e, opt)
	if err != nil {
		return err
	}
	set, err := loadRules(e, opt.rulesFiles)
	if err != nil {
		return err
	}
	if err := checkDraws("--draws", opt.draws, st, set); err != nil {
		return err
	}
	// The doubling may reach --max-draws: its memory is checked the same way.
	if opt.maxDraws < 1 || opt.maxDraws > rank.MaxDrawsAbsolute {
		return badf("--max-draws must be between 1 and %d, got %d", rank.MaxDrawsAbsolute, opt.maxDraws)
	}
	if err := checkDraws("--max-draws", opt.maxDraws, st, set); err != nil {
		return err
	}
	if ctx == nil {
		ctx = context.Background()
	}
	ro := rank.Options{Seed: opt.seed, Draws: opt.draws, MaxDraws: opt.maxDraws, ModelError: opt.modelError, NoSiteFit: opt.noSiteFit, Version: version}
	if e.stderrTerminal {
		p := newProgressBar(e.stderr, time.Second)
		defer p.finish()
		ro.Progress = p.update
	}
	res, err := rank.Explain(ctx, st, e.kb, set, ro)
	if err != nil {
		return err
	}
	res.RulesFiles, res.Demo = opt.rulesFiles, opt.studyData != nil
	if err := report.CheckFinite(res); err != nil {
		return notFinite(err)
	}
	if err := report.WriteExplain(humanOut(e.stdout, opt.format), res, e.kb, opt.format); err != nil {
		return err
	}
	if out == nil {
		return nil
	}
	names, err := out.Write(res, e.kb)
	var dirErr *report.OutDirError
	if errors.As(err, &dirErr) {
		return badInput{err}
	}
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stderr, "nlens: wrote %d files to %s: %s\n", len(names), opt.out, strings.Join(names, ", "))
	return nil
}

func loadStudy(e *env, opt explainOptions) (*study.Study, error) {
	so := study.Options{AllowEnriched: opt.allowEnriched}
	if opt.studyData != nil {
		return study.Parse(opt.studyPath, opt.studyData, e.kb, so, readDemoFile)
	}
	return study.Load(opt.studyPath, e.kb, so)
}

func loadRules(e *env, paths []string) (*rules.Set, error) {
	if len(paths) == 0 {
		return rules.Default(e.kb)
	}
	files, err := rules.DefaultFiles()
	if err != nil {
		return nil, internal{err}
	}
	for _, p := range paths {
		data, err := input.Read(p, input.Rules)
		if err != nil {
			return nil, err
		}
		files = append(files, rules.File{Name: p, Data: data})
	}
	return rules.Parse(e.kb, files...)
}

func newCheckCmd(e *env) *cobra.Command {
	var allowEnriched bool
	cmd := &cobra.Command{
		Use:   "check STUDY.yaml",
		Short: "Validate a study file and print the observed shifts",
		Long: strings.TrimSpace(`
check reads a study file and its samples CSV, reports every problem with
file, line and field, and prints the observed shifts (treatment − control,
Welch standard errors) that explain would work with.`),
		Example: "  nlens check study.yaml",
		Args:    cobra.ExactArgs(1),
		RunE: func(_ *cobra.Command, args []string) error {
			return wrapRun(func() error {
				st, err := study.Load(args[0], e.kb, study.Options{AllowEnriched: allowEnriched})
				if err != nil {
					return err
				}
				return report.Observed(humanOut(e.stdout, report.FormatTable), st, e.kb)
			})
		},
	}
	cmd.Flags().BoolVar(&allowEnriched, "allow-enriched", false, "accept |δ15N| > 100 ‰ (15N tracer studies)")
	return cmd
}

// progressBar draws "explaining… 42 %" on a terminal once a run has taken
// longer than a delay, and clears it at the end.
type progressBar struct {
	w     interface{ Write([]byte) (int, error) }
	start time.Time
	delay time.Duration
	drawn bool
	last  int
}

func newProgressBar(w interface{ Write([]byte) (int, error) }, delay time.Duration) *progressBar {
	return &progressBar{w: w, start: time.Now(), delay: delay, last: -1}
}

func (p *progressBar) update(done, total int) {
	if time.Since(p.start) < p.delay || total == 0 {
		return
	}
	pct := 100 * done / total
	if pct == p.last {
		return
	}
	p.last = pct
	p.drawn = true
	fmt.Fprintf(p.w, "\rexplaining… %3d %%", pct)
}

func (p *progressBar) finish() {
	if p.drawn {
		fmt.Fprint(p.w, "\r                  \r")
	}
}
