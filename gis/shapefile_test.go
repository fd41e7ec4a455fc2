package gis

// Fixtures in testdata/shp were made with GDAL from the GeoJSON files beside
// them (an invented town's pipes and demands), with
//
//	$ ogr2ogr --version
//	GDAL 3.6.2, released 2023/01/02
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:2229 -lco ENCODING=UTF-8 pipes_2229.shp pipes.geojson
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:26911 pipes_26911.shp pipes.geojson
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:2229 -lco ENCODING=UTF-8 demands_2229.shp demands.geojson
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:26911 -lco ENCODING=UTF-8 pipes_z_26911.shp pipes_z.geojson
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:26911 -dim XYZ -lco ENCODING=UTF-8 demands_z_26911.shp demands.geojson
//	$ ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:26911 -dim XYM -lco ENCODING=UTF-8 pipes_m_26911.shp pipes_z.geojson
//
// EPSG:2229 is NAD83 / California zone 5 (US survey feet), EPSG:26911 NAD83
// / UTM zone 11N (metres). pipes_26911 has GDAL's default encoding: no .cpg
// and LDID 0x57 (ISO-8859-1), so the en dash of "Café Hill – East" became
// '?'. The expected values below are what `ogrinfo -ro -al FILE.shp`
// (GDAL 3.6.2) printed for each fixture; coordinates are printed there to
// 15 significant digits, so they are compared within 1e-7 of the layer unit.

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	shp "github.com/jonas-p/go-shp"
	"github.com/paulmach/orb"
)

// shpCoordTol is the coordinate tolerance against ogrinfo's 15-digit output,
// in the layer's unit (ft or m).
const shpCoordTol = 1e-7

type shpWantFeature struct {
	geom  orb.Geometry // nil for a Null shape
	z     []float64
	props map[string]any
}

// shpPipesProps are the attributes ogrinfo -al printed for pipes_2229 and
// pipes_26911 (identical but for feature 4's ZONE); DIAM_IN and ACTIVE are
// N(9,0) and N(1,0), C_FACTOR and headloss_* N(24,15), INSTALLED D.
func shpPipesProps(zone4 string) []map[string]any {
	return []map[string]any{
		{"PIPE_ID": "P-101", "ZONE": "Ñorth Zone", "DIAM_IN": int64(8), "C_FACTOR": 120.5, "INSTALLED": "1962-04-17",
			"ACTIVE": int64(1), "headloss_p": 1.25, "headloss_1": 6.6},
		{"PIPE_ID": "P-102", "ZONE": "Low", "DIAM_IN": int64(12), "C_FACTOR": nil, "INSTALLED": nil,
			"ACTIVE": int64(0), "headloss_p": 0.5, "headloss_1": nil},
		{"PIPE_ID": "P-103", "ZONE": nil, "DIAM_IN": nil, "C_FACTOR": 100.0, "INSTALLED": "1988-11-03",
			"ACTIVE": nil, "headloss_p": nil, "headloss_1": 2.0},
		{"PIPE_ID": "P-104", "ZONE": zone4, "DIAM_IN": int64(6), "C_FACTOR": 95.25, "INSTALLED": "2004-02-29",
			"ACTIVE": int64(1), "headloss_p": 3.75, "headloss_1": 19.8},
	}
}

var shpPipesFields = []DBFField{ // the .dbf descriptors GDAL wrote (ogrinfo: String (80.0), Integer (9.0), Real (24.15), Date, Integer (1.0))
	{"PIPE_ID", 'C', 80, 0}, {"ZONE", 'C', 80, 0}, {"DIAM_IN", 'N', 9, 0}, {"C_FACTOR", 'N', 24, 15},
	{"INSTALLED", 'D', 8, 0}, {"ACTIVE", 'N', 1, 0}, {"headloss_p", 'N', 24, 15}, {"headloss_1", 'N', 24, 15},
}

var shpDemandsFields = []DBFField{
	{"NODE_ID", 'C', 80, 0}, {"DEMAND_GPM", 'N', 24, 15}, {"ELEV_FT", 'N', 9, 0}, {"NOTE", 'C', 80, 0},
}

func shpDemandsProps() []map[string]any {
	return []map[string]any{
		{"NODE_ID": "J-1", "DEMAND_GPM": 35.5, "ELEV_FT": int64(412), "NOTE": "school"},
		{"NODE_ID": "J-2", "DEMAND_GPM": nil, "ELEV_FT": nil, "NOTE": nil},
		{"NODE_ID": "J-3", "DEMAND_GPM": 0.75, "ELEV_FT": int64(398), "NOTE": "Ñorth Zone hydrant"},
	}
}

func shpWithGeoms(props []map[string]any, geoms []orb.Geometry, zs [][]float64) []shpWantFeature {
	out := make([]shpWantFeature, len(props))
	for i := range props {
		out[i] = shpWantFeature{geom: geoms[i], props: props[i]}
		if zs != nil {
			out[i].z = zs[i]
		}
	}
	return out
}

func TestShapefileGDALFixtures(t *testing.T) {
	// Coordinates: ogrinfo -ro -al output of each fixture (GDAL 3.6.2).
	p2229 := []orb.Geometry{
		orb.LineString{{6591958.69213135, 1840593.21016341}, {6592261.42944681, 1840775.47270205}, {6592715.54718089, 1841030.67617962}},
		orb.MultiLineString{{{6592715.54718089, 1841030.67617962}, {6593169.61965203, 1841322.2783511}},
			{{6593169.61965203, 1841322.2783511}, {6593411.5326003, 1841722.84125522}, {6593774.94653956, 1841796.00625827}}},
		nil,
		orb.LineString{{6591958.69213135, 1840593.21016341}, {6591595.61719209, 1840156.14746455}},
	}
	p26911 := []orb.Geometry{
		orb.LineString{{416934.39426429, 3768065.20582907}, {417027.179354401, 3768119.83646812}, {417166.306318979, 3768196.23990242}},
		orb.MultiLineString{{{417166.306318979, 3768196.23990242}, {417305.528101729, 3768283.73375697}},
			{{417305.528101729, 3768283.73375697}, {417380.431913722, 3768405.05990288}, {417491.37916664, 3768426.26830856}}},
		nil,
		orb.LineString{{416934.39426429, 3768065.20582907}, {416822.464761077, 3767933.11980605}},
	}
	pz := []orb.Geometry{
		orb.LineString{{416934.39426429, 3768065.20582907}, {417027.179354401, 3768119.83646812}, {417166.306318979, 3768196.23990242}},
		orb.MultiLineString{{{417166.306318979, 3768196.23990242}, {417305.528101729, 3768283.73375697}},
			{{417305.528101729, 3768283.73375697}, {417491.37916664, 3768426.26830856}}},
	}
	d2229 := []orb.Geometry{orb.Point{6592261.42944681, 1840775.47270205}, orb.Point{6593411.5326003, 1841722.84125522}, nil}
	dz := []orb.Geometry{orb.Point{417027.179354401, 3768119.83646812}, orb.Point{417380.431913722, 3768405.05990288}, nil}
	cases := []struct {
		name      string
		file      string
		shapeType string
		encoding  string
		prjPrefix string
		fields    []DBFField
		want      []shpWantFeature
	}{
		{"state plane lines UTF-8", "pipes_2229.shp", "PolyLine", "UTF-8",
			`PROJCS["NAD_1983_StatePlane_California_V_FIPS_0405_Feet"`, shpPipesFields,
			shpWithGeoms(shpPipesProps("Café Hill – East"), p2229, nil)},
		{"UTM lines GDAL default ISO-8859-1", "pipes_26911.shp", "PolyLine", "ISO-8859-1",
			`PROJCS["NAD_1983_UTM_Zone_11N"`, shpPipesFields,
			shpWithGeoms(shpPipesProps("Café Hill ? East"), p26911, nil)},
		{"state plane points with nulls", "demands_2229.shp", "Point", "UTF-8",
			`PROJCS["NAD_1983_StatePlane_California_V_FIPS_0405_Feet"`, shpDemandsFields,
			shpWithGeoms(shpDemandsProps(), d2229, nil)},
		{"UTM PolyLineZ", "pipes_z_26911.shp", "PolyLineZ", "UTF-8", `PROJCS["NAD_1983_UTM_Zone_11N"`,
			[]DBFField{{"PIPE_ID", 'C', 80, 0}, {"DIAM_IN", 'N', 9, 0}},
			shpWithGeoms([]map[string]any{{"PIPE_ID": "Z-1", "DIAM_IN": int64(10)}, {"PIPE_ID": "Z-2", "DIAM_IN": int64(16)}},
				pz, [][]float64{{120.5, 121.25, 119}, {119, 117.5, 117.5, 116}})},
		{"UTM PolyLineM (-dim XYM; M dropped)", "pipes_m_26911.shp", "PolyLineM", "UTF-8", `PROJCS["NAD_1983_UTM_Zone_11N"`,
			[]DBFField{{"PIPE_ID", 'C', 80, 0}, {"DIAM_IN", 'N', 9, 0}},
			shpWithGeoms([]map[string]any{{"PIPE_ID": "Z-1", "DIAM_IN": int64(10)}, {"PIPE_ID": "Z-2", "DIAM_IN": int64(16)}}, pz, nil)},
		{"UTM PointZ (-dim XYZ)", "demands_z_26911.shp", "PointZ", "UTF-8", `PROJCS["NAD_1983_UTM_Zone_11N"`, shpDemandsFields,
			shpWithGeoms(shpDemandsProps(), dz, [][]float64{{0}, {0}, nil})},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ReadShapefile(filepath.Join("testdata", "shp", tc.file))
			if err != nil {
				t.Fatal(err)
			}
			if l.ShapeType != tc.shapeType || l.Encoding != tc.encoding {
				t.Errorf("shape type %q encoding %q, want %q %q", l.ShapeType, l.Encoding, tc.shapeType, tc.encoding)
			}
			if !strings.HasPrefix(l.PRJ, tc.prjPrefix) || strings.HasSuffix(l.PRJ, " ") {
				t.Errorf("PRJ = %.80q…, want prefix %q", l.PRJ, tc.prjPrefix)
			}
			if !slices.Equal(l.Fields, tc.fields) {
				t.Errorf("fields\n got %v\nwant %v", l.Fields, tc.fields)
			}
			shpCheckFeatures(t, l, tc.want)
		})
	}
}

// shpCheckFeatures compares a read layer with the wanted features.
func shpCheckFeatures(t *testing.T, l *ShapefileLayer, want []shpWantFeature) {
	t.Helper()
	if len(l.Features.Features) != len(want) {
		t.Fatalf("%d features, want %d", len(l.Features.Features), len(want))
	}
	hasZ := false
	for _, w := range want {
		hasZ = hasZ || w.z != nil
	}
	if hasZ != (l.Z != nil) {
		t.Errorf("Z present %v, want %v", l.Z != nil, hasZ)
	}
	for i, w := range want {
		f := l.Features.Features[i]
		shpCheckGeom(t, i+1, f.Geometry, w.geom)
		if hasZ && !shpNearSlices(l.Z[i], w.z, shpCoordTol) {
			t.Errorf("feature %d: Z %v, want %v", i+1, l.Z[i], w.z)
		}
		if len(f.Properties) != len(w.props) {
			t.Errorf("feature %d: %d properties, want %d: %v", i+1, len(f.Properties), len(w.props), f.Properties)
		}
		for k, v := range w.props {
			got, ok := f.Properties[k]
			if !ok || got != v {
				t.Errorf("feature %d: %s = %#v, want %#v", i+1, k, got, v)
			}
		}
	}
}

func shpCheckGeom(t *testing.T, rec int, got, want orb.Geometry) {
	t.Helper()
	switch w := want.(type) {
	case nil:
		if got != nil {
			t.Errorf("feature %d: geometry %v, want null", rec, got)
		}
	case orb.Point:
		g, ok := got.(orb.Point)
		if !ok || !shpNear(g, w) {
			t.Errorf("feature %d: geometry %v, want %v", rec, got, w)
		}
	case orb.LineString:
		g, ok := got.(orb.LineString)
		if !ok || !shpNearLine(g, w) {
			t.Errorf("feature %d: geometry %v, want %v", rec, got, w)
		}
	case orb.MultiLineString:
		g, ok := got.(orb.MultiLineString)
		if !ok || len(g) != len(w) {
			t.Fatalf("feature %d: geometry %v, want %v", rec, got, w)
		}
		for k := range w {
			if !shpNearLine(g[k], w[k]) {
				t.Errorf("feature %d part %d: %v, want %v", rec, k+1, g[k], w[k])
			}
		}
	}
}

func shpNear(a, b orb.Point) bool {
	return math.Abs(a[0]-b[0]) <= shpCoordTol && math.Abs(a[1]-b[1]) <= shpCoordTol
}

func shpNearLine(a, b orb.LineString) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !shpNear(a[i], b[i]) {
			return false
		}
	}
	return true
}

func shpNearSlices(a, b []float64, tol float64) bool {
	if len(a) != len(b) || (a == nil) != (b == nil) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > tol {
			return false
		}
	}
	return true
}

// TestShapefileLDID87IsLatin1 checks that LDID 0x57 is decoded as
// ISO-8859-1, not windows-1252: byte 0x96 (an en dash in 1252) put into
// pipes_26911.dbf was printed by GDAL 3.6.2's ogrinfo -al as U+0096
// (UTF-8 C2 96), the ISO-8859-1 reading.
func TestShapefileLDID87IsLatin1(t *testing.T) {
	dir := shpCopyFixture(t, "pipes_26911")
	path := filepath.Join(dir, "pipes_26911.dbf")
	b, _ := os.ReadFile(path)
	i := bytes.Index(b, []byte("Hill ? E"))
	b[i+5] = 0x96
	os.WriteFile(path, b, 0o644)
	l, err := ReadShapefile(filepath.Join(dir, "pipes_26911.shp"))
	if err != nil {
		t.Fatal(err)
	}
	if got := l.Features.Features[3].Properties["ZONE"]; got != "Café Hill \u0096 East" {
		t.Errorf("ZONE = %q, want %q", got, "Café Hill \u0096 East")
	}
}

// TestShapefileEncodings covers the .cpg and LDID choice on hand-made
// cases: the .cpg wins over the LDID; 0x03 is windows-1252 (the dBASE
// LDID table, as GDAL reads it); no .cpg and LDID 0 is taken as UTF-8.
func TestShapefileEncodings(t *testing.T) {
	cases := []struct {
		name   string
		cpg    string
		hasCPG bool
		ldid   byte
		raw    []byte
		want   string
		enc    string
	}{
		{"cpg UTF-8 beats LDID", "UTF-8", true, 0x57, []byte("Ñorth"), "Ñorth", "UTF-8"},
		{"cpg 1252", "1252\r\n", true, 0, []byte{0x96, 'x'}, "–x", "windows-1252"},
		{"cpg 8859-1", "ISO 8859-1", true, 0, []byte{0xD1}, "Ñ", "ISO-8859-1"},
		{"LDID 3 is ANSI 1252", "", false, 0x03, []byte{0x80}, "€", "windows-1252"},
		{"nothing said: UTF-8", "", false, 0, []byte("Ñ"), "Ñ", "UTF-8"},
		{"nothing said, not UTF-8: read as 1252", "", false, 0, []byte{0xD1}, "Ñ", "UTF-8"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			enc, err := dbfEncoding(tc.cpg, tc.hasCPG, tc.ldid)
			if err != nil {
				t.Fatal(err)
			}
			if enc != tc.enc {
				t.Errorf("encoding %q, want %q", enc, tc.enc)
			}
			got := newDBFDecoder(enc, !tc.hasCPG && tc.ldid == 0).text(tc.raw)
			if got != tc.want {
				t.Errorf("text %q, want %q", got, tc.want)
			}
		})
	}
	if _, err := dbfEncoding("KOI8-Z", true, 0); err == nil || !strings.Contains(err.Error(), ".cpg") {
		t.Errorf("unknown .cpg: err = %v, want an error naming the .cpg", err)
	}
	if _, err := dbfEncoding("", false, 0xEE); err == nil || !strings.Contains(err.Error(), "write a .cpg") {
		t.Errorf("unknown LDID: err = %v, want an error saying to write a .cpg", err)
	}
}

// TestShapefileDBFValues checks the value rules on single fields: GDAL's
// null conventions (LIBRARIES.md §3: numeric all '*', date "00000000",
// character all spaces) and the dBASE III field formats.
func TestShapefileDBFValues(t *testing.T) {
	dec := newDBFDecoder("UTF-8", false)
	cases := []struct {
		name  string
		field DBFField
		raw   string
		want  any
		isErr bool
	}{
		{"integer", DBFField{"A", 'N', 10, 0}, "        42", int64(42), false},
		{"negative integer", DBFField{"A", 'N', 10, 0}, "       -42", int64(-42), false},
		{"wide N(24,0) is real, as GDAL types it", DBFField{"A", 'N', 24, 0}, strings.Repeat(" ", 21) + "527", 527.0, false},
		{"real", DBFField{"A", 'N', 24, 15}, "     527.090000000000032", 527.09, false},
		{"F field", DBFField{"A", 'F', 8, 0}, "    12.5", 12.5, false},
		{"numeric stars are null", DBFField{"A", 'N', 9, 0}, "*********", nil, false},
		{"numeric blank is null", DBFField{"A", 'N', 9, 0}, "         ", nil, false},
		{"numeric garbage is an error", DBFField{"A", 'N', 5, 0}, "  abc", nil, true},
		{"date", DBFField{"D", 'D', 8, 0}, "19620417", "1962-04-17", false},
		{"date zeros are null", DBFField{"D", 'D', 8, 0}, "00000000", nil, false},
		{"date blank is null", DBFField{"D", 'D', 8, 0}, "        ", nil, false},
		{"bad date is an error", DBFField{"D", 'D', 8, 0}, "19621317", nil, true},
		{"logical T", DBFField{"L", 'L', 1, 0}, "T", true, false},
		{"logical y", DBFField{"L", 'L', 1, 0}, "y", true, false},
		{"logical F", DBFField{"L", 'L', 1, 0}, "F", false, false},
		{"logical ? is null", DBFField{"L", 'L', 1, 0}, "?", nil, false},
		{"logical blank is null", DBFField{"L", 'L', 1, 0}, " ", nil, false},
		{"bad logical is an error", DBFField{"L", 'L', 1, 0}, "X", nil, true},
		{"text trimmed", DBFField{"C", 'C', 8, 0}, "P-1     ", "P-1", false},
		{"text all spaces is null", DBFField{"C", 'C', 4, 0}, "    ", nil, false},
		{"NUL padding (go-shp's writer) trimmed", DBFField{"C", 'C', 4, 0}, "ab\x00\x00", "ab", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got, err := dbfValue(tc.field, []byte(tc.raw), dec)
			if (err != nil) != tc.isErr {
				t.Fatalf("err = %v, want error %v", err, tc.isErr)
			}
			if got != tc.want {
				t.Errorf("got %#v, want %#v", got, tc.want)
			}
		})
	}
}

// shpCopyFixture copies the parts of testdata/shp/<stem> into a temporary
// directory and returns it.
func shpCopyFixture(t *testing.T, stem string) string {
	t.Helper()
	dir := t.TempDir()
	for _, ext := range []string{".shp", ".shx", ".dbf", ".prj", ".cpg"} {
		b, err := os.ReadFile(filepath.Join("testdata", "shp", stem+ext))
		if errors.Is(err, os.ErrNotExist) {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, stem+ext), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

func TestShapefileCaseInsensitiveSiblings(t *testing.T) {
	dir := shpCopyFixture(t, "pipes_2229")
	for _, ext := range []string{".shp", ".shx", ".dbf", ".prj", ".cpg"} {
		os.Rename(filepath.Join(dir, "pipes_2229"+ext), filepath.Join(dir, "PIPES_2229"+strings.ToUpper(ext)))
	}
	os.Rename(filepath.Join(dir, "PIPES_2229.DBF"), filepath.Join(dir, "PIPES_2229.dbf"))
	for _, p := range []string{"PIPES_2229.SHP", "PIPES_2229", "pipes_2229.shp"} {
		l, err := ReadShapefile(filepath.Join(dir, p))
		if err != nil {
			t.Errorf("%s: %v", p, err)
			continue
		}
		// Same values as the fixture test (ogrinfo -al of pipes_2229).
		if len(l.Features.Features) != 4 || l.Encoding != "UTF-8" || l.PRJ == "" {
			t.Errorf("%s: %d features, encoding %q, prj %d bytes", p, len(l.Features.Features), l.Encoding, len(l.PRJ))
		}
	}
}

// TestShapefileBadFiles damages copies of pipes_2229 (4 PolyLine records,
// the first at byte 100 with content length 104 bytes) and checks that each
// gives a *FieldError naming the part at fault and what to do, never a
// panic. Offsets are from the technical description's layouts.
func TestShapefileBadFiles(t *testing.T) {
	be := func(b []byte, off int, v uint32) { binary.BigEndian.PutUint32(b[off:], v) }
	le := func(b []byte, off int, v uint32) { binary.LittleEndian.PutUint32(b[off:], v) }
	cases := []struct {
		name    string
		damage  func(t *testing.T, dir string)
		file    string // FieldError.File
		feature int
		msg     string
	}{
		{"empty .shp", func(t *testing.T, d string) { shpEdit(t, d, ".shp", func(b []byte) []byte { return nil }) },
			"pipes_2229.shp", 0, "shorter than the 100-byte shapefile header"},
		{"truncated in the header", func(t *testing.T, d string) { shpEdit(t, d, ".shp", func(b []byte) []byte { return b[:60] }) },
			"pipes_2229.shp", 0, "shorter than the 100-byte"},
		{"truncated mid-record", func(t *testing.T, d string) { shpEdit(t, d, ".shp", func(b []byte) []byte { return b[:len(b)-20] }) },
			"pipes_2229.shp", 0, "is truncated"},
		{"truncated mid-record, header length fixed", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { b = b[:len(b)-20]; be(b, 24, uint32(len(b)/2)); return b })
		}, "pipes_2229.shp", 4, "past the end of the .shp"},
		{"not a shapefile", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { be(b, 0, 1234); return b })
		},
			"pipes_2229.shp", 0, "file code 9994"},
		{".shx missing", func(t *testing.T, d string) { os.Remove(filepath.Join(d, "pipes_2229.shx")) },
			"pipes_2229.shp", 0, "the .shx is missing"},
		{".dbf missing", func(t *testing.T, d string) { os.Remove(filepath.Join(d, "pipes_2229.dbf")) },
			"pipes_2229.shp", 0, "the .dbf is missing: copy it beside the .shp"},
		{".dbf truncated", func(t *testing.T, d string) { shpEdit(t, d, ".dbf", func(b []byte) []byte { return b[:len(b)-100] }) },
			"pipes_2229.dbf", 0, "the .dbf is truncated"},
		{".dbf shorter than its header", func(t *testing.T, d string) { shpEdit(t, d, ".dbf", func(b []byte) []byte { return b[:20] }) },
			"pipes_2229.dbf", 0, "shorter than its 32-byte header"},
		{".dbf header length 10", func(t *testing.T, d string) {
			shpEdit(t, d, ".dbf", func(b []byte) []byte { binary.LittleEndian.PutUint16(b[8:], 10); return b })
		}, "pipes_2229.dbf", 0, "header length 10 is impossible"},
		{"record count .shp 4, .dbf 3", func(t *testing.T, d string) {
			shpEdit(t, d, ".dbf", func(b []byte) []byte {
				recLen := int(binary.LittleEndian.Uint16(b[10:]))
				le(b, 4, 3)
				return append(b[:len(b)-1-recLen], dbfEOF)
			})
		}, "pipes_2229.dbf", 0, "the .dbf has 3 records but the .shp has 4"},
		{".shx lists 3 of 4 records", func(t *testing.T, d string) {
			shpEdit(t, d, ".shx", func(b []byte) []byte { b = b[:len(b)-8]; be(b, 24, uint32(len(b)/2)); return b })
		}, "pipes_2229.shp", 0, "more records than the 3 its .shx lists"},
		{".shx of the wrong size", func(t *testing.T, d string) {
			shpEdit(t, d, ".shx", func(b []byte) []byte { be(b, 24, uint32((len(b)-3)/2)); return b[:len(b)-3] })
		},
			"pipes_2229.shx", 0, "not 100 plus 8 per record"},
		{".shx offset disagrees", func(t *testing.T, d string) {
			shpEdit(t, d, ".shx", func(b []byte) []byte { be(b, 108, 60); return b })
		},
			"pipes_2229.shx", 2, "does not match the .shp"},
		{".shx content length disagrees", func(t *testing.T, d string) {
			shpEdit(t, d, ".shx", func(b []byte) []byte { be(b, 104, 10); return b })
		},
			"pipes_2229.shp", 1, "long in the .shp but 20 in the .shx"},
		{"NumParts negative", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { le(b, 144, 0xFFFFFFF0); return b })
		},
			"pipes_2229.shp", 1, "NumParts -16"},
		{"NumPoints huge", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { le(b, 148, 0x7FFFFFFF); return b })
		},
			"pipes_2229.shp", 1, "NumPoints 2147483647, which need"},
		{"part index beyond the points", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { le(b, 152, 5); return b })
		}, "pipes_2229.shp", 1, "part 1 starts at point 5"},
		{"content length beyond the file", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { be(b, 104, 0x7FFFFFF0); return b })
			shpEdit(t, d, ".shx", func(b []byte) []byte { be(b, 104, 0x7FFFFFF0); return b })
		}, "pipes_2229.shp", 1, "past the end of the .shp"},
		{"wrong shape type in a record", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { le(b, 108, shpPoint); return b })
		},
			"pipes_2229.shp", 1, "shape type Point in a PolyLine file"},
		{"polygon file", func(t *testing.T, d string) {
			shpEdit(t, d, ".shp", func(b []byte) []byte { le(b, 32, shpPolygon); return b })
		},
			"pipes_2229.shp", 0, "shape type Polygon is not read"},
		{"bad number in the .dbf", func(t *testing.T, d string) {
			shpEdit(t, d, ".dbf", func(b []byte) []byte { i := bytes.Index(b, []byte("        8")); copy(b[i:], "      8x8"); return b })
		}, "pipes_2229.dbf", 1, `"8x8" is not a number`},
		{"unknown code page", func(t *testing.T, d string) {
			os.WriteFile(filepath.Join(d, "pipes_2229.cpg"), []byte("EBCDIC-XX"), 0o644)
		},
			"pipes_2229.dbf", 0, "which headroom cannot decode"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := shpCopyFixture(t, "pipes_2229")
			tc.damage(t, dir)
			l, err := ReadShapefile(filepath.Join(dir, "pipes_2229.shp"))
			if err == nil {
				t.Fatalf("no error; read %d features", len(l.Features.Features))
			}
			var fe *FieldError
			if !errors.As(err, &fe) {
				t.Fatalf("error %T %v, want *FieldError", err, err)
			}
			if fe.File != tc.file || fe.Feature != tc.feature || !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("error %q (file %q, feature %d), want file %q feature %d containing %q", err, fe.File, fe.Feature, tc.file, tc.feature, tc.msg)
			}
		})
	}
}

func shpEdit(t *testing.T, dir, ext string, edit func([]byte) []byte) {
	t.Helper()
	path := filepath.Join(dir, "pipes_2229"+ext)
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, edit(b), 0o644); err != nil {
		t.Fatal(err)
	}
}

// shpRoundTripLayer is a layer with every kind of value the writer handles.
func shpRoundTripLayer() *Layer {
	long := strings.Repeat("é", 150) // 300 bytes, cut to 127 runes (254 bytes)
	return &Layer{Name: "ranked", Columns: []Column{
		{Name: "PIPE_ID", Kind: String}, {Name: "ZONE", Kind: String}, {Name: "DIAM_IN", Kind: Integer},
		{Name: "C_FACTOR", Kind: Real, Decimals: 1}, {Name: "FLOW_GPM", Kind: Real, Decimals: -1},
		{Name: "ACTIVE", Kind: String}, {Name: "headloss_per_kft", Kind: Real, Decimals: 3},
		{Name: "headloss_per_mile", Kind: Real, Decimals: 3}, {Name: "NOTE", Kind: String},
	}, Rows: []Row{
		{Geometry: orb.LineString{{6591958.69213135, 1840593.21016341}, {6592261.42944681, 1840775.47270205}},
			Values: []any{"P-1", "Ñorth Zone", 8, 120.5, 35.25, true, 1.25, 6.6, nil}},
		{Geometry: orb.MultiLineString{{{10, 20}, {11, 21}}, {}, {{11, 21}, {12.5, -3}, {13, 22}}},
			Values: []any{"P-2", "Low", int64(12), nil, math.NaN(), false, 0.5, nil, nil}},
		{Geometry: nil, Values: []any{"P-3", nil, nil, 100.0, 1e-7, nil, nil, 2.0, nil}},
		{Geometry: orb.LineString{}, Values: []any{"P-4", long, -3, -0.04, -12345.678, true, 1e6, 0.0, nil}},
	}}
}

// shpRoundTripWant is what the layer above must read back as: the writer's
// documented rules (nil, NaN and an empty geometry become null; the long
// string is cut at 254 bytes; C_FACTOR rounds to 1 decimal).
func shpRoundTripWant() []shpWantFeature {
	long := strings.Repeat("é", 127)
	return []shpWantFeature{
		{geom: orb.LineString{{6591958.69213135, 1840593.21016341}, {6592261.42944681, 1840775.47270205}},
			props: map[string]any{"PIPE_ID": "P-1", "ZONE": "Ñorth Zone", "DIAM_IN": int64(8), "C_FACTOR": 120.5, "FLOW_GPM": 35.25,
				"ACTIVE": true, "headloss_p": 1.25, "headloss_1": 6.6, "NOTE": nil}},
		{geom: orb.MultiLineString{{{10, 20}, {11, 21}}, {{11, 21}, {12.5, -3}, {13, 22}}},
			props: map[string]any{"PIPE_ID": "P-2", "ZONE": "Low", "DIAM_IN": int64(12), "C_FACTOR": nil, "FLOW_GPM": nil,
				"ACTIVE": false, "headloss_p": 0.5, "headloss_1": nil, "NOTE": nil}},
		{geom: nil, props: map[string]any{"PIPE_ID": "P-3", "ZONE": nil, "DIAM_IN": nil, "C_FACTOR": 100.0, "FLOW_GPM": 1e-7,
			"ACTIVE": nil, "headloss_p": nil, "headloss_1": 2.0, "NOTE": nil}},
		{geom: nil, props: map[string]any{"PIPE_ID": "P-4", "ZONE": long, "DIAM_IN": int64(-3), "C_FACTOR": 0.0, "FLOW_GPM": -12345.678,
			"ACTIVE": true, "headloss_p": 1e6, "headloss_1": 0.0, "NOTE": nil}},
	}
}

func TestShapefileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "ranked.shp")
	prj := "PROJCS[\"test\"]"
	names, err := WriteShapefile(path, shpRoundTripLayer(), prj)
	if err != nil {
		t.Fatal(err)
	}
	wantNames := []ShapefileField{{"PIPE_ID", "PIPE_ID", 0}, {"ZONE", "ZONE", 1}, {"DIAM_IN", "DIAM_IN", 0},
		{"C_FACTOR", "C_FACTOR", 0}, {"FLOW_GPM", "FLOW_GPM", 0}, {"ACTIVE", "ACTIVE", 0},
		{"headloss_p", "headloss_per_kft", 0}, {"headloss_1", "headloss_per_mile", 0}, {"NOTE", "NOTE", 0}}
	if !slices.Equal(names, wantNames) {
		t.Errorf("names\n got %v\nwant %v", names, wantNames)
	}
	// ShapefileFieldNames knows the same names before anything is written
	// (Truncated, which counts values, is left 0).
	early, err := ShapefileFieldNames(shpRoundTripLayer())
	if err != nil {
		t.Fatal(err)
	}
	for j := range wantNames {
		wantNames[j].Truncated = 0
	}
	if !slices.Equal(early, wantNames) {
		t.Errorf("ShapefileFieldNames\n got %v\nwant %v", early, wantNames)
	}
	l, err := ReadShapefile(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.ShapeType != "PolyLine" || l.Encoding != "UTF-8" || l.PRJ != prj || l.Z != nil || len(l.Deleted) != 0 {
		t.Errorf("type %q encoding %q prj %q Z %v deleted %v", l.ShapeType, l.Encoding, l.PRJ, l.Z, l.Deleted)
	}
	// Field plan as WriteShapefile documents it: C as wide as the longest
	// value, Integer N(10,0), Real N(24,d), shortest-form Real N(24, its
	// most decimals), all-bool L(1), all-null C(1).
	wantFields := []DBFField{{"PIPE_ID", 'C', 3, 0}, {"ZONE", 'C', 254, 0}, {"DIAM_IN", 'N', 10, 0},
		{"C_FACTOR", 'N', 24, 1}, {"FLOW_GPM", 'N', 24, 7}, {"ACTIVE", 'L', 1, 0},
		{"headloss_p", 'N', 24, 3}, {"headloss_1", 'N', 24, 3}, {"NOTE", 'C', 1, 0}}
	if !slices.Equal(l.Fields, wantFields) {
		t.Errorf("fields\n got %v\nwant %v", l.Fields, wantFields)
	}
	shpCheckFeatures(t, l, shpRoundTripWant())

	// The .shp header's file bounding box covers the non-null records
	// (computed by hand from the coordinates above).
	b, _ := os.ReadFile(path)
	box := [4]float64{shpFloat(b, 36), shpFloat(b, 44), shpFloat(b, 52), shpFloat(b, 60)}
	if box != [4]float64{10, -3, 6592261.42944681, 1840775.47270205} {
		t.Errorf("file bbox %v", box)
	}
	// Determinism: the same layer gives the same bytes.
	dir2 := t.TempDir()
	if _, err := WriteShapefile(filepath.Join(dir2, "ranked"), shpRoundTripLayer(), prj); err != nil {
		t.Fatal(err)
	}
	for _, ext := range []string{".shp", ".shx", ".dbf", ".cpg", ".prj"} {
		a, _ := os.ReadFile(filepath.Join(dir, "ranked"+ext))
		c, _ := os.ReadFile(filepath.Join(dir2, "ranked"+ext))
		if len(a) == 0 || !bytes.Equal(a, c) {
			t.Errorf("%s differs between two writes (or is empty)", ext)
		}
	}
}

func TestShapefileRoundTripPoints(t *testing.T) {
	path := filepath.Join(t.TempDir(), "nodes.shp")
	l := &Layer{Columns: []Column{{Name: "NODE_ID", Kind: String}, {Name: "ELEV_FT", Kind: Integer}},
		Rows: []Row{{Geometry: orb.Point{417027.179354401, 3768119.83646812}, Values: []any{"J-1", 412}},
			{Geometry: nil, Values: []any{"J-2", nil}}}}
	if _, err := WriteShapefile(path, l, ""); err != nil {
		t.Fatal(err)
	}
	got, err := ReadShapefile(path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(filepath.Dir(path), "nodes.prj")); err == nil || got.PRJ != "" {
		t.Errorf("a .prj was written for an empty prj")
	}
	if got.ShapeType != "Point" {
		t.Errorf("shape type %q", got.ShapeType)
	}
	shpCheckFeatures(t, got, []shpWantFeature{
		{geom: orb.Point{417027.179354401, 3768119.83646812}, props: map[string]any{"NODE_ID": "J-1", "ELEV_FT": int64(412)}},
		{geom: nil, props: map[string]any{"NODE_ID": "J-2", "ELEV_FT": nil}},
	})
}

func TestShapefileWriteErrors(t *testing.T) {
	cols := []Column{{Name: "A", Kind: Integer}}
	cases := []struct {
		name string
		rows []Row
		msg  string
	}{
		{"mixed types", []Row{{Geometry: orb.Point{1, 2}, Values: []any{1}}, {Geometry: orb.LineString{{1, 2}, {3, 4}}, Values: []any{2}}},
			"PolyLine geometry in a layer of Point"},
		{"polygon", []Row{{Geometry: orb.Polygon{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}, Values: []any{1}}}, "cannot hold orb.Polygon"},
		{"NaN coordinate", []Row{{Geometry: orb.Point{math.NaN(), 2}, Values: []any{1}}}, "NaN"},
		{"text in a numeric column", []Row{{Geometry: orb.Point{1, 2}, Values: []any{"x"}}}, "numeric column"},
		{"wrong value count", []Row{{Geometry: orb.Point{1, 2}, Values: []any{1, 2}}}, "2 values for 1 columns"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			_, err := WriteShapefile(filepath.Join(dir, "x.shp"), &Layer{Name: "x", Columns: cols, Rows: tc.rows}, "")
			if err == nil || !strings.Contains(err.Error(), tc.msg) {
				t.Fatalf("err = %v, want one containing %q", err, tc.msg)
			}
			if entries, _ := os.ReadDir(dir); len(entries) != 0 {
				t.Errorf("files left behind after a failed write: %v", entries)
			}
		})
	}
}

// TestShapefileGoShpReadsOurs reads our output with go-shp v0.1.1
// (github.com/jonas-p/go-shp), an independent reader: same shapes,
// coordinates, field descriptors and attribute text.
func TestShapefileGoShpReadsOurs(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ranked.shp")
	if _, err := WriteShapefile(path, shpRoundTripLayer(), ""); err != nil {
		t.Fatal(err)
	}
	r, err := shp.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var names []string
	for _, f := range r.Fields() {
		names = append(names, f.String()+":"+string(f.Fieldtype))
	}
	if want := "PIPE_ID:C ZONE:C DIAM_IN:N C_FACTOR:N FLOW_GPM:N ACTIVE:L headloss_p:N headloss_1:N NOTE:C"; strings.Join(names, " ") != want {
		t.Errorf("go-shp fields %q, want %q", strings.Join(names, " "), want)
	}
	stars := strings.Repeat("*", 24)
	// Attribute text as go-shp returns it (trimmed of spaces): our number
	// formatting and GDAL's null conventions.
	wantAttrs := [][]string{
		{"P-1", "Ñorth Zone", "8", "120.5", "35.25", "T", "1.250", "6.600", ""},
		{"P-2", "Low", "12", stars, stars, "F", "0.500", stars, ""},
		{"P-3", "", "**********", "100.0", "0.0000001", "?", stars, "2.000", ""},
		{"P-4", strings.Repeat("é", 127), "-3", "0.0", "-12345.678", "T", "1000000.000", "0.000", ""},
	}
	wantGeoms := shpRoundTripWant()
	n := 0
	for r.Next() {
		i, s := r.Shape()
		switch g := wantGeoms[i].geom.(type) {
		case nil:
			if _, ok := s.(*shp.Null); !ok {
				t.Errorf("record %d: go-shp read %T, want *shp.Null", i+1, s)
			}
		default:
			pl, ok := s.(*shp.PolyLine)
			if !ok {
				t.Fatalf("record %d: go-shp read %T", i+1, s)
			}
			var parts []orb.LineString
			switch x := g.(type) {
			case orb.LineString:
				parts = []orb.LineString{x}
			case orb.MultiLineString:
				parts = x
			}
			var flat []orb.Point
			var starts []int32
			for _, p := range parts {
				starts = append(starts, int32(len(flat)))
				flat = append(flat, p...)
			}
			if !slices.Equal(pl.Parts, starts) || len(pl.Points) != len(flat) {
				t.Fatalf("record %d: parts %v (%d points), want %v (%d)", i+1, pl.Parts, len(pl.Points), starts, len(flat))
			}
			for k, q := range flat {
				if pl.Points[k].X != q[0] || pl.Points[k].Y != q[1] {
					t.Errorf("record %d point %d: %v, want %v", i+1, k, pl.Points[k], q)
				}
			}
		}
		for k, w := range wantAttrs[i] {
			if got := r.Attribute(k); got != w {
				t.Errorf("record %d field %d: go-shp %q, want %q", i+1, k, got, w)
			}
		}
		n++
	}
	if r.Err() != nil || n != 4 {
		t.Errorf("go-shp read %d records, err %v", n, r.Err())
	}
}

// TestShapefileGDALReadsOurs opens our output with GDAL's ogrinfo: feature
// count, fields and types, geometry type, a null geometry and null values.
func TestShapefileGDALReadsOurs(t *testing.T) {
	ogrinfo := requireTool(t, "ogrinfo")
	path := filepath.Join(t.TempDir(), "ranked.shp")
	if _, err := WriteShapefile(path, shpRoundTripLayer(), ""); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(ogrinfo, "-ro", "-al", "-so", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ogrinfo -so: %v\n%s", err, out)
	}
	s := string(out)
	// GDAL 3.6.2's OGR types for dbf fields (as this ogrinfo printed them):
	// C → String, N(10,0) → Integer64 (width > 9), N(24,d) → Real, and L →
	// String "T"/"F"/"?" (GDAL does not map L to a boolean).
	for _, want := range []string{"Geometry: Line String", "Feature Count: 4", "PIPE_ID: String (3.0)", "ZONE: String (254.0)",
		"DIAM_IN: Integer64 (10.0)", "C_FACTOR: Real (24.1)", "FLOW_GPM: Real (24.7)", "ACTIVE: String (1.0)",
		"headloss_p: Real (24.3)", "headloss_1: Real (24.3)", "NOTE: String (1.0)"} {
		if !strings.Contains(s, want) {
			t.Errorf("ogrinfo -so lacks %q:\n%s", want, s)
		}
	}
	if strings.Contains(s, "ERROR") || strings.Contains(s, "Warning") {
		t.Errorf("ogrinfo complained:\n%s", s)
	}
	out, err = exec.Command(ogrinfo, "-ro", "-al", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ogrinfo -al: %v\n%s", err, out)
	}
	feats := regexp.MustCompile(`OGRFeature\(ranked\):\d+\n`).Split(string(out), -1)
	if len(feats) != 5 {
		t.Fatalf("ogrinfo printed %d features:\n%s", len(feats)-1, out)
	}
	f1, f3 := feats[1], feats[3]
	for _, want := range []string{"ZONE (String) = Ñorth Zone", "ACTIVE (String) = T", "LINESTRING (6591958.69213135 1840593.21016341,6592261.42944681 1840775.47270205)"} {
		if !strings.Contains(f1, want) {
			t.Errorf("feature 1 lacks %q:\n%s", want, f1)
		}
	}
	for _, want := range []string{"ZONE (String) = (null)", "DIAM_IN (Integer64) = (null)", "ACTIVE (String) = ?", "FLOW_GPM (Real) = 0.0000001"} {
		if !strings.Contains(f3, want) {
			t.Errorf("feature 3 lacks %q:\n%s", want, f3)
		}
	}
	if strings.Contains(f3, "LINESTRING") {
		t.Errorf("feature 3 should have a null geometry:\n%s", f3)
	}
	if !strings.Contains(feats[2], "MULTILINESTRING ((10 20,11 21),(11 21,12.5 -3,13 22))") {
		t.Errorf("feature 2:\n%s", feats[2])
	}
}

func TestShapefileLaunderNames(t *testing.T) {
	cases := []struct {
		name string
		in   []string
		want []string
	}{
		// GDAL 3.6.2 ogr2ogr laundered headloss_per_kft, headloss_per_mile to
		// headloss_p, headloss_1 in the pipes fixtures (its warnings, and the
		// .dbf names checked in TestShapefileGDALFixtures).
		{"truncate then number", []string{"headloss_per_kft", "headloss_per_mile"}, []string{"headloss_p", "headloss_1"}},
		{"short names kept", []string{"PIPE_ID", "diameter"}, []string{"PIPE_ID", "diameter"}},
		{"exactly 10 kept", []string{"abcdefghij"}, []string{"abcdefghij"}},
		{"duplicates ignore case", []string{"Zone", "ZONE"}, []string{"Zone", "ZONE_1"}},
		{"cut at a rune boundary", []string{"ÑÑÑÑÑÑ"}, []string{"ÑÑÑÑÑ"}},
		{"empty", []string{""}, []string{"FIELD"}},
		{"ten and more collisions", shpRepeatNames("install_year_", 12),
			[]string{"install_ye", "install__1", "install__2", "install__3", "install__4", "install__5", "install__6",
				"install__7", "install__8", "install__9", "install_10", "install_11"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got, err := shpLaunderNames(tc.in)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("got %q, want %q", got, tc.want)
			}
			for _, n := range got {
				if len(n) > 10 {
					t.Errorf("%q is over 10 bytes", n)
				}
			}
		})
	}
	if _, err := shpLaunderNames(shpRepeatNames("x_long_name_", 101)); err == nil {
		t.Error("101 names with one prefix: no error")
	}
}

func shpRepeatNames(prefix string, n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = prefix + string(rune('a'+i%26)) + strings.Repeat("z", i/26)
	}
	return out
}

// TestShapefileLaunderGDAL lets GDAL launder 12 colliding names and
// compares its .dbf names with ours (live ogr2ogr run).
func TestShapefileLaunderGDAL(t *testing.T) {
	ogr2ogr := requireTool(t, "ogr2ogr")
	names := shpRepeatNames("install_year_", 12)
	var props []string
	for i, n := range names {
		props = append(props, `"`+n+`":`+string(rune('0'+i%10)))
	}
	dir := t.TempDir()
	src := filepath.Join(dir, "in.geojson")
	os.WriteFile(src, []byte(`{"type":"FeatureCollection","features":[{"type":"Feature","properties":{`+
		strings.Join(props, ",")+`},"geometry":{"type":"Point","coordinates":[1,2]}}]}`), 0o644)
	if out, err := exec.Command(ogr2ogr, "-f", "ESRI Shapefile", filepath.Join(dir, "out.shp"), src).CombinedOutput(); err != nil {
		t.Fatalf("ogr2ogr: %v\n%s", err, out)
	}
	l, err := ReadShapefile(filepath.Join(dir, "out.shp"))
	if err != nil {
		t.Fatal(err)
	}
	var gdal []string
	for _, f := range l.Fields {
		gdal = append(gdal, f.Name)
	}
	ours, _ := shpLaunderNames(names)
	if !slices.Equal(gdal, ours) {
		t.Errorf("GDAL laundered to %q, we to %q", gdal, ours)
	}
}

// TestShapefileDeletedRecords flags a record deleted and checks that it is
// kept in place and listed (the documented choice).
func TestShapefileDeletedRecords(t *testing.T) {
	dir := shpCopyFixture(t, "pipes_2229")
	shpEdit(t, dir, ".dbf", func(b []byte) []byte {
		headerLen := int(binary.LittleEndian.Uint16(b[8:]))
		recLen := int(binary.LittleEndian.Uint16(b[10:]))
		b[headerLen+recLen] = '*' // record 2
		return b
	})
	l, err := ReadShapefile(filepath.Join(dir, "pipes_2229.shp"))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(l.Deleted, []int{2}) || len(l.Features.Features) != 4 || l.Features.Features[1].Properties["PIPE_ID"] != "P-102" {
		t.Errorf("deleted %v, %d features", l.Deleted, len(l.Features.Features))
	}
}

// FuzzShapefile feeds damaged parts to the decoder: it must return a layer
// or a *FieldError, never panic or allocate from an unchecked count. A
// plain `go test` runs only the seeds (the GDAL fixtures).
func FuzzShapefile(f *testing.F) {
	for _, stem := range []string{"pipes_2229", "pipes_26911", "demands_2229", "pipes_z_26911", "demands_z_26911", "pipes_m_26911"} {
		var parts [3][]byte
		for k, ext := range []string{".shp", ".shx", ".dbf"} {
			b, err := os.ReadFile(filepath.Join("testdata", "shp", stem+ext))
			if err != nil {
				f.Fatal(err)
			}
			parts[k] = b
		}
		f.Add(parts[0], parts[1], parts[2])
	}
	f.Fuzz(func(t *testing.T, shpB, shxB, dbfB []byte) {
		l, err := shpDecode(shpInput{shpName: "f.shp", shxName: "f.shx", dbfName: "f.dbf",
			shp: bytes.NewReader(shpB), shpSize: int64(len(shpB)), shx: shxB,
			dbf: bytes.NewReader(dbfB), dbfSize: int64(len(dbfB))})
		if err != nil {
			var fe *FieldError
			if !errors.As(err, &fe) {
				t.Fatalf("error %T %v, want *FieldError", err, err)
			}
			return
		}
		if n := (len(shxB) - shpHeaderSize) / shxEntrySize; len(l.Features.Features) != n {
			t.Fatalf("%d features for %d .shx entries", len(l.Features.Features), n)
		}
		if l.Z != nil && len(l.Z) != len(l.Features.Features) {
			t.Fatalf("%d Z rows for %d features", len(l.Z), len(l.Features.Features))
		}
	})
}

// BenchmarkShapefileRead reads a 10,000-line PolyLine shapefile of 5
// vertices and 4 attributes each, written by WriteShapefile.
func BenchmarkShapefileRead(b *testing.B) {
	l := &Layer{Columns: []Column{{Name: "PIPE_ID", Kind: String}, {Name: "DIAM_IN", Kind: Integer},
		{Name: "C_FACTOR", Kind: Real, Decimals: 1}, {Name: "ZONE", Kind: String}}}
	for i := range 10000 {
		x := float64(i)
		l.Rows = append(l.Rows, Row{Geometry: orb.LineString{{x, 0}, {x, 1}, {x + 1, 2}, {x + 2, 2}, {x + 3, 3}},
			Values: []any{"P-" + string(rune('A'+i%26)), i % 24, 100.5, "Ñorth Zone"}})
	}
	path := filepath.Join(b.TempDir(), "bench.shp")
	if _, err := WriteShapefile(path, l, ""); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadShapefile(path); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)*10000/b.Elapsed().Seconds(), "features/s")
}
