package hydraulics

import (
	"math"
	"testing"
)

// givenReference is the reference network of DOMAIN.md §6.7: reservoir R at
// 150 ft, all elevations 0, six 1,000-ft pipes, demands 100/300/300/300 gpm.
func givenReference() *Network {
	net := &Network{Nodes: []Node{
		{ID: "R", Fixed: true, Grade: Head(150 * Foot)},
		{ID: "1", Demand: 100 * USGallonPerMinute},
		{ID: "2", Demand: 300 * USGallonPerMinute},
		{ID: "3", Demand: 300 * USGallonPerMinute},
		{ID: "4", Demand: 300 * USGallonPerMinute},
	}}
	for _, p := range []struct {
		id       string
		from, to int
		dIn, c   float64
	}{{"R-1", 0, 1, 12, 120}, {"1-2", 1, 2, 8, 100}, {"1-3", 1, 3, 8, 100}, {"2-4", 2, 4, 6, 100}, {"3-4", 3, 4, 8, 100}, {"2-3", 2, 3, 6, 100}} {
		net.Pipes = append(net.Pipes, Pipe{ID: p.id, From: p.from, To: p.to, Length: 1000 * Foot, Diameter: Length(p.dIn) * Inch, C: p.c})
	}
	return net
}

// The published flows of DOMAIN.md §6.7 (gpm, to 0.001).
var givenReferenceGPM = []float64{1000, 444.137, 455.863, 103.039, 196.961, 41.098}

func TestGivenFlowsReferenceNetwork(t *testing.T) {
	net := givenReference()
	flow := make([]Flow, len(givenReferenceGPM))
	for j, q := range givenReferenceGPM {
		flow[j] = Flow(q) * USGallonPerMinute
	}
	sol, chk, err := GivenFlows(net, flow, 1)
	if err != nil {
		t.Fatal(err)
	}
	// Heads: DOMAIN.md §6.7 (GGA and Hardy Cross agree), ±0.02 ft as stated there.
	for _, tc := range []struct {
		node int
		ft   float64
	}{{1, 147.060}, {2, 140.457}, {3, 140.130}, {4, 138.665}} {
		if got := sol.Head[tc.node].Feet(); math.Abs(got-tc.ft) > 0.02 {
			t.Errorf("H%d = %.3f ft, want %.3f ft", tc.node, got, tc.ft)
		}
	}
	// The published flows are rounded to 0.001 gpm: continuity holds to a few
	// thousandths of a gpm and the two loops close to well under 0.01 ft.
	if got := sol.MaxContinuityResidual.GPM(); got > 0.003 {
		t.Errorf("largest imbalance %.4f gpm, want ≤ 0.003 gpm", got)
	}
	if got := sol.MaxHeadResidual.Feet(); got > 0.01 {
		t.Errorf("largest loop mismatch %.4f ft, want ≤ 0.01 ft", got)
	}
	// Six pipes, five nodes: a spanning tree has four pipes, so two close loops.
	if chk.Loops != 2 {
		t.Errorf("%d loop pipes, want 2", chk.Loops)
	}
	if d := sol.Supply.GPM() - 1000; math.Abs(d) > 1e-9 {
		t.Errorf("supply %.6f gpm, want the 1,000 gpm in R-1", sol.Supply.GPM())
	}
	if d := sol.Demand.GPM() - 1000; math.Abs(d) > 1e-9 {
		t.Errorf("demand %.6f gpm, want 1,000 gpm", sol.Demand.GPM())
	}
}

func TestGivenFlowsMatchSolve(t *testing.T) {
	net := givenReference()
	solved, err := Solve(net, &Options{DemandFactor: 1.5})
	if err != nil {
		t.Fatal(err)
	}
	sol, _, err := GivenFlows(net, solved.Flow, 1.5)
	if err != nil {
		t.Fatal(err)
	}
	// The solver's heads meet its head tolerance (1e-4 m, Options) on each
	// pipe; a tree path is at most two pipes deep here, so heads agree to
	// 2e-4 m (independent: the solver, not GivenFlows, found the flows).
	for k := range net.Nodes {
		if d := math.Abs(float64(sol.Head[k] - solved.Head[k])); d > 2e-4 {
			t.Errorf("node %s: head %.6f m from the given flows, %.6f m solved", net.Nodes[k].ID, sol.Head[k], solved.Head[k])
		}
	}
	if sol.MaxContinuityResidual > 1e-9 {
		t.Errorf("imbalance %g m³/s on solved flows", float64(sol.MaxContinuityResidual))
	}
	if sol.MaxHeadResidual > 2e-4 {
		t.Errorf("loop mismatch %g m on solved flows", float64(sol.MaxHeadResidual))
	}
}

func TestGivenFlowsReportsWhatIsWrong(t *testing.T) {
	net := givenReference()
	flow := make([]Flow, len(givenReferenceGPM))
	for j, q := range givenReferenceGPM {
		flow[j] = Flow(q) * USGallonPerMinute
	}
	// 50 gpm too much in 2-4: node 2 loses 50, node 4 gains 50 (continuity,
	// by hand), and loop 2-4-3 no longer closes.
	flow[3] += 50 * USGallonPerMinute
	sol, chk, err := GivenFlows(net, flow, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		node int
		gpm  float64
	}{{2, -50}, {4, +50}} {
		if got := chk.Imbalance[tc.node].GPM(); math.Abs(got-tc.gpm) > 0.003 {
			t.Errorf("imbalance at node %d = %.4f gpm, want %.0f gpm", tc.node, got, tc.gpm)
		}
	}
	if chk.WorstNode != 2 && chk.WorstNode != 4 {
		t.Errorf("worst node %d, want 2 or 4 (both 50 gpm out, to the rounding of the flows)", chk.WorstNode)
	}
	// The tree from R (breadth first, pipes in index order) is R-1, 1-2,
	// 1-3, 2-4; 3-4 and 2-3 close the loops. With 2-4 carrying 153.039 gpm
	// the head at 4 falls by the extra Hazen-Williams loss, computed here
	// with the SI handbook form 10.67·L·Q^1.852/(C^1.852·D^4.8704)
	// (DOMAIN.md §1.3; within 0.1 % of the exact constant).
	hw := func(gpm, dIn, c float64) float64 { // ft over 1,000 ft
		q := gpm * float64(USGallonPerMinute)
		return 10.67 * 304.8 * math.Pow(q, 1.852) / (math.Pow(c, 1.852) * math.Pow(dIn*0.0254, 4.8704)) / 0.3048
	}
	want := hw(153.039, 6, 100) - hw(103.039, 6, 100)
	if !chk.Tree[3] || chk.Tree[4] || chk.Tree[5] {
		t.Fatalf("tree %v, want R-1, 1-2, 1-3, 2-4", chk.Tree)
	}
	if got := chk.LoopMismatch[4].Feet(); math.Abs(got-want) > 0.002*want+0.01 {
		t.Errorf("mismatch in 3-4 %.3f ft, want %.3f ft", got, want)
	}
	if chk.WorstPipe != 4 || sol.MaxHeadResidual != chk.LoopMismatch[4] {
		t.Errorf("worst pipe %d (%.3f m), want 3-4", chk.WorstPipe, float64(sol.MaxHeadResidual))
	}
}

func TestGivenFlowsErrors(t *testing.T) {
	net := givenReference()
	for _, tc := range []struct {
		name   string
		flow   []Flow
		factor float64
	}{
		{"too few flows", make([]Flow, 5), 1},
		{"NaN flow", []Flow{0, 0, Flow(math.NaN()), 0, 0, 0}, 1},
		{"negative factor", make([]Flow, 6), -1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, _, err := GivenFlows(net, tc.flow, tc.factor); err == nil {
				t.Error("no error")
			}
		})
	}
	// A junction cut off by a closed pipe is unsupplied, with a NaN head.
	net.Pipes[0].Closed = true
	sol, _, err := GivenFlows(net, make([]Flow, 6), 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(sol.Unsupplied) != 4 || !math.IsNaN(float64(sol.Head[1])) {
		t.Errorf("unsupplied %v, head at 1 %v; want nodes 1–4 and NaN", sol.Unsupplied, sol.Head[1])
	}
}
