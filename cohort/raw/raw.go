// Package raw turns raw tri-axial acceleration into the long per-window table that the cohort
// reader takes: it reads recordings (a time column and x, y, z, one participant per file or a
// long table with an id column), calibrates each device on its still periods, marks the windows
// when it was not worn, and computes the features of each window (features.go).
//
// Each recording is read twice: the first pass gathers, per participant, the means of its still
// 10-second blocks (for the calibration) and each 15-minute chunk's spread and range per axis
// (for the non-wear rule); the second computes the windows' features from the calibrated
// samples. Memory is a window's samples and those summaries per participant, whatever the length
// of the recording.
package raw

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/cohortmix/cohortmix/cluster"
)

// Options set up the features step. Zero values take the documented defaults.
type Options struct {
	Window time.Duration // window length, 5 s to 15 min; 0 means 60 s
	// Units of x, y, z: "g", "mg", "m/s2", or "" (auto) to tell them from the median vector
	// magnitude of the first samples (about 1, 1000 or 9.81).
	Units string
	Rate  float64 // sampling rate in Hz; 0 reads it from the times (the median step)
	Range float64 // the sensor's range in g, for counting clipped samples; 0 means 8
	// ID names the id column of a long table; "" takes one participant per file, named by the
	// file (its name without folder and suffixes). Time, X, Y and Z name the columns; "" finds
	// them by their names (time or timestamp; x, y, z or names ending in them).
	ID, Time, X, Y, Z string
	NoCalibration     bool // leave the devices as read
	Parquet           bool // write the table as Parquet (parquetSchema) instead of CSV
	Workers           int  // files, or ranges of a long file, processed at once; 0 means one per core
	// Tool names the program and its version in the table's record of how it was made
	// (Provenance).
	Tool string
	// RangeBytes is the size of the ranges a long one-participant text recording is read in on
	// all cores (split.go); 0 means 64 MiB. The table depends on it in the last digits only.
	RangeBytes int64
}

func (o Options) withDefaults() Options {
	if o.Window == 0 {
		o.Window = time.Minute
	}
	if o.Range == 0 {
		o.Range = 8
	}
	return o
}

// Errors the step returns, wrapped with where and what to change.
var (
	ErrInput  = errors.New("raw: input not usable")
	ErrOption = errors.New("raw: bad option")
)

// Participant is what the step did with one participant's recording.
type Participant struct {
	ID, File   string
	Samples    int
	Rate       float64 // Hz, as read from the times or given
	Units      string  // the units read, and how they were known ("g (detected)")
	Windows    int     // windows written
	Incomplete int     // windows left out with fewer than 80% of their samples
	NonWear    int     // windows written with worn = 0
	Clipped    int     // samples at the sensor's range on some axis
	Calibration
}

// Calibration is one device's autocalibration (van Hees et al. 2014, J Appl Physiol 117:738):
// calibrated = Scale·raw + Offset per axis (in g), fitted on the means of its still 10-second
// blocks so that they lie on the unit sphere, with the mean distance of those means from the
// sphere before and after, in milli-g. With OK false the device was left as read, for Reason.
type Calibration struct {
	Scale, Offset           [3]float64
	Still                   int
	ErrorBefore, ErrorAfter float64
	OK                      bool
	Reason                  string
}

// Still blocks and non-wear (van Hees et al. 2013, PLoS ONE 8:e61691, and 2014; values as
// commonly applied, from memory): a 10-second block is still when every axis's s.d. is below
// 13 mg; a 60-minute span (in 15-minute steps) is non-wear when at least two axes have an s.d.
// below 13 mg and a range below 50 mg.
const (
	stillBlock    = 10 * time.Second
	stillSD       = 0.013
	nonWearChunk  = 15 * time.Minute
	nonWearSpan   = 4 // chunks
	nonWearSD     = 0.013
	nonWearRange  = 0.050
	completeShare = 0.8 // of a window's samples, or a span's, for it to count
	gravityMS2    = 9.80665
)

// calibrate fits the device's calibration on the means of its still blocks (in g).
func calibrate(still [][3]float64) Calibration {
	c := Calibration{Scale: [3]float64{1, 1, 1}, Still: len(still)}
	c.ErrorBefore = sphereError(still, c.Scale, c.Offset)
	c.ErrorAfter = c.ErrorBefore
	if len(still) < 10 {
		c.Reason = fmt.Sprintf("%d still 10-second blocks, fewer than 10", len(still))
		return c
	}
	scale, offset, ok := cluster.SphereFit(still, 1)
	if !ok {
		c.Reason = "the still periods do not reach both sides of every axis (the device sat in too few postures), or the fit fell outside a plausible calibration"
		return c
	}
	after := sphereError(still, scale, offset)
	if after > c.ErrorBefore {
		c.Reason = "the fit did not bring the still periods closer to 1 g"
		return c
	}
	c.Scale, c.Offset, c.ErrorAfter, c.OK = scale, offset, after, true
	return c
}

// sphereError is the mean distance of the calibrated points from the unit sphere, in milli-g.
func sphereError(points [][3]float64, scale, offset [3]float64) float64 {
	if len(points) == 0 {
		return math.NaN()
	}
	var sum float64
	for _, p := range points {
		var r float64
		for a := 0; a < 3; a++ {
			v := scale[a]*p[a] + offset[a]
			r += v * v
		}
		sum += math.Abs(math.Sqrt(r) - 1)
	}
	return 1000 * sum / float64(len(points))
}

// chunk holds one 15-minute chunk's sums per axis, for the non-wear rule.
type chunk struct {
	key       int64
	n         int
	sum, sum2 [3]float64
	lo, hi    [3]float64
}

func (c *chunk) add(a [3]float64) {
	if c.n == 0 {
		c.lo, c.hi = a, a
	}
	c.n++
	x, y, z := a[0], a[1], a[2] // numbers: the readers refuse NaN
	c.sum[0], c.sum[1], c.sum[2] = c.sum[0]+x, c.sum[1]+y, c.sum[2]+z
	c.sum2[0], c.sum2[1], c.sum2[2] = c.sum2[0]+x*x, c.sum2[1]+y*y, c.sum2[2]+z*z
	c.lo[0], c.lo[1], c.lo[2] = min(c.lo[0], x), min(c.lo[1], y), min(c.lo[2], z)
	c.hi[0], c.hi[1], c.hi[2] = max(c.hi[0], x), max(c.hi[1], y), max(c.hi[2], z)
}

// nonWearChunks marks the chunks (by key) that fall in a non-wear span, with the calibration's
// scale applied to the spreads and ranges (both scale with the axis; the offset moves neither).
// A span counts when it holds at least completeShare of its samples at the rate.
func nonWearChunks(chunks []chunk, scale [3]float64, rate float64) map[int64]bool {
	out := map[int64]bool{}
	index := map[int64]int{}
	for i, c := range chunks {
		index[c.key] = i
	}
	need := completeShare * rate * nonWearSpan * nonWearChunk.Seconds()
	for _, first := range chunks {
		var s chunk
		for k := first.key; k < first.key+nonWearSpan; k++ {
			i, ok := index[k]
			if !ok {
				continue
			}
			c := chunks[i]
			if s.n == 0 {
				s.lo, s.hi = c.lo, c.hi
			}
			s.n += c.n
			for a := 0; a < 3; a++ {
				s.sum[a] += c.sum[a]
				s.sum2[a] += c.sum2[a]
				s.lo[a], s.hi[a] = math.Min(s.lo[a], c.lo[a]), math.Max(s.hi[a], c.hi[a])
			}
		}
		if float64(s.n) < need {
			continue
		}
		still := 0
		for a := 0; a < 3; a++ {
			n := float64(s.n)
			sd := math.Sqrt(math.Max(0, s.sum2[a]/n-(s.sum[a]/n)*(s.sum[a]/n))) * scale[a]
			if sd < nonWearSD && (s.hi[a]-s.lo[a])*scale[a] < nonWearRange {
				still++
			}
		}
		if still >= 2 {
			for k := first.key; k < first.key+nonWearSpan; k++ {
				out[k] = true
			}
		}
	}
	return out
}

// unitsOf tells the units of x, y, z from the median vector magnitude of the first samples:
// the factor that turns them into g, and their name. Given units are taken as they are.
func unitsOf(given string, medianVM float64) (float64, string, error) {
	given = strings.ToLower(given)
	factor, name := map[string]float64{"g": 1, "mg": 0.001, "m/s2": 1 / gravityMS2, "m/s²": 1 / gravityMS2}[given], given
	switch {
	case factor > 0 && (math.IsNaN(medianVM) || medianVM*factor > 0.5 && medianVM*factor < 2):
		return factor, name, nil
	case factor > 0:
		return 0, "", fmt.Errorf("in %s the vector magnitude of the first samples has a median of %.4g g, where a worn device reads about 1 g; check the units (about 1 in g, 9.81 in m/s², 1000 in mg) or leave them to be detected: %w", name, medianVM*factor, ErrInput)
	case (given == "" || given == "auto") && math.IsNaN(medianVM):
		return 1, "", nil // only the name checked
	case given == "" || given == "auto":
	default:
		return 0, "", fmt.Errorf("units %q: %w; use g, mg or m/s2, or leave them to be detected", given, ErrOption)
	}
	switch {
	case medianVM > 0.5 && medianVM < 2:
		return 1, "g (detected)", nil
	case medianVM > 5 && medianVM < 15:
		return 1 / gravityMS2, "m/s² (detected)", nil
	case medianVM > 500 && medianVM < 2000:
		return 0.001, "mg (detected)", nil
	}
	return 0, "", fmt.Errorf("the vector magnitude of the first samples has a median of %.4g, which is about 1 in g, 9.81 in m/s² and 1000 in mg; check the x, y, z columns, or give the units: %w", medianVM, ErrInput)
}
