package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
)

// Scenario is one member of a family of invented cohorts, drawn at random from a seed, on which
// the methods are chosen and judged. Each member has its own movement states (random postures,
// intensities and cadences), its own planted groups (random mixtures of unequal sizes), and its
// own nuisance: devices turned on the wrist (a rotation that moves the axis means, the axis
// s.d., the tilt and the axis correlations together), amplitude gains, people who sit, walk and
// rest a little differently from one another, short and long bouts, and some short recordings.
// The features are the 24 that the demo's 24-feature cohorts hold, computed from the same
// invented signal, so that the near-copies among them (the vector-magnitude percentiles) are
// near-copies here too.
//
// Everything a scenario writes is synthetic: no real person's data is in it.
type Scenario struct {
	Seed   uint64
	States []State
	Groups []Group
	// Concentration is the Dirichlet concentration of a participant's mixture around its group's:
	// larger is tighter.
	Concentration float64
	RotationSD    float64 // degrees: s.d. of each component of a device's rotation vector
	GainSD        float64 // s.d. of a device's amplitude gain around 1
	PostureSD     float64 // degrees: how far a person's posture in a state strays from the state's
	IntensitySD   float64 // log-s.d. of a person's intensity factor
	ShortShare    float64 // share of participants whose recording is short (100–600 windows)
	// QuietSplit is set when every group spends the same share of time quiet and the groups
	// differ in how that time divides among the quiet postures (and among the active states).
	QuietSplit bool
	// Family is the family the scenario was drawn from ("" for DrawScenario's), and Physics how
	// its windows' features are made.
	Family  Family
	Physics Physics
	// CalibOffsetSD and CalibGainSD are the s.d.s of each device's per-axis calibration offset
	// (g) and gain around 1 (Calibrated), or of the additive offsets on the axis means
	// (Parametric, CalibOffsetSD only).
	CalibOffsetSD, CalibGainSD float64
	Count                      *CountDesign // the count-data design (CountData only)
}

// State is one planted movement state.
type State struct {
	Name      string
	Quiet     bool
	Posture   [3]float64 // unit gravity direction in the wrist frame
	Intensity float64    // root mean square of the dynamic acceleration, g
	Cadence   float64    // Hz
	Direction [3]float64 // main direction of movement in the wrist frame
	Focus     float64    // share of the movement along Direction (0 every way, 1 along it)
	Rhythm    float64    // 0 irregular … 1 periodic
	Bout      float64    // mean bout length, windows
	law       countLaw   // CountData: the law of the state's counts
	param     *paramLaw  // Parametric: the law of the state's features
}

// Group is one planted group.
type Group struct {
	Share      float64   // of the participants
	Mixture    []float64 // mean share of time in each state
	BoutFactor []float64 // multiplies each state's mean bout length
}

// DrawScenario draws the member of the wrist family that seed names (DrawFamily(Wrist, seed)).
func DrawScenario(seed uint64) Scenario {
	rng := rand.New(rand.NewPCG(seed, 0x5ce7a410))
	sc := Scenario{Seed: seed}
	nQuiet := sc.drawWristStates(rng)
	sc.drawNuisance(rng)
	sc.drawGroups(rng, nQuiet, Mixtures, 2016)
	return sc
}

// drawWristStates draws 4–8 states, 2–3 of them quiet postures, and returns the number quiet.
func (sc *Scenario) drawWristStates(rng *rand.Rand) int {
	nStates := 4 + rng.IntN(5) // 4…8
	nQuiet := 2 + rng.IntN(2)  // 2…3
	if nStates-nQuiet < 2 {
		nQuiet = nStates - 2
	}
	boutScale := math.Exp(rng.NormFloat64() * 0.35)
	// Quiet postures at least 40° apart, so that they are distinct postures.
	var quiet [][3]float64
	for len(quiet) < nQuiet {
		g := randomUnit(rng)
		ok := true
		for _, q := range quiet {
			if angle(g, q) < 40 {
				ok = false
			}
		}
		if ok {
			quiet = append(quiet, g)
		}
	}
	for q, g := range quiet {
		sc.States = append(sc.States, State{
			Name: "still-" + strconv.Itoa(q+1), Quiet: true, Posture: g,
			Intensity: logUniform(rng, 0.004, 0.03), Cadence: 0.1 + 0.5*rng.Float64(),
			Direction: randomUnit(rng), Focus: 0.2 + 0.4*rng.Float64(), Rhythm: 0.1 * rng.Float64(),
			Bout: boutScale * logUniform(rng, 15, 90),
		})
	}
	// Active states: intensities spread from light to vigorous, each apart from the next by a
	// factor of 1.5 in intensity or 0.6 Hz in cadence.
	nActive := nStates - nQuiet
	var active []State
	for len(active) < nActive {
		a := State{Intensity: logUniform(rng, 0.06, 1.0), Posture: randomUnit(rng), Direction: randomUnit(rng),
			Focus: 0.3 + 0.6*rng.Float64(), Rhythm: 0.3 + 0.6*rng.Float64(), Bout: boutScale * logUniform(rng, 2, 12)}
		a.Cadence = math.Min(3.2, math.Max(0.5, 0.8+2.2*math.Log(a.Intensity/0.06)/math.Log(1/0.06)+0.3*rng.NormFloat64()))
		ok := true
		for _, b := range active {
			r := math.Max(a.Intensity/b.Intensity, b.Intensity/a.Intensity)
			if r < 1.5 && math.Abs(a.Cadence-b.Cadence) < 0.6 {
				ok = false
			}
		}
		if ok {
			active = append(active, a)
		}
	}
	sortByIntensity(active)
	for i := range active {
		active[i].Name = "active-" + strconv.Itoa(i+1)
	}
	sc.States = append(sc.States, active...)
	return nQuiet
}

// drawNuisance draws how far participants stray from their group and how their devices differ.
func (sc *Scenario) drawNuisance(rng *rand.Rand) {
	sc.Concentration = logUniform(rng, 40, 400)
	sc.RotationSD = 4 + 16*rng.Float64()
	sc.GainSD = 0.01 + 0.07*rng.Float64()
	sc.PostureSD = 3 + 7*rng.Float64()
	sc.IntensitySD = 0.05 + 0.2*rng.Float64()
	sc.ShortShare = 0.1 * rng.Float64()
	sc.QuietSplit = rng.Float64() < 0.35
}

// maxGroupDraws is how many times drawGroups draws the groups' mixtures before it keeps the
// draw that came closest to its rule.
const maxGroupDraws = 5000

// drawGroups plants the groups over the scenario's states (the first nQuiet quiet, the rest
// active): their number and sizes, and what sets them apart (structure). recording is the
// number of windows in a typical recording, which sets how far apart groups must be drawn.
func (sc *Scenario) drawGroups(rng *rand.Rand, nQuiet int, structure Structure, recording int) {
	// Groups: 2…5 of unequal sizes (none below 8 %), mixtures drawn around a common base and
	// kept only when every two groups are apart by at least four times the spread of their
	// members. A participant's √shares stray from its group's by about 1/(2√c) per state, where
	// 1/c = 1/(c₀+1) + 2B/N adds to the Dirichlet spread (concentration c₀) the noise of a
	// recording of N windows made of bouts of mean length B (a renewal process, time-weighted);
	// two groups' √shares are √2·H apart (H the Hellinger distance), so H·2√2·√c ≥ 4, for the
	// family's recordings of N = 2,016 windows. Where draws keep failing, the groups are drawn
	// further apart.
	sizes := drawGroupSizes(rng, structure)
	qTotal, base := sc.drawBase(rng, nQuiet)
	if structure == Bouts || structure == OneGroup {
		sc.drawBoutGroups(rng, base, sizes)
		return
	}
	alpha := 10 + 15*rng.Float64()
	var bout float64 // time-weighted mean bout length
	for i, st := range sc.States {
		bout += base[i] * st.Bout
	}
	c := 1 / (1/(sc.Concentration+1) + 2*bout/float64(recording))
	var best []Group // the draw whose closest groups are farthest apart, should no draw pass
	bestH := -1.0
	for tries := 0; ; tries++ {
		groups := sc.drawMixtures(rng, base, sizes, alpha, nQuiet, qTotal)
		h := minHellinger(groups)
		if h*2*math.Sqrt2*math.Sqrt(c) >= 4 {
			sc.Groups = groups
			break
		}
		if h > bestH {
			best, bestH = groups, h
		}
		if tries == maxGroupDraws {
			// Few states cannot hold groups that far apart (a count-data scenario with three
			// waking states, say): the best draw is kept, and the groups are closer than the
			// rule asks.
			sc.Groups = best
			break
		}
		if tries%50 == 49 {
			alpha = math.Max(1, alpha*0.9)
		}
	}
}

// drawGroupSizes draws the groups' number (2–5; 2–3 for bout groups; 1 for a null cohort) and
// sizes (none below 8 %, but for the small group of SmallGroup, 5–10 %).
func drawGroupSizes(rng *rand.Rand, structure Structure) []float64 {
	nGroups := 2 + rng.IntN(4)
	switch structure {
	case Bouts:
		nGroups = 2 + rng.IntN(2)
	case OneGroup:
		nGroups = 1
	}
	var sizes []float64
	for {
		sizes = dirichlet(rng, repeat(1.0/float64(nGroups), nGroups), 4*float64(nGroups))
		if minOf(sizes) >= 0.08 {
			break
		}
	}
	if structure == SmallGroup {
		// One group of 5–10 % of the cohort; the others share the rest as drawn.
		small := 0.05 + 0.05*rng.Float64()
		rest := 1 - sizes[nGroups-1]
		for g := range sizes {
			sizes[g] *= (1 - small) / rest
		}
		sizes[nGroups-1] = small
	}
	return sizes
}

// drawBase draws the common base mixture around which the groups' are drawn: the quiet states'
// total share qTotal divided among the first nQuiet states, the rest among the active ones.
func (sc *Scenario) drawBase(rng *rand.Rand, nQuiet int) (qTotal float64, base []float64) {
	nStates := len(sc.States)
	nActive := nStates - nQuiet
	qTotal = 0.5 + 0.3*rng.Float64()
	base = make([]float64, nStates)
	qs := dirichlet(rng, repeat(1.0/float64(nQuiet), nQuiet), 5*float64(nQuiet))
	as := dirichlet(rng, repeat(1.0/float64(nActive), nActive), 3*float64(nActive))
	for i := range qs {
		base[i] = qTotal * qs[i]
	}
	for i := range as {
		base[nQuiet+i] = (1 - qTotal) * as[i]
	}
	return qTotal, base
}

// drawMixtures draws one candidate set of groups: each group's mixture from a Dirichlet around
// base of concentration alpha (with the quiet states' total kept at qTotal where the scenario
// splits only the quiet time), no share below 1 %, and each state's bout factor.
func (sc *Scenario) drawMixtures(rng *rand.Rand, base, sizes []float64, alpha float64, nQuiet int, qTotal float64) []Group {
	groups := make([]Group, len(sizes))
	for g := range groups {
		m := dirichlet(rng, base, alpha)
		if sc.QuietSplit {
			var q float64
			for i := 0; i < nQuiet; i++ {
				q += m[i]
			}
			for i := range m {
				if i < nQuiet {
					m[i] *= qTotal / q
				} else {
					m[i] *= (1 - qTotal) / (1 - q)
				}
			}
		}
		for i := range m {
			m[i] = math.Max(m[i], 0.01)
		}
		normalizeSum(m)
		bf := make([]float64, len(base))
		for i := range bf {
			bf[i] = math.Exp(0.2 * rng.NormFloat64())
		}
		groups[g] = Group{Share: sizes[g], Mixture: m, BoutFactor: bf}
	}
	return groups
}

// Describe is a line about the scenario, for tables of results.
func (sc Scenario) Describe() string {
	quiet := 0
	for _, s := range sc.States {
		if s.Quiet {
			quiet++
		}
	}
	split := ""
	if sc.QuietSplit {
		split = ", equal quiet time"
	}
	return fmt.Sprintf("%d states (%d quiet), %d groups, concentration %.0f, rotation %.0f°, gain %.2f%s",
		len(sc.States), quiet, len(sc.Groups), sc.Concentration, sc.RotationSD, sc.GainSD, split)
}

// person is what one participant brings: its group, mixture, device and habits.
type person struct {
	group     int
	choose    []float64 // probability of each state at a change of state (time share / bout)
	bout      []float64
	postures  [][3]float64
	intensity float64
	cadence   float64
	rotation  [3][3]float64
	gain      float64
	windows   int
	// axisGain and axisOffset are the device's per-axis calibration (Calibrated, and the
	// offsets of Parametric); zero when it has none.
	axisGain, axisOffset [3]float64
}

func (sc Scenario) person(rng *rand.Rand, p, windows int) person {
	// Group by the sizes, from a draw of its own so that the sizes hold on average.
	r := rng.Float64()
	g := len(sc.Groups) - 1
	var acc float64
	for i, gr := range sc.Groups {
		acc += gr.Share
		if r < acc {
			g = i
			break
		}
	}
	gr := sc.Groups[g]
	mix := dirichlet(rng, gr.Mixture, sc.Concentration)
	pe := person{group: g, choose: make([]float64, len(sc.States)), bout: make([]float64, len(sc.States)), windows: windows}
	for s, st := range sc.States {
		pe.bout[s] = math.Max(1, st.Bout*gr.BoutFactor[s]*math.Exp(0.15*rng.NormFloat64()))
		pe.choose[s] = math.Max(mix[s], 1e-6) / pe.bout[s] // time share = choice × bout (renewal)
		pe.postures = append(pe.postures, jitter(rng, st.Posture, sc.PostureSD))
	}
	normalizeSum(pe.choose)
	pe.intensity = math.Exp(sc.IntensitySD * rng.NormFloat64())
	pe.cadence = math.Exp(0.05 * rng.NormFloat64())
	var w [3]float64
	for i := range w {
		w[i] = sc.RotationSD * math.Pi / 180 * rng.NormFloat64()
	}
	pe.rotation = rotation(w)
	pe.gain = 1 + sc.GainSD*rng.NormFloat64()
	if rng.Float64() < sc.ShortShare {
		pe.windows = min(windows, 100+rng.IntN(501))
	}
	if sc.Physics == Calibrated || sc.Physics == Parametric {
		for i := range pe.axisOffset {
			pe.axisOffset[i] = sc.CalibOffsetSD * rng.NormFloat64()
			pe.axisGain[i] = 1 + sc.CalibGainSD*rng.NormFloat64()
		}
	}
	return pe
}

// generate invents the scenario's participants one at a time, handing each window to emit; the
// truth holds each participant's group and realized share of time in each state.
func (sc Scenario) generate(opts Options, emit func(id string, window int, feat []float64, state int) error) ([]Truth, error) {
	if sc.Physics == CountData {
		return sc.generateCounts(opts, emit)
	}
	truth := make([]Truth, opts.Participants)
	d := 24
	if opts.Features == 12 {
		d = 12
	}
	feat := make([]float64, 24)
	for p := 0; p < opts.Participants; p++ {
		rng := rand.New(rand.NewPCG(opts.Seed^sc.Seed<<32, uint64(opts.FirstID+p)))
		pe := sc.person(rng, p, opts.Windows)
		id := opts.IDPrefix + strconv.Itoa(opts.FirstID+p+1)
		shares := make([]float64, len(sc.States))
		state, left := 0, 0
		for wi := 0; wi < pe.windows; wi++ {
			if left == 0 {
				state = drawIndex(rng, pe.choose)
				left = 1 + int(rng.ExpFloat64()*(pe.bout[state]-1)+0.5)
			}
			left--
			if sc.Physics == Parametric {
				sc.paramWindow(rng, &pe, state, feat)
			} else {
				sc.window(rng, &pe, state, feat)
			}
			shares[state]++
			if err := emit(id, wi, feat[:d], state); err != nil {
				return nil, err
			}
		}
		for s := range shares {
			shares[s] /= float64(pe.windows)
		}
		truth[p] = Truth{ID: id, Group: pe.group, Shares: shares}
	}
	return truth, nil
}

// window fills feat with the 24 features of one window of state s, as the person's device
// records it: the signal is made in the wrist frame, then turned by the device's rotation and
// scaled by its gain.
func (sc Scenario) window(rng *rand.Rand, pe *person, s int, feat []float64) {
	st := sc.States[s]
	spread := 0.06
	if !st.Quiet {
		spread = 0.12
	}
	var g [3]float64
	for i := range g {
		g[i] = pe.postures[s][i] + spread*rng.NormFloat64()
	}
	g = unit(g)
	a := st.Intensity * pe.intensity * math.Exp(0.3*rng.NormFloat64())
	f := st.Cadence * pe.cadence * math.Exp(0.08*rng.NormFloat64())
	var u [3]float64
	for i := range u {
		u[i] = st.Direction[i] + 0.2*rng.NormFloat64()
	}
	u = unit(u)
	// Dynamic covariance in the wrist frame, a²(focus·uuᵀ + (1−focus)/3·I), plus the sensor's
	// noise floor, then in the device frame: R C Rᵀ.
	var c [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			c[i][j] = a * a * st.Focus * u[i] * u[j]
		}
		c[i][i] += a*a*(1-st.Focus)/3 + 0.003*0.003
	}
	R, G := pe.rotation, pe.gain
	gd := mulVec(R, g)
	cd := mulMat(mulMat(R, c), transpose(R))
	// The device's gain, and with a per-axis calibration its offset and gain on each axis: the
	// axis means read Gᵢ·m + oᵢ, the axis s.d.s Gᵢ times theirs, the magnitude |Gm + o|.
	m, scale, norm := [3]float64{G * gd[0], G * gd[1], G * gd[2]}, [3]float64{G, G, G}, G
	if sc.Physics == Calibrated {
		for i := range m {
			m[i] = pe.axisGain[i]*m[i] + pe.axisOffset[i]
			scale[i] = G * pe.axisGain[i]
		}
		norm = math.Sqrt(dot(m, m))
	}
	for i := 0; i < 3; i++ {
		feat[i] = m[i] + 0.01*rng.NormFloat64()                                       // mean_x, mean_y, mean_z
		feat[3+i] = scale[i] * math.Sqrt(cd[i][i]) * math.Exp(0.05*rng.NormFloat64()) // sd_x, sd_y, sd_z
	}
	along := math.Abs(dot(g, u)) // rotation moves g and u together: the magnitude does not see it
	vmMean := norm * (1 + 0.45*a*a + 0.003*rng.NormFloat64())
	vmSD := G * (0.003 + a*(0.5+0.5*along)) * math.Exp(0.08*rng.NormFloat64())
	vmPeak := vmMean + 2.8*vmSD*math.Exp(0.1*rng.NormFloat64())
	high := 1 / (1 + math.Exp(-3*(f-1.5))) // share of the power above about 1.5 Hz
	feat[6], feat[7], feat[8] = vmMean, vmSD, vmPeak
	feat[9] = math.Max(0.05, f+0.05*rng.NormFloat64())                                           // dom_freq
	feat[10] = G*G*a*a*(1-high)*math.Exp(0.15*rng.NormFloat64()) + 1e-5                          // power_low
	feat[11] = G*G*a*a*high*math.Exp(0.15*rng.NormFloat64()) + 1e-5                              // power_high
	feat[12] = vmMean - 1.28*vmSD + 0.003*rng.NormFloat64()                                      // vm_p10
	feat[13] = vmMean + 0.003*rng.NormFloat64()                                                  // vm_p50
	feat[14] = vmMean + 1.28*vmSD + 0.003*rng.NormFloat64()                                      // vm_p90
	feat[15] = 0.67 * vmSD * math.Exp(0.05*rng.NormFloat64())                                    // vm_mad
	feat[16] = clamp(cd[0][1]/math.Sqrt(cd[0][0]*cd[1][1])+0.05*rng.NormFloat64(), -1, 1)        // cor_xy
	feat[17] = clamp(cd[0][2]/math.Sqrt(cd[0][0]*cd[2][2])+0.05*rng.NormFloat64(), -1, 1)        // cor_xz
	feat[18] = clamp(cd[1][2]/math.Sqrt(cd[1][1]*cd[2][2])+0.05*rng.NormFloat64(), -1, 1)        // cor_yz
	feat[19] = G * a * f * 2.5 * math.Exp(0.1*rng.NormFloat64())                                 // jerk_mean
	feat[20] = 120 * f * math.Exp(0.1*rng.NormFloat64())                                         // zero_cross, per minute
	feat[21] = clamp(0.95-0.6*st.Rhythm*math.Min(1, a/0.05)+0.05*rng.NormFloat64(), 0.05, 1)     // spec_entropy
	feat[22] = math.Atan2(feat[2], math.Hypot(feat[0], feat[1]))*180/math.Pi + rng.NormFloat64() // tilt_deg
	feat[23] = math.Max(0, vmPeak-feat[12]+0.005*rng.NormFloat64())                              // vm_range
}

// Helpers of small geometry and sampling.

func randomUnit(rng *rand.Rand) [3]float64 {
	return unit([3]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()})
}

func unit(v [3]float64) [3]float64 {
	n := math.Sqrt(dot(v, v))
	return [3]float64{v[0] / n, v[1] / n, v[2] / n}
}

func dot(a, b [3]float64) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

func angle(a, b [3]float64) float64 { return math.Acos(clamp(dot(a, b), -1, 1)) * 180 / math.Pi }

// jitter turns v by a random small rotation of s.d. deg degrees per component.
func jitter(rng *rand.Rand, v [3]float64, deg float64) [3]float64 {
	var w [3]float64
	for i := range w {
		w[i] = deg * math.Pi / 180 * rng.NormFloat64()
	}
	return mulVec(rotation(w), v)
}

// rotation is the rotation matrix of the rotation vector w (axis w/|w|, angle |w|), by
// Rodrigues' formula.
func rotation(w [3]float64) [3][3]float64 {
	th := math.Sqrt(dot(w, w))
	R := [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}
	if th == 0 {
		return R
	}
	k := [3]float64{w[0] / th, w[1] / th, w[2] / th}
	K := [3][3]float64{{0, -k[2], k[1]}, {k[2], 0, -k[0]}, {-k[1], k[0], 0}}
	KK := mulMat(K, K)
	s, c := math.Sin(th), 1-math.Cos(th)
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			R[i][j] += s*K[i][j] + c*KK[i][j]
		}
	}
	return R
}

func mulVec(m [3][3]float64, v [3]float64) [3]float64 {
	return [3]float64{dot(m[0], v), dot(m[1], v), dot(m[2], v)}
}

func mulMat(a, b [3][3]float64) [3][3]float64 {
	var out [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			for k := 0; k < 3; k++ {
				out[i][j] += a[i][k] * b[k][j]
			}
		}
	}
	return out
}

func transpose(m [3][3]float64) [3][3]float64 {
	var out [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			out[i][j] = m[j][i]
		}
	}
	return out
}

func clamp(x, lo, hi float64) float64 { return math.Min(hi, math.Max(lo, x)) }

func logUniform(rng *rand.Rand, lo, hi float64) float64 {
	return lo * math.Exp(rng.Float64()*math.Log(hi/lo))
}

func repeat(v float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

func minOf(xs []float64) float64 {
	m := math.Inf(1)
	for _, x := range xs {
		m = math.Min(m, x)
	}
	return m
}

func normalizeSum(xs []float64) {
	var s float64
	for _, x := range xs {
		s += x
	}
	for i := range xs {
		xs[i] /= s
	}
}

func drawIndex(rng *rand.Rand, p []float64) int {
	r := rng.Float64()
	var acc float64
	for i, v := range p {
		acc += v
		if r < acc {
			return i
		}
	}
	return len(p) - 1
}

// minHellinger is the smallest Hellinger distance between two groups' mixtures.
func minHellinger(groups []Group) float64 {
	m := math.Inf(1)
	for a := range groups {
		for b := a + 1; b < len(groups); b++ {
			var s float64
			for i := range groups[a].Mixture {
				d := math.Sqrt(groups[a].Mixture[i]) - math.Sqrt(groups[b].Mixture[i])
				s += d * d
			}
			m = math.Min(m, math.Sqrt(s/2))
		}
	}
	return m
}

func sortByIntensity(s []State) {
	for i := 1; i < len(s); i++ {
		for j := i; j > 0 && s[j].Intensity < s[j-1].Intensity; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
}
