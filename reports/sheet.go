package reports

import (
	"fmt"
	"math"
	"strings"

	"github.com/xuri/excelize/v2"
)

// Cell styles of the workbook, made once per file.
type styles struct {
	title, header, headerNum, text, wrap, integer, dec1, dec2, dec3, dec4, pct, pvalue, note, warn int

	// fixed[d] shows d decimals with thousands separators, d = 0…6 (see sig3).
	fixed []int
	// headers is each sheet's column-header row, repeated on every printed page.
	headers map[string]int
	footer  string // what the data are, on the right of every printed page's footer
}

// pageSetup makes a sheet print, or export to PDF, at the page width in landscape, with a
// footer of the sheet's name, the page and what the data are. A streamed sheet gets it before
// its stream starts, which keeps it.
func (st *styles) pageSetup(f *excelize.File, name string) error {
	landscape, one, free, fit := "landscape", 1, 0, true
	if err := f.SetPageLayout(name, &excelize.PageLayoutOptions{Orientation: &landscape, FitToWidth: &one, FitToHeight: &free}); err != nil {
		return err
	}
	if err := f.SetSheetProps(name, &excelize.SheetPropsOptions{FitToPage: &fit}); err != nil {
		return err
	}
	return f.SetHeaderFooter(name, &excelize.HeaderFooterOptions{OddFooter: "&L&8&A&C&8Page &P of &N&R&8" + st.footer})
}

// Palette: slate ink on warm paper, with a teal accent; chosen for this tool.
const (
	colInk     = "23313F"
	colAccent  = "1F7A7A"
	colHeader  = "DDEBE8"
	colWarn    = "B5482F"
	colNoteBkg = "FBF6EC"
)

func newStyles(f *excelize.File) (*styles, error) {
	s := &styles{headers: map[string]int{}}
	mk := func(st *excelize.Style) int {
		id, err := f.NewStyle(st)
		if err != nil {
			panic(err) // only fixed, valid styles are made here
		}
		return id
	}
	font := func(bold bool, size float64, color string) *excelize.Font {
		return &excelize.Font{Bold: bold, Size: size, Color: color, Family: "Calibri"}
	}
	numFmt := func(code string) *string { return &code }
	s.title = mk(&excelize.Style{Font: font(true, 15, colAccent)})
	s.header = mk(&excelize.Style{Font: font(true, 11, colInk), Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colHeader}},
		Border: []excelize.Border{{Type: "bottom", Color: colAccent, Style: 2}}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}})
	// Every cell sits at the top of its row, so that a label reads beside the first line of a
	// wrapped text; text starts one indent in, so that it never touches a number on its left;
	// numbers are right-aligned, and so are their columns' headers (headerNum).
	top := &excelize.Alignment{Vertical: "top"}
	s.headerNum = mk(&excelize.Style{Font: font(true, 11, colInk), Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colHeader}},
		Border: []excelize.Border{{Type: "bottom", Color: colAccent, Style: 2}}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top", Horizontal: "right"}})
	s.text = mk(&excelize.Style{Font: font(false, 11, colInk), Alignment: &excelize.Alignment{Vertical: "top", Indent: 1}})
	s.wrap = mk(&excelize.Style{Font: font(false, 11, colInk), Alignment: &excelize.Alignment{WrapText: true, Vertical: "top", Indent: 1}})
	s.integer = mk(&excelize.Style{Font: font(false, 11, colInk), NumFmt: 3, Alignment: top}) // #,##0
	s.dec1 = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt("0.0"), Alignment: top})
	s.dec2 = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt("0.00"), Alignment: top})
	s.dec3 = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt("0.000"), Alignment: top})
	s.dec4 = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt("0.0000"), Alignment: top})
	s.pct = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt("0.0%"), Alignment: top})
	// Below 0.001 a p- or q-value reads "<0.001"; the cell keeps the exact value for analysts.
	s.pvalue = mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt(`[<0.001]"<0.001";0.000`), Alignment: top})
	for d := 0; d <= 6; d++ {
		code := "#,##0"
		if d > 0 {
			code += "." + strings.Repeat("0", d)
		}
		s.fixed = append(s.fixed, mk(&excelize.Style{Font: font(false, 11, colInk), CustomNumFmt: numFmt(code), Alignment: top}))
	}
	s.note = mk(&excelize.Style{Font: font(false, 11, colInk), Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colNoteBkg}}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}})
	s.warn = mk(&excelize.Style{Font: font(true, 11, colWarn), Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}})
	return s, nil
}

// table writes one sheet row by row: a header row, then rows. Small sheets are written cell by
// cell, so that frozen panes, filters, colour scales and page setup all apply; a sheet expected to
// be large is streamed (excelize's StreamWriter, flat memory), with a table object for its filter.
type table struct {
	f      *excelize.File
	sw     *excelize.StreamWriter // nil when written cell by cell
	name   string
	row    int
	cols   int
	header int // row of the column header, for freezing and the filter
	st     *styles
	widths []float64
	// longest is the length of each column's longest unwrapped text, for widening at close.
	longest []int
	// lastHead is the last row of headers written; numHeader marks its columns that were
	// right-aligned over their numbers.
	lastHead  int
	numHeader []bool
}

// streamRows is the number of rows past which a sheet is streamed.
const streamRows = 2000

func newTable(f *excelize.File, st *styles, name string, widths []float64) (*table, error) {
	return openTable(f, st, name, widths, 0)
}

// openTable starts a sheet with these column widths; with streamed > 0 it is written as a
// stream of that many rows (excelize's StreamWriter), whose used range is set first, since the
// stream cannot change it later.
func openTable(f *excelize.File, st *styles, name string, widths []float64, streamed int) (*table, error) {
	if _, err := f.NewSheet(name); err != nil {
		return nil, err
	}
	t := &table{f: f, name: name, st: st, widths: widths}
	if streamed > 0 {
		last, _ := excelize.CoordinatesToCellName(len(widths), streamed)
		if err := f.SetSheetDimension(name, "A1:"+last); err != nil {
			return nil, err
		}
		if err := st.pageSetup(f, name); err != nil {
			return nil, err
		}
		sw, err := f.NewStreamWriter(name)
		if err != nil {
			return nil, err
		}
		t.sw = sw
	}
	for i, w := range widths {
		var err error
		if t.sw != nil {
			err = t.sw.SetColWidth(i+1, i+1, w)
		} else {
			col, _ := excelize.ColumnNumberToName(i + 1)
			err = f.SetColWidth(name, col, col, w)
		}
		if err != nil {
			return nil, err
		}
	}
	return t, nil
}

// v is one cell: a value with a style.
type v struct {
	val   any
	style int
}

func (t *table) put(cells ...v) error {
	t.row++
	if len(cells) > t.cols {
		t.cols = len(cells)
	}
	out := make([]any, len(cells))
	for i, c := range cells {
		val := c.val
		if x, ok := val.(float64); ok && (math.IsNaN(x) || math.IsInf(x, 0)) {
			val = nil // not computed: an empty cell, never a made-up number
		}
		// A Go string is written as a text cell, never as a formula, whatever it begins with
		// (=, +, -, @): ids and names from the input cannot run in a spreadsheet.
		if t.sw != nil {
			out[i] = excelize.Cell{Value: val, StyleID: c.style}
			continue
		}
		cell, _ := excelize.CoordinatesToCellName(i+1, t.row)
		var err error
		switch x := val.(type) {
		case nil:
		case string:
			if c.style == t.st.text {
				for len(t.longest) <= i {
					t.longest = append(t.longest, 0)
				}
				t.longest[i] = max(t.longest[i], len([]rune(x)))
			}
			err = t.f.SetCellStr(t.name, cell, x)
		default:
			err = t.f.SetCellValue(t.name, cell, x)
		}
		if err == nil && c.style != 0 {
			err = t.f.SetCellStyle(t.name, cell, cell, c.style)
		}
		if err != nil {
			return err
		}
	}
	if t.sw == nil {
		if err := t.alignHeaders(cells); err != nil {
			return err
		}
		return t.fitHeight(cells)
	}
	cell, _ := excelize.CoordinatesToCellName(1, t.row)
	return t.sw.SetRow(cell, out)
}

// alignHeaders right-aligns the header of each column whose cell in this row (below the
// header) holds a number, so that the header stands over its numbers.
func (t *table) alignHeaders(cells []v) error {
	for _, c := range cells {
		if c.style == t.st.header || c.style == t.st.headerNum { // a header row: the rows below are its
			t.lastHead, t.numHeader = t.row, nil
			return nil
		}
	}
	if t.lastHead == 0 {
		return nil
	}
	for i, c := range cells {
		switch c.val.(type) {
		case nil, string:
			continue
		}
		for len(t.numHeader) <= i {
			t.numHeader = append(t.numHeader, false)
		}
		if t.numHeader[i] {
			continue
		}
		t.numHeader[i] = true
		cell, _ := excelize.CoordinatesToCellName(i+1, t.lastHead)
		if style, err := t.f.GetCellStyle(t.name, cell); err != nil || style != t.st.header {
			continue // a header of another style, or none
		}
		if err := t.f.SetCellStyle(t.name, cell, cell, t.st.headerNum); err != nil {
			return err
		}
	}
	return nil
}

// fitHeight makes a row tall enough for its wrapped text: not every spreadsheet program grows
// rows by itself when a file is opened.
func (t *table) fitHeight(cells []v) error {
	lines := 1.0
	for i, c := range cells {
		s, ok := c.val.(string)
		if !ok || i >= len(t.widths) || (c.style != t.st.wrap && c.style != t.st.note && c.style != t.st.warn && c.style != t.st.header && c.style != t.st.headerNum) {
			continue
		}
		lines = math.Max(lines, math.Ceil(float64(len([]rune(s)))*1.1/math.Max(1, t.widths[i]-1)))
	}
	if lines <= 1 {
		return nil
	}
	return t.f.SetRowHeight(t.name, t.row, math.Min(409, 15*lines))
}

// heading writes the column header and remembers it for the filter.
func (t *table) heading(names ...string) error {
	return t.headingAligned(names, nil)
}

// headingAligned is heading with the headers of the numeric columns right-aligned from the
// start, as a streamed sheet needs (its rows cannot be restyled once written).
func (t *table) headingAligned(names []string, numeric []bool) error {
	cells := make([]v, len(names))
	for i, n := range names {
		cells[i] = v{n, t.st.header}
		if i < len(numeric) && numeric[i] {
			cells[i].style = t.st.headerNum
		}
	}
	if err := t.put(cells...); err != nil {
		return err
	}
	t.header = t.row
	if _, ok := t.st.headers[t.name]; !ok {
		t.st.headers[t.name] = t.row
	}
	return nil
}

// sig3 is a number shown to three significant digits (at most 6 decimals), with thousands
// separators: 0.0123, 1.23, 123, 12,345.
func (st *styles) sig3(x float64) v {
	d := 2
	if x != 0 && !math.IsNaN(x) && !math.IsInf(x, 0) {
		d = 2 - int(math.Floor(math.Log10(math.Abs(x))))
	}
	return v{x, st.fixed[min(6, max(0, d))]}
}

func (t *table) blank() { t.row++ }

// merge joins the first cols cells of the last row written (a note that spans the table) and
// makes the row tall enough for its text over their joint width.
func (t *table) merge(cols int) error {
	first, _ := excelize.CoordinatesToCellName(1, t.row)
	last, _ := excelize.CoordinatesToCellName(cols, t.row)
	if err := t.f.MergeCell(t.name, first, last); err != nil {
		return err
	}
	var w float64
	for i := 0; i < cols && i < len(t.widths); i++ {
		w += t.widths[i]
	}
	text, _ := t.f.GetCellValue(t.name, first)
	lines := math.Ceil(float64(len([]rune(text))) * 1.1 / math.Max(1, w-1))
	return t.f.SetRowHeight(t.name, t.row, math.Min(409, 15*math.Max(1, lines)))
}

// freeze keeps rows 1…header in view; it must come before the first row is written.
func (t *table) freeze(header int) error {
	cell, _ := excelize.CoordinatesToCellName(1, header+1)
	panes := &excelize.Panes{Freeze: true, YSplit: header, TopLeftCell: cell, ActivePane: "bottomLeft"}
	if t.sw != nil {
		return t.sw.SetPanes(panes)
	}
	return t.f.SetPanes(t.name, panes)
}

// close finishes the sheet; with filter, the table below the header gets filter buttons.
func (t *table) close(filter bool) error {
	hasRows := filter && t.header > 0 && t.row > t.header
	first, _ := excelize.CoordinatesToCellName(1, t.header)
	last, _ := excelize.CoordinatesToCellName(t.cols, t.row)
	if t.sw != nil {
		if hasRows {
			show := false
			if err := t.sw.AddTable(&excelize.Table{Range: first + ":" + last, Name: "participants", StyleName: "TableStyleLight15", ShowRowStripes: &show}); err != nil {
				return err
			}
		}
		return t.sw.Flush()
	}
	// Columns of unwrapped text are widened to their longest cell (up to 60 characters), so
	// that no label is cut off.
	for i, n := range t.longest {
		w := math.Min(60, float64(n)+2)
		if i < len(t.widths) && w <= t.widths[i] {
			continue
		}
		col, _ := excelize.ColumnNumberToName(i + 1)
		if err := t.f.SetColWidth(t.name, col, col, w); err != nil {
			return err
		}
	}
	if hasRows {
		return t.f.AutoFilter(t.name, first+":"+last, nil)
	}
	return nil
}

// width estimates a column width in characters for the longest of the strings.
func width(min float64, ss ...string) float64 {
	w := min
	for _, s := range ss {
		if l := float64(len([]rune(s))) + 2; l > w {
			w = l
		}
	}
	return math.Min(w, 80)
}

func join(xs []string) string { return strings.Join(xs, ", ") }

func fmtRange(ks []int) string {
	if len(ks) == 1 {
		return fmt.Sprint(ks[0])
	}
	return fmt.Sprintf("%d–%d", ks[0], ks[len(ks)-1])
}
