package main

import (
	"context"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/reports"
)

type synthOptions struct {
	IO    IO
	Now   func() time.Time
	Out   string
	Truth string
	Force bool
	Synth synth.Options
}

func newSynthCmd(env *Env, runF func(context.Context, *synthOptions) error) *cobra.Command {
	opts := &synthOptions{IO: env.IO, Now: time.Now}
	cmd := &cobra.Command{
		Use:   "synth --out <cohort.csv[.gz]>",
		Short: "Write an invented cohort of any size, for trials and benchmarks",
		Long: `Writes a synthetic long table (one row per window) with planted groups, device offsets and
person-to-person spread. It is invented data, for trying the tool and for benchmarks.

With --scenario N it writes member N of the scenario family instead of the demo's scenario:
its own movement states (random postures, intensities and cadences), its own planted groups of
unequal sizes, devices turned on the wrist and amplitude gains, people who differ in posture and
intensity, short and long bouts and some short recordings; --groups does not apply there.

Exit codes: 0 success, 1 error, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix synth --out big.csv.gz --participants 1000 --windows 10080 --features 24
  $ cohortmix synth --out s7.csv --scenario 7 --participants 200 --windows 2016 --truth s7-truth.csv`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if opts.Synth.Scenario != 0 && cmd.Flags().Changed("groups") {
				return flagErrorf("--groups with --scenario %d: a scenario plants its own groups; leave --groups out", opts.Synth.Scenario)
			}
			if _, err := synth.ParseFamily(string(opts.Synth.Family)); err != nil {
				return flagErrorf("--family %s: use wrist, calib, param, counts, bouts, small or null", opts.Synth.Family)
			}
			if opts.Synth.Scenario != 0 && !cmd.Flags().Changed("features") {
				opts.Synth.Features = 24 // the family's features
			}
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return synthRun(cmd.Context(), opts)
		},
	}
	f := cmd.Flags()
	f.StringVar(&opts.Out, "out", "", "file to write (.gz compresses; .parquet writes Parquet)")
	_ = cmd.MarkFlagRequired("out")
	f.StringVar(&opts.Truth, "truth", "", "also write each participant's planted group here")
	f.IntVar(&opts.Synth.Participants, "participants", 150, "participants")
	f.IntVar(&opts.Synth.Windows, "windows", 1000, "windows per participant")
	f.IntVar(&opts.Synth.Features, "features", 12, "features per window: 12 or 24 (24 with --scenario)")
	f.IntVar(&opts.Synth.Groups, "groups", 3, "planted groups (2–4)")
	f.Uint64Var(&opts.Synth.Seed, "seed", 1, "seed")
	f.Uint64Var(&opts.Synth.Scenario, "scenario", 0, "write member N of the scenario family (0: the demo's scenario)")
	f.StringVar((*string)(&opts.Synth.Family), "family", "wrist", "with --scenario, the family to draw it from: wrist, calib, param, counts, bouts, small or null")
	f.BoolVar(&opts.Synth.Times, "times", false, "ISO-8601 times in the window column")
	f.BoolVar(&opts.Synth.Labels, "labels", false, "add an activity column with each window's true state")
	f.IntVar(&opts.Synth.FirstID, "first-id", 0, "number participants from first-id+1, e.g. for a second enrolment wave")
	f.StringVar(&opts.Synth.IDPrefix, "id-prefix", "P", "prefix of participant ids")
	f.BoolVar(&opts.Force, "force", false, "replace existing files")
	return cmd
}

func synthRun(ctx context.Context, o *synthOptions) error {
	if o.Synth.Participants < 1 || o.Synth.Windows < 1 || (o.Synth.Features != 12 && o.Synth.Features != 24) || o.Synth.Groups < 2 || o.Synth.Groups > 4 {
		return flagErrorf("--participants %d, --windows %d, --features %d, --groups %d: use ≥ 1 participants and windows, 12 or 24 features, 2–4 groups",
			o.Synth.Participants, o.Synth.Windows, o.Synth.Features, o.Synth.Groups)
	}
	outs, err := reports.NewOutputs([]reports.Target{{Flag: "--out", Path: o.Out}, {Flag: "--truth", Path: o.Truth}}, nil, "", o.Force)
	if err != nil {
		return err
	}
	var truth []synth.Truth
	err = outs.Write("--out", func(w io.Writer) (err error) {
		if strings.HasSuffix(o.Out, ".parquet") {
			truth, err = synth.WriteParquet(w, o.Synth)
		} else {
			truth, err = synth.Write(w, o.Synth, strings.HasSuffix(o.Out, ".gz"))
		}
		return err
	})
	if err != nil {
		return err
	}
	if outs.Has("--truth") {
		if err := outs.Write("--truth", truthCSV(truth)); err != nil {
			return err
		}
	}
	if err := outs.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(o.IO.Out, "wrote %s: %d synthetic participants × %d windows × %d features\n", o.Out, o.Synth.Participants, o.Synth.Windows, o.Synth.Features)
	return ctx.Err()
}
