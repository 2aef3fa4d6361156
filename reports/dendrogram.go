package reports

import (
	"bytes"
	"fmt"
	"image/color"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// maxDendrogramLeaves is the most participants drawn one by one; past it the groups are drawn.
const maxDendrogramLeaves = 150

// Dendrogram draws the participants' tree (Ward, up to maxDendrogramLeaves participants, leaves
// marked in their group's colour) or else the tree of the group centres, as a PNG, with a caption.
func Dendrogram(r *Result) ([]byte, string, error) {
	g := r.Grouping
	tree, leafGroup, caption := g.Tree, func(i int) int { return r.Units[i].Group }, ""
	if tree != nil && tree.N <= maxDendrogramLeaves {
		caption = fmt.Sprintf("Dendrogram of the %d participants (%s); each leaf is marked in its group's colour.", tree.N, g.Method)
	} else {
		tree, leafGroup = g.CentroidTree, func(i int) int { return i }
		caption = fmt.Sprintf("Dendrogram of the %d group centres (average linkage in the grouping space); participants are too many, or the method has no tree, to draw one by one.", g.K)
	}
	if tree == nil {
		return nil, "", nil // one group: there is nothing to join
	}
	p := plot.New()
	p.Title.Text = "How participants join into groups"
	p.Y.Label.Text = "merge height"
	p.X.Tick.Marker = plot.ConstantTicks(nil)
	ink := color.RGBA{0x23, 0x31, 0x3f, 0xff}
	order := tree.Order()
	x := make([]float64, tree.N+len(tree.Merges))
	y := make([]float64, len(x))
	for pos, leaf := range order {
		x[leaf] = float64(pos)
	}
	for s, m := range tree.Merges {
		id := tree.N + s
		x[id] = (x[m.A] + x[m.B]) / 2
		y[id] = m.Height
		l, err := plotter.NewLine(plotter.XYs{{X: x[m.A], Y: y[m.A]}, {X: x[m.A], Y: m.Height}, {X: x[m.B], Y: m.Height}, {X: x[m.B], Y: y[m.B]}})
		if err != nil {
			return nil, "", err
		}
		l.Color = ink
		l.Width = vg.Points(0.8)
		p.Add(l)
	}
	byGroup := map[int]plotter.XYs{}
	for leaf := 0; leaf < tree.N; leaf++ {
		gr := leafGroup(leaf)
		byGroup[gr] = append(byGroup[gr], plotter.XY{X: x[leaf], Y: 0})
	}
	for gr := 0; gr < g.K; gr++ {
		pts, ok := byGroup[gr]
		if !ok {
			continue
		}
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return nil, "", err
		}
		c, _ := strconv.ParseUint(colour(gr), 16, 32)
		sc.GlyphStyle = draw.GlyphStyle{Color: color.RGBA{uint8(c >> 16), uint8(c >> 8), uint8(c), 0xff}, Radius: vg.Points(3.5), Shape: draw.CircleGlyph{}}
		p.Add(sc)
		p.Legend.Add(r.GroupNames[gr], sc)
	}
	p.Legend.Top = true
	sansSerif(p)
	var buf bytes.Buffer
	wt, err := p.WriterTo(8*vg.Inch, 4.5*vg.Inch, "png")
	if err != nil {
		return nil, "", err
	}
	if _, err := wt.WriteTo(&buf); err != nil {
		return nil, "", err
	}
	return buf.Bytes(), caption, nil
}

// sansSerif sets every text of the plot in Liberation Sans (bundled with gonum's plot), the sans
// serif nearest the workbook's Calibri, in the workbook's ink colour.
func sansSerif(p *plot.Plot) {
	ink := color.RGBA{0x23, 0x31, 0x3f, 0xff}
	for _, ts := range []*text.Style{&p.Title.TextStyle, &p.X.Label.TextStyle, &p.Y.Label.TextStyle, &p.X.Tick.Label, &p.Y.Tick.Label, &p.Legend.TextStyle} {
		ts.Font.Variant = "Sans"
		ts.Color = ink
	}
}
