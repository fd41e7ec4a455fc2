package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"headroom/gis"
	"headroom/hydraulics"
)

// The aging tests run a chain of mains in the invented hamlet of
// Brindlecombe (lon −98.4, lat 38.6): node k at 0.004° of longitude east of
// node k−1, a tank at node 0, a little demand at every other node, ground
// at 0 ft, analysis year 2026.

// agePipe is one main of the chain, from node k−1 to node k (k = its
// position + 1). Empty strings and zeros leave a property out.
type agePipe struct {
	material  string
	dia       float64 // in
	year      int
	lined     string // the lined_year property as JSON ("1996", `"n/a"`); "" = none
	measuredC float64
	zone      string
}

// ageRun writes the chain and a config with extra [aging] lines, and
// returns the analysis.
func ageRun(t *testing.T, pipes []agePipe, agingLines string) *result {
	t.Helper()
	dir := t.TempDir()
	write := func(name, text string) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	at := func(k int) string { return fmt.Sprintf("[%.3f,38.6]", -98.4+0.004*float64(k)) }
	collection := func(fs []string) string {
		return `{"type":"FeatureCollection","features":[` + strings.Join(fs, ",\n") + "]}\n"
	}
	point := func(k int, props string) string {
		return `{"type":"Feature","properties":{` + props + `},"geometry":{"type":"Point","coordinates":` + at(k) + `}}`
	}
	var fs, demands, heights []string
	for i, p := range pipes {
		props := fmt.Sprintf(`"id":"BC-%d","dia_in":%g,"material":%q,"year":%d,"len_ft":1000,"zone":%q`, i+1, p.dia, p.material, p.year, p.zone)
		if p.lined != "" {
			props += `,"lined":` + p.lined
		}
		if p.measuredC > 0 {
			props += fmt.Sprintf(`,"c":%g`, p.measuredC)
		}
		fs = append(fs, fmt.Sprintf(`{"type":"Feature","properties":{%s},"geometry":{"type":"LineString","coordinates":[%s,%s]}}`, props, at(i), at(i+1)))
		demands = append(demands, point(i+1, fmt.Sprintf(`"meter":"M%d","gpm":5`, i+1)))
	}
	for k := 0; k <= len(pipes); k++ {
		heights = append(heights, point(k, `"z_ft":0`))
	}
	write("pipes.geojson", collection(fs))
	write("sources.geojson", collection([]string{point(0, `"name":"Tank","hgl_ft":200`)}))
	write("demands.geojson", collection(demands))
	write("elevations.geojson", collection(heights))
	write("headroom.toml", `units = "us"
analysis_year = 2026
[pipes]
path = "pipes.geojson"
[pipes.fields]
id = "id"
diameter = "dia_in"
material = "material"
install_year = "year"
measured_c = "c"
lined_year = "lined"
zone = "zone"
length = "len_ft"
[sources]
path = "sources.geojson"
[sources.fields]
id = "name"
grade = "hgl_ft"
[demands]
path = "demands.geojson"
peak_hour_factor = 2.5
[demands.fields]
id = "meter"
demand = "gpm"
[elevations]
path = "elevations.geojson"
[elevations.fields]
elevation = "z_ft"
[fire_flow]
enabled = false
[aging]
`+agingLines)
	return analyseConfig(t, filepath.Join(dir, "headroom.toml"))
}

// ageSW is the Sharp & Walski C (DOMAIN.md §2.3) computed here in feet:
// C = 18 − 37.2·log10((e0 + a·t)/D) with the default e0 = 0.00085 ft and
// Lamont's moderate a = 0.003 in/yr = 0.00025 ft/yr (DOMAIN.md §2.4, §2.6).
func ageSW(ageYears, dIn float64) float64 {
	return 18 - 37.2*math.Log10((0.00085+0.00025*ageYears)/(dIn/12))
}

// ageColumn returns pipe i's value in the pipes layer's column name.
func ageColumn(t *testing.T, l *gis.Layer, i int, name string) any {
	t.Helper()
	for k, c := range l.Columns {
		if c.Name == name {
			return l.Reader().Row(i).Values[k]
		}
	}
	t.Fatalf("pipes layer has no column %s", name)
	return nil
}

func TestAgeDerateOnAChain(t *testing.T) {
	r := ageRun(t, []agePipe{
		{material: "CI", dia: 8, year: 1966, zone: "Upper"},                // 1: growth model, zone factor
		{material: "CI", dia: 8, year: 1926, lined: "1996", zone: "Lower"}, // 2: lined 30 years ago
		{material: "cast iron", dia: 8, year: 1950, measuredC: 70},         // 3: measured overrides
		{material: "PVC", dia: 8, year: 2026},                              // 4: new plastic
		{material: "CI", dia: 12, year: 2026},                              // 5: new cast iron
		{material: "CI", dia: 8, year: 1966, lined: "1950", zone: "Lower"}, // 6: lined before laid
		{material: "DI", dia: 8, year: 1990, lined: `"n/a"`},               // 7: lining year not a number
		{material: "steel", dia: 8, year: 2006},                            // 8: steel, growth model
		{material: "DI", dia: 8, year: 2000, lined: `""`},                  // 9: empty = not lined
	}, `[aging.zone_factor]
"Upper" = 0.9
"Nowhere" = 1.1
`)
	pipes := r.pipeLayer()
	tests := []struct {
		name    string
		pipe    int
		cFactor float64
		cModel  float64
		source  string
		basis   string
		why     string
	}{
		{"growth model × zone", 0, 0.9 * ageSW(60, 8), 0.9 * ageSW(60, 8), "growth model", "× 0.9 zone Upper",
			"DOMAIN.md §2.3 formula, §2.6 defaults; zone factor 0.9 on the model C"},
		// CML curve 140 new, −0.2/yr (DOMAIN.md §2.1 cement-lined 140, §2.5, §2.6 step 3).
		{"lined resets the age", 1, 140 - 0.2*30, 140 - 0.2*30, "lined", "lined 1996, CML 30 yr",
			"age counted from the lining year, not from 1926"},
		{"measured overrides", 2, 70, ageSW(76, 8), "measured", "measured", "DESIGN.md: a measured C overrides the models"},
		{"new PVC", 3, 150, 150, "table", "aged PVC 0 yr", "DOMAIN.md §2.1 PVC 150"},
		// The model's 132.2 at 12 in is held at cast iron's new C.
		{"new cast iron", 4, 130, 130, "growth model", "aged CI 0 yr", "DOMAIN.md §2.1 new cast iron 130, §2.3 clamp"},
		{"lining before laying ignored", 5, ageSW(60, 8), ageSW(60, 8), "growth model", "aged CI 60 yr", "problem row; age from the install year"},
		{"lining not a number ignored", 6, 140 - 0.2*36, 140 - 0.2*36, "table", "aged DI 36 yr", "DI curve (DOMAIN.md §2.1, §2.6)"},
		{"steel", 7, math.Min(120, ageSW(20, 8)), math.Min(120, ageSW(20, 8)), "growth model", "aged STL 20 yr", "DOMAIN.md §2.6: unlined steel by the growth model, new C 120 (§2.1)"},
		{"empty lining year", 8, 140 - 0.2*26, 140 - 0.2*26, "table", "aged DI 26 yr", "DI curve"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := r.cFactor[tc.pipe]; math.Abs(got-tc.cFactor) > 1e-9 {
				t.Errorf("C %.4f, want %.4f (%s)", got, tc.cFactor, tc.why)
			}
			if got, _ := ageColumn(t, pipes, tc.pipe, "c_model").(float64); math.Abs(got-tc.cModel) > 1e-9 {
				t.Errorf("c_model %.4f, want %.4f", got, tc.cModel)
			}
			if got := ageColumn(t, pipes, tc.pipe, "c_source"); got != tc.source {
				t.Errorf("c_source %v, want %q", got, tc.source)
			}
			if got := ageColumn(t, pipes, tc.pipe, "c_basis").(string); !strings.Contains(got, tc.basis) {
				t.Errorf("c_basis %q lacks %q", got, tc.basis)
			}
		})
	}
	// The network solves with the derated C.
	for i := range tests {
		if j := r.parts[i][0]; r.net.Pipes[j].C != r.cFactor[i] {
			t.Errorf("pipe %d: network C %v, want %v", i+1, r.net.Pipes[j].C, r.cFactor[i])
		}
	}
	wantProblems := []struct{ id, field, what string }{
		{"BC-6", "lined", "lining year 1950 is before the install year 1966"},
		{"BC-7", "lined", `lining year "n/a" is not a number`},
		{"", "aging.zone_factor", `zone "Nowhere" is no pipe's zone`},
	}
	for _, w := range wantProblems {
		found := false
		for _, p := range r.problems {
			if p.ID == w.id && p.Field == w.field && strings.Contains(p.What, w.what) {
				found = true
			}
		}
		if !found {
			t.Errorf("no problem row %s %s %q in %+v", w.id, w.field, w.what, r.problems)
		}
	}
}

func TestAgeLiningYear(t *testing.T) {
	tests := []struct {
		name    string
		v       any
		install int
		want    int
		why     string // part of the problem; "" for none
	}{
		{"number", 1996.0, 1950, 1996, ""},
		{"text number", "1996", 1950, 1996, ""},
		{"same year as laid", 1950.0, 1950, 1950, ""},
		{"missing", nil, 1950, 0, ""},
		{"zero", 0.0, 1950, 0, ""},
		{"blank", "  ", 1950, 0, ""},
		{"unknown install year", 1930.0, 0, 1930, ""},
		{"future", 2031.0, 1950, 0, "after the analysis year 2026"},
		{"before laying", 1940.0, 1950, 0, "before the install year 1950"},
		{"ancient", 1492.0, 0, 0, "before 1800"},
		{"fraction", 1996.5, 1950, 0, "not a whole year"},
		{"text", "relined", 1950, 0, "is not a number"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, why := ageLiningYear(tc.v, tc.install, 2026)
			if got != tc.want || (tc.why == "") != (why == "") || !strings.Contains(why, tc.why) {
				t.Errorf("ageLiningYear(%v) = %d, %q; want %d, %q", tc.v, got, why, tc.want, tc.why)
			}
		})
	}
}

func TestAgeCalibrationAgainstHandCalculation(t *testing.T) {
	// Three 60-yr 8-in cast-iron mains share one model C, m = ageSW(60, 8);
	// their measured C are m − 10, m + 4 and m, so model − measured = 10,
	// −4, 0: mean 2, sample sd √((8² + 6² + 2²)/2) = √52 = 7.2111, all
	// within ±15 (hand calculation). A new PVC main tested at 120 against the
	// model's 150 differs by 30: outside the Sharp & Walski ±15 band
	// (DOMAIN.md §2.3).
	m := ageSW(60, 8)
	r := ageRun(t, []agePipe{
		{material: "CI", dia: 8, year: 1966, measuredC: m - 10},
		{material: "CI", dia: 8, year: 1966, measuredC: m + 4},
		{material: "CI", dia: 8, year: 1966, measuredC: m},
		{material: "PVC", dia: 8, year: 2026, measuredC: 120},
		{material: "PVC", dia: 8, year: 2000}, // no measured C: not compared
	}, "")
	want := []struct {
		material string
		count    int
		mean, sd float64
		within   int
		fits     string
	}{
		{"CI", 3, 2, math.Sqrt(52), 3, "yes"},
		{"PVC", 1, 30, math.NaN(), 0, "no"},
	}
	l := r.ageCalibrationLayer()
	if len(l.Rows) != len(want) {
		t.Fatalf("%d calibration rows, want %d", len(l.Rows), len(want))
	}
	for k, w := range want {
		t.Run(w.material, func(t *testing.T) {
			v := l.Rows[k].Values
			if v[0] != w.material || v[1] != w.count || v[4] != w.within || v[6] != w.fits {
				t.Errorf("row %v, want %+v", v, w)
			}
			if math.Abs(v[2].(float64)-w.mean) > 1e-9 {
				t.Errorf("mean %v, want %v", v[2], w.mean)
			}
			if sd, ok := v[3].(float64); ok != !math.IsNaN(w.sd) || ok && math.Abs(sd-w.sd) > 1e-9 {
				t.Errorf("sd %v, want %v", v[3], w.sd)
			}
		})
	}
	var b strings.Builder
	r.ageSummarise(func(f string, a ...any) { fmt.Fprintf(&b, f, a...) })
	for _, part := range []string{"CI        3 pipes, mean +2.0, sd 7.2, 3 within ±15",
		"within the Sharp & Walski ±15 band: CI; outside it: PVC"} {
		if !strings.Contains(b.String(), part) {
			t.Errorf("summary lacks %q:\n%s", part, b.String())
		}
	}
	out := filepath.Join(t.TempDir(), "out")
	if _, err := writeOutputs(out, r, writeOptions{}); err != nil {
		t.Fatal(err)
	}
	csv, err := os.ReadFile(filepath.Join(out, "c_calibration.csv"))
	if err != nil {
		t.Fatal(err)
	}
	wantCSV := "material,pipes,mean_model_minus_measured,sd_model_minus_measured,within_band,band,fits_band\n" +
		"CI,3,2.00,7.21,3,15,yes\nPVC,1,30.00,,0,15,no\n"
	if got := strings.ReplaceAll(string(csv), "\r\n", "\n"); got != wantCSV {
		t.Errorf("c_calibration.csv:\n%s\nwant:\n%s", got, wantCSV)
	}
}

func TestAgeConfigErrors(t *testing.T) {
	base := `units = "us"
[pipes]
path = "p.geojson"
[pipes.fields]
id = "id"
diameter = "d"
material = "m"
install_year = "y"
%s
[sources]
path = "s.geojson"
[sources.fields]
grade = "g"
[demands]
path = "d.geojson"
peak_hour_factor = 2.5
[demands.fields]
demand = "q"
[elevations]
path = "e.geojson"
[elevations.fields]
elevation = "z"
[aging]
%s
`
	tests := []struct {
		name, fields, aging string
		want                []string // parts of the error; none = loads
	}{
		{"unknown class", "", "[[aging.growth]]\nmaterial = \"CI\"\naggressiveness = \"mild\"",
			[]string{`aging.growth[1].aggressiveness = "mild" is not a Lamont attack class`, `"slight", "moderate", "appreciable", "severe"`}},
		{"both e0 spellings", "", "[[aging.growth]]\nmaterial = \"CI\"\ne0_ft = 0.00085\ne0_mm = 0.26",
			[]string{"both aging.growth[1].e0_ft and aging.growth[1].e0_mm are given: keep one"}},
		{"rate twice", "", "[[aging.growth]]\nmaterial = \"CI\"\ngrowth_mm_per_yr = 0.08\naggressiveness = \"moderate\"",
			[]string{"aging.growth[1].*: give one of growth_ft_per_yr, growth_mm_per_yr and aggressiveness"}},
		{"zero e0", "", "[[aging.growth]]\nmaterial = \"CI\"\ne0_ft = 0", []string{"aging.growth[1].e0_ft = 0: must be > 0"}},
		{"negative growth", "", "[[aging.growth]]\nmaterial = \"CI\"\ngrowth_ft_per_yr = -0.001", []string{"aging.growth[1].growth_ft_per_yr = -0.001: must not be negative"}},
		{"floor above new", "", "[[aging.growth]]\nmaterial = \"CI\"\nfloor_c = 135", []string{"aging.growth[1].floor_c = 135: must be > 0 and below the new C 130"}},
		{"no material", "", "[[aging.growth]]\naggressiveness = \"severe\"", []string{"aging.growth[1].material is required"}},
		{"unknown lined curve", "", `lined_curve = "epoxy"`, []string{`aging.lined_curve = "epoxy" is not a material of the aging curves`}},
		{"zone factor zero", "zone = \"z\"", "[aging.zone_factor]\n\"North\" = 0", []string{`aging.zone_factor."North" = 0: must be a number > 0`}},
		{"zone factor without zone field", "", "[aging.zone_factor]\n\"North\" = 0.9", []string{"aging.zone_factor needs pipes.fields.zone"}},
		{"growth entry loads", "zone = \"z\"", "[aging.zone_factor]\n\"North\" = 0.9\n[[aging.growth]]\nmaterial = \"GALV\"\ne0_mm = 0.15\ngrowth_mm_per_yr = 0.05", nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := decodeConfig(fmt.Sprintf(base, tc.fields, tc.aging), "headroom.toml")
			if len(tc.want) == 0 {
				if err != nil {
					t.Fatalf("does not load: %v", err)
				}
				return
			}
			if err == nil {
				t.Fatal("loads; want an error")
			}
			for _, part := range tc.want {
				if !strings.Contains(err.Error(), part) {
					t.Errorf("error lacks %q:\n%v", part, err)
				}
			}
		})
	}
}

func TestAgeConfigModels(t *testing.T) {
	cfg, err := decodeConfig(`units = "si"
[pipes]
path = "p.geojson"
[pipes.fields]
id = "id"
diameter = "d"
material = "m"
install_year = "y"
[sources]
path = "s.geojson"
[sources.fields]
grade = "g"
[demands]
path = "d.geojson"
peak_hour_factor = 2.5
[demands.fields]
demand = "q"
[elevations]
path = "e.geojson"
[elevations.fields]
elevation = "z"
[[aging.curve]]
material = "STL"
c_by_age = [[0, 120], [50, 90]]
[[aging.growth]]
material = "GALV"
e0_mm = 0.15
growth_mm_per_yr = 0.05
[[aging.growth]]
material = "CI"
aggressiveness = "appreciable"
`, "si.toml")
	if err != nil {
		t.Fatal(err)
	}
	ms := cfg.ageModels()
	// A curve for steel takes it off the growth model.
	if m, _ := ms.Lookup("STL"); m.Growth != nil || m.C(25, 0) != 105 {
		t.Errorf("steel: %+v, want the configured curve (105 at 25 yr, interpolated)", m)
	}
	// GALV by growth: e0 0.15 mm, 0.05 mm/yr, new C 110 from its built-in
	// curve (DOMAIN.md §2.1); at 40 yr on 150 mm: 18 − 37.2·log10(2.15/150).
	galv, _ := ms.Lookup("galvanized")
	if galv.Growth == nil || galv.Growth.NewC != 110 {
		t.Fatalf("GALV: %+v, want a growth model with new C 110", galv)
	}
	if got, want := galv.C(40, 150*hydraulics.Millimetre), 18-37.2*math.Log10(2.15/150); math.Abs(got-want) > 1e-9 {
		t.Errorf("GALV at 40 yr: %.4f, want %.4f", got, want)
	}
	// The CI entry replaces the built-in one: appreciable attack, 0.01 in/yr (DOMAIN.md §2.4).
	ci, _ := ms.Lookup("CI")
	if ci.Growth == nil || math.Abs(ci.Growth.PerYear.Inches()-0.01) > 1e-12 || ci.Growth.NewC != 130 {
		t.Errorf("CI: %+v, want appreciable attack and new C 130", ci.Growth)
	}
}

func TestAgeTemplateLoadsToDefaultModels(t *testing.T) {
	for _, units := range []string{"us", "si"} {
		t.Run(units, func(t *testing.T) {
			c := &Config{Units: units, AnalysisYear: 2026}
			fillDefaults(c)
			text := ageTemplate(c)
			cfg, err := decodeConfig(`units = "`+units+`"
[pipes]
path = "p.geojson"
[pipes.fields]
id = "id"
diameter = "d"
material = "m"
install_year = "y"
[sources]
path = "s.geojson"
[sources.fields]
grade = "g"
[demands]
path = "d.geojson"
peak_hour_factor = 2.5
[demands.fields]
demand = "q"
[elevations]
path = "e.geojson"
[elevations.fields]
elevation = "z"
`+text, "template")
			if err != nil {
				t.Fatalf("template does not load: %v\n%s", err, text)
			}
			got, want := cfg.ageModels(), hydraulics.DefaultAgingModels()
			if len(got.Growth) != len(want.Growth) || len(got.Table.Curves) != len(want.Table.Curves) {
				t.Fatalf("%d growth models and %d curves, want %d and %d", len(got.Growth), len(got.Table.Curves), len(want.Growth), len(want.Table.Curves))
			}
			for k, w := range want.Growth {
				g := got.Growth[k]
				if g.Material != w.Material || g.NewC != w.NewC || g.FloorC != w.FloorC ||
					math.Abs(float64(g.Initial-w.Initial)) > 1e-12*float64(w.Initial) || math.Abs(float64(g.PerYear-w.PerYear)) > 1e-12*float64(w.PerYear) {
					t.Errorf("growth model %d: %+v, want %+v", k, g, w)
				}
			}
			for _, key := range []string{"[[aging.growth]]", "lined_curve = \"CML\"", "[aging.zone_factor]", "aggressiveness = \"moderate\"", "floor_c = 40"} {
				if !strings.Contains(text, key) {
					t.Errorf("template lacks %s", key)
				}
			}
		})
	}
}
