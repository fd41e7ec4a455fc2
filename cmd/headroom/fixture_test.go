package main

import (
	"path/filepath"
	"slices"
	"sync"
	"testing"

	"github.com/paulmach/orb/geojson"

	"headroom/gis"
)

// demoAnalysed is the built-in demo run, analysed once for the tests that
// only read its result (it takes several seconds).
var demoAnalysed = sync.OnceValues(func() (*result, error) {
	in, err := builtInDemo()
	if err != nil {
		return nil, err
	}
	return analyse(in)
})

// demoResult returns the shared demo analysis; callers must not change it.
func demoResult(t *testing.T) *result {
	t.Helper()
	r, err := demoAnalysed()
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// analyseConfig loads the config at configPath and runs the pipeline in
// process, failing the test on any error.
func analyseConfig(t *testing.T, configPath string) *result {
	t.Helper()
	cfg, err := loadConfig(configPath)
	if err != nil {
		t.Fatal(err)
	}
	r, err := analyse(&inputs{cfg: cfg, title: cfg.file})
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// writeCollections writes each collection as GeoJSON to dir under its name.
func writeCollections(t *testing.T, dir string, layers map[string]*geojson.FeatureCollection) {
	t.Helper()
	for name, fc := range layers { // each file on its own: the order does not matter
		b, err := fc.MarshalJSON()
		if err != nil {
			t.Fatal(err)
		}
		writeFile(t, filepath.Join(dir, name), string(b))
	}
}

// layerRows copies every row of l, packed or a view, into a slice.
func layerRows(l *gis.Layer) []gis.Row {
	rows := make([]gis.Row, l.Len())
	rd := l.Reader()
	for i := range rows {
		r := rd.Row(i)
		rows[i] = gis.Row{Geometry: r.Geometry, Values: slices.Clone(r.Values)}
	}
	return rows
}
