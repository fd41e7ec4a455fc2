package gis

import (
	"fmt"
	"path/filepath"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// Point is a source, demand or elevation feature.
type Point struct {
	Index int    // 1-based position in the file
	File  string // base name of the layer file (for Problems raised later)
	ID    string
	Name  string
	At    orb.Point // lon/lat
	// Value is in SI: grade and elevation in metres, demand in m³/s.
	Value  float64
	Usable bool
	Reason string
	// Controls are a usable source's per-scenario grades and pump (see
	// SourcesFromCollection); nil for other points.
	Controls *SourceControls
}

// Plausible ground and water-surface elevations, in metres above the datum:
// below the lowest dry land (Dead Sea shore, about −430 m) or above the
// highest peak (8849 m) a value is a no-data code such as −9999.
const (
	MinElevation hydraulics.Length = -450
	MaxElevation hydraulics.Length = 9000
)

// pointKind says how one kind of point layer reads its value.
type pointKind struct {
	key      string // config section: "sources", "demands", "elevations"
	noun     string // "source", "demand point", "elevation point"
	id, name string // property names, "" if not mapped
	value    string // property of the value (required)
	valueKey string // config key of the value field
	label    string // the value's name in messages: "grade", "demand", "elevation"
	unit     float64
	unitName string
	check    func(x float64) string // what is wrong with a value in the layer's unit, or ""
}

// ReadSources reads a GeoJSON source layer; see [SourcesFromCollection].
func ReadSources(path string, s SourceSchema) ([]Point, []Problem, error) {
	fc, err := ReadCollection(path, "sources")
	if err != nil {
		return nil, nil, err
	}
	return SourcesFromCollection(filepath.Base(path), fc, s)
}

// SourcesFromCollection reads sources: points with the hydraulic grade they
// hold (Value in metres above the datum).
func SourcesFromCollection(file string, fc *geojson.FeatureCollection, s SourceSchema) ([]Point, []Problem, error) {
	return sourcesFrom(FromGeoJSON(file, fc), s)
}

// SourcesFromLayer is SourcesFromCollection for a layer in any coordinate
// system.
func SourcesFromLayer(c *Collection, s SourceSchema) ([]Point, []Problem, error) {
	return sourcesFrom(c.lonLatLayer(), s)
}

func sourcesFrom(c *Collection, s SourceSchema) ([]Point, []Problem, error) {
	file := c.File
	u, err := lengthUnit(s.GradeUnit, "sources.fields.grade_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	k := pointKind{key: "sources", noun: "source", id: s.ID, name: s.Name, value: s.Grade,
		valueKey: "sources.fields.grade", label: "grade", unit: float64(u), unitName: unitLabel(s.GradeUnit, "ft"),
		check: elevationCheck(u)}
	pts, probs, err := readPoints(c, k)
	if err != nil {
		return pts, probs, err
	}
	more, err := readSourceControls(c, s, pts)
	return pts, append(probs, more...), err
}

// ReadDemands reads a GeoJSON demand layer; see [DemandsFromCollection].
func ReadDemands(path string, s DemandSchema) ([]Point, []Problem, error) {
	fc, err := ReadCollection(path, "demands")
	if err != nil {
		return nil, nil, err
	}
	return DemandsFromCollection(filepath.Base(path), fc, s)
}

// DemandsFromCollection reads demand points: average-day withdrawal (Value
// in m³/s). A negative demand leaves the point out; zero is kept.
func DemandsFromCollection(file string, fc *geojson.FeatureCollection, s DemandSchema) ([]Point, []Problem, error) {
	return demandsFrom(FromGeoJSON(file, fc), s)
}

// DemandsFromLayer is DemandsFromCollection for a layer in any coordinate
// system.
func DemandsFromLayer(c *Collection, s DemandSchema) ([]Point, []Problem, error) {
	return demandsFrom(c.lonLatLayer(), s)
}

func demandsFrom(c *Collection, s DemandSchema) ([]Point, []Problem, error) {
	file := c.File
	u, err := flowUnit(s.DemandUnit, "demands.fields.demand_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	k := pointKind{key: "demands", noun: "demand point", id: s.ID, value: s.Demand,
		valueKey: "demands.fields.demand", label: "demand", unit: float64(u), unitName: unitLabel(s.DemandUnit, "gpm"),
		check: func(x float64) string {
			if x < 0 {
				return "is negative"
			}
			return ""
		}}
	return readPoints(c, k)
}

// ReadElevations reads a GeoJSON elevation-point layer; see [ElevationsFromCollection].
func ReadElevations(path string, s ElevationSchema) ([]Point, []Problem, error) {
	fc, err := ReadCollection(path, "elevations")
	if err != nil {
		return nil, nil, err
	}
	return ElevationsFromCollection(filepath.Base(path), fc, s)
}

// ElevationsFromCollection reads ground-elevation points (Value in metres).
// Values outside MinElevation..MaxElevation (no-data codes) are left out.
func ElevationsFromCollection(file string, fc *geojson.FeatureCollection, s ElevationSchema) ([]Point, []Problem, error) {
	return elevationsFrom(FromGeoJSON(file, fc), s)
}

// ElevationsFromLayer is ElevationsFromCollection for a layer in any
// coordinate system.
func ElevationsFromLayer(c *Collection, s ElevationSchema) ([]Point, []Problem, error) {
	return elevationsFrom(c.lonLatLayer(), s)
}

func elevationsFrom(c *Collection, s ElevationSchema) ([]Point, []Problem, error) {
	file := c.File
	u, err := lengthUnit(s.ElevationUnit, "elevations.fields.elevation_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	k := pointKind{key: "elevations", noun: "elevation point", value: s.Elevation,
		valueKey: "elevations.fields.elevation", label: "elevation", unit: float64(u), unitName: unitLabel(s.ElevationUnit, "ft"),
		check: elevationCheck(u)}
	return readPoints(c, k)
}

func elevationCheck(u hydraulics.Length) func(float64) string {
	return func(x float64) string {
		m := hydraulics.Length(x) * u
		if m < MinElevation || m > MaxElevation {
			return fmt.Sprintf("is outside %g to %g m (a no-data value?)", float64(MinElevation), float64(MaxElevation))
		}
		return ""
	}
}

func unitLabel(u, def string) string {
	if u == "" {
		return def
	}
	return u
}

func readPoints(c *Collection, k pointKind) ([]Point, []Problem, error) {
	file, fc := c.File, c.Features
	if fc == nil || len(fc.Features) == 0 {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("no features; check the config key %s.path", k.key)}
	}
	if err := checkCRS(file, fc); err != nil {
		return nil, nil, err
	}
	probs, err := checkFields(c, []fieldSpec{
		{key: k.valueKey, prop: k.value, required: true},
		{key: k.key + ".fields.id", prop: k.id, isID: true},
		{key: k.key + ".fields.name", prop: k.name},
	})
	if err != nil {
		return nil, nil, err
	}
	pts := make([]Point, len(fc.Features))
	probs = mapFeatures(len(fc.Features), probs, func(i int, probs *[]Problem) (string, string) {
		var field string
		pts[i], field = readPoint(file, k, i, fc.Features[i], c.Attrs(i), probs)
		return pts[i].ID, field
	}, func(i int, id, field string, first int) Problem {
		return Problem{File: file, Feature: i + 1, ID: id, Field: field,
			What:   fmt.Sprintf("id %q is also used by feature %d", id, first),
			Action: k.noun + " kept; ids must be unique for the results to be traceable"}
	})
	usable := 0
	for i := range pts {
		if pts[i].Usable {
			usable++
		}
	}
	if usable == 0 {
		return pts, probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d %ss can be used; see the problems list", ErrNoUsable, len(pts), k.noun)}
	}
	return pts, probs, nil
}

// readPoint maps feature i of a point layer, appending its problems to
// probs (all but a repeated id, which readPoints finds), and returns it
// with the member its id came from.
func readPoint(file string, k pointKind, i int, f *geojson.Feature, a Attrs, probs *[]Problem) (Point, string) {
	p := Point{Index: i + 1, File: file, Usable: true}
	add := func(field, what, action string) {
		*probs = append(*probs, Problem{File: file, Feature: p.Index, ID: p.ID, Field: field, What: what, Action: action})
	}
	drop := func(field, what, fix string) {
		if p.Usable {
			p.Usable, p.Reason = false, what
		}
		add(field, what, k.noun+" left out; "+fix)
	}
	var idField string
	if k.id != "" {
		v, name, ok := lookup(a, k.id)
		if !ok {
			v, name = f.ID, "id"
		}
		p.ID, idField = idString(v), name
	}
	if v, _, ok := lookup(a, k.name); ok {
		p.Name = idString(v)
	}
	switch g := f.Geometry.(type) {
	case nil:
		drop("geometry", "geometry is missing", "supply a Point in lon/lat (WGS84)")
	case orb.Point:
		if !validLonLat(g) {
			drop("geometry", fmt.Sprintf("point (%s, %s) is not a lon/lat position", fmtNum(g[0]), fmtNum(g[1])),
				"write the layer in lon/lat (WGS84, EPSG:4326) as GeoJSON requires")
		}
		p.At = g
	default:
		drop("geometry", fmt.Sprintf("geometry is %s, want Point", g.GeoJSONType()), "supply a Point in lon/lat (WGS84)")
	}
	v, name, _ := lookup(a, k.value)
	if name == "" {
		name = k.value
	}
	fix := "correct the " + k.label
	x, err := number(v)
	switch {
	case err == errMissing:
		drop(name, k.label+" is missing", fix)
	case err != nil:
		drop(name, k.label+" "+err.Error(), fix)
	default:
		if what := k.check(x); what != "" {
			drop(name, fmt.Sprintf("%s %s %s %s", k.label, fmtNum(x), k.unitName, what), fix)
		} else {
			p.Value = x * k.unit
		}
	}
	return p, idField
}
