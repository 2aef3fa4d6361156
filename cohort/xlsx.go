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
	st, err := os.Stat(p)
	if err != nil {
		return &InputError{File: p, Msg: "cannot open: " + err.Error(), Err: ErrOpen, Cause: err}
	}
	// A damaged or hostile archive must not make the unzipper allocate without bound: allow the
	// sheet XML at most 200 times the file's size (real sheets compress about 5 to 20 times).
	limit := max(64<<20, 200*st.Size())
	f, err := excelize.OpenFile(p, excelize.Options{UnzipSizeLimit: limit, UnzipXMLSizeLimit: limit})
	if err != nil {
		return &InputError{File: p, Msg: "cannot open as a workbook (" + err.Error() + "); save it again as .xlsx, or export CSV", Err: ErrNotText, Cause: err}
	}
	defer f.Close()
	sheets := f.GetSheetList()
	if len(sheets) == 0 {
		return &InputError{File: p, Msg: "workbook has no sheet", Err: ErrEmpty}
	}
	sheet := sheets[0]
	if merged, err := f.GetMergeCells(sheet); err == nil && len(merged) > 0 {
		return &InputError{File: p, Msg: fmt.Sprintf("sheet %q has merged cells (%s:%s); unmerge them so each window is one row of single cells", sheet, merged[0].GetStartAxis(), merged[0].GetEndAxis()), Err: ErrRagged}
	}
	rows, err := f.Rows(sheet)
	if err != nil {
		return &InputError{File: p, Msg: "cannot read sheet " + strconv.Quote(sheet) + ": " + err.Error(), Err: ErrNotText, Cause: err}
	}
	defer rows.Close()
	fileIdx := len(r.files)
	var header []string
	var roles roles
	n, rowNo := 0, 0
	dates := false // the order column is formatted as spreadsheet dates
	for rows.Next() {
		rowNo++
		if rowNo%4096 == 0 && r.ctx.Err() != nil {
			return r.ctx.Err()
		}
		rec, err := rows.Columns(excelize.Options{RawCellValue: true})
		if err != nil {
			return &InputError{File: p, Line: rowNo, Msg: "cannot read the row: " + err.Error(), Err: ErrNotText, Cause: err}
		}
		if header == nil {
			if len(rec) == 0 {
				return &InputError{File: p, Line: rowNo, Msg: "the first row is empty; it must hold the column names", Err: ErrEmpty}
			}
			header = rec
			if roles, err = r.assignRoles(p, header); err != nil {
				return err
			}
			continue
		}
		if len(strings.Join(rec, "")) == 0 {
			continue // an empty row
		}
		for len(rec) < len(header) {
			rec = append(rec, "") // trailing empty cells are not stored
		}
		if len(rec) > len(header) {
			return &InputError{File: p, Line: rowNo, Msg: fmt.Sprintf("row has %d cells, the header %d; remove the extra cells", len(rec), len(header)), Err: ErrRagged}
		}
		row := rowNo
		pos := func(col int) (int, int) { return row, col + 1 }
		if rowNo <= formulaCheckRows {
			for c := range rec {
				cell, _ := excelize.CoordinatesToCellName(c+1, rowNo)
				if fx, _ := f.GetCellFormula(sheet, cell); fx != "" {
					return &InputError{File: p, Line: rowNo, Column: c + 1, Field: header[c], Msg: fmt.Sprintf("cell %s holds a formula (=%s); paste the values instead", cell, fx), Err: ErrNotNumber}
				}
			}
		}
		if n == 0 && r.features == nil {
			if err := r.classify(p, pos, header, [][]string{rec}, &roles, ','); err != nil {
				return err
			}
		}
		if n == 0 && roles.order >= 0 {
			// A spreadsheet date-time is a day count with a fraction; a whole-day count (a
			// window at midnight) is one too when the column is formatted as dates, not an
			// integer order.
			cell, _ := excelize.CoordinatesToCellName(roles.order+1, rowNo)
			dates = isDateCell(f, sheet, cell)
		}
		order := sheetOrder
		if dates {
			order = sheetDate
		}
		if err := r.addRecord(p, fileIdx, header, roles, '.', rec, pos, order); err != nil {
			return err
		}
		n++
	}
	if err := rows.Error(); err != nil {
		return &InputError{File: p, Msg: "reading the sheet failed: " + err.Error(), Err: ErrNotText, Cause: err}
	}
	if header == nil {
		return &InputError{File: p, Msg: "the sheet is empty; it needs a header row and at least one window", Err: ErrEmpty}
	}
	if n == 0 {
		return &InputError{File: p, Line: 1, Msg: "has a header but no windows; each row should be one window", Err: ErrEmpty}
	}
	hexsum, size, err := hashFile(p)
	if err != nil {
		return &InputError{File: p, Msg: "cannot read: " + err.Error(), Err: ErrOpen, Cause: err}
	}
	r.files = append(r.files, FileInfo{Path: p, SHA256: hexsum, Bytes: size, Rows: n})
	r.rows += n
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
