package gis

import (
	"bytes"
	"database/sql"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/paulmach/orb"
)

// GeoPackage fixtures in testdata/gpkg, made from the GeoJSON files beside
// them (an invented town's mains and hydrants, in lon/lat) with
// `ogr2ogr --version`: GDAL 3.6.2, released 2023/01/02 (PROJ 9.1.1):
//
//	ogr2ogr -f GPKG mains_2229.gpkg mains.geojson -t_srs EPSG:2229 -nln mains
//	ogr2ogr -f GPKG mains_26911.gpkg mains.geojson -t_srs EPSG:26911 -nln mains
//	ogr2ogr -f GPKG mains_z.gpkg mains_z.geojson -t_srs EPSG:26911 -nln mains_z
//	ogr2ogr -f GPKG two_tables.gpkg mains.geojson -t_srs EPSG:2229 -nln mains -nlt MULTILINESTRING
//	ogr2ogr -f GPKG -update two_tables.gpkg hydrants.geojson -t_srs EPSG:2229 -nln hydrants
//
// The expected coordinates and attributes below are hard-coded from what
// `ogrinfo -ro -al FILE` (GDAL 3.6.2) prints for each fixture (15
// significant digits), and the declared column types from the tables'
// CREATE TABLE statements (`sqlite3 FILE .schema`).

const gpkgDir = "testdata/gpkg"

// gpkgCoordTol is the tolerance on coordinates printed by ogrinfo with 15
// significant digits: 1e-6 in the layer's unit (ft or m).
const gpkgCoordTol = 1e-6

func gpkgClose(t *testing.T, got, want orb.Point, what string) {
	t.Helper()
	if math.Abs(got[0]-want[0]) > gpkgCoordTol || math.Abs(got[1]-want[1]) > gpkgCoordTol {
		t.Errorf("%s: got %v, want %v (±%g)", what, got, want, gpkgCoordTol)
	}
}

func gpkgLines(t *testing.T, g orb.Geometry) [][]orb.Point {
	t.Helper()
	switch x := g.(type) {
	case orb.LineString:
		return [][]orb.Point{x}
	case orb.MultiLineString:
		out := make([][]orb.Point, len(x))
		for i, ls := range x {
			out[i] = ls
		}
		return out
	}
	t.Fatalf("geometry %T is not a line", g)
	return nil
}

// gpkgMains2229 is the ogrinfo -al output for mains in EPSG:2229 (US ft).
var gpkgMains2229 = [][]orb.Point{
	{{6606728.74676144, 1849018.03239146}, {6607394.87735204, 1849091.80969778}, {6607970.09891692, 1849201.85512058}},
	{{6607970.09891692, 1849201.85512058}, {6607999.10832121, 1850038.91420993}},
	{{6607970.09891692, 1849201.85512058}, {6608908.77290921, 1849276.08136284}, {6609483.81405787, 1849495.33099494}, {6610059.13621101, 1849532.63215407}},
	{{6606728.74676144, 1849018.03239146}, {6606669.73970341, 1847962.5783565}},
	{{6610059.13621101, 1849532.63215407}, {6610087.91415497, 1850478.86878971}, {6610723.78127905, 1850516.27891188}},
}

// gpkgMains26911 is the ogrinfo -al output for mains in EPSG:26911 (m).
var gpkgMains26911 = [][]orb.Point{
	{{421459.838623119, 3770588.07640901}, {421663.02216452, 3770608.56564193}, {421838.614962598, 3770640.37689251}},
	{{421838.614962598, 3770640.37689251}, {421849.954617423, 3770895.33346434}},
	{{421838.614962598, 3770640.37689251}, {422124.840832768, 3770660.18846918}, {422300.704833438, 3770725.2734263}, {422476.110793784, 3770734.91970262}},
	{{421459.838623119, 3770588.07640901}, {421438.70696051, 3770266.66670801}},
	{{422476.110793784, 3770734.91970262}, {422487.706490335, 3771023.14192711}, {422681.560224416, 3771032.64032502}},
}

func TestGeoPackageReadGDALFixtures(t *testing.T) {
	mainsFields := []GeoPackageField{ // sqlite3 mains_2229.gpkg .schema
		{"pipe_id", "TEXT"}, {"diameter_in", "REAL"}, {"install_year", "MEDIUMINT"},
		{"material", "TEXT"}, {"lined", "BOOLEAN"}, {"note", "TEXT"},
	}
	cases := []struct {
		name, file, table string
		geomType          string
		srsID             int
		srsName           string
		lines             [][]orb.Point
		multi             bool
	}{
		{"state plane ftUS", "mains_2229.gpkg", "", "LINESTRING", 2229, "NAD83 / California zone 5 (ftUS)", gpkgMains2229, false},
		{"UTM metres", "mains_26911.gpkg", "mains", "LINESTRING", 26911, "NAD83 / UTM zone 11N", gpkgMains26911, false},
		{"multilines of two tables", "two_tables.gpkg", "mains", "MULTILINESTRING", 2229, "NAD83 / California zone 5 (ftUS)", gpkgMains2229, true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ReadGeoPackage(filepath.Join(gpkgDir, tc.file), tc.table)
			if err != nil {
				t.Fatal(err)
			}
			if l.Table != "mains" || l.GeometryType != tc.geomType {
				t.Errorf("table %q type %q, want mains %s", l.Table, l.GeometryType, tc.geomType)
			}
			// gpkg_spatial_ref_sys row as ogr2ogr wrote it: organization EPSG and the code.
			if l.SRS.ID != tc.srsID || l.SRS.Organization != "EPSG" || l.SRS.OrgID != tc.srsID || l.SRS.Name != tc.srsName {
				t.Errorf("SRS %+v, want EPSG %d %q", l.SRS, tc.srsID, tc.srsName)
			}
			if want := fmt.Sprintf(`AUTHORITY["EPSG","%d"]]`, tc.srsID); !strings.HasPrefix(l.SRS.Definition, "PROJCS[") || !strings.HasSuffix(l.SRS.Definition, want) {
				t.Errorf("SRS definition %q is not WKT1 ending in %s", l.SRS.Definition, want)
			}
			if !reflect.DeepEqual(l.Fields, mainsFields) {
				t.Errorf("fields %v, want %v", l.Fields, mainsFields)
			}
			if l.Z != nil {
				t.Errorf("Z = %v for a 2-D table", l.Z)
			}
			if len(l.Features.Features) != len(tc.lines) {
				t.Fatalf("%d features, want %d (ogrinfo Feature Count)", len(l.Features.Features), len(tc.lines))
			}
			for i, f := range l.Features.Features {
				if _, isMulti := f.Geometry.(orb.MultiLineString); isMulti != tc.multi {
					t.Errorf("feature %d is %T", i+1, f.Geometry)
				}
				got := gpkgLines(t, f.Geometry)
				if len(got) != 1 || len(got[0]) != len(tc.lines[i]) {
					t.Fatalf("feature %d: %v, want %v", i+1, got, tc.lines[i])
				}
				for k, p := range got[0] {
					gpkgClose(t, p, tc.lines[i][k], fmt.Sprintf("feature %d vertex %d", i+1, k+1))
				}
				if f.ID != int64(i+1) {
					t.Errorf("feature %d: ID %v, want fid %d", i+1, f.ID, i+1)
				}
			}
			// Attributes, ogrinfo -al: OGRFeature(mains):1 and :2.
			wantProps := []map[string]any{
				{"pipe_id": "CF-101", "diameter_in": 8.0, "install_year": int64(1962), "material": "CI", "lined": false, "note": "Quarry Road"},
				{"pipe_id": "CF-102", "diameter_in": 6.0, "install_year": int64(1978), "material": "DI", "lined": true, "note": nil},
			}
			for i, want := range wantProps {
				if got := map[string]any(l.Features.Features[i].Properties); !reflect.DeepEqual(got, want) {
					t.Errorf("feature %d properties %v, want %v", i+1, got, want)
				}
			}
		})
	}
}

func TestGeoPackageReadZ(t *testing.T) {
	l, err := ReadGeoPackage(filepath.Join(gpkgDir, "mains_z.gpkg"), "")
	if err != nil {
		t.Fatal(err)
	}
	// ogrinfo -ro -al mains_z.gpkg: "Geometry: 3D Line String" and
	// LINESTRING Z (421459.838623119 3770588.07640901 221.5,421663.02216452 3770608.56564193 219.25,421838.614962598 3770640.37689251 218)
	// LINESTRING Z (421838.614962598 3770640.37689251 218,421849.954617423 3770895.33346434 225.75)
	wantZ := [][]float64{{221.5, 219.25, 218}, {218, 225.75}}
	if !reflect.DeepEqual(l.Z, wantZ) {
		t.Errorf("Z %v, want %v", l.Z, wantZ)
	}
	if l.GeometryType != "LINESTRING" || l.SRS.ID != 26911 {
		t.Errorf("type %q srs %d, want LINESTRING 26911", l.GeometryType, l.SRS.ID)
	}
	for i, f := range l.Features.Features {
		got := gpkgLines(t, f.Geometry)[0]
		for k, p := range got {
			gpkgClose(t, p, gpkgMains26911[i][k], fmt.Sprintf("feature %d vertex %d", i+1, k+1))
		}
	}
}

func TestGeoPackageTwoTables(t *testing.T) {
	path := filepath.Join(gpkgDir, "two_tables.gpkg")
	tables, err := GeoPackageTables(path)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"hydrants", "mains"}; !reflect.DeepEqual(tables, want) {
		t.Errorf("tables %v, want %v", tables, want)
	}
	_, err = ReadGeoPackage(path, "")
	if err == nil || !strings.Contains(err.Error(), `"hydrants", "mains"`) || !strings.Contains(err.Error(), "table key") {
		t.Errorf("no table chosen: error %v, want one listing both tables and the table key", err)
	}
	l, err := ReadGeoPackage(path, "HYDRANTS") // SQLite names ignore case
	if err != nil {
		t.Fatal(err)
	}
	// ogrinfo -ro -al two_tables.gpkg hydrants: POINT (6607394.87735204 1849091.80969778) ...
	want := []struct {
		id   string
		flow any
		at   orb.Point
	}{
		{"H-1", int64(1250), orb.Point{6607394.87735204, 1849091.80969778}},
		{"H-2", int64(900), orb.Point{6609483.81405787, 1849495.33099494}},
		{"H-3", nil, orb.Point{6610087.91415497, 1850478.86878971}},
	}
	if l.Table != "hydrants" || l.GeometryType != "POINT" || len(l.Features.Features) != len(want) {
		t.Fatalf("table %q type %q with %d features, want hydrants POINT 3", l.Table, l.GeometryType, len(l.Features.Features))
	}
	for i, w := range want {
		f := l.Features.Features[i]
		if f.Properties["hydrant_id"] != w.id || f.Properties["flow_gpm"] != w.flow {
			t.Errorf("hydrant %d: %v, want %s %v", i+1, f.Properties, w.id, w.flow)
		}
		p, ok := f.Geometry.(orb.Point)
		if !ok {
			t.Fatalf("hydrant %d geometry %T", i+1, f.Geometry)
		}
		gpkgClose(t, p, w.at, "hydrant "+w.id)
	}
}

// PROJ's cs2cs on the fixture's source lon/lat gives what the GeoPackage
// holds, within 0.01 ft (issue 3: coordinates equal to PROJ's).
func TestGeoPackageLiveCS2CS(t *testing.T) {
	cs2cs := requireTool(t, "cs2cs")
	src, err := ReadCollection(filepath.Join(gpkgDir, "mains.geojson"), "")
	if err != nil {
		t.Fatal(err)
	}
	l, err := ReadGeoPackage(filepath.Join(gpkgDir, "mains_2229.gpkg"), "mains")
	if err != nil {
		t.Fatal(err)
	}
	var in strings.Builder
	var got []orb.Point
	for i, f := range src.Features {
		ls := f.Geometry.(orb.LineString)
		for k, p := range ls {
			fmt.Fprintf(&in, "%.10f %.10f\n", p[1], p[0]) // EPSG:4326 axis order: lat lon
			got = append(got, gpkgLines(t, l.Features.Features[i].Geometry)[0][k])
		}
	}
	cmd := exec.Command(cs2cs, "-f", "%.6f", "EPSG:4326", "EPSG:2229")
	cmd.Stdin = strings.NewReader(in.String())
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("cs2cs: %v", err)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != len(got) {
		t.Fatalf("cs2cs gave %d lines for %d points", len(lines), len(got))
	}
	for i, line := range lines {
		f := strings.Fields(line)
		x, _ := strconv.ParseFloat(f[0], 64)
		y, _ := strconv.ParseFloat(f[1], 64)
		if math.Abs(got[i][0]-x) > 0.01 || math.Abs(got[i][1]-y) > 0.01 {
			t.Errorf("point %d: GeoPackage %v, cs2cs %v %v (±0.01 ft)", i+1, got[i], x, y)
		}
	}
}

// gpkgSRS2229 is the EPSG:2229 row of the GDAL-made fixture.
func gpkgSRS2229(t testing.TB) SpatialRef {
	t.Helper()
	l, err := ReadGeoPackage(filepath.Join(gpkgDir, "mains_2229.gpkg"), "")
	if err != nil {
		t.Fatal(err)
	}
	return l.SRS
}

// gpkgTestLayers is a pipes layer (lines, one nil geometry, one NaN value),
// a layer mixing LineStrings and MultiLineStrings, and a point layer, in
// State Plane feet.
func gpkgTestLayers() []*Layer {
	pipes := &Layer{
		Name: "pipes",
		Columns: []Column{
			{Name: "pipe_id", Kind: String}, {Name: "diameter_in", Kind: Real, Decimals: 2},
			{Name: "install_year", Kind: Integer}, {Name: "score", Kind: Real, Decimals: -1},
			{Name: "closed", Kind: String}, {Name: "reason", Kind: String},
		},
		Rows: []Row{
			{Geometry: orb.LineString{{6606728.74676144, 1849018.03239146}, {6607394.87735204, 1849091.80969778}},
				Values: []any{"CF-101", 8.0, 1962, 0.8125, false, "head loss above criterion"}},
			{Geometry: nil, Values: []any{"CF-102", 6.004, int64(1978), math.NaN(), true, nil}},
			{Geometry: orb.LineString{{6607970.09891692, 1849201.85512058}, {6608908.77290921, 1849276.08136284}, {6609483.81405787, 1849495.33099494}},
				Values: []any{"Ünïcode \"quoted\"", 12, 2004.4, math.Inf(1), nil, "line\nbreak"}},
		},
	}
	mixed := &Layer{
		Name:    "services",
		Columns: []Column{{Name: "n", Kind: Integer}},
		Rows: []Row{
			{Geometry: orb.LineString{{10, 20}, {30, 40}}, Values: []any{1}},
			{Geometry: orb.MultiLineString{{{0, 0}, {1, 1}}, {{2, 2}, {3, 5}}}, Values: []any{2}},
		},
	}
	nodes := &Layer{
		Name:    "nodes",
		Columns: []Column{{Name: "node_id", Kind: String}, {Name: "pressure_psi", Kind: Real, Decimals: 1}},
		Rows: []Row{
			{Geometry: orb.Point{6607394.87735204, 1849091.80969778}, Values: []any{"J1", 61.26}},
			{Geometry: orb.Point{math.NaN(), 1}, Values: []any{"J2", 55.0}},
		},
	}
	return []*Layer{pipes, mixed, nodes}
}

func TestGeoPackageRoundTrip(t *testing.T) {
	srs := gpkgSRS2229(t)
	path := filepath.Join(t.TempDir(), "out.gpkg")
	layers := gpkgTestLayers()
	if err := WriteGeoPackage(path, srs, layers...); err != nil {
		t.Fatal(err)
	}
	tables, err := GeoPackageTables(path)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"nodes", "pipes", "services"}; !reflect.DeepEqual(tables, want) {
		t.Errorf("tables %v, want %v", tables, want)
	}
	cases := []struct {
		table    string
		geomType string
		fields   []GeoPackageField
		geoms    []orb.Geometry
		props    []map[string]any
	}{
		{"pipes", "LINESTRING",
			[]GeoPackageField{{"pipe_id", "TEXT"}, {"diameter_in", "REAL"}, {"install_year", "INTEGER"}, {"score", "REAL"}, {"closed", "TEXT"}, {"reason", "TEXT"}},
			[]orb.Geometry{layers[0].Rows[0].Geometry, nil, layers[0].Rows[2].Geometry},
			// Real rounded to Decimals as the CSV prints it; NaN/Inf → NULL; bool in TEXT → "false".
			[]map[string]any{
				{"pipe_id": "CF-101", "diameter_in": 8.0, "install_year": int64(1962), "score": 0.8125, "closed": "false", "reason": "head loss above criterion"},
				{"pipe_id": "CF-102", "diameter_in": 6.0, "install_year": int64(1978), "score": nil, "closed": "true", "reason": nil},
				{"pipe_id": "Ünïcode \"quoted\"", "diameter_in": 12.0, "install_year": int64(2004), "score": nil, "closed": nil, "reason": "line\nbreak"},
			}},
		{"services", "MULTILINESTRING", []GeoPackageField{{"n", "INTEGER"}},
			[]orb.Geometry{orb.MultiLineString{{{10, 20}, {30, 40}}}, layers[1].Rows[1].Geometry},
			[]map[string]any{{"n": int64(1)}, {"n": int64(2)}}},
		{"nodes", "POINT", []GeoPackageField{{"node_id", "TEXT"}, {"pressure_psi", "REAL"}},
			[]orb.Geometry{layers[2].Rows[0].Geometry, nil},
			[]map[string]any{{"node_id": "J1", "pressure_psi": 61.3}, {"node_id": "J2", "pressure_psi": 55.0}}},
	}
	for _, tc := range cases {
		t.Run(tc.table, func(t *testing.T) {
			l, err := ReadGeoPackage(path, tc.table)
			if err != nil {
				t.Fatal(err)
			}
			if l.SRS != srs {
				t.Errorf("SRS %+v, want %+v", l.SRS, srs)
			}
			if l.GeometryType != tc.geomType || !reflect.DeepEqual(l.Fields, tc.fields) || l.Z != nil {
				t.Errorf("type %q fields %v Z %v, want %q %v nil", l.GeometryType, l.Fields, l.Z, tc.geomType, tc.fields)
			}
			if len(l.Features.Features) != len(tc.geoms) {
				t.Fatalf("%d features, want %d", len(l.Features.Features), len(tc.geoms))
			}
			for i, f := range l.Features.Features {
				if !reflect.DeepEqual(f.Geometry, tc.geoms[i]) {
					t.Errorf("feature %d geometry %v, want %v", i+1, f.Geometry, tc.geoms[i])
				}
				if got := map[string]any(f.Properties); !reflect.DeepEqual(got, tc.props[i]) {
					t.Errorf("feature %d properties %v, want %v", i+1, got, tc.props[i])
				}
			}
		})
	}
}

func TestGeoPackageLayout(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.gpkg")
	layers := gpkgTestLayers()
	if err := WriteGeoPackage(path, gpkgSRS2229(t), layers...); err != nil {
		t.Fatal(err)
	}
	db, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	// OGC 12-128 Req 2: application_id 'GPKG' (0x47504B47) and user_version 10200.
	var appID, userVersion int64
	if err := db.QueryRow("PRAGMA application_id").Scan(&appID); err != nil {
		t.Fatal(err)
	}
	if err := db.QueryRow("PRAGMA user_version").Scan(&userVersion); err != nil {
		t.Fatal(err)
	}
	if appID != 0x47504B47 || userVersion != 10200 {
		t.Errorf("application_id %#x user_version %d, want 0x47504b47 10200", appID, userVersion)
	}
	// Req 11: rows −1, 0 and 4326 besides ours.
	var ids []int
	rows, err := db.Query("SELECT srs_id FROM gpkg_spatial_ref_sys ORDER BY srs_id")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var id int
		rows.Scan(&id)
		ids = append(ids, id)
	}
	rows.Close()
	if want := []int{-1, 0, 2229, 4326}; !reflect.DeepEqual(ids, want) {
		t.Errorf("srs ids %v, want %v", ids, want)
	}
	// gpkg_contents extent = the bounds of the written geometries (computed here by hand).
	var minX, minY, maxX, maxY float64
	if err := db.QueryRow("SELECT min_x, min_y, max_x, max_y FROM gpkg_contents WHERE table_name = 'pipes'").Scan(&minX, &minY, &maxX, &maxY); err != nil {
		t.Fatal(err)
	}
	if want := [4]float64{6606728.74676144, 1849018.03239146, 6609483.81405787, 1849495.33099494}; [4]float64{minX, minY, maxX, maxY} != want {
		t.Errorf("pipes extent %v, want %v", [4]float64{minX, minY, maxX, maxY}, want)
	}
	// The geometry header of row 1: 'G','P',0, flags 0x03, srs_id 2229 LE, envelope minx,maxx,miny,maxy,
	// then ISO WKB LineString (type 2) LE (OGC 12-128 §2.1.3; LIBRARIES.md §7).
	var blob []byte
	if err := db.QueryRow("SELECT geom FROM pipes WHERE fid = 1").Scan(&blob); err != nil {
		t.Fatal(err)
	}
	want := []byte{'G', 'P', 0, 0x03, 0xB5, 0x08, 0, 0}
	for _, v := range []float64{6606728.74676144, 6607394.87735204, 1849018.03239146, 1849091.80969778} {
		want = binary.LittleEndian.AppendUint64(want, math.Float64bits(v))
	}
	want = append(want, 1, 2, 0, 0, 0, 2, 0, 0, 0)
	if !bytes.HasPrefix(blob, want) || len(blob) != len(want)+32 {
		t.Errorf("blob % x\nwant prefix % x and %d bytes", blob, want, len(want)+32)
	}
	// R-tree rows: one per non-NULL geometry, with its envelope.
	var n int
	if err := db.QueryRow("SELECT count(*) FROM rtree_pipes_geom").Scan(&n); err != nil {
		t.Fatal(err)
	}
	if n != 2 {
		t.Errorf("rtree_pipes_geom has %d rows, want 2 (row 2 has no geometry)", n)
	}
	var trig int
	if err := db.QueryRow("SELECT count(*) FROM sqlite_master WHERE type = 'trigger' AND tbl_name = 'pipes' AND name LIKE 'rtree_pipes_geom_%'").Scan(&trig); err != nil {
		t.Fatal(err)
	}
	if trig != 6 { // Annex F.3: insert, update1–4, delete
		t.Errorf("%d R-tree triggers, want 6", trig)
	}
}

// gpkgOgrinfo runs ogrinfo and returns its output.
func gpkgOgrinfo(t *testing.T, args ...string) string {
	t.Helper()
	ogrinfo := requireTool(t, "ogrinfo")
	out, err := exec.Command(ogrinfo, args...).CombinedOutput()
	if err != nil {
		t.Fatalf("ogrinfo %v: %v\n%s", args, err, out)
	}
	return string(out)
}

func TestGeoPackageLiveOgrinfo(t *testing.T) {
	requireTool(t, "ogrinfo")
	path := filepath.Join(t.TempDir(), "out.gpkg")
	if err := WriteGeoPackage(path, gpkgSRS2229(t), gpkgTestLayers()...); err != nil {
		t.Fatal(err)
	}
	out := gpkgOgrinfo(t, "-ro", "-al", "-so", path)
	// What ogrinfo -al -so (GDAL 3.6.2) prints for each layer; INTEGER columns read as Integer64.
	for _, want := range []string{
		"Layer name: pipes\nGeometry: Line String\nFeature Count: 3\n",
		"Layer name: services\nGeometry: Multi Line String\nFeature Count: 2\n",
		"Layer name: nodes\nGeometry: Point\nFeature Count: 2\n",
		`PROJCRS["NAD83 / California zone 5 (ftUS)"`,
		`ID["EPSG",2229]]`,
		"pipe_id: String (0.0)\ndiameter_in: Real (0.0)\ninstall_year: Integer64 (0.0)\nscore: Real (0.0)\nclosed: String (0.0)\nreason: String (0.0)\n",
		"n: Integer64 (0.0)\n",
		"node_id: String (0.0)\npressure_psi: Real (0.0)\n",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("ogrinfo -al -so output lacks %q:\n%s", want, out)
		}
	}
	if c := strings.Count(out, `ID["EPSG",2229]]`); c != 3 {
		t.Errorf("%d layers with EPSG:2229, want 3", c)
	}
}

func TestGeoPackageLiveSpatialFilter(t *testing.T) {
	requireTool(t, "ogrinfo")
	// A 10 × 10 grid of 100-ft east–west mains, 500 ft apart.
	l := &Layer{Name: "grid", Columns: []Column{{Name: "k", Kind: Integer}}}
	for i := range 10 {
		for j := range 10 {
			x, y := 6600000+500*float64(i), 1840000+500*float64(j)
			l.Rows = append(l.Rows, Row{Geometry: orb.LineString{{x, y}, {x + 100, y}}, Values: []any{10*i + j}})
		}
	}
	path := filepath.Join(t.TempDir(), "grid.gpkg")
	if err := WriteGeoPackage(path, gpkgSRS2229(t), l); err != nil {
		t.Fatal(err)
	}
	// GDAL sees the R-tree (its SQL function HasSpatialIndex).
	if out := gpkgOgrinfo(t, "-ro", "-sql", "SELECT HasSpatialIndex('grid','geom')", path); !strings.Contains(out, "HasSpatialIndex (Integer) = 1") {
		t.Errorf("HasSpatialIndex is not 1:\n%s", out)
	}
	// Window 6600950..6602050 × 1840950..1842050 holds columns i = 2, 3, 4 (x 6601000..6602100
	// start inside; i=4 starts at 6602000) and rows j = 2, 3, 4: 9 mains, counted by hand.
	out := gpkgOgrinfo(t, "-ro", "-al", "-spat", "6600950", "1840950", "6602050", "1842050", path)
	want := map[int]bool{}
	for _, i := range []int{2, 3, 4} {
		for _, j := range []int{2, 3, 4} {
			want[10*i+j] = true
		}
	}
	got := map[int]bool{}
	for _, line := range strings.Split(out, "\n") {
		if v, ok := strings.CutPrefix(strings.TrimSpace(line), "k (Integer64) = "); ok {
			k, _ := strconv.Atoi(v)
			got[k] = true
		}
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("-spat returned k %v, want %v", got, want)
	}
}

// gpkgValidator finds GDAL's validate_gpkg.py sample (Debian python3-gdal).
func gpkgValidator(t *testing.T) (python, script string) {
	t.Helper()
	candidates := []string{
		"/usr/lib/python3/dist-packages/osgeo_utils/samples/validate_gpkg.py",
		"/usr/share/doc/python3-gdal/examples/validate_gpkg.py",
	}
	if out, err := exec.Command("dpkg", "-L", "python3-gdal").Output(); err == nil {
		for _, line := range strings.Split(string(out), "\n") {
			if strings.HasSuffix(line, "/validate_gpkg.py") {
				candidates = append([]string{line}, candidates...)
			}
		}
	}
	for _, c := range candidates {
		if _, err := os.Stat(c); err == nil {
			script = c
			break
		}
	}
	python = "/usr/bin/python3" // the system Python, which has the osgeo module
	if _, err := os.Stat(python); err != nil {
		python = requireTool(t, "python3")
	}
	if script == "" {
		if os.Getenv("HEADROOM_REQUIRE_GDAL") == "1" {
			t.Fatal("validate_gpkg.py not found and HEADROOM_REQUIRE_GDAL=1; apt-get install python3-gdal")
		}
		t.Skip("validate_gpkg.py not found; apt-get install python3-gdal to run this test")
	}
	return python, script
}

func TestGeoPackageLiveValidator(t *testing.T) {
	python, script := gpkgValidator(t)
	path := filepath.Join(t.TempDir(), "out.gpkg")
	if err := WriteGeoPackage(path, gpkgSRS2229(t), gpkgTestLayers()...); err != nil {
		t.Fatal(err)
	}
	// GDAL's validator: exit 0 and no output for a valid GeoPackage.
	out, err := exec.Command(python, script, path).CombinedOutput()
	if err != nil || len(bytes.TrimSpace(out)) != 0 {
		t.Errorf("validate_gpkg.py: %v\n%s", err, out)
	}
}

func TestGeoPackageDeterministic(t *testing.T) {
	dir := t.TempDir()
	srs := gpkgSRS2229(t)
	var files [2][]byte
	for i := range files {
		path := filepath.Join(dir, fmt.Sprintf("out%d.gpkg", i))
		if err := WriteGeoPackage(path, srs, gpkgTestLayers()...); err != nil {
			t.Fatal(err)
		}
		var err error
		if files[i], err = os.ReadFile(path); err != nil {
			t.Fatal(err)
		}
	}
	if !bytes.Equal(files[0], files[1]) {
		t.Errorf("two writes of the same layers differ (%d and %d bytes)", len(files[0]), len(files[1]))
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 2 {
		t.Errorf("%d files left in the folder, want 2 (no temporary files)", len(ents))
	}
}

// gpkgCopy copies a fixture into a temporary folder and runs sqlText on it.
func gpkgCopy(t *testing.T, fixture, sqlText string, args ...any) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(gpkgDir, fixture))
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), fixture)
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	if sqlText != "" {
		db, err := sql.Open("sqlite", path)
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		// GDAL's R-tree triggers call ST_* functions plain SQLite lacks.
		for _, n := range []string{"update1", "update2", "update3", "update4"} {
			if _, err := db.Exec(`DROP TRIGGER IF EXISTS "rtree_mains_geom_` + n + `"`); err != nil {
				t.Fatal(err)
			}
		}
		if _, err := db.Exec(sqlText, args...); err != nil {
			t.Fatal(err)
		}
	}
	return path
}

// gpkgLineBlob is a GeoPackage blob with no envelope holding a WKB
// LineString whose count field says n points, followed by pad bytes.
func gpkgLineBlob(n uint32, pad int) []byte {
	b := []byte{'G', 'P', 0, 0x01, 0xB5, 0x08, 0, 0, 1}
	b = binary.LittleEndian.AppendUint32(b, 2)
	b = binary.LittleEndian.AppendUint32(b, n)
	return append(b, make([]byte, pad)...)
}

func TestGeoPackageBadFiles(t *testing.T) {
	dir := t.TempDir()
	text := filepath.Join(dir, "mains.gpkg")
	os.WriteFile(text, []byte("pipe_id,diameter_in\nCF-1,8\n"), 0o644)
	empty := filepath.Join(dir, "empty.gpkg")
	os.WriteFile(empty, nil, 0o644)
	plain := filepath.Join(dir, "plain.gpkg")
	db, err := sql.Open("sqlite", plain)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec("CREATE TABLE mains (id INTEGER PRIMARY KEY, geom BLOB)"); err != nil {
		t.Fatal(err)
	}
	db.Close()
	cases := []struct {
		name, path, table string
		feature           int    // want FieldError.Feature
		want              string // in the message
	}{
		{"not SQLite", text, "", 0, "not a GeoPackage: the file is not an SQLite database"},
		{"empty file", empty, "", 0, "not an SQLite database"},
		{"missing file", filepath.Join(dir, "nope.gpkg"), "", 0, "no such file"},
		{"SQLite without gpkg tables", plain, "", 0, "without the gpkg_contents"},
		{"table not found", filepath.Join(gpkgDir, "two_tables.gpkg"), "valves", 0, `feature table "valves" not found; the GeoPackage has "hydrants", "mains"`},
		{"truncated blob", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = substr(geom, 1, 60) WHERE fid = 3"), "", 3, "corrupt geometry blob: WKB says 4 points but only 11 bytes are left"}, // 60 = 8 header + 32 envelope + 9 WKB head + 11,
		{"short header", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = X'475000' WHERE fid = 2"), "", 2, "shorter than the 8-byte header"},
		{"wrong magic", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = CAST(X'5750' || substr(geom, 3) AS BLOB) WHERE fid = 4"), "", 4, "not the magic 'GP'"},
		{"huge point count", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = ? WHERE fid = 5", gpkgLineBlob(0xFFFFFFF0, 32)), "", 5, "WKB says 4294967280 points but only 32 bytes are left"},
		{"curve type", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = X'47500001B508000001080000000000000000' WHERE fid = 1"), "", 1, "unsupported WKB geometry type 8"},
		{"text geometry", gpkgCopy(t, "mains_2229.gpkg", "UPDATE mains SET geom = 'LINESTRING (0 0, 1 1)' WHERE fid = 1"), "", 1, "not a GeoPackage geometry blob"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ReadGeoPackage(tc.path, tc.table)
			if err == nil {
				t.Fatalf("no error; layer %+v", l)
			}
			var fe *FieldError
			if !errors.As(err, &fe) {
				t.Fatalf("error %T %v is not a *FieldError", err, err)
			}
			if fe.File != filepath.Base(tc.path) || fe.Feature != tc.feature {
				t.Errorf("File %q Feature %d, want %q %d", fe.File, fe.Feature, filepath.Base(tc.path), tc.feature)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q lacks %q", err, tc.want)
			}
		})
	}
}

func TestGeoPackageWriteErrors(t *testing.T) {
	srs := gpkgSRS2229(t)
	line := orb.LineString{{0, 0}, {1, 1}}
	one := func(name string, cols []Column, rows ...Row) []*Layer {
		return []*Layer{{Name: name, Columns: cols, Rows: rows}}
	}
	str := []Column{{Name: "id", Kind: String}}
	cases := []struct {
		name    string
		srs     SpatialRef
		layers  []*Layer
		feature int
		want    string
	}{
		{"no layers", srs, nil, 0, "no layers"},
		{"reserved name", srs, one("gpkg_pipes", str), 0, "reserve"},
		{"duplicate layers", srs, append(one("pipes", str), one("PIPES", str)...), 0, `two layers named "PIPES"`},
		{"fid column", srs, one("pipes", []Column{{Name: "FID", Kind: Integer}}), 0, `column name "FID" is taken`},
		{"value count", srs, one("pipes", str, Row{Geometry: line, Values: []any{"a", "b"}}), 1, "2 values for 1 columns"},
		{"string in integer", srs, one("pipes", []Column{{Name: "n", Kind: Integer}}, Row{Geometry: line, Values: []any{1}}, Row{Geometry: line, Values: []any{"x"}}), 2, "string value x in an integer column"},
		{"unsupported geometry", srs, one("pipes", str, Row{Geometry: orb.Bound{}, Values: []any{"a"}}), 1, "unsupported geometry type orb.Bound"},
		{"srs without definition", SpatialRef{ID: 2229, Name: "x", Organization: "EPSG", OrgID: 2229}, one("pipes", str), 0, "needs a name, an organization and a definition"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			path := filepath.Join(dir, "out.gpkg")
			err := WriteGeoPackage(path, tc.srs, tc.layers...)
			if err == nil {
				t.Fatal("no error")
			}
			var fe *FieldError
			if !errors.As(err, &fe) || fe.File != "out.gpkg" || fe.Feature != tc.feature {
				t.Errorf("error %v: want a *FieldError for out.gpkg feature %d", err, tc.feature)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q lacks %q", err, tc.want)
			}
			if ents, _ := os.ReadDir(dir); len(ents) != 0 {
				t.Errorf("%d files left after a failed write", len(ents))
			}
		})
	}
}

// gpkgWKBCase is a hand-assembled geometry blob (layouts from OGC 12-128
// §2.1.3 and OGC 06-103r4 §8.2; EWKB flags as PostGIS defines them).
type gpkgWKBCase struct {
	name string
	blob []byte
	geom orb.Geometry
	z    []float64
	err  string
}

func gpkgBE(vals ...any) []byte {
	var b []byte
	for _, v := range vals {
		switch x := v.(type) {
		case byte:
			b = append(b, x)
		case uint32:
			b = binary.BigEndian.AppendUint32(b, x)
		case float64:
			b = binary.BigEndian.AppendUint64(b, math.Float64bits(x))
		}
	}
	return b
}

func gpkgLE(vals ...any) []byte {
	var b []byte
	for _, v := range vals {
		switch x := v.(type) {
		case byte:
			b = append(b, x)
		case uint32:
			b = binary.LittleEndian.AppendUint32(b, x)
		case float64:
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
		}
	}
	return b
}

func TestGeoPackageDecodeGeometry(t *testing.T) {
	hdr := []byte{'G', 'P', 0, 0x01, 0, 0, 0, 0} // no envelope
	cat := func(parts ...[]byte) []byte { return bytes.Join(parts, nil) }
	cases := []gpkgWKBCase{
		{name: "big-endian point", blob: cat(hdr, gpkgBE(byte(0), uint32(1), 1.5, -2.5)), geom: orb.Point{1.5, -2.5}},
		{name: "ISO LineString Z (1002)", blob: cat(hdr, gpkgLE(byte(1), uint32(1002), uint32(2), 1.0, 2.0, 3.0, 4.0, 5.0, 6.0)),
			geom: orb.LineString{{1, 2}, {4, 5}}, z: []float64{3, 6}},
		{name: "EWKB LineString Z with SRID", blob: cat(hdr, gpkgLE(byte(1), uint32(0xA0000002), uint32(2229), uint32(1), 7.0, 8.0, 9.0)),
			geom: orb.LineString{{7, 8}}, z: []float64{9}},
		{name: "ISO LineString ZM (3002), M dropped", blob: cat(hdr, gpkgLE(byte(1), uint32(3002), uint32(1), 1.0, 2.0, 3.0, 4.0)),
			geom: orb.LineString{{1, 2}}, z: []float64{3}},
		{name: "ISO LineString M (2002)", blob: cat(hdr, gpkgLE(byte(1), uint32(2002), uint32(1), 1.0, 2.0, 9.0)), geom: orb.LineString{{1, 2}}},
		{name: "MultiLineString Z, XYZ envelope", blob: cat([]byte{'G', 'P', 0, 0x05, 0, 0, 0, 0}, make([]byte, 48),
			gpkgLE(byte(1), uint32(1005), uint32(2), byte(1), uint32(1002), uint32(1), 1.0, 2.0, 3.0, byte(0)), gpkgBE(uint32(1002), uint32(1), 4.0, 5.0, 6.0)),
			geom: orb.MultiLineString{{{1, 2}}, {{4, 5}}}, z: []float64{3, 6}},
		{name: "polygon", blob: cat(hdr, gpkgLE(byte(1), uint32(3), uint32(1), uint32(4), 0.0, 0.0, 1.0, 0.0, 1.0, 1.0, 0.0, 0.0)),
			geom: orb.Polygon{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}},
		{name: "empty flag", blob: []byte{'G', 'P', 0, 0x11, 0, 0, 0, 0, 1, 2, 0, 0, 0, 0, 0, 0, 0}, geom: nil},
		{name: "POINT EMPTY (NaN)", blob: cat(hdr, gpkgLE(byte(1), uint32(1), math.NaN(), math.NaN())), geom: nil},
		{name: "extended type", blob: []byte{'G', 'P', 0, 0x21, 0, 0, 0, 0}, err: "extended geometry type"},
		{name: "bad envelope indicator", blob: []byte{'G', 'P', 0, 0x0B, 0, 0, 0, 0}, err: "envelope contents indicator 5"},
		{name: "envelope cut short", blob: []byte{'G', 'P', 0, 0x03, 0, 0, 0, 0, 1}, err: "shorter than the header with its envelope"},
		{name: "version 1", blob: []byte{'G', 'P', 1, 0x01, 0, 0, 0, 0}, err: "geometry version 1"},
		{name: "bad byte order", blob: cat(hdr, []byte{7, 1, 0, 0, 0}), err: "byte order 7"},
		{name: "trailing bytes", blob: cat(hdr, gpkgLE(byte(1), uint32(1), 1.0, 2.0), []byte{0}), err: "1 bytes left over"},
		{name: "huge part count", blob: cat(hdr, gpkgLE(byte(1), uint32(5), uint32(0x7FFFFFFF))), err: "WKB says 2147483647 parts but only 0 bytes"},
		{name: "huge ring count", blob: cat(hdr, gpkgLE(byte(1), uint32(3), uint32(1000), uint32(0))), err: "WKB says 1000 rings"},
		{name: "wrong part type", blob: cat(hdr, gpkgLE(byte(1), uint32(5), uint32(1), byte(1), uint32(1), 1.0, 2.0)), err: "a MultiLineString part is a Point"},
		{name: "mixed Z", blob: cat(hdr, gpkgLE(byte(1), uint32(1005), uint32(1), byte(1), uint32(2), uint32(0))), err: "mixes parts with and without Z"},
		{name: "deep nesting", blob: cat(hdr, bytes.Repeat(gpkgLE(byte(1), uint32(7), uint32(1)), 40)), err: "nested deeper than 16"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			g, z, err := gpkgDecodeGeometry(tc.blob)
			if tc.err != "" {
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Fatalf("error %v, want %q", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(g, tc.geom) || !reflect.DeepEqual(z, tc.z) {
				t.Errorf("got %v z %v, want %v z %v", g, z, tc.geom, tc.z)
			}
		})
	}
}

// gpkgFixtureBlobs returns every geometry blob of the GDAL fixtures.
func gpkgFixtureBlobs(t testing.TB) [][]byte {
	var blobs [][]byte
	for _, f := range []struct{ file, table string }{
		{"mains_2229.gpkg", "mains"}, {"mains_26911.gpkg", "mains"}, {"mains_z.gpkg", "mains_z"},
		{"two_tables.gpkg", "mains"}, {"two_tables.gpkg", "hydrants"},
	} {
		db, err := sql.Open("sqlite", "file:"+filepath.Join(gpkgDir, f.file)+"?mode=ro")
		if err != nil {
			t.Fatal(err)
		}
		rows, err := db.Query("SELECT geom FROM " + f.table)
		if err != nil {
			t.Fatal(err)
		}
		for rows.Next() {
			var b []byte
			if err := rows.Scan(&b); err != nil {
				t.Fatal(err)
			}
			blobs = append(blobs, b)
		}
		rows.Close()
		db.Close()
	}
	return blobs
}

// FuzzGeoPackageGeometry: the decoder returns an error or a geometry, never
// panics; a finite 2-D geometry it returns encodes and decodes to itself.
func FuzzGeoPackageGeometry(f *testing.F) {
	for _, b := range gpkgFixtureBlobs(f) {
		f.Add(b)
	}
	f.Add(gpkgLineBlob(3, 48))
	f.Add(gpkgLineBlob(0xFFFFFFFF, 16))
	f.Fuzz(func(t *testing.T, blob []byte) {
		g, z, err := gpkgDecodeGeometry(blob)
		if err != nil {
			if g != nil || z != nil {
				t.Fatalf("error %v with a geometry", err)
			}
			return
		}
		if z != nil {
			n := 0
			EachPoint(g, func(orb.Point) { n++ })
			if n != len(z) {
				t.Fatalf("%d vertices but %d Z values", n, len(z))
			}
			return
		}
		if !gpkgWritable(g) {
			return
		}
		again, z2, err := gpkgDecodeGeometry(gpkgEncodeGeometry(nil, 1, g, g.Bound()))
		if err != nil || z2 != nil || !reflect.DeepEqual(again, g) {
			t.Fatalf("re-encoded %v: got %v, %v", g, again, err)
		}
	})
}

func BenchmarkWriteGeoPackage100k(b *testing.B) {
	const n = 100_000
	srs := gpkgSRS2229(b)
	l := &Layer{Name: "pipes", Columns: []Column{
		{Name: "pipe_id", Kind: String}, {Name: "diameter_in", Kind: Real, Decimals: 2},
		{Name: "install_year", Kind: Integer}, {Name: "headloss_ft_per_kft", Kind: Real, Decimals: 3},
		{Name: "reason", Kind: String},
	}}
	for i := range n {
		x, y := 6600000+float64(i%400)*300, 1840000+float64(i/400)*300
		l.Rows = append(l.Rows, Row{
			Geometry: orb.LineString{{x, y}, {x + 100, y + 3}, {x + 200, y - 2}, {x + 250, y + 40}, {x + 300, y}},
			Values:   []any{"P-" + strconv.Itoa(i), 8.0, 1950 + i%70, float64(i%1000) / 97, "meets the criteria"},
		})
	}
	path := filepath.Join(b.TempDir(), "bench.gpkg")
	b.ReportAllocs()
	cpu0 := processCPU()
	for b.Loop() {
		if err := WriteGeoPackage(path, srs, l); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "features/s")
	gpkgReportCPU(b, processCPU()-cpu0, n)
}

// gpkgReportCPU reports the process's CPU time per write and the rows
// written per CPU second, which other programs running beside the
// benchmark change less than the wall time.
func gpkgReportCPU(b *testing.B, cpu time.Duration, rows int) {
	if cpu <= 0 {
		return
	}
	b.ReportMetric(cpu.Seconds()*1e3/float64(b.N), "cpu-ms/op")
	b.ReportMetric(float64(rows)*float64(b.N)/cpu.Seconds(), "cpu-rows/s")
}

// BenchmarkWriteGeoPackagePipes100k writes the 32-column pipe layer of
// the CSV and GeoJSON benchmarks (text, integer and real columns with
// fixed and shortest decimals, some nulls), closer to the width of the
// pipes.gpkg a run writes than the five columns above.
// It writes the layer as a list of rows and packed (as a run's is).
func BenchmarkWriteGeoPackagePipes100k(b *testing.B) {
	benchWriteLayer(b, "pipes.gpkg", func(path string, l *Layer) error { return WriteGeoPackage(path, SpatialRef{ID: 4326}, l) })
}

// Reading never leaves files beside the input, also for a database in WAL
// mode (SQLite's read-only open would create -wal and -shm files).
func TestGeoPackageReadLeavesNoFiles(t *testing.T) {
	for _, mode := range []string{"DELETE", "WAL"} {
		t.Run(mode, func(t *testing.T) {
			path := gpkgCopy(t, "mains_2229.gpkg", "PRAGMA journal_mode = "+mode)
			l, err := ReadGeoPackage(path, "")
			if err != nil {
				t.Fatal(err)
			}
			if len(l.Features.Features) != 5 {
				t.Errorf("%d features, want 5", len(l.Features.Features))
			}
			ents, _ := os.ReadDir(filepath.Dir(path))
			if len(ents) != 1 {
				t.Errorf("%d files in the folder after reading, want 1", len(ents))
			}
		})
	}
}

// A write replaces an existing file whole (atomic rename).
func TestGeoPackageOverwrite(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.gpkg")
	if err := os.WriteFile(path, []byte("an older file"), 0o644); err != nil {
		t.Fatal(err)
	}
	layers := gpkgTestLayers()[:1]
	if err := WriteGeoPackage(path, gpkgSRS2229(t), layers...); err != nil {
		t.Fatal(err)
	}
	l, err := ReadGeoPackage(path, "")
	if err != nil {
		t.Fatal(err)
	}
	if l.Table != "pipes" || len(l.Features.Features) != 3 {
		t.Errorf("table %q with %d features, want pipes 3", l.Table, len(l.Features.Features))
	}
}

// gpkgRound gives the value the CSV writer prints, read back by
// strconv.ParseFloat (Go's correctly rounded decimal conversion, the
// reference): for random values over 29 orders of magnitude and every
// Decimals up to 24, and for the cases its shortcut must leave to the
// text: exact binary ties such as 0.125 to 2 places (printed 0.12, round
// half to even), values one or two ulps either side of a decimal tie,
// products of 2^51 and more, negatives that print as zero, and -0.
func TestGeoPackageRound(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	var values []float64
	for range 200_000 {
		x := (rng.Float64()*2 - 1) * math.Pow(10, float64(rng.IntN(30)-12))
		values = append(values, x)
	}
	for k := range 2_000 {
		for d := range 6 {
			tie := (float64(k) + 0.5) / math.Pow(10, float64(d))
			values = append(values, tie, -tie, math.Nextafter(tie, 0), math.Nextafter(tie, 1e300),
				math.Nextafter(math.Nextafter(tie, 1e300), 1e300), float64(k)/8, -float64(k)/1024)
		}
	}
	values = append(values, 0, math.Copysign(0, -1), -1e-9, 1<<51, 1<<52+0.5, 1<<53, 4.5e15, 9.1e15, -9.1e15, 1e300, 5e-324, 2.675, 1.005, 0.045)
	for _, x := range values {
		for d := range 25 {
			c := Column{Kind: Real, Decimals: d}
			text, _, _ := formatFloat(nil, c, x)
			want, err := strconv.ParseFloat(string(text), 64)
			if err != nil {
				t.Fatal(err)
			}
			if got := gpkgRound(c, x); math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("gpkgRound(%v, %d places) = %v, want %v (%s)", x, d, got, want, text)
			}
		}
	}
}

// Layers of 63, 64, 65 and 128 rows (once the sizes of the batched
// INSERTs this writer used, each filling several B-tree leaves now that
// the rows are written as pages) and a table so wide (600 columns) that
// every row overflows its leaf come back from the reader row for row, with
// fids 1, 2, ... in order. The finished file is in SQLite's default rollback
// journal mode, "delete" (the build's journal_mode = MEMORY lasts only as
// long as its connection; sqlite.org/pragma.html#pragma_journal_mode),
// its header says so (bytes 18–19 are 1, not 2 for WAL;
// sqlite.org/fileformat.html §1.3.4), and SQLite's integrity_check and
// rtreecheck find nothing wrong. No journal or temporary file is left.
func TestGeoPackageBatches(t *testing.T) {
	cases := []struct{ rows, wide int }{{63, 0}, {64, 0}, {65, 0}, {128, 0}, {120, 597}}
	for _, tc := range cases {
		t.Run(fmt.Sprintf("%d_rows_%d_columns", tc.rows, tc.wide+3), func(t *testing.T) {
			l := &Layer{Name: "mains", Columns: []Column{{Name: "pipe_id", Kind: String}, {Name: "year", Kind: Integer}, {Name: "flow_gpm", Kind: Real, Decimals: 2}}}
			for k := range tc.wide {
				l.Columns = append(l.Columns, Column{Name: "x" + strconv.Itoa(k), Kind: Real, Decimals: -1})
			}
			var want []map[string]any
			for i := range tc.rows {
				x, y := 6600000+10*float64(i), 1840000+float64(i%7)
				flow := float64(i) / 4 // exact in binary and in two decimals
				props := map[string]any{"pipe_id": "P-" + strconv.Itoa(i), "year": int64(1900 + i), "flow_gpm": flow}
				vals := []any{"P-" + strconv.Itoa(i), 1900 + i, flow}
				if i%10 == 3 {
					vals[2], props["flow_gpm"] = math.NaN(), nil
				}
				for k := range tc.wide {
					v := float64(i*1000+k) + 0.5
					vals = append(vals, v)
					props["x"+strconv.Itoa(k)] = v
				}
				l.Rows = append(l.Rows, Row{Geometry: orb.LineString{{x, y}, {x + 5, y + 2}}, Values: vals})
				want = append(want, props)
			}
			dir := t.TempDir()
			path := filepath.Join(dir, "batches.gpkg")
			if err := WriteGeoPackage(path, gpkgSRS2229(t), l); err != nil {
				t.Fatal(err)
			}
			got, err := ReadGeoPackage(path, "")
			if err != nil {
				t.Fatal(err)
			}
			if len(got.Features.Features) != tc.rows {
				t.Fatalf("%d features, want %d", len(got.Features.Features), tc.rows)
			}
			for i, f := range got.Features.Features {
				if !reflect.DeepEqual(f.Geometry, l.Rows[i].Geometry) {
					t.Fatalf("feature %d geometry %v, want %v", i+1, f.Geometry, l.Rows[i].Geometry)
				}
				if p := map[string]any(f.Properties); len(p) != len(want[i]) {
					t.Fatalf("feature %d: %d properties, want %d", i+1, len(p), len(want[i]))
				}
				for k, v := range want[i] {
					if got := f.Properties[k]; !reflect.DeepEqual(got, v) {
						t.Fatalf("feature %d: %s = %v, want %v", i+1, k, got, v)
					}
				}
			}
			db, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
			if err != nil {
				t.Fatal(err)
			}
			defer db.Close()
			rows, err := db.Query("SELECT fid FROM mains ORDER BY rowid")
			if err != nil {
				t.Fatal(err)
			}
			next := int64(1)
			for rows.Next() {
				var fid int64
				if err := rows.Scan(&fid); err != nil {
					t.Fatal(err)
				}
				if fid != next {
					t.Fatalf("fid %d where %d was due", fid, next)
				}
				next++
			}
			rows.Close()
			for q, want := range map[string]string{
				"PRAGMA journal_mode":                   "delete",
				"PRAGMA integrity_check":                "ok",
				"SELECT rtreecheck('rtree_mains_geom')": "ok",
			} {
				var s string
				if err := db.QueryRow(q).Scan(&s); err != nil {
					t.Fatalf("%s: %v", q, err)
				}
				if s != want {
					t.Errorf("%s gives %q, want %q", q, s, want)
				}
			}
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if b[18] != 1 || b[19] != 1 {
				t.Errorf("header bytes 18–19 are %d %d, want 1 1 (rollback journal)", b[18], b[19])
			}
			if ents, _ := os.ReadDir(dir); len(ents) != 1 {
				t.Errorf("%d files in the folder, want only the GeoPackage", len(ents))
			}
		})
	}
}
