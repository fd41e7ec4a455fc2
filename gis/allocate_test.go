package gis

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// allocSum is the total of a node flow vector, m³/s.
func allocSum(q []hydraulics.Flow) float64 {
	var s float64
	for _, x := range q {
		s += float64(x)
	}
	return s
}

// allocClose reports whether got is within tol m³/s of want.
func allocClose(got hydraulics.Flow, want, tol float64) bool {
	return math.Abs(float64(got)-want) <= tol
}

// The split by position: a point a fraction f along a part gives f of its
// demand to the far end and 1 − f to the near end (the lever rule of linear
// interpolation; computed by hand from the drawing). Fractions are geodesic,
// the drawing planar in local metres: along these 100 m east–west lines the
// two agree to far better than the 1e-9 m³/s tolerance on a 1e-3 m³/s demand.
func TestAllocPipesPosition(t *testing.T) {
	topo, pipes := lineTopology(t) // J1..J4 at x = 0, 100, 200, 300 m
	cases := []struct {
		name  string
		at    [2]float64 // local metres
		fixed []bool
		want  [4]float64 // share of the demand per node J1..J4
	}{
		{"quarter along B", [2]float64{125, 10}, nil, [4]float64{0, 0.75, 0.25, 0}},
		{"three quarters along B, other side", [2]float64{175, -4}, nil, [4]float64{0, 0.25, 0.75, 0}},
		{"beyond the end of C", [2]float64{330, 5}, nil, [4]float64{0, 0, 0, 1}},
		{"on A with J1 fixed: all to J2", [2]float64{10, 5}, []bool{true}, [4]float64{0, 1, 0, 0}},
		// both ends of A fixed: the next nearest pipe, B, at its start (J2 fixed) → J3
		{"A passed over", [2]float64{50, 2}, []bool{true, true}, [4]float64{0, 0, 1, 0}},
	}
	const v = 1e-3 // m³/s
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			q, probs := AllocateDemandsToPipes(topo, pipes, []Point{testPoint(1, "m", c.at[0], c.at[1], v)}, c.fixed, 0)
			if len(probs) != 0 {
				t.Errorf("problems %+v", probs)
			}
			for k, w := range c.want {
				if !allocClose(q[k], w*v, 1e-9) {
					t.Errorf("%s: %.9g m³/s, want %.9g", topo.Nodes[k].ID, q[k], w*v)
				}
			}
		})
	}
}

// A tee drawn without a break splits MAIN at x = 100 m (see
// TestTopologyTeeSplitSolved): a point at x = 175 m lies 3/4 along the part
// J3 (100 m)–J2 (200 m), so J2 takes 3/4 and J3 1/4, and J1 nothing. Split
// over the whole main it would have given J1 1/8 and J2 7/8.
func TestAllocPipesTeePart(t *testing.T) {
	pipes := indexPipes([]Pipe{testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 0.10, 100, 100)})
	topo, _ := Snap(pipes, halfFoot)
	if topo.Splits != 1 {
		t.Fatalf("setup: %d splits, want 1", topo.Splits)
	}
	const v = 2e-3
	q, probs := AllocateDemandsToPipes(topo, pipes, []Point{testPoint(1, "m", 175, -6, v)}, nil, 0)
	want := []float64{0, 0.75 * v, 0.25 * v, 0} // J1 (0,0), J2 (200,0), J3 the tee, J4
	for k, w := range want {
		if !allocClose(q[k], w, 1e-9) {
			t.Errorf("%s: %.9g m³/s, want %.9g", topo.Nodes[k].ID, q[k], w)
		}
	}
	if len(probs) != 0 {
		t.Errorf("problems %+v", probs)
	}
}

// Conservation: on a 20 × 20 grid of two-segment pipes, 2,000 demands at
// random positions (seeded) add up at the nodes to the input total to
// 1e-12 relative, with fixed nodes taking nothing (a mass balance; no
// source needed).
func TestAllocPipesConserves(t *testing.T) {
	pipes := gridPipes(20)
	topo, _ := Snap(pipes, halfFoot)
	fixed := make([]bool, len(topo.Nodes))
	for k := 0; k < len(fixed); k += 37 {
		fixed[k] = true
	}
	rng := rand.New(rand.NewPCG(5, 5))
	var pts []Point
	var total float64
	for i := range 2000 {
		v := 1e-4 * rng.Float64()
		pts = append(pts, testPoint(i+1, "", -20+2040*rng.Float64(), -20+2040*rng.Float64(), v))
		total += v
	}
	pts = append(pts, Point{Index: 2001, At: local(500, 500), Value: 1, Usable: false}) // ignored
	q, probs := AllocateDemandsToPipes(topo, pipes, pts, fixed, 0)
	if got := allocSum(q); math.Abs(got-total) > 1e-12*total {
		t.Errorf("allocated %.15g m³/s, input %.15g", got, total)
	}
	for k, f := range fixed {
		if f && q[k] != 0 {
			t.Errorf("fixed node %s took %g m³/s", topo.Nodes[k].ID, q[k])
		}
	}
	if len(probs) != 0 {
		t.Errorf("%d problems, first %+v", len(probs), probs[0])
	}
}

// A point 80 m from every pipe is split anyway and reported against a 50 m
// warning distance (distance point to foot, by hand: 80 m).
func TestAllocPipesWarns(t *testing.T) {
	topo, pipes := lineTopology(t)
	q, probs := AllocateDemandsToPipes(topo, pipes, []Point{testPoint(7, "far", 150, 80, 1e-3)}, nil, 50)
	if !allocClose(q[1], 0.5e-3, 1e-9) || !allocClose(q[2], 0.5e-3, 1e-9) {
		t.Errorf("q = %v, want half each on J2 and J3", q)
	}
	if len(probs) != 1 || probs[0].Feature != 7 || probs[0].ID != "far" || !strings.Contains(probs[0].What, "80.00 m") ||
		!strings.Contains(probs[0].What, `"B"`) {
		t.Errorf("problems %+v", probs)
	}
	_, probs = AllocateDemandsToPipes(topo, pipes, []Point{testPoint(1, "m", 0, 0, 1)}, []bool{true, true, true, true}, 0)
	if len(probs) != 1 || !strings.Contains(probs[0].What, "no pipe") {
		t.Errorf("all fixed: problems %+v", probs)
	}
}

// allocAreaNet is J1 (0,0) fixed source, J2 (100,0), J3 (200,0),
// J4 (100,100), J5 (300,0), with pipes J1–J2, J2–J3, J2–J4 (100 m each,
// open) and J3–J5 (100 m, closed).
func allocAreaNet(t *testing.T) (*Topology, []Pipe, []bool) {
	t.Helper()
	pipes := indexPipes([]Pipe{testPipe("A", 0, 0, 100, 0), testPipe("B", 100, 0, 200, 0),
		testPipe("C", 100, 0, 100, 100), testPipe("D", 200, 0, 300, 0)})
	pipes[3].Closed = true
	topo, probs := Snap(pipes, halfFoot)
	if len(topo.Nodes) != 5 || len(probs) != 0 {
		t.Fatalf("setup: %d nodes, problems %+v", len(topo.Nodes), probs)
	}
	return topo, pipes, []bool{true}
}

// allocRect is the ring of the rectangle x0..x1, y0..y1 (local metres).
func allocRect(x0, y0, x1, y1 float64) orb.Ring {
	return orb.Ring{local(x0, y0), local(x1, y0), local(x1, y1), local(x0, y1), local(x0, y0)}
}

func allocArea(index int, id string, v float64, polys ...orb.Polygon) AreaDemand {
	return AreaDemand{Index: index, File: "areas.geojson", ID: id, Area: orb.MultiPolygon(polys), Value: v, Usable: true}
}

// Shares by connected length, by hand: w = ½ Σ L of the open links at the
// node. J2: ½(100 + 100 + 100) = 150 m; J3: ½·100 = 50 m (its closed link
// does not count); J4: ½·100 = 50 m; J5: 0 (only the closed link).
func TestAllocAreaShares(t *testing.T) {
	topo, pipes, fixed := allocAreaNet(t)
	const v = 4e-3 // m³/s
	// the weights from the pipes' geodesic lengths (100 m drawn, within 1 mm)
	la, lb, lc := pipes[0].Length.Metres(), pipes[1].Length.Metres(), pipes[2].Length.Metres()
	w2, w3, w4 := (la+lb+lc)/2, lb/2, lc/2
	cases := []struct {
		name  string
		area  AreaDemand
		want  [5]float64 // share per node J1..J5
		probs int
	}{
		{"J2 and J3", allocArea(1, "a", v, orb.Polygon{allocRect(50, -50, 250, 50)}),
			[5]float64{0, w2 / (w2 + w3), w3 / (w2 + w3), 0, 0}, 0},
		{"hole over J2", allocArea(2, "b", v, orb.Polygon{allocRect(50, -50, 250, 50), allocRect(80, -20, 120, 20)}),
			[5]float64{0, 0, 1, 0, 0}, 0},
		{"two parts: J2 and J4", allocArea(3, "c", v, orb.Polygon{allocRect(90, -10, 110, 10)}, orb.Polygon{allocRect(90, 90, 110, 110)}),
			[5]float64{0, w2 / (w2 + w4), 0, w4 / (w2 + w4), 0}, 0},
		// J1 is inside but fixed: no junction inside, so the one nearest the
		// centroid (0, 0): J2 at 100 m (J1 itself is fixed).
		{"only the source inside", allocArea(4, "d", v, orb.Polygon{allocRect(-30, -30, 30, 30)}),
			[5]float64{0, 1, 0, 0, 0}, 1},
		{"nothing inside", allocArea(5, "e", v, orb.Polygon{allocRect(180, 60, 260, 140)}), // centroid (220, 100): J3 at 102 m, J4 at 120 m
			[5]float64{0, 0, 1, 0, 0}, 1},
		{"only a closed main", allocArea(6, "f", v, orb.Polygon{allocRect(280, -10, 320, 10)}),
			[5]float64{0, 0, 0, 0, 1}, 1},
	}
	if math.Abs(w2/(w2+w3)-0.75) > 1e-6 {
		t.Fatalf("setup: J2's share %g is not about 150/200", w2/(w2+w3))
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			q, probs := AllocateAreaDemands(topo, pipes, []AreaDemand{c.area}, fixed)
			for k, w := range c.want {
				if !allocClose(q[k], w*v, 1e-15) {
					t.Errorf("%s: %.12g m³/s, want %.12g", topo.Nodes[k].ID, q[k], w*v)
				}
			}
			if len(probs) != c.probs {
				t.Errorf("problems %+v, want %d", probs, c.probs)
			}
			for _, p := range probs {
				if p.File != "areas.geojson" || p.Feature != c.area.Index || p.ID != c.area.ID {
					t.Errorf("problem names %q feature %d id %q", p.File, p.Feature, p.ID)
				}
			}
		})
	}
}

func TestAllocAreaNearestNamed(t *testing.T) {
	topo, pipes, fixed := allocAreaNet(t)
	_, probs := AllocateAreaDemands(topo, pipes, []AreaDemand{allocArea(5, "e", 1, orb.Polygon{allocRect(180, 60, 260, 140)})}, fixed)
	// centroid (220, 100) to J3 (200, 0): √(20² + 100²) = 101.98 m
	if len(probs) != 1 || !strings.Contains(probs[0].What, "J3") || !strings.Contains(probs[0].What, "101.98 m") {
		t.Errorf("problems %+v", probs)
	}
}

// Conservation over overlapping and random areas on the grid: the sum at
// the nodes equals the sum of the usable areas to 1e-12 relative.
func TestAllocAreaConserves(t *testing.T) {
	pipes := gridPipes(20)
	topo, _ := Snap(pipes, halfFoot)
	fixed := make([]bool, len(topo.Nodes))
	fixed[0], fixed[200] = true, true
	rng := rand.New(rand.NewPCG(9, 9))
	var areas []AreaDemand
	var total float64
	for i := range 300 {
		x, y := -100+2100*rng.Float64(), -100+2100*rng.Float64()
		w, h := 20+400*rng.Float64(), 20+400*rng.Float64()
		v := 1e-3 * rng.Float64()
		areas = append(areas, allocArea(i+1, "", v, orb.Polygon{allocRect(x, y, x+w, y+h)}))
		total += v
	}
	areas = append(areas, AreaDemand{Index: 301, Value: 5, Usable: false})
	q, _ := AllocateAreaDemands(topo, pipes, areas, fixed)
	if got := allocSum(q); math.Abs(got-total) > 1e-12*total {
		t.Errorf("allocated %.15g m³/s, input %.15g", got, total)
	}
	if q[0] != 0 || q[200] != 0 {
		t.Errorf("fixed nodes took %g, %g m³/s", q[0], q[200])
	}
}

func allocCollection(t *testing.T, src string) *geojson.FeatureCollection {
	t.Helper()
	fc, err := geojson.UnmarshalFeatureCollection([]byte(src))
	if err != nil {
		t.Fatal(err)
	}
	return fc
}

const allocAreasJSON = `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"zone":"N1","add":100},"geometry":{"type":"Polygon","coordinates":[[[-97.5,35],[-97.49,35],[-97.49,35.01],[-97.5,35]]]}},
{"type":"Feature","properties":{"zone":"N2","add":"50"},"geometry":{"type":"MultiPolygon","coordinates":[[[[-97.5,35],[-97.49,35],[-97.49,35.01],[-97.5,35]]],[[[-97.4,35],[-97.39,35],[-97.39,35.01],[-97.4,35]]]]}},
{"type":"Feature","properties":{"zone":"N3","add":-4},"geometry":{"type":"Polygon","coordinates":[[[-97.5,35],[-97.49,35],[-97.49,35.01],[-97.5,35]]]}},
{"type":"Feature","properties":{"zone":"N4","add":7},"geometry":{"type":"Point","coordinates":[-97.5,35]}},
{"type":"Feature","properties":{"zone":"N1","add":0},"geometry":{"type":"Polygon","coordinates":[[[-97.5,35],[-97.49,35],[-97.49,35.01],[-97.5,35]]]}}
]}`

func TestAllocAreasFromCollection(t *testing.T) {
	fc := allocCollection(t, allocAreasJSON)
	areas, probs, err := AreaDemandsFromCollection("areas.geojson", fc, DemandSchema{ID: "zone", Demand: "add"})
	if err != nil {
		t.Fatal(err)
	}
	gpm := float64(hydraulics.USGallonPerMinute) // 6.30901964e-5 m³/s (DOMAIN.md §3, 1 gpm = 0.06309020 L/s)
	want := []struct {
		usable bool
		value  float64 // m³/s
		parts  int
	}{{true, 100 * gpm, 1}, {true, 50 * gpm, 2}, {false, 0, 1}, {false, 7 * gpm, 0}, {true, 0, 1}}
	for i, w := range want {
		a := areas[i]
		if a.Usable != w.usable || math.Abs(a.Value-w.value) > 1e-15 || len(a.Area) != w.parts || a.Index != i+1 {
			t.Errorf("area %d = usable %v value %g parts %d, want %+v", i+1, a.Usable, a.Value, len(a.Area), w)
		}
	}
	// negative demand, point geometry, duplicate id N1
	if len(probs) != 3 || probs[0].Feature != 3 || probs[1].Feature != 4 || probs[2].Feature != 5 ||
		!strings.Contains(probs[1].What, "want Polygon") || !strings.Contains(probs[2].What, "also used") {
		t.Errorf("problems %+v", probs)
	}
	// lps: 100 L/s = 0.1 m³/s
	areas, _, err = AreaDemandsFromCollection("areas.geojson", fc, DemandSchema{Demand: "add", DemandUnit: "lps"})
	if err != nil || math.Abs(areas[0].Value-0.1) > 1e-15 {
		t.Errorf("lps: %v, %g m³/s", err, areas[0].Value)
	}
	if _, _, err := AreaDemandsFromCollection("areas.geojson", fc, DemandSchema{Demand: "add", DemandUnit: "bushels"}); err == nil {
		t.Error("unknown unit: no error")
	}
	none := allocCollection(t, `{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"add":-1},"geometry":null}]}`)
	if _, _, err := AreaDemandsFromCollection("x.geojson", none, DemandSchema{Demand: "add"}); !errors.Is(err, ErrNoUsable) {
		t.Errorf("no usable area: err = %v", err)
	}
}

// Demands split by position on a 100 × 100 grid (20,200 pipes), 20,000
// points per run.
func BenchmarkAllocPipes20k(b *testing.B) {
	pipes := gridPipes(100)
	topo, _ := Snap(pipes, halfFoot)
	rng := rand.New(rand.NewPCG(1, 1))
	pts := make([]Point, 20000)
	for i := range pts {
		pts[i] = testPoint(i+1, "", 10000*rng.Float64(), 10000*rng.Float64(), 1e-4)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		AllocateDemandsToPipes(topo, pipes, pts, nil, 0)
	}
	b.ReportMetric(float64(len(pts))*float64(b.N)/b.Elapsed().Seconds(), "points/s")
}
