package reports

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"strconv"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"

	"github.com/cohortmix/cohortmix/cluster"
)

// maxDendrogramLeaves is the most participants drawn one by one; past it the groups are drawn.
const maxDendrogramLeaves = 150

// The dendrogram's picture: its size in pixels and its margins, inside which the tree is drawn.
const (
	dendroW, dendroH              = 768, 432
	dendroLeft, dendroRight       = 70, 130 // the legend stands in the right margin
	dendroTop, dendroBottom       = 56, 24
	dendroLine, dendroLeaf        = 2, 4.5
	dendroFontPts, dendroTitlePts = 13, 17
)

// ink is the workbook's text colour, in which the tree and the axis are drawn.
var ink = color.RGBA{0x23, 0x31, 0x3f, 0xff}

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
	face, err := dendroFace(dendroFontPts)
	if err != nil {
		return nil, "", err
	}
	titleFace, err := dendroFace(dendroTitlePts)
	if err != nil {
		return nil, "", err
	}
	img := image.NewRGBA(image.Rect(0, 0, dendroW, dendroH))
	fill(img, img.Bounds(), color.RGBA{0xff, 0xff, 0xff, 0xff})
	c := canvas{img: img, face: titleFace}
	c.text("How participants join into groups", dendroW/2, 26, 0.5)
	c.face = face
	top := dendrogramAxis(&c, tree)
	x, y := leafPlaces(tree), make([]float64, tree.N+len(tree.Merges))
	px := func(v float64) int { // a leaf position to a pixel column
		span := float64(dendroW - dendroLeft - dendroRight - 20)
		return dendroLeft + 10 + int(math.Round(v/math.Max(1, float64(tree.N-1))*span))
	}
	py := func(h float64) int {
		return dendroH - dendroBottom - int(math.Round(h/top*float64(dendroH-dendroTop-dendroBottom)))
	}
	for s, m := range tree.Merges {
		id := tree.N + s
		x[id], y[id] = (x[m.A]+x[m.B])/2, m.Height
		xa, xb, h := px(x[m.A]), px(x[m.B]), py(m.Height)
		c.vline(xa, py(y[m.A]), h)
		c.vline(xb, py(y[m.B]), h)
		c.hline(xa, xb, h)
	}
	for leaf := 0; leaf < tree.N; leaf++ {
		c.disc(px(x[leaf]), py(0), dendroLeaf, groupColour(leafGroup(leaf)))
	}
	for gr, name := range r.GroupNames { // the legend
		ly := dendroTop + 8 + 20*gr
		c.disc(dendroW-dendroRight+22, ly, dendroLeaf, groupColour(gr))
		c.text(name, dendroW-dendroRight+34, ly+5, 0)
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		return nil, "", err
	}
	return buf.Bytes(), caption, nil
}

// leafPlaces puts the leaves at 0, 1, … in the tree's order, so that no branch crosses another.
func leafPlaces(tree *cluster.Tree) []float64 {
	x := make([]float64, tree.N+len(tree.Merges))
	for pos, leaf := range tree.Order() {
		x[leaf] = float64(pos)
	}
	return x
}

// dendrogramAxis draws the axis of merge heights at the left, with ticks at round values
// (1, 2 or 5 times a power of ten), and returns the height at the top of the picture.
func dendrogramAxis(c *canvas, tree *cluster.Tree) float64 {
	most := 0.0
	for _, m := range tree.Merges {
		most = math.Max(most, m.Height)
	}
	if !(most > 0) {
		most = 1
	}
	step := math.Pow(10, math.Floor(math.Log10(most/5)))
	for _, f := range []float64{1, 2, 5, 10} {
		if most/(f*step) <= 6 {
			step *= f
			break
		}
	}
	top := math.Ceil(most/step) * step
	bottom := dendroH - dendroBottom
	c.vline(dendroLeft, bottom, dendroTop)
	c.text("merge height", dendroLeft-8, dendroTop-14, 0)
	for v := 0.0; v <= top+step/2; v += step {
		yy := bottom - int(math.Round(v/top*float64(dendroH-dendroTop-dendroBottom)))
		c.hline(dendroLeft-6, dendroLeft, yy)
		c.text(strconv.FormatFloat(v, 'g', 4, 64), dendroLeft-10, yy+5, 1)
	}
	return top
}

// groupColour is group g's colour of the palette.
func groupColour(g int) color.RGBA {
	v, _ := strconv.ParseUint(colour(g), 16, 32)
	return color.RGBA{uint8(v >> 16), uint8(v >> 8), uint8(v), 0xff}
}

// canvas draws lines, discs and text on an image, in ink unless told otherwise.
type canvas struct {
	img  *image.RGBA
	face font.Face
}

// hline draws a horizontal line from column x0 to x1 (either order) at row y.
func (c *canvas) hline(x0, x1, y int) {
	fill(c.img, image.Rect(min(x0, x1)-dendroLine/2, y-dendroLine/2, max(x0, x1)+dendroLine-dendroLine/2, y+dendroLine-dendroLine/2), ink)
}

// vline draws a vertical line at column x from row y0 to y1 (either order).
func (c *canvas) vline(x, y0, y1 int) {
	fill(c.img, image.Rect(x-dendroLine/2, min(y0, y1)-dendroLine/2, x+dendroLine-dendroLine/2, max(y0, y1)+dendroLine-dendroLine/2), ink)
}

// disc draws a filled disc of radius r at (x, y), its edge smoothed by the share of each pixel
// it covers.
func (c *canvas) disc(x, y int, r float64, col color.RGBA) {
	n := int(math.Ceil(r)) + 1
	for dy := -n; dy <= n; dy++ {
		for dx := -n; dx <= n; dx++ {
			cover := math.Min(1, math.Max(0, r+0.5-math.Hypot(float64(dx), float64(dy))))
			if cover > 0 {
				blend(c.img, x+dx, y+dy, col, cover)
			}
		}
	}
}

// text writes s with its baseline at row y: starting at column x (align 0), centred on it (0.5)
// or ending at it (1).
func (c *canvas) text(s string, x, y int, align float64) {
	d := font.Drawer{Dst: c.img, Src: image.NewUniform(ink), Face: c.face}
	width := d.MeasureString(s).Round()
	d.Dot = fixed.P(x-int(math.Round(align*float64(width))), y)
	d.DrawString(s)
}

// fill paints a rectangle in one colour.
func fill(img *image.RGBA, r image.Rectangle, col color.RGBA) {
	r = r.Intersect(img.Bounds())
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			img.SetRGBA(x, y, col)
		}
	}
}

// blend lays col over the pixel at (x, y) with the given opacity.
func blend(img *image.RGBA, x, y int, col color.RGBA, alpha float64) {
	if !(image.Point{X: x, Y: y}).In(img.Bounds()) {
		return
	}
	under := img.RGBAAt(x, y)
	mix := func(a, b uint8) uint8 { return uint8(math.Round(float64(a)*(1-alpha) + float64(b)*alpha)) }
	img.SetRGBA(x, y, color.RGBA{mix(under.R, col.R), mix(under.G, col.G), mix(under.B, col.B), 0xff})
}

// dendroFace is the Go Regular typeface (the Go project's own, bundled with golang.org/x/image)
// at a size in points (at 72 per inch: pixels).
func dendroFace(points float64) (font.Face, error) {
	f, err := goRegular()
	if err != nil {
		return nil, err
	}
	return opentype.NewFace(f, &opentype.FaceOptions{Size: points, DPI: 72, Hinting: font.HintingFull})
}

// goRegular is the parsed Go Regular typeface, parsed once.
var goRegular = sync.OnceValues(func() (*opentype.Font, error) { return opentype.Parse(goregular.TTF) })
