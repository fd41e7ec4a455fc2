package gis

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"headroom/hydraulics"
)

var facilitySchema = FacilitySchema{ID: "name", Kind: "kind"}

// Reading: ids and kinds as given (trimmed), geometry findings, duplicate
// ids, and every feature accounted for.
func TestFacilityRead(t *testing.T) {
	fc := breakFC(t,
		breakFeature([]float64{-93, 45}, `{"name":"General Hospital","kind":" hospital "}`),
		breakFeature(nil, `{"name":"Dialysis North","kind":"dialysis"}`),
		`{"type":"Feature","properties":{"name":"Ridge School","kind":"school"},"geometry":{"type":"Polygon","coordinates":[[[-93,45],[-92.99,45],[-92.99,45.01],[-93,45]]]}}`,
		breakFeature([]float64{-93, 95}, `{"name":"Bad","KIND":"clinic"}`),
		breakFeature([]float64{-92.99, 45.01}, `{"name":"General Hospital"}`),
	)
	fs, probs, err := FacilitiesFromCollection("facilities.geojson", fc, facilitySchema)
	if err != nil {
		t.Fatal(err)
	}
	wants := []struct {
		id, kind string
		usable   bool
	}{
		{"General Hospital", "hospital", true}, {"Dialysis North", "dialysis", false}, {"Ridge School", "school", false},
		{"Bad", "clinic", false}, {"General Hospital", "", true},
	}
	if len(fs) != len(wants) {
		t.Fatalf("%d facilities for %d features", len(fs), len(wants))
	}
	for i, w := range wants {
		f := fs[i]
		if f.ID != w.id || f.Kind != w.kind || f.Usable != w.usable || f.Index != i+1 || f.File != "facilities.geojson" {
			t.Errorf("facility %d: %+v, want %q %q usable %v", i+1, f, w.id, w.kind, w.usable)
		}
		if !f.Usable && (f.Reason == "" || f.At != (orb.Point{})) {
			t.Errorf("facility %d: unusable with reason %q, At %v", i+1, f.Reason, f.At)
		}
	}
	if fs[0].At != (orb.Point{-93, 45}) {
		t.Errorf("At %v", fs[0].At)
	}
	wantProbs := []struct {
		feature     int
		field, what string
	}{
		{2, "geometry", "geometry is missing"},
		{3, "geometry", "geometry is Polygon, want Point"},
		{4, "geometry", "not a lon/lat position"},
		{5, "name", `id "General Hospital" is also used by feature 1`},
	}
	if len(probs) != len(wantProbs) {
		t.Fatalf("problems %+v, want %d", probs, len(wantProbs))
	}
	for i, w := range wantProbs {
		p := probs[i]
		if p.File != "facilities.geojson" || p.Feature != w.feature || p.Field != w.field || !strings.Contains(p.What, w.what) || p.Action == "" {
			t.Errorf("problem %d: %+v, want feature %d field %s %q", i, p, w.feature, w.field, w.what)
		}
	}
	if !strings.Contains(probs[1].Action, "centroid") {
		t.Errorf("polygon action %q, want advice to use the centroid", probs[1].Action)
	}

	none := breakFC(t, breakFeature(nil, `{}`))
	if fs, _, err := FacilitiesFromCollection("f.geojson", none, FacilitySchema{}); !errors.Is(err, ErrNoUsable) || len(fs) != 1 {
		t.Errorf("none usable: %v", err)
	}
	if _, _, err := FacilitiesFromCollection("f.geojson", breakFC(t), FacilitySchema{}); err == nil || !strings.Contains(err.Error(), "facilities.path") {
		t.Errorf("no features: %v", err)
	}
	one := breakFC(t, breakFeature([]float64{-93, 45}, `{}`))
	if _, probs, err := FacilitiesFromCollection("f.geojson", one, FacilitySchema{Kind: "type"}); err != nil || len(probs) != 1 ||
		!strings.Contains(probs[0].Action, "facilities.fields.kind") {
		t.Errorf("kind in no feature: %+v %v", probs, err)
	}

	path := filepath.Join(t.TempDir(), "crit.geojson")
	if err := os.WriteFile(path, []byte(`{"type":"FeatureCollection","features":[`+breakFeature([]float64{-93, 45}, `{"name":7}`)+`]}`), 0o644); err != nil {
		t.Fatal(err)
	}
	if fs, _, err := ReadFacilities(path, facilitySchema); err != nil || fs[0].ID != "7" || fs[0].File != "crit.geojson" {
		t.Errorf("ReadFacilities: %+v %v", fs, err)
	}
}

// Nearest facilities on hand geometry at 45°N. P1 runs east–west along the
// parallel; a hospital lies 10 m north of its middle (the foot is on that
// meridian by symmetry), a clinic at the same spot (a tie: the lower index
// wins), an unusable facility right on the line, and a school 30 m east of
// P1's east end along the parallel (its distance is to that end vertex).
// Distances are checked against the Vincenty inverse (breaks_test.go).
func TestFacilityNearestHand(t *testing.T) {
	const lon = -93.0
	p1 := breakLine(lon)
	east := p1[1]
	// 30 m east along the parallel: Δλ = 30 / (N(45°)·cos 45°), N(45°) =
	// a/√(1 − e²/2) = 6,388,838.3 m (by hand), so N·cos 45° = 4,517,590.9 m.
	school := orb.Point{east[0] + 30/4517590.9*180/math.Pi, 45}
	p3 := orb.LineString{{lon + 0.05, 45.03}, {lon + 0.06, 45.03}} // about 4 km away
	pipes := []Pipe{
		breakPipe(1, "P1", p1),
		breakPipe(2, "P2", orb.LineString{breakNorth(lon-0.005, 20), breakNorth(lon+0.005, 20)}),
		breakPipe(3, "P3", p3),
		breakPipe(4, "P4", orb.LineString{{school[0] + 0.0002, 44.99}, {school[0] + 0.0002, 45.01}}), // north–south, east of the school
	}
	pipes[1].Usable = false
	facilities := []Facility{
		{Index: 1, ID: "on the line", At: orb.Point{lon, 45}, Usable: false},
		{Index: 2, ID: "hospital", At: breakNorth(lon, 10), Usable: true},
		{Index: 3, ID: "clinic", At: breakNorth(lon, 10), Usable: true},
		{Index: 4, ID: "school", At: school, Usable: true},
	}
	hospitalD := breakVincenty(breakNorth(lon, 10), orb.Point{lon, 45})
	schoolD := breakVincenty(school, east)
	if math.Abs(schoolD-30) > 1e-3 {
		t.Fatalf("hand placement of the school: %.6f m from P1's end, want 30 m", schoolD)
	}
	// P4 is 0.0002° of longitude east of the school: N·cos 45°·Δλ = 15.77 m.
	p4D := breakVincenty(school, orb.Point{school[0] + 0.0002, 45})

	got := NearestFacilities(pipes, facilities, 20)
	wants := []FacilityNear{{1, hydraulics.Length(hospitalD)}, {-1, 0}, {-1, 0}, {3, hydraulics.Length(p4D)}}
	for i, w := range wants {
		if got[i].Facility != w.Facility || math.Abs(got[i].Distance.Metres()-w.Distance.Metres()) > 1e-4 {
			t.Errorf("%s, within 20 m: got %+v, want %+v (Vincenty, ±0.1 mm)", pipes[i].ID, got[i], w)
		}
	}
	if math.Abs(p4D-15.77) > 0.01 {
		t.Errorf("P4 to school %.4f m, want 15.77 m by hand", p4D)
	}
	// Move the hospital and clinic away: P1's nearest is then the school,
	// 30 m beyond its end, once the reach allows it.
	far := append([]Facility(nil), facilities...)
	far[1].At, far[2].At = breakNorth(lon, 500), breakNorth(lon, 500)
	if got := NearestFacilities(pipes, far, 20); got[0].Facility != -1 {
		t.Errorf("P1 within 20 m: %+v, want none", got[0])
	}
	if got := NearestFacilities(pipes, far, 40); got[0].Facility != 3 || math.Abs(got[0].Distance.Metres()-schoolD) > 1e-4 {
		t.Errorf("P1 within 40 m: %+v, want the school at %.4f m", got[0], schoolD)
	}
	// No limit: P3 gets its nearest whatever the distance; the unusable
	// pipe still gets none; no usable facility gives none.
	got = NearestFacilities(pipes, facilities, 0)
	if got[2].Facility < 0 || got[2].Distance < 3000 || got[1].Facility != -1 {
		t.Errorf("no limit: %+v", got)
	}
	if got := NearestFacilities(pipes, facilities[:1], 0); got[0].Facility != -1 {
		t.Errorf("only an unusable facility: %+v", got[0])
	}
}

// NearestFacilities against brute force over all pairs (same distance
// function, so this checks the R-tree search, the reach boxes and ties),
// for several reaches and none. 3,000 pipes: more than one chunk, so the
// pipes are searched on several goroutines (run under -race in .ci/run).
func TestFacilityNearestBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 45))
	pipes := breakRandomPipes(rng, 3000)
	var facilities []Facility
	for i := range 120 {
		f := Facility{Index: i + 1, At: orb.Point{-93.01 + 0.07*rng.Float64(), 44.99 + 0.055*rng.Float64()}, Usable: i%9 != 4}
		facilities = append(facilities, f)
	}
	facilities = append(facilities, facilities[7]) // a duplicate: ties go to facility 7
	facilities[len(facilities)-1].Index = len(facilities)
	for _, within := range []float64{25, 150, 600, 0} {
		got := NearestFacilities(pipes, facilities, hydraulics.Length(within))
		found := 0
		for i, p := range pipes {
			want, wantD := -1, math.Inf(1)
			if p.Usable {
				for k, f := range facilities {
					if !f.Usable {
						continue
					}
					if d := pointLineMetres(f.At, p.Line); (within <= 0 || d <= within) && d < wantD {
						want, wantD = k, d
					}
				}
			}
			if got[i].Facility != want || (want >= 0 && got[i].Distance.Metres() != wantD) {
				t.Fatalf("within %g m, pipe %d: got %+v, want facility %d at %.6f m", within, i, got[i], want, wantD)
			}
			if want >= 0 {
				found++
			}
		}
		t.Logf("within %g m: %d of %d pipes have a facility", within, found, len(pipes))
	}
}

// Pipe street and surface fields are read like the zone: mapped
// properties, matched case-insensitively, trimmed, "" when absent; a
// mapped field in no feature is reported with its config key.
func TestPipeStreetSurface(t *testing.T) {
	src := `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"P1","d":8,"m":"CI","y":1950,"STREET":" Elm St ","surf":"asphalt"},"geometry":{"type":"LineString","coordinates":[[-93,45],[-93.001,45]]}},
{"type":"Feature","properties":{"id":"P2","d":8,"m":"CI","y":1950,"street":null,"surf":3},"geometry":{"type":"LineString","coordinates":[[-93.001,45],[-93.002,45]]}},
{"type":"Feature","properties":{"id":"P3","d":8,"m":"CI","y":1950},"geometry":{"type":"LineString","coordinates":[[-93.002,45],[-93.003,45]]}}]}`
	fc := allocCollection(t, src)
	s := PipeSchema{ID: "id", Diameter: "d", Material: "m", InstallYear: "y", Street: "street", Surface: "surf"}
	pipes, probs, err := PipesFromCollection("pipes.geojson", fc, s, 2026)
	if err != nil || len(probs) != 0 {
		t.Fatalf("%v %+v", err, probs)
	}
	wants := [][2]string{{"Elm St", "asphalt"}, {"", "3"}, {"", ""}}
	for i, w := range wants {
		if pipes[i].Street != w[0] || pipes[i].Surface != w[1] {
			t.Errorf("%s: street %q surface %q, want %q %q", pipes[i].ID, pipes[i].Street, pipes[i].Surface, w[0], w[1])
		}
	}
	s.Street, s.Surface = "road_name", "pavement"
	_, probs, err = PipesFromCollection("pipes.geojson", fc, s, 2026)
	if err != nil || len(probs) != 2 || !strings.Contains(probs[0].Action, "pipes.fields.street") ||
		!strings.Contains(probs[1].Action, "pipes.fields.surface") {
		t.Errorf("fields in no feature: %+v %v", probs, err)
	}
}

// BenchmarkFacilityNearest1M finds, for each of 1,000,000 pipes (the grid of
// BenchmarkBreakJoin1M), the nearest of 2,000 facilities within 2,000 ft.
func BenchmarkFacilityNearest1M(b *testing.B) {
	pipes := breakGridPipes()
	rng := rand.New(rand.NewPCG(2, 2))
	facilities := make([]Facility, 2000)
	for i := range facilities {
		facilities[i] = Facility{Index: i + 1, At: breakGridPoint(rng), Usable: true}
	}
	b.ResetTimer()
	for b.Loop() {
		NearestFacilities(pipes, facilities, 2000*hydraulics.Foot)
	}
	b.ReportMetric(float64(len(pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
}
