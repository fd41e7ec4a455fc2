package gis

import (
	"math"
	"math/rand/v2"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/tidwall/rtree"

	"headroom/hydraulics"
)

// local turns planar metres east and north of (-97.5, 35) into lon/lat with
// the WGS84 radii there, so test geometry can be drawn in metres.
var testProj = newProjection(-97.5, 35)

func local(x, y float64) orb.Point {
	return orb.Point{testProj.lon0 + x/testProj.kx, testProj.lat0 + y/testProj.ky}
}

func testPipe(id string, xy ...float64) Pipe {
	var ls orb.LineString
	for i := 0; i+1 < len(xy); i += 2 {
		ls = append(ls, local(xy[i], xy[i+1]))
	}
	return Pipe{ID: id, File: "pipes.geojson", Geometry: ls, Line: ls, Usable: true, Diameter: 8 * hydraulics.Inch,
		Length: GeodesicLength(ls)}
}

func indexPipes(pipes []Pipe) []Pipe {
	for i := range pipes {
		pipes[i].Index = i + 1
	}
	return pipes
}

const halfFoot = 0.5 * hydraulics.Foot // 0.1524 m

func TestSnap(t *testing.T) {
	cases := []struct {
		name     string
		pipes    []Pipe
		nodes    int
		ends     [][2]int
		dangles  int      // nodes one link reaches, counted by hand from the drawing
		problems []string // substrings, one per expected Problem, in order
	}{
		{"end within tolerance joins", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100.10, 0, 200, 0)},
			3, [][2]int{{0, 1}, {1, 2}}, 2, nil},
		{"end beyond tolerance does not join", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100.20, 0, 200, 0)},
			4, [][2]int{{0, 1}, {2, 3}}, 4, []string{"near-miss: node J2"}},
		{"far apart, nothing reported", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 102, 0, 200, 0)},
			4, [][2]int{{0, 1}, {2, 3}}, 4, nil},
		{"T without a vertex splits the main", []Pipe{
			testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 0, 100, 100)},
			4, [][2]int{{0, 1}, {2, 3}}, 3, nil},
		{"T with split main snaps", []Pipe{
			testPipe("M1", 0, 0, 100, 0), testPipe("M2", 100, 0, 200, 0), testPipe("BRANCH", 100, 0, 100, 100)},
			4, [][2]int{{0, 1}, {1, 2}, {1, 3}}, 3, nil},
		{"self-loop made unusable, no orphan node", []Pipe{
			testPipe("LOOP", 0, 0, 50, 0, 50, 50, 0, 0.05), testPipe("A", 300, 0, 400, 0)},
			2, [][2]int{{-1, -1}, {0, 1}}, 2, []string{"both ends join one node"}},
		{"stub shorter than tolerance made unusable", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("STUB", 100, 0, 100.1, 0)},
			2, [][2]int{{0, 1}, {-1, -1}}, 2, []string{"zero-length pipe"}},
		{"nearest of two candidates within tolerance", []Pipe{ // C starts 0.12 m from J2, 0.08 m from J3
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100.2, 0, 200, 0), testPipe("C", 100.12, 0, 100.12, 80)},
			5, [][2]int{{0, 1}, {2, 3}, {2, 4}}, 4, []string{"near-miss: node J2"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			pipes := indexPipes(tc.pipes)
			topo, probs := Snap(pipes, halfFoot)
			if len(topo.Nodes) != tc.nodes {
				t.Errorf("got %d nodes, want %d", len(topo.Nodes), tc.nodes)
			}
			if !reflect.DeepEqual(topo.Ends, tc.ends) {
				t.Errorf("ends %v, want %v", topo.Ends, tc.ends)
			}
			if topo.Dangles != tc.dangles {
				t.Errorf("got %d dangles, want %d", topo.Dangles, tc.dangles)
			}
			if len(probs) != len(tc.problems) {
				t.Fatalf("got %d problems, want %d: %+v", len(probs), len(tc.problems), probs)
			}
			for i, w := range tc.problems {
				if !strings.Contains(probs[i].What, w) || probs[i].File != "pipes.geojson" || probs[i].Feature == 0 {
					t.Errorf("problem %d = %+v, want What containing %q", i, probs[i], w)
				}
			}
			for i, p := range pipes {
				if (tc.ends[i][0] < 0) == p.Usable {
					t.Errorf("pipe %s usable %v with ends %v", p.ID, p.Usable, tc.ends[i])
				}
			}
			for k, n := range topo.Nodes {
				if n.ID != "J"+strconv.Itoa(k+1) {
					t.Errorf("node %d id %q", k, n.ID)
				}
			}
		})
	}
}

// Node IDs follow pipe order, start then end, and repeat exactly.
func TestSnapDeterministic(t *testing.T) {
	mk := func() []Pipe {
		return indexPipes([]Pipe{
			testPipe("C", 200, 0, 200, 100), testPipe("A", 0, 0, 100, 0), testPipe("B", 100, 0, 200, 0),
		})
	}
	t1, _ := Snap(mk(), halfFoot)
	t2, _ := Snap(mk(), halfFoot)
	if !reflect.DeepEqual(t1.Nodes, t2.Nodes) || !reflect.DeepEqual(t1.Ends, t2.Ends) {
		t.Error("two runs differ")
	}
	// C makes J1 (200,0) and J2 (200,100); A makes J3 (0,0), J4 (100,0); B joins J4 and J1.
	want := [][2]int{{0, 1}, {2, 3}, {3, 0}}
	if !reflect.DeepEqual(t1.Ends, want) {
		t.Errorf("ends %v, want %v", t1.Ends, want)
	}
	// Planar X, Y are metres about the mean end position (independent check:
	// J1 and J3 lie 200 m apart east–west).
	if d := t1.Nodes[0].X - t1.Nodes[2].X; math.Abs(d-200) > 0.01 {
		t.Errorf("X(J1) − X(J3) = %.4f m, want 200", d)
	}
}

func TestSnapSkipsUnusable(t *testing.T) {
	pipes := indexPipes([]Pipe{testPipe("A", 0, 0, 100, 0), {ID: "BAD", Usable: false}, testPipe("B", 100, 0, 200, 0)})
	topo, _ := Snap(pipes, halfFoot)
	if !reflect.DeepEqual(topo.Ends, [][2]int{{0, 1}, {-1, -1}, {1, 2}}) {
		t.Errorf("ends %v", topo.Ends)
	}
}

// gridPipes lays out an n×n street grid of blocks of 100 m, each block edge
// one pipe of two segments, about (-97.5, 35).
func gridPipes(n int) []Pipe {
	var pipes []Pipe
	for i := 0; i <= n; i++ {
		for j := 0; j < n; j++ {
			x, y := float64(i)*100, float64(j)*100
			pipes = append(pipes, testPipe("", x, y, x+3, y+50, x, y+100)) // north–south
			pipes = append(pipes, testPipe("", y, x, y+50, x+3, y+100, x)) // east–west
		}
	}
	for i := range pipes {
		pipes[i].Index = i + 1
		pipes[i].ID = "P" + strconv.Itoa(i+1)
	}
	return pipes
}

// The grid check is a count: (n+1)² junctions for 2n(n+1) pipes (Euler's
// formula for a grid graph).
func TestSnapGrid(t *testing.T) {
	pipes := gridPipes(20)
	topo, probs := Snap(pipes, halfFoot)
	if len(topo.Nodes) != 21*21 || len(pipes) != 2*20*21 || len(probs) != 0 {
		t.Errorf("%d nodes for %d pipes, %d problems", len(topo.Nodes), len(pipes), len(probs))
	}
}

func BenchmarkSnap100k(b *testing.B) {
	pipes := gridPipes(223) // 2·223·224 = 99,904 pipes
	work := make([]Pipe, len(pipes))
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		copy(work, pipes)
		Snap(work, halfFoot)
	}
	b.ReportMetric(float64(len(pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
}

// Snap's grid join makes the nodes and ends that joining each end to its
// nearest node within the tolerance through the node R-tree does (the
// search it replaced, kept here as the reference: nearestWithin over an
// R-tree grown one node at a time, a closed loop's nodes deleted again).
// The ends are drawn on a coarse lattice with jitter of about the
// tolerance, so that ends fall just inside and just outside it, several
// nodes compete for one end, and some pipes close on themselves.
func TestSnapJoinAsRtreeReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 43))
	const tol = 0.15 // metres, about the default 0.5 ft
	end := func() (float64, float64) {
		return float64(rng.IntN(30))*5 + (rng.Float64()-0.5)*3*tol, float64(rng.IntN(30))*5 + (rng.Float64()-0.5)*3*tol
	}
	var pipes []Pipe
	for i := range 20_000 {
		x0, y0 := end()
		x1, y1 := end()
		if i%50 == 0 {
			x1, y1 = x0+(rng.Float64()-0.5)*tol, y0+(rng.Float64()-0.5)*tol // a stub or a loop
		}
		pipes = append(pipes, testPipe("P"+strconv.Itoa(i), x0, y0, x1, y1))
	}
	ref := &Topology{Ends: make([][2]int, len(pipes)), index: &rtree.RTreeG[int]{}}
	ref.proj = originOf(pipes)
	join := func(q orb.Point) int {
		if k, _ := ref.nearestWithin(q, tol, -1, -1); k >= 0 {
			return k
		}
		k := len(ref.Nodes)
		xy := ref.proj.xy(q)
		ref.Nodes = append(ref.Nodes, TopoNode{At: q, X: xy[0], Y: xy[1]})
		ref.index.Insert(xy, xy, k)
		return k
	}
	for i := range pipes {
		p := pipes[i]
		ref.Ends[i] = [2]int{-1, -1}
		if topoZeroLength(p.Line, tol) {
			continue
		}
		n0 := len(ref.Nodes)
		a, b := join(p.Line[0]), join(p.Line[len(p.Line)-1])
		if a == b {
			for k := len(ref.Nodes) - 1; k >= n0; k-- {
				xy := ref.proj.xy(ref.Nodes[k].At)
				ref.index.Delete(xy, xy, k)
			}
			ref.Nodes = ref.Nodes[:n0]
			continue
		}
		ref.Ends[i] = [2]int{a, b}
	}
	got, _ := Snap(pipes, hydraulics.Length(tol))
	loops := 0
	for i := range pipes {
		if ref.Ends[i][0] < 0 {
			loops++
			continue
		}
		a, b := got.Nodes[got.Ends[i][0]].At, got.Nodes[got.Ends[i][1]].At
		if a != ref.Nodes[ref.Ends[i][0]].At || b != ref.Nodes[ref.Ends[i][1]].At {
			t.Fatalf("pipe %d joins nodes at %v and %v, the reference %v and %v", i, a, b,
				ref.Nodes[ref.Ends[i][0]].At, ref.Nodes[ref.Ends[i][1]].At)
		}
	}
	if loops == 0 || len(got.Nodes) < len(ref.Nodes) {
		t.Fatalf("%d pipes left out, %d nodes against the reference's %d", loops, len(got.Nodes), len(ref.Nodes))
	}
	t.Logf("%d pipes, %d nodes before tees, %d left out", len(pipes), len(ref.Nodes), loops)
}
