package gis

import (
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"headroom/hydraulics"
)

// topoCheckParts checks what Topology promises about Links and Parts: every
// usable pipe's parts chain from its start node to its end node, lie in
// Links in pipe order and then along the pipe, and their lengths sum to the
// pipe's Length within 1e-9 relative (the shares are fractions of one sum).
func topoCheckParts(t *testing.T, pipes []Pipe, topo *Topology) {
	t.Helper()
	if len(topo.Parts) != len(pipes) || len(topo.Ends) != len(pipes) {
		t.Fatalf("%d part lists, %d ends for %d pipes", len(topo.Parts), len(topo.Ends), len(pipes))
	}
	next, usable := 0, 0
	for i, parts := range topo.Parts {
		e := topo.Ends[i]
		if e[0] < 0 {
			if parts != nil {
				t.Errorf("unusable pipe %d has parts %v", i, parts)
			}
			continue
		}
		usable++
		var sum hydraulics.Length
		at := e[0]
		for _, j := range parts {
			if j != next {
				t.Errorf("pipe %d: link %d, want %d (Links in pipe order, then along the pipe)", i, j, next)
			}
			next = j + 1
			l := topo.Links[j]
			if l.Pipe != i || l.From != at || l.From == l.To || !(l.Length > 0) {
				t.Errorf("pipe %d: link %d = %+v does not continue from node %d", i, j, l, at)
			}
			at = l.To
			sum += l.Length
		}
		if at != e[1] {
			t.Errorf("pipe %d: parts end at node %d, want %d", i, at, e[1])
		}
		if rel := math.Abs(float64(sum-pipes[i].Length)) / float64(pipes[i].Length); rel > 1e-9 {
			t.Errorf("pipe %d: parts sum to %.9f m, pipe is %.9f m", i, sum.Metres(), pipes[i].Length.Metres())
		}
	}
	if next != len(topo.Links) || len(topo.Links) != usable+topo.Splits {
		t.Errorf("%d links, %d usable pipes, %d splits", len(topo.Links), usable, topo.Splits)
	}
}

// topoHW is the SI Hazen-Williams head loss in metres (Q m³/s, D and L m),
// from the flow form of DOMAIN.md §1.2, Q = 0.27842·C·D^2.63·S^0.54,
// solved for S: h = L·(Q/(0.27842·C·D^2.63))^(1/0.54).
func topoHW(q, d, l, c float64) float64 {
	return l * math.Pow(q/(0.27842*c*math.Pow(d, 2.63)), 1/0.54)
}

// A tee drawn without a break: the branch ends 0.10 m off the main's
// centreline (within the 0.1524 m tolerance), on no vertex. The main is
// split there and the solved flows follow from continuity alone (a tree).
func TestTopologyTeeSplitSolved(t *testing.T) {
	pipes := indexPipes([]Pipe{testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 0.10, 100, 100)})
	topo, probs := Snap(pipes, halfFoot)
	if len(probs) != 0 || topo.Splits != 1 || len(topo.Links) != 3 {
		t.Fatalf("problems %+v, %d splits, %d links; want none, 1, 3", probs, topo.Splits, len(topo.Links))
	}
	topoCheckParts(t, pipes, topo)
	// MAIN made J1 (0,0), J2 (200,0); BRANCH made J3 (100,0.1), J4 (100,100).
	if want := [][]int{{0, 1}, {2}}; !reflect.DeepEqual(topo.Parts, want) {
		t.Errorf("parts %v, want %v", topo.Parts, want)
	}
	if l := topo.Links[0]; l.From != 0 || l.To != 2 {
		t.Errorf("first part of MAIN %+v, want J1→J3", l)
	}
	if topo.Ends[0] != [2]int{0, 1} || topo.Dangles != 3 {
		t.Errorf("ends of MAIN %v, %d dangles; want J1–J2 and 3 (J1, J2, J4)", topo.Ends[0], topo.Dangles)
	}
	// The split is at the foot of the perpendicular, x = 100 m: each part is
	// half of the 200 m main (local metres; geodesic within 1 mm here).
	for _, j := range topo.Parts[0] {
		if d := topo.Links[j].Length.Metres() - 100; math.Abs(d) > 1e-3 {
			t.Errorf("part %d is %.4f m, want 100", j, topo.Links[j].Length.Metres())
		}
	}

	const grade = 60.0           // m at the supply J1
	const qEnd, qBr = 5e-3, 3e-3 // m³/s at J2 and J4
	sup := []Supply{{Node: 0, Grade: grade}}
	net := NewNetwork(pipes, topo, sup, []hydraulics.Flow{0, qEnd, 0, qBr}, nil, nil, []float64{120, 120})
	if ids := []string{net.Pipes[0].ID, net.Pipes[1].ID, net.Pipes[2].ID}; !reflect.DeepEqual(ids, []string{"MAIN/1", "MAIN/2", "BRANCH"}) {
		t.Errorf("network pipe ids %v", ids)
	}
	sol, err := hydraulics.Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Continuity at J3 and J2, J4 (a tree: no loop flow to find).
	want := []float64{qEnd + qBr, qEnd, qBr}
	for j, w := range want {
		if got := float64(sol.Flow[j]); math.Abs(got-w) > 1e-9 {
			t.Errorf("flow in %s = %.9f m³/s, want %.9f", net.Pipes[j].ID, got, w)
		}
	}
	// Head at the tee from the independent SI flow form (DOMAIN.md §1.2; its
	// 0.27842 is given to 5 digits, so 0.05 % of the loss is ample).
	d := (8 * hydraulics.Inch).Metres()
	h := grade - topoHW(qEnd+qBr, d, topo.Links[0].Length.Metres(), 120)
	if got := float64(sol.Head[2]); math.Abs(got-h) > 5e-4*(grade-h) {
		t.Errorf("head at the tee %.4f m, want %.4f", got, h)
	}
}

// Two tees on one main of two segments, given out of order along it, split
// it into three parts in order along the line.
func TestTopologyTwoTees(t *testing.T) {
	pipes := indexPipes([]Pipe{
		testPipe("MAIN", 0, 0, 100, 0, 300, 0),
		testPipe("EAST", 250, 0, 250, -80),  // on segment 2
		testPipe("WEST", 50, -0.05, 50, 90), // on segment 1, 5 cm off
	})
	topo, probs := Snap(pipes, halfFoot)
	if len(probs) != 0 || topo.Splits != 2 {
		t.Fatalf("problems %+v, %d splits; want none and 2", probs, topo.Splits)
	}
	topoCheckParts(t, pipes, topo)
	// Nodes: J1 (0,0), J2 (300,0), J3 (250,0), J4, J5 (50,−0.05), J6.
	wantNodes := [][2]int{{0, 4}, {4, 2}, {2, 1}}
	wantLen := []float64{50, 200, 50} // metres, from the drawing
	for k, j := range topo.Parts[0] {
		l := topo.Links[j]
		if [2]int{l.From, l.To} != wantNodes[k] || math.Abs(l.Length.Metres()-wantLen[k]) > 1e-3 {
			t.Errorf("part %d = %+v, want nodes %v and %.0f m", k+1, l, wantNodes[k], wantLen[k])
		}
	}
	net := NewNetwork(pipes, topo, nil, nil, nil, nil, []float64{100, 100, 100})
	if net.Pipes[2].ID != "MAIN/3" || net.Pipes[3].ID != "EAST" {
		t.Errorf("ids %q, %q; want MAIN/3, EAST", net.Pipes[2].ID, net.Pipes[3].ID)
	}
}

// The near-miss rule, at 0.5 ft tolerance (0.1524 m): a dangling end closer
// than 5 × tolerance (0.762 m) to another node or pipe is reported; beyond
// the tolerance nothing is joined or split.
func TestTopologyNearMiss(t *testing.T) {
	tol := halfFoot.Metres()
	cases := []struct {
		name   string
		pipes  []Pipe
		splits int
		want   string // substring of the one Problem, "" for none
	}{
		{"tee just beyond tolerance is not split", []Pipe{
			testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 1.2*tol, 100, 100)},
			0, `from pipe "MAIN"`},
		{"tee just within tolerance is split", []Pipe{
			testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 0.9*tol, 100, 100)},
			1, ""},
		{"node at 4× tolerance reported", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100+4*tol, 0, 200, 0)},
			0, "from node J3"},
		{"node at 6× tolerance not reported", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100+6*tol, 0, 200, 0)},
			0, ""},
		{"pipe at 6× tolerance not reported", []Pipe{
			testPipe("MAIN", 0, 0, 200, 0), testPipe("BRANCH", 100, 6*tol, 100, 100)},
			0, ""},
		{"short stub's own neighbours are not near-misses", []Pipe{
			testPipe("A", 0, 0, 100, 0), testPipe("B", 100, 0, 200, 0), testPipe("STUB", 100, 0, 100, 0.5)},
			0, ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			pipes := indexPipes(tc.pipes)
			topo, probs := Snap(pipes, halfFoot)
			if topo.Splits != tc.splits {
				t.Errorf("%d splits, want %d", topo.Splits, tc.splits)
			}
			topoCheckParts(t, pipes, topo)
			if tc.want == "" {
				if len(probs) != 0 {
					t.Errorf("problems %+v, want none", probs)
				}
				return
			}
			if len(probs) != 1 || !strings.Contains(probs[0].What, "near-miss") || !strings.Contains(probs[0].What, tc.want) {
				t.Errorf("problems %+v, want one near-miss %q", probs, tc.want)
			}
		})
	}
}

// The near-miss message gives the distance on the ellipsoid: 4 × 0.1524 m
// = 0.61 m (2.0 ft), drawn in local metres.
func TestTopologyNearMissDistance(t *testing.T) {
	pipes := indexPipes([]Pipe{testPipe("A", 0, 0, 100, 0), testPipe("B", 100.6096, 0, 200, 0)})
	_, probs := Snap(pipes, halfFoot)
	if len(probs) != 1 || !strings.Contains(probs[0].What, "0.61 m, 2.0 ft") || probs[0].ID != "A" {
		t.Errorf("problems %+v", probs)
	}
}

// Zero-length pipes: every vertex within the tolerance of one point. A
// 0.4 m pipe is not (its ends are 0.2 m from its middle, beyond 0.1524 m).
func TestTopologyZeroLength(t *testing.T) {
	pipes := indexPipes([]Pipe{
		testPipe("A", 0, 0, 100, 0),
		testPipe("BLOB", 50, 50, 50.1, 50.1, 50.2, 50), // within 0.11 m of (50.1, 50.05)
		testPipe("DOT", 70, 70, 70, 70),
		testPipe("SHORT", 100, 0, 100.4, 0),
	})
	topo, probs := Snap(pipes, halfFoot)
	if len(probs) != 2 || probs[0].ID != "BLOB" || probs[1].ID != "DOT" || !strings.Contains(probs[0].What, "zero-length") {
		t.Fatalf("problems %+v, want BLOB and DOT zero-length", probs)
	}
	if pipes[1].Usable || pipes[2].Usable || !pipes[3].Usable || topo.Parts[1] != nil {
		t.Errorf("usable %v %v %v, parts %v", pipes[1].Usable, pipes[2].Usable, pipes[3].Usable, topo.Parts)
	}
	// A made J1, J2; SHORT joined J2 and made J3: no node from the blobs.
	if len(topo.Nodes) != 3 || topo.Ends[3] != [2]int{1, 2} {
		t.Errorf("%d nodes, SHORT ends %v", len(topo.Nodes), topo.Ends[3])
	}
	topoCheckParts(t, pipes, topo)
}

// Two pipes joining the same nodes along the same line (one drawn backwards,
// 5 cm off) are a duplicate pair: both kept, the later one reported. A third
// pipe between the same nodes along another street is not a duplicate.
func TestTopologyDuplicates(t *testing.T) {
	pipes := indexPipes([]Pipe{
		testPipe("A", 0, 0, 50, 0, 100, 0),
		testPipe("AROUND", 0, 0, 50, 30, 100, 0),
		testPipe("COPY", 100, 0, 50, 0.05, 0, 0),
	})
	topo, probs := Snap(pipes, halfFoot)
	if len(probs) != 1 || probs[0].ID != "COPY" || !strings.Contains(probs[0].What, `duplicate: joins nodes J1 and J2 along the same line as pipe "A" (feature 1)`) {
		t.Fatalf("problems %+v", probs)
	}
	if len(topo.Links) != 3 {
		t.Errorf("%d links, want all 3 pipes kept", len(topo.Links))
	}
	topoCheckParts(t, pipes, topo)
	// The Hausdorff test itself, by hand: a line 0.2 m off (beyond 0.1524 m)
	// is not within; 0.1 m off is.
	for _, c := range []struct {
		off  float64
		want bool
	}{{0.1, true}, {0.2, false}} {
		a, b := testPipe("", 0, 0, 100, 0), testPipe("", 0, 0, 50, c.off, 100, 0)
		if got := topo.topoHausdorffWithin(a.Line, b.Line, halfFoot.Metres()); got != c.want {
			t.Errorf("offset %.1f m: within %v, want %v", c.off, got, c.want)
		}
	}
}

// topoTeeGrid lays out an n×n grid of 100 m blocks about (-97.5, 35). The
// even north–south streets are each drawn as one long line (a vertex every
// 50 m, at mid-block, so tees fall inside segments); the odd ones and all
// east–west streets are drawn block by block, with a kink at mid-block.
// Each east–west pipe ends on the interior of an even street's line except
// at the grid's top and bottom edge: (n/2+1)·(n−1) tees for even n.
func topoTeeGrid(n int) []Pipe {
	var pipes []Pipe
	for i := 0; i <= n; i++ {
		x := float64(i) * 100
		if i%2 == 0 {
			xy := []float64{x, 0}
			for j := 0; j < n; j++ {
				xy = append(xy, x, float64(j)*100+50, x, float64(j+1)*100)
			}
			pipes = append(pipes, testPipe("", xy...))
		} else {
			for j := 0; j < n; j++ {
				y := float64(j) * 100
				pipes = append(pipes, testPipe("", x, y, x+3, y+50, x, y+100))
			}
		}
		for j := 0; j < n; j++ { // east–west, row i
			y := float64(j) * 100
			pipes = append(pipes, testPipe("", y, x, y+50, x+3, y+100, x))
		}
	}
	for i := range pipes {
		pipes[i].Index = i + 1
		pipes[i].ID = "P" + strconv.Itoa(i+1)
	}
	return pipes
}

// The tee grid counts follow from its construction: (n+1)² junctions, the
// (n/2+1)·(n−1) tees, no dangling end (every grid node has 2 to 4 mains),
// and no problem.
func TestTopologyTeeGrid(t *testing.T) {
	const n = 6
	pipes := topoTeeGrid(n)
	topo, probs := Snap(pipes, halfFoot)
	if len(topo.Nodes) != (n+1)*(n+1) || topo.Splits != (n/2+1)*(n-1) || topo.Dangles != 0 || len(probs) != 0 {
		t.Errorf("%d nodes, %d splits, %d dangles, problems %+v; want %d, %d, 0, none",
			len(topo.Nodes), topo.Splits, topo.Dangles, probs, (n+1)*(n+1), (n/2+1)*(n-1))
	}
	topoCheckParts(t, pipes, topo)
	// The long line P1 (x = 0) is cut into n blocks of 100 m.
	if len(topo.Parts[0]) != n {
		t.Errorf("P1 in %d parts, want %d", len(topo.Parts[0]), n)
	}
	for _, j := range topo.Parts[0] {
		if d := topo.Links[j].Length.Metres(); math.Abs(d-100) > 1e-3 {
			t.Errorf("part %d of P1 is %.4f m, want 100", j, d)
		}
	}
}

// Node IDs and links repeat exactly for the same input, tees and all.
func TestTopologyDeterministic(t *testing.T) {
	t1, p1 := Snap(topoTeeGrid(4), halfFoot)
	t2, p2 := Snap(topoTeeGrid(4), halfFoot)
	if !reflect.DeepEqual(t1.Nodes, t2.Nodes) || !reflect.DeepEqual(t1.Links, t2.Links) ||
		!reflect.DeepEqual(t1.Parts, t2.Parts) || !reflect.DeepEqual(p1, p2) {
		t.Error("two runs differ")
	}
	for k, n := range t1.Nodes {
		if n.ID != "J"+strconv.Itoa(k+1) {
			t.Errorf("node %d id %q", k, n.ID)
		}
	}
}

func BenchmarkSnapTees100k(b *testing.B) {
	pipes := topoTeeGrid(258) // 130 long lines + 129·258 + 259·258 blocks = 100,234 pipes
	work := make([]Pipe, len(pipes))
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		copy(work, pipes)
		Snap(work, halfFoot)
	}
	b.ReportMetric(float64(len(pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
}
