package main

import (
	"cmp"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"

	"github.com/paulmach/orb"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/report"
)

// writeOptions are the run's choices about where outputs may go.
type writeOptions struct {
	// allowInputFolder lets --out be a folder that holds an input
	// (--allow-input-folder); an input file is never overwritten.
	allowInputFolder bool
}

// output is one file (or, for a shapefile, one set of files) to write.
type output struct {
	name  string
	write func(path string) error
}

// writeOutputs writes the result files into dir and returns their paths:
// ranked.csv, then the pipe and node layers in each configured format, then
// c_calibration.csv and problems.csv. The set is all-or-nothing (see commitOutputs): every file is
// written into a staging folder inside dir and renamed into place only when
// all are complete, so a failure or a kill while writing leaves the
// previous outputs untouched; only a kill during the final renames (well
// under a millisecond) can leave a mix of this run's files and the last
// run's, each whole.
//
// Before anything is written it refuses a dir that holds an input unless
// opt.allowInputFolder is set, any output that would replace an input file,
// and any NaN or ±Inf value in the layers (see checkFinite).
func writeOutputs(dir string, r *result, opt writeOptions) ([]string, error) {
	if err := checkOutFolder(dir, r.inputPaths, opt.allowInputFolder); err != nil {
		return nil, err
	}
	tables := r.progress.begin("tables", "", 0)
	pipes, nodes := r.pipeLayer(), r.nodeLayer()
	ranked, problems := r.rankedLayer(pipes), r.problemLayer()
	hydrants := r.hydrantOutput()
	if err := checkFinite(pipes, nodes, problems, hydrants); err != nil { // ranked is a view of pipes
		return nil, err
	}
	fire := r.cfg.fireFlowOn()
	outs := []output{{"ranked.csv", func(p string) error { return gis.WriteCSV(p, ranked) }}}
	if r.cfg.wants(formatGeoJSON) {
		outs = append(outs,
			output{"pipes.geojson", func(p string) error { return gis.WriteGeoJSON(p, pipes) }},
			output{"nodes.geojson", func(p string) error { return gis.WriteGeoJSON(p, nodes) }})
		if fire {
			outs = append(outs, output{"hydrants.geojson", func(p string) error { return gis.WriteGeoJSON(p, hydrants) }})
		}
	}
	if r.cfg.wants(formatGeoPackage) {
		srs := spatialRef(r.pipeLayerCRS)
		outs = append(outs,
			output{"pipes.gpkg", func(p string) error { return gis.WriteGeoPackage(p, srs, r.projected(pipes)) }},
			output{"nodes.gpkg", func(p string) error { return gis.WriteGeoPackage(p, srs, r.projected(nodes)) }})
		if fire {
			outs = append(outs, output{"hydrants.gpkg", func(p string) error { return gis.WriteGeoPackage(p, srs, r.projected(hydrants)) }})
		}
	}
	if r.cfg.wants(formatShapefile) {
		shp := func(l *gis.Layer) func(string) error {
			return func(p string) error {
				_, err := gis.WriteShapefile(p, oneShapeType(r.projected(l)), r.pipeLayerCRS.ESRIWKT())
				return err
			}
		}
		layers := []*gis.Layer{pipes, nodes}
		outs = append(outs, output{"pipes.shp", shp(pipes)}, output{"nodes.shp", shp(nodes)})
		if fire {
			layers = append(layers, hydrants)
			outs = append(outs, output{"hydrants.shp", shp(hydrants)})
		}
		// The short names come from the column names alone, so fields.csv
		// does not wait for the shapefiles, which are written beside it.
		fields, err := fieldsLayer(layers)
		if err != nil {
			return nil, err
		}
		outs = append(outs, output{"fields.csv", func(p string) error { return gis.WriteCSV(p, fields) }})
	}
	prog, err := r.progOutputs() // projects.csv, plan.csv, projects layers (programout.go)
	if err != nil {
		return nil, err
	}
	outs = append(outs, prog...)
	calibration := r.ageCalibrationLayer()
	outs = append(outs, output{"c_calibration.csv", func(p string) error { return gis.WriteCSV(p, calibration) }})
	outs = append(outs, output{"problems.csv", func(p string) error { return gis.WriteCSV(p, problems) }})
	// The workbook and the report are laid out inside their writers, so
	// that they are built while the other files are written.
	outs = append(outs,
		output{"ranked.xlsx", func(p string) error {
			book := rankedWorkbook(ranked, r.progProjectLayer(), r.progPlanLayer(), problems, maxSheetRows)
			return gis.WriteFileAtomic(p, func(w io.Writer) error { return report.WriteXLSX(w, book) })
		}},
		output{"report.html", func(p string) error {
			doc := r.reportDocument(pipes, hydrants)
			return gis.WriteFileAtomic(p, func(w io.Writer) error { return report.WriteHTML(w, doc) })
		}})
	outs = r.withManifest(outs) // each output hashes its files once written; manifest.json last
	for _, o := range outs {
		for _, f := range producedFiles(o.name) {
			if path := filepath.Join(dir, f); r.isInput(path) {
				return nil, fmt.Errorf("%s is one of the run's inputs; choose another --out so inputs are never overwritten", path)
			}
		}
	}
	if err := prepareOutDir(dir); err != nil {
		return nil, err
	}
	tables.end("the output rows of every pipe, node and hydrant")
	writing := r.progress.begin("writing", "files", len(outs))
	for k := range outs {
		write := outs[k].write
		outs[k].write = func(p string) error {
			defer writing.add(1)
			return write(p)
		}
	}
	written, err := commitOutputs(dir, outs)
	if err == nil {
		writing.end("into " + dir)
	}
	return written, err
}

// projected returns l with its lon/lat geometry in the pipe layer's
// coordinate system, for the GeoPackage and shapefile outputs: a view that
// transforms each row's geometry as it is written.
func (r *result) projected(l *gis.Layer) *gis.Layer {
	crs := r.pipeLayerCRS
	if crs.Geographic() {
		return l
	}
	return l.View(l.Name, nil, nil, func(g orb.Geometry) orb.Geometry { return gis.TransformGeometry(g, crs.Forward) })
}

// oneShapeType returns l with every geometry that is not of the layer's
// kind (lines for pipes, points for nodes and hydrants) written as a null shape: a
// shapefile holds one shape type, and a pipe whose geometry was a point is
// still a row, unscored, with its reason.
func oneShapeType(l *gis.Layer) *gis.Layer {
	keep := func(g orb.Geometry) bool {
		switch g.(type) {
		case orb.LineString, orb.MultiLineString:
			return l.Name != "nodes" && l.Name != "hydrants"
		case orb.Point:
			return l.Name == "nodes" || l.Name == "hydrants"
		}
		return false
	}
	return l.View(l.Name, nil, nil, func(g orb.Geometry) orb.Geometry {
		if keep(g) {
			return g
		}
		return nil
	})
}

// userSRSID numbers a spatial reference with no EPSG code, in the range the
// GeoPackage standard leaves to applications.
const userSRSID = 100000

// spatialRef is the GeoPackage spatial reference row of a CRS.
func spatialRef(crs *gis.CRS) gis.SpatialRef {
	if crs.EPSG != 0 {
		return gis.SpatialRef{ID: crs.EPSG, Name: crs.Name, Organization: "EPSG", OrgID: crs.EPSG, Definition: crs.WKT1()}
	}
	return gis.SpatialRef{ID: userSRSID, Name: crs.Name, Organization: "NONE", OrgID: userSRSID, Definition: crs.WKT1()}
}

// fieldsLayer maps each shapefile field's short name to its full column
// name and unit (a .dbf name holds at most 10 characters), for each of
// layers in order.
func fieldsLayer(layers []*gis.Layer) (*gis.Layer, error) {
	out := &gis.Layer{Name: "fields", Columns: []gis.Column{
		{Name: "file", Kind: gis.String}, {Name: "short_name", Kind: gis.String},
		{Name: "full_name", Kind: gis.String}, {Name: "unit", Kind: gis.String},
	}}
	for _, l := range layers {
		fields, err := gis.ShapefileFieldNames(l)
		if err != nil {
			return nil, err
		}
		for _, f := range fields {
			out.Rows = append(out.Rows, gis.Row{Values: []any{l.Name + ".shp", f.Short, f.Full, columnUnit(f.Full)}})
		}
	}
	return out, nil
}

// columnUnits are the unit suffixes of output column names, longest first.
var columnUnits = []struct{ suffix, unit string }{
	{"_ft_per_kft", "feet of head loss per 1,000 ft of pipe"},
	{"_m_per_km", "metres of head loss per km of pipe"},
	{"_per_mi_yr", "breaks per mile per year"}, {"_per_100km_yr", "breaks per 100 km per year"},
	{"_per_kusd", "per US$1,000"}, {"_priority_ft", "priority × feet"}, {"_priority_m", "priority × metres"},
	{"_usd", "US dollars"},
	{"_gpm", "US gallons per minute"}, {"_lps", "litres per second"},
	{"_fps", "feet per second"}, {"_mps", "metres per second"},
	{"_psi", "pounds per square inch"}, {"_kpa", "kilopascals"},
	{"_in", "inches"}, {"_mm", "millimetres"}, {"_ft", "feet"}, {"_m", "metres"},
}

// columnUnit names the unit an output column's suffix declares, "" for none.
func columnUnit(name string) string {
	for _, u := range columnUnits {
		if strings.HasSuffix(name, u.suffix) {
			return u.unit
		}
	}
	return ""
}

// isInput reports whether path names one of the run's input files.
func (r *result) isInput(path string) bool {
	out, err := filepath.Abs(path)
	if err != nil {
		return false
	}
	for _, in := range r.inputPaths {
		if a, err := filepath.Abs(in); err == nil && a == out {
			return true
		}
	}
	return false
}

// pipeColumns are the columns of pipes.geojson and, after rank, of ranked.csv.
// The plain hydraulic columns are peak hour, the scenario the criteria and
// scores read; avg_day_ and max_day_ columns give the other scenarios.
func (r *result) pipeColumns() []gis.Column {
	s := r.cfg.system()
	d, l, q, v, h := s.DiameterSuffix(), s.LengthSuffix(), s.FlowSuffix(), s.VelocitySuffix(), s.UnitHeadLossSuffix()
	cols := []gis.Column{
		{Name: "pipe_id", Kind: gis.String},
		{Name: "feature", Kind: gis.Integer},
		{Name: "rank", Kind: gis.Integer},
		{Name: "score", Kind: gis.Real, Decimals: 1},
		{Name: "status", Kind: gis.String},
		{Name: "material", Kind: gis.String},
		{Name: "install_year", Kind: gis.Integer},
		{Name: "diameter_" + d, Kind: gis.Real, Decimals: 2},
		{Name: "inside_diameter_" + d, Kind: gis.Real, Decimals: 3}, // sizes.go
		{Name: "length_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "c_factor", Kind: gis.Real, Decimals: 1},
		{Name: "c_basis", Kind: gis.String},
		{Name: "c_model", Kind: gis.Real, Decimals: 1},
		{Name: "c_source", Kind: gis.String},
		{Name: "from_node", Kind: gis.String},
		{Name: "to_node", Kind: gis.String},
		{Name: "flow_" + q, Kind: gis.Real, Decimals: 2},
		{Name: "velocity_" + v, Kind: gis.Real, Decimals: 3},
		{Name: "headloss_" + h, Kind: gis.Real, Decimals: 3},
		{Name: "capacity_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "deficit_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "required_diameter_" + d, Kind: gis.Real, Decimals: 1},
	}
	cols = append(cols, r.curePipeColumns()...) // recommended_diameter_in (upsize.go)
	cols = append(cols, r.progPipeColumns()...) // risk, priority, project (programout.go)
	for _, sc := range r.otherScenarios() {
		cols = append(cols, gis.Column{Name: sc.prefix + "flow_" + q, Kind: gis.Real, Decimals: 2},
			gis.Column{Name: sc.prefix + "headloss_" + h, Kind: gis.Real, Decimals: 3})
	}
	return append(cols,
		gis.Column{Name: "score_headloss", Kind: gis.Real, Decimals: 1},
		gis.Column{Name: "score_velocity", Kind: gis.Real, Decimals: 1},
		gis.Column{Name: "score_c_factor", Kind: gis.Real, Decimals: 1},
		gis.Column{Name: "score_deficit", Kind: gis.Real, Decimals: 1},
		gis.Column{Name: "reasons", Kind: gis.String},
	)
}

// otherScenarios are the scenarios reported beside peak hour.
func (r *result) otherScenarios() []scenario {
	return r.scenarios[:len(r.scenarios)-1]
}

// pipeLayer has one row per input pipe, in input order: nothing is lost.
// It is packed column by column (gis.PackLayer): at a million pipes, rows
// of boxed values would hold a gigabyte through the writing.
func (r *result) pipeLayer() *gis.Layer {
	s := r.cfg.system()
	cols := r.pipeColumns()
	index := columnLookupOf(cols)
	return gis.PackLayer("pipes", cols, len(r.pipes), func(i int, vals []any) orb.Geometry {
		p := r.pipes[i]
		r.pipeValues(i, p, s, rowValues{index: index, vals: vals})
		return p.Geometry
	})
}

// columnLookupOf finds each of cols by its name.
func columnLookupOf(cols []gis.Column) *columnLookup {
	names := make([]string, len(cols))
	for k, c := range cols {
		names[k] = c.Name
	}
	return newColumnLookup(names)
}

// rowValues fills one output row by column name. A name that is not one
// of the columns is ignored, and a column never set stays nil (a null).
type rowValues struct {
	index *columnLookup // column name → position in vals
	vals  []any
}

// set puts x in the column named name, if the row has one.
func (v rowValues) set(name string, x any) {
	if k, ok := v.index.position(name); ok {
		v.vals[k] = x
	}
}

// pipeValues sets one pipe's output values in v by column name; a column
// not set is a null.
func (r *result) pipeValues(i int, p gis.Pipe, s hydraulics.System, v rowValues) {
	d, l, q, vs, h := s.DiameterSuffix(), s.LengthSuffix(), s.FlowSuffix(), s.VelocitySuffix(), s.UnitHeadLossSuffix()
	sc := r.scores[i]
	status := "open"
	switch {
	case p.Closed:
		status = "closed"
	case p.CheckValve:
		status = "check valve" // open, flow first vertex → last only
	}
	v.set("pipe_id", p.ID)
	v.set("feature", p.Index)
	v.set("status", status)
	v.set("material", p.Material)
	v.set("diameter_"+d, s.Diameter(p.Diameter))
	v.set("length_"+l, s.Length(p.Length))
	v.set("c_factor", r.cFactor[i])
	v.set("c_basis", r.cBasis[i])
	v.set("reasons", sc.Reasons)
	r.ageValues(i, v)      // c_model, c_source (aging.go)
	r.curePipeValues(i, v) // recommended_diameter_in (upsize.go)
	r.progPipeValues(i, v) // risk, priority, project (programout.go)
	if p.InstallYear > 0 {
		v.set("install_year", p.InstallYear)
	}
	if i < len(r.inside) && r.inside[i] > 0 {
		v.set("inside_diameter_"+d, s.Diameter(r.inside[i]))
	}
	if len(r.parts[i]) > 0 {
		e := r.topo.Ends[i]
		v.set("from_node", r.net.Nodes[e[0]].ID)
		v.set("to_node", r.net.Nodes[e[1]].ID)
		if !r.pipeUnsupplied(i) {
			j := r.governing(i) // a split pipe reports its part with the largest friction slope
			c := r.checks[j]
			v.set("flow_"+q, s.Flow(c.Flow))
			v.set("velocity_"+vs, s.Velocity(c.Velocity))
			v.set("headloss_"+h, s.UnitHeadLoss(c.Slope))
			v.set("capacity_"+q, s.Flow(c.Capacity))
			v.set("deficit_"+q, s.Flow(c.Deficit))
			if c.Required.Nominal > 0 {
				v.set("required_diameter_"+d, s.Diameter(c.Required.Nominal))
			}
			for _, o := range r.otherScenarios() {
				np := r.net.Pipes[j]
				v.set(o.prefix+"flow_"+q, s.Flow(o.sol.Flow[j]))
				v.set(o.prefix+"headloss_"+h, s.UnitHeadLoss(hydraulics.FrictionSlope(o.sol.Flow[j], np.Diameter, np.C)))
			}
		}
	}
	if sc.Scored {
		v.set("rank", sc.Rank)
		v.set("score", sc.Score)
		v.set("score_headloss", sc.HeadLoss)
		v.set("score_velocity", sc.Velocity)
		v.set("score_c_factor", sc.CFactor)
		v.set("score_deficit", sc.Deficit)
	}
}

// rankedLayer is the scored rows of the pipe layer, rank 1 first, with
// the rank as its first column: a view of the pipe layer, not a copy.
func (r *result) rankedLayer(pipes *gis.Layer) *gis.Layer {
	var rows []int
	for i, sc := range r.scores {
		if sc.Scored {
			rows = append(rows, i)
		}
	}
	slices.SortStableFunc(rows, func(a, b int) int { return cmp.Compare(r.scores[a].Rank, r.scores[b].Rank) })
	// rank first, as a reader of a ranked list expects
	order := append([]int{2, 0, 1}, make([]int, len(pipes.Columns)-3)...)
	for k := 3; k < len(order); k++ {
		order[k] = k
	}
	return pipes.View("ranked", rows, order, func(orb.Geometry) orb.Geometry { return nil })
}

// nodeLayer has one row per node with its head and pressure: the plain
// columns at peak hour, avg_day_ and max_day_ columns for the other two.
func (r *result) nodeLayer() *gis.Layer {
	s := r.cfg.system()
	e, q, p := s.LengthSuffix(), s.FlowSuffix(), s.PressureSuffix()
	layer := &gis.Layer{Name: "nodes", Columns: []gis.Column{
		{Name: "node_id", Kind: gis.String},
		{Name: "kind", Kind: gis.String},
		{Name: "source_id", Kind: gis.String},
		{Name: "elevation_" + e, Kind: gis.Real, Decimals: 2},
		{Name: "demand_" + q, Kind: gis.Real, Decimals: 3},
		{Name: "average_day_demand_" + q, Kind: gis.Real, Decimals: 3},
		{Name: "head_" + e, Kind: gis.Real, Decimals: 3},
		{Name: "pressure_" + p, Kind: gis.Real, Decimals: 2},
		{Name: "below_min_pressure", Kind: gis.String},
	}}
	for _, sc := range r.otherScenarios() {
		layer.Columns = append(layer.Columns, gis.Column{Name: sc.prefix + "head_" + e, Kind: gis.Real, Decimals: 3},
			gis.Column{Name: sc.prefix + "pressure_" + p, Kind: gis.Real, Decimals: 2})
	}
	layer.Columns = append(layer.Columns, r.cureNodeColumns()...) // pressure_after_psi (upsize.go)
	sourceOf := make(map[int]string, len(r.supplies))
	for _, sp := range r.supplies {
		sourceOf[sp.Node] = r.sources[sp.Source].ID
	}
	ncols := len(layer.Columns)
	return gis.PackLayer(layer.Name, layer.Columns, len(r.net.Nodes), func(i int, vals []any) orb.Geometry {
		got := r.nodeValues(i, s, sourceOf, vals[:0])
		if len(got) != ncols { // a programming error: columns and values are made together
			panic(fmt.Sprintf("nodeLayer: %d values for %d columns", len(got), ncols))
		}
		copy(vals, got)
		return r.topo.Nodes[i].At
	})
}

// nodeValues appends node i's values in the node layer's column order.
func (r *result) nodeValues(i int, s hydraulics.System, sourceOf map[int]string, vals []any) []any {
	n := r.net.Nodes[i]
	kind, factor := "junction", r.cfg.Demands.PeakHourFactor
	if n.Fixed {
		kind, factor = "source", 0
	}
	var head, pres, below any
	if h := r.sol.Head[i]; !math.IsNaN(float64(h)) {
		head = s.Head(h)
		pres = s.Pressure(hydraulics.NodePressure(n, h))
		below = "no"
		if r.belowMin[i] {
			below = "yes"
		}
	}
	var src any
	if id, ok := sourceOf[i]; ok {
		src = id
	}
	vals = append(vals, n.ID, kind, src, s.Length(n.Elevation), s.Flow(n.Demand*hydraulics.Flow(factor)),
		s.Flow(n.Demand), head, pres, below)
	for _, sc := range r.otherScenarios() {
		var head, pres any
		if h := sc.sol.Head[i]; !math.IsNaN(float64(h)) {
			head, pres = s.Head(h), s.Pressure(hydraulics.NodePressure(n, h))
		}
		vals = append(vals, head, pres)
	}
	return append(vals, r.cureNodeValues(i)...) // pressure_after_psi (upsize.go)
}

// problemLayer lists every input problem found, in the order found.
func (r *result) problemLayer() *gis.Layer {
	l := &gis.Layer{Name: "problems", Columns: []gis.Column{
		{Name: "file", Kind: gis.String},
		{Name: "feature", Kind: gis.Integer},
		{Name: "id", Kind: gis.String},
		{Name: "field", Kind: gis.String},
		{Name: "problem", Kind: gis.String},
		{Name: "action", Kind: gis.String},
	}}
	for _, p := range r.problems {
		var feature any
		if p.Feature > 0 {
			feature = p.Feature
		}
		l.Rows = append(l.Rows, gis.Row{Values: []any{p.File, feature, p.ID, p.Field, p.What, p.Action}})
	}
	return l
}
