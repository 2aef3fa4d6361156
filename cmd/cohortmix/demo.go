package main

import (
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
	"github.com/cohortmix/cohortmix/cohort/scratch"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/reports"
)

type demoOptions struct {
	IO    IO
	Now   func() time.Time
	Dir   string
	Raw   bool // begin from raw recordings, through the features step
	Flags mainFlags
	Synth synth.Options
}

func newDemoCmd(env *Env, runF func(context.Context, *demoOptions) error) *cobra.Command {
	opts := &demoOptions{IO: env.IO, Now: time.Now}
	cmd := &cobra.Command{
		Use:   "demo --dir <folder>",
		Short: "Write an invented demo cohort and analyse it",
		Long: `Writes a synthetic cohort (an invented occupational study: adults wearing a wrist device over
working days, with three planted groups, device offsets and person-to-person spread) into a
folder, runs the same analysis as 'group' on it, and compares the groups found with the planted ones.
Everything in the demo is invented; no real person's data is in it.

Exit codes: 0 success, 1 error, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix demo --dir demo
  $ cohortmix demo --dir demo --force --within none   # see what the within-participant step buys`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return demoRun(cmd.Context(), opts)
		},
	}
	cmd.Flags().StringVar(&opts.Dir, "dir", "", "folder for the demo cohort and its results")
	_ = cmd.MarkFlagRequired("dir")
	cmd.Flags().IntVar(&opts.Synth.Participants, "participants", 150, "invented participants")
	cmd.Flags().IntVar(&opts.Synth.Windows, "windows", 1000, "one-minute windows per participant")
	cmd.Flags().BoolVar(&opts.Raw, "raw", false, "begin from invented raw recordings (40 participants, 3 hours at 10 Hz): the features step, then the grouping")
	opts.Flags.register(cmd)
	return cmd
}

func demoRun(ctx context.Context, o *demoOptions) error {
	if err := os.MkdirAll(o.Dir, 0o755); err != nil {
		return fmt.Errorf("%s: cannot create the demo folder: %w", o.Dir, err)
	}
	if o.Raw {
		return demoRaw(ctx, o)
	}
	data := filepath.Join(o.Dir, "demo-cohort.csv")
	truthPath := filepath.Join(o.Dir, "demo-planted-groups.csv")
	g := &groupOptions{IO: o.IO, Now: o.Now, Inputs: []string{data}, Out: filepath.Join(o.Dir, "demo-results.xlsx"), Flags: o.Flags, Synthetic: true}
	if g.Flags.Label == "" {
		g.Flags.Label = "activity"
	}
	if g.Flags.WindowLength == 0 && !o.Synth.Times {
		g.Flags.WindowLength = time.Minute // the demo's windows are one minute long
	}
	if g.Flags.Members == "" {
		g.Flags.Members = filepath.Join(o.Dir, "demo-members.csv")
	}
	if g.Flags.Model == "" {
		g.Flags.Model = filepath.Join(o.Dir, "demo-model.json")
	}
	g.Args = []string{"cohortmix", "group", data, "--label", g.Flags.Label, "--window-length", g.Flags.WindowLength.String(), "--out", g.Out}
	cohortFiles, err := reports.NewOutputs([]reports.Target{{Flag: "the demo cohort", Path: data}, {Flag: "the planted groups", Path: truthPath}}, nil, "", o.Flags.Force)
	if err != nil {
		return err
	}
	if err := g.outputs(); err != nil {
		cohortFiles.Abort()
		return err
	}
	so := o.Synth
	so.Seed, so.Labels = o.Flags.Seed, true
	var truth []synth.Truth
	err = cohortFiles.Write("the demo cohort", func(w io.Writer) (err error) {
		truth, err = synth.Write(w, so, false)
		return err
	})
	if err != nil {
		return err
	}
	if err := cohortFiles.Write("the planted groups", truthCSV(truth)); err != nil {
		return err
	}
	if err := cohortFiles.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(o.IO.Out, "wrote the synthetic demo cohort %s (%d invented participants × %d windows)\n", data, len(truth), so.Windows)
	if err := groupRun(ctx, g); err != nil {
		return err
	}
	if g.Flags.Pseudonymize != "" {
		key, err := loadKey(g.Flags.Pseudonymize)
		if err != nil {
			return err
		}
		for i := range truth {
			truth[i].ID = pseudonym.Of(key, truth[i].ID)
		}
	}
	ari, err := compareMembers(g.Flags.Members, truth)
	if err != nil {
		return err
	}
	fmt.Fprintf(o.IO.Out, "agreement with the planted groups: adjusted Rand index %.3f\n", ari)
	return nil
}

// truthCSV writes the planted groups as CSV: participant, planted_group (1-based).
func truthCSV(truth []synth.Truth) func(io.Writer) error {
	return func(w io.Writer) error {
		cw := csv.NewWriter(w)
		_ = cw.Write([]string{"participant", "planted_group"})
		for _, t := range truth {
			_ = cw.Write([]string{t.ID, strconv.Itoa(t.Group + 1)})
		}
		cw.Flush()
		return cw.Error()
	}
}

// compareMembers reads the members CSV back and compares it with the planted groups.
func compareMembers(path string, truth []synth.Truth) (float64, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		return 0, fmt.Errorf("%s: %w", path, err)
	}
	found := map[string]string{}
	for _, r := range recs[1:] {
		found[r[0]] = r[2]
	}
	var a, b []int
	names := map[string]int{}
	for _, t := range truth {
		g, ok := found[t.ID]
		if !ok || g == "" {
			continue
		}
		if _, ok := names[g]; !ok {
			names[g] = len(names)
		}
		a = append(a, t.Group)
		b = append(b, names[g])
	}
	return cluster.AdjustedRand(a, b)
}

// demoRaw is the demo from raw recordings: invented recordings of a wrist device (synth.WriteRaw),
// the features step, and the grouping of its windows, compared with the planted groups.
func demoRaw(ctx context.Context, o *demoOptions) error {
	recs := filepath.Join(o.Dir, "raw-recordings")
	windows := filepath.Join(o.Dir, "demo-windows.csv")
	if _, err := os.Stat(recs); err == nil && !o.Flags.Force {
		return fmt.Errorf("%s: %w; pass --force to write the demo again, or choose another --dir", recs, scratch.ErrExists)
	}
	raws, err := synth.WriteRaw(recs, synth.RawOptions{Participants: 40, Hours: 3, Rate: 10, Seed: o.Flags.Seed})
	if err != nil {
		return err
	}
	fmt.Fprintf(o.IO.Out, "wrote %d invented raw recordings (synthetic: 3 hours at 10 Hz each) into %s\n", len(raws), recs)
	fo := &featuresOptions{IO: o.IO, Inputs: []string{recs}, Out: windows, Calibration: "on", Force: o.Flags.Force}
	fo.Raw.Window = time.Minute
	if err := featuresRun(ctx, fo); err != nil {
		return err
	}
	g := &groupOptions{IO: o.IO, Now: o.Now, Inputs: []string{windows}, Out: filepath.Join(o.Dir, "demo-results.xlsx"), Flags: o.Flags, Synthetic: true}
	// The invented study's protocol is one session of 3 hours, not days of wear: no valid-day rule.
	g.Flags.ValidDay = "none"
	if g.Flags.Members == "" {
		g.Flags.Members = filepath.Join(o.Dir, "demo-members.csv")
	}
	if g.Flags.Model == "" {
		g.Flags.Model = filepath.Join(o.Dir, "demo-model.json")
	}
	g.Args = []string{"cohortmix", "group", windows, "--valid-day", "none", "--out", g.Out}
	if err := g.outputs(); err != nil {
		return err
	}
	if err := groupRun(ctx, g); err != nil {
		return err
	}
	truth := make([]synth.Truth, len(raws))
	for i, r := range raws {
		truth[i] = synth.Truth{ID: r.ID, Group: r.Group}
	}
	ari, err := compareMembers(g.Flags.Members, truth)
	if err != nil {
		return err
	}
	fmt.Fprintf(o.IO.Out, "agreement with the planted groups: adjusted Rand index %.3f\n", ari)
	return nil
}
