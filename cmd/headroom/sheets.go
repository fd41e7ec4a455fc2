package main

import (
	"slices"
	"strings"
	"unicode/utf16"

	"headroom/gis"
	"headroom/report"
)

// maxSheetRows is the most data rows ranked.xlsx gives a sheet: a
// spreadsheet of a million rows is at Excel's limit (1,048,576 rows) and
// slow to open and to write. A longer table keeps its first rows (the
// highest-ranked segments) and the "truncated" sheet says so; the CSV files
// hold every row.
const maxSheetRows = 100_000

// rankedWorkbook is ranked.xlsx: the tables of the CSV files, one sheet
// each, with the same headers and values, a row of units under the header.
// projects and plan are nil when the run has no replacement program.
// A table longer than limit rows keeps its first limit, and a last sheet,
// "truncated", lists each shortened sheet, its CSV file and both counts.
func rankedWorkbook(ranked, projects, plan, problems *gis.Layer, limit int) *report.Workbook {
	wb := &report.Workbook{}
	var cut [][]any
	for _, t := range []struct {
		name, file string
		layer      *gis.Layer
	}{{"segments", sheetCSV["segments"], ranked}, {"projects", sheetCSV["projects"], projects}, {"plan", sheetCSV["plan"], plan}, {"problems", sheetCSV["problems"], problems}} {
		if t.layer == nil {
			continue
		}
		if n := t.layer.Len(); n > limit {
			cut = append(cut, []any{t.name, t.file, n, limit})
		}
		wb.Sheets = append(wb.Sheets, workSheet(t.name, t.layer, limit))
	}
	if cut != nil {
		wb.Sheets = append(wb.Sheets, report.WorkSheet{Name: "truncated", Rows: cut, Columns: []report.WorkColumn{
			{Name: "sheet"}, {Name: "csv_file"}, {Name: "rows_in_csv", Integer: true}, {Name: "rows_in_sheet", Integer: true}}})
	}
	return wb
}

// workSheet turns a layer's table (its geometry dropped) into a sheet of
// its first limit rows at most.
func workSheet(name string, l *gis.Layer, limit int) report.WorkSheet {
	ws := report.WorkSheet{Name: name, Columns: make([]report.WorkColumn, len(l.Columns)), Rows: make([][]any, min(l.Len(), limit))}
	for i, c := range l.Columns {
		ws.Columns[i] = report.WorkColumn{Name: c.Name, Unit: unitOf(c.Name), Decimals: max(c.Decimals, 0),
			Integer: c.Kind == gis.Integer, Plain: plainNumber(c.Name)}
	}
	rd := l.Reader()
	for i := range ws.Rows {
		ws.Rows[i] = fitCells(slices.Clone(rd.Row(i).Values), name)
	}
	return ws
}

// maxCellUTF16 is the most text a spreadsheet cell holds, in UTF-16 code
// units (Excel's specifications and limits: 32,767 characters).
const maxCellUTF16 = 32767

// fitCells returns values with every text too long for a cell cut short and
// ended with a note naming the CSV file that holds it whole (a project's
// list of pipe ids can run to 100,000 characters); values itself is left
// as it is, since the layer's other writers share it.
func fitCells(values []any, sheet string) []any {
	out := values
	for c, v := range values {
		s, ok := v.(string)
		if !ok || len(s) <= maxCellUTF16 { // a UTF-8 byte is at most one UTF-16 unit
			continue
		}
		if &out[0] == &values[0] {
			out = slices.Clone(values)
		}
		out[c] = cutUTF16(s, sheet)
	}
	return out
}

// cutUTF16 shortens s to fit a cell, ending it with a note.
func cutUTF16(s, sheet string) string {
	note := " … (cut to fit a spreadsheet cell; the " + sheetCSV[sheet] + " row holds it all)"
	room := maxCellUTF16 - len(utf16.Encode([]rune(note)))
	n := 0
	for i, r := range s {
		n += utf16.RuneLen(r)
		if n > room {
			return s[:i] + note
		}
	}
	return s
}

// sheetCSV is the CSV file each sheet repeats.
var sheetCSV = map[string]string{"segments": "ranked.csv", "projects": "projects.csv", "plan": "plan.csv", "problems": "problems.csv"}

// unitOf is a column's unit in words, from its name: the suffix, or the
// scale of a score ("" when it carries none).
func unitOf(name string) string {
	if u := columnUnit(name); u != "" {
		return u
	}
	switch {
	case name == "score" || strings.HasPrefix(name, "score_") || strings.HasSuffix(name, "priority") || name == "mean_performance":
		return "0–100"
	case strings.HasSuffix(name, "risk"):
		return "1–25"
	case name == "likelihood" || name == "consequence":
		return "1–5"
	case strings.HasSuffix(name, "year") || name == "year":
		return "year"
	}
	return ""
}

// plainNumber reports a number column shown without a thousands separator:
// years, ranks and row numbers.
func plainNumber(name string) bool {
	return strings.HasSuffix(name, "year") || strings.HasSuffix(name, "rank") || name == "feature" ||
		strings.HasSuffix(name, "_node")
}
