package job

import (
	"gonum.org/v1/gonum/mat"

	"github.com/cohortmix/cohortmix/cohort"
	"github.com/cohortmix/cohortmix/cohort/modelfile"
)

// NewModel gathers the frozen fits of a result into a model file (modelfile.Model); featureMeds
// are each feature's 1st percentile, median and 99th percentile of participant medians.
func NewModel(r *Result, read cohort.ReadOptions, featureMeds [][3]float64) *modelfile.Model {
	n := r.Norm
	m := &modelfile.Model{Format: modelfile.Format, Version: modelfile.Version, Created: r.Created.UTC(), Tool: r.Tool + " " + r.Version,
		Features: r.Features, Settings: r.Settings, FeatureMeds: featureMeds,
		Read: modelfile.ReadSettingsOf(read),
		Normalize: modelfile.Norm{Logged: n.Logged, LogShift: n.LogShift, Axes: n.Axes, Turned: n.Turned, Within: n.Within.String(), Touched: n.Touched, TouchedBy: n.TouchedBy, RestShare: n.RestShare,
			QuietScore: n.QuietScore, QuietMid: n.QuietMid, QuietScale: n.QuietScale, Scale: n.ScaleKind.String(),
			Center: n.Center, Spread: n.Spread, ICC: n.ICC},
		States: modelfile.States{K: r.States.K, Names: r.StateNames, Centroids: rows(r.States.Centroids), Means: stateMeans(r),
			Posture: r.States.Posture, Offsets: r.States.Offsets, Prior: r.States.Prior, Rounds: r.States.Rounds, PersonPrior: r.States.PersonPrior, Calibrate: r.States.Calibrate, Gravity: r.States.Gravity},
		Grouping: modelfile.Grouping{Method: r.Grouping.Method.String(), K: r.Grouping.K, Names: r.GroupNames, Centroids: r.Grouping.Centroids, Atypical: r.AtypicalCut},
	}
	m.Grouping.Shares, _, _ = r.GroupMeans()
	m.Read.FeaturesStep = MadeBy(r.Files)
	if mx := r.Grouping.Mixture; mx != nil {
		m.Grouping.Mixture = &modelfile.Mixture{Weights: mx.Weights, Alpha: mx.Alpha, Blocks: mx.Blocks}
	}
	if n.PCA != nil {
		m.Normalize.PCAMean = n.PCA.Mean
		m.Normalize.PCA = rows(n.PCA.Components)
	}
	for _, u := range r.Units {
		m.Members = append(m.Members, modelfile.Member{ID: u.ID, Wave: u.Wave, Group: r.GroupNames[u.Group], Distance: u.Distance})
	}
	return m
}

func stateMeans(r *Result) [][]float64 {
	out := make([][]float64, len(r.StateDesc))
	for s, d := range r.StateDesc {
		out[s] = d.Mean
	}
	return out
}

func rows(m *mat.Dense) [][]float64 {
	r, _ := m.Dims()
	out := make([][]float64, r)
	for i := range out {
		out[i] = append([]float64(nil), m.RawRowView(i)...)
	}
	return out
}
