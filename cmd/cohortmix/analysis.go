package main

import (
	"context"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/normalize"
	"github.com/cohortmix/cohortmix/profile"
	"github.com/cohortmix/cohortmix/reports"
)

// analysisOptions are the settings of one run of the main job.
type analysisOptions struct {
	Inputs    []string
	Read      cohort.ReadOptions
	Norm      normalize.Options
	States    []int
	Sample    int
	Groups    []int
	Method    cohort.Method
	Criterion cohort.Criterion
	Bootstrap int
	Seed      uint64
	Workers   int
	Progress  func(step string)
}

// normSample is about how many windows the robust scales and the PCA are fitted on.
const normSample = 200_000

// analyze connects the stages: read → normalize → states and signatures → grouping → what sets
// the groups apart. It holds no algorithm of its own.
func analyze(ctx context.Context, o analysisOptions) (*reports.Result, error) {
	step := func(s string) {
		if o.Progress != nil {
			o.Progress(s)
		}
	}
	step("reading")
	t, err := cohort.Read(o.Inputs, o.Read)
	if err != nil {
		return nil, err
	}
	if len(t.Units) < 3 {
		return nil, fmt.Errorf("%s: %d participants are left to group (%d excluded, see their reasons with a lower --min-windows): %w; grouping needs at least 3",
			o.Inputs[0], len(t.Units), len(t.Quality.Excluded), cohort.ErrTooFew)
	}
	if maxK := o.Groups[len(o.Groups)-1]; maxK > len(t.Units)-1 {
		return nil, fmt.Errorf("%s: --groups asks for up to %d groups but %d participants are grouped: %w; lower --groups to at most %d",
			o.Inputs[0], maxK, len(t.Units), cohort.ErrTooFew, len(t.Units)-1)
	}
	d := len(t.Features)
	raw := make([][]float64, len(t.Units))
	for i, u := range t.Units {
		raw[i] = u.X
	}
	step("normalizing")
	o.Norm.Seed = o.Seed
	if total := t.Quality.WindowsIn; o.Norm.SampleRate == 0 && total > normSample {
		o.Norm.SampleRate = float64(normSample) / float64(total) // robust scales and PCA from a sample
	}
	fit, normed, err := normalize.FitTransform(t.Features, raw, o.Norm)
	if err != nil {
		return nil, err
	}
	step("fitting movement states")
	states, err := profile.FitStates(ctx, normed, fit.OutDim(), profile.Options{States: o.States, SampleSize: o.Sample, Seed: o.Seed, Workers: o.Workers})
	if err != nil {
		return nil, err
	}
	step("assigning windows")
	k := states.K
	labels := make([][]int, len(t.Units))
	sigs := make([]profile.Signature, len(t.Units))
	shares := make([][]float64, len(t.Units))
	for i := range t.Units {
		labels[i] = states.Assign(normed[i])
		sigs[i] = profile.Signatures(labels[i], k)
		shares[i] = sigs[i].Share
	}
	res := &reports.Result{Features: t.Features, OrderKind: t.OrderKind, Quality: t.Quality, Files: t.Files, Norm: fit, States: states}
	res.Warnings = append(res.Warnings, fit.Warnings...)
	res.StateDesc = profile.Describe(raw, labels, d, k)
	if t.HasLabels {
		var ls [][]string
		for _, u := range t.Units {
			ls = append(ls, u.Labels)
		}
		if res.Labels, err = profile.CompareLabels(labels, ls, k); err != nil {
			return nil, err
		}
	}
	step("grouping participants")
	g, err := cohort.GroupSignatures(ctx, shares, cohort.GroupOptions{Method: o.Method, Groups: o.Groups, Criterion: o.Criterion, Bootstrap: o.Bootstrap, Seed: o.Seed, Workers: o.Workers})
	if err != nil {
		return nil, err
	}
	res.Grouping = g
	step("finding separating variables")
	vars := make([]cohort.Variable, 0, 2*k+d)
	for s := 0; s < k; s++ {
		v := cohort.Variable{Name: fmt.Sprintf("share S%d", s+1), Kind: "share"}
		b := cohort.Variable{Name: fmt.Sprintf("bout S%d", s+1), Kind: "bout length"}
		for i := range sigs {
			v.Values = append(v.Values, sigs[i].Share[s])
			b.Values = append(b.Values, sigs[i].MeanBout[s])
		}
		vars = append(vars, v, b)
	}
	for j, name := range t.Features {
		v := cohort.Variable{Name: "median " + name, Kind: "feature median"}
		for _, u := range t.Units {
			col := make([]float64, 0, len(u.X)/d)
			for w := 0; w*d < len(u.X); w++ {
				col = append(col, u.X[w*d+j])
			}
			v.Values = append(v.Values, cohort.Median(col))
		}
		vars = append(vars, v)
		res.FeatureRange = append(res.FeatureRange, [3]float64{percentile(v.Values, 0.01), percentile(v.Values, 0.5), percentile(v.Values, 0.99)})
	}
	if res.Separations, res.NotTested, err = cohort.Separate(vars, g.Labels, g.K); err != nil {
		return nil, err
	}
	res.StateNames, res.StateLines = nameStates(res.StateDesc, t.Features)
	res.GroupNames, res.GroupLines = nameGroups(g, sigs)
	res.AtypicalCut = percentile(g.Distance, 0.99)
	for i, u := range t.Units {
		row := reports.UnitRow{ID: u.ID, Wave: u.Wave, Windows: sigs[i].Windows, Group: g.Labels[i],
			Silhouette: g.Silhouette[i], Distance: g.Distance[i], Share: sigs[i].Share, Bout: sigs[i].MeanBout}
		switch s := g.Silhouette[i]; {
		case math.IsNaN(s):
		case s < 0:
			row.Flag = "weak fit: closer to another group"
		case s < 0.25:
			row.Flag = "weak fit"
		}
		res.Units = append(res.Units, row)
	}
	return res, nil
}

// nameStates gives states neutral names and a line naming the features that set each apart.
func nameStates(desc []profile.Description, features []string) ([]string, []string) {
	names := make([]string, len(desc))
	lines := make([]string, len(desc))
	for s, dsc := range desc {
		names[s] = fmt.Sprintf("S%d", s+1)
		var parts []string
		for _, dr := range dsc.Drivers[:min(3, len(dsc.Drivers))] {
			word := "higher"
			if dr.Effect < 0 {
				word = "lower"
			}
			parts = append(parts, fmt.Sprintf("%s %s", word, features[dr.Feature]))
		}
		lines[s] = fmt.Sprintf("%.0f%% of windows; %s than average", 100*dsc.Share, strings.Join(parts, ", "))
	}
	return names, lines
}

// nameGroups gives groups neutral names and a line from their mixture against the cohort's.
func nameGroups(g *cohort.Grouping, sigs []profile.Signature) ([]string, []string) {
	k := len(sigs[0].Share)
	meanShare := make([]float64, k)
	meanBout := make([]float64, k)
	for _, s := range sigs {
		for j := 0; j < k; j++ {
			meanShare[j] += s.Share[j] / float64(len(sigs))
			meanBout[j] += s.MeanBout[j] / float64(len(sigs))
		}
	}
	names := make([]string, g.K)
	lines := make([]string, g.K)
	for c := 0; c < g.K; c++ {
		names[c] = fmt.Sprintf("G%d", c+1)
		share := make([]float64, k)
		bout := make([]float64, k)
		n := 0.0
		for i, s := range sigs {
			if g.Labels[i] != c {
				continue
			}
			n++
			for j := 0; j < k; j++ {
				share[j] += s.Share[j]
				bout[j] += s.MeanBout[j]
			}
		}
		type diff struct {
			j int
			r float64
		}
		var ds, db []diff
		for j := 0; j < k; j++ {
			share[j] /= n
			bout[j] /= n
			if meanShare[j] > 0 {
				ds = append(ds, diff{j, share[j]/meanShare[j] - 1})
			}
			if meanBout[j] > 0 {
				db = append(db, diff{j, bout[j]/meanBout[j] - 1})
			}
		}
		sort.SliceStable(ds, func(a, b int) bool { return ds[a].r > ds[b].r })
		sort.SliceStable(db, func(a, b int) bool { return db[a].r > db[b].r })
		var parts []string
		if len(ds) > 0 && ds[0].r > 0.1 {
			parts = append(parts, fmt.Sprintf("more time in S%d", ds[0].j+1))
		}
		if len(ds) > 0 && ds[len(ds)-1].r < -0.1 {
			parts = append(parts, fmt.Sprintf("less in S%d", ds[len(ds)-1].j+1))
		}
		if len(db) > 0 && db[0].r > 0.1 {
			parts = append(parts, fmt.Sprintf("longer bouts of S%d", db[0].j+1))
		}
		if len(parts) == 0 {
			parts = append(parts, "close to the cohort's average mixture")
		}
		lines[c] = fmt.Sprintf("%d participants; %s", int(n), strings.Join(parts, ", "))
	}
	return names, lines
}

// percentile is the p-quantile of xs by linear interpolation (NaN values ignored).
func percentile(xs []float64, p float64) float64 {
	s := make([]float64, 0, len(xs))
	for _, v := range xs {
		if !math.IsNaN(v) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return math.NaN()
	}
	sort.Float64s(s)
	h := p * float64(len(s)-1)
	lo := int(h)
	if lo+1 >= len(s) {
		return s[len(s)-1]
	}
	return s[lo] + (h-float64(lo))*(s[lo+1]-s[lo])
}
