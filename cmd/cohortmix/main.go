// Command cohortmix groups the participants of a wearable-accelerometer study by how they move,
// and writes the result as a workbook for clinicians, a members CSV and a model file.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/pprof"
	"strings"
	"syscall"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// version is the tool's version, shown in every workbook and model file.
const version = "0.1.0"

// IO is where a command reads and writes; tests pass buffers.
type IO struct {
	In       io.Reader
	Out, Err io.Writer
	ErrIsTTY bool // draw progress on Err only when it is a terminal
}

// Env is what every command gets from main.
type Env struct{ IO IO }

// flagError is a problem with the command line; only these print the usage.
type flagError struct{ err error }

func (e *flagError) Error() string { return e.err.Error() }
func (e *flagError) Unwrap() error { return e.err }

func flagErrorf(format string, a ...any) error { return &flagError{fmt.Errorf(format, a...)} }

func newRootCmd(env *Env) *cobra.Command {
	root := &cobra.Command{
		Use:   "cohortmix",
		Short: "Group study participants by their mixture of movement states",
		Long: `cohortmix reads per-window accelerometer features of a study's participants, learns movement
states from windows pooled across everyone, describes each participant by the share of time in
each state, groups participants with similar mixtures, and writes a workbook for clinicians.

The groups describe movement statistically; they are not diagnoses. The tool opens no network
connection.

Exit codes: 0 success, 1 error in the input or the run, 2 wrong command line, 130 interrupted.`,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetOut(env.IO.Out)
	root.SetErr(env.IO.Err)
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error { return &flagError{err} })
	root.AddCommand(newGroupCmd(env, nil), newCheckCmd(env, nil), newAssignCmd(env, nil), newRefreshCmd(env, nil), newDemoCmd(env, nil), newSynthCmd(env, nil), newShardCmd(env, nil), newFeaturesCmd(env, nil))
	for _, c := range root.Commands() {
		commandLineErrors(c)
	}
	return root
}

// commandLineErrors makes every mistake in a command's arguments and required flags a
// flagError, so that it prints the usage and exits 2 as --help says.
func commandLineErrors(c *cobra.Command) {
	if args := c.Args; args != nil {
		c.Args = func(cmd *cobra.Command, a []string) error {
			if err := args(cmd, a); err != nil {
				if strings.Contains(cmd.Use, "<windows.csv>") {
					return flagErrorf("%v: name the tables to read (CSV, TSV, .xlsx or .parquet files, a folder or a quoted glob)", err)
				}
				return &flagError{err}
			}
			return nil
		}
	}
	var required []string
	c.Flags().VisitAll(func(f *pflag.Flag) {
		if ann := f.Annotations[cobra.BashCompOneRequiredFlag]; len(ann) > 0 && ann[0] == "true" {
			required = append(required, f.Name)
			delete(f.Annotations, cobra.BashCompOneRequiredFlag) // checked here instead, as a flagError
		}
	})
	if len(required) == 0 {
		return
	}
	pre := c.PreRunE
	c.PreRunE = func(cmd *cobra.Command, a []string) error {
		for _, name := range required {
			if !cmd.Flags().Changed(name) {
				return flagErrorf("--%s is required: %s", name, cmd.Flags().Lookup(name).Usage)
			}
		}
		if pre != nil {
			return pre(cmd, a)
		}
		return nil
	}
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	st, _ := os.Stderr.Stat()
	env := &Env{IO: IO{In: os.Stdin, Out: os.Stdout, Err: os.Stderr, ErrIsTTY: st != nil && st.Mode()&os.ModeCharDevice != 0}}
	// COHORTMIX_CPUPROFILE names a file for a CPU profile of the run (for 'go tool pprof'); a
	// developer's aid, documented in the README.
	if p := os.Getenv("COHORTMIX_CPUPROFILE"); p != "" {
		if f, err := os.Create(p); err == nil && pprof.StartCPUProfile(f) == nil {
			code := run(ctx, env, os.Args[1:])
			pprof.StopCPUProfile()
			f.Close()
			os.Exit(code)
		}
	}
	os.Exit(run(ctx, env, os.Args[1:]))
}

// run executes the command line and maps errors to exit codes.
func run(ctx context.Context, env *Env, args []string) int {
	root := newRootCmd(env)
	root.SetArgs(args)
	if _, _, err := root.Find(args); err != nil { // an unknown command
		fmt.Fprintln(env.IO.Err, "cohortmix: "+err.Error())
		fmt.Fprintln(env.IO.Err, "Run 'cohortmix --help' for usage.")
		return 2
	}
	err := root.ExecuteContext(ctx)
	if err == nil {
		return 0
	}
	var fe *flagError
	switch {
	case errors.Is(err, context.Canceled) || ctx.Err() != nil:
		fmt.Fprintln(env.IO.Err, "cohortmix: interrupted; no output was written")
		return 130
	case errors.As(err, &fe):
		fmt.Fprintln(env.IO.Err, "cohortmix: "+userWords(err.Error()))
		fmt.Fprintln(env.IO.Err, "Run 'cohortmix --help' for usage.")
		return 2
	default:
		fmt.Fprintln(env.IO.Err, "cohortmix: "+userWords(err.Error()))
		return 1
	}
}
