package normalize

import (
	"fmt"
	"math"
	"slices"
)

// Device is one participant's alignment with the cohort's movement states, the within step of
// WithinAlign (fitted by profile.FitAligned and profile.States.AlignUnit): a rotation of its
// axis means, as a device turned on the wrist moves them, and an offset on each output column,
// as a calibration offset, or an amplitude gain on a log scale, moves it.
type Device struct {
	Rotation []float64 // 3×3 row-major, applied to the axis means (x, y, z) as read; nil leaves them
	Offset   []float64 // subtracted from each output column (OutDim values); nil subtracts nothing
}

// Angle is the rotation's angle in degrees (0 without one).
func (d Device) Angle() float64 {
	r := d.Rotation
	if r == nil {
		return 0
	}
	return math.Acos(math.Max(-1, math.Min(1, (r[0]+r[4]+r[8]-1)/2))) * 180 / math.Pi
}

// LowestOf returns each of the d columns' lowest value and lowest value above 0 (+Inf when it
// has none) over row-major blocks, NaN ignored: what Options.Lowest and LowestPositive take.
func LowestOf(units [][]float64, d int) (lowest, lowestPositive []float64) {
	lowest, lowestPositive = make([]float64, d), make([]float64, d)
	for j := range lowest {
		lowest[j], lowestPositive[j] = math.Inf(1), math.Inf(1)
	}
	for _, x := range units {
		for i := 0; i+d <= len(x); i += d {
			for j, v := range x[i : i+d] {
				if v < lowest[j] { // false for NaN
					lowest[j] = v
				}
				if v > 0 && v < lowestPositive[j] {
					lowestPositive[j] = v
				}
			}
		}
	}
	return lowest, lowestPositive
}

// setScales checks the axes and decides which features are taken on a log scale.
func (f *Fit) setScales(opts Options) error {
	d := len(f.Features)
	if opts.Axes != nil {
		if len(opts.Axes) != 3 || opts.Axes[0] == opts.Axes[1] || opts.Axes[0] == opts.Axes[2] || opts.Axes[1] == opts.Axes[2] {
			return fmt.Errorf("normalize: axes %v: %w; name three different columns (x, y, z)", opts.Axes, ErrOption)
		}
		for _, a := range opts.Axes {
			if a < 0 || a >= d {
				return fmt.Errorf("normalize: axis column %d of %d features: %w", a, d, ErrOption)
			}
		}
		f.Axes = slices.Clone(opts.Axes)
	}
	if !opts.Log {
		return nil
	}
	if len(opts.Lowest) != d || len(opts.LowestPositive) != d {
		return fmt.Errorf("normalize: a log scale needs each feature's lowest values (%d given for %d features): %w", len(opts.Lowest), d, ErrOption)
	}
	f.Logged, f.LogShift = make([]bool, d), make([]float64, d)
	for j := range f.Logged {
		lo, pos := opts.Lowest[j], opts.LowestPositive[j]
		if lo < 0 || math.IsInf(pos, 1) || math.IsNaN(lo) || slices.Contains(f.Axes, j) {
			continue
		}
		f.Logged[j] = true
		if lo == 0 {
			f.LogShift[j] = pos // log(x + c) keeps a window at 0 finite, one step below the lowest above it
		}
	}
	return nil
}

// anyLogged reports whether some feature is on a log scale.
func (f *Fit) anyLogged() bool { return slices.Contains(f.Logged, true) }

// scaleInto returns x with every logged feature on its log scale, in *buf (grown as needed),
// or x itself when no feature is logged.
func (f *Fit) scaleInto(buf *[]float64, x []float64) []float64 {
	if !f.anyLogged() {
		return x
	}
	y := append((*buf)[:0], x...)
	f.logRows(y)
	*buf = y
	return y
}

// logRows puts the logged features of row-major windows on their log scale, in place.
func (f *Fit) logRows(y []float64) {
	d := len(f.Features)
	for j, l := range f.Logged {
		if !l {
			continue
		}
		c := f.LogShift[j]
		for i := j; i < len(y); i += d {
			y[i] = math.Log(y[i] + c)
		}
	}
}

// rotateRows turns the axis means of row-major windows by the 3×3 row-major r, in place.
func (f *Fit) rotateRows(y, r []float64) {
	d := len(f.Features)
	a, b, c := f.Axes[0], f.Axes[1], f.Axes[2]
	for i := 0; i+d <= len(y); i += d {
		x0, x1, x2 := y[i+a], y[i+b], y[i+c]
		y[i+a] = r[0]*x0 + r[1]*x1 + r[2]*x2
		y[i+b] = r[3]*x0 + r[4]*x1 + r[5]*x2
		y[i+c] = r[6]*x0 + r[7]*x1 + r[8]*x2
	}
}

// ApplyDeviceInto transforms a participant's windows with a Device (the within step of
// WithinAlign) and the frozen cohort step, writing into dst (grown when too short).
func (f *Fit) ApplyDeviceInto(dst, x []float64, dev Device) []float64 {
	return f.applyInto(dst, x, Baseline{}, dev)
}
