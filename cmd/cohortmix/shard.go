package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/cohort/pseudonym"
	"github.com/cohortmix/cohortmix/reports"
)

// shardOptions are the settings of one step of a run split in shards.
type shardOptions struct {
	IO     IO
	Now    func() time.Time
	Step   string   // split, census, plan, sample, fit, assign, finish or run
	Args   []string // the tables (census, run) or the pieces to merge (plan, fit, finish)
	Shard  string   // "I/N": this step's shard, from 1 (census, sample, assign)
	Shards int      // split, run: how many shards
	Piece  string   // the piece this step writes
	Plan   string   // the plan piece (sample, fit)
	Fit    string   // the fit piece (assign, finish)
	Pieces string   // run: the folder for the pieces
	// Windows is the shard's windows file: written by census, read by sample and assign
	// instead of every input file (optional).
	Windows string
	// WindowsDir is the folder split writes every shard's windows file and sample piece to
	// (windows-I.piece, sample-I.piece).
	WindowsDir string
	// Split makes run read the inputs once (split) instead of once per shard (census, plan and
	// sample).
	Split bool
	Out   string // finish, run: the workbook
	Flags mainFlags
	argv  []string // the command line, for the settings sheet
}

const shardLong = `A run split in shards gives the result of 'group' bit for bit (members, model and workbook,
apart from the date and the command line), for any number of shards: participants are split by
a hash of their id, each census reads the whole input and keeps one shard (with --windows-file it
writes that shard's windows for its sample and assign steps), and the pieces are merged in the
order the participants first appear. It takes the align step (the default).

The steps, each a command that a workflow engine can run on another machine:
  split   (once)        reads the inputs once: the plan and every shard's windows file and
                        sample piece, in place of census, plan and sample (one read in all,
                        on one machine)
  census  (each shard)  who is in the input, what is left out and why      → census piece
  plan    (once)        merges the census pieces                           → plan piece
  sample  (each shard)  the windows drawn to fit the states                 → sample piece
  fit     (once)        scaling, devices and movement states from the sample → fit piece
  assign  (each shard)  each window's state, each participant's signature   → assignment piece
  finish  (once)        groups the participants, writes the workbook, members and model
'run' runs every step here, one after another. Pieces hold participant data: keep them where the
study's data-protection rules allow, and remove them when the run is done.

Exit codes: 0 success, 1 error in the input or the run, 2 wrong command line, 130 interrupted.`

func newShardCmd(env *Env, runF func(context.Context, *shardOptions) error) *cobra.Command {
	root := &cobra.Command{
		Use:   "shard",
		Short: "Run the job split in shards of participants, step by step (for a cluster)",
		Long:  shardLong,
		Example: `  $ cohortmix shard run study.csv.gz --shards 4 --pieces pieces/ --out results.xlsx --members members.csv
  $ cohortmix shard split study.csv.gz --shards 4 --piece pieces/plan.piece --windows-dir pieces/
  $ cohortmix shard census study.csv.gz --shard 2/4 --piece pieces/census-2.piece --windows-file pieces/windows-2.piece
  $ cohortmix shard plan pieces/census-*.piece --piece pieces/plan.piece
  $ cohortmix shard sample --plan pieces/plan.piece --windows-file pieces/windows-2.piece --shard 2/4 --piece pieces/sample-2.piece
  $ cohortmix shard fit --plan pieces/plan.piece pieces/sample-*.piece --piece pieces/fit.piece
  $ cohortmix shard assign --fit pieces/fit.piece --windows-file pieces/windows-2.piece --shard 2/4 --piece pieces/assign-2.piece
  $ cohortmix shard finish --fit pieces/fit.piece pieces/assign-*.piece --out results.xlsx --members members.csv`,
		Args: cobra.ArbitraryArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if len(args) > 0 {
				return flagErrorf("unknown step %q for 'cohortmix shard': the steps are census, plan, sample, fit, assign, finish and run", args[0])
			}
			return cmd.Help()
		},
	}
	step := func(name, use, short string, args cobra.PositionalArgs, flags func(*cobra.Command, *shardOptions)) {
		o := &shardOptions{IO: env.IO, Now: time.Now, Step: name}
		c := &cobra.Command{Use: use, Short: short, Long: short + ".\n\n" + shardLong, Args: args,
			RunE: func(cmd *cobra.Command, a []string) error {
				o.Args = a
				o.argv = append([]string{"cohortmix", "shard", name}, argsOf(cmd)...)
				if runF != nil {
					return runF(cmd.Context(), o)
				}
				return shardRun(cmd.Context(), o)
			}}
		flags(c, o)
		root.AddCommand(c)
	}
	addShardSteps(step)
	for _, c := range root.Commands() {
		commandLineErrors(c)
	}
	return root
}

// shardStep registers one step of shard: its name, usage, short help, arguments and flags.
type shardStep func(name, use, short string, args cobra.PositionalArgs, flags func(*cobra.Command, *shardOptions))

// addShardSteps registers shard's steps in the order they run.
func addShardSteps(step shardStep) {
	step("census", "census <windows.csv>... --shard I/N --piece <census.piece>", "Count one shard's participants and what was left out (every setting of the run is given here)",
		cobra.MinimumNArgs(1), func(c *cobra.Command, o *shardOptions) {
			o.Flags.register(c)
			for _, name := range []string{"members", "model", "pseudonymize", "force", "workers"} {
				c.Flags().Lookup(name).Hidden = true // given to finish, or to every step
			}
			c.Flags().StringVar(&o.Shard, "shard", "", "this step's shard and their number, I/N with I from 1 to N")
			_ = c.MarkFlagRequired("shard")
			c.Flags().StringVar(&o.Piece, "piece", "", "the piece file to write")
			_ = c.MarkFlagRequired("piece")
			c.Flags().StringVar(&o.Windows, "windows-file", "", "also write the shard's windows to this file, for sample and assign to read instead of every input file")
		})
	step("split", "split <windows.csv>... --shards N --piece <plan.piece> --windows-dir <folder>", "Read the inputs once and write the run's plan and every shard's windows file and sample piece (windows-I.piece, sample-I.piece), in place of census, plan and sample",
		cobra.MinimumNArgs(1), func(c *cobra.Command, o *shardOptions) {
			o.Flags.register(c)
			for _, name := range []string{"members", "model", "pseudonymize", "force"} {
				c.Flags().Lookup(name).Hidden = true // given to finish, or to every step
			}
			c.Flags().IntVar(&o.Shards, "shards", 2, "how many shards")
			c.Flags().StringVar(&o.Piece, "piece", "", "the plan piece to write")
			_ = c.MarkFlagRequired("piece")
			c.Flags().StringVar(&o.WindowsDir, "windows-dir", "", "the folder to write each shard's windows file and sample piece to, as windows-I.piece and sample-I.piece (default: the folder of --piece)")
		})
	step("plan", "plan <census.piece>... --piece <plan.piece>", "Merge every shard's census into the plan of the run", cobra.MinimumNArgs(1), pieceFlags)
	step("sample", "sample --plan <plan.piece> --shard I/N --piece <sample.piece>", "Draw one shard's windows for the fit", cobra.NoArgs,
		func(c *cobra.Command, o *shardOptions) {
			c.Flags().StringVar(&o.Plan, "plan", "", "the plan piece")
			_ = c.MarkFlagRequired("plan")
			c.Flags().StringVar(&o.Flags.Temp, "temp", "", "folder for temporary files of large inputs (default: the folder of --piece)")
			shardFlags(c, o)
			pieceFlags(c, o)
		})
	step("fit", "fit --plan <plan.piece> <sample.piece>... --piece <fit.piece>", "Fit the scaling, the devices and the movement states on every shard's sample", cobra.MinimumNArgs(1),
		func(c *cobra.Command, o *shardOptions) {
			c.Flags().StringVar(&o.Plan, "plan", "", "the plan piece")
			_ = c.MarkFlagRequired("plan")
			c.Flags().IntVar(&o.Flags.Workers, "workers", 0, "worker goroutines (0: all cores); never changes the result")
			pieceFlags(c, o)
		})
	step("assign", "assign --fit <fit.piece> --shard I/N --piece <assign.piece>", "Give one shard's windows their states and its participants their signatures", cobra.NoArgs,
		func(c *cobra.Command, o *shardOptions) {
			c.Flags().StringVar(&o.Fit, "fit", "", "the fit piece")
			_ = c.MarkFlagRequired("fit")
			c.Flags().StringVar(&o.Flags.Temp, "temp", "", "folder for temporary files of large inputs (default: the folder of --piece)")
			shardFlags(c, o)
			pieceFlags(c, o)
		})
	step("finish", "finish --fit <fit.piece> <assign.piece>... --out <results.xlsx>", "Group the participants from every shard's assignment and write the outputs", cobra.MinimumNArgs(1),
		func(c *cobra.Command, o *shardOptions) {
			c.Flags().StringVar(&o.Fit, "fit", "", "the fit piece")
			_ = c.MarkFlagRequired("fit")
			outputFlags(c, o)
			c.Flags().IntVar(&o.Flags.Workers, "workers", 0, "worker goroutines (0: all cores); never changes the result")
			c.Flags().BoolVar(&o.Flags.Force, "force", false, "replace existing output files")
			c.Flags().BoolVar(&o.Flags.Quiet, "quiet", false, "print only the final summary")
		})
	step("run", "run <windows.csv>... --shards N --out <results.xlsx>", "Run every step here, one shard after another, through piece files", cobra.MinimumNArgs(1),
		func(c *cobra.Command, o *shardOptions) {
			o.Flags.register(c)
			c.Flags().StringVar(&o.Out, "out", "", "the workbook to write (.xlsx)")
			_ = c.MarkFlagRequired("out")
			c.Flags().IntVar(&o.Shards, "shards", 2, "how many shards")
			c.Flags().StringVar(&o.Pieces, "pieces", "", "folder to keep the pieces in, which hold the ids as read (default: none; the pieces stay in memory)")
			c.Flags().BoolVar(&o.Split, "split", false, "with --pieces, read the inputs once (the split step) instead of once per shard")
		})
}

// pieceFlags are the flags of a step that writes a piece.
func pieceFlags(c *cobra.Command, o *shardOptions) {
	c.Flags().StringVar(&o.Piece, "piece", "", "the piece file to write")
	_ = c.MarkFlagRequired("piece")
	c.Flags().BoolVar(&o.Flags.Force, "force", false, "replace an existing piece")
	c.Flags().BoolVar(&o.Flags.Quiet, "quiet", false, "print nothing on success")
}

// shardFlags are the flags of a step that runs on one shard.
func shardFlags(c *cobra.Command, o *shardOptions) {
	c.Flags().StringVar(&o.Shard, "shard", "", "this step's shard and their number, I/N with I from 1 to N")
	_ = c.MarkFlagRequired("shard")
	c.Flags().IntVar(&o.Flags.Workers, "workers", 0, "worker goroutines (0: all cores); never changes the result")
	c.Flags().StringVar(&o.Windows, "windows-file", "", "the shard's windows file that census wrote, read instead of every input file")
}

// outputFlags are the flags of the outputs finish writes.
func outputFlags(c *cobra.Command, o *shardOptions) {
	c.Flags().StringVar(&o.Out, "out", "", "the workbook to write (.xlsx)")
	_ = c.MarkFlagRequired("out")
	c.Flags().StringVar(&o.Flags.Members, "members", "", "also write a CSV here: participant, wave, group, probability of the group, silhouette, flag")
	c.Flags().StringVar(&o.Flags.Model, "model", "", "also write the model file (JSON) here, for later waves")
	c.Flags().StringVar(&o.Flags.Pseudonymize, "pseudonymize", "", "replace participant ids in every output by a keyed hash, with the key in this file")
}

// parseShard reads "I/N" (I from 1) into the reader's shard (from 0).
func parseShard(s string) (cohort.Shard, error) {
	a, b, ok := strings.Cut(s, "/")
	i, err1 := strconv.Atoi(strings.TrimSpace(a))
	n, err2 := strconv.Atoi(strings.TrimSpace(b))
	if !ok || err1 != nil || err2 != nil || n < 1 || i < 1 || i > n {
		return cohort.Shard{}, flagErrorf("--shard %q: give this step's shard and the number of shards as I/N, with I from 1 to N, such as 2/4", s)
	}
	return cohort.Shard{Index: i - 1, Count: n}, nil
}

func shardRun(ctx context.Context, o *shardOptions) error {
	switch o.Step {
	case "split":
		return o.split(ctx, o.Args, o.Piece)
	case "census":
		return o.census(ctx, o.Args, o.Shard, o.Piece)
	case "plan":
		return o.plan(o.Args, o.Piece)
	case "sample":
		return o.sample(ctx, o.Plan, o.Shard, o.Piece)
	case "fit":
		return o.fit(ctx, o.Plan, o.Args, o.Piece)
	case "assign":
		return o.assign(ctx, o.Fit, o.Shard, o.Piece)
	case "finish":
		return o.finish(ctx, o.Fit, o.Args)
	}
	return o.runAll(ctx)
}

// output is one file a step writes: what it is (for the line printed), its flag, its path and
// how to write it.
type output struct {
	what, flag, path string
	write            func(io.Writer) error
}

// writeOutputs writes a step's files through the output plan: checked first, replaced only with
// --force, never half-written, and put in place together.
func (o *shardOptions) writeOutputs(inputs []string, outs ...output) error {
	targets := make([]reports.Target, len(outs))
	for i, out := range outs {
		targets[i] = reports.Target{Flag: out.flag, Path: out.path}
	}
	plan, err := planOutputs(o.IO, targets, inputs, []reports.Target{{Flag: "--pseudonymize", Path: o.Flags.Pseudonymize}}, "", o.Flags.Force)
	if err != nil {
		return err
	}
	defer plan.Abort()
	// The outputs are written side by side (the split step's windows files, one per shard).
	err = par.Ordered(context.Background(), len(outs), o.Flags.Workers, func(i, _ int) (struct{}, error) {
		return struct{}{}, plan.Write(outs[i].flag, outs[i].write)
	}, nil)
	if err != nil {
		return err
	}
	if err := plan.Commit(); err != nil {
		return err
	}
	if !o.Flags.Quiet {
		for _, out := range outs {
			fmt.Fprintf(o.IO.Out, "%s → %s\n", out.what, out.path)
		}
	}
	return nil
}

// writePiece writes a step's piece (writeOutputs).
func (o *shardOptions) writePiece(path, kind string, id job.PieceID, inputs []string, v any) error {
	return o.writeOutputs(inputs, pieceOutput(path, kind, id, v))
}

func pieceOutput(path, kind string, id job.PieceID, v any) output {
	return output{kind + " piece", "--piece", path, func(w io.Writer) error { return job.WritePiece(w, kind, id, v) }}
}

func (o *shardOptions) census(ctx context.Context, inputs []string, shard, piece string) error {
	sh, err := parseShard(shard)
	if err != nil {
		return err
	}
	if o.Flags.Temp == "" {
		o.Flags.Temp = filepath.Dir(piece)
	}
	t, c, err := o.takeCensus(ctx, inputs, sh)
	if err != nil {
		return err
	}
	defer t.Close()
	files, _ := cohort.ExpandPaths(inputs)
	run := job.RunOf(c.Options, c.Files)
	outs := []output{pieceOutput(piece, job.KindCensus, job.PieceID{Run: run, Shard: sh.String()}, c)}
	if o.Windows != "" {
		outs = append(outs, output{"windows", "--windows-file", o.Windows, func(w io.Writer) error { return t.WriteWindows(w, sh, run) }})
	}
	return o.writeOutputs(files, outs...)
}

// takeCensus reads one shard of the inputs and takes its census; the caller closes the table.
func (o *shardOptions) takeCensus(ctx context.Context, inputs []string, sh cohort.Shard) (*cohort.Table, *job.Census, error) {
	ao, err := o.Flags.options(inputs)
	if err != nil {
		return nil, nil, err
	}
	if o.Flags.Within != "align" {
		return nil, nil, flagErrorf("--within %s: a run split in shards takes the align step, whose fit needs only a sample of the windows; leave --within out, or run 'group' on one machine", o.Flags.Within)
	}
	key, err := loadKey(o.Flags.Pseudonymize)
	if err != nil {
		return nil, nil, err
	}
	pseudonymAtRead(&ao.Read, key)
	ao.Read.Shard = sh
	t, err := cohort.Read(ctx, inputs, ao.Read)
	if err != nil {
		return nil, nil, err
	}
	c, err := job.CensusOf(t, ao)
	if err != nil {
		t.Close()
		return nil, nil, err
	}
	c.Meta = job.Meta{Command: strings.Join(o.argv, " "), Settings: o.Flags.settings()}
	return t, c, nil
}

// split reads the inputs once, takes the census of the whole cohort and writes the plan of a run
// in o.Shards shards with every shard's windows file (the files a census of each shard and the
// plan step would write, with the features the whole read kept), all put in place together.
func (o *shardOptions) split(ctx context.Context, inputs []string, piece string) error {
	if o.Shards < 1 || o.Shards > 10_000 {
		return flagErrorf("--shards %d: give a number from 1 to 10,000", o.Shards)
	}
	if o.Flags.Temp == "" {
		o.Flags.Temp = filepath.Dir(piece)
	}
	dir := o.WindowsDir
	if dir == "" {
		dir = filepath.Dir(piece)
	}
	t, c, err := o.takeCensus(ctx, inputs, cohort.Shard{})
	if err != nil {
		return err
	}
	defer t.Close()
	plan, err := job.MergeCensus([]*job.Census{c})
	if err != nil {
		return err
	}
	plan.Shards = o.Shards
	planBytes, pid, err := job.EncodePiece(job.KindPlan, job.PieceID{Run: plan.Run}, plan)
	if err != nil {
		return err
	}
	samples, err := job.SampleShards(t, plan)
	if err != nil {
		return err
	}
	files, _ := cohort.ExpandPaths(inputs)
	outs := []output{{job.KindPlan + " piece", "--piece", piece, func(w io.Writer) error { _, err := w.Write(planBytes); return err }}}
	for i := 0; i < o.Shards; i++ {
		sh := cohort.Shard{Index: i, Count: o.Shards}
		path := filepath.Join(dir, fmt.Sprintf("windows-%d.piece", i+1))
		outs = append(outs, output{"windows of shard " + sh.String(), "windows file " + sh.String(), path, func(w io.Writer) error { return t.WriteShardWindows(w, sh, plan.Run) }},
			output{"sample of shard " + sh.String(), "sample piece " + sh.String(), filepath.Join(dir, fmt.Sprintf("sample-%d.piece", i+1)), func(w io.Writer) error {
				return job.WritePiece(w, job.KindSample, job.PieceID{Run: plan.Run, Shard: sh.String(), From: pid.Sum}, samples[i])
			}})
	}
	return o.writeOutputs(files, outs...)
}

func (o *shardOptions) plan(censuses []string, piece string) error {
	parts, ids, err := job.ReadPieces[job.Census](censuses, job.KindCensus)
	if err != nil {
		return err
	}
	plan, err := job.MergeCensus(parts)
	if err != nil {
		return err
	}
	for i, id := range ids { // MergeCensus compared the settings and inputs the pieces say they had
		if id.Run != plan.Run {
			return fmt.Errorf("%s: the census piece's header names another run than its content: %w; take the census again", censuses[i], job.ErrPiece)
		}
	}
	return o.writePiece(piece, job.KindPlan, job.PieceID{Run: plan.Run}, censuses, plan)
}

// readShard reads one shard of the run's inputs and checks that they are the files the census
// was taken of.
func (o *shardOptions) readShard(ctx context.Context, plan *job.Plan, shard, piece string) (*cohort.Table, cohort.Shard, error) {
	sh, err := parseShard(shard)
	if err != nil {
		return nil, sh, err
	}
	if sh.Count != plan.Shards {
		return nil, sh, flagErrorf("--shard %s: the plan is of a run in %d shards; give I/%d", shard, plan.Shards, plan.Shards)
	}
	ro := plan.Options.Read
	ro.Shard, ro.Progress, ro.TempDir, ro.Workers = sh, nil, o.Flags.Temp, o.Flags.Workers
	if ro.TempDir == "" {
		ro.TempDir = filepath.Dir(piece)
	}
	var t *cohort.Table
	if o.Windows != "" {
		var of cohort.Shard
		var run string
		if t, of, run, err = cohort.ReadWindows(o.Windows); err != nil {
			return nil, sh, err
		}
		if of != sh {
			t.Close()
			return nil, sh, fmt.Errorf("%s: the windows of shard %s, not %s: %w; give this shard's windows file", o.Windows, of, sh, job.ErrPiece)
		}
		if run != plan.Run {
			t.Close()
			return nil, sh, fmt.Errorf("%s: the windows of another run (other inputs or settings): %w; give the windows file this run's census wrote", o.Windows, job.ErrPiece)
		}
	} else {
		if ro.Pseudonyms != "" { // the census replaced the ids: this read must too, with its key
			key, err := samePseudonymKey(o.Flags.Pseudonymize, ro.Pseudonyms, "give --windows-file with the census's windows file")
			if err != nil {
				return nil, sh, err
			}
			pseudonymAtRead(&ro, key)
		}
		if t, err = cohort.Read(ctx, plan.Options.Inputs, ro); err != nil {
			return nil, sh, err
		}
	}
	if len(t.Files) != len(plan.Files) {
		t.Close()
		return nil, sh, fmt.Errorf("the shard's inputs are %d files, the census's %d: %w; run the split run again from its census", len(t.Files), len(plan.Files), job.ErrPiece)
	}
	for i, f := range t.Files {
		if f.SHA256 != plan.Files[i].SHA256 || f.Path != plan.Files[i].Path {
			t.Close()
			return nil, sh, fmt.Errorf("%s: not the file the census was taken of (its content or its place in the inputs changed): %w; run the split run again from its census", f.Path, job.ErrPiece)
		}
	}
	return t, sh, nil
}

func (o *shardOptions) sample(ctx context.Context, planFile, shard, piece string) error {
	plan := new(job.Plan)
	pid, err := job.ReadPiece(planFile, job.KindPlan, plan)
	if err != nil {
		return err
	}
	sp, sh, err := o.drawSample(ctx, plan, shard, piece)
	if err != nil {
		return err
	}
	id := job.PieceID{Run: pid.Run, Shard: sh.String(), From: pid.Sum}
	return o.writePiece(piece, job.KindSample, id, append([]string{planFile}, plan.Options.Inputs...), sp)
}

// drawSample reads one shard again and draws its sample.
func (o *shardOptions) drawSample(ctx context.Context, plan *job.Plan, shard, piece string) (*job.SamplePiece, cohort.Shard, error) {
	t, sh, err := o.readShard(ctx, plan, shard, piece)
	if err != nil {
		return nil, sh, err
	}
	defer t.Close()
	sp, err := job.SampleOf(t, plan, sh)
	return sp, sh, err
}

func (o *shardOptions) fit(ctx context.Context, planFile string, samples []string, piece string) error {
	plan := new(job.Plan)
	pid, err := job.ReadPiece(planFile, job.KindPlan, plan)
	if err != nil {
		return err
	}
	parts, ids, err := job.ReadPieces[job.SamplePiece](samples, job.KindSample)
	if err != nil {
		return err
	}
	if err := job.MadeFrom(planFile, pid, job.KindSample, samples, ids); err != nil {
		return err
	}
	plan.Options.Workers = o.Flags.Workers
	fp, err := job.FitSample(ctx, plan, parts)
	if err != nil {
		return err
	}
	return o.writePiece(piece, job.KindFit, job.PieceID{Run: pid.Run, From: pid.Sum}, append([]string{planFile}, samples...), fp)
}

func (o *shardOptions) assign(ctx context.Context, fitFile, shard, piece string) error {
	fp := new(job.FitPiece)
	fid, err := job.ReadPiece(fitFile, job.KindFit, fp)
	if err != nil {
		return err
	}
	if fp.Plan == nil || fp.Plan.Run != fid.Run {
		return fmt.Errorf("%s: the fit piece's header names another run than its content: %w; fit again", fitFile, job.ErrPiece)
	}
	ap, sh, err := o.assignShard(ctx, fp, shard, piece)
	if err != nil {
		return err
	}
	id := job.PieceID{Run: fid.Run, Shard: sh.String(), From: fid.Sum}
	return o.writePiece(piece, job.KindAssign, id, append([]string{fitFile}, fp.Plan.Options.Inputs...), ap)
}

// assignShard reads one shard again and assigns its windows to the fit's states.
func (o *shardOptions) assignShard(ctx context.Context, fp *job.FitPiece, shard, piece string) (*job.AssignPiece, cohort.Shard, error) {
	t, sh, err := o.readShard(ctx, fp.Plan, shard, piece)
	if err != nil {
		return nil, sh, err
	}
	defer t.Close()
	ap, err := job.AssignOf(ctx, t, sh, fp.Fit, fp.States, o.Flags.Workers, nil)
	return ap, sh, err
}

func (o *shardOptions) finish(ctx context.Context, fitFile string, assigned []string) error {
	if !strings.HasSuffix(strings.ToLower(o.Out), ".xlsx") {
		return flagErrorf("--out %q: the workbook needs a name ending in .xlsx", o.Out)
	}
	g := &groupOptions{IO: o.IO, Now: o.Now, Out: o.Out, Flags: o.Flags, readOnly: append([]string{fitFile}, assigned...)}
	if err := g.outputs(); err != nil {
		return err
	}
	defer g.plan.Abort()
	key, err := loadKey(o.Flags.Pseudonymize)
	if err != nil {
		return err
	}
	g.key = key
	fp := new(job.FitPiece)
	fid, err := job.ReadPiece(fitFile, job.KindFit, fp)
	if err != nil {
		return err
	}
	if fp.Plan == nil || fp.Plan.Run != fid.Run {
		return fmt.Errorf("%s: the fit piece's header names another run than its content: %w; fit again", fitFile, job.ErrPiece)
	}
	parts, ids, err := job.ReadPieces[job.AssignPiece](assigned, job.KindAssign)
	if err != nil {
		return err
	}
	if err := job.MadeFrom(fitFile, fid, job.KindAssign, assigned, ids); err != nil {
		return err
	}
	return o.finishWith(ctx, g, fp, parts)
}

// finishWith groups the participants of the assignment pieces and writes the outputs that g
// planned.
func (o *shardOptions) finishWith(ctx context.Context, g *groupOptions, fp *job.FitPiece, parts []*job.AssignPiece) error {
	fp.Plan.Options.Workers = o.Flags.Workers
	f, err := job.Finish(ctx, fp, parts)
	if err != nil {
		return err
	}
	res, err := job.NewResult(f, job.Numbered("S", f.States.K), job.Numbered("G", f.Grouping.K))
	if err != nil {
		return err
	}
	switch {
	case fp.Plan.Options.Read.Pseudonyms != "": // the census replaced the ids as it read them
		if _, err := samePseudonymKey(o.Flags.Pseudonymize, fp.Plan.Options.Read.Pseudonyms, "give finish the census's key with --pseudonymize"); err != nil {
			return err
		}
		job.MarkPseudonymized(res)
	case g.key != nil:
		job.Pseudonymize(res, g.key)
	}
	meta := fp.Plan.Meta
	res.Tool, res.Version, res.Created = "cohortmix", version, o.Now()
	res.Command, res.Settings = meta.Command, meta.Settings
	if err := g.write(res, fp.Plan.Options.Read, fp.Plan.Options.FitSettings()); err != nil {
		return err
	}
	printSummary(o.IO, res, o.Out)
	return nil
}

// runAll runs every step here, shard after shard, through piece files.
func (o *shardOptions) runAll(ctx context.Context) (err error) {
	if o.Shards < 1 || o.Shards > 10_000 {
		return flagErrorf("--shards %d: give a number from 1 to 10,000", o.Shards)
	}
	dir := o.Pieces
	if dir == "" {
		return o.runInMemory(ctx)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("--pieces %s: %w", dir, err)
	}
	quiet := o.Flags.Quiet
	o.Flags.Quiet = true // one summary at the end
	name := func(kind string, i int) string {
		if i < 0 {
			return filepath.Join(dir, kind+".piece")
		}
		return filepath.Join(dir, fmt.Sprintf("%s-%d.piece", kind, i+1))
	}
	// each runs a step on every shard, with that shard's windows file.
	each := func(kind string, step func(shard, piece string) error) ([]string, error) {
		var out []string
		for i := 0; i < o.Shards; i++ {
			o.Windows = name("windows", i)
			if err := step(fmt.Sprintf("%d/%d", i+1, o.Shards), name(kind, i)); err != nil {
				return nil, err
			}
			out = append(out, name(kind, i))
		}
		return out, nil
	}
	if o.Split {
		o.WindowsDir = dir
		if err := o.split(ctx, o.Args, name("plan", -1)); err != nil {
			return err
		}
	} else {
		censuses, err := each("census", func(shard, piece string) error { return o.census(ctx, o.Args, shard, piece) })
		if err != nil {
			return err
		}
		if err := o.plan(censuses, name("plan", -1)); err != nil {
			return err
		}
	}
	var samples []string
	if o.Split { // the split step drew them
		for i := 0; i < o.Shards; i++ {
			samples = append(samples, name("sample", i))
		}
	} else if samples, err = each("sample", func(shard, piece string) error { return o.sample(ctx, name("plan", -1), shard, piece) }); err != nil {
		return err
	}
	if err := o.fit(ctx, name("plan", -1), samples, name("fit", -1)); err != nil {
		return err
	}
	assigned, err := each("assign", func(shard, piece string) error { return o.assign(ctx, name("fit", -1), shard, piece) })
	if err != nil {
		return err
	}
	o.Flags.Quiet = quiet
	return o.finish(ctx, name("fit", -1), assigned)
}

// runInMemory runs every step here with the pieces kept in memory, so that nothing but the
// outputs (and, past the memory limit, the windows' values in the temporary folder, which hold
// no ids) is written: a run killed midway leaves no pieces, and under --pseudonymize no raw id
// reaches the disk. Each shard is read three times (census, sample, assign), as in a split run
// without windows files; the result is that of the steps run through piece files.
func (o *shardOptions) runInMemory(ctx context.Context) error {
	if !strings.HasSuffix(strings.ToLower(o.Out), ".xlsx") {
		return flagErrorf("--out %q: the workbook needs a name ending in .xlsx", o.Out)
	}
	files, err := cohort.ExpandPaths(o.Args)
	if err != nil {
		return err
	}
	g := &groupOptions{IO: o.IO, Now: o.Now, Out: o.Out, Flags: o.Flags, readOnly: files}
	if err := g.outputs(); err != nil {
		return err
	}
	defer g.plan.Abort()
	if g.key, err = loadKey(o.Flags.Pseudonymize); err != nil {
		return err
	}
	shard := func(i int) string { return fmt.Sprintf("%d/%d", i+1, o.Shards) }
	censuses := make([]*job.Census, o.Shards)
	for i := range censuses {
		t, c, err := o.takeCensus(ctx, o.Args, cohort.Shard{Index: i, Count: o.Shards})
		if err != nil {
			return err
		}
		t.Close()
		censuses[i] = c
	}
	plan, err := job.MergeCensus(censuses)
	if err != nil {
		return err
	}
	samples := make([]*job.SamplePiece, o.Shards)
	for i := range samples {
		if samples[i], _, err = o.drawSample(ctx, plan, shard(i), o.Out); err != nil {
			return err
		}
	}
	plan.Options.Workers = o.Flags.Workers
	fp, err := job.FitSample(ctx, plan, samples)
	if err != nil {
		return err
	}
	parts := make([]*job.AssignPiece, o.Shards)
	for i := range parts {
		if parts[i], _, err = o.assignShard(ctx, fp, shard(i), o.Out); err != nil {
			return err
		}
	}
	return o.finishWith(ctx, g, fp, parts)
}

// samePseudonymKey loads the key at path and checks that it is the key whose fingerprint the
// census recorded; without a key, advice says what else to do.
func samePseudonymKey(path, fingerprint, advice string) ([]byte, error) {
	if path == "" {
		return nil, flagErrorf("the census replaced the participant ids by pseudonyms: %s", advice)
	}
	key, err := loadKey(path)
	if err != nil {
		return nil, err
	}
	if pseudonym.Fingerprint(key) != fingerprint {
		return nil, flagErrorf("--pseudonymize %s: not the key the census pseudonymized the ids with; give that key", path)
	}
	return key, nil
}

// planOutputs plans a command's outputs (reports.NewOutputsKeeping) and tells on standard error
// what it put right of earlier runs that were killed.
func planOutputs(io IO, targets []reports.Target, inputs []string, keep []reports.Target, temp string, force bool) (*reports.Outputs, error) {
	plan, err := reports.NewOutputsKeeping(targets, inputs, keep, temp, force)
	if plan == nil {
		return nil, err
	}
	var completed []string
	var removed, bytes int64
	for _, l := range plan.Leftovers {
		if l.Completed {
			completed = append(completed, l.Path)
		} else {
			removed++
			bytes += l.Bytes
		}
	}
	if len(completed) > 0 {
		fmt.Fprintf(io.Err, "note: an earlier run was killed while putting its outputs in place; its set is now complete: %s\n", strings.Join(completed, ", "))
	}
	if removed > 0 {
		fmt.Fprintf(io.Err, "note: removed %d temporary files (%s bytes) that killed runs left behind\n", removed, cohort.Thousands(int(bytes)))
	}
	return plan, err
}
