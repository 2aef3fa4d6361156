package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/reports"
)

type assignOptions struct {
	IO      IO
	Now     func() time.Time
	Model   string
	Inputs  []string
	Out     string
	Members string
	Force   bool
	Quiet   bool
	Workers int
	Key     string
	Temp    string
	Args    []string
	Window  time.Duration
	// How to read the new data, where it differs from the model's (empty: the model's).
	ID, Order, Wave, Missing string
	MinWindows               int
}

func newAssignCmd(env *Env, runF func(context.Context, *assignOptions) error) *cobra.Command {
	opts := &assignOptions{IO: env.IO, Now: time.Now}
	cmd := &cobra.Command{
		Use:   "assign --model <model.json> <windows.csv>... --out <wave.xlsx>",
		Short: "Place new data into the states and groups of a model, without refitting",
		Long: `Applies a model's frozen normalization, states and group centres to new data: every window gets
a state, every participant (new, or a returning one in a new wave) a signature and the nearest
group with its distance. Participants farther from every group than 99% of the members the model
was fitted on are marked atypical. Features the model needs must be present; extra features are
ignored and listed, and a feature whose level changed a lot is reported.

Exit codes: 0 success, 1 error in the input or the run, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix assign --model model.json wave2.csv --out wave2.xlsx --members wave2-members.csv`,
		Args:    cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Inputs = args
			opts.Args = append([]string{"cohortmix", "assign"}, argsOf(cmd)...)
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return assignRun(cmd.Context(), opts)
		},
	}
	f := cmd.Flags()
	f.StringVar(&opts.Model, "model", "", "the model file written by 'cohortmix group --model'")
	f.StringVar(&opts.Out, "out", "", "the workbook to write (.xlsx)")
	f.StringVar(&opts.Members, "members", "", "also write a CSV here: participant, wave, group, probability of the group, silhouette, flag")
	f.BoolVar(&opts.Force, "force", false, "replace existing output files")
	f.BoolVar(&opts.Quiet, "quiet", false, "print only the final summary")
	f.IntVar(&opts.Workers, "workers", 0, "worker goroutines (0: all cores)")
	f.StringVar(&opts.Temp, "temp", "", "folder for temporary files of large inputs (default: the folder of --out)")
	f.DurationVar(&opts.Window, "window-length", 0, "the length of one window, e.g. 60s, for bout lengths in minutes (default: from the order column's times, when it holds times)")
	f.StringVar(&opts.Key, "pseudonymize", "", "replace participant ids by a keyed hash (use the key the model was written with)")
	f.StringVar(&opts.ID, "id", "", "participant id column (default: the model's)")
	f.StringVar(&opts.Order, "order", "", "window order column, or - for the file's row order (default: the model's)")
	f.StringVar(&opts.Wave, "wave", "", "visit column: a participant's waves are placed apart (default: the model's)")
	f.StringVar(&opts.Missing, "missing", "", "missing feature cells: drop (the window) or impute (the participant's median) (default: the model's)")
	f.IntVar(&opts.MinWindows, "min-windows", 0, "exclude participants with fewer usable windows (default: the model's)")
	_ = cmd.MarkFlagRequired("model")
	_ = cmd.MarkFlagRequired("out")
	return cmd
}

func assignRun(ctx context.Context, o *assignOptions) error {
	if !strings.HasSuffix(strings.ToLower(o.Out), ".xlsx") {
		return flagErrorf("--out %q: the workbook needs a name ending in .xlsx", o.Out)
	}
	inputs, _ := cohort.ExpandPaths(o.Inputs) // a bad input is the read's to report
	plan, err := planOutputs(o.IO, []reports.Target{{Flag: "--out", Path: o.Out}, {Flag: "--members", Path: o.Members}},
		inputs, []reports.Target{{Flag: "--model", Path: o.Model}, {Flag: "--pseudonymize", Path: o.Key}}, o.Temp, o.Force)
	if err != nil {
		return err
	}
	defer plan.Abort()
	m, err := modelfile.ReadFile(o.Model)
	if err != nil {
		return err
	}
	if o.Temp == "" {
		o.Temp = filepath.Dir(o.Out)
	}
	key, err := loadKey(o.Key)
	if err != nil {
		return err
	}
	if err := m.CheckKey(o.Model, o.Key, key); err != nil {
		return err
	}
	ro, err := o.readOptions(m)
	if err != nil {
		return err
	}
	t, extra, err := readForModel(ctx, o.Inputs, m, ro)
	if err != nil {
		return err
	}
	defer t.Close()
	res, err := job.Assign(ctx, t, m, job.AssignOptions{Model: o.Model, Extra: extra, Key: key, Window: o.Window, Workers: o.Workers, Progress: passBar(&Env{IO: o.IO}, o.Quiet)})
	if err != nil {
		return err
	}
	res.Tool, res.Version, res.Created = "cohortmix", version, o.Now()
	res.Command = strings.Join(o.Args, " ")
	res.Settings = append([]modelfile.Setting{{Name: "mode", Value: "assign (no refitting)"}, {Name: "model", Value: o.Model}}, res.Settings...)
	if err := ctx.Err(); err != nil {
		return err
	}
	inFlagWords(res)
	if err := plan.Write("--out", func(w io.Writer) error { return reports.WorkbookTo(w, res) }); err != nil {
		return err
	}
	if plan.Has("--members") {
		if err := plan.Write("--members", func(w io.Writer) error { return reports.MembersTo(w, res) }); err != nil {
			return err
		}
	}
	if err := plan.Commit(); err != nil {
		return err
	}
	c := res.Counts()
	fmt.Fprintf(o.IO.Out, "%d %s placed with %s: %d in a group, %d atypical (in no group), %d excluded → %s\n", c.UnitsIn, reports.UnitWord(c, c.UnitsIn), o.Model, c.Grouped, c.Atypical, c.Excluded, o.Out)
	for _, w := range res.Warnings {
		fmt.Fprintln(o.IO.Out, "warning: "+reports.NoteWords(res, w))
	}
	return nil
}

// readOptions are the model's reading settings, with the flags given over them: a later wave
// may name its columns otherwise.
func (o *assignOptions) readOptions(m *modelfile.Model) (cohort.ReadOptions, error) {
	ro := m.Read.ReadOptions()
	ro.TempDir = o.Temp
	for _, set := range []struct {
		flag string
		dst  *string
	}{{o.ID, &ro.ID}, {o.Order, &ro.Order}, {o.Wave, &ro.Wave}} {
		if set.flag != "" {
			*set.dst = set.flag
		}
	}
	if o.MinWindows > 0 {
		ro.MinWindows = o.MinWindows
	}
	if o.Missing != "" {
		var err error
		if ro.Missing, err = parseMissing(o.Missing); err != nil {
			return ro, err
		}
	}
	return ro, nil
}

// readForModel reads new data with the given reading settings and keeps the model's features, in
// its order; a feature the model needs and the input lacks is an error that names it.
func readForModel(ctx context.Context, inputs []string, m *modelfile.Model, ro cohort.ReadOptions) (*cohort.Table, []string, error) {
	t, err := cohort.Read(ctx, inputs, ro)
	if err != nil {
		return nil, nil, err
	}
	idx := make([]int, len(m.Features))
	for j, name := range m.Features {
		idx[j] = slices.Index(t.Features, name)
		if idx[j] < 0 {
			why := "is not in the input"
			for _, n := range t.Quality.DroppedFeatures {
				if n.Name == name {
					why = "is " + reports.NoteWords(nil, n.Reason)
				}
			}
			t.Close()
			return nil, nil, fmt.Errorf("%s: feature %s, which the model needs, %s; add the column (the model was fitted on: %s): %w",
				inputs[0], name, why, strings.Join(m.Features, ", "), cohort.ErrMismatch)
		}
	}
	var extra []string
	for _, name := range t.Features {
		if !slices.Contains(m.Features, name) {
			extra = append(extra, name)
		}
	}
	if err := t.SelectFeatures(m.Features); err != nil {
		t.Close()
		return nil, nil, err
	}
	return t, extra, nil
}
