package gis

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// The fixtures were made by GDAL 3.6.2 from the GeoJSON beside them (the
// commands are in shapefile_test.go and geopackage_test.go); each opens in
// the coordinate system GDAL wrote into it.
func TestOpenLayerFormatsAndCRS(t *testing.T) {
	cases := []struct {
		path     string
		format   string
		epsg     int
		features int
	}{
		{"testdata/shp/pipes_2229.shp", FormatShapefile, 2229, 4},
		{"testdata/shp/pipes_26911.shp", FormatShapefile, 26911, 4},
		{"testdata/gpkg/mains_2229.gpkg", FormatGeoPackage, 2229, -1},
		{"testdata/gpkg/mains_26911.gpkg", FormatGeoPackage, 26911, -1},
		{"testdata/gpkg/mains.geojson", FormatGeoJSON, 4326, -1},
	}
	for _, c := range cases {
		t.Run(filepath.Base(c.path), func(t *testing.T) {
			l, err := OpenLayer(c.path, OpenOptions{Key: "pipes"})
			if err != nil {
				t.Fatal(err)
			}
			if l.Format != c.format || l.CRS.EPSG != c.epsg {
				t.Errorf("format %s, CRS %s; want %s, EPSG:%d", l.Format, l.CRS, c.format, c.epsg)
			}
			if c.features >= 0 && len(l.Features.Features) != c.features {
				t.Errorf("%d features, want %d", len(l.Features.Features), c.features)
			}
		})
	}
}

// A projected layer goes back to the lon/lat it was made from: our inverse
// projection undoes GDAL's (PROJ's) forward one to 1e-8° (about 1 mm), and
// grid lengths in the layer's unit equal the geodesic lengths of the source
// within 0.05 % (the check; State Plane and UTM scale error is
// within about 1:2,500 at a UTM zone edge and 1:10,000 in State Plane).
func TestProjectedLayersMatchTheirSource(t *testing.T) {
	cases := []struct{ layer, source string }{
		{"testdata/shp/pipes_2229.shp", "testdata/shp/pipes.geojson"},
		{"testdata/shp/pipes_26911.shp", "testdata/shp/pipes.geojson"},
		{"testdata/gpkg/mains_2229.gpkg", "testdata/gpkg/mains.geojson"},
		{"testdata/gpkg/mains_26911.gpkg", "testdata/gpkg/mains.geojson"},
	}
	for _, c := range cases {
		t.Run(filepath.Base(c.layer), func(t *testing.T) {
			l, err := OpenLayer(c.layer, OpenOptions{Key: "pipes"})
			if err != nil {
				t.Fatal(err)
			}
			src, err := ReadCollection(c.source, "pipes")
			if err != nil {
				t.Fatal(err)
			}
			ll := l.LonLat()
			for i, f := range ll.Features {
				want := src.Features[i].Geometry
				if f.Geometry == nil || want == nil {
					continue
				}
				layerClose(t, f.Geometry, want, 1e-8)
				grid := gridLength(l.Features.Features[i].Geometry) * l.CRS.Unit
				geo := float64(geodesicOf(want))
				if math.Abs(grid-geo)/geo > 5e-4 {
					t.Errorf("feature %d: grid %.3f m, geodesic %.3f m", i+1, grid, geo)
				}
			}
		})
	}
}

// geodesicOf sums the geodesic length of every part of a line.
func geodesicOf(g orb.Geometry) hydraulics.Length {
	switch v := g.(type) {
	case orb.LineString:
		return GeodesicLength(v)
	case orb.MultiLineString:
		var sum hydraulics.Length
		for _, ls := range v {
			sum += GeodesicLength(ls)
		}
		return sum
	}
	return hydraulics.Length(math.NaN())
}

func layerClose(t *testing.T, got, want orb.Geometry, tol float64) {
	t.Helper()
	var a, b []orb.Point
	flat := func(g orb.Geometry) (out []orb.Point) {
		switch v := g.(type) {
		case orb.LineString:
			return v
		case orb.MultiLineString:
			for _, ls := range v {
				out = append(out, ls...)
			}
		case orb.Point:
			return []orb.Point{v}
		}
		return out
	}
	a, b = flat(got), flat(want)
	if len(a) != len(b) {
		t.Fatalf("%d vertices, want %d", len(a), len(b))
	}
	for k := range a {
		if math.Abs(a[k][0]-b[k][0]) > tol || math.Abs(a[k][1]-b[k][1]) > tol {
			t.Errorf("vertex %d: %v, want %v ± %g", k, a[k], b[k], tol)
		}
	}
}

// PipesFromLayer takes grid lengths from a projected layer, in metres.
func TestPipesFromLayerGridLength(t *testing.T) {
	l, err := OpenLayer("testdata/gpkg/mains_2229.gpkg", OpenOptions{Key: "pipes"})
	if err != nil {
		t.Fatal(err)
	}
	s := PipeSchema{ID: "pipe_id", Diameter: "diameter_in", Material: "material", InstallYear: "install_year"}
	pipes, _, err := PipesFromLayer(l, s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range pipes {
		if !p.Usable {
			continue
		}
		// 2229 is in US survey feet: 1 ftUS = 1200/3937 m exactly.
		want := gridLength(l.Features.Features[i].Geometry) * 1200 / 3937
		if p.LengthSource != LengthGrid || math.Abs(float64(p.Length)-want) > 1e-9 {
			t.Errorf("pipe %s: %s length %.6f m, want grid %.6f m", p.ID, p.LengthSource, float64(p.Length), want)
		}
	}
}

// The older GeoJSON crs member (GDAL writes it for a projected GeoJSON)
// sets the layer's CRS; RFC 7946 lon/lat is the default.
func TestGeoJSONCRSMember(t *testing.T) {
	shp, err := OpenLayer("testdata/shp/pipes_2229.shp", OpenOptions{Key: "pipes"})
	if err != nil {
		t.Fatal(err)
	}
	fc := geojson.NewFeatureCollection()
	fc.Features = shp.Features.Features
	fc.ExtraMembers = geojson.Properties{"crs": map[string]any{"type": "name",
		"properties": map[string]any{"name": "urn:ogc:def:crs:EPSG::2229"}}}
	path := filepath.Join(t.TempDir(), "pipes_2229.geojson")
	if err := WriteCollection(path, fc); err != nil {
		t.Fatal(err)
	}
	l, err := OpenLayer(path, OpenOptions{Key: "pipes"})
	if err != nil {
		t.Fatal(err)
	}
	if l.CRS.EPSG != 2229 {
		t.Fatalf("CRS %s, want EPSG:2229", l.CRS)
	}
	src, _ := ReadCollection("testdata/shp/pipes.geojson", "pipes")
	layerClose(t, l.LonLat().Features[0].Geometry, src.Features[0].Geometry, 1e-8)
}

// A shapefile without a .prj: projected coordinates need the user's word
// (a config crs key, or the --crs fallback); lon/lat coordinates are read
// as WGS 84 with a note; a config CRS that contradicts the file is refused.
func TestUnlabelledShapefile(t *testing.T) {
	dir := t.TempDir()
	for _, ext := range []string{".shp", ".shx", ".dbf", ".cpg"} {
		b, err := os.ReadFile("testdata/shp/pipes_2229" + ext)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "mains"+ext), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	path := filepath.Join(dir, "mains.shp")
	if _, err := OpenLayer(path, OpenOptions{Key: "pipes"}); err == nil || !strings.Contains(err.Error(), "pipes.crs") {
		t.Errorf("no .prj, projected coordinates: err %v, want one naming pipes.crs", err)
	}
	ca5, _ := EPSG(2229)
	utm, _ := EPSG(26911)
	for _, opt := range []OpenOptions{{Key: "pipes", CRS: ca5}, {Key: "pipes", Fallback: ca5}} {
		l, err := OpenLayer(path, opt)
		if err != nil || l.CRS.EPSG != 2229 {
			t.Errorf("%+v: %v, %v", opt, l, err)
		}
	}
	if _, err := OpenLayer("testdata/shp/pipes_2229.shp", OpenOptions{Key: "pipes", CRS: utm}); err == nil || !strings.Contains(err.Error(), "declares") {
		t.Errorf("declared 2229, config 26911: err %v, want a conflict", err)
	}
	if l, err := OpenLayer("testdata/shp/pipes_2229.shp", OpenOptions{Key: "pipes", Fallback: utm}); err != nil || l.CRS.EPSG != 2229 {
		t.Errorf("the declared CRS must win over the fallback: %v, %v", l, err)
	}

	ll := &Layer{Name: "mains", Columns: []Column{{Name: "id", Kind: String}},
		Rows: []Row{{Geometry: orb.LineString{{-98.4, 38.6}, {-98.399, 38.6}}, Values: []any{"M1"}}}}
	llPath := filepath.Join(dir, "lonlat.shp")
	if _, err := WriteShapefile(llPath, ll, ""); err != nil {
		t.Fatal(err)
	}
	l, err := OpenLayer(llPath, OpenOptions{Key: "pipes"})
	if err != nil || !l.CRS.Geographic() || l.Note == "" {
		t.Errorf("lon/lat shapefile without .prj: %v, %v; want WGS 84 with a note", l, err)
	}
	if _, err := OpenLayer(filepath.Join(dir, "mains.kml"), OpenOptions{Key: "pipes"}); err == nil || !strings.Contains(err.Error(), ".gpkg") {
		t.Errorf("unknown extension: %v", err)
	}
}

// Describe reports what ogrinfo -al shows of the shapefile fixture
// (shapefile_test.go): four records, one of them a null shape, and the
// declared fields in file order with their nulls.
func TestDescribeShapefile(t *testing.T) {
	l, err := OpenLayer("testdata/shp/pipes_2229.shp", OpenOptions{Key: "pipes"})
	if err != nil {
		t.Fatal(err)
	}
	s := Describe(l)
	if s.Features != 4 || !s.HasExtent {
		t.Fatalf("features %d, extent %v", s.Features, s.HasExtent)
	}
	geom := map[string]int{}
	for _, g := range s.Geometry {
		geom[g.Type] = g.Count
	}
	if geom["LineString"] != 2 || geom["MultiLineString"] != 1 || geom["null"] != 1 {
		t.Errorf("geometry counts %v", s.Geometry)
	}
	if s.Fields[0].Name != "PIPE_ID" || s.Fields[0].Nulls != 0 || s.Fields[1].Name != "ZONE" || s.Fields[1].Nulls != 1 {
		t.Errorf("fields %+v", s.Fields[:2])
	}
	if s.Fields[1].Samples[0] != "Ñorth Zone" {
		t.Errorf("first ZONE sample %q", s.Fields[1].Samples[0])
	}
}

// LineDiagnostics finds a tee drawn without a break from geometry alone.
func TestLineDiagnosticsTee(t *testing.T) {
	fc := geojson.NewFeatureCollection()
	for _, ls := range []orb.LineString{
		{{-98.400, 38.600}, {-98.398, 38.600}}, // main, no vertex at the tee
		{{-98.399, 38.600}, {-98.399, 38.601}}, // branch ending on the main
	} {
		fc.Append(geojson.NewFeature(ls))
	}
	_, topo, probs := LineDiagnostics(FromGeoJSON("tee.geojson", fc), 0.5*hydraulics.Foot)
	if topo.Splits != 1 || len(topo.Links) != 3 || len(probs) != 0 {
		t.Errorf("splits %d, links %d, problems %v; want 1, 3, none", topo.Splits, len(topo.Links), probs)
	}
}
