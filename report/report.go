// Package report writes what people read from a run: the evidence report
// (one self-contained HTML file), the spreadsheet and the run manifest.
//
// It knows page layout, drawing and file formats, not physics: the command
// hands it figures already computed and formatted (in the run's units), and
// the report only lays them out. The same Document gives the same bytes.
package report

// Document is everything report.html shows, in reading order.
type Document struct {
	Title    string // e.g. "Alder Creek water system — capital plan screening"
	Subtitle string // what produced it, e.g. "headroom 0.8.0, analysis year 2026"
	// Cautions are shown at the top and again at the end, in plain words.
	Cautions []string
	// Summary is the headline figures (network size, total cost, ...).
	Summary []Figure
	// Tables follow the summary: scenarios with convergence and mass
	// balance, criteria with the counts failing each, and the like.
	Tables []Table
	Map    Map
	Charts []Chart
	// Sheets are the evidence sheets, one per project (or per top segment
	// when the run has no projects), in the order the plan ranks them.
	Sheets []Sheet
	// SheetNote, when set, says which entries have no sheet and where they
	// are listed instead.
	SheetNote string
	// Method is the method and its sources, one section per stage.
	Method []Section
	// Sources are the published methods and tables cited, one per line.
	Sources []string
}

// Figure is one labelled value, already formatted with its unit.
type Figure struct {
	Label, Value string
	// Note, when set, is a short explanation shown beside the value.
	Note string
}

// Table is a captioned table of preformatted cells. Columns carry their
// units in their names; a cell that is a number is right-aligned.
type Table struct {
	Caption string
	Columns []string
	Rows    [][]string
}

// Section is a heading and its paragraphs.
type Section struct {
	Heading    string
	Paragraphs []string
}

// Map is the network drawn from the data: mains coloured by priority and
// hydrants by fire-flow class. Coordinates are planar (x east, y north) in
// any consistent unit; the report fits them to the page.
type Map struct {
	Caption string
	Mains   []MapMain
	// Hydrants are drawn over the mains.
	Hydrants []MapHydrant
	// Classes are the hydrant classes in legend order, e.g. the NFPA 291
	// classes AA, A, B, C, each with its label ("AA: 1,500 gpm or more").
	Classes []HydrantClass
	// ScaleLabel names the value the main colours show, e.g. "priority (0–100)".
	ScaleLabel string
	// ScaleMin and ScaleMax bound the colour scale.
	ScaleMin, ScaleMax float64
	// UnitsPerLength is how many map units make one unit of LengthName, for
	// the scale bar (e.g. 0.3048 map metres per ft); 0 draws no scale bar.
	UnitsPerLength float64
	LengthName     string // e.g. "ft"
}

// MapMain is one drawn main.
type MapMain struct {
	ID string
	// Lines are the main's polylines as [x, y] points.
	Lines [][][2]float64
	// Value is where the main falls on the colour scale; HasValue false
	// draws it grey (not scored) with Tip saying why.
	Value    float64
	HasValue bool
	// Sheet, when set, is the ID of the evidence sheet the main belongs
	// to; clicking the main goes there.
	Sheet string
	// Tip is the tooltip: the main's figures, one per line.
	Tip []Figure
}

// MapHydrant is one hydrant.
type MapHydrant struct {
	ID    string
	X, Y  float64
	Class string // one of Map.Classes' Name, or "" when not tested
	Tip   []Figure
}

// HydrantClass is one legend entry for hydrants.
type HydrantClass struct {
	Name, Label string
}

// ChartKind is how a chart draws its series.
type ChartKind int

const (
	// Bars draws one bar per category and series (grouped), or stacked
	// when Chart.Stacked is set.
	Bars ChartKind = iota
	// Lines draws each series as a polyline through its points.
	Lines
	// Points draws each series as markers; Chart.Diagonal adds y = x.
	Points
)

// Chart is one chart. Bars use Categories and Series[i].Values (one per
// category); Lines and Points use Series[i].Points.
type Chart struct {
	ID, Title, Caption string
	Kind               ChartKind
	XLabel, YLabel     string
	Categories         []string
	Series             []Series
	Stacked            bool
	Diagonal           bool
}

// Series is one named run of values or points.
type Series struct {
	Name   string
	Values []float64
	Points [][2]float64
}

// Sheet is one evidence sheet: a project (or a segment) with the numbers
// behind it, made to be printed on its own page and attached to a grant
// application.
type Sheet struct {
	ID    string // anchor, e.g. "PRJ-007"
	Title string // e.g. "PRJ-007 Dovecote Road, 2,140 ft of 6-in cast iron"
	// Location says where it is in words and coordinates.
	Location string
	Figures  []Figure // cost, length, priority, plan year, ...
	Reasons  []string // why it is proposed, in plain words
	// Failed lists the criteria it fails, each with the measured value and
	// the limit.
	Failed []string
	// Segments is the table of its mains.
	Segments Table
	// Equations show the Hazen-Williams figures with the numbers in.
	Equations []Equation
	// BeforeAfter compares the results before and after the upsizing loop.
	BeforeAfter Table
}

// Equation is a formula, the same formula with the numbers substituted,
// and the result.
type Equation struct {
	Label, Formula, Substituted, Result string
}
