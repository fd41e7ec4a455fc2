package gis

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
	"github.com/paulmach/orb/planar"

	"headroom/hydraulics"
)

// Layer formats, as inspect and messages name them.
const (
	FormatGeoJSON    = "GeoJSON"
	FormatShapefile  = "ESRI Shapefile"
	FormatGeoPackage = "GeoPackage"
)

// Collection is a layer as read from its file: features in the file's own
// coordinates and the coordinate system they are in.
type Collection struct {
	File     string // base name, for messages
	Format   string
	CRS      *CRS // declared by the file, given by the user, or CRS84 (RFC 7946)
	Features *geojson.FeatureCollection
	Z        [][]float64 // per feature, Z per vertex; nil when the layer has none
	Fields   []FieldInfo // declared fields (shapefile, GeoPackage); nil for GeoJSON
	Note     string      // how the CRS was settled, when it was not declared

	// attrs are the features' properties (see Attrs), whose Properties
	// maps are then nil; when attrs is nil, each feature's map holds them.
	attrs []Attrs
}

// Attrs returns the properties of feature i (0-based).
func (c *Collection) Attrs(i int) Attrs {
	if c.attrs != nil {
		return c.attrs[i]
	}
	return attrsOf(c.Features.Features[i].Properties)
}

// takeAttrs moves the properties of c's features from their maps into
// c.attrs (see attrsOfFeatures).
func (c *Collection) takeAttrs(order []string) {
	c.attrs = attrsOfFeatures(c.Features.Features, order)
	for _, f := range c.Features.Features {
		f.Properties = nil
	}
}

// lonLatLayer is c with its features in WGS 84 lon/lat (see LonLat) and the
// same properties.
func (c *Collection) lonLatLayer() *Collection {
	if c.CRS.Geographic() {
		return c
	}
	out := *c
	out.Features, out.CRS = c.LonLat(), CRS84
	if out.attrs == nil {
		out.attrs = attrsOfFeatures(c.Features.Features, nil)
	}
	return &out
}

// FieldInfo is one declared attribute of a layer.
type FieldInfo struct{ Name, Type string }

// OpenOptions say how to open a layer.
type OpenOptions struct {
	Key   string // config section named in messages: "pipes", "sources", ...
	Table string // GeoPackage feature table; "" = the only one
	// CRS is what the user says this layer is (its config crs key). It
	// settles a layer that declares nothing and must agree with one that
	// does.
	CRS *CRS
	// Fallback is the coordinate system of any shapefile or GeoPackage
	// that declares none and has no CRS of its own (the --crs flag); a
	// declared one wins, and GeoJSON is lon/lat by RFC 7946.
	Fallback *CRS
}

// OpenLayer reads a GeoJSON (.geojson, .json), shapefile (.shp) or
// GeoPackage (.gpkg) layer, chosen by the file's extension.
func OpenLayer(path string, opt OpenOptions) (*Collection, error) {
	file := filepath.Base(path)
	var c *Collection
	var declared *CRS
	var err error
	switch ext := strings.ToLower(filepath.Ext(path)); ext {
	case ".geojson", ".json":
		c, declared, err = openGeoJSON(path, opt)
	case ".shp":
		c, declared, err = openShapefile(path)
	case ".gpkg":
		c, declared, err = openGeoPackage(path, opt)
	default:
		return nil, &FieldError{File: file, Err: fmt.Errorf("unknown layer format %q: use .geojson, .shp or .gpkg (check the config key %s.path)", ext, opt.Key)}
	}
	if err != nil {
		return nil, err
	}
	if err := settleCRS(c, declared, opt); err != nil {
		return nil, err
	}
	return c, nil
}

// FromGeoJSON wraps a lon/lat collection already in memory (the built-in
// demo, and the readers' FromCollection forms) as a layer, its properties
// taken once into Attrs; the features keep their maps. A nil collection is
// an empty one.
func FromGeoJSON(file string, fc *geojson.FeatureCollection) *Collection {
	if fc == nil {
		fc = geojson.NewFeatureCollection()
	}
	return &Collection{File: file, Format: FormatGeoJSON, CRS: CRS84, Features: fc, attrs: attrsOfFeatures(fc.Features, nil)}
}

func openGeoJSON(path string, opt OpenOptions) (*Collection, *CRS, error) {
	fc, attrs, err := readGeoJSON(path, opt.Key)
	if err != nil {
		return nil, nil, err
	}
	file := filepath.Base(path)
	c := &Collection{File: file, Format: FormatGeoJSON, Features: fc, attrs: attrs}
	if attrs == nil {
		c.takeAttrs(nil)
	}
	raw, ok := fc.ExtraMembers["crs"]
	if !ok || raw == nil {
		return c, nil, nil
	}
	name := crsMemberName(raw)
	crs, err := ParseCRS(geojsonCRSName(name))
	if err != nil {
		return nil, nil, &FieldError{File: file, Field: "crs", Err: fmt.Errorf("the crs member names %q: %w", name, err)}
	}
	delete(fc.ExtraMembers, "crs")
	return c, crs, nil
}

// crsMemberName returns properties.name of a 2008-style GeoJSON crs member.
func crsMemberName(raw any) string {
	if m, ok := raw.(map[string]any); ok {
		if p, ok := m["properties"].(map[string]any); ok {
			if n, ok := p["name"].(string); ok {
				return n
			}
		}
	}
	return fmt.Sprint(raw)
}

// geojsonCRSName turns the URN forms GeoJSON files use
// (urn:ogc:def:crs:EPSG::2229, urn:ogc:def:crs:OGC:1.3:CRS84) into the
// short names ParseCRS takes.
func geojsonCRSName(name string) string {
	n := strings.TrimSpace(name)
	low := strings.ToLower(n)
	switch {
	case strings.HasSuffix(low, "crs84"):
		return "CRS84"
	case strings.HasPrefix(low, "urn:ogc:def:crs:epsg:"):
		parts := strings.Split(n, ":")
		return "EPSG:" + parts[len(parts)-1]
	}
	return n
}

func openShapefile(path string) (*Collection, *CRS, error) {
	l, err := ReadShapefile(path)
	if err != nil {
		return nil, nil, err
	}
	c := &Collection{File: filepath.Base(path), Format: FormatShapefile, Features: l.Features, Z: l.Z}
	names := make([]string, 0, len(l.Fields))
	for _, f := range l.Fields {
		c.Fields = append(c.Fields, FieldInfo{Name: f.Name, Type: fmt.Sprintf("%c(%d,%d)", f.Type, f.Length, f.Decimals)})
		names = append(names, f.Name)
	}
	c.takeAttrs(names)
	if strings.TrimSpace(l.PRJ) == "" {
		return c, nil, nil
	}
	crs, err := ParseWKT(l.PRJ)
	if err != nil {
		return nil, nil, &FieldError{File: strings.TrimSuffix(c.File, filepath.Ext(c.File)) + ".prj", Err: err}
	}
	return c, crs, nil
}

func openGeoPackage(path string, opt OpenOptions) (*Collection, *CRS, error) {
	l, err := ReadGeoPackage(path, opt.Table)
	if err != nil {
		return nil, nil, err
	}
	c := &Collection{File: filepath.Base(path) + ":" + l.Table, Format: FormatGeoPackage, Features: l.Features, Z: l.Z}
	names := make([]string, 0, len(l.Fields))
	for _, f := range l.Fields {
		c.Fields = append(c.Fields, FieldInfo{Name: f.Name, Type: f.Type})
		names = append(names, f.Name)
	}
	c.takeAttrs(names)
	srs := l.SRS
	switch {
	case srs.ID == 0 || srs.ID == -1:
		return c, nil, nil
	case strings.EqualFold(srs.Organization, "EPSG"):
		if crs, err := EPSG(srs.OrgID); err == nil {
			return c, crs, nil
		}
	}
	crs, err := ParseWKT(srs.Definition)
	if err != nil {
		return nil, nil, &FieldError{File: c.File, Field: "srs_id", Err: fmt.Errorf("spatial reference %d (%s %d): %w", srs.ID, srs.Organization, srs.OrgID, err)}
	}
	return c, crs, nil
}

// settleCRS decides the layer's CRS: the one it declares, else the one the
// user gave, else CRS84 for GeoJSON (RFC 7946) or, for other formats whose
// coordinates all lie within lon/lat bounds, CRS84 with a note; anything
// else is an error asking for the crs key.
func settleCRS(c *Collection, declared *CRS, opt OpenOptions) error {
	switch {
	case declared != nil && opt.CRS != nil && !declared.Equal(opt.CRS):
		return &FieldError{File: c.File, Field: "crs", Err: fmt.Errorf("the layer declares %s but the config says %s; remove %s.crs or fix the layer", declared, opt.CRS, opt.Key)}
	case declared != nil:
		c.CRS = declared
	case opt.CRS != nil:
		c.CRS = opt.CRS
	case c.Format == FormatGeoJSON:
		// RFC 7946: a GeoJSON file without a crs member is WGS 84 lon/lat,
		// so the --crs fallback never applies to it.
		c.CRS = CRS84
	case opt.Fallback != nil:
		c.CRS = opt.Fallback
	case lonLatBounds(c.Features):
		c.CRS = CRS84
		c.Note = "no coordinate system declared; coordinates are within lon/lat bounds, read as WGS 84 lon/lat"
	default:
		return &FieldError{File: c.File, Field: "crs", Err: fmt.Errorf("the layer declares no coordinate system; set %s.crs (e.g. \"EPSG:2229\") or run with --crs", opt.Key)}
	}
	return nil
}

func lonLatBounds(fc *geojson.FeatureCollection) bool {
	for _, f := range fc.Features {
		if f.Geometry == nil {
			continue
		}
		b := f.Geometry.Bound()
		if b.Min[0] < -180 || b.Max[0] > 180 || b.Min[1] < -90 || b.Max[1] > 90 {
			return false
		}
	}
	return true
}

// LonLat returns the layer's features in WGS 84 lon/lat, the coordinates
// the network is built in; for a geographic layer that is the collection
// itself.
func (c *Collection) LonLat() *geojson.FeatureCollection {
	if c.CRS.Geographic() {
		return c.Features
	}
	out := geojson.NewFeatureCollection()
	out.Features = make([]*geojson.Feature, len(c.Features.Features))
	for i, f := range c.Features.Features {
		g := *f
		g.Geometry = TransformGeometry(f.Geometry, c.CRS.Inverse)
		out.Features[i] = &g
	}
	return out
}

// TransformGeometry applies fn to every coordinate of g; nil stays nil.
func TransformGeometry(g orb.Geometry, fn func(x, y float64) (float64, float64)) orb.Geometry {
	pt := func(p orb.Point) orb.Point {
		x, y := fn(p[0], p[1])
		return orb.Point{x, y}
	}
	line := func(ls orb.LineString) orb.LineString {
		out := make(orb.LineString, len(ls))
		for i, p := range ls {
			out[i] = pt(p)
		}
		return out
	}
	switch v := g.(type) {
	case nil:
		return nil
	case orb.Point:
		return pt(v)
	case orb.MultiPoint:
		out := make(orb.MultiPoint, len(v))
		for i, p := range v {
			out[i] = pt(p)
		}
		return out
	case orb.LineString:
		return line(v)
	case orb.MultiLineString:
		out := make(orb.MultiLineString, len(v))
		for i, ls := range v {
			out[i] = line(ls)
		}
		return out
	}
	return g // other types are reported by the readers
}

// PipesFromLayer reads pipes from a layer in any supported CRS. Lengths are
// geodesic for a geographic layer and planar in the layer's linear unit for
// a projected one (a grid length), unless the length field is mapped.
func PipesFromLayer(c *Collection, s PipeSchema, analysisYear int) ([]Pipe, []Problem, error) {
	pipes, probs, err := pipesFrom(c.lonLatLayer(), s, analysisYear)
	if err != nil || c.CRS.Geographic() {
		return pipes, probs, err
	}
	for i := range pipes {
		if pipes[i].Line == nil || pipes[i].LengthSource != LengthGeodesic {
			continue
		}
		pipes[i].Length = hydraulics.Length(gridLength(c.Features.Features[i].Geometry) * c.CRS.Unit)
		pipes[i].LengthSource = LengthGrid
	}
	return pipes, probs, nil
}

// gridLength is the planar length of a line or of all parts of a
// multi-line, in the layer's units.
func gridLength(g orb.Geometry) float64 {
	switch v := g.(type) {
	case orb.LineString:
		return planar.Length(v)
	case orb.MultiLineString:
		return planar.Length(v)
	}
	return math.NaN()
}

// EachPoint calls fn for every coordinate of g, in order: points, line
// vertices, polygon ring vertices and the members of collections.
func EachPoint(g orb.Geometry, fn func(orb.Point)) {
	switch x := g.(type) {
	case orb.Point:
		fn(x)
	case orb.MultiPoint:
		for _, p := range x {
			fn(p)
		}
	case orb.LineString:
		for _, p := range x {
			fn(p)
		}
	case orb.Ring:
		for _, p := range x {
			fn(p)
		}
	case orb.MultiLineString:
		for _, ls := range x {
			EachPoint(ls, fn)
		}
	case orb.Polygon:
		for _, r := range x {
			EachPoint(r, fn)
		}
	case orb.MultiPolygon:
		for _, p := range x {
			EachPoint(p, fn)
		}
	case orb.Collection:
		for _, m := range x {
			EachPoint(m, fn)
		}
	}
}
