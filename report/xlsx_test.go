package report

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"
)

// The checks below read the written file back with excelize (cell values,
// types, styles, panes, defined names) and with archive/zip and
// encoding/xml (the worksheet parts themselves, found through the
// workbook's relationships as ISO/IEC 29500-2 (OPC) resolves them).

// longNote is longer than the widest column, so its column is capped.
var longNote = "Main runs under the Alder Creek footbridge; the 1962 cast iron was lined in 1988 " +
	"and the lining is failing at three joints reported by the night crew during the winter of 2024."

// testWorkbook is an invented run's tables: every cell kind, NaN and ±Inf,
// a numeric-looking string id, a long string, booleans and nils, and a
// sheet with no data rows.
func testWorkbook() *Workbook {
	return &Workbook{Sheets: []WorkSheet{
		{
			Name: "segments",
			Columns: []WorkColumn{
				{Name: "pipe_id"},
				{Name: "diameter_in", Unit: "in", Decimals: 1},
				{Name: "install_year", Integer: true, Plain: true},
				{Name: "pressure_psi", Unit: "psi", Decimals: 2},
				{Name: "length_ft", Unit: "ft"},
				{Name: "cost_usd", Unit: "US$", Decimals: 2},
				{Name: "fails_fire_flow"},
				{Name: "note"},
				{Name: "priority", Decimals: 3},
				{Name: "breaks", Integer: true},
			},
			Rows: [][]any{
				{"0012", 6.0, 1962, 54.123456789012345, 2140.0, 1234567.891, true, longNote, 2.0 / 3, int64(3)},
				{"P-204", 8.0, int16(1988), math.NaN(), 12345.678, 98765.4321, false, nil, 0.1 + 0.2, uint8(0)},
				{"0007", 12.0, uint32(2004), math.Inf(1), 3.5, -250.5, nil, "lined", 123456789012.345678, 12},
				{"A 9", nil, nil, math.Inf(-1), -0.25, 0.0, true, "", 99.9, int32(-1)},
			},
		},
		{
			Name: "projects",
			Columns: []WorkColumn{
				{Name: "project_id"},
				{Name: "mains", Integer: true},
				{Name: "length_ft", Unit: "ft", Decimals: 0},
				{Name: "cost_usd", Unit: "US$", Integer: true},
			},
			Rows: [][]any{
				{"PRJ-007", 4, 2140.4, 612000.0},
				{"PRJ-012", uint64(1), 310.0, 88500.0},
			},
		},
		{
			Name: "plan",
			Columns: []WorkColumn{
				{Name: "plan_year", Integer: true, Plain: true},
				{Name: "project_id"},
				{Name: "spend_usd", Unit: "US$", Decimals: 2},
				{Name: "ratio", Decimals: 1, Plain: true},
			},
			Rows: [][]any{
				{2027, "PRJ-007", 612000.0, 1234.56},
				{2028, "PRJ-012", 88500.0, 0.04},
			},
		},
		{
			Name: "problems",
			Columns: []WorkColumn{
				{Name: "layer"}, {Name: "feature", Integer: true, Plain: true}, {Name: "field"}, {Name: "message"},
			},
		},
	}}
}

// writeWorkbook writes wb and opens the bytes again with excelize.
func writeWorkbook(t *testing.T, wb *Workbook) (*excelize.File, []byte) {
	t.Helper()
	var buf bytes.Buffer
	if err := WriteXLSX(&buf, wb); err != nil {
		t.Fatalf("WriteXLSX: %v", err)
	}
	f, err := excelize.OpenReader(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatalf("excelize.OpenReader: %v", err)
	}
	t.Cleanup(func() { _ = f.Close() })
	return f, buf.Bytes()
}

// cellName is the A1 reference of 0-based column c and 1-based row r.
func cellName(t *testing.T, c, r int) string {
	t.Helper()
	name, err := excelize.CoordinatesToCellName(c+1, r)
	if err != nil {
		t.Fatal(err)
	}
	return name
}

func TestWriteXLSXSheets(t *testing.T) {
	wb := testWorkbook()
	f, _ := writeWorkbook(t, wb)
	var want []string
	for _, ws := range wb.Sheets {
		want = append(want, ws.Name)
	}
	if got := f.GetSheetList(); !slices.Equal(got, want) {
		t.Errorf("sheets: got %q, want %q", got, want)
	}
	if i, _ := f.GetSheetIndex("Sheet1"); i != -1 {
		t.Errorf("Sheet1 is still there at index %d", i)
	}
	if got := f.GetActiveSheetIndex(); got != 0 {
		t.Errorf("active sheet: got %d, want 0", got)
	}
}

func TestWriteXLSXHeaderRows(t *testing.T) {
	wb := testWorkbook()
	f, _ := writeWorkbook(t, wb)
	for _, ws := range wb.Sheets {
		rows, err := f.GetRows(ws.Name)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for _, c := range ws.Columns {
			names = append(names, c.Name)
		}
		if len(rows) == 0 {
			t.Fatalf("%s: no rows", ws.Name)
		}
		if !slices.Equal(rows[0], names) {
			t.Errorf("%s row 1: got %q, want %q", ws.Name, rows[0], names)
		}
		for c, col := range ws.Columns {
			for r, want := range []string{col.Name, col.Unit} {
				ref := cellName(t, c, r+1)
				got, _ := f.GetCellValue(ws.Name, ref)
				if got != want {
					t.Errorf("%s!%s: got %q, want %q", ws.Name, ref, got, want)
				}
				typ, _ := f.GetCellType(ws.Name, ref)
				if want != "" && typ != excelize.CellTypeInlineString {
					t.Errorf("%s!%s: cell type %v, want an inline string", ws.Name, ref, typ)
				}
				checkHeaderStyle(t, f, ws.Name, ref)
			}
		}
	}
}

// checkHeaderStyle fails unless the cell is bold on a solid fill; an empty
// unit cell must carry the style too, so that the band is unbroken.
func checkHeaderStyle(t *testing.T, f *excelize.File, sheet, ref string) {
	t.Helper()
	id, err := f.GetCellStyle(sheet, ref)
	if err != nil {
		t.Fatal(err)
	}
	st, err := f.GetStyle(id)
	if err != nil {
		t.Fatal(err)
	}
	if st.Font == nil || !st.Font.Bold {
		t.Errorf("%s!%s: not bold", sheet, ref)
	}
	if st.Fill.Pattern != 1 || len(st.Fill.Color) == 0 || !strings.HasSuffix(st.Fill.Color[0], headerFill) {
		t.Errorf("%s!%s: fill %+v, want solid %s", sheet, ref, st.Fill, headerFill)
	}
}

func TestWriteXLSXValues(t *testing.T) {
	wb := testWorkbook()
	f, _ := writeWorkbook(t, wb)
	raw := excelize.Options{RawCellValue: true}
	for _, ws := range wb.Sheets {
		for r, row := range ws.Rows {
			for c, v := range row {
				ref := cellName(t, c, r+3)
				got, err := f.GetCellValue(ws.Name, ref, raw)
				if err != nil {
					t.Fatal(err)
				}
				typ, _ := f.GetCellType(ws.Name, ref)
				if msg := checkCell(v, got, typ); msg != "" {
					t.Errorf("%s!%s (%s): %s", ws.Name, ref, ws.Columns[c].Name, msg)
				}
			}
		}
	}
}

// checkCell compares a cell read back (raw value and type) with the value
// written, and says what is wrong, or "" when nothing is. A float may move
// by half a unit in its 15th significant digit (WriteXLSX's rounding); an
// int must come back exactly; a string must stay a string.
func checkCell(v any, got string, typ excelize.CellType) string {
	switch v := v.(type) {
	case nil:
		return wantEmpty(got, typ)
	case string:
		if v == "" {
			return wantEmpty(got, typ)
		}
		if typ != excelize.CellTypeInlineString || got != v {
			return fmt.Sprintf("got %q (type %d), want the string %q", got, typ, v)
		}
	case bool:
		want := map[bool]string{true: "1", false: "0"}[v]
		if typ != excelize.CellTypeBool || got != want {
			return fmt.Sprintf("got %q (type %d), want boolean %s", got, typ, want)
		}
	case float64:
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return wantEmpty(got, typ)
		}
		x, err := strconv.ParseFloat(got, 64)
		if err != nil || !isNumberType(typ) {
			return fmt.Sprintf("got %q (type %d), want a number", got, typ)
		}
		if d := math.Abs(x - v); d > 5e-15*math.Abs(v) {
			return fmt.Sprintf("got %s, want %v within a relative 5e-15", got, v)
		}
	default:
		want := intText(v)
		if got != want || !isNumberType(typ) {
			return fmt.Sprintf("got %q (type %d), want the number %s", got, typ, want)
		}
	}
	return ""
}

// isNumberType is true for a number cell: t="n", or no t attribute, whose
// default is "n" (ISO/IEC 29500-1, CT_Cell), which excelize reports as
// CellTypeUnset.
func isNumberType(typ excelize.CellType) bool {
	return typ == excelize.CellTypeNumber || typ == excelize.CellTypeUnset
}

// wantEmpty says what is wrong unless the cell is empty.
func wantEmpty(got string, typ excelize.CellType) string {
	if got != "" || typ != excelize.CellTypeUnset {
		return fmt.Sprintf("got %q (type %d), want an empty cell", got, typ)
	}
	return ""
}

// intText is any signed or unsigned int kind in decimal.
func intText(v any) string {
	switch v := v.(type) {
	case int:
		return strconv.FormatInt(int64(v), 10)
	case int8:
		return strconv.FormatInt(int64(v), 10)
	case int16:
		return strconv.FormatInt(int64(v), 10)
	case int32:
		return strconv.FormatInt(int64(v), 10)
	case int64:
		return strconv.FormatInt(v, 10)
	case uint:
		return strconv.FormatUint(uint64(v), 10)
	case uint8:
		return strconv.FormatUint(uint64(v), 10)
	case uint16:
		return strconv.FormatUint(uint64(v), 10)
	case uint32:
		return strconv.FormatUint(uint64(v), 10)
	case uint64:
		return strconv.FormatUint(v, 10)
	}
	panic(fmt.Sprintf("intText: %T is not an int kind", v))
}

// TestWriteXLSXFloatStorage pins what a float cell stores. The wants are
// worked by hand: the value rounded to 15 significant digits (half up
// where the 16th digit is 5 or more).
func TestWriteXLSXFloatStorage(t *testing.T) {
	cases := []struct {
		name string
		in   float64
		want string // the stored number, as a decimal
	}{
		{"short value kept exactly", 54.3, "54.3"},
		{"tenth kept exactly", 0.1, "0.1"},
		{"sum noise removed", 0.1 + 0.2, "0.3"},
		{"two thirds rounded up", 2.0 / 3, "0.666666666666667"},
		{"16th digit 4 rounds down", 54.123456789012345, "54.1234567890123"},
		{"large value rounded up", 123456789012.345678, "123456789012.346"},
		{"negative", -1234.5678, "-1234.5678"},
		{"small", 1.5e-7, "0.00000015"},
		{"integral", 2140, "2140"},
	}
	ws := WorkSheet{Name: "floats", Columns: []WorkColumn{{Name: "x", Decimals: 3}}}
	for _, tc := range cases {
		ws.Rows = append(ws.Rows, []any{tc.in})
	}
	f, _ := writeWorkbook(t, &Workbook{Sheets: []WorkSheet{ws}})
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got, err := f.GetCellValue("floats", cellName(t, 0, i+3), excelize.Options{RawCellValue: true})
			if err != nil {
				t.Fatal(err)
			}
			g, err1 := strconv.ParseFloat(got, 64)
			w, err2 := strconv.ParseFloat(tc.want, 64)
			if err1 != nil || err2 != nil || g != w {
				t.Errorf("stored %q, want %s", got, tc.want)
			}
		})
	}
}

// TestXLSXExcelizeFloatDigits pins the excelize behaviour WriteXLSX works
// around: its StreamWriter keeps only 15 significant digits of a float and
// cuts the rest off rather than rounding. If an excelize upgrade changes
// this, revisit roundSignificant and WriteXLSX's doc.
func TestXLSXExcelizeFloatDigits(t *testing.T) {
	f := excelize.NewFile()
	defer f.Close()
	sw, err := f.NewStreamWriter("Sheet1")
	if err != nil {
		t.Fatal(err)
	}
	if err := sw.SetRow("A1", []any{2.0 / 3}); err != nil {
		t.Fatal(err)
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		t.Fatal(err)
	}
	g, err := excelize.OpenReader(&buf)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	got, _ := g.GetCellValue("Sheet1", "A1", excelize.Options{RawCellValue: true})
	if got != "0.666666666666666" {
		t.Errorf("excelize stored 2/3 as %q, want the 15-digit cut-off 0.666666666666666", got)
	}
}

func TestWriteXLSXNumberFormats(t *testing.T) {
	f, _ := writeWorkbook(t, testWorkbook())
	// builtinFormats are the built-in number formats this test may meet
	// (ISO/IEC 29500-1, §18.8.30 numFmt).
	builtinFormats := map[int]string{0: "General", 1: "0", 2: "0.00", 3: "#,##0", 4: "#,##0.00"}
	cases := []struct {
		sheet, cell string
		format      string // number format code
		shown       string // the value as Excel shows it, "" for an empty cell
	}{
		{"segments", "B3", "#,##0.0", "6.0"},
		{"segments", "C3", "0", "1962"},
		{"segments", "D3", "#,##0.00", "54.12"},
		{"segments", "E4", "#,##0", "12,346"},
		{"segments", "F3", "#,##0.00", "1,234,567.89"},
		{"segments", "F5", "#,##0.00", "-250.50"},
		{"segments", "I3", "#,##0.000", "0.667"},
		{"segments", "J3", "#,##0", "3"},
		{"projects", "C3", "#,##0", "2,140"},
		{"projects", "D3", "#,##0", "612,000"},
		{"plan", "A3", "0", "2027"},
		{"plan", "D3", "0.0", "1234.6"},
	}
	for _, tc := range cases {
		t.Run(tc.sheet+"!"+tc.cell, func(t *testing.T) {
			id, err := f.GetCellStyle(tc.sheet, tc.cell)
			if err != nil {
				t.Fatal(err)
			}
			st, err := f.GetStyle(id)
			if err != nil {
				t.Fatal(err)
			}
			got := builtinFormats[st.NumFmt]
			if st.CustomNumFmt != nil {
				got = *st.CustomNumFmt
			}
			if got != tc.format {
				t.Errorf("number format %q, want %q", got, tc.format)
			}
			shown, err := f.GetCellValue(tc.sheet, tc.cell)
			if err != nil {
				t.Fatal(err)
			}
			if shown != tc.shown {
				t.Errorf("shown as %q, want %q", shown, tc.shown)
			}
		})
	}
}

func TestWriteXLSXPanes(t *testing.T) {
	wb := testWorkbook()
	f, _ := writeWorkbook(t, wb)
	for _, ws := range wb.Sheets {
		p, err := f.GetPanes(ws.Name)
		if err != nil {
			t.Fatal(err)
		}
		if !p.Freeze || p.XSplit != 0 || p.YSplit != 2 || p.TopLeftCell != "A3" {
			t.Errorf("%s panes: got %+v, want frozen above A3 (ySplit 2, no xSplit)", ws.Name, p)
		}
	}
}

// worksheetPart is the part of a worksheet's XML these tests read.
type worksheetPart struct {
	SheetPr *struct {
		FilterMode bool `xml:"filterMode,attr"`
	} `xml:"sheetPr"`
	Cols []struct {
		Min   int     `xml:"min,attr"`
		Max   int     `xml:"max,attr"`
		Width float64 `xml:"width,attr"`
	} `xml:"cols>col"`
	AutoFilter *struct {
		Ref string `xml:"ref,attr"`
	} `xml:"autoFilter"`
}

// readWorksheetPart finds the named sheet's part in the package (workbook
// sheet → relationship id → target) and decodes it.
func readWorksheetPart(t *testing.T, data []byte, sheet string) worksheetPart {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	var book struct {
		Sheets []struct {
			Name string `xml:"name,attr"`
			RID  string `xml:"http://schemas.openxmlformats.org/officeDocument/2006/relationships id,attr"`
		} `xml:"sheets>sheet"`
	}
	var rels struct {
		Rel []struct {
			ID     string `xml:"Id,attr"`
			Target string `xml:"Target,attr"`
		} `xml:"Relationship"`
	}
	decodePart(t, zr, "xl/workbook.xml", &book)
	decodePart(t, zr, "xl/_rels/workbook.xml.rels", &rels)
	for _, s := range book.Sheets {
		if s.Name != sheet {
			continue
		}
		for _, r := range rels.Rel {
			if r.ID == s.RID {
				var ws worksheetPart
				decodePart(t, zr, "xl/"+strings.TrimPrefix(r.Target, "/xl/"), &ws)
				return ws
			}
		}
	}
	t.Fatalf("no part for sheet %q", sheet)
	return worksheetPart{}
}

// decodePart decodes the XML of the named zip entry into v.
func decodePart(t *testing.T, zr *zip.Reader, name string, v any) {
	t.Helper()
	r, err := zr.Open(name)
	if err != nil {
		t.Fatalf("opening %s: %v", name, err)
	}
	defer r.Close()
	if err := xml.NewDecoder(r).Decode(v); err != nil {
		t.Fatalf("decoding %s: %v", name, err)
	}
}

func TestWriteXLSXAutoFilter(t *testing.T) {
	wb := testWorkbook()
	f, data := writeWorkbook(t, wb)
	names := f.GetDefinedName()
	for _, ws := range wb.Sheets {
		want := "A2:" + cellName(t, len(ws.Columns)-1, len(ws.Rows)+2)
		part := readWorksheetPart(t, data, ws.Name)
		// excelize writes the range with absolute references ($A$2:$J$6);
		// ST_Ref allows both spellings.
		if part.AutoFilter == nil || strings.ReplaceAll(part.AutoFilter.Ref, "$", "") != want {
			t.Errorf("%s autoFilter: got %+v, want ref %s", ws.Name, part.AutoFilter, want)
		}
		if part.SheetPr != nil && part.SheetPr.FilterMode {
			t.Errorf("%s: sheetPr filterMode set, but no rows are filtered", ws.Name)
		}
		i := slices.IndexFunc(names, func(d excelize.DefinedName) bool {
			return d.Name == "_xlnm._FilterDatabase" && d.Scope == ws.Name
		})
		if i < 0 {
			t.Errorf("%s: no _xlnm._FilterDatabase name", ws.Name)
			continue
		}
		if got := strings.ReplaceAll(names[i].RefersTo, "$", ""); got != "'"+ws.Name+"'!"+want {
			t.Errorf("%s _xlnm._FilterDatabase: got %s, want '%s'!%s", ws.Name, names[i].RefersTo, ws.Name, want)
		}
	}
}

func TestWriteXLSXColumnWidths(t *testing.T) {
	wb := testWorkbook()
	f, data := writeWorkbook(t, wb)
	// Hand-worked widths: the longest text of each column (header, unit
	// plus the 3-character filter button, or the value as shown) plus 1,
	// kept within 8–48.
	cases := []struct {
		sheet, col string
		want       float64
		why        string
	}{
		{"segments", "A", 8, `"pipe_id" and "P-204" are under the minimum`},
		{"segments", "C", 13, `"install_year" is 12 characters`},
		{"segments", "F", 13, `"1,234,567.89" is 12 characters`},
		{"segments", "G", 16, `"fails_fire_flow" is 15 characters`},
		{"segments", "H", 48, "the long note is capped"},
		{"segments", "I", 20, `"123,456,789,012.346" (3 decimals) is 19 characters`},
	}
	for _, tc := range cases {
		got, err := f.GetColWidth(tc.sheet, tc.col)
		if err != nil {
			t.Fatal(err)
		}
		if got != tc.want {
			t.Errorf("%s column %s: width %g, want %g (%s)", tc.sheet, tc.col, got, tc.want, tc.why)
		}
	}
	for _, ws := range wb.Sheets {
		part := readWorksheetPart(t, data, ws.Name)
		if len(part.Cols) != len(ws.Columns) {
			t.Errorf("%s: %d col elements, want %d", ws.Name, len(part.Cols), len(ws.Columns))
		}
		for i, c := range part.Cols {
			if c.Min != i+1 || c.Max != i+1 {
				t.Errorf("%s col element %d covers %d–%d, want ascending single columns", ws.Name, i, c.Min, c.Max)
			}
		}
	}
}

func TestWriteXLSXDeterministic(t *testing.T) {
	var first []byte
	// Several writes: excelize's stream order is a map's order, so two
	// writes alone could agree by chance.
	for i := range 8 {
		var buf bytes.Buffer
		if err := WriteXLSX(&buf, testWorkbook()); err != nil {
			t.Fatal(err)
		}
		if i == 0 {
			first = buf.Bytes()
			continue
		}
		if !bytes.Equal(buf.Bytes(), first) {
			t.Fatalf("write %d differs from write 1 (%d vs %d bytes)", i+1, buf.Len(), len(first))
		}
	}
	zr, err := zip.NewReader(bytes.NewReader(first), int64(len(first)))
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, file := range zr.File {
		names = append(names, file.Name)
	}
	if !slices.IsSorted(names) || names[0] != "[Content_Types].xml" {
		t.Errorf("zip entries not in name order: %q", names)
	}
	f, err := excelize.OpenReader(bytes.NewReader(first))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	props, err := f.GetDocProps()
	if err != nil {
		t.Fatal(err)
	}
	if props.Created != fixedDocTime || props.Modified != fixedDocTime {
		t.Errorf("core.xml created %q, modified %q, want both %q", props.Created, props.Modified, fixedDocTime)
	}
	today := time.Now().UTC().Format("2006-01-02")
	for _, file := range zr.File {
		r, _ := file.Open()
		b, _ := io.ReadAll(r)
		r.Close()
		if bytes.Contains(b, []byte(today)) {
			t.Errorf("%s holds today's date %s", file.Name, today)
		}
	}
}

func TestWriteXLSXErrors(t *testing.T) {
	one := func(ws WorkSheet) *Workbook { return &Workbook{Sheets: []WorkSheet{ws}} }
	col := []WorkColumn{{Name: "x"}}
	cases := []struct {
		name string
		wb   *Workbook
		want string // part of the error message
	}{
		{"nil workbook", nil, "no sheets"},
		{"no sheets", &Workbook{}, "no sheets"},
		{"name used twice", &Workbook{Sheets: []WorkSheet{{Name: "plan", Columns: col}, {Name: "Plan", Columns: col}}}, `"Plan"`},
		{"name too long", one(WorkSheet{Name: strings.Repeat("n", 32), Columns: col}), strings.Repeat("n", 32)},
		{"name with slash", one(WorkSheet{Name: "a/b", Columns: col}), `"a/b"`},
		{"no columns", one(WorkSheet{Name: "plan"}), "no columns"},
		{"short row", one(WorkSheet{Name: "plan", Columns: []WorkColumn{{Name: "x"}, {Name: "y"}}, Rows: [][]any{{1}}}), "data row 1: 1 cells for 2 columns"},
		{"float32", one(WorkSheet{Name: "plan", Columns: col, Rows: [][]any{{float32(1)}}}), "float32"},
		{"time", one(WorkSheet{Name: "plan", Columns: col, Rows: [][]any{{time.Time{}}}}), "time.Time"},
		{"decimals too many", one(WorkSheet{Name: "plan", Columns: []WorkColumn{{Name: "x", Decimals: 16}}}), "decimals 16"},
		{"decimals negative", one(WorkSheet{Name: "plan", Columns: []WorkColumn{{Name: "x", Decimals: -1}}}), "decimals -1"},
		{"string too long", one(WorkSheet{Name: "plan", Columns: col, Rows: [][]any{{strings.Repeat("é", 32768)}}}), "32768 UTF-16 units"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			err := WriteXLSX(&buf, tc.wb)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("got error %v, want one containing %q", err, tc.want)
			}
			if buf.Len() != 0 {
				t.Errorf("%d bytes written despite the error", buf.Len())
			}
		})
	}
}

// countingWriter counts the bytes written through it.
type countingWriter struct{ n int64 }

func (w *countingWriter) Write(p []byte) (int, error) {
	w.n += int64(len(p))
	return len(p), nil
}

// benchmarkWorkbook is one sheet of rows × 30 columns like the segment
// table: 5 strings, 20 floats, 4 ints and a boolean, from a seeded RNG.
func benchmarkWorkbook(rows int) *Workbook {
	rng := rand.New(rand.NewPCG(1, 1))
	materials := []string{"CI", "DI", "PVC", "AC", "HDPE"}
	streets := []string{"Dovecote Road", "Millrace Lane", "Tanner Street", "Heron Way", "Quarry Hill"}
	ws := WorkSheet{Name: "segments"}
	for _, n := range []string{"pipe_id", "material", "street", "zone", "status"} {
		ws.Columns = append(ws.Columns, WorkColumn{Name: n})
	}
	for i := range 20 {
		ws.Columns = append(ws.Columns, WorkColumn{Name: "figure_" + strconv.Itoa(i), Unit: "ft", Decimals: 2})
	}
	for i := range 4 {
		ws.Columns = append(ws.Columns, WorkColumn{Name: "count_" + strconv.Itoa(i), Integer: true})
	}
	ws.Columns = append(ws.Columns, WorkColumn{Name: "fails_fire_flow"})
	ws.Rows = make([][]any, rows)
	for r := range ws.Rows {
		row := make([]any, 0, len(ws.Columns))
		row = append(row, strconv.Itoa(100000+r), materials[rng.IntN(len(materials))],
			streets[rng.IntN(len(streets))], "Z"+strconv.Itoa(rng.IntN(9)), "scored")
		for range 20 {
			row = append(row, rng.Float64()*1000)
		}
		for range 4 {
			row = append(row, rng.IntN(5000))
		}
		ws.Rows[r] = append(row, rng.IntN(2) == 0)
	}
	return &Workbook{Sheets: []WorkSheet{ws}}
}

func BenchmarkWriteXLSX(b *testing.B) {
	const rows = 100_000
	wb := benchmarkWorkbook(rows)
	b.ReportAllocs()
	var w countingWriter
	for b.Loop() {
		w.n = 0
		if err := WriteXLSX(&w, wb); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(rows*b.N)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(w.n), "bytes/file")
}
