package normalize

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// Device is one participant's alignment with the cohort's movement states, the within step of
// WithinAlign (fitted by profile.FitAligned and profile.States.AlignUnit): a rotation of its
// axis means, as a device turned on the wrist moves them, and an offset on each output column,
// as a calibration offset, or an amplitude gain on a log scale, moves it.
type Device struct {
	Rotation []float64 // 3×3 row-major, applied to the axis means (x, y, z) once calibrated; nil leaves them
	// AxisScale and AxisOffset calibrate the axis means before the turn: axis i reads
	// AxisScale[i] × value + AxisOffset[i], the per-axis gain and offset of the autocalibration
	// of van Hees et al. (2014, J Appl Physiol 117:738); the axis s.d.s scale with them and the
	// angles of the axis means move with them. nil leaves the axes as read.
	AxisScale, AxisOffset []float64
	Offset                []float64 // subtracted from each output column (OutDim values); nil subtracts nothing
}

// Calibrated reports whether the device calibrates the axis means.
func (d Device) Calibrated() bool { return d.AxisScale != nil }

// moves reports whether the device changes the axis means (and what turns with them).
func (d Device) moves() bool { return d.Rotation != nil || d.AxisScale != nil }

// Calibrate is a window's axis means (x, y, z) as the device's calibration reads them.
func (d Device) Calibrate(m [3]float64) [3]float64 {
	if d.AxisScale == nil {
		return m
	}
	for i := range m {
		m[i] = d.AxisScale[i]*m[i] + d.AxisOffset[i]
	}
	return m
}

// Angle is the rotation's angle in degrees (0 without one).
func (d Device) Angle() float64 {
	r := d.Rotation
	if r == nil {
		return 0
	}
	return math.Acos(math.Max(-1, math.Min(1, (r[0]+r[4]+r[8]-1)/2))) * 180 / math.Pi
}

// SubtractOffset takes the device's offsets from each row of y (rows of k output columns, in
// place): the last step of ApplyDeviceInto.
func (d Device) SubtractOffset(y []float64, k int) {
	if d.Offset == nil {
		return
	}
	for i := 0; i+k <= len(y); i += k {
		for c, o := range d.Offset {
			y[i+c] -= o
		}
	}
}

// LowestOf returns each of the d columns' lowest value over row-major blocks (NaN ignored, +Inf
// for a column without values): what Options.Lowest takes.
func LowestOf(units [][]float64, d int) []float64 {
	lowest := make([]float64, d)
	for j := range lowest {
		lowest[j] = math.Inf(1)
	}
	for _, x := range units {
		for i := 0; i+d <= len(x); i += d {
			for j, v := range x[i : i+d] {
				if v < lowest[j] { // false for NaN
					lowest[j] = v
				}
			}
		}
	}
	return lowest
}

// LogStartOf returns each of the d columns' first quartile over row-major blocks (NaN ignored):
// the start c of Options.Log's log(x + c).
func LogStartOf(units [][]float64, d int) []float64 {
	start := make([]float64, d)
	var col []float64
	for j := range start {
		col = col[:0]
		for _, x := range units {
			for i := j; i < len(x); i += d {
				if !math.IsNaN(x[i]) {
					col = append(col, x[i])
				}
			}
		}
		if len(col) == 0 {
			continue
		}
		slices.Sort(col)
		h := logStartQuantile * float64(len(col)-1) // linear interpolation, as numpy's default
		k := int(h)
		start[j] = col[k]
		if k+1 < len(col) {
			start[j] += (h - float64(k)) * (col[k+1] - col[k])
		}
	}
	return start
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
	if opts.Turned != nil {
		if err := opts.Turned.Check(d, f.Axes); err != nil {
			return err
		}
		t := *opts.Turned
		t.SD, t.Cor, t.Angles = slices.Clone(t.SD), slices.Clone(t.Cor), slices.Clone(t.Angles)
		f.Turned = &t
	}
	if !opts.Log {
		return nil
	}
	if len(opts.Lowest) != d || len(opts.LogStart) != d {
		return fmt.Errorf("normalize: a log scale needs each feature's lowest value and first quartile (%d and %d given for %d features): %w", len(opts.Lowest), len(opts.LogStart), d, ErrOption)
	}
	f.Logged, f.LogShift = make([]bool, d), make([]float64, d)
	for j := range f.Logged {
		lo, c := opts.Lowest[j], opts.LogStart[j]
		if !(lo >= 0) || !(c > 0) || math.IsInf(c, 0) || slices.Contains(f.Axes, j) {
			continue
		}
		f.Logged[j], f.LogShift[j] = true, c
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
func (f *Fit) logRows(y []float64) { f.logColumns(y, f.loggedAll()) }

// loggedAll are the logged features.
func (f *Fit) loggedAll() []int {
	var cols []int
	for j, l := range f.Logged {
		if l {
			cols = append(cols, j)
		}
	}
	return cols
}

// loggedColumns are the logged features; with late, only those that the turn rebuilds (the
// features in f.Turned, when there are axis means to turn), and without, all but those when
// the fit turns them.
func (f *Fit) loggedColumns(late bool) []int {
	turned := func(j int) bool { return false }
	if t := f.Turned; t != nil && f.Axes != nil {
		turned = func(j int) bool {
			return slices.Contains(t.SD, j) || slices.Contains(t.Cor, j) || slices.ContainsFunc(t.Angles, func(a Angle) bool { return a.Column == j })
		}
	}
	var cols []int
	for j, l := range f.Logged {
		if l && turned(j) == late {
			cols = append(cols, j)
		}
	}
	return cols
}

// logColumns puts the given columns of row-major windows on their log scales, in place.
func (f *Fit) logColumns(y []float64, cols []int) {
	d := len(f.Features)
	for _, j := range cols {
		c := f.LogShift[j]
		for i := j; i < len(y); i += d {
			y[i] = math.Log(y[i] + c)
		}
	}
}

// rotateRows calibrates (when the device does) and turns the axis means of row-major windows
// by the device, in place, and the features in f.Turned with them, which must be as read (not
// on their log scales).
func (f *Fit) rotateRows(y []float64, dev Device) {
	d := len(f.Features)
	a, b, c := f.Axes[0], f.Axes[1], f.Axes[2]
	r := dev.Rotation
	for i := 0; i+d <= len(y); i += d {
		x0, x1, x2 := y[i+a], y[i+b], y[i+c]
		if dev.AxisScale != nil {
			m := [3]float64{x0, x1, x2}
			mc := dev.Calibrate(m)
			if f.Turned != nil {
				f.calibrateRow(y[i:i+d], dev.AxisScale, m, mc)
			}
			x0, x1, x2 = mc[0], mc[1], mc[2]
			y[i+a], y[i+b], y[i+c] = x0, x1, x2
		}
		if r == nil {
			continue
		}
		y[i+a] = r[0]*x0 + r[1]*x1 + r[2]*x2
		y[i+b] = r[3]*x0 + r[4]*x1 + r[5]*x2
		y[i+c] = r[6]*x0 + r[7]*x1 + r[8]*x2
		if f.Turned != nil {
			f.turnRow(y[i:i+d], r, [3]float64{x0, x1, x2}, [3]float64{y[i+a], y[i+b], y[i+c]})
		}
	}
}

// ApplyDeviceInto transforms a participant's windows with a Device (the within step of
// WithinAlign) and the frozen cohort step, writing into dst (grown when too short).
func (f *Fit) ApplyDeviceInto(dst, x []float64, dev Device) []float64 {
	return f.applyInto(dst, x, Baseline{}, dev, false)
}

// LogInto writes x with its logged features on their log scales into dst (grown when too
// short) and returns it: what ApplyLoggedInto takes, so that windows transformed again and
// again (with one device after another) are put on their log scales once. The features the
// turn rebuilds (f.Turned) stay as read: ApplyLoggedInto logs them once turned.
func (f *Fit) LogInto(dst, x []float64) []float64 {
	dst = append(dst[:0], x...)
	f.logColumns(dst, f.loggedColumns(false))
	return dst
}

// ApplyLoggedInto is ApplyDeviceInto for windows from LogInto.
func (f *Fit) ApplyLoggedInto(dst, xl []float64, dev Device) []float64 {
	return f.applyInto(dst, xl, Baseline{}, dev, true)
}

// FindAxes looks for the three features that hold a device's axis means (gravity, in g or m/s²,
// and whatever slow movement adds): among the triples of feature names that differ only in one
// letter, x, y and z (as mean_x, mean_y, mean_z or X_mean, Y_mean, Z_mean), the one whose
// windows' vector length varies least, if it varies by less than a quarter of its mean (the
// length of gravity does not change when a device turns; that of an axis s.d. does). rows are
// windows × features, row-major, for example a few participants' first windows. It returns the
// columns in x, y, z order, or nil when none qualified, with the coefficient of variation of the
// steadiest triple's vector length (NaN when no three features are named alike but for x, y
// and z).
func FindAxes(features []string, rows []float64) ([]int, float64) {
	d := len(features)
	index := map[string]int{}
	for j, name := range features {
		index[strings.ToLower(name)] = j
	}
	var best []int
	bestCV := math.Inf(1)
	candidates := 0
	for j, name := range features {
		low := strings.ToLower(name)
		for i := 0; i < len(low); i++ {
			if low[i] != 'x' {
				continue
			}
			y, yok := index[low[:i]+"y"+low[i+1:]]
			z, zok := index[low[:i]+"z"+low[i+1:]]
			if !yok || !zok {
				continue
			}
			candidates++
			var sum, sum2, n float64
			for r := 0; r+d <= len(rows); r += d {
				a, b, c := rows[r+j], rows[r+y], rows[r+z]
				l := math.Sqrt(a*a + b*b + c*c)
				if math.IsNaN(l) {
					continue
				}
				sum += l
				sum2 += l * l
				n++
			}
			if n < 2 || sum <= 0 {
				continue
			}
			mean := sum / n
			cv := math.Sqrt(math.Max(0, sum2/n-mean*mean)) / mean
			if cv < bestCV {
				best, bestCV = []int{j, y, z}, cv
			}
		}
	}
	switch {
	case candidates == 0:
		return nil, math.NaN()
	case best == nil || bestCV >= 0.25:
		return nil, bestCV
	}
	return best, bestCV
}

// logStartQuantile is the quantile of a feature that starts its log scale (LogStartOf).
const logStartQuantile = 0.25
