package main

import (
	"fmt"

	"context"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort"
)

// execute runs one command built with a runF hook on argv, so that the options it would run
// with can be checked without running it.
func execute(t *testing.T, cmd *cobra.Command, argv ...string) {
	t.Helper()
	commandLineErrors(cmd)
	cmd.SetArgs(argv)
	cmd.SetOut(new(nopWriter))
	cmd.SetErr(new(nopWriter))
	if err := cmd.ExecuteContext(context.Background()); err != nil {
		t.Fatalf("%v: %v", argv, err)
	}
}

type nopWriter struct{}

func (*nopWriter) Write(p []byte) (int, error) { return len(p), nil }

// Each command turns its command line into the options it runs with.
func TestCommandLinesBecomeOptions(t *testing.T) {
	t.Parallel()
	env, _, _ := testEnv()
	t.Run("group", func(t *testing.T) {
		var got *groupOptions
		execute(t, newGroupCmd(env, func(_ context.Context, o *groupOptions) error { got = o; return nil }),
			"a.csv", "b.csv", "--out", "r.xlsx", "--id", "subject", "--states", "6", "--groups", "3-5", "--within", "rest", "--pca", "off", "--window-length", "30s", "--seed", "7")
		ao, err := got.Flags.options(got.Inputs)
		if err != nil {
			t.Fatal(err)
		}
		if got.Out != "r.xlsx" || len(ao.Inputs) != 2 || ao.Read.ID != "subject" || ao.Seed != 7 || ao.Window != 30*time.Second ||
			len(ao.States) != 1 || ao.States[0] != 6 || len(ao.Groups) != 3 || ao.Norm.Within.String() != "rest" || ao.Norm.PCAVariance != 0 {
			t.Errorf("group options %+v", ao)
		}
	})
	t.Run("group defaults", func(t *testing.T) {
		var got *groupOptions
		execute(t, newGroupCmd(env, func(_ context.Context, o *groupOptions) error { got = o; return nil }), "a.csv", "--out", "r.xlsx")
		ao, err := got.Flags.options(got.Inputs)
		if err != nil {
			t.Fatal(err)
		}
		if ao.Norm.Within.String() != "align" || ao.Norm.PCAVariance != 0.99 || ao.States[0] != 3 || ao.States[len(ao.States)-1] != 8 || ao.Read.ID != "participant" || ao.Seed != 1 {
			t.Errorf("default options %+v", ao)
		}
		// The flags' defaults are the library's (job.Defaults), so a program that imports the
		// job gets what the command line gives.
		if got, want := fmt.Sprintf("%+v", ao), fmt.Sprintf("%+v", job.Defaults("a.csv")); got != want {
			t.Errorf("the flags' defaults\n%s\nare not the library's\n%s", got, want)
		}
	})
	t.Run("check", func(t *testing.T) {
		var got *checkOptions
		execute(t, newCheckCmd(env, func(_ context.Context, o *checkOptions) error { got = o; return nil }), "a.csv", "--missing", "impute", "--min-windows", "5")
		ro, err := got.Flags.readOptions()
		if err != nil {
			t.Fatal(err)
		}
		if got.Inputs[0] != "a.csv" || ro.MinWindows != 5 || ro.Missing != cohort.ImputeMedian {
			t.Errorf("check options %+v", ro)
		}
	})
	t.Run("assign", func(t *testing.T) {
		var got *assignOptions
		execute(t, newAssignCmd(env, func(_ context.Context, o *assignOptions) error { got = o; return nil }),
			"--model", "m.json", "w2.csv", "--out", "w2.xlsx", "--members", "w2.csv.members", "--pseudonymize", "key", "--window-length", "1m")
		if got.Model != "m.json" || got.Inputs[0] != "w2.csv" || got.Out != "w2.xlsx" || got.Members != "w2.csv.members" || got.Key != "key" || got.Window != time.Minute {
			t.Errorf("assign options %+v", got)
		}
	})
	t.Run("refresh", func(t *testing.T) {
		var got *refreshOptions
		execute(t, newRefreshCmd(env, func(_ context.Context, o *refreshOptions) error { got = o; return nil }),
			"--previous", "m.json", "w1.csv", "w2.csv", "--out", "r.xlsx", "--groups", "4")
		if got.Previous != "m.json" || len(got.Inputs) != 2 || got.Out != "r.xlsx" || !got.changed("groups") || got.changed("states") {
			t.Errorf("refresh options %+v", got)
		}
	})
	t.Run("demo", func(t *testing.T) {
		var got *demoOptions
		execute(t, newDemoCmd(env, func(_ context.Context, o *demoOptions) error { got = o; return nil }), "--dir", "d", "--participants", "40", "--windows", "200")
		if got.Dir != "d" || got.Synth.Participants != 40 || got.Synth.Windows != 200 {
			t.Errorf("demo options %+v", got)
		}
	})
	t.Run("synth", func(t *testing.T) {
		var got *synthOptions
		execute(t, newSynthCmd(env, func(_ context.Context, o *synthOptions) error { got = o; return nil }), "--out", "s.csv", "--scenario", "3", "--seed", "9")
		if got.Out != "s.csv" || got.Synth.Scenario != 3 || got.Synth.Seed != 9 || got.Synth.Features != 24 {
			t.Errorf("synth options %+v", got.Synth)
		}
	})
	t.Run("shard", func(t *testing.T) {
		for _, c := range []struct {
			argv []string
			ok   func(o *shardOptions) bool
		}{
			{[]string{"census", "a.csv", "b.csv", "--shard", "2/4", "--piece", "c2.piece", "--states", "6", "--seed", "3"}, func(o *shardOptions) bool {
				ao, err := o.Flags.options(o.Args)
				return err == nil && o.Step == "census" && len(o.Args) == 2 && o.Shard == "2/4" && o.Piece == "c2.piece" && ao.States[0] == 6 && ao.Seed == 3
			}},
			{[]string{"plan", "c1.piece", "c2.piece", "--piece", "plan.piece"}, func(o *shardOptions) bool {
				return o.Step == "plan" && len(o.Args) == 2 && o.Piece == "plan.piece"
			}},
			{[]string{"sample", "--plan", "plan.piece", "--shard", "1/4", "--piece", "s1.piece", "--temp", "tmp"}, func(o *shardOptions) bool {
				return o.Step == "sample" && o.Plan == "plan.piece" && o.Shard == "1/4" && o.Flags.Temp == "tmp"
			}},
			{[]string{"fit", "--plan", "plan.piece", "s1.piece", "s2.piece", "--piece", "fit.piece", "--workers", "3"}, func(o *shardOptions) bool {
				return o.Step == "fit" && len(o.Args) == 2 && o.Flags.Workers == 3
			}},
			{[]string{"assign", "--fit", "fit.piece", "--shard", "4/4", "--piece", "a4.piece"}, func(o *shardOptions) bool {
				return o.Step == "assign" && o.Fit == "fit.piece" && o.Shard == "4/4"
			}},
			{[]string{"finish", "--fit", "fit.piece", "a1.piece", "--out", "r.xlsx", "--members", "m.csv", "--model", "m.json"}, func(o *shardOptions) bool {
				return o.Step == "finish" && len(o.Args) == 1 && o.Out == "r.xlsx" && o.Flags.Members == "m.csv" && o.Flags.Model == "m.json"
			}},
			{[]string{"run", "a.csv", "--shards", "7", "--out", "r.xlsx", "--pieces", "p"}, func(o *shardOptions) bool {
				return o.Step == "run" && o.Shards == 7 && o.Pieces == "p" && o.Out == "r.xlsx"
			}},
		} {
			var got *shardOptions
			execute(t, newShardCmd(env, func(_ context.Context, o *shardOptions) error { got = o; return nil }), c.argv...)
			if got == nil || !c.ok(got) {
				t.Errorf("shard %v: options %+v", c.argv, got)
			}
		}
		for _, bad := range []string{"0/4", "5/4", "2", "a/b", "1/0"} {
			if _, err := parseShard(bad); err == nil {
				t.Errorf("--shard %s was taken", bad)
			}
		}
	})
}
