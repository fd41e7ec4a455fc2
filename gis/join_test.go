package gis

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"headroom/hydraulics"
)

// lineTopology is three pipes in a row, nodes J1..J4 at x = 0, 100, 200, 300 m.
func lineTopology(t *testing.T) (*Topology, []Pipe) {
	t.Helper()
	pipes := indexPipes([]Pipe{testPipe("A", 0, 0, 100, 0), testPipe("B", 100, 0, 200, 0), testPipe("C", 200, 0, 300, 0)})
	topo, probs := Snap(pipes, halfFoot)
	if len(topo.Nodes) != 4 || len(probs) != 0 {
		t.Fatalf("setup: %d nodes, problems %+v", len(topo.Nodes), probs)
	}
	return topo, pipes
}

func testPoint(index int, id string, x, y, value float64) Point {
	return Point{Index: index, File: "points.geojson", ID: id, At: local(x, y), Value: value, Usable: true}
}

func TestAllocateDemands(t *testing.T) {
	topo, _ := lineTopology(t)
	demands := []Point{
		testPoint(1, "m1", 10, 5, 1e-3),  // nearest J1, but J1 is fixed → J2
		testPoint(2, "m2", 95, -3, 2e-3), // J2
		testPoint(3, "m3", 210, 4, 3e-3), // J3
		testPoint(4, "m4", 320, 60, 4e-3),
		{Index: 5, ID: "bad", At: local(300, 0), Value: 9, Usable: false}, // not usable: ignored
	}
	fixed := []bool{true}
	q, probs := AllocateDemands(topo, demands, fixed, 50)
	// Expected by hand: each point to its nearest non-fixed node.
	want := []hydraulics.Flow{0, 3e-3, 3e-3, 4e-3}
	for k := range want {
		if math.Abs(float64(q[k]-want[k])) > 1e-15 {
			t.Errorf("node %s: got %g m³/s, want %g", topo.Nodes[k].ID, q[k], want[k])
		}
	}
	// Conservation: the allocated total equals the usable input total.
	var sum hydraulics.Flow
	for _, x := range q {
		sum += x
	}
	if math.Abs(float64(sum-10e-3)) > 1e-15 {
		t.Errorf("total %g m³/s, want 0.010", sum)
	}
	// m4 lies √(20² + 60²) = 63.2 m from J4, beyond the 50 m warning; m1 is 90.1 m from J2.
	if len(probs) != 2 || probs[0].ID != "m1" || probs[1].ID != "m4" || !strings.Contains(probs[1].What, "63.2") ||
		!strings.Contains(probs[1].Action, "allocated") {
		t.Errorf("problems = %+v", probs)
	}
}

func TestAllocateDemandsAllFixed(t *testing.T) {
	topo, _ := lineTopology(t)
	q, probs := AllocateDemands(topo, []Point{testPoint(1, "m1", 0, 0, 1)}, []bool{true, true, true, true}, 0)
	if q[0]+q[1]+q[2]+q[3] != 0 || len(probs) != 1 {
		t.Errorf("q %v problems %+v", q, probs)
	}
}

func TestInterpolateElevations(t *testing.T) {
	topo, _ := lineTopology(t)
	pts := []Point{
		testPoint(1, "", 0, 0, 10),   // exact hit on J1
		testPoint(2, "", 150, 0, 20), // J2 and J3 are 50 m from both 2 and 3
		testPoint(3, "", 250, 0, 40),
		testPoint(4, "", 300, 30, 70), // J4: 30 m
		{Index: 5, At: local(100, 0), Value: 1e6, Usable: false},
	}
	z, err := InterpolateElevations(topo, pts, 2, 2)
	if err != nil {
		t.Fatal(err)
	}
	// Inverse-distance weighting by hand (Shepard 1968, power 2, k = 2):
	// J1 exact hit 10; J2 nearest are 2 (50 m) and 1 (100 m):
	//   (20/50² + 10/100²)/(1/50² + 1/100²) = 18;
	// J3 is 50 m from 2 and 3: symmetric average (20+40)/2 = 30;
	// J4: point 4 at 30 m, point 3 at √(50²+0) = 50 m:
	//   (70/30² + 40/50²)/(1/30² + 1/50²) = 62.0588…
	want := []float64{10, 18, 30, (70/900.0 + 40/2500.0) / (1/900.0 + 1/2500.0)}
	for k, w := range want {
		// Planar test geometry vs ellipsoidal distances agree to ~1e-6 relative here.
		if math.Abs(z[k].Metres()-w) > 1e-3 {
			t.Errorf("node %s: got %.6f, want %.6f", topo.Nodes[k].ID, z[k].Metres(), w)
		}
	}
	if _, err := InterpolateElevations(topo, pts[4:], 2, 2); err == nil {
		t.Error("no usable points: want an error")
	}
}

func TestAttachSources(t *testing.T) {
	topo, _ := lineTopology(t)
	src := []Point{
		testPoint(1, "T1", 2, 1, 100),    // J1, 2.2 m
		testPoint(2, "T2", 1, -1, 90),    // also J1: second source on one node
		testPoint(3, "T3", 300, 500, 80), // 500 m away: beyond the limit
		testPoint(4, "T4", 299, 0, 95),   // J4
	}
	sup, probs := AttachSources(topo, src, 100)
	if len(sup) != 2 || sup[0].Node != 0 || sup[0].Source != 0 || sup[0].Grade != 100 ||
		sup[1].Node != 3 || sup[1].Source != 3 || sup[1].Grade != 95 {
		t.Fatalf("supplies = %+v", sup)
	}
	// √(2² + 1²) = 2.236 m, planar by construction.
	if math.Abs(sup[0].Distance.Metres()-math.Sqrt(5)) > 1e-3 {
		t.Errorf("distance %.4f m, want 2.236", sup[0].Distance.Metres())
	}
	if len(probs) != 2 || probs[0].ID != "T2" || !strings.Contains(probs[0].What, "already feeds") ||
		probs[1].ID != "T3" || !strings.Contains(probs[1].What, "beyond the limit") {
		t.Errorf("problems = %+v", probs)
	}
}

func TestNewNetwork(t *testing.T) {
	topo, pipes := lineTopology(t)
	pipes = append(pipes, Pipe{Index: 4, ID: "X", Usable: false})
	topo.Ends = append(topo.Ends, [2]int{-1, -1})
	topo.Parts = append(topo.Parts, nil)
	pipes[1].Closed = true
	pipes[2].ID = ""
	sup := []Supply{{Node: 0, Source: 0, Grade: 50}}
	demand := []hydraulics.Flow{0, 1e-3, 2e-3, 3e-3}
	elev := []hydraulics.Length{10, 11, 12, 13}
	net := NewNetwork(pipes, topo, sup, demand, elev, nil, []float64{100, 110, 120, 130})
	if len(net.Nodes) != 4 || len(net.Pipes) != 3 {
		t.Fatalf("%d nodes, %d pipes", len(net.Nodes), len(net.Pipes))
	}
	if !net.Nodes[0].Fixed || net.Nodes[0].Grade != 50 || net.Nodes[1].Fixed || net.Nodes[2].Demand != 2e-3 ||
		net.Nodes[3].Elevation != 13 || net.Nodes[3].ID != "J4" {
		t.Errorf("nodes = %+v", net.Nodes)
	}
	if idx := topo.Parts; len(idx[0]) != 1 || idx[0][0] != 0 || idx[1][0] != 1 || idx[2][0] != 2 || idx[3] != nil {
		t.Errorf("parts %v", idx)
	}
	p := net.Pipes[1]
	if p.ID != "B" || p.From != 1 || p.To != 2 || !p.Closed || p.C != 110 || p.Diameter != 8*hydraulics.Inch ||
		p.Length != pipes[1].Length {
		t.Errorf("pipe B = %+v", p)
	}
	if net.Pipes[2].ID != "#3" {
		t.Errorf("unnamed pipe id %q, want #3", net.Pipes[2].ID)
	}
}

// A Topology made by hand (no Snap) still answers nearest-node queries.
func TestHandMadeTopology(t *testing.T) {
	topo := &Topology{Nodes: []TopoNode{{ID: "N1", At: orb.Point{-97.5, 35}}, {ID: "N2", At: local(100, 0)}}}
	q, _ := AllocateDemands(topo, []Point{testPoint(1, "m", 90, 0, 1)}, nil, 0)
	if q[1] != 1 || q[0] != 0 {
		t.Errorf("q = %v", q)
	}
}

// TestJoinsInParallelMatchBruteForce: on a grid large enough that demand
// allocation and elevation interpolation split into parallel chunks, every
// demand lands on the junction a brute-force search over all nodes finds
// (nearest on the ellipsoid, ties to the lower index), and every elevation
// is Shepard's (1968) weighted mean of the k nearest points found the same
// way. Run with -race to check the chunks share nothing they write.
func TestJoinsInParallelMatchBruteForce(t *testing.T) {
	topo, _ := Snap(gridPipes(40), halfFoot) // 1,681 junctions: two chunks (minChunk)
	rng := rand.New(rand.NewPCG(7, 7))
	pts := make([]Point, 3000)
	for i := range pts {
		pts[i] = testPoint(i+1, "", 4000*rng.Float64(), 4000*rng.Float64(), 1e-4*rng.Float64())
	}
	fixed := make([]bool, len(topo.Nodes))
	fixed[0] = true
	q, _ := AllocateDemands(topo, pts, fixed, 0)
	want := make([]hydraulics.Flow, len(topo.Nodes))
	for _, p := range pts {
		best, bestD := -1, math.Inf(1)
		for k, n := range topo.Nodes {
			if d := segmentMetres(p.At, n.At); !fixed[k] && d < bestD {
				best, bestD = k, d
			}
		}
		want[best] += hydraulics.Flow(p.Value)
	}
	for k := range want {
		if math.Abs(float64(q[k]-want[k])) > 1e-12 {
			t.Fatalf("node %d: demand %g, brute force %g", k, q[k], want[k])
		}
	}
	z, err := InterpolateElevations(topo, pts, 4, 2)
	if err != nil {
		t.Fatal(err)
	}
	for j := 0; j < len(topo.Nodes); j += 29 {
		at := topo.Nodes[j].At
		d := make([]float64, len(pts))
		idx := make([]int, len(pts))
		for i, p := range pts {
			d[i], idx[i] = segmentMetres(at, p.At), i
		}
		slices.SortFunc(idx, func(a, b int) int { return cmp.Compare(d[a], d[b]) })
		var sw, swz float64
		for _, i := range idx[:4] {
			w := math.Pow(d[i], -2)
			sw += w
			swz += w * pts[i].Value
		}
		if got := float64(z[j]); math.Abs(got-swz/sw) > 1e-9*math.Abs(swz/sw)+1e-15 {
			t.Fatalf("node %d: elevation %g, brute force %g", j, got, swz/sw)
		}
	}
}
