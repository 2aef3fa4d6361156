package normalize

import (
	"math"
	"math/rand/v2"
	"testing"
)

// A device whose axes read scale·g + offset (g gravity's direction in the device's frame, in
// every posture a wrist takes), with the sensor's noise: the sphere calibration finds the
// scale and offset it was given (planted structure). The tolerance is about three standard
// errors of the fit with 500 windows and noise of 0.01 g.
func TestSphereCalibrationRecoversAPlantedCalibration(t *testing.T) {
	t.Parallel()
	for _, tt := range []struct {
		name          string
		scale, offset [3]float64
		gravity       float64
		reach         float64 // how far the postures reach: 1 all over the sphere
		ok            bool
	}{
		{"gains and offsets in g", [3]float64{1.05, 0.96, 1.02}, [3]float64{0.04, -0.08, 0.02}, 1, 1, true},
		{"in m/s²", [3]float64{0.97, 1.03, 1.0}, [3]float64{-0.3, 0.2, 0.5}, 9.81, 1, true},
		{"none", [3]float64{1, 1, 1}, [3]float64{}, 1, 1, true},
		{"postures in one half only", [3]float64{1.05, 0.96, 1.02}, [3]float64{0.04, -0.08, 0.02}, 1, 0.2, false},
	} {
		t.Run(tt.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(1, 2))
			var means [][3]float64
			for len(means) < 500 {
				v := [3]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
				n := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2])
				for i := range v {
					v[i] /= n
				}
				if v[2] < 1-2*tt.reach { // a cap of the sphere around +z
					continue
				}
				var m [3]float64
				for i := range m {
					// the device reads m with scale·m + offset = true value
					m[i] = (v[i]*tt.gravity - tt.offset[i]) / tt.scale[i]
					m[i] += 0.01 * tt.gravity * rng.NormFloat64()
				}
				means = append(means, m)
			}
			scale, offset, ok := SphereCalibration(means, tt.gravity)
			if ok != tt.ok {
				t.Fatalf("calibrated: %v, want %v", ok, tt.ok)
			}
			if !ok {
				return
			}
			for i := 0; i < 3; i++ {
				if math.Abs(scale[i]-tt.scale[i]) > 0.003 || math.Abs(offset[i]-tt.offset[i]) > 0.003*tt.gravity {
					t.Errorf("axis %d: scale %.4f, offset %.4f; want %.4f, %.4f", i, scale[i], offset[i], tt.scale[i], tt.offset[i])
				}
			}
		})
	}
}
