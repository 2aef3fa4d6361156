package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
	"github.com/cohortmix/cohortmix/reports"
)

type groupOptions struct {
	IO     IO
	Now    func() time.Time
	Inputs []string
	Out    string
	Flags  mainFlags
	Args   []string // the command line, for the settings sheet
	// Synthetic marks the input as invented demo data in the workbook.
	Synthetic bool
	plan      *reports.Outputs // the outputs, checked before any work and committed together
	// readOnly are files the run reads besides its inputs (refresh's previous model), which no
	// output may replace.
	readOnly []string
	key      []byte // the pseudonymization key, when one is named
}

func newGroupCmd(env *Env, runF func(context.Context, *groupOptions) error) *cobra.Command {
	opts := &groupOptions{IO: env.IO, Now: time.Now}
	cmd := &cobra.Command{
		Use:   "group <windows.csv>... --out <results.xlsx>",
		Short: "Group participants by their movement mixture",
		Long: `Reads one or more long tables (CSV or TSV, gzip accepted; one row per window), learns movement
states, groups participants by their mixture of states, and writes a workbook.

Exit codes: 0 success, 1 error in the input or the run, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix group study.csv.gz --out results.xlsx --members members.csv --model model.json
  $ cohortmix group site-*.tsv --id subject --order time --states 6 --groups 2-6 --out results.xlsx`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Inputs = args
			opts.Args = append([]string{"cohortmix", "group"}, argsOf(cmd)...)
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return groupRun(cmd.Context(), opts)
		},
	}
	cmd.Flags().StringVar(&opts.Out, "out", "", "the workbook to write (.xlsx)")
	_ = cmd.MarkFlagRequired("out")
	opts.Flags.register(cmd)
	return cmd
}

func argsOf(cmd *cobra.Command) []string {
	var out []string
	cmd.Flags().Visit(func(f *pflag.Flag) { out = append(out, "--"+f.Name+"="+f.Value.String()) })
	return append(out, cmd.Flags().Args()...)
}

// outputs checks every output path before any work, so a refused overwrite costs nothing and a
// mistaken path is found at once.
func (o *groupOptions) outputs() error {
	if !strings.HasSuffix(strings.ToLower(o.Out), ".xlsx") {
		return flagErrorf("--out %q: the workbook needs a name ending in .xlsx", o.Out)
	}
	inputs, _ := cohort.ExpandPaths(o.Inputs) // a bad input is the read's to report
	var err error
	o.plan, err = planOutputs(o.IO, []reports.Target{{Flag: "--out", Path: o.Out}, {Flag: "--members", Path: o.Flags.Members}, {Flag: "--model", Path: o.Flags.Model}},
		append(inputs, o.readOnly...), []reports.Target{{Flag: "--pseudonymize", Path: o.Flags.Pseudonymize}}, o.Flags.Temp, o.Flags.Force)
	return err
}

func groupRun(ctx context.Context, o *groupOptions) error {
	if err := o.outputs(); err != nil {
		return err
	}
	defer o.plan.Abort()
	ao, key, err := o.prepare()
	if err != nil {
		return err
	}
	o.key = key
	res, err := job.Analyze(ctx, ao)
	if err != nil {
		return err
	}
	if key != nil {
		job.MarkPseudonymized(res) // the ids were replaced as they were read
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	res.Tool, res.Version, res.Created, res.Synthetic = "cohortmix", version, o.Now(), o.Synthetic
	res.Command = strings.Join(o.Args, " ")
	res.Settings = o.Flags.settings()
	if err := o.write(res, ao.Read, ao.FitSettings()); err != nil {
		return err
	}
	printSummary(o.IO, res, o.Out)
	return nil
}

// prepare turns the flags into the analysis settings, with progress on a terminal, temporary
// files beside the output unless --temp says otherwise, and the pseudonymization key if named.
func (o *groupOptions) prepare() (job.Options, []byte, error) {
	if o.Flags.Temp == "" {
		o.Flags.Temp = filepath.Dir(o.Out)
	}
	ao, err := o.Flags.options(o.Inputs)
	if err != nil {
		return ao, nil, err
	}
	ao.Progress = progress(&Env{IO: o.IO}, o.Flags.Quiet, o.Now)
	ao.Read.Progress = readBar(&Env{IO: o.IO}, o.Flags.Quiet)
	ao.Passes = passBar(&Env{IO: o.IO}, o.Flags.Quiet)
	ao.Steps = stepBar(&Env{IO: o.IO}, o.Flags.Quiet)
	key, err := loadKey(o.Flags.Pseudonymize)
	pseudonymAtRead(&ao.Read, key)
	return ao, key, err
}

// pseudonymAtRead has the reader replace every id by its pseudonym under the key, when there is
// one, so that no study id reaches a temporary file, a piece or an output.
func pseudonymAtRead(ro *cohort.ReadOptions, key []byte) {
	if key == nil {
		return
	}
	ro.Pseudonym = func(id string) string { return pseudonym.Of(key, id) }
	ro.Pseudonyms = pseudonym.Fingerprint(key)
}

// write writes the workbook and, when asked for, the members CSV and the model file, each to a
// temporary file, and puts them all in place together.
func (o *groupOptions) write(res *reports.Result, read cohort.ReadOptions, fit *modelfile.FitSettings) error {
	inFlagWords(res)
	if err := o.plan.Write("--out", func(w io.Writer) error { return reports.WorkbookTo(w, res) }); err != nil {
		return err
	}
	if o.plan.Has("--members") {
		if err := o.plan.Write("--members", func(w io.Writer) error { return reports.MembersTo(w, res) }); err != nil {
			return err
		}
	}
	if o.plan.Has("--model") {
		m := job.NewModel(res, read, res.FeatureRange)
		m.Fit = fit
		if o.key != nil {
			m.Pseudonymized, m.KeyFingerprint = true, pseudonym.Fingerprint(o.key)
		}
		if err := o.plan.Write("--model", func(w io.Writer) error { return modelfile.Encode(w, m) }); err != nil {
			return err
		}
	}
	return o.plan.Commit()
}

// loadKey reads the pseudonymization key when one is named.
func loadKey(path string) ([]byte, error) {
	if path == "" {
		return nil, nil
	}
	return pseudonym.LoadKey(path)
}

func printSummary(io IO, r *reports.Result, out string) {
	c := r.Counts()
	people := ""
	if c.Waves {
		people = fmt.Sprintf(" of %d people", c.PeopleGrouped)
	}
	groups := fmt.Sprintf("%d groups", r.Grouping.K)
	if r.Grouping.K == 1 {
		groups = "no distinct groups"
	}
	fmt.Fprintf(io.Out, "%d %s%s grouped (%d excluded), %d movement states, %s → %s\n", c.Grouped, reports.UnitWord(c, c.Grouped), people, c.Excluded, r.States.K, groups, out)
	sizes := map[int]int{}
	for _, u := range r.Units {
		sizes[u.Group]++
	}
	keys := make([]int, 0, len(sizes))
	for g := range sizes {
		keys = append(keys, g)
	}
	sort.Ints(keys)
	lines := reports.GroupLines(r)
	for _, g := range keys {
		fmt.Fprintf(io.Out, "  %s: %s\n", r.GroupNames[g], lines[g])
	}
	for _, w := range r.Warnings {
		fmt.Fprintln(io.Out, "warning: "+reports.NoteWords(r, w))
	}
	if r.WindowLength == 0 { // for the analyst; the clinician's page says only that bouts are in windows
		fmt.Fprintln(io.Out, "note: the window length is not known, so bout lengths are in windows; give it with --window-length, or times in the order column, for minutes")
	}
}
