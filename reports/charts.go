package reports

import (
	"fmt"
	"math"
	"sort"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort/group"
)

// SheetCharts holds the pictures and the small tables they are drawn from.
const SheetCharts = "At a glance"

// palette is this tool's series colours: teal, amber, slate blue, brick, olive, mauve, sky,
// mustard, umber, sage; repeated past ten.
var palette = []string{"1F7A7A", "D08C2E", "5B6C8F", "A4493D", "7A9A3A", "8E6C9E", "3E9BC2", "C9A227", "6B4E3D", "4F8F6F"}

func colour(i int) string { return palette[i%len(palette)] }

// maxSilhouetteBars bounds the members drawn in the silhouette chart; past it, members are taken
// at even steps of rank within each group, and the chart says so.
const maxSilhouetteBars = 1500

// chartsSheet writes the numbers behind the charts in columns A–G and places the charts to their
// right, live and editable. The dendrogram is a picture.
func chartsSheet(f *excelize.File, st *styles, r *Result) error {
	name := SheetCharts
	if _, err := f.NewSheet(name); err != nil {
		return err
	}
	for c, w := range []float64{22, 12, 16, 16, 12, 12, 12, 12, 12, 12, 12, 12} {
		col, _ := excelize.ColumnNumberToName(c + 1)
		if err := f.SetColWidth(name, col, col, w); err != nil {
			return err
		}
	}
	w := &cellWriter{f: f, sheet: name}
	w.text(1, 1, "The numbers behind the charts", st.title)
	w.text(1, 2, "Charts are to the right; each table below feeds the chart beside it. Groups describe movement statistically, not diagnoses.", st.note)
	w.merge(2)
	c := &chartPage{f: f, st: st, r: r, w: w, name: name}
	row := 4
	for _, section := range []func(int) (int, error){c.mixtures, c.stateProfiles, c.sizes, c.statesChoice, c.groupsChoice, c.dendrogram, c.silhouettes} {
		var err error
		if row, err = section(row); err != nil {
			return err
		}
	}
	return w.err
}

// chartPage is the At a glance sheet as it is written: the workbook, the result and the cells.
type chartPage struct {
	f    *excelize.File
	st   *styles
	r    *Result
	w    *cellWriter
	name string
}

// mixtures is each group's mixture over the states, as a stacked bar.
func (c *chartPage) mixtures(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	k := r.States.K
	g := len(r.GroupNames)
	// 1. Each group's mixture over the states (stacked bar).
	top := row
	w.text(1, row, "Group", st.header)
	labels := stateLabels(r)
	for s := 0; s < k; s++ {
		w.text(2+s, row, labels[s], st.headerNum)
	}
	shares, _, _ := r.GroupMeans()
	for i := 0; i < g; i++ {
		w.text(1, row+1+i, r.GroupNames[i], st.text)
		for s := 0; s < k; s++ {
			w.num(2+s, row+1+i, shares[i][s], st.pct)
		}
	}
	var series []excelize.ChartSeries
	for s := 0; s < k; s++ {
		series = append(series, excelize.ChartSeries{
			Name:       ref(name, 2+s, top, 2+s, top),
			Categories: ref(name, 1, top+1, 1, top+g),
			Values:     ref(name, 2+s, top+1, 2+s, top+g),
			Fill:       excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(s)}},
		})
	}
	if err := f.AddChart(name, fmt.Sprintf("I%d", row), chart(excelize.BarPercentStacked, "Each group's time in each movement state", series, "group", "share of windows")); err != nil {
		return 0, err
	}
	row = max(row+g+3, top+22)
	return row, w.err
}

// stateProfiles is each state's profile over the features that set the states apart.
func (c *chartPage) stateProfiles(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	k := r.States.K
	// 2. Each state's profile over the variables that set states apart (standardized means).
	top := row
	vars := stateVariables(r, 12)
	w.text(1, row, "Feature (z vs cohort)", st.header)
	labels := stateLabels(r)
	for s := 0; s < k; s++ {
		w.text(2+s, row, labels[s], st.headerNum)
	}
	for i, j := range vars {
		w.text(1, row+1+i, r.Features[j], st.text)
		for s := 0; s < k; s++ {
			w.num(2+s, row+1+i, effect(r, s, j), st.dec2)
		}
	}
	var series []excelize.ChartSeries
	for s := 0; s < k; s++ {
		series = append(series, excelize.ChartSeries{
			Name: ref(name, 2+s, top, 2+s, top), Categories: ref(name, 1, top+1, 1, top+len(vars)), Values: ref(name, 2+s, top+1, 2+s, top+len(vars)),
			Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(s)}},
		})
	}
	// Bars across, so that each feature's name reads whole beside its bars.
	stateChart := chart(excelize.Bar, statesChartTitle(len(vars), len(r.Features)), series, "feature", "s.d. from the cohort mean")
	stateChart.Dimension.Height = uint(min(560, 140+len(vars)*(8+4*k)))
	if err := f.AddChart(name, fmt.Sprintf("I%d", top), stateChart); err != nil {
		return 0, err
	}
	row = max(row+len(vars)+3, top+int(stateChart.Dimension.Height)/20+2) // rows of 20 px: the chart ends above the next section
	return row, w.err
}

// sizes is the groups' sizes and mean silhouettes.
func (c *chartPage) sizes(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	g := len(r.GroupNames)
	// 3. Group sizes and mean silhouettes. Printed, two charts go on a page and a page break
	// comes before every other section, so that no chart is cut in two.
	_, sizes, sils := r.GroupMeans()
	top := row
	w.pageBreak(row)
	w.text(1, row, "Group", st.header)
	w.text(2, row, "members", st.headerNum)
	w.text(3, row, "mean silhouette", st.headerNum)
	for i := 0; i < g; i++ {
		w.text(1, row+1+i, r.GroupNames[i], st.text)
		w.num(2, row+1+i, float64(sizes[i]), st.integer)
		w.num(3, row+1+i, sils[i], st.dec3)
	}
	sizeChart := chart(excelize.Col, "Group sizes", []excelize.ChartSeries{{Name: ref(name, 2, top, 2, top), Categories: ref(name, 1, top+1, 1, top+g), Values: ref(name, 2, top+1, 2, top+g),
		Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(0)}}}}, "group", "participants")
	zero := 0.0
	sizeChart.YAxis.Minimum = &zero // bars compared by their lengths start at zero
	if err := f.AddChart(name, fmt.Sprintf("I%d", top), narrow(sizeChart, false)); err != nil {
		return 0, err
	}
	row = max(row+g+3, top+18)
	return row, w.err
}

// statesChoice is the choice of the number of states, where a range was scored.
func (c *chartPage) statesChoice(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	// 5. The choice of the number of states and of groups.
	// Shown when a range of numbers was scored (the Calinski–Harabasz rule); the valley rule's
	// merges are on the Choosing k sheet.
	top := row
	nc := len(r.States.Candidates)
	if nc > 0 {
		w.text(1, row, "States", st.headerNum)
		w.text(2, row, "Calinski–Harabasz", st.headerNum)
		w.text(3, row, "silhouette", st.headerNum)
		w.text(4, row, "Davies–Bouldin", st.headerNum)
	}
	for i, c := range r.States.Candidates {
		w.num(1, row+1+i, float64(c.K), st.integer)
		w.num(2, row+1+i, c.CalinskiHarabasz, st.dec2)
		w.num(3, row+1+i, c.Silhouette, st.dec3)
		w.num(4, row+1+i, c.DaviesBouldin, st.dec3)
	}
	if nc > 1 {
		ch := chart(excelize.Line, "Choosing the number of states: Calinski–Harabasz (larger is better)", []excelize.ChartSeries{
			lineSeries(name, 2, top, nc, 0)}, "number of states", "index")
		if err := f.AddChart(name, fmt.Sprintf("I%d", top), narrow(ch, false)); err != nil {
			return 0, err
		}
		ch2 := chart(excelize.Line, "Silhouette (larger is better) and Davies–Bouldin (smaller is better)", []excelize.ChartSeries{
			lineSeries(name, 3, top, nc, 1), lineSeries(name, 4, top, nc, 2)}, "number of states", "index")
		if err := f.AddChart(name, fmt.Sprintf("P%d", top), narrow(ch2, true)); err != nil {
			return 0, err
		}
	}
	if nc > 0 {
		row = max(row+nc+3, top+18)
	}
	return row, w.err
}

// groupsChoice is the choice of the number of groups by the method's criteria.
func (c *chartPage) groupsChoice(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	top := row
	w.pageBreak(row)
	ng := len(r.Grouping.Scores)
	w.text(1, row, "Groups", st.headerNum)
	if r.Grouping.Method == group.Mixture {
		// The mixture's number of groups is chosen by its criteria: the smaller, the better.
		w.text(2, row, "BIC", st.headerNum)
		w.text(3, row, "ICL", st.headerNum)
		for i, s := range r.Grouping.Scores {
			w.num(1, row+1+i, float64(s.K), st.integer)
			w.num(2, row+1+i, s.BIC, st.integer)
			w.num(3, row+1+i, s.ICL, st.integer)
		}
		if ng > 1 {
			ch := chart(excelize.Line, "Choosing the number of groups: BIC and ICL of the mixture (smaller is better)", []excelize.ChartSeries{
				lineSeries(name, 2, top, ng, 0), lineSeries(name, 3, top, ng, 1)}, "number of groups", "criterion")
			if err := f.AddChart(name, fmt.Sprintf("I%d", top), ch); err != nil {
				return 0, err
			}
		}
	} else {
		w.text(2, row, "gap", st.headerNum)
		w.text(3, row, "stability", st.headerNum)
		w.text(4, row, "silhouette", st.headerNum)
		for i, s := range r.Grouping.Scores {
			w.num(1, row+1+i, float64(s.K), st.integer)
			if ng > 1 {
				w.num(2, row+1+i, s.Gap, st.dec3)
				w.num(3, row+1+i, s.Stability, st.dec3)
			}
			w.num(4, row+1+i, s.Silhouette, st.dec3)
		}
		if ng > 1 {
			ch := chart(excelize.Line, "Choosing the number of groups: gap statistic, bootstrap stability, silhouette", []excelize.ChartSeries{
				lineSeries(name, 2, top, ng, 0), lineSeries(name, 3, top, ng, 1), lineSeries(name, 4, top, ng, 2)}, "number of groups", "value")
			if err := f.AddChart(name, fmt.Sprintf("I%d", top), ch); err != nil {
				return 0, err
			}
		}
	}
	row = max(row+ng+3, top+22)
	return row, w.err
}

// dendrogram is the dendrogram, as a picture.
func (c *chartPage) dendrogram(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	// 5b. The dendrogram, as a picture.
	png, caption, err := Dendrogram(r)
	if err != nil {
		return 0, err
	}
	if png != nil {
		w.text(1, row, caption, st.note)
		w.merge(row)
		if err := f.AddPictureFromBytes(name, fmt.Sprintf("I%d", row), &excelize.Picture{Extension: ".png", File: png,
			Format: &excelize.GraphicOptions{AltText: caption, ScaleX: 0.8, ScaleY: 0.8}}); err != nil {
			return 0, err
		}
		row += 24
	}
	w.pageBreak(row)
	return row, w.err
}

// silhouettes is the members' silhouettes, sorted within each group, one line per group.
func (c *chartPage) silhouettes(row int) (int, error) {
	f, st, r, w, name := c.f, c.st, c.r, c.w, c.name
	g := len(r.GroupNames)
	// 6. Members' silhouettes, sorted within each group (one series per group).
	top := row
	members := silhouetteBars(r)
	sampled := ""
	if len(r.Units) > maxSilhouetteBars {
		sampled = fmt.Sprintf(" (%d of %d members, at even steps of rank)", len(members), len(r.Units))
	}
	// One column per group, members best first; the rows are ranks within the group, so the
	// table is as long as the largest group, and the chart draws one line per group.
	byGroup := make([][]float64, g)
	for _, m := range members {
		byGroup[m.group] = append(byGroup[m.group], m.sil)
	}
	longest := 0
	for _, b := range byGroup {
		longest = max(longest, len(b))
	}
	w.text(1, row, "Rank in group", st.headerNum)
	for i := 0; i < g; i++ {
		w.text(2+i, row, r.GroupNames[i], st.headerNum)
	}
	for rank := 0; rank < longest; rank++ {
		w.num(1, row+1+rank, float64(rank+1), st.integer)
		for i, b := range byGroup {
			if rank < len(b) {
				w.num(2+i, row+1+rank, b[rank], st.dec3)
			}
		}
	}
	var series []excelize.ChartSeries
	for i := 0; i < g; i++ {
		series = append(series, excelize.ChartSeries{Name: ref(name, 2+i, top, 2+i, top), Categories: ref(name, 1, top+1, 1, top+longest),
			Values: ref(name, 2+i, top+1, 2+i, top+longest), Line: excelize.LineOptions{Type: excelize.LineSolid, Width: 2.25},
			Marker: excelize.ChartMarker{Symbol: "none"}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(i)}}})
	}
	// A scatter of lines: the ranks are numbers on the axis, labelled at round steps, where a
	// line chart's categories stacked one label per member.
	silChart := chart(excelize.Scatter, "Members' silhouettes, best first, by group"+sampled, series, "rank of the member in its group", "silhouette")
	if err := f.AddChart(name, fmt.Sprintf("I%d", top), silChart); err != nil {
		return 0, err
	}
	return row, w.err
}

func lineSeries(sheet string, col, top, n, c int) excelize.ChartSeries {
	return excelize.ChartSeries{Name: ref(sheet, col, top, col, top), Categories: ref(sheet, 1, top+1, 1, top+n), Values: ref(sheet, col, top+1, col, top+n),
		Line: excelize.LineOptions{Width: 2.25}, Marker: excelize.ChartMarker{Symbol: "circle", Size: 6, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(c)}}},
		Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(c)}}}
}

// chart is a chart in the workbook's one font (Calibri, as the cells), with dark tick labels
// and a title on both axes. Bar charts (horizontal) list their categories from the top down,
// in the order of the table beside them; column charts put their category labels below the
// plot, clear of bars that go below zero.
func chart(kind excelize.ChartType, title string, series []excelize.ChartSeries, xTitle, yTitle string) *excelize.Chart {
	tick := excelize.Font{Family: "Calibri", Size: 10, Color: colInk}
	axisTitle := func(s string) excelize.ChartTitle {
		return excelize.ChartTitle{Paragraph: []excelize.RichTextRun{{Text: s, Font: &excelize.Font{Family: "Calibri", Size: 10, Color: colInk}}}}
	}
	ch := &excelize.Chart{
		Type:      kind,
		Series:    series,
		Title:     excelize.ChartTitle{Paragraph: []excelize.RichTextRun{{Text: title, Font: &excelize.Font{Family: "Calibri", Bold: true, Size: 12, Color: colInk}}}},
		Legend:    excelize.ChartLegend{Position: "bottom"},
		Dimension: excelize.ChartDimension{Width: 760, Height: 380},
		XAxis:     excelize.ChartAxis{Font: tick, Title: axisTitle(xTitle), TickLabelPosition: excelize.ChartTickLabelLow},
		YAxis:     excelize.ChartAxis{MajorGridLines: true, Font: tick, Title: axisTitle(yTitle)},
		PlotArea:  excelize.ChartPlotArea{ShowVal: false},
	}
	switch kind {
	case excelize.Bar, excelize.BarStacked, excelize.BarPercentStacked:
		ch.XAxis.ReverseOrder = true
	}
	return ch
}

// narrow makes a chart half width, for two side by side; without legend for a single series.
func narrow(ch *excelize.Chart, legend bool) *excelize.Chart {
	ch.Dimension = excelize.ChartDimension{Width: 420, Height: 300}
	if !legend {
		ch.Legend.Position = "none"
	}
	return ch
}

// ref is an absolute range on a sheet, as charts need it.
func ref(sheet string, c1, r1, c2, r2 int) string {
	a, _ := excelize.CoordinatesToCellName(c1, r1, true)
	b, _ := excelize.CoordinatesToCellName(c2, r2, true)
	return fmt.Sprintf("'%s'!%s:%s", sheet, a, b)
}

type cellWriter struct {
	f     *excelize.File
	sheet string
	err   error
}

func (w *cellWriter) text(col, row int, s string, style int) {
	w.set(col, row, s, style)
}

// merge joins columns A–G of a row, for a note that needs the width, and makes the row tall.
func (w *cellWriter) merge(row int) {
	if w.err == nil {
		w.err = w.f.MergeCell(w.sheet, fmt.Sprintf("A%d", row), fmt.Sprintf("G%d", row))
	}
	if w.err == nil {
		w.err = w.f.SetRowHeight(w.sheet, row, 45)
	}
}

// pageBreak starts a printed page at this row.
func (w *cellWriter) pageBreak(row int) {
	if w.err == nil {
		w.err = w.f.InsertPageBreak(w.sheet, fmt.Sprintf("A%d", row))
	}
}

func (w *cellWriter) num(col, row int, x float64, style int) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return // not computed: left empty
	}
	w.set(col, row, x, style)
}

func (w *cellWriter) set(col, row int, val any, style int) {
	if w.err != nil {
		return
	}
	cell, _ := excelize.CoordinatesToCellName(col, row)
	if s, ok := val.(string); ok {
		w.err = w.f.SetCellStr(w.sheet, cell, s) // always a text cell, never a formula
	} else {
		w.err = w.f.SetCellValue(w.sheet, cell, val)
	}
	if w.err == nil && style != 0 {
		w.err = w.f.SetCellStyle(w.sheet, cell, cell, style)
	}
}

// stateVariables are the features that drive the states most, at most n, in feature order.
func stateVariables(r *Result, n int) []int {
	score := make([]float64, len(r.Features))
	for _, d := range r.StateDesc {
		for _, dr := range d.Drivers {
			score[dr.Feature] = math.Max(score[dr.Feature], math.Abs(dr.Effect))
		}
	}
	idx := make([]int, len(score))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return score[idx[a]] > score[idx[b]] })
	idx = idx[:min(n, len(idx))]
	sort.Ints(idx)
	return idx
}

func effect(r *Result, s, j int) float64 {
	for _, dr := range r.StateDesc[s].Drivers {
		if dr.Feature == j {
			return dr.Effect
		}
	}
	return math.NaN()
}

type silBar struct {
	group int
	sil   float64
}

// silhouetteBars orders members by group, then by silhouette (largest first); past
// maxSilhouetteBars, each group keeps members at even steps of rank, in proportion to its size.
func silhouetteBars(r *Result) []silBar {
	g := len(r.GroupNames)
	by := make([][]float64, g)
	for _, u := range r.Units {
		if !math.IsNaN(u.Silhouette) {
			by[u.Group] = append(by[u.Group], u.Silhouette)
		}
	}
	total := 0
	for _, b := range by {
		total += len(b)
	}
	var out []silBar
	for i, b := range by {
		sort.Sort(sort.Reverse(sort.Float64Slice(b)))
		keep := len(b)
		if total > maxSilhouetteBars {
			keep = max(1, len(b)*maxSilhouetteBars/total)
		}
		for q := 0; q < keep; q++ {
			out = append(out, silBar{i, b[q*len(b)/keep]})
		}
	}
	return out
}

// statesChartTitle says which features the state chart shows.
func statesChartTitle(shown, all int) string {
	if shown == all {
		return "What each movement state looks like: every feature, standardized"
	}
	return fmt.Sprintf("What each movement state looks like: the %d of %d features that set the states apart most, standardized", shown, all)
}
