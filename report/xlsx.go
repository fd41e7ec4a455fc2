package report

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf16"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"
)

// Workbook is the sheets of ranked.xlsx, in tab order.
type Workbook struct{ Sheets []WorkSheet }

// WorkSheet is one table: segments, projects, plan, problems.
type WorkSheet struct {
	Name    string // tab name, 1–31 characters, unique ignoring case
	Columns []WorkColumn
	// Rows are the cells in column order, one value per column: string
	// ("" is an empty cell), any int or uint kind, float64 (NaN and ±Inf
	// are empty cells), bool, or nil (an empty cell).
	Rows [][]any
}

// WorkColumn is one column: its field name (as in the CSV), its unit in
// words, and how to show numbers.
type WorkColumn struct {
	Name string // e.g. "pressure_psi": the same header the CSV has
	Unit string // e.g. "psi", "gal/min", "ft", "US$"; "" for none
	// Decimals is how many digits after the point floats show, 0–15. Only
	// the display is rounded: the cell keeps the number (see WriteXLSX).
	Decimals int
	// Integer shows the column's numbers with no decimals ("#,##0").
	Integer bool
	// Plain drops the thousands separator, for years and numeric ids
	// ("0" for integers, "0.00" for floats with two decimals).
	Plain bool
}

// Layout constants. Widths are in Excel's width unit, the width of one
// digit of the default font.
const (
	minColumnWidth = 8.0
	maxColumnWidth = 48.0
	// filterButtonWidth is the room the autofilter's drop-down button
	// takes on the units row, in digit widths (the button is about 16 px,
	// a Calibri 11 digit 7 px).
	filterButtonWidth = 3
	// cellPadding is added to the longest text so it does not touch the
	// cell's right edge.
	cellPadding = 1
	// maxDecimals is WorkColumn.Decimals' upper limit: a float64 holds
	// 15 to 17 significant digits, so more decimals only show noise.
	maxDecimals = 15
	// storedDigits is how many significant digits a float cell keeps; see
	// WriteXLSX.
	storedDigits = 15
	// fixedDocTime is written as docProps/core.xml's created and modified
	// times, so that the same Workbook gives the same bytes.
	fixedDocTime = "2000-01-01T00:00:00Z"
	// headerFill is the light fill behind the two header rows.
	headerFill = "E4ECF4"
)

// WriteXLSX writes wb to w as an Office Open XML workbook (.xlsx), one
// worksheet per WorkSheet in order. On every sheet row 1 holds the column
// names and row 2 their units, both bold on a light fill and frozen above
// the scrolling rows; an autofilter puts its buttons on the units row; and
// each column is sized to its header and its longest value, between 8 and
// 48 characters.
//
// Strings are always written as text, so an id such as "0012" stays
// "0012"; "", nil, NaN and ±Inf are written as empty cells. A float is
// stored rounded to 15 significant digits, Excel's precision: excelize
// v2.11.1 keeps at most 15 digits and cuts the rest off, as Excel does
// with a typed number (excelize PR #2377), so WriteXLSX rounds first and
// the stored value is the nearest 15-digit number, within a relative
// 5e-15 of the float64. Values of 15 digits or fewer, such as 54.3 or
// 0.1, are stored exactly.
//
// Sheets are streamed (excelize's StreamWriter), so a sheet of a million
// rows builds no cell tree: the stream writer keeps a sheet's XML in
// memory up to 16 MB and in a temporary file (os.TempDir) beyond. Each
// part is deflated once, at flate.BestSpeed (see xlsxCompression), and the
// compressed parts are held in memory and written to w at the end, so bad
// data leaves w untouched. The same wb gives byte-identical output: no
// clock is read, and the zip entries are written in name order.
func WriteXLSX(w io.Writer, wb *Workbook) (err error) {
	layouts, err := measureWorkbook(wb)
	if err != nil {
		return err
	}
	f := excelize.NewFile()
	defer func() {
		// Close removes the stream writers' temporary files.
		if cerr := f.Close(); cerr != nil && err == nil {
			err = fmt.Errorf("report: closing workbook: %w", cerr)
		}
	}()
	if err := f.SetDocProps(&excelize.DocProperties{
		Creator:  "headroom",
		Created:  fixedDocTime,
		Modified: fixedDocTime,
	}); err != nil {
		return fmt.Errorf("report: setting document properties: %w", err)
	}
	if err := addSheets(f, wb); err != nil {
		return err
	}
	headerStyle, err := f.NewStyle(&excelize.Style{
		// The default font (Calibri 11) in bold; a font without size and
		// name would leave both to the reader.
		Font: &excelize.Font{Bold: true, Family: "Calibri", Size: 11},
		Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{headerFill}},
	})
	if err != nil {
		return fmt.Errorf("report: making header style: %w", err)
	}
	for i := range wb.Sheets {
		if err := writeSheet(f, &wb.Sheets[i], layouts[i], headerStyle); err != nil {
			return fmt.Errorf("report: sheet %q: %w", wb.Sheets[i].Name, err)
		}
	}
	// excelize deflates into zs, which writes the parts in name order;
	// the buffer WriteToBuffer returns stays empty.
	zs := &sortedZip{}
	f.SetZipWriter(func(io.Writer) excelize.ZipWriter { return zs })
	if _, err := f.WriteToBuffer(); err != nil {
		return fmt.Errorf("report: encoding workbook: %w", err)
	}
	return zs.writeTo(w)
}

// addSheets names the workbook's sheets in tab order. The default
// "Sheet1" is renamed to the first sheet rather than deleted, so sheet
// indexes (which the autofilter's defined names refer to) never shift.
func addSheets(f *excelize.File, wb *Workbook) error {
	for i, ws := range wb.Sheets {
		var err error
		if i == 0 {
			err = f.SetSheetName(f.GetSheetName(0), ws.Name)
		} else {
			_, err = f.NewSheet(ws.Name)
		}
		if err != nil {
			return fmt.Errorf("report: sheet %q: %w", ws.Name, err)
		}
	}
	return nil
}

// sheetLayout is what measuring a sheet finds: each column's width and
// number format.
type sheetLayout struct {
	widths  []float64
	formats []string
}

// measureWorkbook checks wb and measures every sheet. It runs before
// anything is written because the stream writer needs the column widths
// before the first row.
func measureWorkbook(wb *Workbook) ([]sheetLayout, error) {
	if wb == nil || len(wb.Sheets) == 0 {
		return nil, errors.New("report: workbook has no sheets")
	}
	seen := make(map[string]bool, len(wb.Sheets))
	layouts := make([]sheetLayout, len(wb.Sheets))
	for i := range wb.Sheets {
		ws := &wb.Sheets[i]
		key := strings.ToLower(ws.Name) // Excel compares tab names ignoring case
		if seen[key] {
			return nil, fmt.Errorf("report: sheet %q: name used twice (ignoring case)", ws.Name)
		}
		seen[key] = true
		layout, err := measureSheet(ws)
		if err != nil {
			return nil, fmt.Errorf("report: sheet %q: %w", ws.Name, err)
		}
		layouts[i] = layout
	}
	return layouts, nil
}

// columnExtent is what one column holds, found in one pass over the rows.
type columnExtent struct {
	textRunes int // longest string or boolean, in characters
	hasNumber bool
	minNumber float64
	maxNumber float64
}

// measureSheet checks ws's shape and cell kinds and finds each column's
// width and number format.
func measureSheet(ws *WorkSheet) (sheetLayout, error) {
	if len(ws.Columns) == 0 {
		return sheetLayout{}, errors.New("no columns")
	}
	if len(ws.Columns) > excelize.MaxColumns {
		return sheetLayout{}, fmt.Errorf("%d columns, more than a sheet holds (%d)", len(ws.Columns), excelize.MaxColumns)
	}
	if maxRows := excelize.TotalRows - 2; len(ws.Rows) > maxRows {
		return sheetLayout{}, fmt.Errorf("%d rows, more than a sheet holds under two header rows (%d)", len(ws.Rows), maxRows)
	}
	for _, c := range ws.Columns {
		if c.Decimals < 0 || c.Decimals > maxDecimals {
			return sheetLayout{}, fmt.Errorf("column %q: decimals %d not in 0–%d", c.Name, c.Decimals, maxDecimals)
		}
	}
	extents := make([]columnExtent, len(ws.Columns))
	for r, row := range ws.Rows {
		if len(row) != len(ws.Columns) {
			return sheetLayout{}, fmt.Errorf("data row %d: %d cells for %d columns", r+1, len(row), len(ws.Columns))
		}
		for c, v := range row {
			if err := extents[c].add(v); err != nil {
				return sheetLayout{}, fmt.Errorf("data row %d, column %q: %w", r+1, ws.Columns[c].Name, err)
			}
		}
	}
	layout := sheetLayout{
		widths:  make([]float64, len(ws.Columns)),
		formats: make([]string, len(ws.Columns)),
	}
	for c, col := range ws.Columns {
		layout.formats[c] = numberFormat(col)
		layout.widths[c] = columnWidth(col, extents[c])
	}
	return layout, nil
}

// add records v in the column's extent, or says why v cannot be written.
func (e *columnExtent) add(v any) error {
	switch v := v.(type) {
	case nil:
	case string:
		// A UTF-8 string has at least as many bytes as UTF-16 units.
		if len(v) > excelize.TotalCellChars {
			if n := utf16Length(v); n > excelize.TotalCellChars {
				return fmt.Errorf("string of %d UTF-16 units, more than a cell holds (%d)", n, excelize.TotalCellChars)
			}
		}
		e.textRunes = max(e.textRunes, utf8.RuneCountInString(v))
	case bool:
		e.textRunes = max(e.textRunes, len("FALSE"))
	case float64:
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			e.addNumber(v)
		}
	case int:
		e.addNumber(float64(v))
	case int8:
		e.addNumber(float64(v))
	case int16:
		e.addNumber(float64(v))
	case int32:
		e.addNumber(float64(v))
	case int64:
		e.addNumber(float64(v))
	case uint:
		e.addNumber(float64(v))
	case uint8:
		e.addNumber(float64(v))
	case uint16:
		e.addNumber(float64(v))
	case uint32:
		e.addNumber(float64(v))
	case uint64:
		e.addNumber(float64(v))
	default:
		return fmt.Errorf("unsupported cell type %T", v)
	}
	return nil
}

// utf16Length is how many UTF-16 code units s takes, the unit Excel's
// cell length limit counts.
func utf16Length(s string) int {
	n := 0
	for _, r := range s {
		n += utf16.RuneLen(r)
	}
	return n
}

// addNumber widens the column's number range to take x. Only the extremes
// matter for the width: a number's formatted length grows with its
// magnitude, plus one for a minus sign.
func (e *columnExtent) addNumber(x float64) {
	if !e.hasNumber {
		e.hasNumber, e.minNumber, e.maxNumber = true, x, x
		return
	}
	e.minNumber = min(e.minNumber, x)
	e.maxNumber = max(e.maxNumber, x)
}

// numberFormat is the column's number format code (ISO/IEC 29500-1,
// §18.8.30 numFmt): "#,##0" or "0" for integers, with ".000…" for Decimals on
// float columns.
func numberFormat(c WorkColumn) string {
	whole := "#,##0"
	if c.Plain {
		whole = "0"
	}
	if c.Integer || c.Decimals == 0 {
		return whole
	}
	return whole + "." + strings.Repeat("0", c.Decimals)
}

// columnWidth is the width that shows the column's header, its unit beside
// the filter button, and its longest value, clamped to 8–48.
func columnWidth(c WorkColumn, e columnExtent) float64 {
	chars := max(utf8.RuneCountInString(c.Name), utf8.RuneCountInString(c.Unit)+filterButtonWidth, e.textRunes)
	if e.hasNumber {
		decimals := c.Decimals
		if c.Integer {
			decimals = 0
		}
		chars = max(chars, formattedLength(e.minNumber, decimals, c.Plain), formattedLength(e.maxNumber, decimals, c.Plain))
	}
	return min(max(float64(chars+cellPadding), minColumnWidth), maxColumnWidth)
}

// formattedLength is how many characters x takes shown with the given
// decimals and, unless plain, a comma between each group of three digits.
func formattedLength(x float64, decimals int, plain bool) int {
	var buf [32]byte
	s := strconv.AppendFloat(buf[:0], x, 'f', decimals, 64)
	n := len(s)
	if plain {
		return n
	}
	whole := n
	if decimals > 0 {
		whole -= decimals + 1
	}
	if s[0] == '-' {
		whole--
	}
	return n + (whole-1)/3
}

// writeSheet streams one sheet: column widths and frozen panes first (the
// stream writer takes them only before the first row), then the header
// rows and the data rows.
func writeSheet(f *excelize.File, ws *WorkSheet, layout sheetLayout, headerStyle int) error {
	sw, err := f.NewStreamWriter(ws.Name)
	if err != nil {
		return fmt.Errorf("opening stream writer: %w", err)
	}
	// excelize puts each new col element before the ones already set, so
	// setting the last column first writes them in ascending order, as
	// Excel writes them.
	for c := len(layout.widths) - 1; c >= 0; c-- {
		if err := sw.SetColWidth(c+1, c+1, layout.widths[c]); err != nil {
			return fmt.Errorf("column %q width: %w", ws.Columns[c].Name, err)
		}
	}
	if err := sw.SetPanes(&excelize.Panes{
		Freeze:      true,
		YSplit:      2,
		TopLeftCell: "A3",
		ActivePane:  "bottomLeft",
		Selection:   []excelize.Selection{{SQRef: "A3", ActiveCell: "A3", Pane: "bottomLeft"}},
	}); err != nil {
		return fmt.Errorf("freezing header rows: %w", err)
	}
	if err := setAutoFilter(f, ws); err != nil {
		return err
	}
	if err := writeHeaderRows(sw, ws.Columns, headerStyle); err != nil {
		return err
	}
	if err := writeDataRows(f, sw, ws, layout.formats); err != nil {
		return err
	}
	if err := sw.Flush(); err != nil {
		return fmt.Errorf("flushing rows: %w", err)
	}
	return nil
}

// setAutoFilter puts an autofilter on ws over A2 to the last column and
// row. The autoFilter element only names its range (ISO/IEC 29500-1,
// §18.3.1.2), and excelize's AutoFilter writes the range it is given; the
// range's first row is its header row, where Excel draws the drop-down
// buttons, and the rows below it are the ones filtered. Starting at row 2
// puts the buttons on the units row and leaves row 1, the column names, as
// a title row above the range.
//
// excelize's AutoFilter is a normal-mode call made on a streamed sheet: it
// must come after NewStreamWriter (which holds the sheet's parts) and
// before Flush (which writes the autoFilter element after the rows). It
// also adds the hidden _xlnm._FilterDatabase name Excel keeps for the
// range. The sheetPr filterMode flag it sets is not written, because the
// stream writer wrote sheetPr when it opened; that is right here, since
// filterMode means rows are filtered out, and none are.
func setAutoFilter(f *excelize.File, ws *WorkSheet) error {
	last, err := excelize.CoordinatesToCellName(len(ws.Columns), len(ws.Rows)+2)
	if err != nil {
		return fmt.Errorf("autofilter range: %w", err)
	}
	if err := f.AutoFilter(ws.Name, "A2:"+last, nil); err != nil {
		return fmt.Errorf("autofilter A2:%s: %w", last, err)
	}
	return nil
}

// writeHeaderRows writes row 1 (the column names) and row 2 (their units).
// An empty unit is a styled cell with no value, so the fill runs on.
func writeHeaderRows(sw *excelize.StreamWriter, cols []WorkColumn, style int) error {
	names := make([]any, len(cols))
	units := make([]any, len(cols))
	for c, col := range cols {
		names[c] = excelize.Cell{StyleID: style, Value: textOrNil(col.Name)}
		units[c] = excelize.Cell{StyleID: style, Value: textOrNil(col.Unit)}
	}
	if err := sw.SetRow("A1", names); err != nil {
		return fmt.Errorf("writing column names: %w", err)
	}
	if err := sw.SetRow("A2", units); err != nil {
		return fmt.Errorf("writing units: %w", err)
	}
	return nil
}

// textOrNil is s, or nil (no value) when s is empty.
func textOrNil(s string) any {
	if s == "" {
		return nil
	}
	return s
}

// writeDataRows writes ws's rows from row 3 down. Numbers carry their
// column's number format; strings and booleans are written unstyled
// (General), which shows them as they are.
func writeDataRows(f *excelize.File, sw *excelize.StreamWriter, ws *WorkSheet, formats []string) error {
	// cells are reused for every row: SetRow encodes a row before it
	// returns, and pointers to them box without allocating.
	cells := make([]excelize.Cell, len(ws.Columns))
	for c, format := range formats {
		style, err := f.NewStyle(&excelize.Style{CustomNumFmt: &format})
		if err != nil {
			return fmt.Errorf("column %q number format %q: %w", ws.Columns[c].Name, format, err)
		}
		cells[c].StyleID = style
	}
	values := make([]any, len(ws.Columns))
	for r, row := range ws.Rows {
		for c, v := range row {
			values[c] = cellValue(v, &cells[c])
		}
		ref, err := excelize.CoordinatesToCellName(1, r+3)
		if err != nil {
			return fmt.Errorf("data row %d: %w", r+1, err)
		}
		if err := sw.SetRow(ref, values); err != nil {
			return fmt.Errorf("writing data row %d: %w", r+1, err)
		}
	}
	return nil
}

// cellValue is what SetRow gets for v: nil for an empty cell (nil, "",
// NaN, ±Inf), v itself for strings and booleans, and cell holding the number
// for numbers, so that they take the column's style. measureSheet has
// already rejected other kinds.
func cellValue(v any, cell *excelize.Cell) any {
	switch x := v.(type) {
	case string:
		if x == "" {
			return nil // a blank, not a text cell holding nothing
		}
		return v
	case nil, bool:
		return v
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil
		}
		if r := roundSignificant(x); r != x {
			cell.Value = r
			return cell
		}
	}
	cell.Value = v
	return cell
}

// roundSignificant is x rounded to storedDigits significant digits (ties
// to even, as strconv rounds): the nearest float64 to x's 15-digit decimal.
func roundSignificant(x float64) float64 {
	var buf [32]byte
	s := strconv.AppendFloat(buf[:0], x, 'e', storedDigits-1, 64)
	r, err := strconv.ParseFloat(string(s), 64)
	if err != nil {
		// AppendFloat's output always parses; keep x if it ever does not.
		return x
	}
	return r
}
