package synth

import (
	"bufio"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"time"
)

// The raw scenario (invented, synthetic): a wrist device sampling x, y, z in g. Each participant
// moves through still postures (the wrist resting at an angle drawn anew for each bout), light
// movement, walking (about 1.9 Hz) and brisk movement (about 2.6 Hz), in bouts of a few minutes; two
// planted groups differ in how their time divides among them. Each device reads through its own
// calibration error (per-axis offsets of up to about 0.05 g and gains of 0.96–1.04), and a third
// of the devices lie on a table for 90 minutes to 2 hours (not worn: still, a fixed angle, noise
// of 1 mg).

// RawOptions sets up a raw cohort. Zero values take the documented defaults.
type RawOptions struct {
	Participants int     // 0 means 12
	Hours        float64 // hours recorded each; 0 means 4
	Rate         float64 // samples a second; 0 means 20
	Seed         uint64
}

// RawTruth is what was planted for one participant.
type RawTruth struct {
	ID             string
	Group          int
	Gain, Offset   [3]float64 // raw = (true − Offset) / Gain
	OffFrom, OffTo time.Time  // the device off the wrist (zero times: never)
}

// rawGroups are the planted groups' shares of time: still, light, walking, brisk.
var rawGroups = [2][4]float64{{0.55, 0.25, 0.15, 0.05}, {0.25, 0.30, 0.30, 0.15}}

// WriteRaw writes one CSV per participant (time, x, y, z) into dir and returns the truth; the
// times are ISO-8601 with a UTC offset, from 08:00 on Monday 2 March 2026.
func WriteRaw(dir string, o RawOptions) ([]RawTruth, error) {
	if o.Participants == 0 {
		o.Participants = 12
	}
	if o.Hours == 0 {
		o.Hours = 4
	}
	if o.Rate == 0 {
		o.Rate = 20
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0xacce1))
	zone := time.FixedZone("", 3600)
	start := time.Date(2026, 3, 2, 8, 0, 0, 0, zone)
	n := int(o.Hours * 3600 * o.Rate)
	step := time.Duration(float64(time.Second) / o.Rate)
	truth := make([]RawTruth, o.Participants)
	for p := range truth {
		tr := &truth[p]
		tr.ID, tr.Group = fmt.Sprintf("R%02d", p+1), p%2
		for a := 0; a < 3; a++ {
			tr.Gain[a], tr.Offset[a] = 1+0.04*(2*rng.Float64()-1), 0.05*(2*rng.Float64()-1)
		}
		off0, off1 := -1, -1
		if p%3 == 0 && n > int(3*3600*o.Rate) {
			off0 = int(float64(n) * (0.2 + 0.3*rng.Float64()))
			off1 = off0 + int((90+30*rng.Float64())*60*o.Rate)
			tr.OffFrom, tr.OffTo = start.Add(time.Duration(off0)*step), start.Add(time.Duration(off1)*step)
		}
		if err := writeRawParticipant(filepath.Join(dir, tr.ID+".csv"), rng, tr, o.Rate, n, off0, off1, start, step); err != nil {
			return nil, err
		}
	}
	return truth, nil
}

// writeRawParticipant writes one participant's n samples: bouts of about 2.5 minutes of the
// group's states, each in a posture of its own with a swing of the state's frequency and
// amplitude, and the device on a table from sample off0 to off1.
func writeRawParticipant(path string, rng *rand.Rand, tr *RawTruth, rate float64, n, off0, off1 int, start time.Time, step time.Duration) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, "time,x,y,z")
	var state, left int
	var posture [3]float64
	phase, freq, amp := 0.0, 0.0, 0.0
	tableAngle := randomUnit(rng)
	for i := 0; i < n; i++ {
		if left == 0 {
			u, cum := rng.Float64(), 0.0
			for state = 0; state < 3; state++ {
				if cum += rawGroups[tr.Group][state]; u < cum {
					break
				}
			}
			left = int((0.5 + 2*rng.ExpFloat64()) * 60 * rate) // bouts of about 2.5 minutes
			posture = randomUnit(rng)
			freq = [4]float64{0, 0.5, 1.9, 2.6}[state] * (1 + 0.05*rng.NormFloat64())
			amp = [4]float64{0, 0.06, 0.25, 0.6}[state]
		}
		left--
		var g [3]float64
		switch {
		case i >= off0 && i < off1: // on a table
			for a := range g {
				g[a] = tableAngle[a] + 0.001*rng.NormFloat64()
			}
		default:
			phase += 2 * math.Pi * freq / rate
			wave := amp * math.Sin(phase)
			wobble := 0.02 * amp * rng.NormFloat64()
			for a := range g {
				g[a] = posture[a]*(1+wave) + wobble + 0.003*rng.NormFloat64()
			}
			if state == 1 { // light movement: small random arm motion
				for a := range g {
					g[a] += 0.03 * rng.NormFloat64()
				}
			}
		}
		var raw [3]float64
		for a := range raw {
			raw[a] = (g[a] - tr.Offset[a]) / tr.Gain[a]
		}
		at := start.Add(time.Duration(i) * step)
		fmt.Fprintf(w, "%s,%.4f,%.4f,%.4f\n", at.Format("2006-01-02T15:04:05.000Z07:00"), raw[0], raw[1], raw[2])
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
