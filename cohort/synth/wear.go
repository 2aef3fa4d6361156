package synth

import (
	"bufio"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"time"
)

// The wear scenario (invented, synthetic): a week-long wrist study of activity counts a minute,
// as a real recording comes: nights of sleep with small movements, the device taken off for
// hours on some days and, for some participants, for a whole day and night; devices that rest
// at a few counts instead of 0 while worn; gaps where rows are missing; and times with their UTC
// offset in Europe/Berlin across the end of daylight saving time (Sunday 25 October 2026, a day
// of 25 hours). Three planted groups differ in how their waking time divides among sedentary,
// light and moderate-to-vigorous activity; the non-wear, the floors and the gaps are nuisance
// that the groups must not follow.

// WearOptions sets up a wear cohort. Zero values take the documented defaults.
type WearOptions struct {
	Participants int     // 0 means 90
	Days         int     // days recorded from Tuesday 20 October 2026; 0 means 8
	Seed         uint64  // fixes everything
	DayOff       float64 // share of participants with a whole day and night off the wrist (24–30 hours)
}

// WearTruth is what was planted for one participant: its group, whether its device rests above
// 0, and which of its written windows (in the order written) fell when the device was off.
type WearTruth struct {
	ID      string
	Group   int
	Floor   bool
	NonWear []bool
}

// wearGroups are the planted groups' mean shares of waking time: sedentary, light, MVPA.
var wearGroups = [3][3]float64{{0.50, 0.30, 0.20}, {0.40, 0.55, 0.05}, {0.80, 0.17, 0.03}}

// WriteWear writes the wear cohort as CSV (participant, window as ISO-8601 with offset, counts,
// log_counts) to path, and returns the truth.
func WriteWear(path string, o WearOptions) ([]WearTruth, error) {
	if o.Participants == 0 {
		o.Participants = 90
	}
	if o.Days == 0 {
		o.Days = 8
	}
	loc, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		return nil, fmt.Errorf("synth: the wear scenario's zone: %w", err)
	}
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, "participant,window,counts,log_counts")
	rng := rand.New(rand.NewPCG(o.Seed, 0x5eed))
	start := time.Date(2026, 10, 20, 0, 0, 0, 0, loc)
	end := time.Date(2026, 10, 20+o.Days, 0, 0, 0, 0, loc)
	minutes := int(end.Sub(start) / time.Minute)
	truth := make([]WearTruth, o.Participants)
	for p := range truth {
		tr := &truth[p]
		tr.ID, tr.Group, tr.Floor = fmt.Sprintf("W%03d", p+1), p%3, rng.Float64() < 0.3
		wr := drawWearer(rng, tr)
		counts, off := wr.counts(rng, start, minutes)
		wearOff(rng, counts, off, o)
		// A gap: for one participant in ten, three hours of rows lost.
		gap := -1
		if rng.Float64() < 0.1 {
			gap = (1+rng.IntN(o.Days-2))*1440 + 14*60
		}
		for m := 0; m < minutes; m++ {
			if gap >= 0 && m >= gap && m < gap+180 {
				continue
			}
			at := start.Add(time.Duration(m) * time.Minute)
			fmt.Fprintf(w, "%s,%s,%g,%.4f\n", tr.ID, at.Format(time.RFC3339), counts[m], math.Log1p(counts[m]))
			tr.NonWear = append(tr.NonWear, off[m])
		}
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return nil, err
	}
	return truth, f.Close()
}

// wearMeanBout is the wear scenario's mean bout of each waking state, in minutes.
var wearMeanBout = [3]float64{25, 8, 5}

// wearer is one participant of the wear scenario: the chance that a bout of each state starts,
// the device's resting floor and gain, and the times of going to bed and waking (minutes of the
// day).
type wearer struct {
	startP                 [3]float64
	total                  float64
	floor, gain, bed, wake float64
}

func drawWearer(rng *rand.Rand, tr *WearTruth) wearer {
	var share [3]float64
	var sum float64
	for s := range share { // around the group's shares (a Dirichlet of concentration 150)
		share[s] = gammaDraw(rng, 150*wearGroups[tr.Group][s])
		sum += share[s]
	}
	// Bouts of state s start with chance ∝ share/meanBout, so that time divides as share.
	var wr wearer
	for s := range share {
		wr.startP[s] = share[s] / sum / wearMeanBout[s]
		wr.total += wr.startP[s]
	}
	if tr.Floor {
		wr.floor = 3 + 3*rng.Float64()
	}
	wr.gain = math.Exp(0.1 * rng.NormFloat64())
	wr.bed, wr.wake = 23*60+30*rng.NormFloat64(), 7*60+30*rng.NormFloat64()
	return wr
}

// counts are the wearer's counts minute by minute, and where the device was off (none yet).
func (wr wearer) counts(rng *rand.Rand, start time.Time, minutes int) ([]float64, []bool) {
	counts := make([]float64, minutes)
	off := make([]bool, minutes)
	state, left := 0, 0
	for m := 0; m < minutes; m++ {
		at := start.Add(time.Duration(m) * time.Minute)
		tod := float64(at.Hour()*60 + at.Minute())
		if tod >= wr.bed || tod < wr.wake { // asleep: a small movement now and then
			if rng.Float64() < 0.08 {
				counts[m] = math.Round(5 + 50*rng.Float64())
			} else {
				counts[m] = math.Round(wr.floor * rng.Float64() * 2)
			}
			left = 0
			continue
		}
		if left == 0 {
			u := rng.Float64() * wr.total
			for state = 0; state < 2 && u > wr.startP[state]; state++ {
				u -= wr.startP[state]
			}
			left = 1 + int(rng.ExpFloat64()*(wearMeanBout[state]-1)+0.5)
		}
		left--
		var c float64
		switch state {
		case 0:
			c = wr.floor*rng.Float64()*2 + math.Exp(2+1.2*rng.NormFloat64())
			if rng.Float64() < 0.3 {
				c = wr.floor * rng.Float64() * 2
			}
		case 1:
			c = math.Exp(math.Log(600) + 0.5*rng.NormFloat64())
		default:
			c = math.Exp(math.Log(3500) + 0.35*rng.NormFloat64())
		}
		counts[m] = math.Round(c * wr.gain)
	}
	return counts, off
}

// wearOff takes the device off: on a day, 1 to 5 hours from late morning (a shower, a swim);
// and for some participants a whole day and night. Off the wrist it reads 0 whatever its floor.
func wearOff(rng *rand.Rand, counts []float64, off []bool, o WearOptions) {
	minutes := len(counts)
	for day := 0; day < o.Days; day++ {
		if rng.Float64() < 0.2 {
			m0 := day*1440 + 9*60 + rng.IntN(8*60)
			end := min(minutes, m0+60+rng.IntN(4*60))
			for m := m0; m < end; m++ {
				counts[m], off[m] = 0, true
			}
		}
	}
	if rng.Float64() < o.DayOff {
		m0 := (1+rng.IntN(o.Days-3))*1440 + 8*60
		end := min(minutes, m0+24*60+rng.IntN(6*60))
		for m := m0; m < end; m++ {
			counts[m], off[m] = 0, true
		}
	}
}

// WriteLarksOwls writes a planted cohort (invented, synthetic) of two groups that spend the same
// share of their waking time in each of three states (still, light, brisk) and differ only in
// when: the larks are most active in the morning and the owls in the evening. Windows are 15
// minutes over 7 days from Monday 4 May 2026, with times carrying a UTC offset (+01:00); everyone
// sleeps 00–06. It returns each participant's group (0 larks, 1 owls), in the order written.
func WriteLarksOwls(path string, n int, seed uint64) ([]int, error) {
	rng := rand.New(rand.NewPCG(seed, 7))
	level := [3][2]float64{{0.002, 0.003}, {0.05, 0.04}, {0.3, 0.2}} // vm mean, vm sd of each state
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "participant,window,vm_mean,vm_sd")
	truth := make([]int, n)
	zone := time.FixedZone("", 3600)
	for p := 0; p < n; p++ {
		group := p % 2
		truth[p] = group
		t0 := time.Date(2026, 5, 4, 0, 0, 0, 0, zone)
		for i := 0; i < 7*96; i++ {
			at := t0.Add(time.Duration(i) * 15 * time.Minute)
			h := at.Hour()
			brisk := 0.3 // the chance of brisk movement: both alike in the afternoon
			switch {
			case h >= 6 && h < 12:
				brisk = []float64{0.6, 0.1}[group]
			case h >= 18:
				brisk = []float64{0.1, 0.6}[group]
			}
			state := 1
			if h < 6 {
				state = 0
			} else if rng.Float64() < brisk {
				state = 2
			}
			m, s := level[state][0]*math.Exp(0.2*rng.NormFloat64()), level[state][1]*math.Exp(0.2*rng.NormFloat64())
			fmt.Fprintf(w, "L%03d,%s,%.5f,%.5f\n", p, at.Format(time.RFC3339), m, s)
		}
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return nil, err
	}
	return truth, f.Close()
}
