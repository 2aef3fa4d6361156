package synth

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"strconv"
)

// Family names a family of invented cohorts by how the windows' features are made (the physics)
// and by what sets the planted groups apart (the structure). Methods are chosen on several
// families, so that a rule that wins on one kind of data only shows as such.
type Family string

// The families. The first four differ in physics and plant groups that differ in their
// mixtures of states; the last three take their physics from the seed (wrist, calib, param and
// counts in turn) and change the structure.
const (
	Wrist  Family = "wrist"  // features computed from a simulated wrist signal; devices turned, with gains (DrawScenario)
	Calib  Family = "calib"  // as wrist, with per-axis calibration offsets and gains beside the turn
	Param  Family = "param"  // features drawn from parametric laws per state; offsets on the axis means, gains, cadence
	Counts Family = "counts" // 1–4 features of per-minute activity counts over days and nights, zeros, resting floors, non-wear
	Bouty  Family = "bouts"  // groups with one mixture that differ only in how long their bouts last
	Small  Family = "small"  // one planted group of 5–10 % of the cohort
	Null   Family = "null"   // no groups: every participant drawn around one mixture
)

// Families lists every family, in the order tables show them.
var Families = []Family{Wrist, Calib, Param, Counts, Bouty, Small, Null}

// ParseFamily reads a family name.
func ParseFamily(s string) (Family, error) {
	for _, f := range Families {
		if string(f) == s {
			return f, nil
		}
	}
	return "", fmt.Errorf("synth: no family %q; use one of %v", s, Families)
}

// Physics is how a scenario makes its windows' features.
type Physics int

const (
	WristSignal Physics = iota // computed from a simulated wrist signal (Scenario.window)
	Calibrated                 // the same, through per-axis calibration offsets and gains
	Parametric                 // drawn from a correlated log-normal law per state
	CountData                  // per-minute activity counts, with nights, resting floors and non-wear
)

// Structure is what sets a scenario's planted groups apart.
type Structure int

const (
	Mixtures   Structure = iota // the groups' mixtures of states differ
	Bouts                       // one mixture; the groups' bouts differ in length
	SmallGroup                  // mixtures differ, and one group holds 5–10 % of the cohort
	OneGroup                    // no groups
)

// CountDesign is what a count-data scenario adds to its states: the night's state, the
// features written, and how devices and wear vary.
type CountDesign struct {
	Days       int      // days recorded
	Features   []string // the columns written: count, then optionally its log, 10-minute mean and s.d.
	Sleep      State    // the state of the night
	FloorShare float64  // share of devices that rest at a floor of a few counts instead of 0
	NonWear    float64  // chance that a day holds a run of non-wear (exact zeros) of 1–6 hours
}

// countLaw is how a state's per-minute counts are drawn: 0 with probability Zero, otherwise
// log-normal around Level with log-s.d. Spread.
type countLaw struct{ Zero, Level, Spread float64 }

// paramLaw is a state's parametric law over the 21 features other than the axis means and the
// tilt: means and s.d.s on each feature's working scale, and the Cholesky factor of their
// correlations.
type paramLaw struct {
	Mean, SD []float64
	Chol     [][]float64
}

// DrawFamily draws the member of a family that seed names. Wrist is DrawScenario.
func DrawFamily(f Family, seed uint64) (Scenario, error) {
	if f == Wrist || f == "" {
		return DrawScenario(seed), nil
	}
	if _, err := ParseFamily(string(f)); err != nil {
		return Scenario{}, err
	}
	h := fnv.New64a()
	h.Write([]byte(f))
	rng := rand.New(rand.NewPCG(seed, h.Sum64()))
	sc := Scenario{Seed: seed, Family: f}
	structure := Mixtures
	switch f {
	case Calib:
		sc.Physics = Calibrated
	case Param:
		sc.Physics = Parametric
	case Counts:
		sc.Physics = CountData
	default:
		sc.Physics = Physics(seed % 4)
		structure = map[Family]Structure{Bouty: Bouts, Small: SmallGroup, Null: OneGroup}[f]
	}
	var nQuiet, recording int
	if sc.Physics == CountData {
		nQuiet = sc.drawCountStates(rng)
		recording = sc.Count.Days * 960 // waking minutes
	} else {
		nQuiet = sc.drawWristStates(rng)
		recording = 2016
	}
	sc.drawNuisance(rng)
	switch sc.Physics {
	case Calibrated:
		sc.CalibOffsetSD = logUniform(rng, 0.02, 0.3)
		sc.CalibGainSD = 0.02 + 0.06*rng.Float64()
	case Parametric:
		sc.CalibOffsetSD = logUniform(rng, 0.05, 0.3)
		sc.GainSD = 0.05 + 0.05*rng.Float64()
		sc.drawParamLaws(rng)
	}
	sc.drawGroups(rng, nQuiet, structure, recording)
	return sc, nil
}

// drawBoutGroups plants groups that share one mixture (base): with one group, every
// participant is drawn around it; with more, each group's bouts are a factor λ longer than the
// group before (λ from 1.6 to 2.5), so that the groups spend their time alike and break it up
// differently.
func (sc *Scenario) drawBoutGroups(rng *rand.Rand, base []float64, sizes []float64) {
	lambda := 1.6 + 0.9*rng.Float64()
	n := len(sizes)
	for g := range sizes {
		bf := make([]float64, len(base))
		f := math.Pow(lambda, float64(g)-float64(n-1)/2)
		for i := range bf {
			bf[i] = f
		}
		sc.Groups = append(sc.Groups, Group{Share: sizes[g], Mixture: append([]float64(nil), base...), BoutFactor: bf})
	}
}

// drawCountStates draws the waking states of a count-data scenario (1–2 sedentary, 2–3 active,
// from light to vigorous) and its night, and returns the number of sedentary states.
func (sc *Scenario) drawCountStates(rng *rand.Rand) int {
	nQuiet := 1 + rng.IntN(2)
	nActive := 2 + rng.IntN(2)
	boutScale := math.Exp(rng.NormFloat64() * 0.3)
	for q := 0; q < nQuiet; q++ {
		lo, hi := 3.0, 30.0
		if q == 1 {
			lo, hi = 40, 120
		}
		sc.States = append(sc.States, State{Name: "sedentary-" + strconv.Itoa(q+1), Quiet: true, Bout: boutScale * logUniform(rng, 12, 60),
			law: countLaw{Zero: 0.6 - 0.35*float64(q) + 0.1*rng.Float64(), Level: logUniform(rng, lo, hi), Spread: 0.6 + 0.3*rng.Float64()}})
	}
	levels := [][2]float64{{200, 600}, {1200, 2800}, {3500, 7000}}
	if nActive == 2 {
		levels = [][2]float64{{200, 900}, {2000, 6000}}
	}
	for a := 0; a < nActive; a++ {
		sc.States = append(sc.States, State{Name: "active-" + strconv.Itoa(a+1), Bout: boutScale * logUniform(rng, 2, 10),
			law: countLaw{Zero: 0.02 + 0.06*rng.Float64(), Level: logUniform(rng, levels[a][0], levels[a][1]), Spread: 0.4 + 0.3*rng.Float64()}})
	}
	names := []string{"count", "count_log", "count_mean10", "count_sd10"}
	sc.Count = &CountDesign{Days: 3, Features: names[:1+rng.IntN(4)], FloorShare: 0.15 + 0.25*rng.Float64(), NonWear: 0.1 + 0.15*rng.Float64(),
		Sleep: State{Name: "sleep", Quiet: true, Bout: 60, law: countLaw{Zero: 0.85 + 0.1*rng.Float64(), Level: logUniform(rng, 5, 20), Spread: 0.8}}}
	return nQuiet
}

// paramKinds says how each of the 24 features is drawn in a parametric scenario: 'a' the axis
// means and 't' the tilt (from the posture, as in the wrist family); 'g' an amplitude (log-normal,
// times the device's gain), 'p' a power (times the gain squared), 'v' a vector magnitude around
// 1 g (normal, times the gain), 'f' a frequency (log-normal, times the person's cadence), 'r' a
// correlation (normal on Fisher's z), 'e' a share in (0, 1) (normal on the logit).
const paramKinds = "aaagggvggfppvvvgrrrgfetg"

// drawParamLaws draws each state's law over the features other than the axis means and tilt,
// from its intensity and cadence, each mean strayed at random, with correlations from two
// random factors.
func (sc *Scenario) drawParamLaws(rng *rand.Rand) {
	for s := range sc.States {
		st := &sc.States[s]
		law := paramLaw{}
		for _, k := range paramKinds {
			if k == 'a' || k == 't' {
				continue
			}
			var m, sd float64
			switch k {
			case 'g':
				m, sd = math.Log(st.Intensity*(0.5+rng.Float64())), 0.15+0.25*rng.Float64()
			case 'p':
				m, sd = math.Log(st.Intensity*st.Intensity*(0.3+rng.Float64())+1e-5), 0.2+0.3*rng.Float64()
			case 'v':
				m, sd = 1+0.45*st.Intensity*st.Intensity*(0.5+rng.Float64()), 0.003+0.02*st.Intensity
			case 'f':
				m, sd = math.Log(st.Cadence*(0.8+0.4*rng.Float64())), 0.05+0.15*rng.Float64()
			case 'r':
				m, sd = math.Atanh(0.8*(2*rng.Float64()-1)), 0.1+0.2*rng.Float64()
			case 'e':
				p := clamp(0.95-0.6*st.Rhythm*math.Min(1, st.Intensity/0.05), 0.1, 0.97)
				m, sd = math.Log(p/(1-p)), 0.2+0.3*rng.Float64()
			}
			if k == 'g' || k == 'p' || k == 'f' {
				m += 0.25 * rng.NormFloat64()
			}
			law.Mean, law.SD = append(law.Mean, m), append(law.SD, sd)
		}
		d := len(law.Mean)
		w := make([][2]float64, d)
		for j := range w {
			w[j] = [2]float64{0.8 * rng.NormFloat64(), 0.8 * rng.NormFloat64()}
		}
		corr := make([][]float64, d)
		for i := range corr {
			corr[i] = make([]float64, d)
			for j := range corr[i] {
				corr[i][j] = w[i][0]*w[j][0] + w[i][1]*w[j][1]
				if i == j {
					corr[i][j]++
				}
			}
		}
		for i := range corr {
			for j := range corr {
				if i != j {
					corr[i][j] /= math.Sqrt(corr[i][i] * corr[j][j])
				}
			}
		}
		for i := range corr {
			corr[i][i] = 1
		}
		law.Chol = cholesky(corr)
		st.param = &law
	}
}

// cholesky is the lower factor L of a positive definite matrix a = L Lᵀ.
func cholesky(a [][]float64) [][]float64 {
	n := len(a)
	l := make([][]float64, n)
	for i := range l {
		l[i] = make([]float64, n)
		for j := 0; j <= i; j++ {
			s := a[i][j]
			for k := 0; k < j; k++ {
				s -= l[i][k] * l[j][k]
			}
			if i == j {
				l[i][i] = math.Sqrt(math.Max(s, 1e-12))
			} else {
				l[i][j] = s / l[j][j]
			}
		}
	}
	return l
}

// paramWindow fills feat with one window of state s of a parametric scenario: the axis means
// from the person's posture, through the device's gain and additive offsets; the rest drawn
// from the state's law, amplitudes times the device's gain and frequencies times the person's
// cadence; the tilt from the axis means.
func (sc Scenario) paramWindow(rng *rand.Rand, pe *person, s int, feat []float64) {
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
	for i := 0; i < 3; i++ {
		feat[i] = pe.gain*g[i] + pe.axisOffset[i] + 0.01*rng.NormFloat64()
	}
	law := st.param
	d := len(law.Mean)
	eps := make([]float64, d)
	for i := range eps {
		eps[i] = rng.NormFloat64()
	}
	z := 0
	for j, k := range paramKinds {
		if k == 'a' || k == 't' {
			continue
		}
		v := 0.0
		for i := 0; i <= z; i++ {
			v += law.Chol[z][i] * eps[i]
		}
		v = law.Mean[z] + law.SD[z]*v
		switch k {
		case 'g':
			v = math.Exp(v) * pe.gain * pe.intensity
		case 'p':
			v = math.Exp(v) * pe.gain * pe.gain * pe.intensity * pe.intensity
		case 'v':
			v *= pe.gain
		case 'f':
			v = math.Exp(v) * pe.cadence
			if j == 20 {
				v *= 120 // zero crossings per minute
			}
		case 'r':
			v = math.Tanh(v)
		case 'e':
			v = 1 / (1 + math.Exp(-v))
		}
		feat[j] = v
		z++
	}
	feat[22] = math.Atan2(feat[2], math.Hypot(feat[0], feat[1]))*180/math.Pi + rng.NormFloat64()
}

// generateCounts invents a count-data scenario's participants: each day a night in the sleep
// state from about 23:00 to 07:00 (bed and wake times of the person's own, moving a little from
// day to day), the waking hours in bouts of the person's waking states, a run of non-wear on some
// days (exact zeros for 1–6 hours), and the counts through the device: times its gain, and on a
// device with a resting floor a few counts added to every minute worn.
func (sc Scenario) generateCounts(opts Options, emit func(id string, window int, feat []float64, state int) error) ([]Truth, error) {
	cd := sc.Count
	truth := make([]Truth, opts.Participants)
	k := len(sc.States)
	minutes := cd.Days * 1440
	feat := make([]float64, len(cd.Features))
	count := make([]float64, minutes)
	states := make([]int, minutes)
	for p := 0; p < opts.Participants; p++ {
		rng := rand.New(rand.NewPCG(opts.Seed^sc.Seed<<32, uint64(opts.FirstID+p)))
		pe := sc.person(rng, p, minutes)
		id := opts.IDPrefix + strconv.Itoa(opts.FirstID+p+1)
		floor := 0.0
		if rng.Float64() < cd.FloorShare {
			floor = 2 + 6*rng.Float64()
		}
		gain := math.Exp(0.1 * rng.NormFloat64())
		bed, wake := 23*60+40*rng.NormFloat64(), 7*60+40*rng.NormFloat64()
		days := cd.Days
		if pe.windows < minutes {
			days = 1 + rng.IntN(cd.Days-1)
		}
		n := days * 1440
		state, left := 0, 0
		for m := 0; m < n; m++ {
			day, tod := m/1440, float64(m%1440)
			b := bed + 20*math.Sin(float64(day)*1.7)
			w := wake + 20*math.Cos(float64(day)*2.3)
			if tod >= b || tod < w {
				states[m], left = k, 0 // asleep: the next waking minute starts a bout
				continue
			}
			if left == 0 {
				state = drawIndex(rng, pe.choose)
				left = 1 + int(rng.ExpFloat64()*(pe.bout[state]-1)+0.5)
			}
			left--
			states[m] = state
		}
		for m := 0; m < n; m++ {
			law := sc.Count.Sleep.law
			if states[m] < k {
				law = sc.States[states[m]].law
			}
			c := 0.0
			if rng.Float64() >= law.Zero {
				c = math.Round(law.Level * pe.intensity * math.Exp(law.Spread*rng.NormFloat64()))
			}
			c = math.Round(c*gain + floor*rng.Float64()*2)
			count[m] = c
		}
		for day := 0; day < days; day++ {
			if rng.Float64() < cd.NonWear {
				start := day*1440 + 8*60 + rng.IntN(10*60)
				for m := start; m < min(n, start+60+rng.IntN(5*60)); m++ {
					count[m] = 0
				}
			}
		}
		shares := make([]float64, k+1)
		for m := 0; m < n; m++ {
			shares[states[m]] += 1 / float64(n)
			countFeatures(feat, count[:n], m)
			if err := emit(id, m, feat, states[m]); err != nil {
				return nil, err
			}
		}
		truth[p] = Truth{ID: id, Group: pe.group, Shares: shares}
	}
	return truth, nil
}

// countFeatures fills feat with the count of minute m and, as far as feat reaches, its log
// (ln(1 + count)) and the mean and s.d. of the counts in the 10 minutes centred on it.
func countFeatures(feat, count []float64, m int) {
	feat[0] = count[m]
	if len(feat) > 1 {
		feat[1] = math.Log1p(count[m])
	}
	if len(feat) > 2 {
		lo, hi := max(0, m-5), min(len(count), m+5)
		var s, s2 float64
		for _, c := range count[lo:hi] {
			s += c
			s2 += c * c
		}
		n := float64(hi - lo)
		feat[2] = s / n
		if len(feat) > 3 {
			feat[3] = math.Sqrt(math.Max(0, s2/n-feat[2]*feat[2]))
		}
	}
}
