package gis

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// Pipe is one input pipe feature, in file order.
type Pipe struct {
	Index int    // 1-based position in the file
	File  string // base name of the layer file (for Problems raised later)
	ID    string
	// Geometry is the geometry as read, for output (nil if the feature had none).
	Geometry orb.Geometry
	// Line is the centreline used (lon/lat); nil if unusable. A
	// MultiLineString becomes one line when each part starts where the one
	// before ends, within PartGap; a part drawn the other way round is
	// reversed to fit. Parts that do not join make the pipe unusable: its
	// length and end nodes would be guesses.
	Line        orb.LineString
	Diameter    hydraulics.Length // as recorded (nominal = inside for existing mains, the modelling convention)
	Material    string
	InstallYear int     // 0 = unknown
	MeasuredC   float64 // 0 = none
	Closed      bool
	CheckValve  bool // status is one of PipeSchema.CheckValues: flow first vertex → last only
	Zone        string
	Street      string            // street name, "" when not given
	Surface     string            // surface or road class as given, "" when not given
	Length      hydraulics.Length // geodesic on WGS84, grid length in a projected layer, or the mapped length field
	// LengthSource says where Length came from: LengthGeodesic,
	// LengthGrid or LengthField ("" for a pipe with no usable geometry
	// and no length field).
	LengthSource string
	Usable       bool // false: left out of the network; Reason says why
	Reason       string
}

// PartGap is the largest gap between the end of one part of a
// MultiLineString and the start of the next for the parts to be joined into
// one centreline: 0.5 ft, the usual snap tolerance.
const PartGap = 0.5 * hydraulics.Foot

// Plausible sizes and lengths of one water-main segment (common practice, no
// source). Service lines are under 1 in and the largest transmission mains
// are about 12 ft across, so a diameter outside MinDiameter..MaxDiameter is a
// unit mix-up or a typing error (8 in written as 0.8 or as 800). A segment
// runs between fittings; one longer than MaxSegmentLength is almost always a
// length in the wrong unit or a stray vertex. A mapped length shorter than
// PartGap (the usual snap tolerance) would be a zero-length pipe.
const (
	MinDiameter      = 1 * hydraulics.Inch
	MaxDiameter      = 144 * hydraulics.Inch
	MaxSegmentLength = 5 * 5280 * hydraulics.Foot // 5 miles
)

// Plausible install years: from FirstInstallYear to the analysis year.
const FirstInstallYear = 1800

// Plausible measured Hazen-Williams C: above 0 and at most MaxMeasuredC
// (new PVC and lined pipe test at 140–150; DOMAIN.md §2.1).
const MaxMeasuredC = 200

// openStatus are status values that mean in service. Anything that is
// neither one of these nor a closed value is reported and treated as open.
var openStatus = []string{"open", "opened", "active", "in service", "in_service", "inservice", "normal", "normally open"}

// ReadPipes reads a GeoJSON pipe layer; see [PipesFromCollection].
func ReadPipes(path string, s PipeSchema, analysisYear int) ([]Pipe, []Problem, error) {
	fc, err := ReadCollection(path, "pipes")
	if err != nil {
		return nil, nil, err
	}
	return PipesFromCollection(filepath.Base(path), fc, s, analysisYear)
}

// PipesFromCollection turns the features of a pipe layer into Pipes, in file
// order, one per feature. Findings that leave the pipe usable or out of the
// network are Problems; the error is fatal (no features, a required field
// not mapped or in no feature, a bad unit, no usable pipe). With a fatal
// error about the data the pipes and problems found so far are returned too.
// analysisYear bounds install years: later years are treated as unknown.
func PipesFromCollection(file string, fc *geojson.FeatureCollection, s PipeSchema, analysisYear int) ([]Pipe, []Problem, error) {
	return pipesFrom(FromGeoJSON(file, fc), s, analysisYear)
}

// pipesFrom reads the pipes of a lon/lat layer (see PipesFromCollection).
func pipesFrom(c *Collection, s PipeSchema, analysisYear int) ([]Pipe, []Problem, error) {
	file, fc := c.File, c.Features
	dUnit, err := diameterUnit(s.DiameterUnit, "pipes.fields.diameter_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	lUnit, err := lengthUnit(s.LengthUnit, "pipes.fields.length_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	if fc == nil || len(fc.Features) == 0 {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("no features; check the config key pipes.path")}
	}
	if err := checkCRS(file, fc); err != nil {
		return nil, nil, err
	}
	probs, err := checkFields(c, []fieldSpec{
		{key: "pipes.fields.id", prop: s.ID, required: true, isID: true},
		{key: "pipes.fields.diameter", prop: s.Diameter, required: true},
		{key: "pipes.fields.material", prop: s.Material, required: true},
		{key: "pipes.fields.install_year", prop: s.InstallYear, required: true},
		{key: "pipes.fields.measured_c", prop: s.MeasuredC},
		{key: "pipes.fields.status", prop: s.Status},
		{key: "pipes.fields.zone", prop: s.Zone},
		{key: "pipes.fields.street", prop: s.Street},
		{key: "pipes.fields.surface", prop: s.Surface},
		{key: "pipes.fields.length", prop: s.Length},
	})
	if err != nil {
		return nil, nil, err
	}
	closed := s.ClosedValues
	if closed == nil {
		closed = []string{"closed"}
	}
	r := &pipeReader{file: file, s: s, dUnit: dUnit, lUnit: lUnit, year: analysisYear, closed: closed}
	pipes, probs := r.pipes(c, probs)
	usable := 0
	for i := range pipes {
		if pipes[i].Usable {
			usable++
		}
	}
	if usable == 0 {
		return pipes, probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d pipes can be modelled; see the problems list", ErrNoUsable, len(pipes))}
	}
	return pipes, probs, nil
}

// pipes maps the features on GOMAXPROCS goroutines, each with a reader of
// its own (r with no seen map; mapFeatures finds the repeated ids).
func (r *pipeReader) pipes(c *Collection, before []Problem) ([]Pipe, []Problem) {
	features := c.Features.Features
	pipes := make([]Pipe, len(features))
	probs := mapFeatures(len(features), before, func(i int, probs *[]Problem) (string, string) {
		cr := *r
		cr.probs, cr.a = *probs, c.Attrs(i)
		pipes[i] = cr.pipe(i+1, features[i])
		*probs = cr.probs
		return pipes[i].ID, cr.idName
	}, func(i int, id, field string, first int) Problem {
		return Problem{File: r.file, Feature: i + 1, ID: id, Field: field,
			What:   fmt.Sprintf("id %q is also used by feature %d", id, first),
			Action: "pipe kept; ids must be unique for the ranking to be traceable"}
	})
	return pipes, probs
}

type pipeReader struct {
	file   string
	s      PipeSchema
	dUnit  hydraulics.Length
	lUnit  hydraulics.Length
	year   int
	closed []string
	probs  []Problem
	seen   map[string]int // id → first feature index; nil: pipes finds repeats
	idName string         // with seen nil, the member the last pipe's id came from
	a      Attrs          // the properties of the feature being read
}

func (r *pipeReader) add(p *Pipe, field, what, action string) {
	r.probs = append(r.probs, Problem{File: r.file, Feature: p.Index, ID: p.ID, Field: field, What: what, Action: action})
}

// drop marks p unusable and records the Problem.
func (r *pipeReader) drop(p *Pipe, field, what, fix string) {
	if p.Usable {
		p.Usable = false
		p.Reason = what
	}
	r.add(p, field, what, "pipe left out of the network; "+fix)
}

func (r *pipeReader) pipe(index int, f *geojson.Feature) Pipe {
	p := Pipe{Index: index, File: r.file, Geometry: f.Geometry, Usable: true}
	r.id(&p, f)
	r.geometry(&p)
	r.diameter(&p, f)
	r.material(&p, f)
	r.installYear(&p, f)
	r.measuredC(&p, f)
	r.status(&p, f)
	if v, _, ok := lookup(r.a, r.s.Zone); ok {
		p.Zone = idString(v)
	}
	if v, _, ok := lookup(r.a, r.s.Street); ok {
		p.Street = idString(v)
	}
	if v, _, ok := lookup(r.a, r.s.Surface); ok {
		p.Surface = idString(v)
	}
	r.length(&p, f)
	if !p.Usable {
		p.Line = nil
	}
	return p
}

func (r *pipeReader) id(p *Pipe, f *geojson.Feature) {
	v, name, ok := lookup(r.a, r.s.ID)
	if !ok {
		v, name = f.ID, "id"
	}
	p.ID = idString(v)
	if p.ID == "" {
		r.add(p, r.s.ID, "id is missing",
			fmt.Sprintf("pipe kept and named #%d after its position; give every pipe a unique id", p.Index))
		return
	}
	if r.seen == nil { // repeated ids are found afterwards (pipes)
		r.idName = name
		return
	}
	if first, dup := r.seen[p.ID]; dup {
		r.add(p, name, fmt.Sprintf("id %q is also used by feature %d", p.ID, first),
			"pipe kept; ids must be unique for the ranking to be traceable")
		return
	}
	r.seen[p.ID] = p.Index
}

func (r *pipeReader) geometry(p *Pipe) {
	const fix = "supply a LineString in lon/lat (WGS84)"
	switch g := p.Geometry.(type) {
	case nil:
		r.drop(p, "geometry", "geometry is missing", fix)
		return
	case orb.LineString:
		p.Line = g
	case orb.MultiLineString:
		line, what := joinParts(g)
		if what != "" {
			r.drop(p, "geometry", what, "split it into one feature per part or join the parts end to start")
			return
		}
		p.Line = line
	default:
		r.drop(p, "geometry", fmt.Sprintf("geometry is %s, want LineString or MultiLineString", p.Geometry.GeoJSONType()), fix)
		return
	}
	if what := checkLonLat(p.Line); what != "" {
		r.drop(p, "geometry", what, "write the layer in lon/lat (WGS84, EPSG:4326) as GeoJSON requires")
		return
	}
	if distinctVertices(p.Line) < 2 {
		r.drop(p, "geometry", fmt.Sprintf("line has %d distinct vertices, want at least 2", distinctVertices(p.Line)), fix)
	}
}

// joinParts joins the parts of m into one line when each part starts within
// PartGap of where the previous one ends (a part that fits only reversed is
// reversed). It returns a description of the first gap otherwise.
func joinParts(m orb.MultiLineString) (orb.LineString, string) {
	var parts []orb.LineString
	for _, part := range m {
		if len(part) > 0 {
			parts = append(parts, part)
		}
	}
	if len(parts) == 0 {
		return nil, "geometry is an empty MultiLineString"
	}
	line := append(orb.LineString(nil), parts[0]...)
	for i, part := range parts[1:] {
		end := line[len(line)-1]
		dStart := segmentMetres(end, part[0])
		dEnd := segmentMetres(end, part[len(part)-1])
		switch {
		case dStart <= PartGap.Metres():
			line = append(line, part[1:]...)
		case dEnd <= PartGap.Metres():
			for j := len(part) - 2; j >= 0; j-- {
				line = append(line, part[j])
			}
		default:
			return nil, fmt.Sprintf("multi-part line: part %d does not start where part %d ends (gap %s)",
				i+2, i+1, formatDistance(hydraulics.Length(math.Min(dStart, dEnd))))
		}
	}
	return line, ""
}

// checkLonLat reports coordinates that cannot be lon/lat degrees.
func checkLonLat(ls orb.LineString) string {
	for i, q := range ls {
		if !validLonLat(q) {
			return fmt.Sprintf("vertex %d (%s, %s) is not a lon/lat position", i+1, fmtNum(q[0]), fmtNum(q[1]))
		}
	}
	return ""
}

func validLonLat(q orb.Point) bool {
	return !math.IsNaN(q[0]) && !math.IsNaN(q[1]) && math.Abs(q[0]) <= 180 && math.Abs(q[1]) <= 90
}

func distinctVertices(ls orb.LineString) int {
	n := 0
	for i, q := range ls {
		if i == 0 || q != ls[i-1] {
			n++
		}
	}
	if n > 1 {
		// Repeated non-adjacent vertices (A B A) still give a length; count
		// only whether two distinct positions exist.
		for _, q := range ls[1:] {
			if q != ls[0] {
				return n
			}
		}
		return 1
	}
	return n
}

func (r *pipeReader) diameter(p *Pipe, f *geojson.Feature) {
	v, name, _ := lookup(r.a, r.s.Diameter)
	if name == "" {
		name = r.s.Diameter
	}
	const fix = "correct the diameter or set status closed"
	x, err := number(v)
	switch {
	case err == errMissing:
		r.drop(p, name, "diameter is missing", fix)
	case err != nil:
		r.drop(p, name, "diameter "+err.Error(), fix)
	case x <= 0:
		r.drop(p, name, fmt.Sprintf("diameter %s is not > 0", fmtNum(x)), fix)
	case hydraulics.Length(x)*r.dUnit < MinDiameter || hydraulics.Length(x)*r.dUnit > MaxDiameter:
		u := unitLabel(r.s.DiameterUnit, "in")
		r.drop(p, name, fmt.Sprintf("diameter %s %s is outside the plausible %s %s for a water main",
			fmtNum(x), u, plausibleDiameters(r.dUnit), u),
			"correct the diameter, or the config key pipes.fields.diameter_unit if the layer is in another unit")
	default:
		p.Diameter = hydraulics.Length(x) * r.dUnit
	}
}

func (r *pipeReader) material(p *Pipe, f *geojson.Feature) {
	v, name, _ := lookup(r.a, r.s.Material)
	p.Material = idString(v)
	if p.Material == "" {
		if name == "" {
			name = r.s.Material
		}
		r.add(p, name, "material is missing",
			"pipe kept with material unknown, so its C-factor comes from the default for unknown material; fill in the material")
	}
}

func (r *pipeReader) installYear(p *Pipe, f *geojson.Feature) {
	v, name, _ := lookup(r.a, r.s.InstallYear)
	if name == "" {
		name = r.s.InstallYear
	}
	const fix = "pipe kept with age unknown; correct the install year"
	x, err := number(v)
	switch {
	case err == errMissing:
		r.add(p, name, "install year is missing", fix)
	case err != nil:
		r.add(p, name, "install year "+err.Error(), fix)
	case x != math.Trunc(x):
		r.add(p, name, fmt.Sprintf("install year %s is not a whole year", fmtNum(x)), fix)
	case x > float64(r.year):
		r.add(p, name, fmt.Sprintf("install year %s is after the analysis year %d", fmtNum(x), r.year), fix)
	case x < FirstInstallYear:
		r.add(p, name, fmt.Sprintf("install year %s is before %d", fmtNum(x), FirstInstallYear), fix)
	default:
		p.InstallYear = int(x)
	}
}

func (r *pipeReader) measuredC(p *Pipe, f *geojson.Feature) {
	v, name, ok := lookup(r.a, r.s.MeasuredC)
	if !ok {
		return
	}
	const fix = "measured C ignored, C from material and age; correct the value or leave it empty"
	x, err := number(v)
	switch {
	case err == errMissing || (err == nil && x == 0):
	case err != nil:
		r.add(p, name, "measured C "+err.Error(), fix)
	case x < 0 || x > MaxMeasuredC:
		r.add(p, name, fmt.Sprintf("measured C %s is not in 0–%d", fmtNum(x), MaxMeasuredC), fix)
	default:
		p.MeasuredC = x
	}
}

func (r *pipeReader) status(p *Pipe, f *geojson.Feature) {
	v, name, ok := lookup(r.a, r.s.Status)
	if !ok {
		return
	}
	st := idString(v)
	for _, c := range r.closed {
		if strings.EqualFold(st, strings.TrimSpace(c)) {
			p.Closed = true
			return
		}
	}
	if r.checkValve(p, st) {
		return
	}
	if st == "" {
		return
	}
	for _, o := range openStatus {
		if strings.EqualFold(st, o) {
			return
		}
	}
	r.add(p, name, fmt.Sprintf("status %q is not a known value", st),
		"pipe treated as open; if the value means closed, add it to the config key pipes.fields.closed_values")
}

// Where a pipe's Length came from.
const (
	LengthGeodesic = "geodesic" // on the WGS84 ellipsoid, from lon/lat geometry
	LengthGrid     = "grid"     // planar, in a projected layer's linear unit
	LengthField    = "field"    // the mapped length attribute
)

func (r *pipeReader) length(p *Pipe, f *geojson.Feature) {
	if p.Line != nil {
		p.Length, p.LengthSource = GeodesicLength(p.Line), LengthGeodesic
	}
	v, name, ok := lookup(r.a, r.s.Length)
	if ok {
		r.lengthField(p, v, name)
	}
	if p.Usable && p.LengthSource == LengthGeodesic && p.Length > MaxSegmentLength {
		r.add(p, "geometry", fmt.Sprintf("the line is %s long, more than %s for one segment",
			formatDistance(p.Length), formatDistance(MaxSegmentLength)),
			"pipe kept with its drawn length; check for a stray vertex or a layer in the wrong coordinate system")
	}
}

// lengthField applies a mapped length value, unless it is missing or
// implausible (then the length from the geometry stays).
func (r *pipeReader) lengthField(p *Pipe, v any, name string) {
	fix := "length taken from the geometry; correct the value or leave it empty"
	if p.Line == nil {
		fix = "correct the value or leave it empty"
	}
	x, err := number(v)
	l := hydraulics.Length(x) * r.lUnit
	switch {
	case err == errMissing:
	case err != nil:
		r.add(p, name, "length "+err.Error(), fix)
	case x <= 0:
		r.add(p, name, fmt.Sprintf("length %s is not > 0", fmtNum(x)), fix)
	case l > MaxSegmentLength:
		r.add(p, name, fmt.Sprintf("length %s %s (%s) is more than %s for one segment",
			fmtNum(x), unitLabel(r.s.LengthUnit, "ft"), formatDistance(l), formatDistance(MaxSegmentLength)),
			fix+"; check the config key pipes.fields.length_unit")
	case l < PartGap:
		r.add(p, name, fmt.Sprintf("length %s %s is shorter than %s, a zero-length pipe",
			fmtNum(x), unitLabel(r.s.LengthUnit, "ft"), formatDistance(PartGap)), fix)
	default:
		p.Length, p.LengthSource = l, LengthField
	}
}

// plausibleDiameters writes MinDiameter..MaxDiameter in the layer's unit.
func plausibleDiameters(unit hydraulics.Length) string {
	return fmt.Sprintf("%s–%s", fmtNum(float64(MinDiameter/unit)), fmtNum(math.Round(float64(MaxDiameter/unit))))
}

// formatDistance writes a distance for a message in both metres and feet.
func formatDistance(d hydraulics.Length) string {
	return fmt.Sprintf("%.2f m, %.1f ft", d.Metres(), d.Feet())
}
