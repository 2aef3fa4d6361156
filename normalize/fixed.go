package normalize

import "slices"

// movedColumns are the features a Device changes: the axis means and the features turned and
// calibrated with them (f.Turned). nil without axes.
func (f *Fit) movedColumns() []int {
	if f.Axes == nil {
		return nil
	}
	cols := slices.Clone(f.Axes)
	if t := f.Turned; t != nil {
		cols = append(cols, t.SD...)
		cols = append(cols, t.Cor...)
		for _, a := range t.Angles {
			cols = append(cols, a.Column)
		}
	}
	slices.Sort(cols)
	return slices.Compact(cols)
}

// Fixed is the part of ApplyLoggedInto's output that no device changes, for one set of windows
// on their log scales (FixedLogged), with what ApplyFixedInto needs to add the part a device
// does change.
type Fixed struct {
	y     []float64 // n × OutDim: the cohort step of the features no device moves
	moved []int     // the features a device moves (movedColumns)
	late  []int     // of those, the ones put on their log scales once turned
	inv   []float64 // Fit.inverseSpread
	load  []float64 // load[m*k+c]: the loading of moved feature m on component c; nil without PCA
}

// FixedLogged is the part of ApplyLoggedInto's output that no device changes, for windows xl on
// their log scales (LogInto): the cohort step applied to the features a device leaves as they
// are, with the features it moves contributing nothing. ApplyFixedInto then transforms the
// same windows with one device after another (the align step's rounds) at the cost of the
// moved features only, since the cohort step after the turn is linear (centring, scaling and
// the PCA projection). nil when the fit has a within-participant baseline, which
// ApplyLoggedInto does not use either.
func (f *Fit) FixedLogged(xl []float64) *Fixed {
	if f.Within.baseline() {
		return nil
	}
	d, k := len(f.Features), f.OutDim()
	n := len(xl) / d
	fx := &Fixed{y: make([]float64, n*k), moved: f.movedColumns(), late: f.loggedColumns(true), inv: f.inverseSpread()}
	if f.PCA != nil {
		raw := f.PCA.Components.RawMatrix()
		fx.load = make([]float64, len(fx.moved)*k)
		for m, j := range fx.moved {
			copy(fx.load[m*k:(m+1)*k], raw.Data[j*raw.Stride:j*raw.Stride+k])
		}
	}
	bp := scratch(min(n, applyRows) * d)
	defer scratchPool.Put(bp)
	block := *bp
	for i := 0; i < n; i += applyRows {
		m := min(applyRows, n-i)
		z := block[:m*d]
		for w := 0; w < m; w++ {
			xi, zi := xl[(i+w)*d:(i+w+1)*d], z[w*d:(w+1)*d]
			for j, v := range xi {
				zi[j] = (v - f.Center[j]) * fx.inv[j]
			}
			for _, j := range fx.moved {
				zi[j] = 0
				if f.PCA != nil {
					zi[j] = f.PCA.Mean[j] // centred by the projection to 0
				}
			}
		}
		if f.PCA == nil {
			copy(fx.y[i*k:(i+m)*k], z)
		} else {
			f.PCA.TransformRows(fx.y[i*k:(i+m)*k], z)
		}
	}
	return fx
}

// ApplyFixedInto is ApplyLoggedInto(dst, xl, dev) from the windows' fixed part (FixedLogged of
// the same xl): the moved features are calibrated, turned, logged and scaled as there, and
// their projection added to the fixed part. The result equals ApplyLoggedInto's up to the
// order of floating-point sums. With a nil fixed part it is ApplyLoggedInto.
func (f *Fit) ApplyFixedInto(dst []float64, fx *Fixed, xl []float64, dev Device) []float64 {
	if fx == nil {
		return f.ApplyLoggedInto(dst, xl, dev)
	}
	d, k := len(f.Features), f.OutDim()
	n := len(xl) / d
	dst = slices.Grow(dst[:0], n*k)[:n*k]
	copy(dst, fx.y[:n*k])
	bp := scratch(min(n, applyRows) * d)
	defer scratchPool.Put(bp)
	block := *bp
	for i := 0; i < n; i += applyRows {
		m := min(applyRows, n-i)
		t := block[:m*d]
		copy(t, xl[i*d:(i+m)*d])
		if dev.moves() {
			f.rotateRows(t, dev)
		}
		f.logColumns(t, fx.late)
		for w := 0; w < m; w++ {
			ti, out := t[w*d:(w+1)*d], dst[(i+w)*k:(i+w+1)*k]
			for mi, j := range fx.moved {
				z := (ti[j] - f.Center[j]) * fx.inv[j]
				if fx.load == nil {
					out[j] = z
					continue
				}
				z -= f.PCA.Mean[j]
				for c, l := range fx.load[mi*k : (mi+1)*k] {
					out[c] += z * l
				}
			}
		}
	}
	dev.SubtractOffset(dst, k)
	return dst
}
