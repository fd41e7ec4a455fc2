package gis

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"headroom/demotown"
	"headroom/hydraulics"
)

// hydFeature is one hydrant feature at local metres (x, y) with the given
// properties JSON.
func hydFeature(x, y float64, props string) string {
	p := local(x, y)
	return fmt.Sprintf(`{"type":"Feature","properties":%s,"geometry":{"type":"Point","coordinates":[%.10f,%.10f]}}`, props, p[0], p[1])
}

func hydCollection(t *testing.T, features ...string) string {
	t.Helper()
	return `{"type":"FeatureCollection","features":[` + strings.Join(features, ",") + `]}`
}

// Needed fire flow units: 1 gpm = 0.06309020 L/s (DOMAIN.md §3, from the
// exact US gallon of 3.785411784 L), so 1,000 gpm = 0.0630902 m³/s and
// 63.0902 L/s is the same flow.
func TestHydReadUnits(t *testing.T) {
	cases := []struct {
		name, unit string
		value      string
		want       float64 // m³/s
	}{
		{"gpm default", "", "1000", 0.0630901964},
		{"gpm", "gpm", `"1500"`, 0.0946352946},
		{"lps", "lps", "63.0902", 0.0630902},
		{"cfs", "cfs", "2.228", 2.228 * 0.028316846592}, // 1 ft³ = 0.028316846592 m³ (exact)
		{"blank: not given", "", `""`, 0},
		{"zero: not given", "", "0", 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			fc := allocCollection(t, hydCollection(t, hydFeature(0, 0, `{"hyd":"H1","ff":`+c.value+`,"z":"Z01"}`)))
			hs, probs, err := HydrantsFromCollection("hyd.geojson", fc, HydrantSchema{ID: "hyd", NeededFlow: "ff", NeededFlowUnit: c.unit, Zone: "z"})
			if err != nil || len(probs) != 0 {
				t.Fatalf("err %v, problems %+v", err, probs)
			}
			h := hs[0]
			if math.Abs(h.Needed-c.want) > 1e-9 || h.ID != "H1" || h.Zone != "Z01" || !h.Usable || h.Node != -1 || h.Index != 1 {
				t.Errorf("hydrant %+v, want needed %.10g m³/s", h, c.want)
			}
		})
	}
}

// Bad needed flows are reported and ignored (the hydrant stays usable);
// bad geometry makes the hydrant unusable. The 12,000 gpm ceiling is the
// ISO needed-fire-flow maximum (DOMAIN.md §4.2).
func TestHydReadProblems(t *testing.T) {
	fc := allocCollection(t, hydCollection(t,
		hydFeature(0, 0, `{"hyd":"H1","ff":"lots"}`),
		hydFeature(0, 0, `{"hyd":"H2","ff":-500}`),
		hydFeature(0, 0, `{"hyd":"H3","ff":20000}`),
		`{"type":"Feature","properties":{"hyd":"H4","ff":1000},"geometry":null}`,
		`{"type":"Feature","properties":{"hyd":"H5"},"geometry":{"type":"LineString","coordinates":[[-97.5,35],[-97.4,35]]}}`,
		`{"type":"Feature","properties":{"hyd":"H6"},"geometry":{"type":"Point","coordinates":[2000000,600000]}}`,
		hydFeature(0, 0, `{"hyd":"H1","ff":12000}`),
	))
	hs, probs, err := HydrantsFromCollection("hyd.geojson", fc, HydrantSchema{ID: "hyd", NeededFlow: "ff"})
	if err != nil {
		t.Fatal(err)
	}
	wantUsable := []bool{true, true, true, false, false, false, true}
	for i, h := range hs {
		if h.Usable != wantUsable[i] {
			t.Errorf("%s usable %v, want %v", h.ID, h.Usable, wantUsable[i])
		}
		if i < 3 && h.Needed != 0 {
			t.Errorf("%s needed %g, want 0 (ignored)", h.ID, h.Needed)
		}
	}
	if got, want := hs[6].Needed, float64(12000*hydraulics.USGallonPerMinute); math.Abs(got-want) > 1e-12 {
		t.Errorf("H1 (7) needed %g m³/s, want %g", got, want)
	}
	wants := []struct {
		feature int
		field   string
		what    string
	}{
		{1, "ff", "not a number"},
		{2, "ff", "negative"},
		{3, "ff", "ISO maximum"},
		{4, "geometry", "missing"},
		{5, "geometry", "want Point"},
		{6, "geometry", "not a lon/lat"},
		{7, "hyd", "also used by feature 1"},
	}
	if len(probs) != len(wants) {
		t.Fatalf("%d problems, want %d: %+v", len(probs), len(wants), probs)
	}
	for i, w := range wants {
		p := probs[i]
		if p.File != "hyd.geojson" || p.Feature != w.feature || p.Field != w.field || !strings.Contains(p.What, w.what) {
			t.Errorf("problem %d = %+v, want feature %d field %s %q", i, p, w.feature, w.field, w.what)
		}
	}
	// no usable hydrant, and a bad unit, are errors
	none := allocCollection(t, `{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":null}]}`)
	if _, _, err := HydrantsFromCollection("hyd.geojson", none, HydrantSchema{}); !errors.Is(err, ErrNoUsable) {
		t.Errorf("no usable hydrant: err = %v", err)
	}
	if _, _, err := HydrantsFromCollection("hyd.geojson", fc, HydrantSchema{NeededFlowUnit: "gph"}); err == nil {
		t.Error("unknown unit: no error")
	}
}

// Attachment to the nearest node that is not fixed, distances by hand from
// the drawing (local metres; geodesic within 1 mm at these distances).
func TestHydAttach(t *testing.T) {
	topo, _ := lineTopology(t) // J1..J4 at x = 0, 100, 200, 300 m; J1 fixed
	hs := []Hydrant{
		{Index: 1, File: "hyd.geojson", ID: "H1", At: local(5, 3), Usable: true},     // J1 fixed → J2, √(95² + 3²) = 95.047 m
		{Index: 2, File: "hyd.geojson", ID: "H2", At: local(198, 2), Usable: true},   // J3, √8 = 2.828 m
		{Index: 3, File: "hyd.geojson", ID: "H3", At: local(300, 120), Usable: true}, // J4 at 120 m > 100 m
		{Index: 4, File: "hyd.geojson", ID: "H4", At: local(200, 0), Usable: false},  // not usable: left alone
		{Index: 5, File: "hyd.geojson", ID: "H5", At: local(199, 0), Usable: true},   // shares J3
	}
	probs := AttachHydrants(topo, hs, []bool{true}, 100)
	want := []struct {
		node   int
		metres float64
		usable bool
	}{{1, math.Hypot(95, 3), true}, {2, math.Sqrt(8), true}, {-1, 0, false}, {-1, 0, false}, {2, 1, true}}
	for i, w := range want {
		h := hs[i]
		if h.Node != w.node || math.Abs(h.Distance.Metres()-w.metres) > 1e-3 || h.Usable != w.usable {
			t.Errorf("%s: node %d at %.4f m usable %v, want node %d at %.4f m usable %v",
				h.ID, h.Node, h.Distance.Metres(), h.Usable, w.node, w.metres, w.usable)
		}
	}
	if len(probs) != 1 {
		t.Fatalf("problems %+v, want one (H3)", probs)
	}
	p := probs[0]
	if p.File != "hyd.geojson" || p.Feature != 3 || p.ID != "H3" || !strings.Contains(p.What, "120.00 m") ||
		!strings.Contains(p.What, "J4") || hs[2].Reason != p.What {
		t.Errorf("problem %+v, reason %q", p, hs[2].Reason)
	}
	// every node fixed: nothing to attach to
	hs = []Hydrant{{Index: 1, File: "hyd.geojson", ID: "H1", At: local(0, 0), Usable: true}}
	probs = AttachHydrants(topo, hs, []bool{true, true, true, true}, 0)
	if len(probs) != 1 || hs[0].Usable || hs[0].Node != -1 {
		t.Errorf("all fixed: %+v, %+v", hs[0], probs)
	}
}

// The demo town end to end: every hydrant attaches to a junction within
// the generator's 4-ft lateral offset, and the demands split by position
// add up to the layer's total (a mass balance).
func TestHydDemoTown(t *testing.T) {
	tw, err := demotown.Generate(demotown.Options{Pipes: 800, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	pipes, _, err := PipesFromCollection("pipes.geojson", tw.Pipes, PipeSchema{ID: demotown.PipeID, Diameter: demotown.PipeDiameter,
		Material: demotown.PipeMaterial, InstallYear: demotown.PipeYear, Status: demotown.PipeStatus}, tw.AnalysisYear)
	if err != nil {
		t.Fatal(err)
	}
	topo, _ := Snap(pipes, halfFoot)
	srcs, _, err := SourcesFromCollection("sources.geojson", tw.Sources, SourceSchema{ID: demotown.SourceID, Grade: demotown.SourceGrade})
	if err != nil {
		t.Fatal(err)
	}
	sup, _ := AttachSources(topo, srcs, 10*hydraulics.Foot)
	fixed := make([]bool, len(topo.Nodes))
	for _, s := range sup {
		fixed[s.Node] = true
	}
	hs, probs, err := HydrantsFromCollection("hydrants.geojson", tw.Hydrants,
		HydrantSchema{ID: demotown.HydrantID, NeededFlow: demotown.HydrantNeeded, Zone: demotown.HydrantZone})
	if err != nil || len(probs) != 0 {
		t.Fatalf("read: %v, %+v", err, probs)
	}
	if probs := AttachHydrants(topo, hs, fixed, 10*hydraulics.Foot); len(probs) != 0 {
		t.Errorf("attach: %+v", probs)
	}
	for _, h := range hs {
		// 4 ft lateral at most; 1 % for the generator's frame against the ellipsoid
		if !h.Usable || h.Node < 0 || fixed[h.Node] || h.Distance.Feet() > 4.04 || h.Needed < float64(1000*hydraulics.USGallonPerMinute)-1e-12 {
			t.Errorf("hydrant %s: %+v", h.ID, h)
		}
	}
	dem, _, err := DemandsFromCollection("demands.geojson", tw.Demands, DemandSchema{ID: demotown.DemandID, Demand: demotown.DemandADD})
	if err != nil {
		t.Fatal(err)
	}
	var total float64
	for _, p := range dem {
		if p.Usable {
			total += p.Value
		}
	}
	q, _ := AllocateDemandsToPipes(topo, pipes, dem, fixed, 0)
	if got := allocSum(q); math.Abs(got-total) > 1e-12*total {
		t.Errorf("allocated %.15g m³/s of %.15g", got, total)
	}
}
