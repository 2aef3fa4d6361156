package job

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cluster"
	"github.com/cohortmix/cohortmix/cluster/mixture"
	"github.com/cohortmix/cohortmix/cluster/par"
	"github.com/cohortmix/cohortmix/cohort/group"
)

// scans keep one model's fits over every number of groups for one fit's counts, so that two
// criteria on the same model share them.
var (
	scans  = map[string][]*mixture.DMM{}
	scanMu sync.Mutex
)

type grouped struct {
	labels []int
	k      int
}

// groupBy runs one candidate grouping model on one fit's counts.
func groupBy(t *testing.T, method string, ff familyFit, maxK int) grouped {
	ctx := context.Background()
	if strings.Contains(method, "twin") {
		ff = mergeTwinStates(ff, 0.1)
	}
	n, s := len(ff.Counts), ff.S
	switch {
	case strings.HasPrefix(method, "dmm") || strings.HasPrefix(method, "markov"):
		var x *mat.Dense
		var blocks []int
		base := method
		if i := strings.Index(method, "-"); i > 0 {
			base = method[:i]
		}
		eff := strings.Contains(base, "eff")
		bout := strings.Contains(base, "bout")
		run := strings.Contains(base, "run")
		switch {
		case strings.Contains(base, "gdm"):
			// The generalized Dirichlet (Connor & Mosimann 1969) as blocks of two: the states in
			// decreasing order of the cohort's time in them, each participant's windows in the
			// next state against those in the states after it (a Beta-binomial each), and with
			// bout each state's stays and leavings beside them.
			order := make([]int, s)
			tot := make([]float64, s)
			for i := range order {
				order[i] = i
			}
			for _, c := range ff.Counts {
				for j, v := range c {
					tot[j] += float64(v)
				}
			}
			sort.SliceStable(order, func(a, b int) bool { return tot[order[a]] > tot[order[b]] })
			cols := 2 * (s - 1)
			if bout {
				cols += 2 * s
			}
			x = mat.NewDense(n, cols, nil)
			for j := 0; j < s-1; j++ {
				blocks = append(blocks, 2)
			}
			if bout {
				for j := 0; j < s; j++ {
					blocks = append(blocks, 2)
				}
			}
			for i, c := range ff.Counts {
				var left float64
				for _, v := range c {
					left += float64(v)
				}
				scale := 1.0
				if eff { // counted in bouts, as the default model's shares
					var runs float64
					for a := 0; a < s; a++ {
						runs += leavings(ff, i, a)
					}
					scale = (runs + 1) / left
				}
				for j := 0; j < s-1; j++ {
					v := float64(c[order[j]])
					left -= v
					x.Set(i, 2*j, v*scale)
					x.Set(i, 2*j+1, left*scale)
				}
				if bout {
					for a := 0; a < s; a++ {
						x.Set(i, 2*(s-1)+2*a, float64(ff.Trans[i][a*s+a]))
						x.Set(i, 2*(s-1)+2*a+1, leavings(ff, i, a))
					}
				}
			}
		case run:
			// Each state's number of bouts, then each state's stays and leavings.
			x = mat.NewDense(n, 3*s, nil)
			blocks = []int{s}
			for j := 0; j < s; j++ {
				blocks = append(blocks, 2)
			}
			for i := range ff.Counts {
				for a := 0; a < s; a++ {
					leave := leavings(ff, i, a)
					x.Set(i, a, leave)
					x.Set(i, s+2*a, float64(ff.Trans[i][a*s+a]))
					x.Set(i, s+2*a+1, leave)
				}
			}
		case eff || bout:
			// Shares times the participant's number of bouts (eff) or its windows, and with
			// bout each state's stays and leavings beside them.
			cols := s
			if bout {
				cols += 2 * s
			}
			x = mat.NewDense(n, cols, nil)
			blocks = []int{s}
			if bout {
				for j := 0; j < s; j++ {
					blocks = append(blocks, 2)
				}
			}
			for i, c := range ff.Counts {
				var tot, runs float64
				for _, v := range c {
					tot += float64(v)
				}
				for a := 0; a < s; a++ {
					leave := leavings(ff, i, a)
					runs += leave
					if bout {
						x.Set(i, s+2*a, float64(ff.Trans[i][a*s+a]))
						x.Set(i, s+2*a+1, leave)
					}
				}
				scale := 1.0
				if eff {
					scale = (runs + 1) / tot
				}
				for j, v := range c {
					x.Set(i, j, float64(v)*scale)
				}
			}
		case strings.HasPrefix(method, "markov"):
			x = mat.NewDense(n, s*s, nil)
			for i, tr := range ff.Trans {
				for j, v := range tr {
					x.Set(i, j, float64(v))
				}
			}
			blocks = make([]int, s)
			for b := range blocks {
				blocks[b] = s
			}
		default:
			x = mat.NewDense(n, s, nil)
			for i, c := range ff.Counts {
				for j, v := range c {
					x.Set(i, j, float64(v))
				}
			}
		}
		// capN: each participant's counts scaled down so that its first block (its time counted
		// in bouts, or in windows) adds up to at most N, the other blocks by the same factor (a
		// coarsened likelihood, after Miller & Dunson 2019: each participant weighs as at most N
		// observations).
		if i := strings.Index(base, "cap"); i > 0 {
			var cap float64
			fmt.Sscan(base[i+3:], &cap)
			for r := 0; r < n; r++ {
				var tot float64
				for j := 0; j < blocks[0]; j++ {
					tot += x.At(r, j)
				}
				if tot > cap {
					row := x.RawRowView(r)
					for j := range row {
						row[j] *= cap / tot
					}
				}
			}
		}
		crit := "bic"
		if i := strings.Index(method, "-"); i > 0 {
			crit = method[i+1:]
		}
		key := fmt.Sprintf("%p", ff.Counts) + base
		scanMu.Lock()
		fits, ok := scans[key]
		scanMu.Unlock()
		if !ok {
			for k := 1; k <= maxK; k++ {
				m, err := mixture.FitDMM(ctx, x, mixture.DMMOptions{K: k, Blocks: blocks, Starts: 3, Seed: 1, Tol: 1e-8, Workers: 1})
				if err != nil {
					t.Fatalf("%s k=%d: %v", method, k, err)
				}
				fits = append(fits, m)
			}
			scanMu.Lock()
			scans[key] = fits
			scanMu.Unlock()
		}
		tau := 0.0
		if i := strings.Index(crit, "m"); i > 0 {
			fmt.Sscan(crit[i+1:], &tau)
			crit = crit[:i]
		}
		var best *mixture.DMM
		bestV := math.Inf(1)
		for _, m := range fits {
			v := map[string]float64{"bic": m.BIC, "icl": m.ICL, "aic": m.AIC, "lap": m.Laplace}[crit]
			if v < bestV {
				best, bestV = m, v
			}
		}
		if tau > 0 {
			labels, k := mergeOverlapping(best, tau)
			return grouped{labels, k}
		}
		return grouped{best.Labels, best.K}
	case strings.HasPrefix(method, "gmm"):
		y := sqrtEmbedding(ff, strings.Contains(method, "bout"))
		if strings.Contains(method, "ilr") {
			y = ilrEmbedding(ff, strings.Contains(method, "bout"), 0.9)
		}
		crit := "bic"
		if strings.HasSuffix(method, "icl") {
			crit = "icl"
		}
		var best *mixture.Gaussian
		bestV := math.Inf(1)
		for k := 1; k <= maxK; k++ {
			g, err := mixture.FitTiedGaussian(ctx, y, mixture.GaussianOptions{K: k, Starts: 3, Seed: 1})
			if err != nil {
				t.Fatalf("%s k=%d: %v", method, k, err)
			}
			v := g.BIC
			if crit == "icl" {
				v = g.ICL
			}
			if v < bestV {
				best, bestV = g, v
			}
		}
		return grouped{best.Labels, best.K}
	case method == "ward":
		shares := make([][]float64, n)
		for i, c := range ff.Counts {
			shares[i] = make([]float64, s)
			var tot float64
			for _, v := range c {
				tot += float64(v)
			}
			for j, v := range c {
				shares[i][j] = float64(v) / tot
			}
		}
		g, err := group.Signatures(ctx, shares, group.Options{Method: group.WardHellinger, Groups: []int{2, 3, 4, 5, 6, 7, 8}, Criterion: group.ByGapSteady, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		return grouped{g.Labels, g.K}
	}
	t.Fatalf("no method %s", method)
	return grouped{}
}

// leavings is how many times unit i's windows leave state a for another.
func leavings(ff familyFit, i, a int) float64 {
	s := ff.S
	var leave float64
	for b := 0; b < s; b++ {
		if a != b {
			leave += float64(ff.Trans[i][a*s+b])
		}
	}
	return leave
}

// mergeOverlapping joins, one pair at a time, the two components whose laws overlap most while
// their Bhattacharyya coefficient is above tau, and relabels the rows.
func mergeOverlapping(m *mixture.DMM, tau float64) ([]int, int) {
	group := make([]int, m.K)
	for c := range group {
		group[c] = c
	}
	for {
		ba, bb, bv := -1, -1, tau
		for a := 0; a < m.K; a++ {
			for b := a + 1; b < m.K; b++ {
				if group[a] == group[b] {
					continue
				}
				if v := m.Overlap(a, b); v > bv {
					ba, bb, bv = a, b, v
				}
			}
		}
		if ba < 0 {
			break
		}
		from, to := group[bb], group[ba]
		for c := range group {
			if group[c] == from {
				group[c] = to
			}
		}
	}
	ids := map[int]int{}
	labels := make([]int, len(m.Labels))
	for i, l := range m.Labels {
		g := group[l]
		if _, ok := ids[g]; !ok {
			ids[g] = len(ids)
		}
		labels[i] = ids[g]
	}
	return labels, len(ids)
}

// sqrtEmbedding is each unit's square-root shares on the principal axes that carry variance
// (the sphere's normal carries none), with the log of its mean bout length beside them when
// bout is set.
func sqrtEmbedding(ff familyFit, bout bool) *mat.Dense {
	n, s := len(ff.Counts), ff.S
	x := mat.NewDense(n, s, nil)
	for i, c := range ff.Counts {
		var tot float64
		for _, v := range c {
			tot += float64(v)
		}
		for j, v := range c {
			x.Set(i, j, math.Sqrt(float64(v)/tot))
		}
	}
	pca, err := cluster.FitPCA(x, cluster.PCAOptions{})
	if err != nil {
		panic(err)
	}
	z, _ := pca.Transform(x)
	keep := 0
	for _, ev := range pca.Variance {
		if ev > 1e-9*pca.Variance[0] {
			keep++
		}
	}
	keep = min(keep, s-1)
	cols := keep
	if bout {
		cols++
	}
	y := mat.NewDense(n, cols, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < keep; j++ {
			y.Set(i, j, z.At(i, j))
		}
		if bout {
			y.Set(i, keep, logMeanBout(ff, i))
		}
	}
	return y
}

// cachedGroupings are one model's groupings of one dump at every number of states and fit,
// keyed "S/fit".
type cachedGroupings map[string]grouped2

type grouped2 struct {
	Labels []int
	K      int
}

func groupingsOf(t *testing.T, dir string, d *familyDump, method string) cachedGroupings {
	path := filepath.Join(dir, "cache", fmt.Sprintf("%s-%04d-%s.json", d.Family, d.Seed, method))
	if b, err := os.ReadFile(path); err == nil {
		var c cachedGroupings
		if json.Unmarshal(b, &c) == nil {
			return c
		}
	}
	c := cachedGroupings{}
	trueS := min(max(d.TrueStates, 3), 12)
	for _, ff := range d.Fits {
		if !slices.Contains(evalStates(), ff.S) && !(ff.S == trueS && ff.Fit == 0) || ff.Fit >= *familiesEvalFits {
			continue
		}
		g := groupBy(t, method, ff, 7)
		c[fmt.Sprintf("%d/%d", ff.S, ff.Fit)] = grouped2{g.labels, g.k}
	}
	os.MkdirAll(filepath.Join(dir, "cache"), 0o755)
	b, _ := json.Marshal(c)
	os.WriteFile(path, b, 0o644)
	return c
}

// logMeanBout is the log of unit i's mean bout length: its transitions over its changes of
// state, each plus one.
func logMeanBout(ff familyFit, i int) float64 {
	s := ff.S
	var runs, tot float64
	for a := 0; a < s; a++ {
		for b := 0; b < s; b++ {
			v := float64(ff.Trans[i][a*s+b])
			tot += v
			if a != b {
				runs += v
			}
		}
	}
	return math.Log((tot + 1) / (runs + 1))
}

// ilrEmbedding is each unit's centred log-ratios of its state counts (half a window added to
// each), on the principal axes that keep the share keep of their variance, with the log of its
// mean bout length (windows per bout) beside them when bout is set.
func ilrEmbedding(ff familyFit, bout bool, keep float64) *mat.Dense {
	n, s := len(ff.Counts), ff.S
	x := mat.NewDense(n, s, nil)
	for i, c := range ff.Counts {
		var tot, lm float64
		for _, v := range c {
			tot += float64(v)
		}
		row := make([]float64, s)
		for j, v := range c {
			row[j] = math.Log((float64(v) + 0.5) / (tot + 0.5*float64(s)))
			lm += row[j] / float64(s)
		}
		for j := range row {
			x.Set(i, j, row[j]-lm)
		}
	}
	pca, err := cluster.FitPCA(x, cluster.PCAOptions{})
	if err != nil {
		panic(err)
	}
	z, _ := pca.Transform(x)
	keepN, acc := 0, 0.0
	for _, r := range pca.Ratio {
		keepN++
		acc += r
		if acc >= keep {
			break
		}
	}
	keepN = min(keepN, s-1)
	cols := keepN
	if bout {
		cols++
	}
	y := mat.NewDense(n, cols, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < keepN; j++ {
			y.Set(i, j, z.At(i, j))
		}
		if bout {
			y.Set(i, keepN, logMeanBout(ff, i))
		}
	}
	return y
}

func TestFamiliesEval(t *testing.T) {
	t.Parallel()
	if *familiesEval == "" {
		t.Skip("pass -families.eval DIR")
	}
	dumps := readFamilyDumps(t, *familiesEval)
	methods := strings.Split(*familiesMethods, ",")
	type key struct{ family, column string }
	aris := map[key][]float64{}
	var fams, cols []string
	addCol := func(c string) {
		if !slices.Contains(cols, c) {
			cols = append(cols, c)
		}
	}
	var b strings.Builder
	// Every dump and model is grouped side by side, then reported in order.
	type job struct {
		d *familyDump
		m string
	}
	var jobs []job
	for _, d := range dumps {
		for _, m := range methods {
			jobs = append(jobs, job{d, m})
		}
	}
	got := make([]cachedGroupings, len(jobs))
	par.Each(len(dumps), 0, func(di int) {
		for mi := range methods {
			i := di*len(methods) + mi
			got[i] = groupingsOf(t, *familiesEval, jobs[i].d, jobs[i].m)
		}
		scanMu.Lock()
		clear(scans)
		scanMu.Unlock()
	})
	for i, jb := range jobs {
		d, m, c := jb.d, jb.m, got[i]
		if !slices.Contains(fams, d.Family) {
			fams = append(fams, d.Family)
		}
		if i%len(methods) == 0 {
			fmt.Fprintf(&b, "\n%-7s %4d K=%d S=%d defaults %.2f (%d,%d)", d.Family, d.Seed, d.TrueGroups, d.TrueStates, d.DefaultsARI, d.DefaultsS, d.DefaultsK)
			addCol("defaults")
			aris[key{d.Family, "defaults"}] = append(aris[key{d.Family, "defaults"}], d.DefaultsARI)
		}
		score := func(col string, labels []int) float64 {
			a := adjustedRand(d.Want, labels)
			addCol(col)
			aris[key{d.Family, col}] = append(aris[key{d.Family, col}], a)
			return a
		}
		fmt.Fprintf(&b, " | %s:", m)
		trueS := min(max(d.TrueStates, 3), 12)
		fmt.Fprintf(&b, " trueS %.2f", score(m+" trueS", c[fmt.Sprintf("%d/0", trueS)].Labels))
		best := -1.0
		for _, s := range evalStates() {
			best = max(best, adjustedRand(d.Want, c[fmt.Sprintf("%d/0", s)].Labels))
		}
		score(m+" bestS", nil2(best))
		for _, r := range consensusRules {
			labels, note := r.choose(c)
			fmt.Fprintf(&b, " %s %.2f%s", r.name, score(m+" "+r.name, labels), note)
		}
	}
	sort.Strings(fams)
	fmt.Fprintf(&b, "\n\n%-8s", "family")
	for _, c := range cols {
		fmt.Fprintf(&b, " %-16s", c)
	}
	b.WriteString("\n")
	for _, f := range fams {
		fmt.Fprintf(&b, "%-8s", f)
		for _, c := range cols {
			a := aris[key{f, c}]
			fmt.Fprintf(&b, " %-16s", fmt.Sprintf("%.3f/%.2f", mean(a), minOf(a)))
		}
		b.WriteString("\n")
	}
	t.Log("\n" + b.String())
}

func nil2(v float64) []int { return []int{-1, int(math.Round(v * 1e6))} }

type consensusRule struct {
	name   string
	choose func(c cachedGroupings) ([]int, string)
}

// consensusRules are the candidate rules that take one grouping from all of a dump's groupings.
var consensusRules = []consensusRule{
	{"med", func(c cachedGroupings) ([]int, string) { return medoidOver(c, evalStates(), 3) }},
	{"medVI", func(c cachedGroupings) ([]int, string) { return medoidVIOver(c, evalStates(), 3) }},
	{"med1", func(c cachedGroupings) ([]int, string) { return medoidOver(c, evalStates(), 1) }},
	{"S6", func(c cachedGroupings) ([]int, string) { return c["6/0"].Labels, "" }},
	{"S8", func(c cachedGroupings) ([]int, string) { return c["8/0"].Labels, "" }},
	{"rep8", func(c cachedGroupings) ([]int, string) { return reproducibility(c, 8) }},
}

// evalStates are the numbers of states evaluated (-families.s).
func evalStates() []int {
	var ss []int
	for _, f := range strings.Split(*familiesS, ",") {
		var v int
		fmt.Sscan(f, &v)
		ss = append(ss, v)
	}
	return ss
}

// reproducibility is the fit-0 grouping at s states, noted with the median ARI of the fits'
// groupings there.
func reproducibility(c cachedGroupings, s int) ([]int, string) {
	var all [][]int
	for r := 0; r < 3; r++ {
		if g, ok := c[fmt.Sprintf("%d/%d", s, r)]; ok {
			all = append(all, g.Labels)
		}
	}
	var aris []float64
	for i := range all {
		for j := i + 1; j < len(all); j++ {
			aris = append(aris, adjustedRand(all[i], all[j]))
		}
	}
	slices.Sort(aris)
	if len(aris) == 0 {
		return all[0], ""
	}
	return all[0], fmt.Sprintf("(rep %.2f)", aris[len(aris)/2])
}

// medoidOver is the grouping that agrees best (sum of ARI) with all groupings at the numbers
// of states ss and fits below fits.
func medoidOver(c cachedGroupings, ss []int, fits int) ([]int, string) {
	return medoidBy(c, ss, fits, adjustedRand)
}

// medoidVIOver is medoidOver under the variation of information (least summed distance).
func medoidVIOver(c cachedGroupings, ss []int, fits int) ([]int, string) {
	return medoidBy(c, ss, fits, func(a, b []int) float64 {
		v, _ := cluster.VariationOfInformation(a, b)
		return -v
	})
}

// medoidBy is the grouping with the largest sum of score with all groupings at the numbers of
// states ss and fits below fits (ties to the first).
func medoidBy(c cachedGroupings, ss []int, fits int, score func(a, b []int) float64) ([]int, string) {
	var all [][]int
	var names []string
	for _, s := range ss {
		for r := 0; r < fits; r++ {
			if g, ok := c[fmt.Sprintf("%d/%d", s, r)]; ok {
				all = append(all, g.Labels)
				names = append(names, fmt.Sprintf("%d/%d", s, r))
			}
		}
	}
	best, bestSum := 0, math.Inf(-1)
	for i := range all {
		var sum float64
		for j := range all {
			if i != j {
				sum += score(all[i], all[j])
			}
		}
		if sum > bestSum {
			best, bestSum = i, sum
		}
	}
	return all[best], fmt.Sprintf("(%s k%d)", names[best], slices.Max(all[best])+1)
}

// adjustedRand is the ARI, with two one-group labelings agreeing fully (1) and a one-group
// labeling against a grouped one 0.
func adjustedRand(a, b []int) float64 {
	if len(b) == 2 && b[0] == -1 {
		return float64(b[1]) / 1e6 // a score given directly (nil2)
	}
	if slices.Max(a) == slices.Min(a) && slices.Max(b) == slices.Min(b) {
		return 1
	}
	v, _ := cluster.AdjustedRand(a, b)
	return v
}

func mean(xs []float64) float64 {
	var s float64
	for _, x := range xs {
		s += x
	}
	return s / math.Max(1, float64(len(xs)))
}

func minOf(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	return slices.Min(xs)
}

// mergeTwinStates merges, one pair after another, the states that the units use one or the
// other of but rarely both (overlap Σᵢ min(pᵢₛ, pᵢₜ) / min(Σᵢ pᵢₛ, Σᵢ pᵢₜ) below most, as
// profile's twinPairs measures it, states of under 1 % of the time left out): their windows and
// transitions add up as one state's.
func mergeTwinStates(ff familyFit, most float64) familyFit {
	for {
		s := ff.S
		share := make([][]float64, len(ff.Counts))
		total := make([]float64, s)
		for i, c := range ff.Counts {
			var n float64
			for _, v := range c {
				n += float64(v)
			}
			share[i] = make([]float64, s)
			for j, v := range c {
				if n > 0 {
					share[i][j] = float64(v) / n
				}
				total[j] += share[i][j]
			}
		}
		least := 0.01 * float64(len(ff.Counts))
		bs, bt, best := -1, -1, most
		for a := 0; a < s; a++ {
			for b := a + 1; b < s; b++ {
				if total[a] < least || total[b] < least {
					continue
				}
				var both float64
				for _, p := range share {
					both += min(p[a], p[b])
				}
				if o := both / min(total[a], total[b]); o < best {
					bs, bt, best = a, b, o
				}
			}
		}
		if bs < 0 || s <= 2 {
			return ff
		}
		// State bt goes into bs; the states after bt move down one.
		to := func(j int) int {
			switch {
			case j == bt:
				return bs
			case j > bt:
				return j - 1
			}
			return j
		}
		out := familyFit{S: s - 1, Fit: ff.Fit}
		for i := range ff.Counts {
			c := make([]int, s-1)
			for j, v := range ff.Counts[i] {
				c[to(j)] += v
			}
			tr := make([]int, (s-1)*(s-1))
			for a := 0; a < s; a++ {
				for b := 0; b < s; b++ {
					tr[to(a)*(s-1)+to(b)] += ff.Trans[i][a*s+b]
				}
			}
			out.Counts, out.Trans = append(out.Counts, c), append(out.Trans, tr)
		}
		ff = out
	}
}
