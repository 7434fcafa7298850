package main

import (
	"errors"
	"fmt"
	"io"
	"nlens/knowledge/input"
	"strings"

	"github.com/spf13/cobra"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/report"
)

// version is printed by --version and written into reports.
const version = "0.1.0"

// Exit codes (DESIGN §7).
const (
	exitOK       = 0
	exitBadInput = 1
	exitInternal = 2
)

// env is what every command works with: injected streams and the knowledge
// base.
type env struct {
	stdout, stderr io.Writer
	// stderrTerminal says whether progress may be drawn on stderr.
	stderrTerminal bool
	kb             *knowledge.Base
}

// badInput marks an error caused by the user's arguments or files.
type badInput struct{ err error }

func (b badInput) Error() string { return b.err.Error() }
func (b badInput) Unwrap() error { return b.err }

func badf(format string, args ...any) error { return badInput{fmt.Errorf(format, args...)} }

// internal marks an error that is nlens's fault.
type internal struct{ err error }

func (i internal) Error() string { return i.err.Error() }
func (i internal) Unwrap() error { return i.err }

// run is main without the process: it builds the command tree, executes it
// with the given arguments and maps the outcome to an exit code. The error
// is printed once, here.
func run(stdout, stderr io.Writer, args []string) int {
	return runEnv(&env{stdout: stdout, stderr: stderr, stderrTerminal: isTerminal(stderr)}, args)
}

func runEnv(e *env, args []string) int {
	kb, err := knowledge.Default()
	if err != nil {
		fmt.Fprintf(e.stderr, "nlens: internal error: the embedded knowledge base does not load: %v\n", err)
		return exitInternal
	}
	e.kb = kb
	root := newRoot(e)
	root.SetArgs(args)
	root.SetOut(e.stdout)
	root.SetErr(e.stderr)
	err = root.Execute()
	if err == nil {
		return exitOK
	}
	code := exitCode(err)
	prefix := "nlens: "
	if code == exitInternal {
		prefix = "nlens: internal error: "
	}
	fmt.Fprintf(e.stderr, "%s%s\n", prefix, report.EscapeText(err.Error()))
	return code
}

// exitCode: input problems (positioned file errors, bad flags, an
// ill-conditioned site) are 1; anything nlens did not expect is 2.
func exitCode(err error) int {
	var ie *input.Error
	var ce *forward.ConditionError
	var in internal
	switch {
	case errors.As(err, &in):
		return exitInternal
	case errors.As(err, &ie), errors.As(err, &ce):
		return exitBadInput
	}
	return exitBadInput // usage errors from cobra and badInput
}

func newRoot(e *env) *cobra.Command {
	root := &cobra.Command{
		Use:   "nlens",
		Short: "What an observed δ15N shift between treatments could mean",
		Long: strings.TrimSpace(`
nlens explains δ15N differences between treatments of a field experiment:
which changes in N cycling (nitrification, denitrification, NH3
volatilization, nitrate leaching, a new N source, mycorrhizal supply…) could
produce the observed shifts across foliage, soil and nitrate, how large each
would have to be, which explanations the data cannot yet tell apart, and
which measurement would separate them. It runs a compartment model of the N
cycle solved exactly in 14N and 15N.

δ15N is in ‰ vs AIR, δ18O of nitrate in ‰ vs VSMOW; ε is positive when the
product is depleted (α = 1 + ε/1000 = R_substrate/R_product).`),
		Version:       version,
		SilenceUsage:  true,
		SilenceErrors: true,
		CompletionOptions: cobra.CompletionOptions{
			HiddenDefaultCmd: true,
		},
	}
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return badInput{fmt.Errorf("%w (see nlens %s --help)", err, c.Name())}
	})
	root.AddCommand(newExplainCmd(e), newCheckCmd(e), newSimulateCmd(e), newSiteCmd(e), newFactsCmd(e), newCalcCmd(e), newDemoCmd(e))
	return root
}

// wrapRun classifies errors from a command's run function: known input
// errors pass through; anything else is internal.
func wrapRun(f func() error) error {
	err := f()
	if err == nil {
		return nil
	}
	var ie *input.Error
	var ce *forward.ConditionError
	var bi badInput
	if errors.As(err, &ie) || errors.As(err, &ce) || errors.As(err, &bi) {
		return err
	}
	return internal{err}
}

// checkFormat validates a --format value against what a command offers.
func checkFormat(format string, allowed ...string) error {
	for _, a := range allowed {
		if format == a {
			return nil
		}
	}
	return badf("--format %q: expected one of %s", format, strings.Join(allowed, ", "))
}

func asCondition(err error, target **forward.ConditionError) bool { return errors.As(err, target) }
