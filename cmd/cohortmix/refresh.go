package main

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cohort/job"
	"github.com/cohortmix/cohortmix/reports"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort/modelfile"
)

type refreshOptions struct {
	groupOptions
	Previous string
	changed  func(name string) bool
}

func newRefreshCmd(env *Env, runF func(context.Context, *refreshOptions) error) *cobra.Command {
	opts := &refreshOptions{groupOptions: groupOptions{IO: env.IO, Now: time.Now}}
	cmd := &cobra.Command{
		Use:   "refresh --previous <model.json> <windows.csv>... --out <new.xlsx>",
		Short: "Refit on the updated cohort and keep group names where groups are the same",
		Long: `Refits the whole analysis on the updated cohort with the previous model's settings (any option
given here overrides them), then matches the new states and groups to the previous ones by the
Hungarian method on centroid distance: a group keeps its name when it is still the same group, a
group with no close match gets a new name, and the workbook's Changes sheet says which groups are
new, merged or gone and who moved.

Exit codes: 0 success, 1 error in the input or the run, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix refresh --previous model.json all-waves.csv --out refresh.xlsx --model model-v2.json`,
		Args:    cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Inputs = args
			opts.Args = append([]string{"cohortmix", "refresh"}, argsOf(cmd)...)
			opts.changed = cmd.Flags().Changed
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return refreshRun(cmd.Context(), opts)
		},
	}
	cmd.Flags().StringVar(&opts.Previous, "previous", "", "the model file of the earlier run")
	cmd.Flags().StringVar(&opts.Out, "out", "", "the workbook to write (.xlsx)")
	_ = cmd.MarkFlagRequired("previous")
	_ = cmd.MarkFlagRequired("out")
	opts.Flags.register(cmd)
	return cmd
}

func refreshRun(ctx context.Context, o *refreshOptions) error {
	o.readOnly = []string{o.Previous}
	if err := o.outputs(); err != nil {
		return err
	}
	defer o.plan.Abort()
	prev, err := modelfile.ReadFile(o.Previous)
	if err != nil {
		return err
	}
	if err := o.Flags.fromModel(prev, o.changed); err != nil {
		return fmt.Errorf("%s: %w", o.Previous, err)
	}
	if !o.changed("states") {
		// The previous number of states, so that each previous state can keep its name and the
		// groups are compared over the same states.
		o.Flags.States = strconv.Itoa(prev.States.K)
	}
	ao, key, err := o.prepare()
	if err != nil {
		return err
	}
	if err := prev.CheckKey(o.Previous, o.Flags.Pseudonymize, key); err != nil {
		return err
	}
	o.key = key
	res, err := job.Refresh(ctx, prev, ao, key, o.Previous)
	if err != nil {
		return err
	}
	res.Tool, res.Version, res.Created = "cohortmix", version, o.Now()
	res.Command = strings.Join(o.Args, " ")
	res.Settings = append([]modelfile.Setting{{Name: "mode", Value: "refresh"}, {Name: "previous model", Value: o.Previous}}, o.Flags.settings()...)
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := o.write(res, ao.Read, ao.FitSettings()); err != nil {
		return err
	}
	printSummary(o.IO, res, o.Out)
	for _, n := range res.Changes.Notes {
		fmt.Fprintln(o.IO.Out, "  "+reports.NoteWords(res, n))
	}
	return nil
}
