package main

import (
	"bytes"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"headroom/gis"
	"headroom/hydraulics"
)

// needGPM converts a flow to gpm for comparisons.
func needGPM(q hydraulics.Flow) float64 { return q.GPM() }

// The built-in table holds the IFC Appendix B figures DOMAIN.md §4.1
// confirms, and the lps spelling converts at 1 gpm = 0.0630901964 L/s
// (DOMAIN.md §3.7, exact from 1 US gal = 3.785411784 L).
func TestNeedTableFigures(t *testing.T) {
	cases := []struct {
		name    string
		extra   string
		class   string
		wantGPM float64
	}{
		// DOMAIN.md §4.1: B105.1, one- and two-family dwellings ≤ 3,600 ft² → 1,000 gpm [confirmed].
		{"built-in dwelling", "", "residential", 1000},
		// DOMAIN.md §4.1: 50 % reduction for a sprinklered dwelling in the 2012 text [confirmed] → 500 gpm.
		{"built-in sprinklered dwelling", "", "Residential_Sprinklered", 500},
		// DOMAIN.md §4.1: B105.2, Table B105.1(2) runs 1,500–8,000 gpm [confirmed]; the floor is 1,500.
		{"built-in other building", "", "commercial", 1500},
		{"gpm table", "[fire_flow.needed_gpm_by_land_use]\nR-1 = 1250\n", "r-1", 1250},
		// 63.0901964 L/s = 1,000 gpm exactly (DOMAIN.md §3.7: 1 gpm = 0.06309020 L/s).
		{"lps table", "[fire_flow.needed_lps_by_land_use]\n\"light industry\" = 63.0901964\n", " Light Industry ", 1000},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cfg, err := decodeConfig(badConfig+c.extra, "test")
			if err != nil {
				t.Fatal(err)
			}
			table, err := cfg.needTable()
			if err != nil {
				t.Fatal(err)
			}
			row, ok := needFind(table, c.class)
			if !ok {
				t.Fatalf("class %q not found in %+v", c.class, table)
			}
			if got := needGPM(row.flow); math.Abs(got-c.wantGPM) > 1e-6 {
				t.Errorf("%s: %.6f gpm, want %.0f", c.class, got, c.wantGPM)
			}
		})
	}
	// A config table replaces the built-in one whole.
	cfg, err := decodeConfig(badConfig+"[fire_flow.needed_gpm_by_land_use]\nfarm = 750\n", "test")
	if err != nil {
		t.Fatal(err)
	}
	table, _ := cfg.needTable()
	if _, ok := needFind(table, "residential"); ok || len(table) != 1 {
		t.Errorf("a config table should replace the built-in one, got %+v", table)
	}
}

// A table that cannot be meant stops the run with a message naming the key.
func TestNeedTableRejects(t *testing.T) {
	cases := []struct{ name, extra, want string }{
		{"both spellings", "[fire_flow.needed_gpm_by_land_use]\na = 1000\n[fire_flow.needed_lps_by_land_use]\na = 63\n", "keep one"},
		{"zero", "[fire_flow.needed_gpm_by_land_use]\nresidential = 0\n", "residential = 0: must be a number > 0"},
		{"negative", "[fire_flow.needed_lps_by_land_use]\nresidential = -60\n", "residential = -60: must be a number > 0 (lps)"},
		// gis.MaxNeededFireFlow: 12,000 gpm, the ISO ceiling (DOMAIN.md §4.2).
		{"above the ISO maximum", "[fire_flow.needed_gpm_by_land_use]\nmall = 12500\n", "above 12000 gpm"},
		{"lps above the ISO maximum", "[fire_flow.needed_lps_by_land_use]\nmall = 1000\n", "check the unit"},
		{"classes differing in case", "[fire_flow.needed_gpm_by_land_use]\nRes = 1000\nres = 1500\n", "differ only in case"},
		{"empty class", "[fire_flow.needed_gpm_by_land_use]\n\" \" = 1000\n", "class name is empty"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := decodeConfig(badConfig+c.extra, "test.toml")
			if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "test.toml") {
				t.Errorf("error %v, want one naming test.toml and containing %q", err, c.want)
			}
		})
	}
}

// needTown copies the corpus's clean town (four junctions fed by one tank)
// into a folder and adds a hydrant layer and config lines.
func needTown(t *testing.T, hydrants, config string) string {
	t.Helper()
	dir := t.TempDir()
	src := filepath.Join(corpusDir, "clean-town")
	for _, f := range []string{"pipes.geojson", "sources.geojson", "demands.geojson", "elevations.geojson", "headroom.toml"} {
		b, err := os.ReadFile(filepath.Join(src, f))
		if err != nil {
			t.Fatal(err)
		}
		if f == "headroom.toml" {
			b = append(b, "\n"+config...)
		}
		if err := os.WriteFile(filepath.Join(dir, f), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "hydrants.geojson"), []byte(hydrants), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir
}

// Hydrants on the clean town's junctions (invented), one per precedence case.
const needHydrants = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"hyd":"H1","nff":1750,"zoning":"commercial"},"geometry":{"type":"Point","coordinates":[-98.399,38.6]}},
{"type":"Feature","properties":{"hyd":"H2","nff":null,"zoning":"Commercial "},"geometry":{"type":"Point","coordinates":[-98.398,38.6]}},
{"type":"Feature","properties":{"hyd":"H3","zoning":"orchard"},"geometry":{"type":"Point","coordinates":[-98.398,38.601]}},
{"type":"Feature","properties":{"hyd":"H4","nff":"","zoning":""},"geometry":{"type":"Point","coordinates":[-98.399,38.601]}},
{"type":"Feature","properties":{"hyd":"H5","nff":"lots","zoning":"residential"},"geometry":{"type":"Point","coordinates":[-98.399,38.6]}},
{"type":"Feature","properties":{"hyd":"H6","zoning":3},"geometry":{"type":"Point","coordinates":[-98.398,38.6]}}
]}`

const needConfig = `[hydrants]
path = "hydrants.geojson"
[hydrants.fields]
id = "hyd"
needed_flow = "nff"
land_use = "zoning"
[fire_flow]
needed_gpm = 1250
[fire_flow.needed_gpm_by_land_use]
commercial = 2250
residential = 1000
"3" = 3000
`

// Precedence: the hydrant's own needed flow > its land-use class in the
// table > fire_flow.needed_gpm (issue 5, item 4); an unknown class gets the
// default and one problems.csv row naming the hydrant, field and class.
func TestNeedPrecedenceOnTinyLayer(t *testing.T) {
	dir := needTown(t, needHydrants, needConfig)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	hyd := readGeoJSONProperties(t, filepath.Join(out, "hydrants.geojson"))
	want := []struct {
		id    string
		gpm   float64
		basis string
	}{
		{"H1", 1750, needBasisField},   // own field wins over its class (2,250)
		{"H2", 2250, needBasisLandUse}, // null field; class matched in any case, spaces trimmed
		{"H3", 1250, needBasisDefault}, // class not in the table
		{"H4", 1250, needBasisDefault}, // neither given
		{"H5", 1000, needBasisLandUse}, // field not a number (reported by the reader), class used
		{"H6", 3000, needBasisLandUse}, // a numeric zoning code
	}
	if len(hyd) != len(want) {
		t.Fatalf("hydrants.geojson has %d rows, want %d", len(hyd), len(want))
	}
	for k, w := range want {
		h := hyd[k]
		t.Run(w.id, func(t *testing.T) {
			if h["hydrant_id"] != w.id || h["needed_basis"] != w.basis {
				t.Errorf("row %d: id %v basis %v, want %s %s", k+1, h["hydrant_id"], h["needed_basis"], w.id, w.basis)
			}
			needed, _ := h["needed_fire_flow_gpm"].(float64)
			if math.Abs(needed-w.gpm) > 0.05 { // written to 0.1 gpm
				t.Errorf("needed %.1f gpm, want %.0f", needed, w.gpm)
			}
			// deficit = max(0, needed − available), each written to 0.1 gpm.
			avail, ok := h["available_fire_flow_gpm"].(float64)
			deficit, _ := h["fire_flow_deficit_gpm"].(float64)
			if !ok || math.Abs(deficit-math.Max(0, w.gpm-avail)) > 0.11 {
				t.Errorf("deficit %v with needed %.0f and available %v", h["fire_flow_deficit_gpm"], w.gpm, h["available_fire_flow_gpm"])
			}
		})
	}
	var rows [][]string
	for _, r := range readCSV(t, filepath.Join(out, "problems.csv"))[1:] {
		if strings.Contains(r[4], "land-use class") {
			rows = append(rows, r)
		}
	}
	if len(rows) != 1 {
		t.Fatalf("%d land-use rows in problems.csv, want one (H3): %v", len(rows), rows)
	}
	r := rows[0]
	if r[0] != "hydrants.geojson" || r[1] != "3" || r[2] != "H3" || r[3] != "zoning" ||
		!strings.Contains(r[4], `"orchard"`) || !strings.Contains(r[5], "fire_flow.needed_gpm (1250 gpm)") ||
		!strings.Contains(r[5], "[fire_flow.needed_gpm_by_land_use]") {
		t.Errorf("problems.csv row %q", r)
	}
}

// The demo town with a land-use attribute on its hydrants (added here, in
// memory) and a table in the config: hydrants that keep their own needed
// flow keep it; the others take their class's figure, or the default with
// a problem row; available flow does not depend on the needed flow.
func TestNeedDemoLandUseTable(t *testing.T) {
	base := readGeoJSONProperties(t, filepath.Join(builtInRun(t), "hydrants.geojson")) // the demo as it is
	classes := []string{"residential", "commercial", "orchard"}
	table := map[string]float64{"residential": 1250, "commercial": 3000} // invented figures
	var own []float64
	r, err := needAnalyseDemo(t, func(in *inputs) {
		in.cfg.Hydrants.Fields.LandUse = "land_use"
		in.cfg.FireFlow.NeededGpmByLandUse = table
		for k, f := range in.hydrants.Features {
			f.Properties["land_use"] = classes[k%len(classes)]
			v, _ := f.Properties[in.cfg.Hydrants.Fields.NeededFlow].(float64)
			own = append(own, v)
			if k%2 == 0 {
				delete(f.Properties, in.cfg.Hydrants.Fields.NeededFlow)
			}
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.hydrants) != len(own) || len(base) != len(own) {
		t.Fatalf("%d hydrants, %d in the base run, %d in the layer", len(r.hydrants), len(base), len(own))
	}
	var changed, unknown int
	for k, h := range r.hydrants {
		wantGPM, wantBasis := own[k], needBasisField
		if k%2 == 0 {
			wantGPM, wantBasis = defaultNeededGpm, needBasisDefault
			if g, ok := table[classes[k%len(classes)]]; ok {
				wantGPM, wantBasis = g, needBasisLandUse
			} else {
				unknown++
			}
		}
		if math.Abs(needGPM(h.needed)-wantGPM) > 1e-6 || h.basis != wantBasis {
			t.Fatalf("hydrant %s (%s): needed %.3f gpm by %q, want %.0f by %q", h.ID, classes[k%3], needGPM(h.needed), h.basis, wantGPM, wantBasis)
		}
		b := base[k]
		if math.Abs(needGPM(h.needed)-b["needed_fire_flow_gpm"].(float64)) > 0.05 {
			changed++
		}
		// available flow does not depend on the needed flow (both written to 0.1 gpm)
		avail, ok := b["available_fire_flow_gpm"].(float64)
		if (h.res == nil) == ok || h.res != nil && math.Abs(h.res.Available.GPM()-avail) > 0.051 {
			t.Fatalf("hydrant %s: available flow %v in the base run, %+v with the table", h.ID, b["available_fire_flow_gpm"], h.res)
		}
	}
	if changed == 0 {
		t.Error("the land-use table changed no needed flow")
	}
	var rows int
	for _, p := range r.problems {
		if strings.Contains(p.What, "land-use class \"orchard\"") {
			rows++
		}
	}
	if rows != unknown {
		t.Errorf("%d problem rows for the unknown class, want one per hydrant that used it: %d", rows, unknown)
	}
	basis := r.hydrantOutput()
	last := slices.IndexFunc(basis.Columns, func(c gis.Column) bool { return c.Name == "needed_basis" })
	if last < 0 {
		t.Fatal("the hydrant layer has no needed_basis column")
	}
	for k, row := range basis.Rows {
		if row.Values[last] != r.hydrants[k].basis {
			t.Fatalf("row %d needed_basis %v, want %s", k+1, row.Values[last], r.hydrants[k].basis)
		}
	}
}

// needAnalyseDemo runs the built-in demo in memory, after edit changes its
// inputs.
func needAnalyseDemo(t *testing.T, edit func(*inputs)) (*result, error) {
	t.Helper()
	in, err := builtInDemo()
	if err != nil {
		t.Fatal(err)
	}
	if edit != nil {
		edit(in)
	}
	return analyse(in)
}

// `headroom init` lists the table with its placeholders and sources, and
// the table it writes (US and SI spellings) loads back to the same flows.
func TestNeedTemplate(t *testing.T) {
	code, stdout, stderr := runHeadroom(t, "init")
	if code != exitOK {
		t.Fatal(stderr)
	}
	for _, want := range []string{"[fire_flow.needed_gpm_by_land_use]", "PLACEHOLDERS", "fire authority", "land_use = \"\"",
		"residential = 1000  # IFC B105.1", "commercial = 1500  # IFC B105.2"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("template lacks %q", want)
		}
	}
	for _, units := range []string{"us", "si"} {
		t.Run(units, func(t *testing.T) {
			cfg, err := decodeConfig(badConfig+"[fire_flow.needed_gpm_by_land_use]\n\"R 1\" = 1250\nr2 = 2000\n", "test")
			if err != nil {
				t.Fatal(err)
			}
			cfg.Units = units
			cfg.Pipes.Fields.DiameterUnit = "in"
			var b bytes.Buffer
			if err := writeConfig(&b, cfg); err != nil {
				t.Fatal(err)
			}
			back, err := decodeConfig(b.String(), "written")
			if err != nil {
				t.Fatalf("%v\n%s", err, b.String())
			}
			if units == "si" && back.FireFlow.NeededLpsByLandUse == nil {
				t.Error("an SI config should be written with needed_lps_by_land_use")
			}
			table, _ := back.needTable()
			for _, c := range []struct {
				class string
				gpm   float64
			}{{"R 1", 1250}, {"r2", 2000}} {
				row, ok := needFind(table, c.class)
				// roundConfig keeps 9 significant figures: ±1e-5 gpm.
				if !ok || math.Abs(needGPM(row.flow)-c.gpm) > 1e-5 {
					t.Errorf("%s: %+v (found %t), want %.0f gpm", c.class, row, ok, c.gpm)
				}
			}
		})
	}
}

// With output.formats "shp", hydrants.shp holds one feature per hydrant
// with the same needed and available flows as hydrants.geojson, read back
// through GDAL (ogrinfo, ogr2ogr); hydrants.gpkg has the same count.
func TestNeedHydrantShapefile(t *testing.T) {
	ogrinfo := requireTool(t, "ogrinfo")
	ogr2ogr := requireTool(t, "ogr2ogr")
	dir, out := t.TempDir(), t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", dir); code != exitOK {
		t.Fatal(stderr)
	}
	cfgPath := filepath.Join(dir, demoConfigName)
	text, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	s := strings.Replace(string(text), `formats = ["geojson", "gpkg"]`, `formats = ["geojson", "gpkg", "shp"]`, 1)
	if s == string(text) {
		t.Fatal("demo config has no formats line to change")
	}
	if err := os.WriteFile(cfgPath, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runHeadroom(t, "run", "--config", cfgPath, "--out", out); code != exitOK {
		t.Fatal(stderr)
	}
	want := readGeoJSONProperties(t, filepath.Join(out, "hydrants.geojson"))
	for _, f := range []string{"hydrants.shp", "hydrants.gpkg"} {
		b, err := exec.Command(ogrinfo, "-ro", "-al", "-so", filepath.Join(out, f)).CombinedOutput()
		if err != nil {
			t.Fatalf("ogrinfo %s: %v\n%s", f, err, b)
		}
		if c := "Feature Count: " + strconv.Itoa(len(want)); !strings.Contains(string(b), c) {
			t.Errorf("%s: ogrinfo lacks %q:\n%s", f, c, b)
		}
	}
	back := filepath.Join(t.TempDir(), "hydrants_shp.geojson")
	if b, err := exec.Command(ogr2ogr, "-f", "GeoJSON", "-t_srs", "EPSG:4326", back, filepath.Join(out, "hydrants.shp")).CombinedOutput(); err != nil {
		t.Fatalf("ogr2ogr: %v\n%s", err, b)
	}
	got := readGeoJSONProperties(t, back)
	short := map[string]string{} // full name → .dbf name, from fields.csv
	for _, r := range readCSV(t, filepath.Join(out, "fields.csv"))[1:] {
		if r[0] == "hydrants.shp" {
			short[r[2]] = r[1]
		}
	}
	cols := []string{"hydrant_id", "needed_fire_flow_gpm", "available_fire_flow_gpm", "needed_basis"}
	for _, c := range cols {
		if short[c] == "" {
			t.Fatalf("fields.csv does not map hydrants.shp's %s: %v", c, short)
		}
	}
	if len(got) != len(want) {
		t.Fatalf("hydrants.shp has %d features, hydrants.geojson %d", len(got), len(want))
	}
	for k := range want {
		g, w := got[k], want[k]
		if g[short["hydrant_id"]] != w["hydrant_id"] || g[short["needed_basis"]] != w["needed_basis"] {
			t.Fatalf("feature %d: %v / %v, want %v / %v", k+1, g[short["hydrant_id"]], g[short["needed_basis"]], w["hydrant_id"], w["needed_basis"])
		}
		for _, c := range cols[1:3] {
			a, okA := g[short[c]].(float64)
			b, okB := w[c].(float64)
			if okA != okB || math.Abs(a-b) > 0.05 { // both written to 0.1 gpm
				t.Fatalf("hydrant %v %s: shapefile %v, GeoJSON %v", w["hydrant_id"], c, g[short[c]], w[c])
			}
		}
	}
}
