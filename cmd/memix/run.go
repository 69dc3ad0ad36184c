package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/sim"
)

// version is the program version, set at build time with
// -ldflags "-X main.version=v1.2.3".
var version = "dev"

// env is what one invocation of memix shares between its commands.
type env struct {
	stdout, stderr io.Writer
	ran            bool // a command's RunE started: later errors are not usage errors
}

// commands holds the constructors of the subcommands. It is appended to
// only by the init functions of the command files (one per command), and
// read-only once main starts.
var commands []func(*env) *cobra.Command

// register adds a subcommand; call it from an init function.
func register(mk func(*env) *cobra.Command) { commands = append(commands, mk) }

// usageError is a mistake in the command line: exit code 2.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

// configError is an unreadable or invalid configuration file: exit code 2.
type configError struct {
	path string
	err  error
}

func (e configError) Error() string {
	ps := config.Problems(e.err)
	if len(ps) == 0 {
		return e.err.Error()
	}
	var b strings.Builder
	noun := "problems"
	if len(ps) == 1 {
		noun = "problem"
	}
	fmt.Fprintf(&b, "%s: %d %s:", e.path, len(ps), noun)
	for _, p := range ps {
		b.WriteString("\n  " + p.Error())
	}
	return b.String()
}

func (e configError) Unwrap() error { return e.err }

// loadConfig loads and validates a configuration file; its error prints
// every problem and maps to exit code 2.
func loadConfig(path string) (config.Config, error) {
	c, err := config.Load(path)
	if err != nil {
		return c, configError{path, err}
	}
	return c, nil
}

// exitCode maps an error of run to the exit status (see the package
// documentation).
func exitCode(err error) int {
	var ue usageError
	switch {
	case err == nil:
		return 0
	case errors.As(err, &ue), config.IsConfigError(err), errors.Is(err, report.ErrFormat), errors.Is(err, errBadInput):
		return 2
	case errors.Is(err, sim.ErrInterrupted):
		return 3
	}
	return 1
}

// run executes memix with the command-line arguments args (without the
// program name). Output goes to stdout; diagnostics and the error, if
// any, to stderr. The error is returned for exitCode.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	e := &env{stdout: stdout, stderr: stderr}
	root := &cobra.Command{
		Use:           "memix",
		Short:         "Active inclusions in lipid membranes: flow, mixing and stability on a periodic grid",
		Long:          "memix solves the flow of a lipid membrane over its subphases, driven by active inclusions,\nand reports how it mixes the membrane. Configuration keys: docs/config.md.",
		SilenceErrors: true,
		SilenceUsage:  true,
		RunE: func(cmd *cobra.Command, args []string) error {
			cmd.SetOut(stderr)
			cmd.Usage()
			return usageError{errors.New("no command given")}
		},
	}
	root.SetArgs(args)
	root.SetOut(stdout)
	root.SetErr(stderr)
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return usageError{err} })
	root.CompletionOptions.DisableDefaultCmd = true
	for _, mk := range commands {
		c := mk(e)
		if f := c.RunE; f != nil {
			c.RunE = func(cmd *cobra.Command, args []string) error {
				e.ran = true
				return f(cmd, args)
			}
		}
		root.AddCommand(c)
	}
	err := root.ExecuteContext(ctx)
	if err == nil {
		return nil
	}
	if !e.ran && !errors.As(err, new(usageError)) {
		err = usageError{err} // arguments rejected before the command ran
	}
	fmt.Fprintf(stderr, "memix: %v\n", err)
	if errors.As(err, new(usageError)) {
		fmt.Fprintln(stderr, "Run 'memix help' for usage.")
	}
	return err
}
