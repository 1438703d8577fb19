package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"runtime/debug"
	"strings"

	"github.com/spf13/cobra"
)

// Exit codes.
const (
	exitOK       = 0
	exitFindings = 1 // the command ran and found what it reports as findings
	exitError    = 2 // usage, input, I/O or internal error
)

// version is set at build time with -ldflags "-X main.version=..."; when
// empty the module version from the build info is used.
var version = ""

func toolVersion() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" && bi.Main.Version != "(devel)" {
		return bi.Main.Version
	}
	return "0.1.0-dev"
}

// usageError marks an error caused by how the command was called.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

// errFindings is returned by a command that completed and found what it
// reports as findings; run maps it to exit code 1 without printing it.
var errFindings = errors.New("findings reported")

// globalOptions are the flags every command shares.
type globalOptions struct {
	quiet   bool
	verbose bool
	log     *slog.Logger
	stderr  io.Writer
}

// run builds the command tree on the given streams, runs it and returns the
// exit code.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	g := &globalOptions{stderr: stderr}
	root := newRootCmd(g)
	root.SetArgs(args)
	root.SetIn(stdin)
	root.SetOut(stdout)
	root.SetErr(stderr)
	cmd, err := root.ExecuteContextC(ctx)
	if err == nil {
		return exitOK
	}
	if errors.Is(err, errFindings) {
		return exitFindings
	}
	fmt.Fprintf(stderr, "crossform: %v\n", err)
	var ue usageError
	if errors.As(err, &ue) || isCobraUsage(err) {
		if cmd == nil {
			cmd = root
		}
		fmt.Fprintf(stderr, "usage: %s\n", cmd.UseLine())
	}
	return exitError
}

func isCobraUsage(err error) bool {
	m := err.Error()
	return strings.HasPrefix(m, "unknown command") || strings.HasPrefix(m, "unknown flag") ||
		strings.HasPrefix(m, "unknown shorthand flag") || strings.Contains(m, "flag needs an argument") ||
		strings.HasPrefix(m, "invalid argument") || strings.HasPrefix(m, "required flag")
}

func newRootCmd(g *globalOptions) *cobra.Command {
	root := &cobra.Command{
		Use:   "crossform",
		Short: "Find cross-variable inconsistencies in clinical-trial data and turn them into edit checks",
		Long: `crossform reads a study's data extract, measures the association of every
variable pair, groups related variables, proposes cross-variable consistency
rules (edit checks) with evidence, keeps reviewers' decisions in a YAML rule
set, and reruns the accepted rules on each new extract.

Everything crossform reports is a candidate for human review. Whether a value
is wrong, and whether a query is raised, is decided by the study team under
the study's data validation plan and local procedures.`,
		Version:       toolVersion(),
		SilenceErrors: true,
		SilenceUsage:  true,
		PersistentPreRun: func(cmd *cobra.Command, args []string) {
			level := slog.LevelInfo
			if g.verbose {
				level = slog.LevelDebug
			}
			w := cmd.ErrOrStderr()
			if g.quiet {
				w = io.Discard
			}
			g.stderr = w
			g.log = slog.New(slog.NewTextHandler(w, &slog.HandlerOptions{Level: level,
				ReplaceAttr: func(groups []string, a slog.Attr) slog.Attr {
					if a.Key == slog.TimeKey && len(groups) == 0 {
						return slog.Attr{}
					}
					return a
				}}))
		},
	}
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error { return usageError{err} })
	root.PersistentFlags().BoolVarP(&g.quiet, "quiet", "q", false, "silence progress and warnings on stderr")
	root.PersistentFlags().BoolVarP(&g.verbose, "verbose", "v", false, "more detail on stderr")
	root.SetVersionTemplate("crossform {{.Version}}\n")
	root.AddCommand(
		newProfileCmd(g, nil),
		newDemoDataCmd(g, nil),
		newDemoCmd(g, nil),
		newAssociateCmd(g, nil),
		newClusterCmd(g, nil),
		newSignalsCmd(g, nil),
		newProposeCmd(g, nil),
		newDecideCmd(g, nil),
		newRulesCmd(g),
		newCheckCmd(g, nil),
		newReportCmd(g, nil),
		newReviewCmd(g, nil),
	)
	return root
}

// exactArgs is cobra.ExactArgs returning a usage error.
func exactArgs(n int) cobra.PositionalArgs {
	return func(cmd *cobra.Command, args []string) error {
		if err := cobra.ExactArgs(n)(cmd, args); err != nil {
			return usageError{err}
		}
		return nil
	}
}
