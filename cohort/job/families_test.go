package job

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/group"
	"github.com/cohortmix/cohortmix/cohort/synth"
	"github.com/cohortmix/cohortmix/profile"
)

// The families study: members of every scenario family, with the movement states fitted at
// each number of states from several random starts, dumped for choosing the grouping model and
// the rule for the number of states away from the job (a developer's aid).
var familiesSet = flag.String("families", "", "dump the families study: family:first-last[,family:first-last…]")
var familiesDump = flag.String("families.dump", "", "folder to dump the families study to")
var familiesFits = flag.Int("families.fits", 3, "fits from different random starts at each number of states")
var familiesDumpStates = flag.String("families.dumpstates", "2-12", "numbers of states the dump fits, as first-last")
var familiesNoCal = flag.Bool("families.nocal", false, "fit the states without calibrating the devices")

type familyFit struct {
	S, Fit        int
	Counts        [][]int   // per unit, windows in each state
	Trans         [][]int   // per unit, S×S transitions between consecutive windows (row-major)
	SampleCounts  [][]int   // per sampled unit, its sampled windows in each state
	WindowARI     float64   // states against the planted states over all windows
	Seconds       float64   // time to fit
	Centroids     []float64 // the states' centres
	AssignSeconds float64
}

type familyDump struct {
	Family       string
	Seed         uint64
	TrueGroups   int
	TrueStates   int
	Want         []int // planted group of each unit, in the table's order
	Windows      []int
	Sampled      []int // the sampled units, by index in the table
	DefaultsARI  float64
	DefaultsK    int
	DefaultsS    int
	DefaultsSecs float64
	Fits         []familyFit
}

// familyMember is one member of a family.
type familyMember struct {
	family synth.Family
	seed   uint64
}

// familyMembers reads "family:first-last[,…]", or "family:seed" for one member.
func familyMembers(t *testing.T, spec string) []familyMember {
	var out []familyMember
	for _, part := range strings.Split(spec, ",") {
		var name string
		var lo, hi uint64
		span := part
		if _, one, ok := strings.Cut(part, ":"); ok && !strings.Contains(one, "-") {
			span += "-" + one
		}
		if _, err := fmt.Sscanf(strings.Replace(span, ":", " ", 1), "%s %d-%d", &name, &lo, &hi); err != nil {
			t.Fatalf("%s: %v; write family:first-last, as counts:1-8, or family:seed", part, err)
		}
		fam, err := synth.ParseFamily(name)
		if err != nil {
			t.Fatal(err)
		}
		for seed := lo; seed <= hi; seed++ {
			out = append(out, familyMember{fam, seed})
		}
	}
	return out
}

func TestFamiliesDump(t *testing.T) {
	t.Parallel()
	if *familiesSet == "" || *familiesDump == "" {
		t.Skip("pass -families family:first-last -families.dump DIR")
	}
	for _, m := range familyMembers(t, *familiesSet) {
		fam, seed := m.family, m.seed
		out := filepath.Join(*familiesDump, fmt.Sprintf("%s-%04d.json", fam, seed))
		if _, err := os.Stat(out); err == nil {
			continue
		}
		d := dumpFamilyMember(t, fam, seed)
		b, err := json.Marshal(d)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(out, b, 0o644); err != nil {
			t.Fatal(err)
		}
		t.Logf("%s %d: defaults ARI %.3f (%d states, %d groups; planted %d, %d)", fam, seed, d.DefaultsARI, d.DefaultsS, d.DefaultsK, d.TrueStates, d.TrueGroups)
	}
}

func dumpFamilyMember(t *testing.T, fam synth.Family, seed uint64) *familyDump {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "scenario.csv")
	so := synth.Options{Scenario: seed, Family: fam, Seed: seed, Participants: 200, Windows: 2016, Labels: true}
	truth, err := synth.WriteFile(path, so)
	if err != nil {
		t.Fatal(err)
	}
	sc, _ := synth.DrawFamily(fam, seed)
	o := Defaults(path)
	o.Read.Label = "activity"
	o.NoSensitivity = true
	tab, err := cohort.Read(ctx, []string{path}, o.Read)
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	byID := map[string]int{}
	for _, tr := range truth {
		byID[tr.ID] = tr.Group
	}
	d := &familyDump{Family: string(fam), Seed: seed, TrueGroups: len(sc.Groups), TrueStates: len(truth[0].Shares)}
	for _, u := range tab.Units {
		d.Want = append(d.Want, byID[u.ID])
		d.Windows = append(d.Windows, u.Windows())
	}
	start := time.Now()
	f, err := FitTable(ctx, tab, o)
	if err != nil {
		t.Fatal(err)
	}
	d.DefaultsSecs = time.Since(start).Seconds()
	d.DefaultsARI, _ = cluster.AdjustedRand(d.Want, f.Grouping.Labels)
	d.DefaultsK, d.DefaultsS = f.Grouping.K, f.States.K
	c, err := CensusOf(tab, o)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := MergeCensus([]*Census{c})
	if err != nil {
		t.Fatal(err)
	}
	sp, err := SampleOf(tab, plan, cohort.Shard{})
	if err != nil {
		t.Fatal(err)
	}
	fp, units, err := fitScaling(ctx, plan, []*SamplePiece{sp})
	if err != nil {
		t.Fatal(err)
	}
	sample, err := mergeSamples(plan, []*SamplePiece{sp})
	if err != nil {
		t.Fatal(err)
	}
	d.Sampled = sample.index
	lo, hi := 2, 12
	fmt.Sscanf(*familiesDumpStates, "%d-%d", &lo, &hi)
	for s := lo; s <= hi; s++ {
		for r := 0; r < *familiesFits; r++ {
			start := time.Now()
			st, err := profile.FitAligned(ctx, units, fp.Fit, profile.AlignOptions{States: []int{s}, Seed: par.SubSeed(o.Seed, "fit", r), Calibrate: !*familiesNoCal})
			if err != nil {
				t.Fatal(err)
			}
			ff := familyFit{S: st.K, Fit: r, Seconds: time.Since(start).Seconds(), Centroids: st.Centroids.RawMatrix().Data}
			start = time.Now()
			lc := profile.NewLabelCounter(st.K)
			for u := range tab.Units {
				x, err := tab.Block(u, nil)
				if err != nil {
					t.Fatal(err)
				}
				_, lab, _, err := st.AssignUnit(fp.Fit, x, nil)
				if err != nil {
					t.Fatal(err)
				}
				cnt := make([]int, st.K)
				tr := make([]int, st.K*st.K)
				for w, l := range lab {
					cnt[l]++
					if w > 0 {
						tr[lab[w-1]*st.K+l]++
					}
				}
				ff.Counts, ff.Trans = append(ff.Counts, cnt), append(ff.Trans, tr)
				lc.Add(lab, tab.Units[u].Labels)
			}
			ff.AssignSeconds = time.Since(start).Seconds()
			if lt, err := lc.Table(); err == nil {
				ff.WindowARI = lt.ARI
			}
			for _, x := range units {
				_, lab, _, err := st.AlignUnit(fp.Fit, x, nil)
				if err != nil {
					t.Fatal(err)
				}
				cnt := make([]int, st.K)
				for _, l := range lab {
					cnt[l]++
				}
				ff.SampleCounts = append(ff.SampleCounts, cnt)
			}
			d.Fits = append(d.Fits, ff)
		}
	}
	return d
}

var familiesEval = flag.String("families.eval", "", "evaluate grouping models on the families study dumped in this folder")
var familiesEvalFits = flag.Int("families.evalfits", 3, "fits evaluated at each number of states")
var familiesMethods = flag.String("families.methods", "dmm,gmm,ward", "grouping models to evaluate")
var familiesS = flag.String("families.s", "4,6,8,10,12", "numbers of states to evaluate")

func readFamilyDumps(t *testing.T, dir string) []*familyDump {
	files, _ := filepath.Glob(filepath.Join(dir, "*.json"))
	var out []*familyDump
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		var d familyDump
		if err := json.Unmarshal(b, &d); err != nil {
			t.Fatal(err)
		}
		out = append(out, &d)
	}
	return out
}

var familiesRecover = flag.String("families.recover", "", "run the job with the defaults on family members: family:first-last[,…]")
var familiesSeeds = flag.Int("families.seeds", 3, "tool seeds per member, for reproducibility")
var familiesEnsemble = flag.Bool("families.ensemble", false, "log each fit of the states: states.start:groups/agreement, * on the fit kept")
var familiesArgs = flag.String("families.opts", "", "options changed from the defaults, as key=value,… (states=4, fits=1, sample=150000, criterion=bic, method=ward-hellinger, calibration=off, nonwear=choi, validday=none, validdays=2, twins=keep, twinfold=off, personstates=off, axes=none, windows=10080, stateschoice=1se|vi, votes=full|fullcounts|exact)")

// The families benchmark: the whole job with the defaults (or -families.opts) on members of
// every family, scored by the adjusted Rand index against the planted groups, each member run
// with several seeds of the tool to measure reproducibility (median pairwise ARI of the
// members' groups over the seeds).
func TestFamiliesRecovery(t *testing.T) {
	t.Parallel()
	if *familiesRecover == "" {
		t.Skip("pass -families.recover family:first-last")
	}
	type row struct {
		family         string
		seed           uint64
		aris, reps     []float64
		states, groups []int
		trueK          int
		secs           float64
		rep, stab      float64
		agree          float64
		depends        bool
	}
	var rows []row
	_ = rows
	for _, mem := range familyMembers(t, *familiesRecover) {
		fam, seed := mem.family, mem.seed
		m := recoverMember(t, fam, seed)
		r := row(m)
		rows = append(rows, r)
		t.Logf("%-7s %4d K=%d: ARI %v, states %v, groups %v, reproducibility %.2f, %.1f s; the run's own marks: fits %.2f, stability %.2f, ensemble %.2f, states note %v", fam, seed, r.trueK, fmtFloats(r.aris), r.states, r.groups, median(r.reps), r.secs, r.rep, r.stab, r.agree, r.depends)
	}
	byFam := map[string][]row{}
	var fams []string
	for _, r := range rows {
		if byFam[r.family] == nil {
			fams = append(fams, r.family)
		}
		byFam[r.family] = append(byFam[r.family], r)
	}
	var b strings.Builder
	// The last column is the family's mean ARI with each tool seed: how far the mean moves
	// with the seed alone, the yardstick for a difference between two runs (docs/benchmarks.md).
	fmt.Fprintf(&b, "%-8s %8s %8s %8s %10s %12s %8s  %s\n", "family", "members", "mean ARI", "worst", "below 0.5", "median rep.", "worst rep.", "mean ARI by tool seed")
	for _, f := range fams {
		var a, rp []float64
		bySeed := make([]float64, *familiesSeeds)
		below := 0
		for _, r := range byFam[f] {
			a = append(a, r.aris[0])
			if r.aris[0] < 0.5 {
				below++
			}
			rp = append(rp, median(r.reps))
			for i, x := range r.aris {
				bySeed[i] += x / float64(len(byFam[f]))
			}
		}
		fmt.Fprintf(&b, "%-8s %8d %8.3f %8.3f %10d %12.3f %8.3f  %s\n", f, len(a), mean(a), slices.Min(a), below, median(rp), slices.Min(rp), fmtFloats(bySeed))
	}
	t.Logf("the job on family members (ARI of the first seed; reproducibility: median pairwise ARI of the members' groups over %d tool seeds):\n%s", *familiesSeeds, b.String())
}

func fmtFloats(xs []float64) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = fmt.Sprintf("%.2f", x)
	}
	return "[" + strings.Join(parts, " ") + "]"
}

// recoverMember runs the job on one member with several tool seeds.
func recoverMember(t *testing.T, fam synth.Family, seed uint64) (r struct {
	family         string
	seed           uint64
	aris, reps     []float64
	states, groups []int
	trueK          int
	secs           float64
	rep, stab      float64
	agree          float64 // the kept fit's mean agreement with the ensemble (the mark of StatesAgree)
	depends        bool    // statesNote finds another credible number of states that groups otherwise
}) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "scenario.csv")
	windows := 2016
	for _, kv := range strings.Split(*familiesArgs, ",") {
		if k, v, _ := strings.Cut(kv, "="); k == "windows" { // long recordings: windows=10080 is a week of minutes
			fmt.Sscan(v, &windows)
		}
	}
	truth, err := synth.WriteFile(path, synth.Options{Scenario: seed, Family: fam, Seed: seed, Participants: 200, Windows: windows})
	if err != nil {
		t.Fatal(err)
	}
	sc, _ := synth.DrawFamily(fam, seed)
	r.family, r.seed, r.trueK = string(fam), seed, len(sc.Groups)
	o := Defaults(path)
	o.NoSensitivity = true
	if sc.Count != nil && sc.Count.Days < cohort.DefaultValidDays {
		// The invented study's protocol: recordings of 1 to 3 days, each valid day counts (the
		// default of 4 valid days is a week-long protocol's).
		o.Read.ValidDays = 1
	}
	for _, kv := range strings.Split(*familiesArgs, ",") {
		k, v, _ := strings.Cut(kv, "=")
		switch k {
		case "":
		case "states":
			var a, b int
			if n, _ := fmt.Sscanf(v, "%d-%d", &a, &b); n == 2 {
				o.States = nil
				for s := a; s <= b; s++ {
					o.States = append(o.States, s)
				}
			} else {
				fmt.Sscan(v, &a)
				o.States = []int{a}
			}
		case "fits":
			fmt.Sscan(v, &o.Fits)
		case "sample": // windows the states are fitted on (default 50,000)
			fmt.Sscan(v, &o.Sample)
		case "criterion":
			o.Criterion, _ = group.ParseCriterion(v)
		case "method":
			o.Method, _ = group.ParseMethod(v)
			if o.Method != group.Mixture {
				o.Groups = o.Groups[1:]
				o.Criterion = group.ByGapSteady
			}
		case "calibration":
			o.NoCalibration = v == "off"
		case "nonwear":
			o.Read.NonWear = strings.TrimPrefix(v, "none") // none: no rule
		case "validday": // none, or hours of wear such as 10h
			o.Read.ValidDay, o.Read.ValidDayAuto = 0, false
			if v != "none" {
				o.Read.ValidDay, _ = time.ParseDuration(v)
			}
		case "validdays":
			fmt.Sscan(v, &o.Read.ValidDays)
		case "twins":
			o.KeepTwins = v == "keep"
		case "twinfold":
			o.noTwinFold = v == "off"
		case "personstates": // off: every window to the cohort's states (profile.AlignOptions.PersonPrior −1)
			o.noPersonStates = v == "off"
		case "stateschoice": // 1se: the one-standard-error rule over the fits (oneSE)
			o.oneSE = v == "1se"
			o.viMedoid = v == "vi"
		case "votes": // full: the votes see each sampled participant's whole recording and its bouts; fullcounts: its windows in each state only; exact: the mixture with the run's own settings
			o.voteFull, o.voteNoBouts, o.voteExact = v == "full" || v == "fullcounts", v == "fullcounts", v == "exact"
		case "windows": // read above, before the cohort is written
		case "axes": // none: the align step turns no axis means (offsets only)
			o.NoAxes = v == "none"
		default:
			t.Fatalf("-families.opts: no option %s", k)
		}
	}
	tab, err := cohort.Read(ctx, []string{path}, o.Read)
	if err != nil {
		t.Fatal(err)
	}
	defer tab.Close()
	group := map[string]int{}
	for _, tr := range truth {
		group[tr.ID] = tr.Group
	}
	want := make([]int, len(tab.Units))
	for i, u := range tab.Units {
		want[i] = group[u.ID]
	}
	var labels [][]int
	for s := 1; s <= *familiesSeeds; s++ {
		o.Seed = uint64(s)
		start := time.Now()
		f, err := FitTable(ctx, tab, o)
		if err != nil {
			t.Fatalf("%s %d seed %d: %v", fam, seed, s, err)
		}
		if s == 1 {
			r.secs = time.Since(start).Seconds()
			// What the run itself says of its grouping: reproducibility across fits of the states,
			// and the groups' bootstrap stability (the marks the Summary warns below).
			stab := math.NaN()
			if f.Grouping.Stability != nil {
				stab = f.Grouping.Stability.ARI
			}
			r.rep, r.stab = f.Reproducibility, stab
			r.agree = math.NaN()
			for _, e := range f.States.Ensemble {
				if e.Kept {
					r.agree = e.Agreement
				}
			}
			r.depends = statesNote(f.States.Ensemble).Kind != ""
		}
		labels = append(labels, f.Grouping.Labels)
		if *familiesEnsemble {
			var b strings.Builder
			for _, e := range f.States.Ensemble {
				k := ""
				if e.Kept {
					k = "*"
				}
				fmt.Fprintf(&b, " %d.%d:%dg/%.2f%s", e.States, e.Start, e.Groups, e.Agreement, k)
			}
			t.Logf("%s %d ensemble:%s", fam, seed, b.String())
		}
		r.aris = append(r.aris, agreement(want, f.Grouping.Labels))
		r.states, r.groups = append(r.states, f.States.K), append(r.groups, f.Grouping.K)
	}
	for i := range labels {
		for j := i + 1; j < len(labels); j++ {
			r.reps = append(r.reps, agreement(labels[i], labels[j]))
		}
	}
	return r
}
