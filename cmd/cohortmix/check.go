package main

import (
	"context"
	"fmt"
	"time"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/reports"
)

type checkOptions struct {
	IO     IO
	Now    func() time.Time
	Inputs []string
	Flags  mainFlags
}

func newCheckCmd(env *Env, runF func(context.Context, *checkOptions) error) *cobra.Command {
	opts := &checkOptions{IO: env.IO, Now: time.Now}
	cmd := &cobra.Command{
		Use:   "check <windows.csv>...",
		Short: "Read and check input tables without analysing them",
		Long: `Reads the tables with the same column roles and rules as 'group' and reports what it found: files,
windows, participants, features, and everything that would be excluded or dropped, with the time
the read took. Use it to find problems in the data before a long run.

Exit codes: 0 the tables can be analysed, 1 an error in the input or too few participants left
to group, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix check site-*.csv.gz --id subject --order time`,
		Args:    cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Inputs = args
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return checkRun(cmd.Context(), opts)
		},
	}
	opts.Flags.registerRead(cmd)
	return cmd
}

func checkRun(ctx context.Context, o *checkOptions) error {
	ro, err := o.Flags.readOptions()
	if err != nil {
		return err
	}
	ro.Progress = readBar(&Env{IO: o.IO}, o.Flags.Quiet)
	start := o.Now()
	t, err := cohort.Read(ctx, o.Inputs, ro)
	if err != nil {
		return err
	}
	defer t.Close()
	took := o.Now().Sub(start)
	var bytes int64
	for _, f := range t.Files {
		bytes += f.Bytes
	}
	// The features group would leave out as twins of another (job's plan), with the reason.
	jo := job.Defaults(o.Inputs...)
	jo.Read = ro
	if c, err := job.CensusOf(t, jo); err == nil {
		if plan, err := job.MergeCensus([]*job.Census{c}); err == nil {
			t.Quality.DroppedFeatures = plan.Quality.DroppedFeatures
			t.Features = plan.Features
		}
	}
	q := t.Quality
	fmt.Fprintf(o.IO.Out, "%d files, %.1f MB, read in %.2f s (%.0f MB/s)\n", len(t.Files), float64(bytes)/1e6, took.Seconds(), float64(bytes)/1e6/max(took.Seconds(), 1e-9))
	for _, f := range t.Files {
		if f.Delimiter != "" {
			fmt.Fprintf(o.IO.Out, "  %s: read as %s-separated, with a decimal %s\n", f.Path, f.Delimiter, f.Decimal)
		}
	}
	fmt.Fprintf(o.IO.Out, "%d windows: %d usable, %d dropped for missing cells, %d left out as non-wear, %d on days that were not valid, %d in excluded participants; %d cells imputed\n",
		q.WindowsIn, q.WindowsUsed(), q.WindowsDropped, q.WindowsNonWear, q.WindowsInvalidDays, q.WindowsExcluded, q.CellsImputed)
	fmt.Fprintf(o.IO.Out, "%d participants: %d usable, %d excluded\n", q.UnitsIn, len(t.Units), len(q.Excluded))
	fmt.Fprintf(o.IO.Out, "%d features: %v\n", len(t.Features), t.Features)
	for _, e := range q.Excluded {
		fmt.Fprintf(o.IO.Out, "  excluded %s%s: %s\n", e.ID, waveNote(e.Wave), userWords(reports.NoteWords(nil, e.Reason)))
	}
	for _, n := range append(q.DroppedFeatures, q.IgnoredColumns...) {
		fmt.Fprintf(o.IO.Out, "  not used %s: %s\n", n.Name, userWords(reports.NoteWords(nil, n.Reason)))
	}
	for _, n := range q.Notes {
		fmt.Fprintf(o.IO.Out, "  note: %s\n", userWords(reports.NoteWords(nil, n)))
	}
	if len(t.Units) < 3 {
		return fmt.Errorf("%s: %d participants can be grouped (%d excluded, see above): %w; grouping needs at least 3", o.Inputs[0], len(t.Units), len(q.Excluded), cohort.ErrTooFew)
	}
	fmt.Fprintln(o.IO.Out, "the tables can be analysed")
	return nil
}

func waveNote(w string) string {
	if w == "" {
		return ""
	}
	return " (wave " + w + ")"
}
