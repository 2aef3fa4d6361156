package normalize

import (
	"github.com/cohortmix/cohortmix/cluster"
)

// SphereCalibration fits one device's per-axis scale and offset so that its windows' axis means
// m (x, y, z as read), calibrated as scale·m + offset, lie on the sphere of radius gravity: the
// autocalibration of van Hees et al. (2014, J Appl Physiol 117:738), on window means; see
// cluster.SphereFit, which it is. The mean of a window's acceleration is gravity whatever the
// device does over the window, so every window serves.
func SphereCalibration(means [][3]float64, gravity float64) (scale, offset [3]float64, ok bool) {
	return cluster.SphereFit(means, gravity)
}
