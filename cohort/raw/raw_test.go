package raw

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The features step on the invented raw scenario: every window accounted for, each device's
// planted calibration error recovered, the planted non-wear found.
func TestRunOnPlantedRaw(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	truth, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 6, Hours: 4, Rate: 20, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	var inputs []string
	for _, tr := range truth {
		inputs = append(inputs, filepath.Join(dir, tr.ID+".csv"))
	}
	var out bytes.Buffer
	people, err := Run(context.Background(), inputs, &out, Options{})
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	if lines[0]+"\n" != Header() || len(people) != 6 {
		t.Fatalf("header %q, %d participants", lines[0], len(people))
	}
	rows := 0
	for i, p := range people {
		tr := truth[i]
		rows += p.Windows
		if p.Windows+p.Incomplete != 240 || p.Rate != 20 || p.Units != "g (detected)" {
			t.Errorf("%s: %d windows + %d incomplete, rate %v, units %s", p.ID, p.Windows, p.Incomplete, p.Rate, p.Units)
		}
		// The calibration undoes the planted error (calibrated = gain·raw + offset) to 0.02 in gain
		// and in offset (g): four hours give some 15 still postures, and a device that lay on a
		// table gives hundreds of blocks at one point, which weigh on the fit.
		for a := 0; a < 3; a++ {
			if !p.OK || math.Abs(p.Scale[a]-tr.Gain[a]) > 0.02 || math.Abs(p.Offset[a]-tr.Offset[a]) > 0.02 {
				t.Errorf("%s axis %d: scale %.4f offset %.4f (planted %.4f, %.4f), %s", p.ID, a, p.Scale[a], p.Offset[a], tr.Gain[a], tr.Offset[a], p.Reason)
			}
		}
		if p.ErrorAfter >= p.ErrorBefore || p.ErrorAfter > 5 {
			t.Errorf("%s: error %.1f mg before, %.1f after", p.ID, p.ErrorBefore, p.ErrorAfter)
		}
		off := tr.OffTo.Sub(tr.OffFrom).Minutes()
		if tr.OffFrom.IsZero() && p.NonWear != 0 || !tr.OffFrom.IsZero() && (float64(p.NonWear) < off-30 || float64(p.NonWear) > off+15) {
			t.Errorf("%s: %d non-wear windows, %.0f minutes planted", p.ID, p.NonWear, off)
		}
	}
	if rows != len(lines)-1 {
		t.Errorf("%d rows for %d windows", len(lines)-1, rows)
	}
	// The same on one core.
	var one bytes.Buffer
	if _, err := Run(context.Background(), inputs, &one, Options{Workers: 1}); err != nil || !bytes.Equal(one.Bytes(), out.Bytes()) {
		t.Errorf("one core gave another table (%v)", err)
	}
}

// The features of each window against numpy's (testdata/raw/make_golden.py, Debian's
// python3-numpy, on an invented two-minute recording): agreement to 1e-9 relative, the rounding
// of two independent sums and FFTs.
func TestFeaturesMatchNumpy(t *testing.T) {
	t.Parallel()
	var out bytes.Buffer
	if _, err := Run(context.Background(), []string{"../../testdata/raw/small.csv"}, &out, Options{Window: 10 * time.Second, NoCalibration: true, Units: "g"}); err != nil {
		t.Fatal(err)
	}
	golden, err := os.ReadFile("../../testdata/raw/golden.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := strings.Split(strings.TrimSpace(string(golden)), "\n")
	got := strings.Split(strings.TrimSpace(out.String()), "\n")
	if len(got) != len(want) {
		t.Fatalf("%d rows, numpy %d", len(got)-1, len(want)-1)
	}
	names := strings.Split(want[0], ",")[1:]
	for i := 1; i < len(want); i++ {
		g, w := strings.Split(got[i], ","), strings.Split(want[i], ",")
		if g[0] != "small" || g[1] != w[0] {
			t.Errorf("row %d: %s %s, numpy %s", i, g[0], g[1], w[0])
		}
		for j, name := range names {
			a, _ := strconv.ParseFloat(g[2+j], 64)
			b, _ := strconv.ParseFloat(w[1+j], 64)
			if math.Abs(a-b) > 1e-9*math.Max(1, math.Abs(b)) {
				t.Errorf("window %s, %s: %.12g, numpy %.12g", w[0], name, a, b)
			}
		}
	}
}

// BenchmarkRunCSV: the features step on one invented recording of an hour at 100 Hz (360,000
// samples, 17 MB of CSV), both passes, on all cores; samples/s beside the numpy reference of
// testdata/raw/bench_numpy.py on the same file (see docs/benchmarks.md).
func BenchmarkRunCSV(b *testing.B) {
	dir := b.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 1, Hours: 1, Rate: 100, Seed: 1}); err != nil {
		b.Fatal(err)
	}
	in := []string{filepath.Join(dir, "R01.csv")}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var out bytes.Buffer
		if _, err := Run(context.Background(), in, &out, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(360_000*b.N)/b.Elapsed().Seconds()/1e6, "Msamples/s")
}

// The table written as Parquet reads back, through the cohort reader, as the CSV one does:
// the same participants, windows and values, feature by feature.
func TestParquetTableReadsAsTheCSV(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 2, Hours: 1, Rate: 10, Seed: 4}); err != nil {
		t.Fatal(err)
	}
	in := []string{filepath.Join(dir, "R01.csv"), filepath.Join(dir, "R02.csv")}
	tables := map[string]*cohort.Table{}
	for _, name := range []string{"w.csv", "w.parquet"} {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if _, err := Run(context.Background(), in, f, Options{Parquet: strings.HasSuffix(name, ".parquet")}); err != nil {
			t.Fatal(err)
		}
		f.Close()
		tab, err := cohort.Read(context.Background(), []string{filepath.Join(dir, name)}, cohort.ReadOptions{NonWear: cohort.NonWearAuto})
		if err != nil {
			t.Fatal(err)
		}
		defer tab.Close()
		tables[name] = tab
	}
	a, b := tables["w.csv"], tables["w.parquet"]
	if len(a.Units) != 2 || len(b.Units) != 2 || a.Quality.NonWearRule != cohort.NonWearColumn || b.Quality.NonWearRule != cohort.NonWearColumn {
		t.Fatalf("%d and %d units; wear rules %q, %q", len(a.Units), len(b.Units), a.Quality.NonWearRule, b.Quality.NonWearRule)
	}
	for u := range a.Units {
		xa, _ := a.Block(u, nil)
		xb, _ := b.Block(u, nil)
		if len(xa) != len(xb) {
			t.Fatalf("unit %d: %d and %d values", u, len(xa), len(xb))
		}
		for j, name := range a.Features {
			k := slices.Index(b.Features, name)
			for w := 0; w < len(xa)/len(a.Features); w++ {
				va, vb := xa[w*len(a.Features)+j], xb[w*len(b.Features)+k]
				// The reader's store keeps features to float32 (7 digits), and the CSV has 10: two
				// roundings of one value may land a float32 step apart.
				if math.Abs(va-vb) > 2e-7*math.Abs(va)+1e-12 && !(math.IsNaN(va) && math.IsNaN(vb)) {
					t.Fatalf("unit %d window %d %s: CSV %v, Parquet %v", u, w, name, va, vb)
				}
			}
		}
	}
}

// A recording written as Parquet (the time a TIMESTAMP in milliseconds, x, y, z doubles) gives
// the table its CSV gives, byte for byte.
func TestParquetRecordingReadsAsTheCSV(t *testing.T) {
	t.Parallel()
	pq := filepath.Join(t.TempDir(), "small.parquet")
	toParquet(t, "../../testdata/raw/small.csv", pq, 1<<20)
	opts := Options{Window: 10 * time.Second, NoCalibration: true}
	var fromCSV, fromPQ bytes.Buffer
	if _, err := Run(context.Background(), []string{"../../testdata/raw/small.csv"}, &fromCSV, opts); err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), []string{pq}, &fromPQ, opts); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(fromCSV.Bytes(), fromPQ.Bytes()) || fromCSV.Len() < 1000 {
		t.Errorf("the Parquet recording gave another table:\n%.300s\n%.300s", fromCSV.String(), fromPQ.String())
	}
}

// toParquet writes a recording of time,x,y,z (times with an offset) as Parquet: the time a
// TIMESTAMP in milliseconds, x, y, z doubles.
func toParquet(t testing.TB, csvPath, pqPath string, rowsPerGroup int64) {
	t.Helper()
	text, err := os.ReadFile(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	schema := parquet.NewSchema("recording", parquet.Group{"time": parquet.Timestamp(parquet.Millisecond), "x": parquet.Leaf(parquet.DoubleType), "y": parquet.Leaf(parquet.DoubleType), "z": parquet.Leaf(parquet.DoubleType)})
	col := map[string]int{}
	for i, p := range schema.Columns() {
		col[p[0]] = i
	}
	f, err := os.Create(pqPath)
	if err != nil {
		t.Fatal(err)
	}
	pw := parquet.NewWriter(f, schema, parquet.MaxRowsPerRowGroup(rowsPerGroup))
	var batch []parquet.Row
	for _, line := range strings.Split(strings.TrimSpace(string(text)), "\n")[1:] {
		cells := strings.Split(line, ",")
		at, err := time.Parse(time.RFC3339Nano, cells[0])
		if err != nil {
			t.Fatal(err)
		}
		row := make(parquet.Row, 4)
		row[col["time"]] = parquet.Int64Value(at.UnixMilli()).Level(0, 0, col["time"])
		for i, name := range []string{"x", "y", "z"} {
			v, _ := strconv.ParseFloat(cells[1+i], 64)
			row[col[name]] = parquet.DoubleValue(v).Level(0, 0, col[name])
		}
		batch = append(batch, row)
	}
	if _, err := pw.WriteRows(batch); err != nil {
		t.Fatal(err)
	}
	if err := pw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// BenchmarkRunParquet is BenchmarkRunCSV from the same recording written as Parquet in row
// groups of 65,536 rows, read on all cores.
func BenchmarkRunParquet(b *testing.B) {
	dir := b.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 1, Hours: 1, Rate: 100, Seed: 1}); err != nil {
		b.Fatal(err)
	}
	pq := filepath.Join(dir, "R01.parquet")
	toParquet(b, filepath.Join(dir, "R01.csv"), pq, 1<<16)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var out bytes.Buffer
		if _, err := Run(context.Background(), []string{pq}, &out, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(360_000*b.N)/b.Elapsed().Seconds()/1e6, "Msamples/s")
}

// A long recording read in ranges on all cores: the same table on one core and on two, and the
// table of a reading in one piece to 1e-9 (the sums of a block cut by a range are added in two
// parts); the planted calibration and non-wear as before.
func TestRangesGiveTheWholeReading(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 1, Hours: 4, Rate: 20, Seed: 3}); err != nil {
		t.Fatal(err)
	}
	in := []string{filepath.Join(dir, "R01.csv")}
	var whole, one, two bytes.Buffer
	pw, err := Run(context.Background(), in, &whole, Options{})
	if err != nil {
		t.Fatal(err)
	}
	p1, err := Run(context.Background(), in, &one, Options{RangeBytes: 1 << 20, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	p2, err := Run(context.Background(), in, &two, Options{RangeBytes: 1 << 20, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(one.Bytes(), two.Bytes()) {
		t.Fatal("ranges on one core and on two gave other tables")
	}
	a, b := strings.Split(whole.String(), "\n"), strings.Split(one.String(), "\n")
	if len(a) != len(b) || pw[0].Windows != p1[0].Windows || pw[0].NonWear != p1[0].NonWear || pw[0].Samples != p1[0].Samples || p1 == nil || p2[0].Windows != p1[0].Windows {
		t.Fatalf("%d and %d lines; %+v against %+v", len(a), len(b), pw[0], p1[0])
	}
	for i := 1; i < len(a)-1; i++ {
		ca, cb := strings.Split(a[i], ","), strings.Split(b[i], ",")
		if ca[0] != cb[0] || ca[1] != cb[1] {
			t.Fatalf("line %d: %s %s in one piece, %s %s in ranges", i+1, ca[0], ca[1], cb[0], cb[1])
		}
		for j := 2; j < len(ca); j++ {
			x, _ := strconv.ParseFloat(ca[j], 64)
			y, _ := strconv.ParseFloat(cb[j], 64)
			if math.Abs(x-y) > 1e-9*math.Max(1, math.Abs(x)) && !(ca[j] == "NA" && cb[j] == "NA") {
				t.Fatalf("line %d column %d: %s in one piece, %s in ranges", i+1, j+1, ca[j], cb[j])
			}
		}
	}
	for a := 0; a < 3; a++ {
		if math.Abs(pw[0].Scale[a]-p1[0].Scale[a]) > 1e-9 || math.Abs(pw[0].Offset[a]-p1[0].Offset[a]) > 1e-9 {
			t.Errorf("axis %d: calibration %v %v in one piece, %v %v in ranges", a, pw[0].Scale[a], pw[0].Offset[a], p1[0].Scale[a], p1[0].Offset[a])
		}
	}
}

// Errors found in a later range name the line of the whole file, as a reading in one piece does.
func TestRangesNameTheWholeFilesLines(t *testing.T) {
	t.Parallel()
	p := recording(t, "long.csv", 25*60*30, 25, 1, func(i int, r string) string {
		switch i {
		case 30000:
			return strings.Replace(r, ",0.1000,", ",x,", 1)
		}
		return r
	})
	for _, o := range []Options{{}, {RangeBytes: 256 << 10, Workers: 2}} {
		var out bytes.Buffer
		_, err := Run(context.Background(), []string{p}, &out, o)
		if err == nil || !strings.Contains(err.Error(), "long.csv:30002:2: \"x\" is not a number") {
			t.Errorf("ranges of %d bytes: %v", o.RangeBytes, err)
		}
	}
	dup := recording(t, "dup.csv", 25*60*30, 25, 1, func(i int, r string) string {
		if i == 40000 {
			return r + "\n" + r
		}
		return r
	})
	for _, o := range []Options{{}, {RangeBytes: 256 << 10, Workers: 2}} {
		var out bytes.Buffer
		_, err := Run(context.Background(), []string{dup}, &out, o)
		if err == nil || !strings.Contains(err.Error(), "dup.csv:40003: participant dup has this time twice (also line 40002)") {
			t.Errorf("ranges of %d bytes: %v", o.RangeBytes, err)
		}
	}
}

// A Parquet recording of several row groups is read on all cores: the same table on one core
// and on two, and the CSV's to 1e-9.
func TestParquetRowGroupsOnAllCores(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 1, Hours: 2, Rate: 20, Seed: 5}); err != nil {
		t.Fatal(err)
	}
	pq := filepath.Join(dir, "R01.parquet")
	toParquet(t, filepath.Join(dir, "R01.csv"), pq, 10_000)
	var fromCSV, one, two bytes.Buffer
	if _, err := Run(context.Background(), []string{filepath.Join(dir, "R01.csv")}, &fromCSV, Options{}); err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), []string{pq}, &one, Options{Workers: 1}); err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), []string{pq}, &two, Options{Workers: 2}); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(one.Bytes(), two.Bytes()) {
		t.Fatal("row groups on one core and on two gave other tables")
	}
	a, b := strings.Split(fromCSV.String(), "\n"), strings.Split(one.String(), "\n")
	if len(a) != len(b) || len(a) < 100 {
		t.Fatalf("%d and %d lines", len(a), len(b))
	}
	for i := 1; i < len(a)-1; i++ {
		ca, cb := strings.Split(a[i], ","), strings.Split(b[i], ",")
		for j := 0; j < len(ca); j++ {
			x, errx := strconv.ParseFloat(ca[j], 64)
			y, _ := strconv.ParseFloat(cb[j], 64)
			if j <= 1 && ca[j] != cb[j] || errx == nil && math.Abs(x-y) > 1e-9*math.Max(1, math.Abs(x)) {
				t.Fatalf("line %d column %d: %s from CSV, %s from Parquet", i+1, j+1, ca[j], cb[j])
			}
		}
	}
}

// Issue 31, point 7: a table of windows carries the record of how it was made (in a Parquet
// table's metadata; beside a CSV table, as the command writes it), the cohort reader finds it in
// both, and a record of other settings is told apart and its difference named.
func TestTablesCarryHowTheyWereMade(t *testing.T) {
	t.Parallel()
	if cohort.MadeByKey != ProvenanceKey || cohort.MadeBySuffix != ProvenanceSuffix {
		t.Fatalf("the reader looks for %q and %q, the step writes %q and %q", cohort.MadeByKey, cohort.MadeBySuffix, ProvenanceKey, ProvenanceSuffix)
	}
	dir := t.TempDir()
	if _, err := synth.WriteRaw(dir, synth.RawOptions{Participants: 3, Hours: 1, Rate: 10, Seed: 2}); err != nil {
		t.Fatal(err)
	}
	ins, _ := filepath.Glob(filepath.Join(dir, "R*.csv"))
	o := Options{Tool: "cohortmix test"}
	want := ProvenanceOf(o, o.Tool)
	for _, name := range []string{"w.parquet", "w.csv"} {
		o.Parquet = strings.HasSuffix(name, ".parquet")
		var out bytes.Buffer
		if _, err := Run(context.Background(), ins, &out, o); err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, name)
		os.WriteFile(p, out.Bytes(), 0o644)
		if !o.Parquet {
			os.WriteFile(p+ProvenanceSuffix, []byte(want.JSON()+"\n"), 0o644)
		}
		tab, err := cohort.Read(context.Background(), []string{p}, cohort.ReadOptions{ID: "participant", Order: "window", MinWindows: 1})
		if err != nil {
			t.Fatal(err)
		}
		made := tab.Files[0].MadeBy
		tab.Close()
		got, err := ParseProvenance(p, made)
		if err != nil || !got.Same(want) || got.Tool != "cohortmix test" || got.Window != "1m0s" || len(got.Features) != len(FeatureNames) {
			t.Errorf("%s: record %q (%v)", name, made, err)
		}
	}
	other := ProvenanceOf(Options{Window: 30 * time.Second, NoCalibration: true}, "another tool")
	if other.Same(want) || other.Differences(want) != "window 30s, not 1m0s; calibration false, not true" {
		t.Errorf("differences: %q", other.Differences(want))
	}
	if !ProvenanceOf(Options{}, "another tool").Same(want) {
		t.Error("records that differ only in the tool are not the same")
	}
}
