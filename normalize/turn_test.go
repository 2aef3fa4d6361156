package normalize

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// turnNames are the features of the windows windowOf writes, named as cohortmix synth names them.
var turnNames = []string{"mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z", "cor_xy", "cor_xz", "cor_yz", "tilt_deg", "vm_sd"}

// windowOf writes the features of a window whose acceleration has mean m and covariance c, as
// the definitions give them: the s.d.s are the square roots of c's diagonal, the correlations its
// off-diagonal over them, the tilt the elevation of m above the x–y plane in degrees, and vm_sd a
// feature no turn moves.
func windowOf(m [3]float64, c [9]float64) []float64 {
	s := [3]float64{math.Sqrt(c[0]), math.Sqrt(c[4]), math.Sqrt(c[8])}
	return []float64{m[0], m[1], m[2], s[0], s[1], s[2],
		c[1] / (s[0] * s[1]), c[2] / (s[0] * s[2]), c[5] / (s[1] * s[2]),
		math.Atan2(m[2], math.Hypot(m[0], m[1])) * 180 / math.Pi, 0.3}
}

// randomRotation is the rotation matrix (row-major) of a random rotation vector of about deg
// degrees per component (Rodrigues' formula).
func randomRotation(rng *rand.Rand, deg float64) [9]float64 {
	w := [3]float64{}
	for i := range w {
		w[i] = deg * math.Pi / 180 * rng.NormFloat64()
	}
	th := math.Sqrt(w[0]*w[0] + w[1]*w[1] + w[2]*w[2])
	k := [3]float64{w[0] / th, w[1] / th, w[2] / th}
	c, s := math.Cos(th), math.Sin(th)
	var r [9]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			r[i*3+j] = (1 - c) * k[i] * k[j]
			if i == j {
				r[i*3+j] += c
			}
		}
	}
	r[1] -= s * k[2]
	r[2] += s * k[1]
	r[3] += s * k[2]
	r[5] -= s * k[0]
	r[6] -= s * k[1]
	r[7] += s * k[0]
	return r
}

func mul3(a, b [9]float64) [9]float64 {
	var o [9]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			for k := 0; k < 3; k++ {
				o[i*3+j] += a[i*3+k] * b[k*3+j]
			}
		}
	}
	return o
}

func transpose3(a [9]float64) [9]float64 {
	return [9]float64{a[0], a[3], a[6], a[1], a[4], a[7], a[2], a[5], a[8]}
}

func mulVec3(r [9]float64, v [3]float64) [3]float64 {
	return [3]float64{r[0]*v[0] + r[1]*v[1] + r[2]*v[2], r[3]*v[0] + r[4]*v[1] + r[5]*v[2], r[6]*v[0] + r[7]*v[1] + r[8]*v[2]}
}

// randomWindow is a window's mean (gravity, about 1 g, and some slow movement) and a random
// positive definite covariance.
func randomWindow(rng *rand.Rand) ([3]float64, [9]float64) {
	g := [3]float64{0.3 * rng.NormFloat64(), 0.3 * rng.NormFloat64(), 0.9 + 0.1*rng.NormFloat64()}
	var a [9]float64
	for i := range a {
		a[i] = 0.2 * rng.NormFloat64()
	}
	c := mul3(a, transpose3(a))
	for i := 0; i < 3; i++ {
		c[i*4] += 0.01
	}
	return g, c
}

// A device turned by R records the mean R m and the covariance R C Rᵀ (common practice: how a
// mean vector and a covariance matrix transform under a change of axes). Turning the device's
// features by Rᵀ must give back the wrist's: the s.d.s and correlations to rounding (1e-12),
// and the tilt exactly as its definition gives it, with a window's own deviation from the
// angle of its mean kept.
func TestTurnGivesBackTheWristFrame(t *testing.T) {
	t.Parallel()
	axes := []int{0, 1, 2}
	f := &Fit{Features: turnNames, Axes: axes, Logged: make([]bool, len(turnNames)), LogShift: make([]float64, len(turnNames))}
	rng := rand.New(rand.NewPCG(3, 4))
	var rows []float64
	for i := 0; i < 50; i++ {
		m, c := randomWindow(rng)
		rows = append(rows, windowOf(m, c)...)
	}
	turned := FindTurned(turnNames, axes, rows)
	if turned == nil {
		t.Fatalf("FindTurned found nothing in %v", turnNames)
	}
	want := &Turned{SD: []int{3, 4, 5}, Cor: []int{6, 7, 8}, Angles: []Angle{{Column: 9, Axis: 2, Degrees: true}}}
	if !slices.Equal(turned.SD, want.SD) || !slices.Equal(turned.Cor, want.Cor) || len(turned.Angles) != 1 || turned.Angles[0] != want.Angles[0] {
		t.Fatalf("FindTurned = %+v, want %+v", turned, want)
	}
	f.Turned = turned
	for _, logged := range []bool{false, true} {
		if logged {
			for _, j := range []int{3, 4, 5, 10} {
				f.Logged[j], f.LogShift[j] = true, 0.05
			}
		}
		for trial := 0; trial < 20; trial++ {
			m, c := randomWindow(rng)
			r := randomRotation(rng, 20)
			wrist := windowOf(m, c)
			wrist[9] += 0.7 // the window's own deviation from the angle of its mean
			device := windowOf(mulVec3(r, m), mul3(mul3(r, c), transpose3(r)))
			device[9] += 0.7
			back := transpose3(r)
			if logged {
				// As ApplyLoggedInto takes them: logged once (LogInto), which leaves the turned
				// features as read, then turned, then those logged.
				f.logRows(wrist)
				device = f.LogInto(nil, device)
				f.rotateRows(device, Device{Rotation: back[:]})
				f.logColumns(device, f.loggedColumns(true))
			} else {
				f.rotateRows(device, Device{Rotation: back[:]})
			}
			for j, w := range wrist {
				if math.Abs(device[j]-w) > 1e-12*math.Max(1, math.Abs(w)) {
					t.Errorf("logged %v, trial %d: %s turned back is %.15g, the wrist's %.15g", logged, trial, turnNames[j], device[j], w)
				}
			}
		}
	}
}

func TestFindTurned(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(5, 6))
	window := func(angle func(m [3]float64) float64) []float64 {
		m, c := randomWindow(rng)
		row := windowOf(m, c)
		row[9] = angle(m) + 0.01*rng.NormFloat64()
		return row
	}
	rowsOf := func(angle func(m [3]float64) float64) []float64 {
		var rows []float64
		for i := 0; i < 40; i++ {
			rows = append(rows, window(angle)...)
		}
		return rows
	}
	cases := []struct {
		name   string
		names  []string
		angle  func(m [3]float64) float64
		sd     []int
		angles []Angle
	}{
		{"tilt in degrees", turnNames, func(m [3]float64) float64 { return math.Atan2(m[2], math.Hypot(m[0], m[1])) * 180 / math.Pi },
			[]int{3, 4, 5}, []Angle{{Column: 9, Axis: 2, Degrees: true}}},
		{"tilt in radians", turnNames, func(m [3]float64) float64 { return math.Atan2(m[2], math.Hypot(m[0], m[1])) },
			[]int{3, 4, 5}, []Angle{{Column: 9, Axis: 2}}},
		{"angle from the x axis, in degrees", turnNames, func(m [3]float64) float64 {
			return math.Acos(m[0]/math.Sqrt(m[0]*m[0]+m[1]*m[1]+m[2]*m[2])) * 180 / math.Pi
		}, []int{3, 4, 5}, []Angle{{Column: 9, Axis: 0, Polar: true, Degrees: true}}},
		{"no angle: noise", turnNames, func([3]float64) float64 { return rng.NormFloat64() }, []int{3, 4, 5}, nil},
		{"s.d.s without correlations are not turned", []string{"mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z", "c1", "c2", "c3", "noise", "vm_sd"},
			func([3]float64) float64 { return rng.NormFloat64() }, nil, nil},
		{"upper-case names", []string{"X_mean", "Y_mean", "Z_mean", "X_SD", "Y_SD", "Z_SD", "Corr_XY", "Corr_XZ", "Corr_YZ", "angle", "VM_SD"},
			func(m [3]float64) float64 { return math.Atan2(m[2], math.Hypot(m[0], m[1])) * 180 / math.Pi },
			[]int{3, 4, 5}, []Angle{{Column: 9, Axis: 2, Degrees: true}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := FindTurned(c.names, []int{0, 1, 2}, rowsOf(c.angle))
			if c.sd == nil && c.angles == nil {
				if got != nil {
					t.Fatalf("FindTurned = %+v, want nil", got)
				}
				return
			}
			if got == nil {
				t.Fatalf("FindTurned found nothing, want s.d.s %v and angles %v", c.sd, c.angles)
			}
			if !slices.Equal(got.SD, c.sd) || len(got.Angles) != len(c.angles) {
				t.Fatalf("FindTurned = %+v, want s.d.s %v and angles %v", got, c.sd, c.angles)
			}
			for i := range c.angles {
				if got.Angles[i] != c.angles[i] {
					t.Errorf("angle %d = %+v, want %+v", i, got.Angles[i], c.angles[i])
				}
			}
		})
	}
}

func TestTurnedCheck(t *testing.T) {
	t.Parallel()
	axes := []int{0, 1, 2}
	cases := []struct {
		name string
		t    Turned
		axes []int
		ok   bool
	}{
		{"whole", Turned{SD: []int{3, 4, 5}, Cor: []int{6, 7, 8}, Angles: []Angle{{Column: 9}}}, axes, true},
		{"no axes", Turned{Angles: []Angle{{Column: 9}}}, nil, false},
		{"s.d.s without correlations", Turned{SD: []int{3, 4, 5}}, axes, false},
		{"an axis mean turned twice", Turned{Angles: []Angle{{Column: 2}}}, axes, false},
		{"out of range", Turned{Angles: []Angle{{Column: 11}}}, axes, false},
		{"bad axis", Turned{Angles: []Angle{{Column: 9, Axis: 3}}}, axes, false},
	}
	for _, c := range cases {
		err := c.t.Check(11, c.axes)
		if (err == nil) != c.ok || (err != nil && !errors.Is(err, ErrOption)) {
			t.Errorf("%s: Check = %v, want ok %v", c.name, err, c.ok)
		}
	}
}

// Windows put on their log scales once (LogInto, which leaves the turned features as read) and
// then turned with a device (ApplyLoggedInto), as the align step does round after round, give to
// the bit what turning and logging them in one go (ApplyDeviceInto) gives: each feature is
// logged once, after the turn, either way. With and without the projection.
func TestLoggedApplyMatchesOneGo(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(7, 8))
	units := make([][]float64, 4)
	for u := range units {
		for w := 0; w < applyRows+21; w++ {
			m, c := randomWindow(rng)
			units[u] = append(units[u], windowOf(m, c)...)
		}
	}
	d := len(turnNames)
	axes := []int{0, 1, 2}
	turned := FindTurned(turnNames, axes, units[0])
	if turned == nil || turned.SD == nil || len(turned.Angles) != 1 {
		t.Fatalf("FindTurned found %+v", turned)
	}
	lowest, start := LowestOf(units, d), LogStartOf(units, d)
	lowest[9] = 0 // the tilt taken as never negative, so that it is logged too
	for _, noPCA := range []bool{true, false} {
		fit, err := FitBlocks(context.Background(), turnNames, SliceBlocks(units), Options{Within: WithinAlign, Log: true, Lowest: lowest, LogStart: start, Axes: axes, Turned: turned, NoPCA: noPCA})
		if err != nil {
			t.Fatal(err)
		}
		if !fit.Logged[3] || !fit.Logged[9] || !fit.Logged[10] {
			t.Fatalf("logged %v; want the s.d.s, the tilt and vm_sd", fit.Logged)
		}
		for u, x := range units {
			r := randomRotation(rng, 15)
			dev := Device{Rotation: r[:]}
			want := fit.ApplyDeviceInto(nil, x, dev)
			got := fit.ApplyLoggedInto(nil, fit.LogInto(nil, x), dev)
			for i := range want {
				if math.Float64bits(want[i]) != math.Float64bits(got[i]) {
					t.Fatalf("PCA %v, participant %d value %d: %v logged first, %v in one go", !noPCA, u, i, got[i], want[i])
				}
			}
		}
	}
}
