package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"unicode/utf16"

	"github.com/xuri/excelize/v2"

	"headroom/gis"
	"headroom/report"
	"headroom/report/reportcheck"
)

// TestReportEquationsReproduceSolver: the Hazen-Williams figures printed on
// each evidence sheet, computed from the published per-1,000-ft form with
// the handbook constant 148.07 (DOMAIN.md §1.3) and the numbers shown,
// reproduce the solver's own unit head loss and capacity for that main.
// The substituted text is parsed back, so what a reader would recompute
// from the page is what is checked.
func TestReportEquationsReproduceSolver(t *testing.T) {
	r := demoResult(t)
	sheets, _ := r.reportSheets()
	if len(sheets) != len(r.prog.projects) {
		t.Fatalf("%d sheets for %d projects", len(sheets), len(r.prog.projects))
	}
	num := regexp.MustCompile(`[0-9]+(\.[0-9]+)?`)
	checked := 0
	for _, sh := range sheets {
		var p progProject
		for _, pr := range r.prog.projects {
			if pr.id == sh.ID {
				p = pr
			}
		}
		j, i, ok := r.sheetGoverning(p.segments)
		if !ok {
			continue
		}
		if len(sh.Equations) != 3 {
			t.Fatalf("%s: %d equations", sh.ID, len(sh.Equations))
		}
		// "h₁₀₀₀ = (148.07 × Q / (C × d^2.63))^1.852": the numbers in order are
		// 1000 (from the subscript), 148.07, Q, C, d, 2.63, 1.852.
		f := num.FindAllString(strings.ReplaceAll(sh.Equations[0].Substituted, "h₁₀₀₀", ""), -1)
		if len(f) != 6 {
			t.Fatalf("%s: substituted head loss %q", sh.ID, sh.Equations[0].Substituted)
		}
		k, q, c, d := atof(t, f[0]), atof(t, f[1]), atof(t, f[2]), atof(t, f[3])
		h := math.Pow(k*q/(c*math.Pow(d, 2.63)), 1.852)
		want := r.checks[j].Slope * 1000
		// The page rounds Q to 0.1 gpm, C to 0.1 and d to 0.001 in, which
		// moves h by well under 0.3 %.
		if math.Abs(h-want) > 0.003*want+0.01 {
			t.Errorf("%s (%s): the page's figures give %.3f ft/kft, the solver %.3f", sh.ID, r.pipes[i].ID, h, want)
		}
		capWant := r.checks[j].Capacity.GPM()
		capQ := c * math.Pow(d, 2.63) * math.Pow(1000*r.limits.MaxSlope, 0.54) / 148.07
		if math.Abs(capQ-capWant) > 0.003*capWant+0.1 {
			t.Errorf("%s: the page's capacity %.1f gpm, the solver's %.1f", sh.ID, capQ, capWant)
		}
		// The SI form (DOMAIN.md §1.3: h = 10.674·L·Q^1.852/(C^1.852·D^4.870),
		// Q m³/s, D m) from the same main gives the same slope.
		si := r.sheetEquationsSI(i, j)
		g := num.FindAllString(strings.ReplaceAll(si[0].Substituted, "h_km", ""), -1)
		if len(g) != 8 {
			t.Fatalf("%s: SI substituted head loss %q", sh.ID, si[0].Substituted)
		}
		hSI := atof(t, g[0]) * atof(t, g[1]) * math.Pow(atof(t, g[2]), 1.852) / (math.Pow(atof(t, g[4]), 1.852) * math.Pow(atof(t, g[6]), 4.870))
		// 10.674 against the solver's exact 10.670 (DOMAIN.md §1.3) and Q to
		// 1e-5 m³/s: within 0.5 %.
		if math.Abs(hSI-want) > 0.005*want+0.01 {
			t.Errorf("%s: the SI figures give %.3f m/km, the solver %.3f", sh.ID, hSI, want)
		}
		checked++
	}
	if checked == 0 {
		t.Fatal("no sheet had a scored main")
	}
}

func atof(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// TestRankedXLSXMatchesCSV: ranked.xlsx, read back with excelize, holds the
// same tables as ranked.csv, projects.csv, plan.csv and problems.csv:
// the same headers, a units row, and every cell the same value (numbers to
// the CSV's rounding, text exactly).
func TestRankedXLSXMatchesCSV(t *testing.T) {
	dir := builtInRun(t)
	f, err := excelize.OpenFile(filepath.Join(dir, "ranked.xlsx"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheets := map[string]string{"segments": "ranked.csv", "projects": "projects.csv", "plan": "plan.csv", "problems": "problems.csv"}
	if got := f.GetSheetList(); strings.Join(got, ",") != "segments,projects,plan,problems" {
		t.Fatalf("sheets %v", got)
	}
	for sheet, file := range sheets {
		csvRows := readCSV(t, filepath.Join(dir, file))
		rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		if len(rows) != len(csvRows)+1 {
			t.Fatalf("%s: %d rows, %s has %d (+1 units row)", sheet, len(rows), file, len(csvRows))
		}
		if strings.Join(rows[0], ",") != strings.Join(csvRows[0], ",") {
			t.Fatalf("%s header %v, %s %v", sheet, rows[0], file, csvRows[0])
		}
		for k, want := range csvRows[1:] {
			got := rows[k+2]
			for c, w := range want {
				g := ""
				if c < len(got) {
					g = got[c]
				}
				if !sameCell(g, w) {
					t.Fatalf("%s row %d column %s: xlsx %q, csv %q", sheet, k+1, csvRows[0][c], g, w)
				}
			}
		}
	}
	// The units row names the unit of a column that carries one.
	units, _ := f.GetRows("segments")
	for c, name := range units[0] {
		if name == "flow_gpm" && units[1][c] != "US gallons per minute" {
			t.Errorf("flow_gpm unit %q", units[1][c])
		}
	}
}

// sameCell compares an xlsx raw value with the CSV text: equal text, or
// numbers equal to the CSV's decimals.
func sameCell(xlsx, csv string) bool {
	if xlsx == csv {
		return true
	}
	a, errA := strconv.ParseFloat(xlsx, 64)
	b, errB := strconv.ParseFloat(csv, 64)
	if errA != nil || errB != nil {
		return false
	}
	dec := 0
	if _, frac, ok := strings.Cut(csv, "."); ok {
		dec = len(frac)
	}
	return math.Abs(a-b) <= 0.5*math.Pow(10, -float64(dec))+1e-9*math.Abs(b)
}

// TestManifestAndRepeatability: two runs of the same inputs write the same
// bytes in every file, the manifest apart from its timestamp, and the
// manifest's sizes and SHA-256 (computed here with crypto/sha256, FIPS
// 180-4) match the files beside it.
func TestManifestAndRepeatability(t *testing.T) {
	first := builtInRun(t)
	second := t.TempDir()
	if code, _, stderr := runHeadroom(t, "run", "--quiet", "--out", second); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	entries, err := os.ReadDir(first)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		a, _ := os.ReadFile(filepath.Join(first, e.Name()))
		b, err := os.ReadFile(filepath.Join(second, e.Name()))
		if err != nil {
			t.Fatalf("%s not written by the second run: %v", e.Name(), err)
		}
		if e.Name() == "manifest.json" {
			a, b = withoutCreated(t, a), withoutCreated(t, b)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between two runs of the same inputs", e.Name())
		}
	}
	raw, err := os.ReadFile(filepath.Join(first, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	m, err := report.ReadManifest(bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Outputs) != len(entries)-1 {
		t.Errorf("manifest lists %d outputs, the folder holds %d files besides it", len(m.Outputs), len(entries)-1)
	}
	for _, o := range m.Outputs {
		b, err := os.ReadFile(filepath.Join(first, o.Path))
		if err != nil {
			t.Fatalf("manifest names %s: %v", o.Path, err)
		}
		sum := sha256.Sum256(b)
		if hex.EncodeToString(sum[:]) != o.SHA256 || int64(len(b)) != o.Bytes {
			t.Errorf("%s: manifest %d bytes %s, file %d bytes %x", o.Path, o.Bytes, o.SHA256, len(b), sum)
		}
	}
	if m.Version != version || len(m.Scenarios) != 3 || len(m.Inputs) != 7 || m.Config["units"] != "us" {
		t.Errorf("manifest: version %q, %d scenarios, %d inputs, units %v", m.Version, len(m.Scenarios), len(m.Inputs), m.Config["units"])
	}
	for _, c := range m.Counts {
		if c.In != c.Used+c.LeftOut {
			t.Errorf("manifest counts %s: %d in ≠ %d used + %d left out", c.Layer, c.In, c.Used, c.LeftOut)
		}
	}
	for _, sc := range m.Scenarios {
		if sc.RelativeFlowChange > 1e-6 || math.Abs(sc.Supply-sc.Demand) > 1e-6*sc.Demand {
			t.Errorf("manifest scenario %s: relative flow change %g, supply %g, demand %g", sc.Name, sc.RelativeFlowChange, sc.Supply, sc.Demand)
		}
	}
}

// withoutCreated is a manifest with its timestamp blanked.
func withoutCreated(t *testing.T, b []byte) []byte {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	if _, ok := m["created"]; !ok {
		t.Fatal("manifest has no created time")
	}
	m["created"] = ""
	out, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// TestManifestConfigIsTheConfigUsed: the manifest's config, written back as
// TOML, loads to the config the run used (defaults filled in).
func TestManifestConfigIsTheConfigUsed(t *testing.T) {
	r := demoResult(t)
	m, err := configAsUsed(r.cfg)
	if err != nil {
		t.Fatal(err)
	}
	ff := m["fire_flow"].(map[string]any)
	if ff["enabled"] != true {
		t.Errorf("fire_flow.enabled %v, want the default true", ff["enabled"])
	}
	if m["analysis_year"] != int64(r.cfg.AnalysisYear) {
		t.Errorf("analysis_year %v, want %d", m["analysis_year"], r.cfg.AnalysisYear)
	}
	if _, err := json.Marshal(m); err != nil {
		t.Fatalf("the config does not encode as JSON: %v", err)
	}
}

// TestReportOpensInBrowser: the demo run's report.html, opened offline in
// headless Chromium, draws one path per main with a line geometry, the
// legend and every chart, requests nothing but itself, shows a main's
// figures on hover and goes to a project's evidence sheet on click
// (reportcheck.InBrowser); the screenshots go to $HEADROOM_ARTIFACTS.
func TestReportOpensInBrowser(t *testing.T) {
	dir := builtInRun(t)
	r := demoResult(t)
	mains := 0
	for _, p := range r.pipes {
		if len(mapLines(p.Geometry, mapProjection{cosLat: 1})) > 0 {
			mains++
		}
	}
	reportcheck.InBrowser(t, filepath.Join(dir, "report.html"), mains,
		[]string{"chart-scores", "chart-inventory", "chart-cost-risk", "chart-fire-flow"})
}

// TestReportWithoutProgram: with no replacement program the report has one
// evidence sheet per top-ranked segment, in rank order, coloured by the
// hydraulic score, and still renders.
func TestReportWithoutProgram(t *testing.T) {
	base := demoResult(t)
	r := *base // a shallow copy: only prog changes, nothing shared is written
	r.prog = nil
	d := r.reportDocument(r.pipeLayer(), r.hydrantOutput())
	if len(d.Sheets) != reportTopSegments {
		t.Fatalf("%d sheets, want the top %d segments", len(d.Sheets), reportTopSegments)
	}
	for k, sh := range d.Sheets {
		for i, sc := range r.scores {
			if sc.Rank == k+1 && sh.ID != "segment-"+r.pipes[i].ID {
				t.Errorf("sheet %d is %s, want rank %d's main %s", k+1, sh.ID, k+1, r.pipes[i].ID)
			}
		}
	}
	if d.Map.ScaleLabel != "hydraulic score (0–100)" {
		t.Errorf("map colours %q without a program", d.Map.ScaleLabel)
	}
	for _, c := range d.Charts {
		if c.ID == "chart-cost-risk" {
			t.Error("a cost chart without projects")
		}
	}
	var b bytes.Buffer
	if err := report.WriteHTML(&b, d); err != nil {
		t.Fatal(err)
	}
	for _, sh := range d.Sheets {
		if !strings.Contains(b.String(), `id="`+sh.ID+`"`) {
			t.Errorf("sheet %s not in the page", sh.ID)
		}
	}
}

// TestReportWithoutFireFlow: with fire flow off there are no shortfalls to
// charge (fireCharge is nil); the sheets still list every project and
// name no hydrant (a 100k-segment run with fire_flow.enabled = false
// once stopped here).
func TestReportWithoutFireFlow(t *testing.T) {
	base := demoResult(t)
	r := *base // a shallow copy: only fireCharge changes
	r.fireCharge = nil
	sheets, _ := r.reportSheets()
	if len(sheets) != len(r.prog.projects) {
		t.Fatalf("%d sheets for %d projects", len(sheets), len(r.prog.projects))
	}
	for _, sh := range sheets {
		for _, f := range sh.Failed {
			if strings.Contains(f, "fire flow of hydrant") {
				t.Errorf("%s: %q without fire-flow shortfalls", sh.ID, f)
			}
		}
	}
}

// TestReportMapDrawsTheWorstFirst: a network larger than the map's limit is
// drawn in part, and the part is the mains in projects, then the highest
// priorities (the map's stated rule, reportmap.go), in layer order. The
// check recomputes the rule from the pipe layer's own columns.
func TestReportMapDrawsTheWorstFirst(t *testing.T) {
	r := demoResult(t)
	pipes := r.pipeLayer()
	cols, pipeRows := layerColumns(pipes), layerRows(pipes)
	inProject := 0
	for i := range r.pipes {
		if r.prog.projectOf[i] >= 0 {
			inProject++
		}
	}
	limit := inProject + 50
	drawn := r.mapMainsDrawn(pipes, cols, "priority", limit)
	if len(drawn) != limit || !slices.IsSorted(drawn) {
		t.Fatalf("drew %d rows (sorted %v), want %d in layer order", len(drawn), slices.IsSorted(drawn), limit)
	}
	kept := map[int]bool{}
	lowestKept := math.Inf(1)
	for _, i := range drawn {
		kept[i] = true
		if r.prog.projectOf[i] < 0 {
			v, _ := cell(cols, pipeRows[i], "priority").(float64)
			lowestKept = min(lowestKept, v)
		}
	}
	for i := range r.pipes {
		if r.prog.projectOf[i] >= 0 && !kept[i] {
			t.Fatalf("main %s is in a project but not drawn", r.pipes[i].ID)
		}
		if v, ok := cell(cols, pipeRows[i], "priority").(float64); ok && !kept[i] && r.scores[i].Scored && v > lowestKept {
			t.Fatalf("main %s (priority %g) left out while one of %g is drawn", r.pipes[i].ID, v, lowestKept)
		}
	}
	if all := r.mapMainsDrawn(pipes, cols, "priority", pipes.Len()); len(all) != pipes.Len() {
		t.Fatalf("at the limit the map drew %d of %d mains", len(all), pipes.Len())
	}
	hyd := r.hydrantOutput()
	hs := mapHydrants(hyd, newMapProjection(pipes), r.cfg.system())
	few := lowestHydrants(hs, hyd, "available_fire_flow_gpm", 5)
	var flows []float64
	hcols := layerColumns(hyd)
	for _, row := range hyd.Rows {
		if v, ok := cell(hcols, row, "available_fire_flow_gpm").(float64); ok {
			flows = append(flows, v)
		}
	}
	slices.Sort(flows)
	byID := map[string]float64{}
	for _, row := range hyd.Rows {
		if v, ok := cell(hcols, row, "available_fire_flow_gpm").(float64); ok {
			byID[cellText(hyd, hcols, row, "hydrant_id")] = v
		}
	}
	for _, h := range few {
		if byID[h.ID] > flows[4] {
			t.Errorf("hydrant %s (%g gpm) drawn, above the fifth lowest %g", h.ID, byID[h.ID], flows[4])
		}
	}
}

// TestRankedWorkbookTruncates: a table longer than the sheet limit keeps its
// first rows, the highest-ranked, and the "truncated" sheet names the CSV
// file that holds them all.
func TestRankedWorkbookTruncates(t *testing.T) {
	r := demoResult(t)
	ranked, problems := r.rankedLayer(r.pipeLayer()), r.problemLayer()
	limit := 100
	book := rankedWorkbook(ranked, r.progProjectLayer(), r.progPlanLayer(), problems, limit)
	var names []string
	for _, ws := range book.Sheets {
		names = append(names, ws.Name)
		if len(ws.Rows) > limit {
			t.Errorf("sheet %s holds %d rows, over the limit %d", ws.Name, len(ws.Rows), limit)
		}
	}
	if got := strings.Join(names, ","); got != "segments,projects,plan,problems,truncated" {
		t.Fatalf("sheets %s", got)
	}
	seg, rankedRows := book.Sheets[0], layerRows(ranked)
	for k := range limit {
		if !slices.Equal(seg.Rows[k], rankedRows[k].Values) {
			t.Fatalf("segments row %d is not ranked.csv's row %d", k+1, k+1)
		}
	}
	last := book.Sheets[len(book.Sheets)-1]
	if len(last.Rows) == 0 || last.Rows[0][0] != "segments" || last.Rows[0][1] != "ranked.csv" || last.Rows[0][2] != ranked.Len() || last.Rows[0][3] != limit {
		t.Fatalf("truncated sheet %v; want segments, ranked.csv, %d, %d first", last.Rows, ranked.Len(), limit)
	}
	if whole := rankedWorkbook(ranked, nil, nil, problems, ranked.Len()+len(problems.Rows)); len(whole.Sheets) != 2 {
		t.Fatalf("under the limit the book has %d sheets, want segments and problems", len(whole.Sheets))
	}
}

// TestLongCellsFitTheSheet: a text longer than a cell holds (32,767 UTF-16
// units, Excel's specifications and limits) is cut with a note, so that the
// workbook is still written (a 1M-pipe plan row's project list ran to
// 141,263), and the layer the CSV writer shares is left whole.
func TestLongCellsFitTheSheet(t *testing.T) {
	long := strings.Repeat("QM-1234,", 5000) + strings.Repeat("💧", 20000) // 40,000 + 40,000 UTF-16 units
	values := []any{"PLAN-1", long, 3.5}
	fit := fitCells(values, "plan")
	if values[1] != long {
		t.Fatal("fitCells changed the shared row")
	}
	cut := fit[1].(string)
	if n := len(utf16.Encode([]rune(cut))); n > 32767 || n < 32000 {
		t.Fatalf("cut text is %d UTF-16 units, want just under 32,767", n)
	}
	if !strings.HasSuffix(cut, "the plan.csv row holds it all)") || !strings.HasPrefix(long, strings.TrimSuffix(cut, cut[strings.LastIndex(cut, " … "):])) {
		t.Fatalf("cut text ends %q", cut[len(cut)-80:])
	}
	book := &report.Workbook{Sheets: []report.WorkSheet{{Name: "plan",
		Columns: []report.WorkColumn{{Name: "project_id"}, {Name: "project_ids"}, {Name: "x"}}, Rows: [][]any{fit}}}}
	var buf bytes.Buffer
	if err := report.WriteXLSX(&buf, book); err != nil {
		t.Fatalf("workbook with the cut cell: %v", err)
	}
	f, err := excelize.OpenReader(&buf)
	if err != nil {
		t.Fatal(err)
	}
	got, err := f.GetCellValue("plan", "B3")
	if err != nil || got != cut {
		t.Fatalf("read back %d chars (err %v), want the %d written", len(got), err, len(cut))
	}
	if err := report.WriteXLSX(&bytes.Buffer{}, &report.Workbook{Sheets: []report.WorkSheet{{Name: "plan",
		Columns: []report.WorkColumn{{Name: "a"}, {Name: "b"}, {Name: "c"}}, Rows: [][]any{values}}}}); err == nil {
		t.Fatal("the uncut text was accepted: the check above tests nothing")
	}
}

// TestReportSheetsCapped: past the sheet limit the report keeps the head
// of the plan's order (every funded project, then the unfunded ones by
// benefit per dollar), says how many projects have no sheet, and the map
// links only the mains of projects that have one. The rule is the one
// reportSheetsUpTo states; the check rebuilds it from planOrder and the
// plan's years.
func TestReportSheetsCapped(t *testing.T) {
	r := demoResult(t)
	order := r.planOrder()
	funded := 0
	for _, y := range r.prog.plan.Years {
		funded += len(y.Projects)
	}
	if funded == 0 || len(order) < funded+3 {
		t.Fatalf("the demo town's plan funds %d of %d projects; the test needs unfunded ones", funded, len(order))
	}
	for _, limit := range []int{0, funded + 2} {
		sheets, note := r.reportSheetsUpTo(limit)
		want := max(funded, limit)
		if len(sheets) != want {
			t.Fatalf("limit %d: %d sheets, want %d (funded %d)", limit, len(sheets), want, funded)
		}
		for k, sh := range sheets {
			if id := r.prog.projects[order[k]].id; sh.ID != id {
				t.Fatalf("limit %d: sheet %d is %s, the plan's order has %s", limit, k+1, sh.ID, id)
			}
		}
		if !strings.Contains(note, fmt.Sprintf("first %d of the %d projects", want, len(order))) || !strings.Contains(note, "projects.csv") {
			t.Errorf("limit %d: note %q", limit, note)
		}
		ids := sheetIDs(sheets)
		m := r.reportMap(r.pipeLayer(), r.hydrantOutput(), ids)
		linked, unlinked := 0, 0
		for _, mm := range m.Mains {
			k := slices.IndexFunc(r.pipes, func(p gis.Pipe) bool { return p.ID == mm.ID })
			inProject := k >= 0 && r.prog.projectOf[k] >= 0
			switch {
			case mm.Sheet != "" && !ids[mm.Sheet]:
				t.Fatalf("limit %d: main %s links to %s, which has no sheet", limit, mm.ID, mm.Sheet)
			case mm.Sheet != "":
				linked++
			case inProject && ids[r.prog.projects[r.prog.projectOf[k]].id]:
				t.Fatalf("limit %d: main %s of a project with a sheet has no link", limit, mm.ID)
			case inProject:
				unlinked++
			}
		}
		if linked == 0 || unlinked == 0 {
			t.Errorf("limit %d: %d mains linked, %d in projects without a sheet; want both", limit, linked, unlinked)
		}
	}
	if sheets, note := r.reportSheetsUpTo(len(order)); len(sheets) != len(order) || note != "" {
		t.Errorf("at the limit: %d sheets of %d, note %q", len(sheets), len(order), note)
	}
}
