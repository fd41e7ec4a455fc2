package report

import (
	"bufio"
	"bytes"
	"cmp"
	"embed"
	"errors"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// The page's template, style sheet and script are embedded, so the report
// needs no file beside it and makes no request when opened.
//
//go:embed assets/report.html.tmpl assets/report.css assets/report.js
var assets embed.FS

// WriteHTML writes d as one self-contained HTML page: inline CSS, inline
// JavaScript and SVG drawn from the data, with no external file, font,
// script or tile. The page is streamed into w as the template runs (at a
// million pipes it is tens of megabytes, which a buffer would hold twice
// over while it grows), so a failure partway leaves part of a page in w:
// write files through gis.WriteFileAtomic, which keeps only a whole one.
// The same Document gives the same bytes.
func WriteHTML(w io.Writer, d *Document) error {
	if d == nil {
		return errors.New("report: no document to render")
	}
	t, err := pageTemplate()
	if err != nil {
		return err
	}
	p, err := newPage(d)
	if err != nil {
		return err
	}
	bw := bufio.NewWriterSize(w, 256<<10)
	if err := t.Execute(bw, p); err != nil {
		return fmt.Errorf("report: rendering the HTML report: %w", err)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("report: writing the HTML report: %w", err)
	}
	return nil
}

// RenderHTML returns the page WriteHTML writes.
func RenderHTML(d *Document) ([]byte, error) {
	var buf bytes.Buffer
	if err := WriteHTML(&buf, d); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// pageTemplate parses the embedded page template. html/template escapes
// every value by its context (text, attribute, URL, script).
func pageTemplate() (*template.Template, error) {
	src, err := assets.ReadFile("assets/report.html.tmpl")
	if err != nil {
		return nil, fmt.Errorf("report: reading the page template: %w", err)
	}
	t, err := template.New("report").Parse(string(src))
	if err != nil {
		return nil, fmt.Errorf("report: parsing the page template: %w", err)
	}
	return t, nil
}

// pageView is what the template draws: the document plus everything computed
// from it (geometry, colours, ticks), already formatted as text.
type pageView struct {
	Doc    *Document
	CSS    template.CSS // the embedded style sheet, trusted
	Script template.JS  // the embedded script, trusted
	Tables []tableView
	Map    mapView
	Charts []chartView
	Sheets []sheetView
}

// newPage lays out d.
func newPage(d *Document) (*pageView, error) {
	css, err := assets.ReadFile("assets/report.css")
	if err != nil {
		return nil, fmt.Errorf("report: reading the style sheet: %w", err)
	}
	js, err := assets.ReadFile("assets/report.js")
	if err != nil {
		return nil, fmt.Errorf("report: reading the script: %w", err)
	}
	p := &pageView{Doc: d, CSS: template.CSS(css), Script: template.JS(js), Map: newMapView(&d.Map)}
	for i := range d.Tables {
		p.Tables = append(p.Tables, newTableView(&d.Tables[i], ""))
	}
	for i := range d.Charts {
		p.Charts = append(p.Charts, newChartView(&d.Charts[i]))
	}
	for i := range d.Sheets {
		s := &d.Sheets[i]
		p.Sheets = append(p.Sheets, sheetView{Sheet: s, N: i + 1, Of: len(d.Sheets),
			SegTable: newTableView(&s.Segments, "Mains on this sheet"),
			BATable:  newTableView(&s.BeforeAfter, "Before and after the upsizing loop")})
	}
	return p, nil
}

// sheetView is one evidence sheet with its tables laid out and its place
// in the sequence (sheet N of Of).
type sheetView struct {
	*Sheet
	N, Of             int
	SegTable, BATable tableView
}

// ---------------------------------------------------------------------------
// Tables

// tableView is a table with each cell marked numeric or not, so numbers
// are right-aligned. A header is right-aligned when its column holds
// numbers only.
type tableView struct {
	Caption string
	Head    []cellView
	Rows    [][]cellView
}

// cellView is one cell's text and alignment.
type cellView struct {
	Text string
	Num  bool
}

// newTableView marks t's cells; caption stands in for an empty Caption.
// A table with no columns stays empty (Head nil) and is not drawn.
func newTableView(t *Table, caption string) tableView {
	v := tableView{Caption: cmp.Or(t.Caption, caption)}
	if len(t.Columns) == 0 {
		return v
	}
	numeric := make([]int, len(t.Columns)) // numbers in the column; -1 once text is seen
	for _, row := range t.Rows {
		cells := make([]cellView, len(row))
		for k, s := range row {
			cells[k] = cellView{Text: s, Num: isNumber(s) || isPlaceholder(s)}
			if k < len(numeric) && numeric[k] >= 0 && strings.TrimSpace(s) != "" && !isPlaceholder(s) {
				if isNumber(s) {
					numeric[k]++
				} else {
					numeric[k] = -1
				}
			}
		}
		v.Rows = append(v.Rows, cells)
	}
	for k, c := range t.Columns {
		v.Head = append(v.Head, cellView{Text: c, Num: numeric[k] > 0})
	}
	return v
}

// isNumber reports whether s reads as one number: an optional sign (ASCII
// or U+2212), an optional "$" or "US$", digits with optional thousands
// commas and decimals or an exponent, and an optional "%".
func isNumber(s string) bool {
	s = strings.TrimSpace(s)
	s = strings.TrimPrefix(strings.TrimPrefix(s, "-"), "−")
	s = strings.TrimPrefix(strings.TrimPrefix(s, "US$"), "$")
	s = strings.TrimSuffix(s, "%")
	s = strings.ReplaceAll(s, ",", "")
	if s == "" || !strings.ContainsAny(s[:1], "0123456789.") {
		return false // ParseFloat would take "Inf" and "NaN"
	}
	_, err := strconv.ParseFloat(s, 64)
	return err == nil
}

// isPlaceholder reports a cell that stands for a missing number.
func isPlaceholder(s string) bool {
	s = strings.TrimSpace(s)
	return s == "—" || s == "–" || s == "-"
}

// ---------------------------------------------------------------------------
// Numbers

// fixed formats v with at most dec decimals, trailing zeros dropped, and
// never "-0".
func fixed(v float64, dec int) string {
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if strings.IndexByte(s, '.') >= 0 {
		s = strings.TrimRight(s, "0")
		s = strings.TrimSuffix(s, ".")
	}
	if s == "-0" {
		return "0"
	}
	return s
}

// grouped formats v with dec decimals (trailing zeros dropped) and a comma
// between groups of three digits: 12345.6 → "12,345.6".
func grouped(v float64, dec int) string {
	s := fixed(v, dec)
	sign := ""
	if strings.HasPrefix(s, "-") {
		sign, s = "-", s[1:]
	}
	whole, frac, hasFrac := strings.Cut(s, ".")
	var b strings.Builder
	b.WriteString(sign)
	for k := range len(whole) {
		if k > 0 && (len(whole)-k)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteByte(whole[k])
	}
	if hasFrac {
		b.WriteString("." + frac)
	}
	return b.String()
}

// finite reports whether every value is neither NaN nor infinite.
func finite(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// niceNum is the "nice number" of Heckbert's label algorithm: 1, 2, 5 or
// 10 times a power of ten, rounded to the nearest when round is set, else
// the smallest not below x.
// Reference: P. S. Heckbert, "Nice numbers for graph labels", Graphics
// Gems (1990), pp. 61–63.
func niceNum(x float64, round bool) float64 {
	e := math.Floor(math.Log10(x))
	f := x / math.Pow(10, e)
	var nf float64
	switch {
	case round && f < 1.5, !round && f <= 1:
		nf = 1
	case round && f < 3, !round && f <= 2:
		nf = 2
	case round && f < 7, !round && f <= 5:
		nf = 5
	default:
		nf = 10
	}
	return nf * math.Pow(10, e)
}

// niceFloor is the largest 1, 2 or 5 × 10^k not above x (x > 0).
func niceFloor(x float64) float64 {
	p := math.Pow(10, math.Floor(math.Log10(x)))
	for _, m := range []float64{5, 2, 1} {
		if m*p <= x*(1+1e-12) {
			return m * p
		}
	}
	return p
}

// decimalsFor is how many decimals label a tick step: 0 for steps of 1 or
// more, 1 for 0.1 to 0.5, and so on.
func decimalsFor(step float64) int {
	if step <= 0 || !finite(step) {
		return 0
	}
	return max(0, int(-math.Floor(math.Log10(step)+1e-9)))
}

// axis is a linear scale from [Lo, Hi] with round ticks (Heckbert's
// loose labelling: the range widens to whole steps).
type axis struct {
	lo, hi float64
	ticks  []float64
	dec    int // decimals of the tick labels
}

// newAxis makes an axis over [lo, hi] with about five ticks. With zero set
// the range includes 0 (bars grow from it). A zero-width range widens.
func newAxis(lo, hi float64, zero bool) axis {
	if !finite(lo, hi) || lo > hi {
		lo, hi = 0, 1
	}
	if zero {
		lo, hi = min(lo, 0), max(hi, 0)
	}
	if hi == lo {
		pad := math.Abs(hi) * 0.1
		if pad == 0 {
			pad = 1
		}
		lo, hi = lo-pad, hi+pad
		if zero && lo < 0 && hi-pad >= 0 {
			lo = 0
		}
	}
	const ticks = 5
	step := niceNum(niceNum(hi-lo, false)/(ticks-1), true)
	a := axis{lo: math.Floor(lo/step+1e-9) * step, hi: math.Ceil(hi/step-1e-9) * step, dec: decimalsFor(step)}
	n := int(math.Round((a.hi - a.lo) / step))
	for k := 0; k <= n; k++ {
		a.ticks = append(a.ticks, a.lo+float64(k)*step)
	}
	return a
}

// at maps v on the axis to [from, to].
func (a axis) at(v, from, to float64) float64 {
	return from + (v-a.lo)/(a.hi-a.lo)*(to-from)
}

// label formats a tick value.
func (a axis) label(v float64) string { return grouped(v, a.dec) }

// ---------------------------------------------------------------------------
// Colour

// viridis is 52 control points of matplotlib's viridis colour map: entries
// 0, 5, 10, …, 255 of the 256-entry table _viridis_data in
// lib/matplotlib/_cm_listed.py (S. van der Walt, N. Smith and E. Firing,
// 2015, released CC0), as sRGB fractions. Interpolating linearly between
// them reproduces every entry of the full table to within 1 of 255 in each
// channel (16 points would be off by up to 7 near the yellow end, where
// the blue channel turns).
var viridis = [...][3]float64{
	{0.267004, 0.004874, 0.329415}, // [0]
	{0.273809, 0.031497, 0.358853}, // [5]
	{0.278791, 0.062145, 0.386592}, // [10]
	{0.281924, 0.089666, 0.412415}, // [15]
	{0.283197, 0.115680, 0.436115}, // [20]
	{0.282623, 0.140926, 0.457517}, // [25]
	{0.280255, 0.165693, 0.476498}, // [30]
	{0.276194, 0.190074, 0.493001}, // [35]
	{0.270595, 0.214069, 0.507052}, // [40]
	{0.263663, 0.237631, 0.518762}, // [45]
	{0.255645, 0.260703, 0.528312}, // [50]
	{0.246811, 0.283237, 0.535941}, // [55]
	{0.237441, 0.305202, 0.541921}, // [60]
	{0.227802, 0.326594, 0.546532}, // [65]
	{0.218130, 0.347432, 0.550038}, // [70]
	{0.208623, 0.367752, 0.552675}, // [75]
	{0.199430, 0.387607, 0.554642}, // [80]
	{0.190631, 0.407061, 0.556089}, // [85]
	{0.182256, 0.426184, 0.557120}, // [90]
	{0.174274, 0.445044, 0.557792}, // [95]
	{0.166617, 0.463708, 0.558119}, // [100]
	{0.159194, 0.482237, 0.558073}, // [105]
	{0.151918, 0.500685, 0.557587}, // [110]
	{0.144759, 0.519093, 0.556572}, // [115]
	{0.137770, 0.537492, 0.554906}, // [120]
	{0.131172, 0.555899, 0.552459}, // [125]
	{0.125394, 0.574318, 0.549086}, // [130]
	{0.121148, 0.592739, 0.544641}, // [135]
	{0.119423, 0.611141, 0.538982}, // [140]
	{0.121380, 0.629492, 0.531973}, // [145]
	{0.128087, 0.647749, 0.523491}, // [150]
	{0.140210, 0.665859, 0.513427}, // [155]
	{0.157851, 0.683765, 0.501686}, // [160]
	{0.180653, 0.701402, 0.488189}, // [165]
	{0.208030, 0.718701, 0.472873}, // [170]
	{0.239374, 0.735588, 0.455688}, // [175]
	{0.274149, 0.751988, 0.436601}, // [180]
	{0.311925, 0.767822, 0.415586}, // [185]
	{0.352360, 0.783011, 0.392636}, // [190]
	{0.395174, 0.797475, 0.367757}, // [195]
	{0.440137, 0.811138, 0.340967}, // [200]
	{0.487026, 0.823929, 0.312321}, // [205]
	{0.535621, 0.835785, 0.281908}, // [210]
	{0.585678, 0.846661, 0.249897}, // [215]
	{0.636902, 0.856542, 0.216620}, // [220]
	{0.688944, 0.865448, 0.182725}, // [225]
	{0.741388, 0.873449, 0.149561}, // [230]
	{0.793760, 0.880678, 0.120005}, // [235]
	{0.845561, 0.887322, 0.099702}, // [240]
	{0.896320, 0.893616, 0.096335}, // [245]
	{0.945636, 0.899815, 0.112838}, // [250]
	{0.993248, 0.906157, 0.143936}, // [255]
}

// viridisAt is the viridis colour at t in [0, 1] (clamped; NaN counts as
// 0), interpolated linearly in sRGB between the control points, as
// "#rrggbb".
func viridisAt(t float64) string {
	if !(t > 0) {
		t = 0
	}
	t = min(t, 1)
	x := t * float64(len(viridis)-1)
	k := min(int(x), len(viridis)-2)
	f := x - float64(k)
	var rgb [3]int
	for c := range 3 {
		v := viridis[k][c] + f*(viridis[k+1][c]-viridis[k][c])
		rgb[c] = int(math.Round(255 * v))
	}
	return fmt.Sprintf("#%02x%02x%02x", rgb[0], rgb[1], rgb[2])
}

// scaleColour is the colour of value v on a scale from lo to hi. The scale
// runs viridis backwards, pale yellow at lo to dark violet at hi, so the
// mains that score highest carry the most ink on a white page.
func scaleColour(v, lo, hi float64) string { return viridisAt(1 - scaleT(v, lo, hi)) }

// scaleT is v's place in [0, 1] between lo and hi (clamped); a zero-width
// scale puts values at or above it at 1.
func scaleT(v, lo, hi float64) float64 {
	if hi == lo || !finite(lo, hi) {
		if v >= hi {
			return 1
		}
		return 0
	}
	return min(max((v-lo)/(hi-lo), 0), 1)
}

// notScoredColour draws mains with no value; it is no viridis colour.
const notScoredColour = "#a3a6a9"

// okabeIto is the colour-blind-safe qualitative palette of M. Okabe and
// K. Ito, "Color Universal Design (CUD): how to make figures and
// presentations that are friendly to colorblind people" (2008), in their
// published RGB values: blue, vermillion, bluish green, reddish purple,
// orange, sky blue, yellow, black. Series take them in this order, which
// puts the colours that stand out most on white first.
var okabeIto = [...]string{"#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442", "#000000"}

// seriesColour is series i's colour; past eight the palette repeats (the
// marker shapes still differ).
func seriesColour(i int) string { return okabeIto[i%len(okabeIto)] }

// ---------------------------------------------------------------------------
// Marker shapes

// shape is a marker outline, so hydrant classes and chart series read
// without colour.
type shape int

const (
	circle shape = iota
	square
	diamond
	triangleUp
	triangleDown
	plus
)

// shapes are the shapes in the order series take them.
var shapes = [...]shape{circle, square, triangleUp, diamond, triangleDown, plus}

// shapePath is SVG path data for s centred at (cx, cy) with half-size r
// (a circle's radius; the others are scaled to look about as large).
func shapePath(s shape, cx, cy, r float64) string {
	f := func(v float64) string { return fixed(v, 2) }
	pts := func(xy ...float64) string {
		var b strings.Builder
		for k := 0; k < len(xy); k += 2 {
			if k == 0 {
				b.WriteByte('M')
			} else {
				b.WriteByte('L')
			}
			b.WriteString(f(cx+xy[k]*r) + " " + f(cy+xy[k+1]*r))
		}
		b.WriteString("Z")
		return b.String()
	}
	switch s {
	case square:
		return pts(-0.85, -0.85, 0.85, -0.85, 0.85, 0.85, -0.85, 0.85)
	case diamond:
		return pts(0, -1.2, 1.2, 0, 0, 1.2, -1.2, 0)
	case triangleUp:
		return pts(0, -1.25, 1.1, 0.75, -1.1, 0.75)
	case triangleDown:
		return pts(0, 1.25, 1.1, -0.75, -1.1, -0.75)
	case plus:
		const a, b = 0.35, 1.05
		return pts(-a, -b, a, -b, a, -a, b, -a, b, a, a, a, a, b, -a, b, -a, a, -b, a, -b, -a, -a, -a)
	default:
		return "M" + f(cx-r) + " " + f(cy) + "a" + f(r) + " " + f(r) + " 0 1 0 " + f(2*r) + " 0a" + f(r) + " " + f(r) + " 0 1 0 " + f(-2*r) + " 0Z"
	}
}

// ---------------------------------------------------------------------------
// The map

// Map viewBox size and margin, in viewBox units. Coordinates are written
// with one decimal: a tenth of a unit is 1/10,000 of the map's width.
const (
	mapWidth     = 1000
	mapMinHeight = 480
	mapMaxHeight = 1250
	mapMargin    = 20
	markerRadius = 4.2  // hydrant marker half-size at zoom 1
	scaleBarMax  = 180  // longest scale bar, in viewBox units at zoom 1
	scaleBarX    = 24   // scale bar's left end
	scaleBarDrop = 26   // scale bar's height above the bottom edge
	legendWidth  = 260  // colour legend bar width
	legendBarH   = 12   // colour legend bar height
	legendStops  = 16   // gradient stops in the colour legend
	tickMinGap   = 0.12 // interior legend ticks keep this share of the bar clear of the ends
)

// mapView is the map as drawn.
type mapView struct {
	Caption, Title, Desc string
	W, H                 int
	Mains                []mainView // in drawing order: grey first, then by value
	Hydrants             []hydrantView
	Styles               []hydrantStyle // the markers' definitions
	Legend               legendView
	Scale                *scaleBarView
	Tips                 mapTips // tooltips in drawing order, as JSON
	Empty                bool    // nothing to draw
}

// mainView is one drawn main.
type mainView struct {
	ID, D  string
	Stroke string // "" for not scored (grey, from the style sheet)
	Sheet  string
}

// hydrantView is one drawn hydrant.
type hydrantView struct {
	ID, X, Y, Style, Label string
}

// hydrantStyle is one marker definition: an SVG element id, its outline,
// colours and legend label.
type hydrantStyle struct {
	ID, D, Fill, Stroke, Label string
	Swatch                     string // the outline centred in a 16 × 16 box
}

// mapTips is the tooltip data: labels are stored once and rows refer to
// them by index, [label index, value] or [label index, value, note].
type mapTips struct {
	Labels   []string  `json:"l"`
	Mains    [][][]any `json:"m"`
	Hydrants [][][]any `json:"h"`
}

// legendView is the map legend's colour scale and marker list.
type legendView struct {
	Label         string
	W, BarH, SvgW int // bar width and height; the SVG is 12 wider each side
	Stops         []gradientStop
	Ticks         []legendTick
	Classes       []hydrantStyle
}

// gradientStop is one stop of the legend's gradient.
type gradientStop struct{ Offset, Colour string }

// legendTick is one labelled tick under the legend bar.
type legendTick struct{ X, Text, Anchor string }

// scaleBarView is the scale bar as drawn at zoom 1; the script redraws it
// as the view zooms.
type scaleBarView struct {
	X, Y          int
	Len, Half, Bg string
	Label         string
	PerUnit       string // viewBox units per LengthName at zoom 1
	Unit          string
}

// mapFit maps planar map coordinates into the viewBox: one scale for both
// axes, y flipped so north is up, the data's bounds centred.
type mapFit struct {
	minX, maxY float64 // the bounds' west and north edges, map units
	scale      float64 // viewBox units per map unit
	offX, offY float64 // viewBox position of (minX, maxY)
}

// at is p's viewBox position in tenths of a unit.
func (f mapFit) at(p [2]float64) (x, y int64) {
	return int64(math.Round(10 * (f.offX + (p[0]-f.minX)*f.scale))), int64(math.Round(10 * (f.offY + (f.maxY-p[1])*f.scale)))
}

// newMapFit fits m's mains and hydrants into a viewBox mapWidth wide,
// choosing the height from their aspect ratio (within limits).
func newMapFit(m *Map) (f mapFit, height int, ok bool) {
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	add := func(p [2]float64) {
		if finite(p[0], p[1]) {
			minX, maxX = min(minX, p[0]), max(maxX, p[0])
			minY, maxY = min(minY, p[1]), max(maxY, p[1])
		}
	}
	for _, mm := range m.Mains {
		for _, line := range mm.Lines {
			for _, p := range line {
				add(p)
			}
		}
	}
	for _, h := range m.Hydrants {
		add([2]float64{h.X, h.Y})
	}
	height = mapWidth * 3 / 5
	if minX > maxX {
		return mapFit{scale: 1}, height, false
	}
	dx, dy := maxX-minX, maxY-minY
	inner := float64(mapWidth - 2*mapMargin)
	switch {
	case dx > 0:
		height = int(math.Round(min(max(inner*dy/dx+2*mapMargin, mapMinHeight), mapMaxHeight)))
	case dy > 0:
		height = mapMaxHeight
	}
	scale := math.Inf(1)
	if dx > 0 {
		scale = inner / dx
	}
	if dy > 0 {
		scale = min(scale, float64(height-2*mapMargin)/dy)
	}
	if math.IsInf(scale, 1) {
		scale = 1
	}
	f = mapFit{minX: minX, maxY: maxY, scale: scale,
		offX: (mapWidth - dx*scale) / 2, offY: (float64(height) - dy*scale) / 2}
	return f, height, true
}

// appendTenths appends v/10 in the shortest SVG number form: 12 → "1.2",
// -5 → "-.5", 30 → "3".
func appendTenths(b []byte, v int64) []byte {
	if v < 0 {
		b = append(b, '-')
		v = -v
	}
	if v >= 10 || v == 0 {
		b = strconv.AppendInt(b, v/10, 10)
	}
	if v%10 != 0 {
		b = append(b, '.', byte('0'+v%10))
	}
	return b
}

// appendPair appends a coordinate pair, with the separators SVG needs
// (none before a minus sign, none after a command letter).
func appendPair(b []byte, x, y int64, afterCommand bool) []byte {
	if !afterCommand && x >= 0 {
		b = append(b, ' ')
	}
	b = appendTenths(b, x)
	if y >= 0 {
		b = append(b, ' ')
	}
	return appendTenths(b, y)
}

// pathData is SVG path data for a main's polylines: each polyline one
// subpath, an absolute move then relative line-tos between the rounded
// points (so rounding does not accumulate). A polyline that collapses to
// one point keeps a zero-length segment, which round caps draw as a dot.
func pathData(lines [][][2]float64, f mapFit) string {
	var b []byte
	for _, line := range lines {
		started, drawn := false, false
		var px, py int64
		for _, p := range line {
			if !finite(p[0], p[1]) {
				continue
			}
			x, y := f.at(p)
			if !started {
				b = append(b, 'M')
				b = appendPair(b, x, y, true)
				px, py, started = x, y, true
				continue
			}
			if x == px && y == py {
				continue
			}
			if !drawn {
				b = append(b, 'l')
			}
			b = appendPair(b, x-px, y-py, !drawn)
			px, py, drawn = x, y, true
		}
		if started && !drawn {
			b = append(b, "l0 0"...)
		}
	}
	return string(b)
}

// tipTable interns tooltip labels.
type tipTable struct {
	tips  mapTips
	index map[string]int // label → position in tips.Labels; looked up, never ranged over
}

// rows turns a tooltip into rows, leaving out a figure that only repeats
// the element's own ID (the tooltip's heading shows it).
func (t *tipTable) rows(id string, figs []Figure) [][]any {
	out := make([][]any, 0, len(figs))
	for _, f := range figs {
		if f.Value == id && f.Note == "" {
			continue
		}
		k, ok := t.index[f.Label]
		if !ok {
			k = len(t.tips.Labels)
			t.index[f.Label] = k
			t.tips.Labels = append(t.tips.Labels, f.Label)
		}
		row := []any{k, f.Value}
		if f.Note != "" {
			row = append(row, f.Note)
		}
		out = append(out, row)
	}
	return out
}

// newMapView draws m.
func newMapView(m *Map) mapView {
	fit, h, ok := newMapFit(m)
	v := mapView{Caption: m.Caption, W: mapWidth, H: h, Empty: !ok,
		Title: "Map of the mains and hydrants", Legend: newLegend(m)}
	v.Desc = fmt.Sprintf("%d mains coloured by %s (grey: not scored) and %d hydrants marked by class.",
		len(m.Mains), cmp.Or(m.ScaleLabel, "value"), len(m.Hydrants))
	tips := &tipTable{index: map[string]int{}}
	tips.tips.Mains, tips.tips.Hydrants = [][][]any{}, [][][]any{}
	for _, i := range mainOrder(m) {
		mm := &m.Mains[i]
		mv := mainView{ID: mm.ID, D: pathData(mm.Lines, fit), Sheet: mm.Sheet}
		if mm.HasValue && finite(mm.Value) {
			mv.Stroke = scaleColour(mm.Value, m.ScaleMin, m.ScaleMax)
		}
		v.Mains = append(v.Mains, mv)
		tips.tips.Mains = append(tips.tips.Mains, tips.rows(mm.ID, mm.Tip))
	}
	styles, styleOf := hydrantStyles(m)
	v.Styles = styles
	for _, i := range hydrantOrder(m, styleOf) {
		hy := &m.Hydrants[i]
		if !finite(hy.X, hy.Y) {
			continue
		}
		x, y := fit.at([2]float64{hy.X, hy.Y})
		st := styles[styleOf(hy.Class)]
		label := "hydrant " + hy.ID + ", not tested"
		if hy.Class != "" {
			label = "hydrant " + hy.ID + ", class " + hy.Class
		}
		v.Hydrants = append(v.Hydrants, hydrantView{ID: hy.ID, X: string(appendTenths(nil, x)), Y: string(appendTenths(nil, y)), Style: st.ID, Label: label})
		tips.tips.Hydrants = append(tips.tips.Hydrants, tips.rows(hy.ID, hy.Tip))
	}
	v.Legend.Classes = styles
	v.Tips = tips.tips
	if m.UnitsPerLength > 0 && finite(m.UnitsPerLength) && ok {
		v.Scale = newScaleBar(m.UnitsPerLength*fit.scale, m.LengthName, h)
	}
	return v
}

// mainOrder is the order mains are drawn in: not scored first, then by
// value ascending, so the highest values are drawn on top; ties keep
// input order.
func mainOrder(m *Map) []int {
	order := make([]int, len(m.Mains))
	for i := range order {
		order[i] = i
	}
	key := func(i int) float64 {
		mm := &m.Mains[i]
		if !mm.HasValue || !finite(mm.Value) {
			return -1
		}
		return scaleT(mm.Value, m.ScaleMin, m.ScaleMax)
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(key(a), key(b)) })
	return order
}

// hydrantOrder draws untested hydrants first, then the classes in legend
// order, so that the last class (NFPA 291's C, the weakest) is drawn on
// top; ties keep input order.
func hydrantOrder(m *Map, styleOf func(string) int) []int {
	order := make([]int, len(m.Hydrants))
	for i := range order {
		order[i] = i
	}
	untested := styleOf("")
	key := func(i int) int {
		k := styleOf(m.Hydrants[i].Class)
		if k == untested {
			return -1
		}
		return k
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(key(a), key(b)) })
	return order
}

// nfpaBonnet is the bonnet colour NFPA 291 (Recommended Practice for Fire
// Flow Testing and Marking of Hydrants) recommends for each hydrant class:
// light blue AA (1,500 gpm or more), green A (1,000–1,499), orange B
// (500–999), red C (below 500). The hex values are our choice of those
// colours; each class also has its own shape.
var nfpaBonnet = map[string]struct {
	fill  string
	shape shape
}{
	"AA": {"#6ec6f0", circle},
	"A":  {"#2e9e4f", square},
	"B":  {"#f08a24", diamond},
	"C":  {"#d7261e", triangleUp},
}

// hydrantStyles are the marker definitions in legend order: each of
// m.Classes, then any class the hydrants carry that Classes does not
// list (in order of first appearance), then "not tested" (a hollow grey
// circle). styleOf gives a class name's style index.
func hydrantStyles(m *Map) (styles []hydrantStyle, styleOf func(string) int) {
	byName := map[string]int{} // looked up, never ranged over
	extra := 0
	add := func(name, label string) {
		if _, dup := byName[name]; dup {
			return
		}
		fill, sh := "", shape(0)
		if b, ok := nfpaBonnet[strings.ToUpper(strings.TrimSpace(name))]; ok {
			fill, sh = b.fill, b.shape
		} else {
			fill, sh = seriesColour(extra), []shape{triangleDown, plus, square, diamond}[extra%4]
			extra++
		}
		byName[name] = len(styles)
		styles = append(styles, hydrantStyle{ID: "hs-" + strconv.Itoa(len(styles)), Fill: fill, Stroke: "#1d2327",
			D: shapePath(sh, 0, 0, markerRadius), Swatch: shapePath(sh, 8, 8, 5), Label: label})
	}
	for _, c := range m.Classes {
		if c.Name != "" {
			add(c.Name, cmp.Or(c.Label, c.Name))
		}
	}
	for _, h := range m.Hydrants {
		if h.Class != "" {
			add(h.Class, "class "+h.Class)
		}
	}
	untested := len(styles)
	styles = append(styles, hydrantStyle{ID: "hs-" + strconv.Itoa(untested), Fill: "none", Stroke: "#6b7075",
		D: shapePath(circle, 0, 0, markerRadius*0.85), Swatch: shapePath(circle, 8, 8, 4.2), Label: "not tested"})
	return styles, func(name string) int {
		if k, ok := byName[name]; ok && name != "" {
			return k
		}
		return untested
	}
}

// newLegend is the colour scale's legend: the gradient from ScaleMin to
// ScaleMax with round ticks between them and both ends labelled.
func newLegend(m *Map) legendView {
	l := legendView{Label: cmp.Or(m.ScaleLabel, "value"), W: legendWidth, BarH: legendBarH, SvgW: legendWidth + 24}
	for k := range legendStops {
		t := float64(k) / (legendStops - 1)
		l.Stops = append(l.Stops, gradientStop{Offset: fixed(t, 3), Colour: viridisAt(1 - t)})
	}
	lo, hi := m.ScaleMin, m.ScaleMax
	if !finite(lo, hi) {
		lo, hi = 0, 0
	}
	a := newAxis(min(lo, hi), max(lo, hi), false)
	if hi == lo {
		l.Ticks = []legendTick{{X: fixed(legendWidth/2, 1), Text: grouped(lo, a.dec+1), Anchor: "middle"}}
		return l
	}
	at := func(v float64) float64 { return scaleT(v, lo, hi) * legendWidth }
	l.Ticks = append(l.Ticks, legendTick{X: "0", Text: grouped(lo, a.dec+1), Anchor: "start"})
	for _, v := range a.ticks {
		if t := scaleT(v, lo, hi); t > tickMinGap && t < 1-tickMinGap {
			l.Ticks = append(l.Ticks, legendTick{X: fixed(at(v), 1), Text: a.label(v), Anchor: "middle"})
		}
	}
	l.Ticks = append(l.Ticks, legendTick{X: fixed(legendWidth, 1), Text: grouped(hi, a.dec+1), Anchor: "end"})
	return l
}

// newScaleBar is a scale bar of a round length (1, 2 or 5 × 10^k of the
// unit) at most scaleBarMax viewBox units long, for a map drawn perUnit
// viewBox units per unit.
func newScaleBar(perUnit float64, unit string, height int) *scaleBarView {
	if !(perUnit > 0) || !finite(perUnit) {
		return nil
	}
	n := niceFloor(scaleBarMax / perUnit)
	length := n * perUnit
	return &scaleBarView{X: scaleBarX, Y: height - scaleBarDrop,
		Len: fixed(length, 1), Half: fixed(length/2, 1), Bg: fixed(length+16, 1),
		Label: strings.TrimSpace(grouped(n, decimalsFor(n)) + " " + unit), PerUnit: strconv.FormatFloat(perUnit, 'g', 8, 64), Unit: unit}
}

// ---------------------------------------------------------------------------
// Charts

// Chart viewBox size, in units that match CSS pixels at full width.
const (
	chartW       = 560
	chartH       = 340
	chartTop     = 14
	chartRight   = 18
	charWidth    = 6.4 // a tick label character's width, estimated
	maxMarkedPts = 60  // a line series with more points gets no markers
)

// chartView is a chart as drawn.
type chartView struct {
	ID, Title, Caption, Desc string
	W, H                     int
	Frame                    rectView // the plot area
	Grid                     []lineView
	XTicks, YTicks           []textView
	XLabel, YLabel           textView
	Bars                     []rectView
	Lines                    []polyView
	Marks                    []markView
	Diagonal                 *lineView
	Legend                   []legendEntry
	NoData                   *textView
}

// rectView is a rectangle (a bar, or the plot frame).
type rectView struct{ X, Y, W, H, Fill, Title string }

// lineView is a line segment.
type lineView struct{ X1, Y1, X2, Y2 string }

// textView is a text label.
type textView struct {
	X, Y, Text, Anchor string
	Rotate             string // degrees about (X, Y), "" for none
}

// polyView is a polyline.
type polyView struct{ Points, Stroke string }

// markView is a marker.
type markView struct{ D, Fill, Title string }

// legendEntry is one series in a chart's legend: Kind is "bar", "line",
// "mark" or "diagonal".
type legendEntry struct{ Name, Colour, Kind, D string }

// plotArea is the inner rectangle of a chart, in viewBox units.
type plotArea struct{ x0, y0, x1, y1 float64 }

// c1 formats a chart coordinate with one decimal.
func c1(v float64) string { return fixed(v, 1) }

// newChartView draws c.
func newChartView(c *Chart) chartView {
	v := chartView{ID: c.ID, Title: c.Title, Caption: c.Caption, W: chartW, H: chartH}
	switch c.Kind {
	case Bars:
		v.drawBars(c)
	default:
		v.drawXY(c)
	}
	if len(c.Series) > 1 || c.Diagonal {
		for i, s := range c.Series {
			e := legendEntry{Name: cmp.Or(s.Name, "series "+strconv.Itoa(i+1)), Colour: seriesColour(i)}
			switch c.Kind {
			case Bars:
				e.Kind = "bar"
			case Lines:
				e.Kind = "line"
			default:
				e.Kind, e.D = "mark", shapePath(shapes[i%len(shapes)], 9, 6, 4)
			}
			v.Legend = append(v.Legend, e)
		}
		if c.Diagonal && c.Kind != Bars {
			v.Legend = append(v.Legend, legendEntry{Name: "y = x", Kind: "diagonal", Colour: "#555"})
		}
	}
	v.Desc = chartDesc(c, &v)
	return v
}

// chartDesc describes c in words for its <desc>.
func chartDesc(c *Chart, v *chartView) string {
	kind := map[ChartKind]string{Bars: "Bar chart", Lines: "Line chart", Points: "Scatter chart"}[c.Kind]
	if c.Kind == Bars && c.Stacked {
		kind = "Stacked bar chart"
	}
	var names []string
	for i, s := range c.Series {
		names = append(names, cmp.Or(s.Name, "series "+strconv.Itoa(i+1)))
	}
	d := fmt.Sprintf("%s of %d series (%s)", cmp.Or(kind, "Chart"), len(c.Series), strings.Join(names, ", "))
	if c.Kind == Bars {
		d += fmt.Sprintf(" over %d categories", len(c.Categories))
	}
	if v.NoData != nil {
		return d + ": no data."
	}
	if n := len(v.YTicks); n > 0 {
		d += fmt.Sprintf(". Vertical axis: %s, %s to %s", cmp.Or(c.YLabel, "value"), v.YTicks[0].Text, v.YTicks[n-1].Text)
	}
	if n := len(v.XTicks); n > 0 && c.Kind != Bars {
		d += fmt.Sprintf(". Horizontal axis: %s, %s to %s", cmp.Or(c.XLabel, "value"), v.XTicks[0].Text, v.XTicks[n-1].Text)
	} else if c.XLabel != "" {
		d += ". Horizontal axis: " + c.XLabel
	}
	if c.Diagonal && c.Kind != Bars {
		d += ". A dashed line marks y = x"
	}
	return d + "."
}

// area is the plot area left by the tick labels: the left margin fits the
// longest y tick label, the bottom one the x tick labels (taller when
// they are turned).
func (v *chartView) area(yLabels []string, xRotated bool, xLongest int) plotArea {
	longest := 0
	for _, s := range yLabels {
		longest = max(longest, len([]rune(s)))
	}
	left := 30 + float64(longest)*charWidth
	bottom := 48.0
	if xRotated {
		bottom = 36 + float64(min(xLongest, 28))*charWidth*0.64
	}
	return plotArea{x0: left, y0: chartTop, x1: chartW - chartRight, y1: chartH - bottom}
}

// axesAndLabels draws the frame, the y grid and ticks, and the axis labels.
func (v *chartView) axesAndLabels(a plotArea, ya axis, c *Chart) {
	v.Frame = rectView{X: c1(a.x0), Y: c1(a.y0), W: c1(a.x1 - a.x0), H: c1(a.y1 - a.y0)}
	for _, t := range ya.ticks {
		y := ya.at(t, a.y1, a.y0)
		v.Grid = append(v.Grid, lineView{X1: c1(a.x0), Y1: c1(y), X2: c1(a.x1), Y2: c1(y)})
		v.YTicks = append(v.YTicks, textView{X: c1(a.x0 - 6), Y: c1(y + 4), Text: ya.label(t), Anchor: "end"})
	}
	v.XLabel = textView{X: c1((a.x0 + a.x1) / 2), Y: c1(chartH - 8), Text: c.XLabel, Anchor: "middle"}
	yMid := (a.y0 + a.y1) / 2
	v.YLabel = textView{X: "14", Y: c1(yMid), Text: c.YLabel, Anchor: "middle", Rotate: "-90 14 " + c1(yMid)}
}

// noData marks an empty chart.
func (v *chartView) noData(c *Chart) {
	a := v.area(nil, false, 0)
	v.Frame = rectView{X: c1(a.x0), Y: c1(a.y0), W: c1(a.x1 - a.x0), H: c1(a.y1 - a.y0)}
	v.XLabel = textView{X: c1((a.x0 + a.x1) / 2), Y: c1(chartH - 8), Text: c.XLabel, Anchor: "middle"}
	yMid := (a.y0 + a.y1) / 2
	v.YLabel = textView{X: "14", Y: c1(yMid), Text: c.YLabel, Anchor: "middle", Rotate: "-90 14 " + c1(yMid)}
	v.NoData = &textView{X: c1((a.x0 + a.x1) / 2), Y: c1(yMid + 5), Text: "no data", Anchor: "middle"}
}

// drawBars draws a bar chart: per category, one bar per series side by
// side, or the series stacked (positive values up from 0, negative down).
func (v *chartView) drawBars(c *Chart) {
	n := len(c.Categories)
	lo, hi, any := 0.0, 0.0, false
	for k := range n {
		pos, neg := 0.0, 0.0
		for _, s := range c.Series {
			if k >= len(s.Values) || !finite(s.Values[k]) {
				continue
			}
			x := s.Values[k]
			any = true
			if !c.Stacked {
				lo, hi = min(lo, x), max(hi, x)
			} else if x >= 0 {
				pos += x
			} else {
				neg += x
			}
		}
		if c.Stacked {
			lo, hi = min(lo, neg), max(hi, pos)
		}
	}
	if n == 0 || !any {
		v.noData(c)
		return
	}
	ya := newAxis(lo, hi, true)
	longest := 0
	for _, cat := range c.Categories {
		longest = max(longest, len([]rune(cat)))
	}
	band := float64(chartW-chartRight-90) / float64(n) // a first guess of the band width, to choose turned labels
	rotated := float64(longest)*charWidth > band-6
	labels := make([]string, len(ya.ticks))
	for k, t := range ya.ticks {
		labels[k] = ya.label(t)
	}
	a := v.area(labels, rotated, longest)
	v.axesAndLabels(a, ya, c)
	band = (a.x1 - a.x0) / float64(n)
	valueDec := min(ya.dec+1, 3)
	zero := ya.at(0, a.y1, a.y0)
	nSeries := max(len(c.Series), 1)
	for k, cat := range c.Categories {
		pos, neg := 0.0, 0.0
		for si, s := range c.Series {
			if k >= len(s.Values) || !finite(s.Values[k]) {
				continue
			}
			x := s.Values[k]
			var from, to, left, width float64
			if c.Stacked {
				left, width = a.x0+float64(k)*band+band*0.16, band*0.68
				if x >= 0 {
					from, to = pos, pos+x
					pos = to
				} else {
					from, to = neg, neg+x
					neg = to
				}
			} else {
				group := band * 0.8
				width = group / float64(nSeries)
				left = a.x0 + float64(k)*band + band*0.1 + float64(si)*width
				from, to = 0, x
				width *= 0.92
			}
			y0, y1 := ya.at(from, a.y1, a.y0), ya.at(to, a.y1, a.y0)
			if !c.Stacked {
				y0 = zero
			}
			title := cat + ": " + grouped(x, valueDec)
			if s.Name != "" {
				title = cat + " · " + s.Name + ": " + grouped(x, valueDec)
			}
			v.Bars = append(v.Bars, rectView{X: c1(left), Y: c1(min(y0, y1)), W: c1(width), H: c1(math.Abs(y1 - y0)),
				Fill: seriesColour(si), Title: title})
		}
		x := a.x0 + (float64(k)+0.5)*band
		t := textView{X: c1(x), Y: c1(a.y1 + 17), Text: shorten(cat, 28), Anchor: "middle"}
		if rotated {
			t.Y, t.Anchor = c1(a.y1+12), "end"
			t.Rotate = "-38 " + t.X + " " + t.Y
		}
		v.XTicks = append(v.XTicks, t)
	}
	if lo < 0 {
		v.Grid = append(v.Grid, lineView{X1: c1(a.x0), Y1: c1(zero), X2: c1(a.x1), Y2: c1(zero)})
	}
}

// shorten cuts s to at most n characters, ending with an ellipsis.
func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// drawXY draws Lines (polylines through each series' points) or Points
// (markers, and with Diagonal the dashed y = x line over the shared range).
func (v *chartView) drawXY(c *Chart) {
	xlo, xhi := math.Inf(1), math.Inf(-1)
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for _, s := range c.Series {
		for _, p := range s.Points {
			if finite(p[0], p[1]) {
				xlo, xhi = min(xlo, p[0]), max(xhi, p[0])
				ylo, yhi = min(ylo, p[1]), max(yhi, p[1])
			}
		}
	}
	if xlo > xhi {
		v.noData(c)
		return
	}
	if c.Diagonal {
		xlo, xhi = min(xlo, ylo), max(xhi, yhi)
		ylo, yhi = xlo, xhi
	}
	xa, ya := newAxis(xlo, xhi, false), newAxis(ylo, yhi, false)
	labels := make([]string, len(ya.ticks))
	for k, t := range ya.ticks {
		labels[k] = ya.label(t)
	}
	a := v.area(labels, false, 0)
	v.axesAndLabels(a, ya, c)
	for _, t := range xa.ticks {
		x := xa.at(t, a.x0, a.x1)
		v.Grid = append(v.Grid, lineView{X1: c1(x), Y1: c1(a.y0), X2: c1(x), Y2: c1(a.y1)})
		v.XTicks = append(v.XTicks, textView{X: c1(x), Y: c1(a.y1 + 17), Text: xa.label(t), Anchor: "middle"})
	}
	if c.Diagonal {
		lo, hi := max(xa.lo, ya.lo), min(xa.hi, ya.hi)
		v.Diagonal = &lineView{X1: c1(xa.at(lo, a.x0, a.x1)), Y1: c1(ya.at(lo, a.y1, a.y0)),
			X2: c1(xa.at(hi, a.x0, a.x1)), Y2: c1(ya.at(hi, a.y1, a.y0))}
	}
	xd, yd := min(xa.dec+1, 3), min(ya.dec+1, 3)
	for si, s := range c.Series {
		var pts []string
		finitePts := 0
		for _, p := range s.Points {
			if finite(p[0], p[1]) {
				finitePts++
			}
		}
		mark := c.Kind != Lines || finitePts <= maxMarkedPts
		r := 3.6
		if c.Kind == Lines {
			r = 2.6
		}
		for _, p := range s.Points {
			if !finite(p[0], p[1]) {
				continue
			}
			x, y := xa.at(p[0], a.x0, a.x1), ya.at(p[1], a.y1, a.y0)
			pts = append(pts, c1(x)+","+c1(y))
			if mark {
				title := "(" + grouped(p[0], xd) + ", " + grouped(p[1], yd) + ")"
				if s.Name != "" {
					title = s.Name + ": " + title
				}
				sh := shapes[si%len(shapes)]
				if c.Kind == Lines {
					sh = circle
				}
				v.Marks = append(v.Marks, markView{D: shapePath(sh, x, y, r), Fill: seriesColour(si), Title: title})
			}
		}
		if c.Kind == Lines && len(pts) > 1 {
			v.Lines = append(v.Lines, polyView{Points: strings.Join(pts, " "), Stroke: seriesColour(si)})
		}
	}
}
