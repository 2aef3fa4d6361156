package cohort

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"
)

// formulaCheckRows is how many rows of a sheet are checked for formula cells.
const formulaCheckRows = 200

// readXLSX reads the first sheet of a workbook with excelize's streaming row reader. The first
// row is the header; a cell's position in messages is its row (as the line) and its column
// number. Merged cells and formulas are refused: a table of windows holds one value per cell.
// Times in the order column may be ISO-8601 text or spreadsheet dates.
func (r *reader) readXLSX(p string) (err error) {
	defer func() {
		if v := recover(); v != nil { // a damaged workbook, whatever the library made of it
			err = &InputError{File: p, Msg: fmt.Sprintf("the workbook is damaged (%v); save it again as .xlsx, or export CSV", v), Err: ErrNotText}
		}
	}()
	f, sheet, err := openWorkbook(p)
	if err != nil {
		return err
	}
	defer f.Close()
	rows, err := f.Rows(sheet)
	if err != nil {
		return &InputError{File: p, Msg: "cannot read sheet " + strconv.Quote(sheet) + ": " + err.Error(), Err: ErrNotText, Cause: err}
	}
	defer rows.Close()
	s := &sheetRows{r: r, f: f, p: p, sheet: sheet, fileIdx: len(r.files)}
	rowNo := 0
	for rows.Next() {
		rowNo++
		if rowNo%4096 == 0 && r.ctx.Err() != nil {
			return r.ctx.Err()
		}
		rec, err := rows.Columns(excelize.Options{RawCellValue: true})
		if err != nil {
			return &InputError{File: p, Line: rowNo, Msg: "cannot read the row: " + err.Error(), Err: ErrNotText, Cause: err}
		}
		if err := s.add(rowNo, rec); err != nil {
			return err
		}
	}
	if err := rows.Error(); err != nil {
		return &InputError{File: p, Msg: "reading the sheet failed: " + err.Error(), Err: ErrNotText, Cause: err}
	}
	if s.header == nil {
		return &InputError{File: p, Msg: "the sheet is empty; it needs a header row and at least one window", Err: ErrEmpty}
	}
	if s.n == 0 {
		return &InputError{File: p, Line: 1, Msg: "has a header but no windows; each row should be one window", Err: ErrEmpty}
	}
	hexsum, size, err := hashFile(p)
	if err != nil {
		return &InputError{File: p, Msg: "cannot read: " + err.Error(), Err: ErrOpen, Cause: err}
	}
	r.files = append(r.files, FileInfo{Path: p, SHA256: hexsum, Bytes: size, Rows: s.n})
	r.rows += s.n
	return nil
}

// openWorkbook opens the workbook at p and returns its first sheet, refusing one without sheets
// or whose first sheet has merged cells.
func openWorkbook(p string) (*excelize.File, string, error) {
	st, err := os.Stat(p)
	if err != nil {
		return nil, "", &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen, Cause: err}
	}
	// A damaged or hostile archive must not make the unzipper allocate without bound: allow the
	// sheet XML at most 200 times the file's size (real sheets compress about 5 to 20 times).
	limit := max(64<<20, 200*st.Size())
	f, err := excelize.OpenFile(p, excelize.Options{UnzipSizeLimit: limit, UnzipXMLSizeLimit: limit})
	if err != nil {
		return nil, "", &InputError{File: p, Msg: "cannot open as a workbook (" + err.Error() + "); save it again as .xlsx, or export CSV", Err: ErrNotText, Cause: err}
	}
	sheets := f.GetSheetList()
	if len(sheets) == 0 {
		f.Close()
		return nil, "", &InputError{File: p, Msg: "workbook has no sheet", Err: ErrEmpty}
	}
	sheet := sheets[0]
	if merged, err := f.GetMergeCells(sheet); err == nil && len(merged) > 0 {
		f.Close()
		return nil, "", &InputError{File: p, Msg: fmt.Sprintf("sheet %q has merged cells (%s:%s); unmerge them so each window is one row of single cells", sheet, merged[0].GetStartAxis(), merged[0].GetEndAxis()), Err: ErrRagged}
	}
	return f, sheet, nil
}

// sheetRows takes a sheet's rows one by one: the header, then the windows.
type sheetRows struct {
	r       *reader
	f       *excelize.File
	p       string
	sheet   string
	fileIdx int
	header  []string
	roles   roles
	n       int  // windows read
	dates   bool // the order column is formatted as spreadsheet dates
}

// add takes row rowNo (1-based) of the sheet.
func (s *sheetRows) add(rowNo int, rec []string) error {
	r, p := s.r, s.p
	if s.header == nil {
		if len(rec) == 0 {
			return &InputError{File: p, Line: rowNo, Msg: "the first row is empty; it must hold the column names", Err: ErrEmpty}
		}
		s.header = rec
		var err error
		s.roles, err = r.assignRoles(p, s.header)
		return err
	}
	header := s.header
	if len(strings.Join(rec, "")) == 0 {
		return nil // an empty row
	}
	for len(rec) < len(header) {
		rec = append(rec, "") // trailing empty cells are not stored
	}
	if len(rec) > len(header) {
		return &InputError{File: p, Line: rowNo, Msg: fmt.Sprintf("row has %d cells, the header %d; remove the extra cells", len(rec), len(header)), Err: ErrRagged}
	}
	pos := func(col int) (int, int) { return rowNo, col + 1 }
	if rowNo <= formulaCheckRows {
		if err := s.refuseFormulas(rowNo, rec); err != nil {
			return err
		}
	}
	if s.n == 0 && r.features == nil {
		if err := r.classify(p, pos, header, [][]string{rec}, &s.roles, ','); err != nil {
			return err
		}
	}
	if s.n == 0 && s.roles.order >= 0 {
		// A spreadsheet date-time is a day count with a fraction; a whole-day count (a window at
		// midnight) is one too when the column is formatted as dates, not an integer order.
		cell, _ := excelize.CoordinatesToCellName(s.roles.order+1, rowNo)
		s.dates = isDateCell(s.f, s.sheet, cell)
	}
	order := sheetOrder
	if s.dates {
		order = sheetDate
	}
	if err := r.addRecord(p, s.fileIdx, header, s.roles, '.', rec, pos, order); err != nil {
		return err
	}
	s.n++
	return nil
}

// refuseFormulas refuses a row with a formula in any cell.
func (s *sheetRows) refuseFormulas(rowNo int, rec []string) error {
	for c := range rec {
		cell, _ := excelize.CoordinatesToCellName(c+1, rowNo)
		if fx, _ := s.f.GetCellFormula(s.sheet, cell); fx != "" {
			return &InputError{File: s.p, Line: rowNo, Column: c + 1, Field: s.header[c], Msg: fmt.Sprintf("cell %s holds a formula (=%s); paste the values instead", cell, fx), Err: ErrNotNumber}
		}
	}
	return nil
}

// sheetDate reads an order cell of a column formatted as dates: a spreadsheet day count (whole
// or with a fraction), or an ISO-8601 time written as text.
func sheetDate(cell string) (int64, byte, bool) {
	serial, err := strconv.ParseFloat(strings.TrimSpace(cell), 64)
	if err != nil {
		if v, k, ok := parseOrderCell(cell); ok && isTime(k) {
			return v, k, ok
		}
		return 0, 0, false
	}
	if math.IsNaN(serial) || serial <= 0 {
		return 0, 0, false
	}
	t, err := excelize.ExcelDateToTime(serial, false)
	if err != nil || !plausibleTime(t) {
		return 0, 0, false
	}
	return t.UnixNano(), 't', true
}

// isDateCell tells whether a cell's number format shows a date or a time: one of the built-in
// date and time formats (14–22, 45–47) or a custom format with a day, month, year, hour or
// second in it outside quotes and brackets.
func isDateCell(f *excelize.File, sheet, cell string) bool {
	id, err := f.GetCellStyle(sheet, cell)
	if err != nil {
		return false
	}
	st, err := f.GetStyle(id)
	if err != nil || st == nil {
		return false
	}
	if (st.NumFmt >= 14 && st.NumFmt <= 22) || (st.NumFmt >= 45 && st.NumFmt <= 47) {
		return true
	}
	if st.CustomNumFmt == nil {
		return false
	}
	inQuote, inBracket := false, false
	for _, c := range strings.ToLower(*st.CustomNumFmt) {
		switch {
		case c == '"':
			inQuote = !inQuote
		case c == '[' && !inQuote:
			inBracket = true
		case c == ']' && !inQuote:
			inBracket = false
		case !inQuote && !inBracket && strings.ContainsRune("dmyhs", c):
			return true
		}
	}
	return false
}

// sheetOrder reads an order cell of a sheet: an integer, an ISO-8601 time, or a spreadsheet date
// (a day count with a fraction), which becomes a time.
func sheetOrder(cell string) (int64, byte, bool) {
	if v, k, ok := parseOrderCell(cell); ok {
		return v, k, ok
	}
	serial, err := strconv.ParseFloat(strings.TrimSpace(cell), 64)
	if err != nil || math.IsNaN(serial) || serial <= 0 {
		return 0, 0, false
	}
	t, err := excelize.ExcelDateToTime(serial, false)
	if err != nil || !plausibleTime(t) {
		return 0, 0, false
	}
	return t.UnixNano(), 't', true
}
