package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// inspect describes each layer: format, CRS, geometry, fields with nulls
// and samples, and a line layer's topology. The shapefile fixture was made
// by GDAL (gis/testdata/shp, commands in gis/shapefile_test.go); its
// values are those ogrinfo -al prints.
func TestInspect(t *testing.T) {
	demo := t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", demo); code != exitOK {
		t.Fatal(stderr)
	}
	shp := filepath.Join("..", "..", "gis", "testdata", "shp", "pipes_2229.shp")
	code, stdout, stderr := runHeadroom(t, "inspect", filepath.Join(demo, demoPipes), filepath.Join(demo, demoSources), shp)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{
		demoPipes, "GeoJSON", "EPSG:4326", "LineString 2551", "main_no", "QM-00001",
		"topology (snap tolerance 0.5 ft)", "1440 nodes", "dangling ends",
		demoSources, "Point 2", "hgl_ft",
		"pipes_2229.shp", "ESRI Shapefile", "EPSG:2229", "California zone 5", "MultiLineString 1", "null 1",
		"Ñorth Zone", "geometry is missing",
	} {
		if !strings.Contains(stdout, want) {
			t.Errorf("inspect output lacks %q:\n%s", want, stdout)
		}
	}
	layers := strings.Split(stdout, "\n\n") // a blank line between layers
	if len(layers) != 3 || !strings.Contains(layers[0], "topology") || strings.Contains(layers[1], "topology") {
		t.Errorf("want three layer sections, topology for the line layers only:\n%s", stdout)
	}
}

func TestInspectErrors(t *testing.T) {
	cases := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"inspect"}, exitUsage, "name at least one layer"},
		{[]string{"inspect", "--crs", "EPSG:99999", "x.shp"}, exitUsage, "--crs EPSG:99999"},
		{[]string{"inspect", "missing.geojson"}, exitError, "missing.geojson"},
	}
	for _, c := range cases {
		code, _, stderr := runHeadroom(t, c.args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want %d and %q", c.args, code, stderr, c.code, c.want)
		}
	}
}
