package cohort

import (
	"bufio"
	"bytes"
	"cmp"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
	"io"
	"math"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync/atomic"
	"time"

	"github.com/cohortmix/cohortmix/cohort/note"

	"github.com/cohortmix/cohortmix/cluster/groupstat"
)

// Missing chooses what happens to a window with an empty, NA or NaN feature cell.
type Missing int

const (
	DropWindow   Missing = iota // the window is left out and counted
	ImputeMedian                // the cell takes the participant's median of that feature, and is counted
)

func (m Missing) String() string {
	if m == ImputeMedian {
		return "impute participant median"
	}
	return "drop window"
}

// ReadOptions names the column roles. Zero values take the documented defaults.
type ReadOptions struct {
	ID         string   // participant id column; "" means "participant"
	Order      string   // window order column (integers or ISO-8601 times); "" means "window"; "-" means file order
	Wave       string   // optional visit column; a participant's waves are separate units
	Label      string   // optional known activity label, used only for validation tables
	Features   []string // name patterns (path.Match, e.g. "vm_*"); empty means every other numeric column
	Missing    Missing
	MinWindows int    // participants with fewer usable windows are excluded; 0 means 20
	TempDir    string // folder for the temporary windows files of large inputs; "" means the system's
	// Shard, when its Count is above 0, keeps only the participants whose id falls in shard
	// Index of Count (ShardOf), for a run split across machines. Every file is still read whole,
	// so that file sizes, row counts, the order in which participants first appear (Unit.Ordinal)
	// and each feature's lowest value are those of the whole input; constant features are not
	// dropped (a feature can be constant in one shard only) but described in Table.Constancy.
	Shard Shard
	// MemoryValues is how many values the windows may take in memory before they go to a
	// temporary file in TempDir; 0 means 8 Mi (64 MiB). The result is the same either way.
	MemoryValues int64
	// Workers is how many goroutines parse at once (0: one per core); it never changes the table.
	Workers int
	// tuning sets how the reader cuts its work; none of it changes the table, which tests
	// check by changing it.
	tuning readTuning
	// Pseudonym, when set, replaces every participant id of the table (its units and its
	// exclusions) as the table is made, so that nothing taken from it (a windows file, a piece,
	// an output) holds a study id; messages about the input still name the ids as read, for the
	// analyst to find the rows. Pseudonyms names the key it uses (its fingerprint), for the
	// record and for the checks of later passes.
	Pseudonym  func(id string) string
	Pseudonyms string
	// NonWear names a non-wear rule whose windows are left out of the table and counted
	// (Unit.NonWear, Quality.WindowsNonWear): "" for none, NonWearChoi or NonWearTroiano, which
	// need times in the order column and a column of activity counts (NonWearFeature, or found by
	// its name), or NonWearAuto: Choi's where those are there, none otherwise.
	NonWear        string
	NonWearFeature string
	// WearColumn names a numeric column that marks each window worn (1) or not (0), as a
	// device's own wear detection gives it, in place of a non-wear rule: its 0 windows are left
	// out as non-wear, and the column is not a feature. With NonWear NonWearAuto, a column named
	// AutoWearColumn is taken as the wear column without being named.
	WearColumn string
	// TimeZone is the IANA zone (Europe/Berlin) in which times given with a UTC offset are read
	// on the wall clock, for days, hours of the day and weekends; "" reads them in UTC. Times
	// without an offset are read as written.
	TimeZone string
	// ValidDay is the wear that makes a calendar day valid (DefaultValidDay; 0: no valid-day
	// rule). With times in the order column, windows on days with less wear are left out and
	// counted (Unit.Wear, Quality.WindowsInvalidDays), and a participant with fewer than
	// ValidDays valid days (0 means DefaultValidDays), or with none on a weekend when WeekendDay
	// is set, is excluded with the reason. With ValidDayAuto the rule applies only where a
	// non-wear rule does (a wear-time protocol's recording of activity counts).
	ValidDay     time.Duration
	ValidDayAuto bool
	ValidDays    int
	WeekendDay   bool
	// Progress, when set, is told how many bytes of a file were read, of its size (0 when not
	// known, as for standard input), and how many windows were read from all files so far; it is
	// called from one goroutine at a time.
	Progress func(file string, done, total, windows int64)
}

func (o ReadOptions) withDefaults() ReadOptions {
	if o.ID == "" {
		o.ID = "participant"
	}
	if o.Order == "" {
		o.Order = "window"
	}
	if o.MinWindows == 0 {
		o.MinWindows = 20
	}
	return o
}

// Shard names one of Count parts of the participants, split by a hash of their id.
type Shard struct{ Index, Count int }

// String is the shard as the command line gives it: "2/4" for Index 1 of 4.
func (s Shard) String() string { return fmt.Sprintf("%d/%d", s.Index+1, s.Count) }

// ShardOf is the shard, of count, of the participant with this id: all waves of one person fall
// in the same shard, whatever the files they sit in (FNV-1a of the id, mixed by SplitMix64).
func ShardOf(id string, count int) int {
	return int(shardHash(id) % uint64(count))
}

// shardHash is ShardOf's hash of an id: FNV-1a, mixed by SplitMix64.
func shardHash(id string) uint64 {
	z := uint64(0xcbf29ce484222325)
	for i := 0; i < len(id); i++ {
		z = (z ^ uint64(id[i])) * 0x100000001b3
	}
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	return z
}

// Unit is one participant, or one wave of a participant when a wave column is given. Its
// windows' features are read with Table.Block.
type Unit struct {
	ID, Wave string
	Ordinal  int      // the order in which the unit first appeared in the inputs, from 0, over every unit read
	at       int64    // first window in the table's store
	rows     int      // usable windows
	runs     []run    // the stretches of the store holding them, in order, when more than one
	Labels   []string // known activity label per window, when a label column is given
	Files    []string // the files its windows came from
	Dropped  int      // windows dropped for missing cells
	NonWear  int      // windows left out as non-wear (ReadOptions.NonWear)
	Wear     Wear     // wear time by day, under the valid-day rule (ReadOptions.ValidDay)
	Imputed  int      // cells imputed
	Sorted   bool     // its windows were not in order in the input and were sorted
	shardKey uint64   // shardHash of the id as read (before any pseudonym), for InShard
}

// InShard tells whether the unit falls in the shard (ShardOf its id as read).
func (u *Unit) InShard(sh Shard) bool {
	return sh.Count <= 0 || u.Shard(sh.Count) == sh.Index
}

// Shard is the index of the shard, of count (≥ 1), that the unit falls in (ShardOf its id as
// read).
func (u *Unit) Shard(count int) int { return int(u.shardKey % uint64(count)) }

// Windows is the number of usable windows.
func (u *Unit) Windows() int { return u.rows }

// Exclusion is a unit left out of the analysis, with why.
type Exclusion struct {
	ID, Wave string
	Ordinal  int // as Unit.Ordinal
	Windows  int
	Reason   note.Note // one of the Excluded kinds
}

// readTuning is how the reader cuts its work (ReadOptions.tuning); the zero value is the
// default of each.
type readTuning struct {
	chunkBytes  int  // bytes read per chunk of text, extended to the end of a line; 0: 4 MiB
	generalRows bool // every row through the general reader, none through fastRow
	parquetRows int  // rows of a Parquet row group read at a time; 0: 65,536
}

// LeftOut is a column, feature or variable that was not used, with why.
type LeftOut struct {
	Name   string
	Reason note.Note // one of the LeftOut kinds of this package, or of the package that left it out
}

// The kinds of the reasons a column or feature is left out (LeftOut.Reason).
const (
	// LeftOutUnmatched: a column that ReadOptions.Features does not match.
	LeftOutUnmatched note.Kind = "cohort.left-out.unmatched"
	// LeftOutText: a column of text (its first cell Names[0]), not a feature.
	LeftOutText note.Kind = "cohort.left-out.text"
	// LeftOutColumnKind: a Parquet column of the type Names[0], not a feature.
	LeftOutColumnKind note.Kind = "cohort.left-out.column-kind"
	// LeftOutConstant: a feature of the value Floats[0] in every window.
	LeftOutConstant note.Kind = "cohort.left-out.constant"
)

// Quality accounts for every window and participant that came in.
type Quality struct {
	UnitsIn, WindowsIn int
	WindowsDropped     int           // for missing cells, in units that were kept
	WindowsNonWear     int           // left out as non-wear (ReadOptions.NonWear), in units that were kept
	NonWearRule        string        // the rule that found them
	WindowsInvalidDays int           // left out as on days of too little wear (ReadOptions.ValidDay), in units that were kept
	ValidDayRule       *ValidDayRule // the valid-day rule applied (nil for none)
	WindowsExcluded    int           // windows of excluded units
	CellsImputed       int
	Excluded           []Exclusion
	DroppedFeatures    []LeftOut
	IgnoredColumns     []LeftOut
	Notes              []note.Note // policies applied: sorted windows, merged files, … (the Note kinds of this package)
	SortedUnits        int         // units whose windows were not in order and were sorted
	JoinedUnits        int         // units whose windows sat in more than one file
	// TrimmedCells counts the id and wave cells that had spaces around them, which were
	// removed ("P6 " is participant P6); TrimmedAt is the first one's row, as file:line.
	TrimmedCells int
	TrimmedAt    string
}

// WindowsUsed is the windows that were used: those in, less those dropped, left out as non-wear
// or on days that were not valid, and those of excluded units.
func (q Quality) WindowsUsed() int {
	return q.WindowsIn - q.WindowsDropped - q.WindowsNonWear - q.WindowsInvalidDays - q.WindowsExcluded
}

// The kinds of the reading's notes (Quality.Notes), with the order of their numbers and names.
const (
	// NoteNonWear: Ints[0] windows of the participants kept fell in non-wear periods and were
	// left out, by the rule Names[0] (NonWearChoi, NonWearTroiano or NonWearColumn).
	NoteNonWear note.Kind = "cohort.non-wear"
	// NoteValidDays: the valid-day rule (a day counts with Floats[0] hours or more of wear, a
	// participant with Ints[1] or more such days, one of them a Saturday or Sunday when Ints[2]
	// is 1; days on the wall clock of the zone Names[0], or where Ints[3] is 1 by the clock the
	// times were written in) left out Ints[0] windows of the
	// participants kept, on other days.
	NoteValidDays note.Kind = "cohort.valid-days"
	// NoteTrimmed: Ints[0] id or wave cells had spaces around them, the first at Names[0]; the
	// spaces were removed.
	NoteTrimmed note.Kind = "cohort.trimmed"
	// NoteSorted: the windows of Ints[0] participants were not in order and were sorted by the
	// order column Names[0].
	NoteSorted note.Kind = "cohort.sorted"
	// NoteJoined: Ints[0] participants had windows in more than one file, which were joined.
	NoteJoined note.Kind = "cohort.joined"
)

// The kinds of the reasons a participant is excluded (Exclusion.Reason).
const (
	// ExcludedFewWindows: Ints[0] usable windows, fewer than the minimum Ints[1]
	// (ReadOptions.MinWindows); Ints[2] were dropped for missing cells and Ints[3] left out as
	// non-wear.
	ExcludedFewWindows note.Kind = "cohort.excluded.few-windows"
	// ExcludedAllMissing: the feature Names[0] is missing in every window, so it cannot be
	// imputed.
	ExcludedAllMissing note.Kind = "cohort.excluded.all-missing"
	// ExcludedFewValidDays: Ints[0] valid days (Floats[0] hours or more of wear), fewer than the
	// Ints[1] required (ReadOptions.ValidDays).
	ExcludedFewValidDays note.Kind = "cohort.excluded.few-valid-days"
	// ExcludedNoWeekendDay: no valid weekend day among the Ints[0] valid days
	// (ReadOptions.WeekendDay).
	ExcludedNoWeekendDay note.Kind = "cohort.excluded.no-weekend-day"
)

// QualityNotes are the notes of Quality.Notes on non-wear, valid days, trimmed cells and sorted
// and joined units, for q's counts; order names the order column.
func QualityNotes(q Quality, order string) []note.Note {
	var notes []note.Note
	if q.WindowsNonWear > 0 {
		notes = append(notes, note.Note{Kind: NoteNonWear, Ints: []int{q.WindowsNonWear}, Names: []string{q.NonWearRule}})
	}
	if v := q.ValidDayRule; v != nil {
		notes = append(notes, note.Note{Kind: NoteValidDays, Ints: []int{q.WindowsInvalidDays, v.Days, boolInt(v.Weekend), boolInt(v.Naive)}, Floats: []float64{v.Hours}, Names: []string{v.Zone}})
	}
	if q.TrimmedCells > 0 {
		notes = append(notes, note.Note{Kind: NoteTrimmed, Ints: []int{q.TrimmedCells}, Names: []string{q.TrimmedAt}})
	}
	if q.SortedUnits > 0 {
		notes = append(notes, note.Note{Kind: NoteSorted, Ints: []int{q.SortedUnits}, Names: []string{order}})
	}
	if q.JoinedUnits > 0 {
		notes = append(notes, note.Note{Kind: NoteJoined, Ints: []int{q.JoinedUnits}})
	}
	return notes
}

// FileInfo records an input file for the settings sheet.
type FileInfo struct {
	Path   string
	SHA256 string
	Bytes  int64
	Rows   int
	// Delimiter ("comma", "semicolon" or "tab") and Decimal ("point" or "comma") say how a
	// text table was read; "" for sheets and Parquet.
	Delimiter, Decimal string
	// MadeBy is the record of how the table was made, where the features step made it: the
	// JSON it keeps in a Parquet table's metadata (MadeByKey) or in a file beside a text table
	// (named as the table with MadeBySuffix added); "" otherwise.
	MadeBy string
}

// MadeByKey and MadeBySuffix are where the features step (package raw) leaves its record of
// how a table was made: raw.ProvenanceKey and raw.ProvenanceSuffix.
const (
	MadeByKey    = "cohortmix.features"
	MadeBySuffix = ".features.json"
)

// madeByBeside reads the record of how a text table was made from the file beside it; "" when
// there is none. A record larger than 64 KiB is no record of the features step.
func madeByBeside(p string) string {
	b, err := os.ReadFile(p + MadeBySuffix)
	if err != nil || len(b) > 64<<10 {
		return ""
	}
	return strings.TrimSpace(string(b))
}

// Table is what the reader returns: the units with their windows and the accounting. Close
// removes its temporary file, if it made one.
type Table struct {
	store     *store
	cols      []int // stored column of each feature
	Features  []string
	Units     []*Unit
	Quality   Quality
	Files     []FileInfo
	OrderKind string // "integer", "time" or "file order"
	// TimeZone is the zone in which the times, given with a UTC offset, are read on the wall
	// clock (ReadOptions.TimeZone); "" for UTC, and for times without an offset, read as written.
	TimeZone  string
	HasLabels bool
	// Constancy says which features took one value in every kept window, for a table read as a
	// shard (ReadOptions.Shard), whose constant features are kept; nil otherwise.
	Constancy *Constancy
	lo        []float64 // by stored column: lowest value over every window read
}

// Constancy tells which features took a single value over every kept window (Have: there was
// one), and the first window's values.
type Constancy struct {
	Have     bool
	First    []float64
	Constant []bool
}

// Lowest returns feature j's lowest value over every window read, those of participants later
// excluded included (+Inf when there is none): what decides whether the feature can be taken
// on a log scale.
func (t *Table) Lowest(j int) float64 {
	if t.lo == nil {
		return math.Inf(1)
	}
	return t.lo[t.cols[j]]
}

// Read reads one or more CSV/TSV files (gzip by content), each with a header row, into units.
// The delimiter is detected among comma, semicolon and tab; semicolon files may use a decimal
// comma. "-" reads standard input. It stops with ctx.Err() when ctx is cancelled.
func Read(ctx context.Context, paths []string, opts ReadOptions) (*Table, error) {
	opts = opts.withDefaults()
	if len(paths) == 0 {
		return nil, &InputError{Msg: "no input files; name at least one CSV or TSV file", Err: ErrOpen}
	}
	if sh := opts.Shard; sh.Count < 0 || sh.Count > 0 && (sh.Index < 0 || sh.Index >= sh.Count) {
		return nil, fmt.Errorf("cohort: shard %d of %d: %w; shards are numbered from 0 to one less than their count", sh.Index, sh.Count, ErrBadOption)
	}
	dir := opts.TempDir
	if dir == "" {
		dir = os.TempDir()
	}
	r := &reader{ctx: ctx, opts: opts, byKey: map[string]*rawUnit{}, raw: &store{dir: dir, limit: opts.MemoryValues}}
	defer func() {
		if r.raw != nil {
			r.raw.close()
		}
	}()
	paths, err := expandPaths(paths)
	if err != nil {
		return nil, err
	}
	for _, p := range paths {
		if err := r.readFile(p); err != nil {
			return nil, err
		}
	}
	return r.finish()
}

// ExpandPaths lists the files that Read would read for these paths: a folder's table files,
// a glob's matches, "-" for standard input, and other paths as they are.
func ExpandPaths(paths []string) ([]string, error) { return expandPaths(paths) }

// tableExt are the file names a folder given as input is read for.
var tableExt = []string{".csv", ".tsv", ".txt", ".csv.gz", ".tsv.gz", ".txt.gz", ".xlsx", ".parquet"}

// expandPaths replaces a folder by the tables in it (sorted by name, not recursive) and a glob
// pattern that names no file by the files it matches; "-" (standard input) stays.
func expandPaths(paths []string) ([]string, error) {
	var out []string
	for _, p := range paths {
		st, err := os.Stat(p)
		switch {
		case p == "-":
			out = append(out, p)
		case err == nil && st.IsDir():
			entries, err := os.ReadDir(p)
			if err != nil {
				return nil, &InputError{File: p, Msg: "cannot list the folder: " + err.Error(), Err: ErrOpen, Cause: err}
			}
			n := len(out)
			for _, e := range entries {
				if e.Type().IsRegular() && hasTableExt(e.Name()) {
					out = append(out, filepath.Join(p, e.Name()))
				}
			}
			if len(out) == n {
				return nil, &InputError{File: p, Msg: "is a folder with no table files (" + strings.Join(tableExt, ", ") + "); name the files, or put them in it", Err: ErrOpen}
			}
		case err != nil && strings.ContainsAny(p, "*?["):
			matches, gerr := filepath.Glob(p)
			if gerr != nil || len(matches) == 0 {
				return nil, &InputError{File: p, Msg: "no file matches this pattern; check the path", Err: ErrOpen}
			}
			out = append(out, matches...)
		default:
			out = append(out, p)
		}
	}
	return out, nil
}

func hasTableExt(name string) bool {
	name = strings.ToLower(name)
	for _, e := range tableExt {
		if strings.HasSuffix(name, e) {
			return true
		}
	}
	return false
}

// rawUnit is a unit while it is read: where its windows lie in the store, and what finish
// needs to know of them without reading them back.
type rawUnit struct {
	id, wave string
	ordinal  int
	skip     bool  // in another shard: its windows are not kept
	runs     []run // where its windows lie in the store, in arrival order
	n        int   // windows
	lastOrd  int64
	unsorted bool // a window's order was not above the one before it
	missing  int  // windows with a missing cell
	first    []float64
	varies   []bool // feature j took another value than first[j] (windows with missing cells aside)
	nVaries  int
	labels   []string
	files    []string
	lastFile string
}

// run is a stretch of consecutive windows of one unit in a store.
type run struct {
	at   int64 // first window
	rows int
}

// minStretch is the shortest average stretch, in windows, that a unit's windows are read from
// in place (see finish).
const minStretch = 64

type reader struct {
	progress  func()       // reports the bytes read of the current file
	windows   atomic.Int64 // windows merged so far, for progress
	raw       *store       // every window's values as read
	last      *rawUnit     // the unit of the previous window
	ctx       context.Context
	opts      ReadOptions
	features  []string // decided by the first file
	firstFile string
	orderKind string
	orderAt   string // where the order kind was decided, for the mixed-order message
	orderZone string // times: "with a UTC offset" or "without a UTC offset"; "" for integers
	hasLabels bool
	byKey     map[string]*rawUnit
	units     []*rawUnit
	seen      int // units met, in every shard
	files     []FileInfo
	ignored   []LeftOut
	rows      int
	lo        []float64 // each feature's lowest value, over every window read
	comma     bool      // the current text file's numbers use a decimal comma
	trimmed   int       // rows whose id or wave had spaces around it
	trimmedAt string    // the first of them, as file:line
}

// MaxIDBytes bounds a participant id and a wave: far above any study's ids, and far below what
// a spreadsheet cell holds (32,767 characters), so that an id is never cut in the workbook.
const MaxIDBytes = 1000

// noteTrimmed counts n rows of file p whose id or wave was trimmed, the first at line.
func (r *reader) noteTrimmed(p string, n, line int) {
	if n > 0 && r.trimmed == 0 {
		r.trimmedAt = fmt.Sprintf("%s:%d", p, line)
	}
	r.trimmed += n
}

// hashFile returns the SHA-256 and size of a file read whole.
func hashFile(p string) (string, int64, error) {
	f, err := os.Open(p)
	if err != nil {
		return "", 0, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	return hex.EncodeToString(h.Sum(nil)), n, err
}

// hashingFile is the input after BOM removal and decompression, with a hash of the raw bytes.
func openInput(p string) (io.Reader, func() (string, int64), func() error, *countWriter, int64, error) {
	var f *os.File
	var size int64
	if p == "-" {
		f = os.Stdin
	} else {
		st, err := os.Stat(p)
		if err != nil {
			return nil, nil, nil, nil, 0, &InputError{File: p, Msg: "cannot open: " + strings.TrimPrefix(err.Error(), "stat "+p+": ") + "; check the path", Err: ErrOpen, Cause: err}
		}
		if st.IsDir() {
			return nil, nil, nil, nil, 0, &InputError{File: p, Msg: "is a directory; name the table files inside it", Err: ErrOpen}
		}
		if f, err = os.Open(p); err != nil {
			return nil, nil, nil, nil, 0, &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen, Cause: err}
		}
		size = st.Size()
	}
	h := sha256.New()
	cnt := &countWriter{h: h}
	raw := bufio.NewReaderSize(io.TeeReader(f, cnt), 1<<20)
	var in io.Reader = raw
	if head, _ := raw.Peek(2); len(head) == 2 && head[0] == 0x1f && head[1] == 0x8b {
		gz, err := gzip.NewReader(raw)
		if err != nil {
			f.Close()
			return nil, nil, nil, nil, 0, &InputError{File: p, Msg: "gzip header is damaged: " + err.Error(), Err: ErrNotText, Cause: err}
		}
		in = bufio.NewReaderSize(gz, 1<<20)
	}
	sum := func() (string, int64) {
		_, _ = io.Copy(io.Discard, raw) // hash the whole file even if the parse stopped early
		return hex.EncodeToString(h.Sum(nil)), cnt.n
	}
	return in, sum, f.Close, cnt, size, nil
}

type countWriter struct {
	h hash.Hash
	n int64
}

func (c *countWriter) Write(b []byte) (int, error) {
	c.n += int64(len(b))
	return c.h.Write(b)
}

func (r *reader) readFile(p string) error {
	r.comma = false
	switch lower := strings.ToLower(p); {
	case strings.HasSuffix(lower, ".xlsx"):
		r.progress = func() {}
		return r.readXLSX(p)
	case strings.HasSuffix(lower, ".parquet"):
		r.progress = func() {}
		return r.readParquet(p)
	}
	in, sum, closeFn, cnt, size, err := openInput(p)
	if err != nil {
		return err
	}
	defer closeFn()
	if r.opts.Progress != nil {
		r.progress = func() { r.opts.Progress(p, cnt.n, size, r.windows.Load()) }
		defer r.progress()
	} else {
		r.progress = func() {}
	}
	br, head, err := r.textHead(p, in)
	if err != nil {
		return err
	}
	delim := sniffDelimiter(head)
	r.comma = delim == ';' || delim == '\t' && decimalCommas(head)
	cr := csv.NewReader(br)
	cr.Comma = delim
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err != nil {
		return r.csvError(p, err)
	}
	header = slices.Clone(header)
	roles, err := r.assignRoles(p, header)
	if err != nil {
		return err
	}
	rows, err := r.textRows(p, br, cr, head, header, roles, delim)
	if err != nil {
		return err
	}
	if rows == 0 {
		return &InputError{File: p, Line: 1, Msg: "has a header but no windows; each row should be one window", Err: ErrEmpty}
	}
	hexsum, n := sum()
	r.files = append(r.files, FileInfo{Path: p, SHA256: hexsum, Bytes: n, Rows: rows, Delimiter: delimName[delim], Decimal: decimalName[r.comma], MadeBy: madeByBeside(p)})
	r.rows += rows
	return nil
}

// textHead opens a text table for reading and checks its head (the first 64 KiB, after a
// byte-order mark): not empty, text, and lines that end in LF or CRLF.
func (r *reader) textHead(p string, in io.Reader) (*bufio.Reader, []byte, error) {
	br := bufio.NewReaderSize(newLineLimit(in, p), 1<<16)
	head, perr := br.Peek(64 << 10)
	if perr != nil && !errors.Is(perr, io.EOF) && !errors.Is(perr, bufio.ErrBufferFull) {
		return nil, nil, r.gzipOrIO(p, perr)
	}
	if bytes.HasPrefix(head, []byte("\xef\xbb\xbf")) {
		_, _ = br.Discard(3)
		head = head[3:]
	}
	if len(bytes.TrimSpace(head)) == 0 {
		return nil, nil, &InputError{File: p, Msg: "file is empty; it needs a header row and at least one window", Err: ErrEmpty}
	}
	if off := textFault(head, perr != nil && errors.Is(perr, io.EOF)); off >= 0 {
		if nl := bytes.IndexByte(head, '\n'); nl < 0 || off < nl { // in the header: not text at all
			return nil, nil, &InputError{File: p, Line: 1, Msg: "is not a text table (binary or not UTF-8); export it as CSV or TSV", Err: ErrNotText}
		}
		return nil, nil, textFaultError(p, head, off, 1)
	}
	if bytes.IndexByte(head, '\n') < 0 && bytes.IndexByte(head, '\r') >= 0 {
		return nil, nil, &InputError{File: p, Line: 1, Msg: "lines end in a bare carriage return (an old Mac line end); save the file with LF or CRLF line ends", Err: ErrRagged}
	}
	return br, head, nil
}

// textRows reads a text table's windows after its header: the first through encoding/csv (it
// decides the feature columns of the first file and the kind of the order column), the rest in
// parallel chunks; it returns how many there were.
func (r *reader) textRows(p string, br *bufio.Reader, cr *csv.Reader, head []byte, header []string, roles roles, delim rune) (int, error) {
	fileIdx := len(r.files)
	rows := 0
	// The first window goes through encoding/csv: it decides the feature columns of the first
	// file and the kind of the order column. The rest is parsed in parallel chunks.
	rec, err := cr.Read()
	if err != nil && err != io.EOF {
		return 0, r.csvError(p, err)
	}
	if err == nil {
		if r.features == nil {
			if err := r.classify(p, cr.FieldPos, header, append([][]string{rec}, sampleRecords(head, delim, len(header))...), &roles, delim); err != nil {
				return 0, err
			}
		}
		rows = 1
		line, _ := cr.FieldPos(0)
		if err := r.addRecord(p, fileIdx, header, roles, delim, rec, cr.FieldPos, parseOrderCell); err != nil {
			return 0, err
		}
		for _, f := range rec {
			line += strings.Count(f, "\n") // quoted newlines
		}
		spec := newParseSpec(p, fileIdx, header, roles, delim, r.comma)
		spec.generalRows = r.opts.tuning.generalRows
		err = r.parseBody(br, spec, line+1, func(c *parsedChunk) error {
			if err := r.checkKinds(p, header, roles, c); err != nil {
				return err
			}
			if err := r.mergeChunk(p, c, roles.order < 0); err != nil {
				return err
			}
			rows += c.rows()
			c.release()
			return nil
		})
		if err != nil {
			return 0, err
		}
	}
	return rows, nil
}

// appendRow adds one window read cell by cell (from a sheet, a Parquet row or the first line of
// a text table): vals holds its features.
func (r *reader) appendRow(p string, fileIdx int, id, wave string, ord int64, fileOrder bool, vals []float64, label string, line int) error {
	d := len(r.features)
	c := &parsedChunk{vals: make([]float64, d+2)}
	copy(c.vals, vals)
	c.vals[d] = math.Float64frombits(uint64(ord))
	c.vals[d+1] = packSource(fileIdx, line)
	missing := false
	for _, v := range vals {
		missing = missing || math.IsNaN(v)
	}
	c.addWindow([]byte(id), []byte(wave), 0, missing)
	if r.hasLabels {
		c.labels = []string{label}
	}
	return r.mergeChunk(p, c, fileOrder)
}

// mergeChunk adds a chunk's windows to their units and to the store, in order. With fileOrder
// the order key is the window's place among its unit's windows.
func (r *reader) mergeChunk(p string, c *parsedChunk, fileOrder bool) error {
	d := len(r.features)
	w := d + 2
	if r.raw.width == 0 {
		r.raw.width = w
	}
	r.windows.Add(int64(c.n))
	r.noteTrimmed(p, c.trimmed, c.trimLine)
	if c.lo == nil {
		c.summarize(d, w)
	}
	if r.lo == nil {
		r.lo = c.lo
	} else {
		for j := range r.lo {
			r.lo[j] = min(r.lo[j], c.lo[j])
		}
	}
	if len(c.segs) > 64 {
		c = groupByUnit(c, w)
	}
	start := 0
	for _, sg := range c.segs {
		cur, err := r.unitOf(p, sg, c, start)
		if err != nil {
			return err
		}
		if cur.skip {
			start = sg.end
			continue
		}
		if cur.lastFile != p {
			cur.files = append(cur.files, p)
			cur.lastFile = p
		}
		cur.addRows(c, start, sg.end, d, fileOrder)
		at := r.raw.n / int64(w)
		if err := r.raw.append(c.vals[start*w : sg.end*w]); err != nil {
			return err
		}
		if n := len(cur.runs); n > 0 && cur.runs[n-1].at+int64(cur.runs[n-1].rows) == at {
			cur.runs[n-1].rows += sg.end - start
		} else {
			cur.runs = append(cur.runs, run{at: at, rows: sg.end - start})
		}
		if r.hasLabels {
			cur.labels = append(cur.labels, c.labels[start:sg.end]...)
		}
		start = sg.end
	}
	return nil
}

// unitOf is the unit of a segment's participant and wave, made on first sight (and marked to
// skip when it belongs to another shard); the segment starts at row start of the chunk.
func (r *reader) unitOf(p string, sg segment, c *parsedChunk, start int) (*rawUnit, error) {
	cur := r.last
	if cur != nil && cur.id == sg.id && cur.wave == sg.wave {
		return cur, nil
	}
	key := sg.id + "\x00" + sg.wave
	if cur = r.byKey[key]; cur == nil {
		if len(sg.id) > MaxIDBytes || len(sg.wave) > MaxIDBytes {
			what, v := "participant id", sg.id
			if len(sg.id) <= MaxIDBytes {
				what, v = "wave", sg.wave
			}
			return nil, &InputError{File: p, Line: c.line(start, len(r.features)+2), Msg: fmt.Sprintf("the %s is %s bytes long (it starts %q); ids and waves are at most %d bytes: is the id column the right one?", what, Thousands(len(v)), v[:20], MaxIDBytes), Err: ErrMissingID}
		}
		cur = &rawUnit{id: sg.id, wave: sg.wave, ordinal: r.seen}
		r.seen++
		if sh := r.opts.Shard; sh.Count > 0 && ShardOf(sg.id, sh.Count) != sh.Index {
			cur.skip = true
		} else {
			cur.first, cur.varies = make([]float64, len(r.features)), make([]bool, len(r.features))
			r.units = append(r.units, cur)
		}
		r.byKey[key] = cur
	}
	r.last = cur
	return cur, nil
}

// addRows counts rows start to end of the chunk into the unit: its windows, missing ones, order
// (numbered in file order with fileOrder) and which features vary.
func (cur *rawUnit) addRows(c *parsedChunk, start, end, d int, fileOrder bool) {
	w := d + 2
	for i := start; i < end; i++ {
		row := c.vals[i*w : (i+1)*w]
		if fileOrder {
			row[d] = math.Float64frombits(uint64(cur.n))
		}
		ord := int64(math.Float64bits(row[d]))
		if cur.n > 0 && ord <= cur.lastOrd {
			cur.unsorted = true
		}
		if c.nan != nil && c.nan[i] {
			cur.missing++
		} else if cur.n == cur.missing {
			copy(cur.first, row[:d])
		} else if cur.nVaries < d {
			for j, v := range row[:d] {
				if !cur.varies[j] && v != cur.first[j] {
					cur.varies[j] = true
					cur.nVaries++
				}
			}
		}
		cur.lastOrd = ord
		cur.n++
	}
}

// groupByUnit reorders a chunk whose units' windows are interleaved (a table sorted by time
// across participants, say) so that each unit's windows are together, in their order: each
// unit then takes one stretch of the store per chunk instead of one per window. The order
// within a unit, which is all that later steps see, is unchanged.
func groupByUnit(c *parsedChunk, w int) *parsedChunk {
	type unit struct{ segs []int }
	index := map[[2]string]int{}
	var units []unit
	for k, sg := range c.segs {
		key := [2]string{sg.id, sg.wave}
		g, ok := index[key]
		if !ok {
			g = len(units)
			index[key] = g
			units = append(units, unit{})
		}
		units[g].segs = append(units[g].segs, k)
	}
	if len(units) == len(c.segs) {
		return c // every unit in one stretch already
	}
	out := &parsedChunk{n: c.n, vals: make([]float64, 0, len(c.vals)), kinds: make([]byte, 0, c.n), cells: c.cells}
	if c.nan != nil {
		out.nan = make([]bool, 0, c.n)
	}
	if c.labels != nil {
		out.labels = make([]string, 0, c.n)
	}
	for _, u := range units {
		for _, k := range u.segs {
			start := 0
			if k > 0 {
				start = c.segs[k-1].end
			}
			end := c.segs[k].end
			out.vals = append(out.vals, c.vals[start*w:end*w]...)
			out.kinds = append(out.kinds, c.kinds[start:end]...)
			if c.nan != nil {
				out.nan = append(out.nan, c.nan[start:end]...)
			}
			if c.labels != nil {
				out.labels = append(out.labels, c.labels[start:end]...)
			}
		}
		first := c.segs[u.segs[0]]
		out.segs = append(out.segs, segment{id: first.id, wave: first.wave, end: len(out.kinds)})
	}
	return out
}

// checkKinds refuses the first window of a chunk whose order is of another kind (integer or
// time) than the first window's; the chunk's cells name the windows to look at (its first, and
// its first of another kind).
func (r *reader) checkKinds(p string, header []string, ro roles, c *parsedChunk) error {
	if ro.order < 0 || c.n == 0 {
		return nil
	}
	for _, cell := range c.cells {
		if err := r.checkOrderKind(p, c.line(cell.row, len(r.features)+2), cell.col, header[ro.order], cell.text, c.kinds[cell.row]); err != nil {
			return err
		}
	}
	return nil
}

// checkOrderKind checks an order cell's kind against the first window's: integers or times,
// and times all with a UTC offset or all without (mixed, they would interleave by an hour or
// more without a word).
func (r *reader) checkOrderKind(p string, line, col int, field, text string, k byte) error {
	kind, zone := "integer", ""
	if isTime(k) {
		kind, zone = "time", "without a UTC offset"
		if k == 'z' {
			zone = "with a UTC offset"
		}
	}
	if r.orderKind == "" { // the first window of all decides
		r.orderKind, r.orderZone, r.orderAt = kind, zone, fmt.Sprintf("%s:%d", p, line)
	}
	switch {
	case kind != r.orderKind:
		return &InputError{File: p, Line: line, Column: col, Field: field,
			Msg: fmt.Sprintf("%q is %s but the order column held %ss from %s on; use one kind throughout", text, article(kind), r.orderKind, r.orderAt), Err: ErrOrder}
	case zone != r.orderZone:
		return &InputError{File: p, Line: line, Column: col, Field: field,
			Msg: fmt.Sprintf("%q is a time %s but the order column held times %s from %s on; give every time in one form (all in UTC, say)", text, zone, r.orderZone, r.orderAt), Err: ErrOrder}
	}
	return nil
}

// gzipCut is gzipOrIO for a stream that failed after its line last: a compressed file cut
// short is an error naming that line, never a table read in part.
func (r *reader) gzipCut(p string, err error, last int) error {
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, gzip.ErrChecksum) {
		return &InputError{File: p, Line: last, Msg: fmt.Sprintf("compressed file is cut short or damaged after line %d, the last read whole (%v); copy it again from the source", last, err), Err: ErrNotText}
	}
	return r.gzipOrIO(p, err)
}

func (r *reader) gzipOrIO(p string, err error) error {
	var ie *InputError
	if errors.As(err, &ie) { // already worded, as by lineLimit
		return ie
	}
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, gzip.ErrChecksum) || errors.Is(err, gzip.ErrHeader) {
		return &InputError{File: p, Msg: "compressed file is cut short or damaged (" + err.Error() + "); copy it again from the source", Err: ErrNotText, Cause: err}
	}
	return &InputError{File: p, Msg: "read failed: " + err.Error(), Err: ErrOpen, Cause: err}
}

func (r *reader) csvError(p string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		switch {
		case errors.Is(pe.Err, csv.ErrFieldCount):
			return &InputError{File: p, Line: pe.StartLine, Msg: "row has a different number of fields than the header; fix the row or quote fields that contain the delimiter", Err: ErrRagged}
		case errors.Is(pe.Err, csv.ErrQuote) && pe.Line > pe.StartLine:
			return &InputError{File: p, Line: pe.StartLine, Msg: fmt.Sprintf("a quote opened in this row is not closed where it should be (the reader ran on to line %d); close the quote, or double a quote inside a quoted field", pe.Line), Err: ErrRagged}
		case errors.Is(pe.Err, csv.ErrQuote), errors.Is(pe.Err, csv.ErrBareQuote):
			return &InputError{File: p, Line: pe.Line, Column: pe.Column, Msg: "misplaced quote (" + pe.Err.Error() + "); quote whole fields and double quotes inside them", Err: ErrRagged}
		}
		if errors.Is(pe.Err, io.ErrUnexpectedEOF) || errors.Is(pe.Err, gzip.ErrChecksum) {
			return r.gzipOrIO(p, pe.Err)
		}
		return &InputError{File: p, Line: pe.Line, Column: pe.Column, Msg: pe.Err.Error(), Err: ErrRagged}
	}
	return r.gzipOrIO(p, err)
}

// sniffDelimiter picks comma, semicolon or tab by their count on the header line (outside quotes).
func sniffDelimiter(head []byte) rune {
	line := head
	if i := bytes.IndexByte(head, '\n'); i >= 0 {
		line = head[:i]
	}
	counts := map[rune]int{}
	inQuote := false
	for _, c := range string(line) {
		switch {
		case c == '"':
			inQuote = !inQuote
		case !inQuote && (c == ',' || c == ';' || c == '\t'):
			counts[c]++
		}
	}
	best := ','
	for _, c := range []rune{'\t', ';'} {
		if counts[c] > counts[best] {
			best = c
		}
	}
	return best
}

type roles struct {
	id, order, wave, label int
	features               []int // column index of each of r.features
}

func (r *reader) assignRoles(p string, header []string) (roles, error) {
	ro := roles{id: -1, order: -1, wave: -1, label: -1}
	seen, err := headerColumns(p, header)
	if err != nil {
		return ro, err
	}
	if err := r.roleColumns(p, header, seen, &ro); err != nil {
		return ro, err
	}
	role := map[int]bool{ro.id: true, ro.order: true, ro.wave: true, ro.label: true}
	if r.features == nil { // the first file decides the features, on its first row (see classify)
		r.firstFile = p
		for i, h := range header {
			if role[i] {
				continue
			}
			if len(r.opts.Features) > 0 && !matchAny(r.opts.Features, h) {
				r.ignored = append(r.ignored, LeftOut{h, note.Note{Kind: LeftOutUnmatched, Option: "cohort.ReadOptions.Features"}})
				continue
			}
			ro.features = append(ro.features, i)
		}
		if len(ro.features) == 0 {
			return ro, &InputError{File: p, Line: 1, Msg: "no feature columns besides the id, order, wave and label columns; check cohort.ReadOptions.Features and the delimiter", Err: ErrNoColumn}
		}
		return ro, nil
	}
	for _, f := range r.features {
		i, ok := seen[f]
		if !ok {
			return ro, &InputError{File: p, Line: 1, Field: f, Msg: fmt.Sprintf("feature is in %s but not in this file; add the column, or leave it out of both with cohort.ReadOptions.Features", r.firstFile), Err: ErrMismatch}
		}
		ro.features = append(ro.features, i)
	}
	for i, h := range header {
		if role[i] || slices.Contains(r.features, h) || r.isIgnored(h) {
			continue
		}
		if len(r.opts.Features) == 0 || matchAny(r.opts.Features, h) {
			return ro, &InputError{File: p, Line: 1, Field: h, Msg: fmt.Sprintf("column is in this file but not in %s; remove it, or choose the features with cohort.ReadOptions.Features", r.firstFile), Err: ErrMismatch}
		}
	}
	return ro, nil
}

// headerColumns trims the header's names in place and returns each name's column, refusing an
// empty or repeated name.
func headerColumns(p string, header []string) (map[string]int, error) {
	seen := map[string]int{}
	for i, h := range header {
		h = strings.TrimSpace(h)
		header[i] = h
		if h == "" {
			return nil, &InputError{File: p, Line: 1, Msg: fmt.Sprintf("column %d has no name; name every column in the header", i+1), Err: ErrNoColumn}
		}
		if j, dup := seen[h]; dup {
			return nil, &InputError{File: p, Line: 1, Field: h, Msg: fmt.Sprintf("column name appears twice (columns %d and %d); rename one", j+1, i+1), Err: ErrDuplicate}
		}
		seen[h] = i
	}
	return seen, nil
}

// roleColumns finds the id, order, wave and label columns the options name.
func (r *reader) roleColumns(p string, header []string, seen map[string]int, ro *roles) error {
	find := func(name, flag string) (int, error) {
		if i, ok := seen[name]; ok {
			return i, nil
		}
		return -1, &InputError{File: p, Line: 1, Msg: fmt.Sprintf("no column %q (the %s); pass --%s with one of: %s", name, flag, flag, strings.Join(header, ", ")), Err: ErrNoColumn}
	}
	var err error
	if ro.id, err = find(r.opts.ID, "id"); err != nil {
		return err
	}
	if r.opts.Order != "-" {
		if ro.order, err = find(r.opts.Order, "order"); err != nil {
			err.(*InputError).Msg += `, or --order - to keep the file's row order`
			return err
		}
	}
	if r.opts.Wave != "" {
		if ro.wave, err = find(r.opts.Wave, "wave"); err != nil {
			return err
		}
	}
	if r.opts.Label != "" {
		if ro.label, err = find(r.opts.Label, "label"); err != nil {
			return err
		}
		r.hasLabels = true
	}
	return nil
}

func (r *reader) isIgnored(name string) bool {
	for _, n := range r.ignored {
		if n.Name == name {
			return true
		}
	}
	return false
}

// classify decides, on the first data row of the first file, which candidate columns are
// features: a column whose first cell is text is left out and noted (with --features, a matched
// column must be numeric). An empty first cell keeps the column as a feature.
//
// A column is text, and no feature, when none of the sampled rows (the first window's, then
// those in the first 64 KiB) holds a number in it and one holds text; a column with numbers in
// some rows is a feature, whose other cells are missing (empty, NA, n/a…) or an error naming
// them, never a reason to drop it.
func (r *reader) classify(p string, pos func(int) (int, int), header []string, sample [][]string, ro *roles, delim rune) error {
	var keep []int
	rec := sample[0]
	for _, col := range ro.features {
		numbers, text := 0, ""
		for _, row := range sample {
			if col >= len(row) {
				continue
			}
			v, err := parseNumber(row[col], r.comma)
			switch {
			case errors.Is(err, ErrNotNumber):
				if text == "" {
					text = row[col]
				}
			case err != nil || !math.IsNaN(v):
				numbers++
			}
		}
		if numbers == 0 && text != "" {
			if len(r.opts.Features) > 0 {
				l, c := pos(col)
				return &InputError{File: p, Line: l, Column: c, Field: header[col], Msg: numberMsg(rec[col], delim, ErrNotNumber) + "; cohort.ReadOptions.Features chose this column", Err: ErrNotNumber}
			}
			r.ignored = append(r.ignored, LeftOut{header[col], note.Note{Kind: LeftOutText, Names: []string{text}}})
			continue
		}
		keep = append(keep, col)
		r.features = append(r.features, header[col])
	}
	if len(keep) == 0 {
		msg := fmt.Sprintf("no numeric feature columns (read as %s-separated, decimal %s); check the delimiter and cohort.ReadOptions.Features", delimName[delim], decimalName[r.comma])
		if delim == ',' && decimalCommas(bytes.ReplaceAll([]byte(strings.Join(rec, "\t")), []byte(`"`), nil)) {
			msg = "no numeric feature columns: the numbers seem to use a decimal comma in a comma-separated file; save it with '.' as the decimal separator, or separated by semicolons or tabs"
		}
		return &InputError{File: p, Line: 2, Msg: msg, Err: ErrNoColumn}
	}
	ro.features = keep
	return nil
}

func matchAny(patterns []string, name string) bool {
	for _, p := range patterns {
		if ok, _ := path.Match(p, name); ok {
			return true
		}
	}
	return false
}

// maxMagnitude bounds plausible feature values; larger ones are almost always an export or unit error.
const maxMagnitude = 1e12

// parseNumber reads a feature cell: NaN for a missing cell (empty, NA, NaN, N/A, null); a decimal
// comma is accepted when decimalComma is set.
func parseNumber(s string, decimalComma bool) (float64, error) {
	s = strings.TrimSpace(s)
	if isMissing(s) {
		return math.NaN(), nil
	}
	if decimalComma && strings.Count(s, ",") == 1 && !strings.Contains(s, ".") {
		s = strings.Replace(s, ",", ".", 1)
	}
	if !isDecimal(s) {
		switch strings.ToLower(strings.TrimLeft(s, "+-")) {
		case "inf", "infinity":
			return 0, ErrNonFinite
		}
		return 0, ErrNotNumber
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
			return 0, ErrNonFinite
		}
		return 0, ErrNotNumber
	}
	if math.IsInf(v, 0) || math.IsNaN(v) || math.Abs(v) > maxMagnitude {
		return 0, ErrNonFinite
	}
	return v, nil
}

// isMissing tells whether a feature cell marks a missing value: empty, or one of NA, N/A, #N/A,
// NaN, null and none, in any case.
func isMissing(s string) bool {
	if len(s) > 4 {
		return false
	}
	switch strings.ToLower(s) {
	case "", "na", "n/a", "#n/a", "nan", "null", "none":
		return true
	}
	return false
}

// delimName and decimalName say how a text table was read, for the record (FileInfo).
var (
	delimName   = map[rune]string{',': "comma", ';': "semicolon", '\t': "tab"}
	decimalName = map[bool]string{false: "point", true: "comma"}
)

// decimalCommas tells whether the numbers of a tab-separated head use a decimal comma: some
// cells are digits, a comma and digits, and none are digits, a point and digits. (In a
// semicolon file a decimal comma is taken as given; in a comma file it cannot be one.)
func decimalCommas(head []byte) bool {
	return decimalComma.Match(head) && !decimalPoint.Match(head)
}

var (
	decimalComma = regexp.MustCompile(`(?m)(^|\t)[+-]?[0-9]+,[0-9]+(\t|\r?$)`)
	decimalPoint = regexp.MustCompile(`(?m)(^|\t)[+-]?[0-9]+\.[0-9]+(\t|\r?$)`)
)

// sampleRecords reads up to 200 rows after the header from the head of a text table (its whole
// lines), for classify; a row it cannot read ends the sample.
func sampleRecords(head []byte, delim rune, fields int) [][]string {
	head = head[:bytes.LastIndexByte(head, '\n')+1]
	cr := csv.NewReader(bytes.NewReader(head))
	cr.Comma, cr.FieldsPerRecord = delim, fields
	if _, err := cr.Read(); err != nil { // the header
		return nil
	}
	var out [][]string
	for len(out) < 200 {
		rec, err := cr.Read()
		if err != nil {
			break
		}
		out = append(out, rec)
	}
	return out
}

// isDecimal tells whether s is a number in the one grammar feature cells are read in: an
// optional sign, digits with an optional decimal point (digits on at least one side of it), and
// an optional exponent (e or E, an optional sign, digits). Digit separators, hexadecimal and
// words are not numbers here, though strconv.ParseFloat takes some of them.
func isDecimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
		digits++
	}
	if i < len(s) && s[i] == '.' {
		for i++; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		start := i
		for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
		}
		if i == start {
			return false
		}
	}
	return i == len(s)
}

func numberMsg(cell string, delim rune, err error) string {
	if errors.Is(err, ErrNonFinite) {
		return fmt.Sprintf("%q is infinite or larger than %.0e in magnitude; fix the value or leave the cell empty to mark it missing", cell, maxMagnitude)
	}
	if delim != ';' && strings.Contains(cell, ",") {
		return fmt.Sprintf("%q is not a number; use '.' as the decimal separator, or separate the columns by semicolons or tabs (where a decimal comma is read)", cell)
	}
	return fmt.Sprintf("%q is not a number; feature cells hold numbers, or are empty or NA when missing (leave text columns out with cohort.ReadOptions.Features)", cell)
}

var timeLayouts = []string{time.RFC3339Nano, "2006-01-02T15:04:05", "2006-01-02 15:04:05", "2006-01-02T15:04", "2006-01-02 15:04"}

// parseOrder reads one order cell with orderOf and checks that its kind (integer or time) is the
// kind of the first window's.
func (r *reader) parseOrder(p string, pos func(int) (int, int), col int, name, cell string, orderOf func(string) (int64, byte, bool)) (int64, error) {
	l, c := pos(col)
	v, k, ok := orderOf(cell)
	if !ok {
		return 0, &InputError{File: p, Line: l, Column: c, Field: name, Msg: orderMsg(cell), Err: ErrOrder}
	}
	if err := r.checkOrderKind(p, l, c, name, cell, k); err != nil {
		return 0, err
	}
	return v, nil
}

// addRecord parses one record read whole (the first window of a text table, or a sheet row)
// and adds it; pos gives a cell's line and column for messages.
func (r *reader) addRecord(p string, fileIdx int, header []string, roles roles, delim rune, rec []string, pos func(int) (int, int), orderOf func(string) (int64, byte, bool)) error {
	line, _ := pos(0)
	for _, col := range []int{roles.id, roles.wave, roles.label} {
		if col < 0 {
			continue
		}
		if off := textCellFault(rec[col]); off >= 0 {
			l, c := pos(col)
			return &InputError{File: p, Line: l, Column: c, Field: header[col], Msg: faultMsg(rec[col][off]), Err: ErrNotText}
		}
	}
	id := strings.TrimSpace(rec[roles.id])
	if id == "" {
		l, c := pos(roles.id)
		return &InputError{File: p, Line: l, Column: c, Field: header[roles.id], Msg: "participant id is empty; fill it in or remove the row", Err: ErrMissingID}
	}
	trimmed := 0
	if len(id) != len(rec[roles.id]) {
		trimmed++
	}
	wave := ""
	if roles.wave >= 0 {
		wave = strings.TrimSpace(rec[roles.wave])
		if wave == "" {
			l, c := pos(roles.wave)
			return &InputError{File: p, Line: l, Column: c, Field: header[roles.wave], Msg: emptyWaveMsg, Err: ErrMissingID}
		}
		if len(wave) != len(rec[roles.wave]) {
			trimmed++
		}
	}
	r.noteTrimmed(p, trimmed, line)
	var ord int64
	if roles.order >= 0 {
		var err error
		if ord, err = r.parseOrder(p, pos, roles.order, header[roles.order], rec[roles.order], orderOf); err != nil {
			return err
		}
	}
	vals := make([]float64, len(r.features))
	for j, col := range roles.features {
		v, err := parseNumber(rec[col], r.comma)
		if err != nil {
			l, c := pos(col)
			msg := numberMsg(rec[col], delim, err)
			if fileIdx > 0 && errors.Is(err, ErrNotNumber) {
				msg += fmt.Sprintf(" (it is numeric in %s)", r.firstFile)
			}
			return &InputError{File: p, Line: l, Column: c, Field: header[col], Msg: msg, Err: err}
		}
		vals[j] = v
	}
	label := ""
	if roles.label >= 0 {
		label = strings.TrimSpace(rec[roles.label])
	}
	return r.appendRow(p, fileIdx, id, wave, ord, roles.order < 0, vals, label, line)
}

func article(kind string) string {
	if kind == "integer" {
		return "an integer"
	}
	return "a time"
}

// finish sorts each unit's windows, checks duplicates, applies the missing-value policy and the
// minimum-window rule, and drops constant features; every step is counted in Quality. A unit
// whose windows came in order, in one stretch and complete, stays where it is in the store; the
// others are read back, put right and written again at its end.
func (r *reader) finish() (t *Table, err error) {
	if err := r.raw.flush(); err != nil {
		return nil, err
	}
	t = &Table{Features: r.features, Files: r.files, OrderKind: r.orderKind, HasLabels: r.hasLabels, store: r.raw, lo: r.lo}
	r.raw = nil // the table owns the store now
	defer func() {
		if err != nil {
			t.Close()
			t = nil
		}
	}()
	for j, lo := range r.lo {
		if math.IsInf(lo, 1) { // no window has a value: every participant would be excluded for it
			return nil, &InputError{File: r.firstFile, Field: r.features[j], Msg: "every cell of this feature column is empty or NA; fill it, or leave the column out with cohort.ReadOptions.Features", Err: ErrEmpty}
		}
	}
	d := len(r.features)
	t.cols = make([]int, d)
	for j := range t.cols {
		t.cols[j] = j
	}
	if r.opts.Order == "-" {
		t.OrderKind = "file order"
	}
	f := &finisher{r: r, t: t, d: d, w: d + 2, constant: newConstancy(d)}
	q := &t.Quality
	q.IgnoredColumns = r.ignored
	q.UnitsIn = r.seen
	q.WindowsIn = r.rows
	if f.rule, f.nonWearAt, err = r.nonWearColumn(); err != nil {
		return nil, err
	}
	q.NonWearRule = f.rule
	if f.wr, err = r.opts.wearRule(f.rule, r.orderKind, r.orderZone == "without a UTC offset"); err != nil {
		return nil, err
	}
	if r.orderKind == "time" && r.orderZone == "with a UTC offset" {
		t.TimeZone = r.opts.TimeZone
	}
	if f.wr != nil {
		q.ValidDayRule = f.wr.rule()
	}
	for ui, ru := range r.units {
		if ui%256 == 0 && r.ctx.Err() != nil {
			return nil, r.ctx.Err()
		}
		if err := f.unit(ru); err != nil {
			return nil, err
		}
	}
	if err := t.store.flush(); err != nil {
		return nil, err
	}
	if f.wr != nil && len(t.Units) == 0 && f.shortUnits > 0 && r.opts.Shard.Count == 0 {
		return nil, &InputError{File: r.firstFile, Msg: fmt.Sprintf("no participant has the valid days the rule asks for (%s); the most any has is %d: lower cohort.ReadOptions.ValidDays, or lift the rule with cohort.ReadOptions.ValidDay", f.wr, f.mostDays), Err: ErrTooFew}
	}
	q.SortedUnits, q.JoinedUnits = f.sortedUnits, f.merged
	q.TrimmedCells, q.TrimmedAt = r.trimmed, r.trimmedAt
	q.Notes = append(q.Notes, QualityNotes(*q, r.opts.Order)...)
	return t, f.features()
}

// finisher makes the table's units from the reader's, one at a time (unit), and then its
// features (features); it holds what they share.
type finisher struct {
	r        *reader
	t        *Table
	d, w     int // features, and values per stored window (features, order key, source)
	constant *constancy
	// rule is the non-wear rule ("" for none) and nonWearAt the column it reads (-1: none); wr
	// the valid-day rule (nil: none).
	rule      string
	nonWearAt int
	wr        *wearRule
	x, clean  []float64 // a unit's windows as stored, and those kept, reused
	// Counts over units: sorted and joined from several files; short of valid days, with the
	// most valid days among those.
	sortedUnits, merged, shortUnits, mostDays int
}

// unit makes the table's unit of one reader's unit: excluded with the reason, kept where it
// landed in the store, or its windows sorted, checked for duplicates, cleared of non-wear,
// invalid days and missing cells, and stored again.
func (f *finisher) unit(ru *rawUnit) error {
	r, t, q := f.r, f.t, &f.t.Quality
	u := &Unit{ID: ru.id, Wave: ru.wave, Ordinal: ru.ordinal, Files: ru.files, shardKey: shardHash(ru.id)}
	if r.opts.Pseudonym != nil {
		u.ID = r.opts.Pseudonym(ru.id)
	}
	if len(ru.files) > 1 {
		f.merged++
	}
	n := ru.n
	// A unit whose windows came in order with no missing cell stays where it landed, in one
	// stretch of the store or in several (a table sorted by time across participants) as
	// long as they average minStretch windows; shorter ones are copied into one stretch,
	// since reading them one by one in every pass would cost more than copying them once.
	if !ru.unsorted && ru.missing == 0 && f.nonWearAt < 0 && f.wr == nil && (len(ru.runs) == 1 || len(ru.runs)*minStretch <= n) {
		f.inPlace(ru, u)
		return nil
	}
	var err error
	if f.x, err = t.store.readRuns(ru.runs, nil, f.x); err != nil {
		return err
	}
	idx, err := f.order(ru, u)
	if err != nil {
		return err
	}
	// Non-wear: the windows of the rule's periods are left out, before anything else; then
	// the windows of days of too little wear, and a participant with too few valid days is
	// excluded. Both read the windows' times, in order.
	var times []int64
	if f.nonWearAt >= 0 || f.wr != nil {
		times = make([]int64, n)
		for k, i := range idx {
			times[k] = f.ord(i)
		}
	}
	var nonWear []bool
	if f.nonWearAt >= 0 {
		if nonWear, err = f.nonWear(ru, idx, times); err != nil {
			return err
		}
	}
	var invalidDay []bool
	var short note.Note
	if f.wr != nil {
		invalidDay, u.Wear, short = f.wr.wearDays(times, nonWear, medianStep(times))
	}
	kept := 0
	reason := f.keep(ru, u, idx, nonWear, invalidDay)
	if reason.Kind == "" {
		kept = len(f.clean) / f.w
		reason = f.shortOf(u, kept, short)
	}
	if reason.Kind != "" {
		q.Excluded = append(q.Excluded, Exclusion{ID: u.ID, Wave: u.Wave, Ordinal: u.Ordinal, Windows: n, Reason: reason})
		q.WindowsExcluded += n
		return nil
	}
	q.WindowsDropped += u.Dropped
	q.WindowsNonWear += u.NonWear
	q.WindowsInvalidDays += u.Wear.LeftOut
	q.CellsImputed += u.Imputed
	u.at, u.rows = t.store.n/int64(f.w), kept
	if err := t.store.append(f.clean); err != nil {
		return err
	}
	f.constant.add(f.clean, f.w)
	t.Units = append(t.Units, u)
	return nil
}

// inPlace keeps a unit where its windows landed in the store, or excludes it for too few.
func (f *finisher) inPlace(ru *rawUnit, u *Unit) {
	r, t, q, n := f.r, f.t, &f.t.Quality, ru.n
	if n < r.opts.MinWindows {
		q.Excluded = append(q.Excluded, Exclusion{ID: u.ID, Wave: u.Wave, Ordinal: u.Ordinal, Windows: n,
			Reason: note.Note{Kind: ExcludedFewWindows, Ints: []int{n, r.opts.MinWindows, 0, 0}, Option: "cohort.ReadOptions.MinWindows"}})
		q.WindowsExcluded += n
		return
	}
	u.at, u.rows, u.Labels = ru.runs[0].at, n, ru.labels
	if len(ru.runs) > 1 {
		u.runs = ru.runs
	}
	f.constant.addUnit(ru.first, ru.varies)
	t.Units = append(t.Units, u)
}

// shortOf is the reason a unit with this many windows kept falls short: of valid days (short,
// from the valid-day rule), or of windows; no note (an empty Kind) when it does not.
func (f *finisher) shortOf(u *Unit, kept int, short note.Note) note.Note {
	if short.Kind != "" {
		f.shortUnits++
		f.mostDays = max(f.mostDays, u.Wear.ValidDays)
		return short
	}
	if kept >= f.r.opts.MinWindows {
		return note.Note{}
	}
	return note.Note{Kind: ExcludedFewWindows, Ints: []int{kept, f.r.opts.MinWindows, u.Dropped, u.NonWear}, Option: "cohort.ReadOptions.MinWindows"}
}

// ord is the order key of window i of the unit read into f.x.
func (f *finisher) ord(i int) int64 { return int64(math.Float64bits(f.x[i*f.w+f.d])) }

// order is the order of a unit's windows: as read, or sorted by their order keys for a unit
// that came out of order, where a window given twice is an error naming both rows.
func (f *finisher) order(ru *rawUnit, u *Unit) ([]int, error) {
	r, n := f.r, ru.n
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	if !ru.unsorted {
		return idx, nil
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(f.ord(a), f.ord(b)) })
	for k := 1; k < n; k++ {
		a, b := idx[k-1], idx[k]
		if f.ord(a) != f.ord(b) {
			continue
		}
		fa, la := unpackSource(f.x[a*f.w+f.d+1])
		fb, lb := unpackSource(f.x[b*f.w+f.d+1])
		also, advice := fmt.Sprintf("line %d", la), "remove one of the rows"
		if fa != fb {
			also = fmt.Sprintf("%s:%d", r.files[fa].Path, la)
			if r.opts.Wave == "" { // two files that may be two visits of one cohort
				advice = "remove one of the rows; or, if the files are two waves (visits) of the same participants, give each row its wave in a column and name it with cohort.ReadOptions.Wave"
			}
		}
		if r.orderZone == "without a UTC offset" && fa == fb && la < lb && lb-la > 1 {
			// Far apart in one file: a wall clock that went back an hour when daylight
			// saving time ended.
			advice += "; if the clock went back an hour (daylight saving time ended), give the times with their UTC offset (2026-10-25T02:30:00+01:00) and the zone with cohort.ReadOptions.TimeZone"
		}
		return nil, &InputError{File: r.files[fb].Path, Line: lb, Field: r.opts.Order,
			Msg: fmt.Sprintf("participant %s%s has this window twice (also %s); %s", ru.id, waveSuffix(ru.wave), also, advice), Err: ErrDuplicate}
	}
	for k, i := range idx {
		if k != i {
			u.Sorted = true
			f.sortedUnits++
			break
		}
	}
	return idx, nil
}

// nonWear marks the unit's windows (in order) that its non-wear rule leaves out; a wear column
// holding anything but 0 and 1 is an error naming its row.
func (f *finisher) nonWear(ru *rawUnit, idx []int, times []int64) ([]bool, error) {
	counts := make([]float64, len(idx))
	for k, i := range idx {
		counts[k] = f.x[i*f.w+f.nonWearAt]
		if f.rule == NonWearColumn && counts[k] != 0 && counts[k] != 1 {
			_, line := unpackSource(f.x[i*f.w+f.d+1])
			return nil, &InputError{File: f.r.files[0].Path, Line: line, Field: f.r.opts.WearColumn, Msg: fmt.Sprintf("participant %s: the wear column holds %v; give 1 for a worn window and 0 for one when the device was off", ru.id, counts[k]), Err: ErrNotNumber}
		}
	}
	return nonWearOf(f.rule, times, counts), nil
}

// keep puts the unit's windows that are kept into f.clean, in order: not non-wear, not on an
// invalid day, and with no missing cell, or with each missing cell imputed by the unit's
// median of the feature; it counts what it leaves out and imputes, and returns a reason to
// exclude the unit when a feature is missing in every window and cannot be imputed.
func (f *finisher) keep(ru *rawUnit, u *Unit, idx []int, nonWear, invalidDay []bool) note.Note {
	d, w := f.d, f.w
	var med []float64
	if f.r.opts.Missing == ImputeMedian && ru.missing > 0 {
		med = columnMedians(f.x, d, w)
	}
	f.clean = f.clean[:0]
	var reason note.Note
	for k, i := range idx {
		if nonWear != nil && nonWear[k] {
			u.NonWear++
			continue
		}
		if invalidDay != nil && invalidDay[k] {
			continue // counted in u.Wear.LeftOut
		}
		row := f.x[i*w : (i+1)*w]
		missing := 0
		for _, v := range row[:d] {
			if math.IsNaN(v) {
				missing++
			}
		}
		if missing > 0 && f.r.opts.Missing == DropWindow {
			u.Dropped++
			continue
		}
		start := len(f.clean)
		f.clean = append(f.clean, row...)
		if missing > 0 {
			for j, v := range row[:d] {
				if math.IsNaN(v) {
					if math.IsNaN(med[j]) {
						reason = note.Note{Kind: ExcludedAllMissing, Names: []string{f.r.features[j]}}
					}
					u.Imputed++
					f.clean[start+j] = med[j]
				}
			}
		}
		if ru.labels != nil {
			u.Labels = append(u.Labels, ru.labels[i])
		}
	}
	return reason
}

// features settles the table's features once every unit is in: the wear column, which has
// done its work, is no feature; a shard keeps what it saw of each feature's constancy for the
// merge (Constancy), and a whole table drops its constant features.
func (f *finisher) features() error {
	t, at := f.t, f.nonWearAt
	constant := f.constant
	if f.r.opts.Shard.Count > 0 {
		t.Constancy = &Constancy{Have: constant.have, First: constant.first, Constant: constant.constant}
		if f.rule == NonWearColumn {
			t.Constancy.First = slices.Delete(slices.Clone(t.Constancy.First), at, at+1)
			t.Constancy.Constant = slices.Delete(slices.Clone(t.Constancy.Constant), at, at+1)
			t.Features = slices.Delete(slices.Clone(t.Features), at, at+1)
			t.cols = slices.Delete(t.cols, at, at+1)
		}
		return nil
	}
	if f.rule == NonWearColumn {
		constant.first = slices.Delete(constant.first, at, at+1)
		constant.constant = slices.Delete(constant.constant, at, at+1)
		t.Features = slices.Delete(slices.Clone(t.Features), at, at+1)
		t.cols = slices.Delete(t.cols, at, at+1)
	}
	return t.dropConstantFeatures(constant)
}

// nonWearColumn is the non-wear rule the reading applies ("" for none) and the feature it reads:
// the wear column (ReadOptions.WearColumn), or the activity counts of Choi's or Troiano's rule
// (ReadOptions.NonWear; auto: Choi's where there are counts and times).
func (r *reader) nonWearColumn() (string, int, error) {
	wear := r.opts.WearColumn
	if wear == "" && r.opts.NonWear == NonWearAuto && slices.Contains(r.features, AutoWearColumn) {
		wear = AutoWearColumn // as the features step writes it
	}
	if wear != "" {
		r.opts.WearColumn = wear
		if r.opts.NonWear != "" && r.opts.NonWear != NonWearAuto && wear == r.opts.WearColumn && r.opts.WearColumn != AutoWearColumn {
			return "", -1, fmt.Errorf("cohort: a wear column (%s) and the non-wear rule %s: %w; give one of them", r.opts.WearColumn, r.opts.NonWear, ErrBadOption)
		}
		j := slices.Index(r.features, r.opts.WearColumn)
		if j < 0 {
			return "", -1, &InputError{File: r.firstFile, Field: r.opts.WearColumn, Msg: fmt.Sprintf("the wear column is not among the numeric columns read (%s); name a column of 1 (worn) and 0 (off), and do not leave it out with cohort.ReadOptions.Features", strings.Join(r.features, ", ")), Err: ErrNoColumn}
		}
		if len(r.features) == 1 {
			return "", -1, &InputError{File: r.firstFile, Field: r.opts.WearColumn, Msg: "the wear column is the only numeric column; there is no feature left to group on", Err: ErrEmpty}
		}
		return NonWearColumn, j, nil
	}
	rule := r.opts.NonWear
	if rule == NonWearAuto { // Choi's algorithm where it applies: activity counts with times
		rule = ""
		if _, err := countsFeature(r.features, r.opts.NonWearFeature); err == nil && r.orderKind == "time" {
			rule = NonWearChoi
		}
	}
	if rule == "" {
		return "", -1, nil
	}
	if rule != NonWearTroiano && rule != NonWearChoi {
		return "", -1, fmt.Errorf("cohort: non-wear rule %q: %w; use %s or %s, or none", r.opts.NonWear, ErrBadOption, NonWearChoi, NonWearTroiano)
	}
	if r.orderKind != "time" {
		return "", -1, &InputError{File: r.firstFile, Field: r.opts.Order, Msg: "the non-wear rule measures periods in minutes and needs times in the order column (ISO-8601); give times, or leave the rule out", Err: ErrOrder}
	}
	j, err := countsFeature(r.features, r.opts.NonWearFeature)
	if err != nil {
		return "", -1, &InputError{File: r.firstFile, Msg: err.Error(), Err: ErrNoColumn, Cause: err}
	}
	return rule, j, nil
}

// Block returns unit u's usable windows × features, row-major, in window order; dst is reused
// when large enough. The values come from the table's store, in memory or in its file.
func (t *Table) Block(u int, dst []float64) ([]float64, error) {
	return t.readUnit(t.Units[u], t.cols, dst)
}

// readUnit reads the columns cols of a unit's windows from the store, stretch by stretch.
func (t *Table) readUnit(un *Unit, cols []int, dst []float64) ([]float64, error) {
	if un.runs == nil {
		return t.store.read(un.at, un.rows, cols, dst)
	}
	return t.store.readRuns(un.runs, cols, dst)
}

// Order returns unit u's window order keys (integers, or Unix nanoseconds for times), in
// window order.
func (t *Table) Order(u int) ([]int64, error) {
	bits, err := t.readUnit(t.Units[u], []int{t.store.width - 2}, nil)
	if err != nil {
		return nil, err
	}
	out := make([]int64, len(bits))
	for i, v := range bits {
		out[i] = int64(math.Float64bits(v))
	}
	return out, nil
}

// SelectFeatures keeps the named features, in that order; each must be present.
func (t *Table) SelectFeatures(names []string) error {
	cols := make([]int, len(names))
	for a, name := range names {
		i := slices.Index(t.Features, name)
		if i < 0 {
			return fmt.Errorf("cohort: feature %s is not in the table: %w", name, ErrMismatch)
		}
		cols[a] = t.cols[i]
	}
	t.cols, t.Features = cols, append([]string(nil), names...)
	return nil
}

// Close removes the table's temporary file; the table cannot be read after it.
func (t *Table) Close() error {
	if t == nil || t.store == nil {
		return nil
	}
	return t.store.close()
}

// Spilled reports whether the windows were moved to a temporary file.
func (t *Table) Spilled() bool { return t.store != nil && t.store.spilled() }

// constancy tracks which features take a single value over every kept window.
type constancy struct {
	first    []float64
	constant []bool
	have     bool
}

func newConstancy(d int) *constancy {
	c := &constancy{first: make([]float64, d), constant: make([]bool, d)}
	for j := range c.constant {
		c.constant[j] = true
	}
	return c
}

// addUnit adds a unit summarised by its first window's values and which features varied in it.
func (c *constancy) addUnit(first []float64, varies []bool) {
	if !c.have {
		copy(c.first, first)
		c.have = true
	}
	for j := range c.constant {
		if c.constant[j] && (varies[j] || first[j] != c.first[j]) {
			c.constant[j] = false
		}
	}
}

// add adds windows of w values whose first len(c.first) are the features.
func (c *constancy) add(x []float64, w int) {
	d := len(c.first)
	for i := 0; i+w <= len(x); i += w {
		if !c.have {
			copy(c.first, x[i:i+d])
			c.have = true
			continue
		}
		for j := 0; j < d; j++ {
			if c.constant[j] && x[i+j] != c.first[j] {
				c.constant[j] = false
			}
		}
	}
}

func waveSuffix(w string) string {
	if w == "" {
		return ""
	}
	return " (wave " + w + ")"
}

// dropConstantFeatures removes features that take a single value over every kept window.
func (t *Table) dropConstantFeatures(c *constancy) error {
	keep, dropped, err := KeptFeatures(t.Features, &Constancy{Have: c.have, First: c.first, Constant: c.constant}, t.Files[0].Path)
	if err != nil || len(dropped) == 0 {
		return err
	}
	t.Quality.DroppedFeatures = append(t.Quality.DroppedFeatures, dropped...)
	return t.SelectFeatures(keep)
}

// MergeConstancy is the constancy over all the shards' windows, from each shard's.
func MergeConstancy(parts []*Constancy) *Constancy {
	var out *Constancy
	for _, c := range parts {
		if c == nil || !c.Have {
			continue
		}
		if out == nil {
			out = &Constancy{Have: true, First: slices.Clone(c.First), Constant: slices.Clone(c.Constant)}
			continue
		}
		for j := range out.Constant {
			out.Constant[j] = out.Constant[j] && c.Constant[j] && c.First[j] == out.First[j]
		}
	}
	if out == nil {
		return &Constancy{}
	}
	return out
}

// KeptFeatures are the features that are not constant, and the constant ones with why; file
// names the input in the error when every feature is constant.
func KeptFeatures(features []string, c *Constancy, file string) ([]string, []LeftOut, error) {
	if !c.Have {
		return features, nil, nil
	}
	var keep []string
	var dropped []LeftOut
	for j, isConst := range c.Constant {
		if isConst {
			dropped = append(dropped, LeftOut{features[j], note.Note{Kind: LeftOutConstant, Floats: []float64{c.First[j]}}})
		} else {
			keep = append(keep, features[j])
		}
	}
	if len(keep) == 0 {
		return nil, nil, &InputError{File: file, Msg: "every feature is constant; there is nothing to group on", Err: ErrEmpty}
	}
	return keep, dropped, nil
}

// columnMedians returns the median of each of the first d columns of a row-major matrix of
// width w, ignoring NaN (NaN when a column has no values).
func columnMedians(x []float64, d, w int) []float64 {
	n := len(x) / w
	out := make([]float64, d)
	buf := make([]float64, 0, n)
	for j := 0; j < d; j++ {
		buf = buf[:0]
		for i := 0; i < n; i++ {
			if v := x[i*w+j]; !math.IsNaN(v) {
				buf = append(buf, v)
			}
		}
		out[j] = Median(buf)
	}
	return out
}

// Median sorts xs in place and returns its median (NaN when empty).
func Median(xs []float64) float64 { return groupstat.Median(xs) }
