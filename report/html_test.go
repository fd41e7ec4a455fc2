package report

import (
	"bytes"
	"fmt"
	"maps"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// The checks here read the page back with an HTML5 parser
// (golang.org/x/net/html, the tokenizer and tree builder of the WHATWG
// HTML specification), so they see what a browser's parser would build.

// sampleDocument is a small report of the invented town of Ossel Brook,
// with awkward text in it: markup characters in an ID and a title, and a
// chart with no data.
func sampleDocument() *Document {
	return &Document{
		Title:    `Ossel Brook water system <script>alert("x")</script> & more`,
		Subtitle: "headroom test, analysis year 2031",
		Cautions: []string{"Screening figures, not a design.", "Break records before 1990 are incomplete."},
		Summary: []Figure{
			{Label: "Mains", Value: "5", Note: "4 scored"},
			{Label: "Total cost", Value: "$1,204,000"},
		},
		Tables: []Table{{
			Caption: "Scenarios",
			Columns: []string{"scenario", "iterations", "supply (gpm)"},
			Rows:    [][]string{{"average day", "7", "1,812.5"}, {"peak hour", "9", "4,530.0"}},
		}},
		Map: Map{
			Caption: "Mains by priority.",
			Mains: []MapMain{
				{ID: "OB-1", Lines: [][][2]float64{{{0, 500}, {400, 500}}}, Value: 90, HasValue: true, Sheet: "PRJ-1",
					Tip: []Figure{{Label: "main", Value: "OB-1"}, {Label: "priority", Value: "90.0"}}},
				{ID: "OB-2", Lines: [][][2]float64{{{400, 500}, {1000, 0}}}, Value: 10, HasValue: true,
					Tip: []Figure{{Label: "priority", Value: "10.0", Note: "low"}}},
				{ID: "<b>&", Lines: [][][2]float64{{{0, 0}, {0, 500}}, {{10, 10}, {20, 20}, {20, 40}}}, Value: 100, HasValue: true, Sheet: "PRJ-1"},
				{ID: "OB-4", Lines: [][][2]float64{{{0, 0}, {1000, 0}}}, HasValue: false,
					Tip: []Figure{{Label: "not scored", Value: "no install year"}}},
				{ID: "OB-5", Lines: [][][2]float64{{{1000, 0}, {1000, 500}}}, Value: 0, HasValue: true},
			},
			Hydrants: []MapHydrant{
				{ID: "H-1", X: 0, Y: 500, Class: "AA"},
				{ID: "H-2", X: 400, Y: 500, Class: "A"},
				{ID: "H-3", X: 1000, Y: 0, Class: "B"},
				{ID: "H-4", X: 1000, Y: 500, Class: "C", Tip: []Figure{{Label: "available (gpm)", Value: "420"}}},
				{ID: "H-5", X: 0, Y: 0, Class: ""},
			},
			Classes: []HydrantClass{{"AA", "AA: 1,500 gpm or more"}, {"A", "A: 1,000–1,499 gpm"},
				{"B", "B: 500–999 gpm"}, {"C", "C: below 500 gpm"}},
			ScaleLabel: "priority (0–100)", ScaleMin: 0, ScaleMax: 100,
			UnitsPerLength: 0.3048, LengthName: "ft",
		},
		Charts: []Chart{
			{ID: "chart-bands", Title: "Priority bands", Kind: Bars, XLabel: "priority", YLabel: "mains",
				Categories: []string{"0–50", "50–100"}, Series: []Series{{Name: "2031", Values: []float64{3, 2}}, {Name: "2036", Values: []float64{1, 4}}}},
			{ID: "chart-stack", Title: "Length by material", Kind: Bars, Stacked: true, XLabel: "decade", YLabel: "length (mi)",
				Categories: []string{"1950s", "1960s", "1970s"},
				Series:     []Series{{Name: "cast iron", Values: []float64{1.5, 2, 0}}, {Name: "ductile iron", Values: []float64{0, 0.5, 3.25}}}},
			{ID: "chart-line", Title: "Cost against risk removed", Kind: Lines, XLabel: "cost (US$ million)", YLabel: "risk removed (%)",
				Series: []Series{{Name: "plan order", Points: [][2]float64{{0, 0}, {0.4, 22}, {1.1, 41}, {1.9, 55}}}}},
			{ID: "chart-fire", Title: "Available against needed fire flow", Kind: Points, Diagonal: true, XLabel: "needed (gpm)", YLabel: "available (gpm)",
				Series: []Series{{Name: "meets", Points: [][2]float64{{1000, 1400}, {1500, 2300}}}, {Name: "short", Points: [][2]float64{{2500, 900}}}}},
			{ID: "chart-empty", Title: "Nothing yet", Kind: Points, Series: []Series{{Name: "none"}}},
		},
		Sheets: []Sheet{
			{ID: "PRJ-1", Title: "PRJ-1 · Kestrel Row · 1,640 ft", Location: "Kestrel Row from Tallow Lane to the brook; 41.2° N",
				Figures: []Figure{{Label: "Cost", Value: "$812,000"}, {Label: "Plan year", Value: "2032"}},
				Reasons: []string{"two breaks since 2019", "6-in cast iron of 1931"},
				Failed:  []string{"unit head loss 14.2 ft/kft > 10.0 ft/kft"},
				Segments: Table{Columns: []string{"main", "length (ft)", "material"},
					Rows: [][]string{{"OB-1", "1,312", "cast iron"}, {"<b>&", "328", "cast iron"}}},
				Equations: []Equation{{Label: "Head loss in OB-1 at peak hour",
					Formula:     "h = 10.67 · L · Q^1.852 / (C^1.852 · D^4.87)",
					Substituted: "h = 10.67 · 400 · 0.0315^1.852 / (85^1.852 · 0.1524^4.87)",
					Result:      "h = 5.92 m"}},
				BeforeAfter: Table{Caption: "Before and after", Columns: []string{"figure", "before", "after"},
					Rows: [][]string{{"available fire flow (gpm)", "840", "1,620"}}}},
			{ID: "PRJ-2", Title: "PRJ-2 · Underbank Road", Figures: []Figure{{Label: "Cost", Value: "$392,000"}}},
		},
		Method:  []Section{{Heading: "Hydraulics", Paragraphs: []string{"Global Gradient Algorithm.", "Hazen-Williams head loss."}}},
		Sources: []string{"Todini & Pilati (1988), a gradient algorithm for the analysis of pipe networks."},
	}
}

// render renders d or fails the test.
func render(t testing.TB, d *Document) []byte {
	t.Helper()
	b, err := RenderHTML(d)
	if err != nil {
		t.Fatalf("RenderHTML: %v", err)
	}
	return b
}

// parse parses b as an HTML5 document.
func parse(t testing.TB, b []byte) *html.Node {
	t.Helper()
	n, err := html.Parse(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("parsing the report: %v", err)
	}
	return n
}

// all is every element under n for which keep is true, in document order.
func all(n *html.Node, keep func(*html.Node) bool) []*html.Node {
	var out []*html.Node
	for c := range n.Descendants() {
		if c.Type == html.ElementNode && keep(c) {
			out = append(out, c)
		}
	}
	return out
}

// attr is n's attribute key, "" when absent.
func attr(n *html.Node, key string) string {
	for _, a := range n.Attr {
		if a.Key == key {
			return a.Val
		}
	}
	return ""
}

// hasAttr reports whether n has attribute key.
func hasAttr(n *html.Node, key string) bool {
	return slices.ContainsFunc(n.Attr, func(a html.Attribute) bool { return a.Key == key })
}

// hasClass reports whether n's class list holds c.
func hasClass(n *html.Node, c string) bool {
	return slices.Contains(strings.Fields(attr(n, "class")), c)
}

// tagClass matches elements by tag name and class.
func tagClass(tag, class string) func(*html.Node) bool {
	return func(n *html.Node) bool { return n.Data == tag && hasClass(n, class) }
}

// byID is the element with that id, or nil.
func byID(doc *html.Node, id string) *html.Node {
	if found := all(doc, func(n *html.Node) bool { return attr(n, "id") == id }); len(found) > 0 {
		return found[0]
	}
	return nil
}

// text is n's text content.
func text(n *html.Node) string {
	var b strings.Builder
	for c := range n.Descendants() {
		if c.Type == html.TextNode {
			b.WriteString(c.Data)
		}
	}
	return b.String()
}

func TestHTMLMainsOnePathEach(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	paths := all(doc, tagClass("path", "main"))
	if len(paths) != len(d.Map.Mains) {
		t.Fatalf("got %d path.main, want %d", len(paths), len(d.Map.Mains))
	}
	var got, want []string
	for _, p := range paths {
		got = append(got, attr(p, "data-id"))
	}
	for _, m := range d.Map.Mains {
		want = append(want, m.ID)
	}
	slices.Sort(got)
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("data-ids: got %q, want %q", got, want)
	}
	for _, p := range paths {
		id := attr(p, "data-id")
		var main MapMain
		for _, m := range d.Map.Mains {
			if m.ID == id {
				main = m
			}
		}
		// One path per main: a main with several polylines is one path
		// with one moveto per polyline (SVG 1.1 §8.3.2).
		if n := strings.Count(attr(p, "d"), "M"); n != len(main.Lines) {
			t.Errorf("main %q: got %d subpaths, want %d", id, n, len(main.Lines))
		}
		inLink := p.Parent.Data == "a"
		if inLink != (main.Sheet != "") || (inLink && attr(p.Parent, "href") != "#"+main.Sheet) {
			t.Errorf("main %q: link %v to %q, want sheet %q", id, inLink, attr(p.Parent, "href"), main.Sheet)
		}
		if !main.HasValue && (hasAttr(p, "stroke") || !hasClass(p, "ns")) {
			t.Errorf("main %q is not scored but is drawn with stroke %q, class %q", id, attr(p, "stroke"), attr(p, "class"))
		}
	}
	// The scale runs viridis from its light end at ScaleMin to its dark
	// end at ScaleMax. Endpoint colours as published: matplotlib's
	// _viridis_data[255] and [0] (lib/matplotlib/_cm_listed.py), which are
	// also R viridisLite's viridis(2): "#FDE725", "#440154".
	for _, tc := range []struct {
		id, stroke string
	}{{"OB-5", "#fde725"}, {"<b>&", "#440154"}} {
		for _, p := range paths {
			if attr(p, "data-id") == tc.id && attr(p, "stroke") != tc.stroke {
				t.Errorf("main %q: got stroke %q, want %q", tc.id, attr(p, "stroke"), tc.stroke)
			}
		}
	}
}

// pathPoints decodes the path data pathData writes: "M x y" absolute,
// then relative pairs after "l", per SVG 1.1 §8.3 (implicit repeats of
// the last command).
func pathPoints(t *testing.T, d string) [][][2]float64 {
	t.Helper()
	var out [][][2]float64
	var nums []float64
	cmd := byte(0)
	flush := func() {
		for k := 0; k+1 < len(nums); k += 2 {
			switch cmd {
			case 'M':
				out = append(out, [][2]float64{{nums[k], nums[k+1]}})
			case 'l':
				line := out[len(out)-1]
				last := line[len(line)-1]
				out[len(out)-1] = append(line, [2]float64{last[0] + nums[k], last[1] + nums[k+1]})
			}
		}
		nums = nums[:0]
	}
	num := ""
	end := func() {
		if num != "" {
			v, err := strconv.ParseFloat(num, 64)
			if err != nil {
				t.Fatalf("path %q: %v", d, err)
			}
			nums = append(nums, v)
			num = ""
		}
	}
	for k := 0; k < len(d); k++ {
		c := d[k]
		switch {
		case c == 'M' || c == 'l':
			end()
			flush()
			cmd = c
		case c == ' ':
			end()
		case c == '-':
			end()
			num = "-"
		case c == '.' && strings.Contains(num, "."):
			end()
			num = "."
		default:
			num += string(c)
		}
	}
	end()
	flush()
	return out
}

func TestHTMLMapFitsNorthUp(t *testing.T) {
	// The sample's data span x 0–1000, y 0–500 map units. Fitting into a
	// 1000-unit-wide viewBox with a 20-unit margin: scale 960/1000 = 0.96,
	// height 0.96·500 + 2·20 = 520, so (x, y) ↦ (20 + 0.96x, 20 + 0.96(500 − y)).
	d := sampleDocument()
	doc := parse(t, render(t, d))
	svg := byID(doc, "map-svg")
	if svg == nil || attr(svg, "viewBox") != "0 0 1000 520" {
		t.Fatalf("map viewBox: got %q, want \"0 0 1000 520\"", attr(svg, "viewBox"))
	}
	want := func(p [2]float64) [2]float64 { return [2]float64{20 + 0.96*p[0], 20 + 0.96*(500-p[1])} }
	for _, p := range all(doc, tagClass("path", "main")) {
		var main MapMain
		for _, m := range d.Map.Mains {
			if m.ID == attr(p, "data-id") {
				main = m
			}
		}
		got := pathPoints(t, attr(p, "d"))
		if len(got) != len(main.Lines) {
			t.Fatalf("main %q: got %d polylines, want %d", main.ID, len(got), len(main.Lines))
		}
		for k, line := range main.Lines {
			if len(got[k]) != len(line) {
				t.Fatalf("main %q line %d: got %d points, want %d", main.ID, k, len(got[k]), len(line))
			}
			for j, pt := range line {
				w := want(pt)
				// Rounded to 0.1 unit, so within 0.05 plus float noise.
				if math.Abs(got[k][j][0]-w[0]) > 0.0501 || math.Abs(got[k][j][1]-w[1]) > 0.0501 {
					t.Errorf("main %q point %d: got %v, want %v", main.ID, j, got[k][j], w)
				}
			}
		}
	}
}

func TestHTMLScaleBarIsRound(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	label := byID(doc, "map-scale-text")
	bar := byID(doc, "map-scale-bar")
	if label == nil || bar == nil {
		t.Fatal("no scale bar")
	}
	var n float64
	var unit string
	if _, err := fmt.Sscanf(strings.ReplaceAll(text(label), ",", ""), "%g %s", &n, &unit); err != nil || unit != "ft" {
		t.Fatalf("scale bar label %q: want a number of ft (%v)", text(label), err)
	}
	// A round length: 1, 2 or 5 times a power of ten.
	m := n / math.Pow(10, math.Floor(math.Log10(n)))
	if math.Abs(m-1) > 1e-9 && math.Abs(m-2) > 1e-9 && math.Abs(m-5) > 1e-9 {
		t.Errorf("scale bar length %g ft is not 1, 2 or 5 × 10^k", n)
	}
	// Its width is that many ft at 0.3048 map units per ft and the fit's
	// 0.96 viewBox units per map unit (see TestHTMLMapFitsNorthUp).
	w, _ := strconv.ParseFloat(attr(bar, "width"), 64)
	if want := n * 0.3048 * 0.96; math.Abs(w-want) > 0.051 {
		t.Errorf("scale bar width: got %g, want %.2f for %g ft", w, want, n)
	}
}

func TestHTMLLegend(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	legend := byID(doc, "map-legend")
	if legend == nil {
		t.Fatal("no #map-legend")
	}
	txt := text(legend)
	for _, want := range []string{d.Map.ScaleLabel, "not scored", "not tested", "0", "100",
		"AA: 1,500 gpm or more", "A: 1,000–1,499 gpm", "B: 500–999 gpm", "C: below 500 gpm"} {
		if !strings.Contains(txt, want) {
			t.Errorf("legend lacks %q: %q", want, txt)
		}
	}
	stops := all(legend, func(n *html.Node) bool { return n.Data == "stop" })
	if len(stops) < 2 || attr(stops[0], "stop-color") != "#fde725" || attr(stops[len(stops)-1], "stop-color") != "#440154" {
		t.Errorf("legend gradient: want it to run from viridis #fde725 to #440154, got %d stops", len(stops))
	}
	// Each class has its own shape and colour, so the classes read without
	// colour as well as with it.
	items := all(legend, func(n *html.Node) bool { return n.Data == "li" })
	if len(items) != len(d.Map.Classes)+1 {
		t.Fatalf("got %d hydrant legend entries, want %d", len(items), len(d.Map.Classes)+1)
	}
	shapes, fills := map[string]bool{}, map[string]bool{}
	for _, li := range items {
		p := all(li, func(n *html.Node) bool { return n.Data == "path" })
		if len(p) != 1 {
			t.Fatalf("legend entry %q: got %d paths, want 1", text(li), len(p))
		}
		d := attr(p[0], "d")
		shapes[d[strings.IndexAny(d, "aLZ"):]] = true // the outline, with its start point cut off
		fills[attr(p[0], "fill")] = true
	}
	if len(fills) != len(items) {
		t.Errorf("hydrant legend: %d entries but %d distinct fills", len(items), len(fills))
	}
	if len(shapes) < len(d.Map.Classes) {
		t.Errorf("hydrant legend: %d classes but %d distinct shapes", len(d.Map.Classes), len(shapes))
	}
}

func TestHTMLHydrants(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	hs := all(doc, tagClass("g", "hydrant"))
	if len(hs) != len(d.Map.Hydrants) {
		t.Fatalf("got %d hydrants, want %d", len(hs), len(d.Map.Hydrants))
	}
	style := map[string]string{} // class → marker element id
	for _, h := range hs {
		use := all(h, func(n *html.Node) bool { return n.Data == "use" })
		if len(use) != 1 || !strings.HasPrefix(attr(use[0], "href"), "#") || byID(doc, attr(use[0], "href")[1:]) == nil {
			t.Fatalf("hydrant %q: want one <use> of a marker defined in the page", attr(h, "data-id"))
		}
		for _, want := range d.Map.Hydrants {
			if want.ID == attr(h, "data-id") {
				style[want.Class] = attr(use[0], "href")
			}
		}
	}
	if len(style) != 5 || len(slices.Compact(slices.Sorted(maps.Values(style)))) != 5 {
		t.Errorf("want five distinct markers for AA, A, B, C and untested, got %v", style)
	}
	// The last drawn is on top: the weakest class, C, over the others.
	if attr(hs[len(hs)-1], "data-id") != "H-4" || attr(hs[0], "data-id") != "H-5" {
		t.Errorf("drawing order: got %q first and %q last, want untested H-5 first and class C H-4 last",
			attr(hs[0], "data-id"), attr(hs[len(hs)-1], "data-id"))
	}
}

func TestHTMLTips(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	script := byID(doc, "map-data")
	if script == nil || attr(script, "type") != "application/json" {
		t.Fatal("no tooltip data")
	}
	raw := text(script)
	// The label is stored once; OB-1's figure that repeats its ID is left out.
	if strings.Count(raw, `"priority"`) != 1 || !strings.Contains(raw, `"90.0"`) || !strings.Contains(raw, `"low"`) {
		t.Errorf("tooltip data: %s", raw)
	}
	if strings.Contains(raw, `"OB-1"`) {
		t.Errorf("tooltip data repeats the ID OB-1: %s", raw)
	}
}

func TestHTMLCharts(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	for _, c := range d.Charts {
		fig := byID(doc, c.ID)
		if fig == nil || !hasClass(fig, "chart") {
			t.Errorf("chart %q: no element with class chart", c.ID)
			continue
		}
		svg := all(fig, func(n *html.Node) bool { return n.Data == "svg" && attr(n, "role") == "img" })
		if len(svg) != 1 {
			t.Fatalf("chart %q: got %d chart svgs, want 1", c.ID, len(svg))
		}
		titles := all(svg[0], func(n *html.Node) bool { return n.Data == "title" && n.Parent == svg[0] })
		descs := all(svg[0], func(n *html.Node) bool { return n.Data == "desc" })
		if len(titles) != 1 || text(titles[0]) != c.Title || len(descs) != 1 || text(descs[0]) == "" {
			t.Errorf("chart %q: want one <title> %q and a <desc>", c.ID, c.Title)
		}
		legend := all(fig, func(n *html.Node) bool { return n.Data == "li" })
		wantLegend := 0
		if len(c.Series) > 1 || c.Diagonal {
			wantLegend = len(c.Series) + map[bool]int{true: 1}[c.Diagonal]
		}
		if len(legend) != wantLegend {
			t.Errorf("chart %q: got %d legend entries, want %d", c.ID, len(legend), wantLegend)
		}
	}
	count := func(id, tag, class string) int { return len(all(byID(doc, id), tagClass(tag, class))) }
	if got := count("chart-bands", "rect", "bar"); got != 4 {
		t.Errorf("grouped bars: got %d, want 2 categories × 2 series = 4", got)
	}
	if got := count("chart-stack", "rect", "bar"); got != 6 {
		t.Errorf("stacked bars: got %d, want 3 × 2 = 6", got)
	}
	if got := count("chart-line", "polyline", "series-line"); got != 1 {
		t.Errorf("line chart: got %d polylines, want 1", got)
	}
	if got := count("chart-fire", "path", "mark"); got != 3 {
		t.Errorf("scatter: got %d markers, want 3", got)
	}
	if got := count("chart-fire", "line", "diagonal"); got != 1 {
		t.Errorf("scatter: got %d y = x lines, want 1", got)
	}
	if !strings.Contains(text(byID(doc, "chart-empty")), "no data") {
		t.Error(`empty chart: want "no data"`)
	}
	// The stacked bars' tops reach the tallest stack: 0.5 + 3.25 (3.75) on an
	// axis Heckbert's loose labels take to 4 (ticks 0, 1, 2, 3, 4).
	ticks := all(byID(doc, "chart-stack"), func(n *html.Node) bool { return n.Data == "text" && n.Parent.Data == "g" })
	var labels []string
	for _, tk := range ticks {
		labels = append(labels, text(tk))
	}
	if !slices.Equal(labels[:5], []string{"0", "1", "2", "3", "4"}) {
		t.Errorf("stacked chart y ticks: got %q, want 0 to 4", labels)
	}
}

func TestHTMLSheets(t *testing.T) {
	d := sampleDocument()
	doc := parse(t, render(t, d))
	sheets := all(doc, tagClass("section", "sheet"))
	if len(sheets) != len(d.Sheets) {
		t.Fatalf("got %d sheets, want %d", len(sheets), len(d.Sheets))
	}
	toc := byID(doc, "hr-contents")
	for k, s := range d.Sheets {
		if attr(sheets[k], "id") != s.ID {
			t.Errorf("sheet %d: got id %q, want %q", k, attr(sheets[k], "id"), s.ID)
		}
		if links := all(toc, func(n *html.Node) bool { return n.Data == "a" && attr(n, "href") == "#"+s.ID }); len(links) != 1 {
			t.Errorf("contents: got %d links to sheet %q, want 1", len(links), s.ID)
		}
	}
	first := text(sheets[0])
	for _, want := range []string{"Kestrel Row from Tallow Lane", "$812,000", "two breaks since 2019",
		"unit head loss 14.2 ft/kft > 10.0 ft/kft", "0.0315^1.852", "h = 5.92 m", "1,620"} {
		if !strings.Contains(first, want) {
			t.Errorf("sheet PRJ-1 lacks %q", want)
		}
	}
	// The segments table: a header and two rows, numbers right-aligned.
	tables := all(sheets[0], func(n *html.Node) bool { return n.Data == "table" })
	if len(tables) != 2 {
		t.Fatalf("sheet PRJ-1: got %d tables, want segments and before/after", len(tables))
	}
	rows := all(tables[0], func(n *html.Node) bool { return n.Data == "tr" })
	cells := all(rows[1], func(n *html.Node) bool { return n.Data == "td" })
	if len(rows) != 3 || len(cells) != 3 || hasClass(cells[0], "n") || !hasClass(cells[1], "n") {
		t.Errorf("segments table: want 3 rows with the length right-aligned only")
	}
	// Sheet PRJ-2 has no tables; none is drawn empty.
	if n := len(all(sheets[1], func(n *html.Node) bool { return n.Data == "table" })); n != 0 {
		t.Errorf("sheet PRJ-2: got %d tables, want none", n)
	}
	// A note on sheets left out is printed in the sheets' section, and
	// only when there is one.
	section := byID(doc, "hr-sheets")
	if strings.Contains(text(section), "left out") {
		t.Errorf("a note without SheetNote")
	}
	d.SheetNote = "Sheets for 2 of 9 projects; the 7 left out are in projects.csv."
	if got := text(byID(parse(t, render(t, d)), "hr-sheets")); !strings.Contains(got, d.SheetNote) {
		t.Errorf("the sheets' section lacks the note %q", d.SheetNote)
	}
}

func TestHTMLEscapes(t *testing.T) {
	d := sampleDocument()
	b := render(t, d)
	if !bytes.Contains(b, []byte(`data-id="&lt;b&gt;&amp;"`)) {
		t.Error(`main ID "<b>&" is not escaped in its data-id`)
	}
	doc := parse(t, b)
	if bs := all(doc, func(n *html.Node) bool { return n.Data == "b" }); len(bs) != 0 {
		t.Errorf("got %d <b> elements from escaped text, want none", len(bs))
	}
	scripts := all(doc, func(n *html.Node) bool { return n.Data == "script" })
	if len(scripts) != 2 {
		t.Errorf("got %d scripts, want the tooltip data and the page script", len(scripts))
	}
	h1 := all(doc, func(n *html.Node) bool { return n.Data == "h1" })
	if len(h1) != 1 || text(h1[0]) != d.Title {
		t.Errorf("title: got %q, want the text %q", text(h1[0]), d.Title)
	}
	var found bool
	for _, td := range all(doc, func(n *html.Node) bool { return n.Data == "td" }) {
		found = found || text(td) == "<b>&"
	}
	if !found {
		t.Error(`segments table: cell "<b>&" not found as text`)
	}
}

func TestHTMLSelfContained(t *testing.T) {
	b := render(t, sampleDocument())
	doc := parse(t, b)
	for _, n := range all(doc, func(*html.Node) bool { return true }) {
		switch n.Data {
		case "link", "img", "iframe", "object", "embed", "image", "base":
			t.Errorf("got a <%s> element; the page must not load anything", n.Data)
		}
		for _, a := range n.Attr {
			switch {
			case a.Key == "src" || a.Key == "srcset" || a.Key == "xlink:href" || a.Key == "action" || a.Key == "formaction":
				t.Errorf("<%s %s=%q>: the page must not load anything", n.Data, a.Key, a.Val)
			case a.Key == "href" && !strings.HasPrefix(a.Val, "#"):
				t.Errorf("<%s href=%q>: only in-page anchors are allowed", n.Data, a.Val)
			case a.Key == "style" && strings.Contains(a.Val, "url("):
				t.Errorf("<%s style=%q> refers to a URL", n.Data, a.Val)
			}
		}
	}
	for _, bad := range []string{"http://", "https://", "@import", "@font-face", "//cdn", "fetch(", "XMLHttpRequest"} {
		if bytes.Contains(b, []byte(bad)) {
			t.Errorf("the page contains %q", bad)
		}
	}
	// The only url() is the legend's gradient, an in-page reference.
	if got := bytes.Count(b, []byte("url(")); got != bytes.Count(b, []byte("url(#")) {
		t.Errorf("got %d url() references, not all in-page", got)
	}
}

func TestHTMLDeterministic(t *testing.T) {
	for _, tc := range []struct {
		name string
		doc  func() *Document
	}{{"sample", sampleDocument}, {"demo", func() *Document { return demoDocument(600) }}} {
		t.Run(tc.name, func(t *testing.T) {
			a, b := render(t, tc.doc()), render(t, tc.doc())
			if !bytes.Equal(a, b) {
				t.Fatal("two renders of the same document differ")
			}
			var w bytes.Buffer
			if err := WriteHTML(&w, tc.doc()); err != nil || !bytes.Equal(w.Bytes(), a) {
				t.Fatalf("WriteHTML differs from RenderHTML (%v)", err)
			}
		})
	}
}

func TestHTMLEmptyDocument(t *testing.T) {
	doc := parse(t, render(t, &Document{}))
	if byID(doc, "map-legend") == nil || byID(doc, "map-svg") == nil {
		t.Error("an empty document still draws the map and its legend")
	}
	if n := len(all(doc, tagClass("path", "main"))); n != 0 {
		t.Errorf("got %d mains, want 0", n)
	}
	if _, err := RenderHTML(nil); err == nil {
		t.Error("RenderHTML(nil): want an error")
	}
}

func TestHTMLSizeOfDemoTown(t *testing.T) {
	d := demoDocument(3000)
	b := render(t, d)
	doc := parse(t, b)
	if n := len(all(doc, tagClass("path", "main"))); n != 3000 {
		t.Fatalf("got %d mains, want 3000", n)
	}
	t.Logf("report for %d mains and %d hydrants: %d bytes", len(d.Map.Mains), len(d.Map.Hydrants), len(b))
	// Our budget: a report that still goes as an e-mail attachment.
	if len(b) > 2_500_000 {
		t.Errorf("report for 3,000 mains is %d bytes, over the 2.5 MB budget", len(b))
	}
}

func TestViridisEndpoints(t *testing.T) {
	// matplotlib lib/matplotlib/_cm_listed.py, _viridis_data entries
	// 0, 135 and 255, converted as round(255·v) per channel.
	hex := func(r, g, b float64) string {
		return fmt.Sprintf("#%02x%02x%02x", int(math.Round(255*r)), int(math.Round(255*g)), int(math.Round(255*b)))
	}
	for _, tc := range []struct {
		name string
		t    float64
		want string
	}{
		{"start", 0, hex(0.267004, 0.004874, 0.329415)},
		{"entry 135", 135.0 / 255, hex(0.121148, 0.592739, 0.544641)},
		{"end", 1, hex(0.993248, 0.906157, 0.143936)},
		// R viridisLite viridis(2), the same map's published hex codes.
		{"start, viridisLite", 0, "#440154"},
		{"end, viridisLite", 1, "#fde725"},
		{"below the range", -0.5, "#440154"},
		{"above the range", 7, "#fde725"},
		{"NaN", math.NaN(), "#440154"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := viridisAt(tc.t); got != tc.want {
				t.Errorf("viridisAt(%g): got %s, want %s", tc.t, got, tc.want)
			}
		})
	}
}

func TestNiceAxis(t *testing.T) {
	// Heckbert (Graphics Gems, 1990), loose labelling with 5 ticks, worked
	// by hand: 0–97 → range nice(97) = 100, step nice(100/4 = 25) = 20.
	for _, tc := range []struct {
		name   string
		lo, hi float64
		zero   bool
		want   []string
	}{
		{"0 to 97", 0, 97, true, []string{"0", "20", "40", "60", "80", "100"}},
		{"0.13 to 0.87", 0.13, 0.87, false, []string{"0", "0.2", "0.4", "0.6", "0.8", "1"}},
		{"1,020 to 4,870", 1020, 4870, false, []string{"1,000", "2,000", "3,000", "4,000", "5,000"}},
		{"all zero", 0, 0, true, []string{"0", "0.2", "0.4", "0.6", "0.8", "1"}},
		// nice(49) = 50, step nice(12.5) = 10.
		{"negative", -37, 12, true, []string{"-40", "-30", "-20", "-10", "0", "10", "20"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a := newAxis(tc.lo, tc.hi, tc.zero)
			var got []string
			for _, v := range a.ticks {
				got = append(got, a.label(v))
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("got %q, want %q", got, tc.want)
			}
		})
	}
}

func TestIsNumber(t *testing.T) {
	for _, tc := range []struct {
		s    string
		want bool
	}{
		{"12", true}, {"1,234.5", true}, {"-3.2", true}, {"−3.2", true}, {"$812,000", true}, {"US$4", true},
		{"45%", true}, {"1.2e-05", true}, {"", false}, {"cast iron", false}, {"Inf", false}, {"NaN", false},
		{"6-in", false}, {"12.5 to 40.1", false}, {"2031", true},
	} {
		if got := isNumber(tc.s); got != tc.want {
			t.Errorf("isNumber(%q): got %v, want %v", tc.s, got, tc.want)
		}
	}
}

// demoDocument is a demo-sized report of Ossel Brook, an invented town: a
// lattice of streets (blocks about 122 by 100 m, turned 8° and jittered)
// with nMains mains, priorities that rise towards the old centre, a dozen
// projects along single streets, hydrants at every third corner and the
// four charts of a run. Every value comes from a seeded generator.
func demoDocument(nMains int) *Document {
	rng := rand.New(rand.NewPCG(20, 31))
	nx := int(math.Ceil(math.Sqrt(float64(nMains)/2))) + 1
	ny := (nMains+2*nx-1)/(2*nx) + 1
	const bx, by, turn = 122.0, 100.0, 8 * math.Pi / 180
	node := func(i, j int) [2]float64 {
		x, y := float64(i)*bx+rng.NormFloat64()*3, float64(j)*by+rng.NormFloat64()*3
		return [2]float64{x*math.Cos(turn) - y*math.Sin(turn) + 512000, x*math.Sin(turn) + y*math.Cos(turn) + 4100000}
	}
	nodes := make([][][2]float64, nx)
	for i := range nodes {
		nodes[i] = make([][2]float64, ny)
		for j := range nodes[i] {
			nodes[i][j] = node(i, j)
		}
	}
	streets := []string{"Kestrel Row", "Tallow Lane", "Underbank Road", "Quarrel Street", "Mossgate", "Fennick Way", "Old Weir Road", "Brackle Hill"}
	materials := []string{"cast iron", "ductile iron", "PVC", "asbestos cement"}
	d := &Document{
		Title:    "Ossel Brook water system — water main capital plan screening",
		Subtitle: "headroom test build · analysis year 2031 · US units",
		Cautions: []string{
			"A screening of the whole network from its GIS layers and a hydraulic model: it ranks mains for a closer look and is not a design.",
			"Costs are order-of-magnitude unit prices; the break history before 1995 is incomplete.",
		},
		Summary: []Figure{
			{Label: "Mains", Value: grouped(float64(nMains), 0), Note: "96% scored"},
			{Label: "Length of main", Value: fmt.Sprintf("%.1f mi", float64(nMains)*370/5280)},
			{Label: "Hydrants short of needed fire flow", Value: "41", Note: "of 380 tested"},
			{Label: "Projects", Value: "12", Note: "$9,420,000 in 2031 money"},
		},
		Tables: []Table{
			{Caption: "Scenarios solved by the Global Gradient Algorithm", Columns: []string{"scenario", "× average day", "iterations", "supply (gpm)", "pressure (psi)"},
				Rows: [][]string{{"average day", "1.00", "6", "2,841.0", "52.1 to 88.4"}, {"max day", "1.80", "7", "5,113.8", "47.0 to 86.2"}, {"peak hour", "2.70", "8", "7,670.7", "38.9 to 83.5"}}},
			{Caption: "Planning criteria (peak hour) and what fails them", Columns: []string{"criterion", "limit", "failing"},
				Rows: [][]string{{"unit head loss", "10.0 ft/kft", "212 mains"}, {"velocity", "5.0 ft/s", "64 mains"}, {"minimum pressure", "40.0 psi", "18 junctions"}}},
		},
		Map: Map{
			Caption:    "Mains coloured by priority; hydrants by NFPA 291 class of available fire flow at 20 psi residual.",
			ScaleLabel: "priority (0–100)", ScaleMin: 0, ScaleMax: 100, UnitsPerLength: 0.3048, LengthName: "ft",
			Classes: []HydrantClass{{"AA", "AA: 1,500 gpm or more"}, {"A", "A: 1,000–1,499 gpm"}, {"B", "B: 500–999 gpm"}, {"C", "C: below 500 gpm"}},
		},
	}
	cx, cy := float64(nx)*0.35, float64(ny)*0.55 // the old centre, in lattice steps
	type edge struct{ i, j, di, dj int }
	var edges []edge
	for j := 0; j < ny && len(edges) < nMains; j++ {
		for i := 0; i < nx && len(edges) < nMains; i++ {
			if i+1 < nx {
				edges = append(edges, edge{i, j, 1, 0})
			}
			if j+1 < ny && len(edges) < nMains {
				edges = append(edges, edge{i, j, 0, 1})
			}
		}
	}
	projectOf := make([]string, len(edges))
	for k := range 12 {
		start := (k*len(edges))/12 + len(edges)/30
		for e := start; e < start+14 && e < len(edges); e += 2 { // every other edge: along one street
			projectOf[e] = fmt.Sprintf("PRJ-%03d", k+1)
		}
	}
	for k, e := range edges {
		a, b := nodes[e.i][e.j], nodes[e.i+e.di][e.j+e.dj]
		mid := [2]float64{(a[0]+b[0])/2 + rng.NormFloat64()*4, (a[1]+b[1])/2 + rng.NormFloat64()*4}
		lines := [][][2]float64{{a, mid, b}}
		if k%40 == 7 { // a main in two parts (a MultiLineString)
			gap := [2]float64{mid[0] + 3, mid[1] + 3}
			lines = [][][2]float64{{a, mid}, {gap, b}}
		}
		dist := math.Hypot(float64(e.i)-cx, float64(e.j)-cy) / math.Hypot(cx, cy)
		pr := math.Min(100, math.Max(0, 88-70*dist+rng.NormFloat64()*9))
		id := fmt.Sprintf("OB-%05d", k+1)
		street := streets[(e.j*3+e.i*e.di)%len(streets)]
		if e.di == 0 {
			street = streets[(e.i*5+1)%len(streets)]
		}
		m := MapMain{ID: id, Lines: lines, Value: pr, HasValue: rng.Float64() > 0.04, Sheet: projectOf[k]}
		m.Tip = []Figure{{Label: "main", Value: id}, {Label: "street", Value: street},
			{Label: "material", Value: materials[rng.IntN(len(materials))]}, {Label: "installed", Value: strconv.Itoa(1925 + rng.IntN(95))},
			{Label: "diameter (in)", Value: []string{"4", "6", "8", "12"}[rng.IntN(4)]}, {Label: "length (ft)", Value: grouped(320+rng.Float64()*100, 0)},
			{Label: "C-factor", Value: fixed(70+rng.Float64()*60, 0)}}
		if m.HasValue {
			m.Tip = append(m.Tip, Figure{Label: "priority", Value: strconv.FormatFloat(pr, 'f', 1, 64)})
		} else {
			m.Tip = append(m.Tip, Figure{Label: "not scored", Value: "no install year or material"})
		}
		if m.Sheet != "" {
			m.Tip = append(m.Tip, Figure{Label: "project", Value: m.Sheet})
		}
		d.Map.Mains = append(d.Map.Mains, m)
	}
	classes := []string{"AA", "A", "A", "B", "B", "C", ""}
	for i := 0; i < nx; i++ {
		for j := 0; j < ny; j++ {
			if (i+2*j)%3 != 0 {
				continue
			}
			p := nodes[i][j]
			h := MapHydrant{ID: fmt.Sprintf("OB-H%04d", len(d.Map.Hydrants)+1), X: p[0] + 6, Y: p[1] - 6, Class: classes[rng.IntN(len(classes))]}
			if h.Class != "" {
				h.Tip = []Figure{{Label: "NFPA 291 class", Value: h.Class}, {Label: "available (gpm)", Value: grouped(300+rng.Float64()*2200, 0)},
					{Label: "needed (gpm)", Value: "1,000"}}
			} else {
				h.Tip = []Figure{{Label: "note", Value: "not tested: isolated by a closed valve"}}
			}
			d.Map.Hydrants = append(d.Map.Hydrants, h)
		}
	}
	d.Charts = demoCharts(rng)
	for k := range 12 {
		id := fmt.Sprintf("PRJ-%03d", k+1)
		street := streets[k%len(streets)]
		sh := Sheet{ID: id, Title: fmt.Sprintf("%s · %s · %s ft", id, street, grouped(2400+rng.Float64()*900, 0)),
			Location: fmt.Sprintf("%s between %s and %s; centre 41.%03d° N, 87.%03d° W", street, streets[(k+2)%len(streets)], streets[(k+5)%len(streets)], rng.IntN(1000), rng.IntN(1000)),
			Figures: []Figure{{Label: "Plan year", Value: strconv.Itoa(2031 + k/3)}, {Label: "Cost", Value: "$" + grouped(400000+rng.Float64()*600000, 0), Note: "2031 money"},
				{Label: "Length", Value: grouped(2400+rng.Float64()*900, 0) + " ft", Note: "7 mains"}, {Label: "Worst priority", Value: fixed(70+rng.Float64()*25, 1)},
				{Label: "Largest risk", Value: fixed(12+rng.Float64()*10, 1), Note: "likelihood × consequence, 1–25"}},
			Reasons:  []string{"priority among the top tenth of the network", fmt.Sprintf("%d breaks since 2016", 2+rng.IntN(5)), "6-in cast iron laid in the 1930s"},
			Failed:   []string{fmt.Sprintf("unit head loss %.1f ft/kft at peak hour (limit 10.0)", 11+rng.Float64()*8), "needed fire flow at OB-H0102: 640 gpm available of 1,000 gpm"},
			Segments: Table{Caption: "Mains in this project", Columns: []string{"main", "street", "material", "diameter (in)", "installed", "length (ft)", "priority"}},
			Equations: []Equation{{Label: "Head loss at peak hour in the most loaded main",
				Formula:     "h = 4.52 · L · Q^1.852 / (C^1.852 · d^4.87)   (US units: h, L in ft; Q in gpm; d in in)",
				Substituted: fmt.Sprintf("h = 4.52 · 402 · %d^1.852 / (78^1.852 · 6.08^4.87)", 380+k*10),
				Result:      fmt.Sprintf("h = %.2f ft, %.1f ft per 1,000 ft", 4+float64(k)*0.2, 10+float64(k)*0.5)}},
			BeforeAfter: Table{Caption: "Before and after the upsizing loop", Columns: []string{"figure", "before", "after"},
				Rows: [][]string{{"available fire flow at OB-H0102 (gpm)", "640", "1,180"}, {"largest unit head loss (ft/kft)", "14.2", "3.1"}}},
		}
		for e := 0; e < 7; e++ {
			sh.Segments.Rows = append(sh.Segments.Rows, []string{fmt.Sprintf("OB-%05d", (k*len(edges))/12+len(edges)/30+2*e+1), street, "cast iron", "6",
				strconv.Itoa(1931 + e), grouped(330+rng.Float64()*90, 0), fixed(70+rng.Float64()*25, 1)})
		}
		d.Sheets = append(d.Sheets, sh)
	}
	d.Method = []Section{
		{Heading: "Hydraulics", Paragraphs: []string{"The network is solved for average day, max day and peak hour with the Global Gradient Algorithm (Todini & Pilati, 1988); head loss by Hazen-Williams."}},
		{Heading: "Scores and priority", Paragraphs: []string{"Each criterion gives a sub-score between breakpoints; the weighted sum is the hydraulic score.", "Priority combines the score with the likelihood and consequence of failure."}},
	}
	d.Sources = []string{"Todini, E. and Pilati, S. (1988). A gradient algorithm for the analysis of pipe networks.",
		"NFPA 291, Recommended Practice for Fire Flow Testing and Marking of Hydrants.",
		"Shamir, U. and Howard, C. D. D. (1979). An analytic approach to scheduling pipe replacement."}
	return d
}

// demoCharts are the four charts a run draws, with invented values.
func demoCharts(rng *rand.Rand) []Chart {
	bands := Chart{ID: "chart-scores", Title: "Priority of the scored mains", Kind: Bars, XLabel: "priority (0–100)", YLabel: "mains",
		Caption: "How many mains fall in each band of ten points."}
	counts := make([]float64, 10)
	for k := range 10 {
		bands.Categories = append(bands.Categories, fmt.Sprintf("%d–%d", 10*k, 10*k+10))
		counts[k] = math.Round(420 * math.Exp(-math.Pow(float64(k)-3.5, 2)/6))
	}
	bands.Series = []Series{{Name: "mains", Values: counts}}
	inv := Chart{ID: "chart-inventory", Title: "Length of main by material and decade installed", Kind: Bars, Stacked: true,
		XLabel: "decade installed", YLabel: "length (mi)", Categories: []string{"1920s", "1930s", "1950s", "1960s", "1970s", "1980s", "1990s", "2000s", "2010s", "unknown"}}
	for _, m := range []string{"asbestos cement", "cast iron", "ductile iron", "PVC"} {
		v := make([]float64, len(inv.Categories))
		for k := range v {
			v[k] = math.Round(rng.Float64()*60) / 10
		}
		inv.Series = append(inv.Series, Series{Name: m, Values: v})
	}
	cost := Chart{ID: "chart-cost-risk", Title: "Cumulative cost against cumulative risk removed", Kind: Lines,
		XLabel: "cumulative cost (US$ million, 2031 money)", YLabel: "risk × length removed (%)"}
	pts := [][2]float64{{0, 0}}
	for k := 1; k <= 12; k++ {
		pts = append(pts, [2]float64{pts[k-1][0] + 0.5 + rng.Float64()*0.6, 100 * (1 - math.Exp(-float64(k)/5))})
	}
	cost.Series = []Series{{Name: "projects in plan order", Points: pts}}
	fire := Chart{ID: "chart-fire-flow", Title: "Available against needed fire flow", Kind: Points, Diagonal: true,
		XLabel: "needed fire flow (gpm)", YLabel: "available fire flow (gpm)"}
	var meets, short [][2]float64
	for range 200 {
		need := []float64{500, 750, 1000, 1500, 2500}[rng.IntN(5)]
		avail := need * (0.4 + rng.Float64()*1.6)
		if avail >= need {
			meets = append(meets, [2]float64{need, avail})
		} else {
			short = append(short, [2]float64{need, avail})
		}
	}
	fire.Series = []Series{{Name: "meets needed", Points: meets}, {Name: "short", Points: short}}
	return []Chart{bands, inv, cost, fire}
}
