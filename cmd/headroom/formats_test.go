package main

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"headroom/gis"
)

// demoInStatePlane writes the demo town and converts its layers with GDAL,
// as a utility's data would arrive: the mains as a shapefile in NAD83 /
// Kansas North (US survey feet, EPSG:3419), the supplies as a GeoPackage in
// NAD83 / UTM zone 14N (metres, EPSG:26914), demands and spot heights left
// in lon/lat GeoJSON. It returns the folder and the config path.
//
// Commands (GDAL 3.6.2, the version on the project's machines):
//
//	ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:3419 -lco ENCODING=UTF-8 mains_3419.shp quillmere-mains.geojson
//	ogr2ogr -f GPKG -t_srs EPSG:26914 -nln supplies supplies_26914.gpkg quillmere-supplies.geojson
func demoInStatePlane(t *testing.T) (string, string) {
	t.Helper()
	ogr2ogr := requireTool(t, "ogr2ogr")
	dir := t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", dir); code != exitOK {
		t.Fatal(stderr)
	}
	for _, args := range [][]string{
		{"-f", "ESRI Shapefile", "-t_srs", "EPSG:3419", "-lco", "ENCODING=UTF-8", "mains_3419.shp", demoPipes},
		{"-f", "GPKG", "-t_srs", "EPSG:26914", "-nln", "supplies", "supplies_26914.gpkg", demoSources},
	} {
		cmd := exec.Command(ogr2ogr, args...)
		cmd.Dir = dir
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("ogr2ogr %v: %v\n%s", args, err, out)
		}
	}
	cfgPath := filepath.Join(dir, demoConfigName)
	text, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	s := strings.Replace(string(text), `path = "`+demoPipes+`"`, `path = "mains_3419.shp"`, 1)
	s = strings.Replace(s, `path = "`+demoSources+`"`, `path = "supplies_26914.gpkg"`, 1)
	s = strings.Replace(s, `formats = ["geojson", "gpkg"]`, `formats = ["geojson", "gpkg", "shp"]`, 1)
	if err := os.WriteFile(cfgPath, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, cfgPath
}

// The demo town from a State Plane shapefile, a UTM GeoPackage and lon/lat
// GeoJSON ranks its mains as the all-GeoJSON run does (issue: same ranking
// from shapefiles in a State Plane CRS). Lengths differ only by the grid
// scale of the projection (within 0.05 %), so scores agree to 0.1 and the
// order of every pipe that scores above zero is the same.
func TestStatePlaneLayersRankAsGeoJSON(t *testing.T) {
	dir, cfgPath := demoInStatePlane(t)
	out := t.TempDir()
	code, stdout, stderr := runHeadroom(t, "run", "--config", cfgPath, "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	want := readCSV(t, filepath.Join(builtInRun(t), "ranked.csv"))
	got := readCSV(t, filepath.Join(out, "ranked.csv"))
	if len(got) != len(want) {
		t.Fatalf("%d ranked rows, want %d", len(got), len(want))
	}
	lengthCol := columnIndex(t, want[0], "length_ft")
	for k := 1; k < len(want); k++ {
		ws, _ := strconv.ParseFloat(want[k][3], 64)
		gs, _ := strconv.ParseFloat(got[k][3], 64)
		if ws > 0 && got[k][1] != want[k][1] {
			t.Errorf("rank %d: pipe %s, want %s", k, got[k][1], want[k][1])
		}
		if math.Abs(ws-gs) > 0.1 {
			t.Errorf("rank %d: score %.1f, want %.1f", k, gs, ws)
		}
	}
	// Grid lengths of the same pipes match geodesic lengths within 0.05 %
	// (State Plane zones keep scale error within about 1:10,000).
	byID := map[string]float64{}
	for _, row := range want[1:] {
		byID[row[1]], _ = strconv.ParseFloat(row[lengthCol], 64)
	}
	for _, row := range got[1:] {
		g, _ := strconv.ParseFloat(row[lengthCol], 64)
		if w := byID[row[1]]; w > 1 && math.Abs(g-w)/w > 5e-4 {
			t.Errorf("pipe %s: grid length %.1f ft, geodesic %.1f ft", row[1], g, w)
		}
	}
	if !strings.Contains(stdout, "mains_3419.shp") {
		t.Errorf("summary does not name the shapefile:\n%s", stdout)
	}
	checkOnTopOfInputs(t, dir, out)
}

// checkOnTopOfInputs: the output layers lie exactly on the inputs (issue:
// "open in a GIS viewer exactly on top of the inputs"). pipes.gpkg and
// pipes.shp keep the shapefile's State Plane coordinates to 0.01 ft, and
// pipes.geojson the lon/lat of the original demo layer to 1e-8 degree
// (about 1 mm).
func checkOnTopOfInputs(t *testing.T, dir, out string) {
	t.Helper()
	in, err := gis.ReadShapefile(filepath.Join(dir, "mains_3419.shp"))
	if err != nil {
		t.Fatal(err)
	}
	gp, err := gis.ReadGeoPackage(filepath.Join(out, "pipes.gpkg"), "pipes")
	if err != nil {
		t.Fatal(err)
	}
	if gp.SRS.Organization != "EPSG" || gp.SRS.OrgID != 3419 {
		t.Errorf("pipes.gpkg SRS %s %d, want EPSG 3419", gp.SRS.Organization, gp.SRS.OrgID)
	}
	shp, err := gis.ReadShapefile(filepath.Join(out, "pipes.shp"))
	if err != nil {
		t.Fatal(err)
	}
	lonlat, err := gis.ReadCollection(filepath.Join(dir, demoPipes), "pipes")
	if err != nil {
		t.Fatal(err)
	}
	js, err := gis.ReadCollection(filepath.Join(out, "pipes.geojson"), "pipes")
	if err != nil {
		t.Fatal(err)
	}
	for i, f := range in.Features.Features {
		want := f.Geometry.(orb.LineString)
		for _, c := range []struct {
			name string
			g    orb.Geometry
			tol  float64
			ref  orb.LineString
		}{
			{"pipes.gpkg", gp.Features.Features[i].Geometry, 0.01, want},
			{"pipes.shp", shp.Features.Features[i].Geometry, 0.01, want},
			{"pipes.geojson", js.Features[i].Geometry, 1e-8, lonlat.Features[i].Geometry.(orb.LineString)},
		} {
			got, ok := c.g.(orb.LineString)
			if !ok || len(got) != len(c.ref) {
				t.Fatalf("%s feature %d: geometry %v, want %v", c.name, i+1, c.g, c.ref)
			}
			for k := range got {
				if math.Abs(got[k][0]-c.ref[k][0]) > c.tol || math.Abs(got[k][1]-c.ref[k][1]) > c.tol {
					t.Fatalf("%s feature %d vertex %d: %v, want %v ± %g", c.name, i+1, k, got[k], c.ref[k], c.tol)
				}
			}
		}
		// The attributes too: pipes.gpkg holds pipes.geojson's values, field for field.
		gpProps, jsProps := gp.Features.Features[i].Properties, js.Features[i].Properties
		if len(gpProps) != len(jsProps) {
			t.Fatalf("pipes.gpkg feature %d: %d fields, pipes.geojson %d", i+1, len(gpProps), len(jsProps))
		}
		for k, v := range jsProps {
			if a, b := canonicalValue(gpProps[k]), canonicalValue(v); a != b {
				t.Fatalf("pipes.gpkg feature %d: %s = %v, pipes.geojson has %v", i+1, k, a, b)
			}
		}
	}
}

// canonicalValue is a property value read from GeoJSON (json.Number) or a
// GeoPackage (int64, float64) as one comparable value: numbers as float64.
func canonicalValue(v any) any {
	switch x := v.(type) {
	case json.Number:
		if f, err := x.Float64(); err == nil {
			return f
		}
	case int64:
		return float64(x)
	}
	return v
}

// Every layer headroom writes opens in GDAL with the right feature count,
// fields and coordinate system (issue 3, tests that must exist).
func TestEveryOutputOpensInGDALWithItsCRS(t *testing.T) {
	ogrinfo := requireTool(t, "ogrinfo")
	_, cfgPath := demoInStatePlane(t)
	out := t.TempDir()
	if code, _, stderr := runHeadroom(t, "run", "--config", cfgPath, "--out", out); code != exitOK {
		t.Fatal(stderr)
	}
	pipes := len(readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson")))
	nodes := len(readGeoJSONProperties(t, filepath.Join(out, "nodes.geojson")))
	hydrants := len(readGeoJSONProperties(t, filepath.Join(out, "hydrants.geojson")))
	cases := []struct {
		file  string
		count int
		crs   string
		field string
	}{
		{"pipes.geojson", pipes, `ID["EPSG",4326]`, "headloss_ft_per_kft: Real"},
		{"nodes.geojson", nodes, `ID["EPSG",4326]`, "pressure_psi: Real"},
		{"pipes.gpkg", pipes, `ID["EPSG",3419]`, "headloss_ft_per_kft: Real"},
		{"nodes.gpkg", nodes, `ID["EPSG",3419]`, "pressure_psi: Real"},
		{"hydrants.geojson", hydrants, `ID["EPSG",4326]`, "available_fire_flow_gpm: Real"},
		{"hydrants.gpkg", hydrants, `ID["EPSG",3419]`, "nfpa_class: String"},
		{"pipes.shp", pipes, "Kansas North", "headloss_f: Real"},
		{"nodes.shp", nodes, "Kansas North", "pressure_p: Real"},
	}
	for _, c := range cases {
		b, err := exec.Command(ogrinfo, "-ro", "-al", "-so", filepath.Join(out, c.file)).CombinedOutput()
		if err != nil {
			t.Fatalf("ogrinfo %s: %v\n%s", c.file, err, b)
		}
		s := string(b)
		for _, want := range []string{"Feature Count: " + strconv.Itoa(c.count), c.crs, c.field} {
			if !strings.Contains(s, want) {
				t.Errorf("%s: ogrinfo lacks %q", c.file, want)
			}
		}
	}
	fields := readCSV(t, filepath.Join(out, "fields.csv"))
	var found bool
	for _, r := range fields[1:] {
		found = found || (r[0] == "pipes.shp" && r[1] == "headloss_f" && r[2] == "headloss_ft_per_kft" && strings.Contains(r[3], "1,000 ft"))
	}
	if !found {
		t.Errorf("fields.csv does not map headloss_f to headloss_ft_per_kft with its unit:\n%v", fields)
	}
}

func columnIndex(t *testing.T, header []string, name string) int {
	t.Helper()
	for i, c := range header {
		if c == name {
			return i
		}
	}
	t.Fatalf("no column %q in %v", name, header)
	return -1
}

// A shapefile without its .prj is refused with a message naming the config
// key; pipes.crs or --crs then says what it is. A GeoJSON layer in State
// Plane feet with the older crs member (GDAL writes
// "urn:ogc:def:crs:EPSG::3419" for `ogr2ogr -f GeoJSON -t_srs EPSG:3419`)
// is read in that CRS. All three runs rank as the lon/lat run does.
func TestUnlabelledLayersAndCRSMember(t *testing.T) {
	ogr2ogr := requireTool(t, "ogr2ogr")
	dir, cfgPath := demoInStatePlane(t)
	cmd := exec.Command(ogr2ogr, "-f", "GeoJSON", "-t_srs", "EPSG:3419", "demands_3419.geojson", demoDemands)
	cmd.Dir = dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("ogr2ogr: %v\n%s", err, out)
	}
	if err := os.Remove(filepath.Join(dir, "mains_3419.prj")); err != nil {
		t.Fatal(err)
	}
	text, _ := os.ReadFile(cfgPath)
	cfg := strings.Replace(string(text), `path = "`+demoDemands+`"`, `path = "demands_3419.geojson"`, 1)
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runHeadroom(t, "run", "--config", cfgPath, "--out", t.TempDir())
	if code != exitError || !strings.Contains(stderr, "pipes.crs") || !strings.Contains(stderr, "mains_3419.shp") {
		t.Fatalf("a shapefile without .prj: exit %d, stderr %q; want an error naming pipes.crs", code, stderr)
	}
	want := readCSV(t, filepath.Join(builtInRun(t), "ranked.csv"))
	// The first crs key of the written config is the one under [pipes].
	withKey := strings.Replace(cfg, `crs = ""`, `crs = "EPSG:3419"`, 1)
	if withKey == cfg {
		t.Fatal("could not set pipes.crs in the demo config")
	}
	if err := os.WriteFile(filepath.Join(dir, "keyed.toml"), []byte(withKey), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, args := range [][]string{
		{"run", "--config", filepath.Join(dir, "keyed.toml")},
		{"run", "--config", cfgPath, "--crs", "EPSG:3419"},
	} {
		out := t.TempDir()
		code, _, stderr := runHeadroom(t, append(args, "--out", out)...)
		if code != exitOK {
			t.Fatalf("%v: exit %d: %s", args, code, stderr)
		}
		got := readCSV(t, filepath.Join(out, "ranked.csv"))
		for k := 1; k <= 10; k++ {
			if got[k][1] != want[k][1] {
				t.Errorf("%v: rank %d is %s, want %s", args, k, got[k][1], want[k][1])
			}
		}
	}
}
