package normalize

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// Turned lists the features, besides the axis means, that a device turned on the wrist moves
// and that can be turned back exactly, so that the align step's rotation reaches them too.
//
// A window's acceleration has a mean vector m (the axis means) and a covariance C; a device
// turned by R records R m and R C Rᵀ. The axis s.d.s are the square roots of C's diagonal and
// the axis correlations its off-diagonal scaled by them, so given the three s.d.s and the three
// correlations of a window, C is rebuilt, turned and read back (common practice: a covariance
// matrix transforms so under a change of axes). An angle of the axis means, such as a tilt (the
// elevation of gravity above the device's x–y plane), moves by the change of that angle between
// m and R m; the window's own deviation from the angle of its mean is kept.
type Turned struct {
	SD     []int   `json:"sd,omitempty"`     // the columns of the s.d. of x, y and z; nil: none (then Cor is nil too)
	Cor    []int   `json:"cor,omitempty"`    // the columns of the correlation of x with y, x with z and y with z; nil: none
	Angles []Angle `json:"angles,omitempty"` // features that are an angle of the axis means
}

// Angle is a feature that equals an angle of the axis means (x, y, z).
type Angle struct {
	Column  int  `json:"column"`
	Axis    int  `json:"axis"`    // 0, 1, 2: the axis the angle is measured from
	Polar   bool `json:"polar"`   // the angle between the vector and the axis (acos); false: the elevation above the plane normal to it (atan2)
	Degrees bool `json:"degrees"` // false: radians
}

// of is the angle of the vector m.
func (a Angle) of(m [3]float64) float64 {
	o1, o2 := m[(a.Axis+1)%3], m[(a.Axis+2)%3]
	v := math.Atan2(m[a.Axis], math.Hypot(o1, o2))
	if a.Polar {
		v = math.Pi/2 - v
	}
	if a.Degrees {
		v *= 180 / math.Pi
	}
	return v
}

// angleFit is the least correlation with an angle of the axis means at which a feature is
// taken for that angle: one degree of noise on a tilt spread over tens of degrees leaves the
// correlation near 0.999.
const angleFit = 0.99

// FindTurned looks, beside the axis means (columns axes, in x, y, z order), for the axis s.d.s
// and correlations by their names (a triple named alike but for x, y and z, whose common part
// holds "sd" or "std"; a triple named alike but for xy, xz and yz, whose common part holds
// "cor"), and for the features that are an angle of the axis means by their values: the angle
// (from or above any of the axes, in degrees or radians) that correlates with the feature at
// least 0.99 over rows (windows × features, row-major). It returns nil when it finds nothing.
func FindTurned(features []string, axes []int, rows []float64) *Turned {
	if len(axes) != 3 {
		return nil
	}
	d := len(features)
	taken := map[int]bool{axes[0]: true, axes[1]: true, axes[2]: true}
	t := &Turned{}
	t.SD = findTriple(features, taken, []string{"x", "y", "z"}, []string{"sd", "std", "stdev", "sdev"})
	if t.SD != nil {
		for _, j := range t.SD {
			taken[j] = true
		}
		if t.Cor = findTriple(features, taken, []string{"xy", "xz", "yz"}, []string{"cor"}); t.Cor != nil {
			for _, j := range t.Cor {
				taken[j] = true
			}
		} else {
			t.SD = nil // the s.d.s alone cannot be turned: the turn mixes in the covariances
		}
	}
	n := len(rows) / d
	for j := range features {
		if taken[j] || n < 10 {
			continue
		}
		best, bestR := Angle{}, 0.0
		for axis := 0; axis < 3; axis++ {
			for _, polar := range []bool{false, true} {
				for _, deg := range []bool{false, true} {
					a := Angle{Column: j, Axis: axis, Polar: polar, Degrees: deg}
					// The slope tells degrees from radians, which correlate alike.
					if r, slope := angleCorrelation(a, rows, d, axes); r > bestR && slope > 0.8 && slope < 1.25 {
						best, bestR = a, r
					}
				}
			}
		}
		if bestR >= angleFit {
			t.Angles = append(t.Angles, best)
		}
	}
	if t.SD == nil && t.Angles == nil {
		return nil
	}
	return t
}

// findTriple finds three features, none taken, named alike but for the parts (in order), whose
// common name holds one of the words; nil when none or more than one triple qualifies.
func findTriple(features []string, taken map[int]bool, parts, words []string) []int {
	index := map[string]int{}
	for j, name := range features {
		index[strings.ToLower(name)] = j
	}
	var found []int
	for j, name := range features {
		low := strings.ToLower(name)
		p := parts[0]
		for i := 0; i+len(p) <= len(low); i++ {
			if low[i:i+len(p)] != p {
				continue
			}
			stem := low[:i] + "*" + low[i+len(p):]
			cols := []int{j}
			for _, q := range parts[1:] {
				k, ok := index[low[:i]+q+low[i+len(p):]]
				if !ok {
					break
				}
				cols = append(cols, k)
			}
			if len(cols) != 3 || taken[cols[0]] || taken[cols[1]] || taken[cols[2]] || !holdsWord(stem, words) {
				continue
			}
			if found != nil && !slices.Equal(found, cols) {
				return nil // two candidates: ambiguous, turn neither
			}
			found = cols
		}
	}
	return found
}

// holdsWord tells whether a name holds one of the words as a whole part (between non-letters).
func holdsWord(name string, words []string) bool {
	parts := strings.FieldsFunc(name, func(r rune) bool { return r < 'a' || r > 'z' })
	for _, p := range parts {
		for _, w := range words {
			if p == w || (w == "cor" && strings.HasPrefix(p, w)) {
				return true
			}
		}
	}
	return false
}

// angleCorrelation is the Pearson correlation of an angle's column with the angle of the axis
// means over the rows where both are numbers, and the least-squares slope of the column on the
// angle.
func angleCorrelation(a Angle, rows []float64, d int, axes []int) (r, slope float64) {
	var sx, sy, sxx, syy, sxy, n float64
	for i := 0; i+d <= len(rows); i += d {
		m := [3]float64{rows[i+axes[0]], rows[i+axes[1]], rows[i+axes[2]]}
		x, y := a.of(m), rows[i+a.Column]
		if math.IsNaN(x) || math.IsNaN(y) || math.IsInf(x, 0) || math.IsInf(y, 0) {
			continue
		}
		sx, sy, sxx, syy, sxy, n = sx+x, sy+y, sxx+x*x, syy+y*y, sxy+x*y, n+1
	}
	if n < 10 {
		return 0, 0
	}
	vx, vy, cxy := sxx-sx*sx/n, syy-sy*sy/n, sxy-sx*sy/n
	if vx <= 0 || vy <= 0 {
		return 0, 0
	}
	return cxy / math.Sqrt(vx*vy), cxy / vx
}

// Check refuses a Turned that names a column out of range, one twice, or any without axes.
func (t *Turned) Check(d int, axes []int) error {
	if axes == nil {
		return fmt.Errorf("normalize: features to turn with no axis means: %w; set Options.Axes or leave Options.Turned nil", ErrOption)
	}
	if (t.SD == nil) != (t.Cor == nil) || (t.SD != nil && (len(t.SD) != 3 || len(t.Cor) != 3)) {
		return fmt.Errorf("normalize: turned s.d.s %v and correlations %v: %w; give three of each or neither", t.SD, t.Cor, ErrOption)
	}
	seen := map[int]bool{axes[0]: true, axes[1]: true, axes[2]: true}
	cols := append(append([]int(nil), t.SD...), t.Cor...)
	for _, a := range t.Angles {
		if a.Axis < 0 || a.Axis > 2 {
			return fmt.Errorf("normalize: angle of column %d measured from axis %d: %w; the axis is 0, 1 or 2", a.Column, a.Axis, ErrOption)
		}
		cols = append(cols, a.Column)
	}
	for _, c := range cols {
		if c < 0 || c >= d || seen[c] {
			return fmt.Errorf("normalize: turned column %d of %d features (axes %v): %w; name each column once, apart from the axis means", c, d, axes, ErrOption)
		}
		seen[c] = true
	}
	return nil
}

// turnRow turns one window's turned features by r, given its axis means before (m) and after
// (mr) the turn; the turned features are as read, not on their log scales.
func (f *Fit) turnRow(row []float64, r []float64, m, mr [3]float64) {
	t := f.Turned
	if t.SD != nil {
		var s [3]float64
		for i, j := range t.SD {
			s[i] = max(0, row[j])
		}
		r01, r02, r12 := row[t.Cor[0]], row[t.Cor[1]], row[t.Cor[2]]
		c00, c11, c22 := s[0]*s[0], s[1]*s[1], s[2]*s[2]
		c01, c02, c12 := r01*s[0]*s[1], r02*s[0]*s[2], r12*s[1]*s[2]
		// out = r C rᵀ, C symmetric: out_ij = Σ_k r_ik (C r_j)_k.
		var cr [9]float64 // cr[j*3+k] = (C r_j)_k, r_j the j-th row of r
		for j := 0; j < 3; j++ {
			a, b, c := r[j*3], r[j*3+1], r[j*3+2]
			cr[j*3] = c00*a + c01*b + c02*c
			cr[j*3+1] = c01*a + c11*b + c12*c
			cr[j*3+2] = c02*a + c12*b + c22*c
		}
		out := func(i, j int) float64 { return r[i*3]*cr[j*3] + r[i*3+1]*cr[j*3+1] + r[i*3+2]*cr[j*3+2] }
		sr := [3]float64{math.Sqrt(max(0, out(0, 0))), math.Sqrt(max(0, out(1, 1))), math.Sqrt(max(0, out(2, 2)))}
		for i, j := range t.SD {
			row[j] = sr[i]
		}
		if den := sr[0] * sr[1]; den > 0 {
			row[t.Cor[0]] = clampUnit(out(0, 1) / den)
		}
		if den := sr[0] * sr[2]; den > 0 {
			row[t.Cor[1]] = clampUnit(out(0, 2) / den)
		}
		if den := sr[1] * sr[2]; den > 0 {
			row[t.Cor[2]] = clampUnit(out(1, 2) / den)
		}
	}
	if len(t.Angles) == 0 {
		return
	}
	// A turn keeps the vector's length n, so an elevation above the plane normal to an axis is
	// θ = asin(m_axis/n) before and θ′ = asin(mr_axis/n) after; θ′ − θ is one atan2 of its sine
	// and cosine (sin θ′ cos θ − cos θ′ sin θ, cos θ′ cos θ + sin θ′ sin θ), and a polar angle
	// (π/2 minus the elevation) moves by its opposite.
	n := math.Sqrt(m[0]*m[0] + m[1]*m[1] + m[2]*m[2])
	if !(n > 0) {
		return
	}
	for _, a := range t.Angles {
		u, v := m[a.Axis]/n, mr[a.Axis]/n
		u, v = clampUnit(u), clampUnit(v)
		cu, cv := math.Sqrt(1-u*u), math.Sqrt(1-v*v)
		var d float64
		if sin, cos := v*cu-cv*u, cv*cu+v*u; cos > 0 {
			d = math.Atan(sin / cos) // a turn of less than a right angle: the usual case, and quicker
		} else {
			d = math.Atan2(sin, cos)
		}
		if a.Polar {
			d = -d
		}
		if a.Degrees {
			d *= 180 / math.Pi
		}
		row[a.Column] += d
	}
}

// calibrateRow moves one window's turned features with the calibration of its axis means, from
// m as read to mc calibrated: each axis s.d. scales with its axis (the correlations do not
// change), and each angle moves by the change of the angle of the axis means; the turned
// features are as read, not on their log scales.
func (f *Fit) calibrateRow(row []float64, scale []float64, m, mc [3]float64) {
	t := f.Turned
	for i, j := range t.SD {
		row[j] *= math.Abs(scale[i])
	}
	n, nc := math.Sqrt(m[0]*m[0]+m[1]*m[1]+m[2]*m[2]), math.Sqrt(mc[0]*mc[0]+mc[1]*mc[1]+mc[2]*mc[2])
	if !(n > 0) || !(nc > 0) {
		return
	}
	for _, a := range t.Angles {
		d := math.Asin(clampUnit(mc[a.Axis]/nc)) - math.Asin(clampUnit(m[a.Axis]/n))
		if a.Polar {
			d = -d
		}
		if a.Degrees {
			d *= 180 / math.Pi
		}
		row[a.Column] += d
	}
}

// clampUnit is v within [−1, 1] (NaN stays NaN), by comparisons, which are quicker than
// math.Max and math.Min on the hot path.
func clampUnit(v float64) float64 {
	if v > 1 {
		return 1
	}
	if v < -1 {
		return -1
	}
	return v
}
