package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"headroom/gis"
)

// A small invented network, laid out on a local grid near lon −98.4,
// lat 38.6 (0.001° of longitude is about 87 m there). The reservoir feeds
// a chain P1–P3 with a branch P4; every other feature is a kind of bad input
// the issue lists. Coordinates are whole multiples of 0.001°.
const badPipes = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"P1","dia":8,"mat":"PVC","yr":2001},"geometry":{"type":"LineString","coordinates":[[-98.400,38.600],[-98.399,38.600]]}},
{"type":"Feature","properties":{"id":"P2","dia":8,"mat":"PVC","yr":2001},"geometry":{"type":"LineString","coordinates":[[-98.399,38.600],[-98.398,38.600]]}},
{"type":"Feature","properties":{"id":"P3","dia":6,"mat":"CI","yr":2031},"geometry":{"type":"LineString","coordinates":[[-98.398,38.600],[-98.397,38.600]]}},
{"type":"Feature","properties":{"id":"P4","dia":6,"mat":"CI","yr":1950},"geometry":{"type":"LineString","coordinates":[[-98.398,38.600],[-98.398,38.601]]}},
{"type":"Feature","properties":{"id":"P5","dia":-6,"mat":"CI","yr":1950},"geometry":{"type":"LineString","coordinates":[[-98.397,38.600],[-98.396,38.600]]}},
{"type":"Feature","properties":{"id":"P6","dia":"eight","mat":"CI","yr":1950},"geometry":{"type":"LineString","coordinates":[[-98.397,38.600],[-98.397,38.601]]}},
{"type":"Feature","properties":{"id":"P7","dia":8,"mat":"CI","yr":1950},"geometry":{"type":"Point","coordinates":[-98.396,38.601]}},
{"type":"Feature","properties":{"id":"P2","dia":8,"mat":"DI","yr":1990},"geometry":{"type":"LineString","coordinates":[[-98.399,38.600],[-98.399,38.601]]}},
{"type":"Feature","properties":{"id":"P9","dia":8,"mat":"DI","yr":1990},"geometry":{"type":"LineString","coordinates":[[-98.380,38.610],[-98.379,38.610]]}}
]}`

const badSources = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"R1","grade":900},"geometry":{"type":"Point","coordinates":[-98.400,38.600]}}]}`

const badDemands = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"D1","q":50},"geometry":{"type":"Point","coordinates":[-98.397,38.6001]}},
{"type":"Feature","properties":{"id":"D2","q":20},"geometry":{"type":"Point","coordinates":[-98.398,38.6011]}}]}`

const badElevations = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"z":780},"geometry":{"type":"Point","coordinates":[-98.400,38.600]}},
{"type":"Feature","properties":{"z":770},"geometry":{"type":"Point","coordinates":[-98.397,38.601]}}]}`

const badConfig = `units = "us"
analysis_year = 2026
[pipes]
path = "pipes.geojson"
[pipes.fields]
id = "id"
diameter = "dia"
material = "mat"
install_year = "yr"
[sources]
path = "sources.geojson"
[sources.fields]
id = "id"
grade = "grade"
[demands]
path = "demands.geojson"
peak_hour_factor = 2.5
[demands.fields]
id = "id"
demand = "q"
[elevations]
path = "elevations.geojson"
[elevations.fields]
elevation = "z"
`

// writeFixture writes the bad-input town into a temp folder; edit may
// change any file's text before it is written.
func writeFixture(t *testing.T, edit func(name, text string) string) string {
	t.Helper()
	dir := t.TempDir()
	files := map[string]string{
		"pipes.geojson": badPipes, "sources.geojson": badSources, "demands.geojson": badDemands,
		"elevations.geojson": badElevations, "headroom.toml": badConfig,
	}
	for name, text := range files {
		if edit != nil {
			text = edit(name, text)
		}
		if text == "" {
			continue
		}
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// Problems that do not stop the run go to problems.csv with file, feature,
// id and field; every pipe stays in pipes.geojson; unscored pipes say why.
func TestBadInputIsReportedAndNothingIsLost(t *testing.T) {
	dir := writeFixture(t, nil)
	out := t.TempDir()
	code, stdout, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	rows := readCSV(t, filepath.Join(out, "problems.csv"))
	find := func(feature, id, field, what string) {
		t.Helper()
		for _, r := range rows[1:] {
			if r[0] == "pipes.geojson" && r[1] == feature && r[2] == id && r[3] == field && strings.Contains(r[4], what) && r[5] != "" {
				return
			}
		}
		t.Errorf("problems.csv lacks feature %s (%s) field %q: %q\n%v", feature, id, field, what, rows)
	}
	find("3", "P3", "yr", "2031")        // a year in the future
	find("5", "P5", "dia", "-6")         // a negative diameter
	find("6", "P6", "dia", "eight")      // a non-numeric field
	find("7", "P7", "geometry", "Point") // a wrong geometry type
	find("8", "P2", "id", "P2")          // a duplicate id
	var island bool
	for _, r := range rows[1:] {
		island = island || strings.Contains(r[4], "no source reaches")
	}
	if !island {
		t.Errorf("problems.csv does not report the part of the network with no source:\n%v", rows)
	}

	pipes := readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson"))
	if len(pipes) != 9 {
		t.Fatalf("pipes.geojson has %d features, the input 9", len(pipes))
	}
	for _, want := range []struct {
		feature int
		reason  string
	}{{5, "not in the network"}, {6, "not in the network"}, {7, "not in the network"}, {9, "no source reaches"}} {
		p := pipes[want.feature-1]
		if p["rank"] != nil || !strings.Contains(fmt.Sprint(p["reasons"]), want.reason) {
			t.Errorf("feature %d: rank %v, reasons %q; want unscored with %q", want.feature, p["rank"], p["reasons"], want.reason)
		}
	}
	if pipes[0]["rank"] == nil || pipes[2]["rank"] == nil {
		t.Errorf("P1 and P3 should be scored: %v, %v", pipes[0], pipes[2])
	}
	if !strings.Contains(stdout, "Problems found in the input: ") {
		t.Errorf("summary does not count the problems:\n%s", stdout)
	}
}

// Errors that stop the run name the file (and the config key to check).
func TestFatalInputErrors(t *testing.T) {
	cases := []struct {
		name string
		edit func(name, text string) string
		want []string
	}{
		{"missing pipe file", func(n, s string) string {
			if n == "pipes.geojson" {
				return ""
			}
			return s
		}, []string{"pipes.geojson", "pipes.path"}},
		{"field in no feature", func(n, s string) string {
			if n == "headroom.toml" {
				return strings.Replace(s, `diameter = "dia"`, `diameter = "DIAM"`, 1)
			}
			return s
		}, []string{"pipes.geojson", "DIAM", "pipes.fields.diameter"}},
		{"no peaking factor", func(n, s string) string {
			if n == "headroom.toml" {
				return strings.Replace(s, "peak_hour_factor = 2.5\n", "", 1)
			}
			return s
		}, []string{"headroom.toml", "demands.peak_hour_factor"}},
		{"unknown key", func(n, s string) string {
			if n == "headroom.toml" {
				return strings.Replace(s, "[network]", "", 1) + "[network]\nsnap_tolerence_ft = 1\n"
			}
			return s
		}, []string{"unknown key", "network.snap_tolerence_ft"}},
		{"both spellings", func(n, s string) string {
			if n == "headroom.toml" {
				return s + "[criteria]\nmin_pressure_psi = 40\nmin_pressure_kpa = 280\n"
			}
			return s
		}, []string{"criteria.min_pressure_psi", "criteria.min_pressure_kpa"}},
		{"source far from the network", func(n, s string) string {
			if n == "sources.geojson" {
				return strings.Replace(s, "[-98.400,38.600]", "[-98.300,38.700]", 1)
			}
			return s
		}, []string{"sources.geojson", "no source"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFixture(t, c.edit)
			code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", t.TempDir())
			if code != exitError {
				t.Fatalf("exit %d, want %d; stderr %s", code, exitError, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr lacks %q:\n%s", w, stderr)
				}
			}
		})
	}
}

// Outputs never overwrite inputs.
func TestOutputsNeverOverwriteInputs(t *testing.T) {
	dir := writeFixture(t, nil)
	before, _ := os.ReadFile(filepath.Join(dir, "pipes.geojson"))
	code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", dir)
	if code != exitError || !strings.Contains(stderr, "inputs are never overwritten") {
		t.Errorf("exit %d, stderr %q; want a refusal", code, stderr)
	}
	after, _ := os.ReadFile(filepath.Join(dir, "pipes.geojson"))
	if string(before) != string(after) {
		t.Error("the input pipe layer was changed")
	}
}

// A solve that does not converge is an error and writes nothing
// (DESIGN.md: refuse to pretend; DOMAIN.md §6.4: never emit results from
// a failed solve).
func TestNoConvergenceWritesNothing(t *testing.T) {
	dir := writeFixture(t, func(n, s string) string {
		if n == "headroom.toml" {
			return s + "[solver]\nmax_iterations = 1\n"
		}
		return s
	})
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out)
	if code != exitSolver || !strings.Contains(stderr, "no results were written") {
		t.Errorf("exit %d, stderr %q; want a convergence error", code, stderr)
	}
	if stdout != "" {
		t.Errorf("a failed run printed a summary:\n%s", stdout)
	}
	if entries, _ := os.ReadDir(out); len(entries) > 0 {
		t.Errorf("a failed run wrote %d files", len(entries))
	}
}

// A pipe whose geometry is a point stays a row of pipes.shp, as a null
// shape: a shapefile holds one shape type, and nothing is lost.
func TestShapefileOutputKeepsEveryPipe(t *testing.T) {
	dir := writeFixture(t, func(n, s string) string {
		if n == "headroom.toml" {
			return s + "[output]\nformats = [\"shp\"]\n"
		}
		return s
	})
	out := t.TempDir()
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	l, err := gis.ReadShapefile(filepath.Join(out, "pipes.shp"))
	if err != nil {
		t.Fatal(err)
	}
	if n := len(l.Features.Features); n != 9 {
		t.Fatalf("pipes.shp has %d records, the input 9", n)
	}
	if g := l.Features.Features[6].Geometry; g != nil {
		t.Errorf("record 7 (a Point in the pipe layer) is %v, want a null shape", g)
	}
}

// Hostile text from the layers never becomes a spreadsheet formula in the
// CSV outputs (OWASP CSV-injection guidance: prefix a leading = + - @ tab
// or CR with '), while the GeoJSON keeps the data exactly as given.
func TestFormulaLikeIDsAreNeutralised(t *testing.T) {
	const hostile = `=HYPERLINK("http://x","y")`
	dir := writeFixture(t, func(n, s string) string {
		if n == "pipes.geojson" {
			s = strings.Replace(s, `"id":"P1"`, `"id":"=HYPERLINK(\"http://x\",\"y\")"`, 1)
			return strings.Replace(s, `"mat":"PVC","yr":2001},"geometry":{"type":"LineString","coordinates":[[-98.399`, `"mat":"@SUM(A1)","yr":2001},"geometry":{"type":"LineString","coordinates":[[-98.399`, 1)
		}
		return s
	})
	out := t.TempDir()
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var id, mat bool
	for _, row := range readCSV(t, filepath.Join(out, "ranked.csv"))[1:] {
		for _, cell := range row {
			if strings.HasPrefix(cell, "=") || strings.HasPrefix(cell, "@") {
				t.Errorf("ranked.csv cell %q would run as a formula", cell)
			}
		}
		id = id || row[1] == "'"+hostile
		mat = mat || row[5] == "'@SUM(A1)"
	}
	if !id || !mat {
		t.Errorf("ranked.csv lacks the neutralised id (%v) or material (%v)", id, mat)
	}
	pipes := readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson"))
	if pipes[0]["pipe_id"] != hostile || pipes[1]["material"] != "@SUM(A1)" {
		t.Errorf("pipes.geojson must keep the data as given: %v, %v", pipes[0]["pipe_id"], pipes[1]["material"])
	}
}

// Infinite or NaN quantities in the config are refused with the key named.
func TestConfigRejectsNonFinite(t *testing.T) {
	for _, extra := range []string{"[criteria]\nmax_velocity_fps = inf\n", "[network]\nsnap_tolerance_ft = nan\n"} {
		dir := writeFixture(t, func(n, s string) string {
			if n == "headroom.toml" {
				return s + extra
			}
			return s
		})
		code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", t.TempDir())
		if code != exitError || !strings.Contains(stderr, "must be a finite number") {
			t.Errorf("%q: exit %d, stderr %q", extra, code, stderr)
		}
	}
}

// Paths in the config are relative to the config file, and may climb out
// of its folder with "..": the layers of a shared GIS folder are read in
// place, never copied or written to.
func TestConfigPathsWithDotDot(t *testing.T) {
	dir := writeFixture(t, nil)
	sub := filepath.Join(dir, "runs", "2026")
	if err := os.MkdirAll(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	cfg := strings.ReplaceAll(badConfig, `path = "`, `path = "../../`)
	if err := os.WriteFile(filepath.Join(sub, "headroom.toml"), []byte(cfg), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(sub, "out")
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(sub, "headroom.toml"), "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if n := len(readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson"))); n != 9 {
		t.Errorf("pipes.geojson has %d features, want 9", n)
	}
}
