package main

import (
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/raw"
	"github.com/cohortmix/cohortmix/reports"
)

type featuresOptions struct {
	IO          IO
	Inputs      []string
	Out, Report string
	Calibration string
	Force       bool
	Raw         raw.Options
}

func newFeaturesCmd(env *Env, runF func(context.Context, *featuresOptions) error) *cobra.Command {
	opts := &featuresOptions{IO: env.IO}
	cmd := &cobra.Command{
		Use:   "features <recordings or folders>... --out <table.csv>",
		Short: "Turn raw tri-axial recordings into the per-window table that 'group' reads",
		Long: `Reads raw acceleration (a time column, ISO-8601 or epoch seconds, and x, y, z in g, mg or m/s²;
CSV, TSV, .gz or Parquet; one participant per file, named by the file, or a long table with --id; folders and quoted globs are expanded), and
writes one row per window and participant: ENMO, MAD, the arm angle, the axes' means, s.d.s and
correlations, the vector magnitude's mean, s.d. and peak, its dominant frequency, band powers and
spectral entropy, and a worn column (1 worn, 0 off by the non-wear rule of van Hees et al. 2013),
which 'group' uses as its wear column. Each device is first calibrated on its still periods
(van Hees et al. 2014); the report (--report) lists each participant's calibration, error before
and after, sampling rate, units and windows.

Exit codes: 0 success, 1 error, 2 wrong command line, 130 interrupted.`,
		Example: `  $ cohortmix features recordings/ --out windows.csv
  $ cohortmix features study.csv.gz --id subject --window 30s --out windows.csv
  $ cohortmix group windows.csv --out groups.xlsx`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.Inputs = args
			if runF != nil {
				return runF(cmd.Context(), opts)
			}
			return featuresRun(cmd.Context(), opts)
		},
	}
	f := cmd.Flags()
	f.StringVar(&opts.Out, "out", "", "the per-window table to write: .parquet writes Parquet (smaller, and read faster), anything else CSV")
	_ = cmd.MarkFlagRequired("out")
	f.StringVar(&opts.Report, "report", "", "the per-participant report to write: .xlsx writes a workbook sheet, anything else CSV (default: beside --out, ending in -report.csv)")
	f.DurationVar(&opts.Raw.Window, "window", time.Minute, "window length, 5s to 15m")
	f.StringVar(&opts.Raw.Units, "units", "auto", "units of x, y, z: g, mg, m/s2, or auto (told from the vector magnitude)")
	f.Float64Var(&opts.Raw.Rate, "rate", 0, "sampling rate in Hz (default: read from the times)")
	f.Float64Var(&opts.Raw.Range, "range", 8, "the sensor's range in g, for counting clipped samples")
	f.StringVar(&opts.Raw.ID, "id", "", "the participant id column of a long table (default: one participant per file, named by the file)")
	f.StringVar(&opts.Raw.Time, "time", "", "the time column (default: time or timestamp)")
	f.StringVar(&opts.Raw.X, "x", "", "the x column (default: x, or a name ending in _x)")
	f.StringVar(&opts.Raw.Y, "y", "", "the y column (default: y, or a name ending in _y)")
	f.StringVar(&opts.Raw.Z, "z", "", "the z column (default: z, or a name ending in _z)")
	f.StringVar(&opts.Calibration, "calibration", "on", "calibrate each device on its still periods (on) or leave it as read (off)")
	f.IntVar(&opts.Raw.Workers, "workers", 0, "files processed at once (default: one per core)")
	f.BoolVar(&opts.Force, "force", false, "replace existing files")
	return cmd
}

// rawInputs are the recordings the arguments name: folders and globs expanded as for the tables
// (cohort.ExpandPaths); a workbook is refused, as no raw recording comes as one.
func rawInputs(args []string) ([]string, error) {
	paths, err := cohort.ExpandPaths(args)
	if err != nil {
		return nil, err
	}
	for _, p := range paths {
		if p == "-" || strings.HasSuffix(strings.ToLower(p), ".xlsx") {
			return nil, fmt.Errorf("%s: a raw recording is read from a CSV, TSV, gzip or Parquet file; export it as one of those", p)
		}
	}
	return paths, nil
}

func featuresRun(ctx context.Context, o *featuresOptions) error {
	switch o.Calibration {
	case "on":
	case "off":
		o.Raw.NoCalibration = true
	default:
		return flagErrorf("--calibration %q: use on or off", o.Calibration)
	}
	if o.Raw.Window < 5*time.Second || o.Raw.Window > 15*time.Minute {
		return flagErrorf("--window %v: use 5s to 15m", o.Raw.Window)
	}
	if o.Raw.Units == "auto" {
		o.Raw.Units = ""
	}
	inputs, err := rawInputs(o.Inputs)
	if err != nil {
		return err
	}
	o.Raw.Parquet = strings.HasSuffix(strings.ToLower(o.Out), ".parquet")
	if o.Report == "" {
		base := o.Out
		for _, suf := range []string{".gz", ".csv", ".parquet"} {
			base = strings.TrimSuffix(base, suf)
		}
		o.Report = base + "-report.csv"
	}
	o.Raw.Tool = "cohortmix " + version
	targets := []reports.Target{{Flag: "--out", Path: o.Out}, {Flag: "--report", Path: o.Report}}
	if !o.Raw.Parquet { // a CSV table's record of how it was made goes beside it
		targets = append(targets, reports.Target{Flag: "--out's record", Path: o.Out + raw.ProvenanceSuffix})
	}
	plan, err := reports.NewOutputs(targets, inputs, "", o.Force)
	if err != nil {
		return err
	}
	defer plan.Abort()
	var people []raw.Participant
	if err := plan.Write("--out", func(w io.Writer) error {
		people, err = raw.Run(ctx, inputs, w, o.Raw)
		return err
	}); err != nil {
		return err
	}
	if !o.Raw.Parquet {
		if err := plan.Write("--out's record", func(w io.Writer) error {
			_, err := io.WriteString(w, raw.ProvenanceOf(o.Raw, o.Raw.Tool).JSON()+"\n")
			return err
		}); err != nil {
			return err
		}
	}
	if err := plan.Write("--report", func(w io.Writer) error {
		if strings.HasSuffix(strings.ToLower(o.Report), ".xlsx") {
			return reports.CalibrationTo(w, people)
		}
		return writeRawReport(w, people)
	}); err != nil {
		return err
	}
	if err := plan.Commit(); err != nil {
		return err
	}
	windows, uncalibrated := 0, 0
	for _, p := range people {
		windows += p.Windows
		if !p.OK {
			uncalibrated++
		}
	}
	fmt.Fprintf(o.IO.Out, "%d participants, %d windows of %v → %s (report: %s)\n", len(people), windows, o.Raw.Window, o.Out, o.Report)
	if uncalibrated > 0 && !o.Raw.NoCalibration {
		fmt.Fprintf(o.IO.Out, "warning: %d participants were left uncalibrated (the report says why for each)\n", uncalibrated)
	}
	return nil
}

// writeRawReport writes one row per participant: what was read, the calibration and the windows.
func writeRawReport(w io.Writer, people []raw.Participant) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"participant", "file", "samples", "rate_hz", "units", "windows", "incomplete_windows", "non_wear_windows", "clipped_samples",
		"calibrated", "still_blocks", "scale_x", "scale_y", "scale_z", "offset_x_g", "offset_y_g", "offset_z_g", "error_before_mg", "error_after_mg", "why_not_calibrated"})
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
	for _, p := range people {
		_ = cw.Write([]string{reports.SafeCell(p.ID), p.File, strconv.Itoa(p.Samples), num(p.Rate), p.Units, strconv.Itoa(p.Windows), strconv.Itoa(p.Incomplete), strconv.Itoa(p.NonWear), strconv.Itoa(p.Clipped),
			strconv.FormatBool(p.OK), strconv.Itoa(p.Still), num(p.Scale[0]), num(p.Scale[1]), num(p.Scale[2]), num(p.Offset[0]), num(p.Offset[1]), num(p.Offset[2]), num(p.ErrorBefore), num(p.ErrorAfter), p.Reason})
	}
	cw.Flush()
	return cw.Error()
}
