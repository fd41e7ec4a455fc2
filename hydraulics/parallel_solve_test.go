package hydraulics

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"
)

// featureGrid is streetGrid with the features a real system adds around
// its looped core: dead-end branches (trees of up to three pipes), series
// chains of degree-2 junctions closing new loops, closed pipes, check
// valves and a booster pump from a low reservoir. It is large enough that
// the head matrix gets a parallel factorisation plan.
func featureGrid(seed uint64) *Network {
	const side = 150
	net := streetGrid(side, 6, seed)
	rng := rand.New(rand.NewPCG(seed, 7))
	addNode := func(near int, demandGPM float64) int {
		nd := net.Nodes[near]
		net.Nodes = append(net.Nodes, Node{
			ID: fmt.Sprintf("X%d", len(net.Nodes)), Elevation: nd.Elevation,
			Demand: Flow(demandGPM) * USGallonPerMinute,
			X:      nd.X + 40*rng.Float64(), Y: nd.Y + 40*rng.Float64(),
		})
		return len(net.Nodes) - 1
	}
	addPipe := func(from, to int, dIn float64) int {
		net.Pipes = append(net.Pipes, Pipe{
			ID: fmt.Sprintf("X%d", len(net.Pipes)), From: from, To: to,
			Length: Length(60 + 60*rng.Float64()), Diameter: Length(dIn) * Inch, C: 100,
		})
		return len(net.Pipes) - 1
	}
	grid := side * side
	for range 800 { // dead-end branches
		at := rng.IntN(grid)
		for range 1 + rng.IntN(3) {
			leaf := addNode(at, 1+2*rng.Float64())
			addPipe(at, leaf, 6)
			at = leaf
		}
	}
	for range 300 { // series chains between two grid nodes
		a, b := rng.IntN(grid), rng.IntN(grid)
		if a == b {
			continue
		}
		prev := a
		for range 2 + rng.IntN(3) {
			mid := addNode(prev, 0.5)
			addPipe(prev, mid, 8)
			prev = mid
		}
		addPipe(prev, b, 8)
	}
	for range 200 {
		net.Pipes[rng.IntN(len(net.Pipes))].Closed = true
	}
	for range 50 {
		net.Pipes[rng.IntN(len(net.Pipes))].CheckValve = true
	}
	curve, err := FitPumpCurve([3]Flow{0, 300 * USGallonPerMinute, 500 * USGallonPerMinute},
		[3]Head{Head(120 * Foot), Head(100 * Foot), Head(60 * Foot)})
	if err != nil {
		panic(err)
	}
	low := len(net.Nodes)
	net.Nodes = append(net.Nodes, Node{ID: "low", Fixed: true, Grade: 40, X: -100, Y: -100})
	net.Pipes = append(net.Pipes, Pipe{ID: "booster", From: low, To: side + 1, Pump: &curve})
	return net
}

// TestSolveFeaturesOneAndTwoProcessors: on a network with trees, series
// chains, closed pipes, check valves, a pump, and for a pinned solve, the
// solution is the same to the bit on one processor as on two (the factor
// is; TestSPDFactorBitwise), and it obeys Kirchhoff's laws: continuity at
// every junction, Hazen-Williams (written out independently, hwLossFt) on
// every open pipe, the pump curve on the pump, and zero head loss summed
// around every fundamental loop.
func TestSolveFeaturesOneAndTwoProcessors(t *testing.T) {
	net := featureGrid(5)
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.g.m.sn.tasks) != parallelWorkers {
		t.Fatal("no parallel plan; the case does not exercise it")
	}
	pinNode, pinAt := 75*150+80, 75*150+82
	pinHead := Head(net.Nodes[pinAt].Elevation) + HeadOf(20*PoundPerSquareInch)
	solveBoth := func(name string, solve func() (*Solution, error)) *Solution {
		two, err := solve()
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		prev := runtime.GOMAXPROCS(1)
		one, err := solve()
		runtime.GOMAXPROCS(prev)
		if err != nil {
			t.Fatalf("%s on one processor: %v", name, err)
		}
		sameBits(t, name, one, two)
		return two
	}
	plain := solveBoth("plain", func() (*Solution, error) { return s.Solve(nil, nil) })
	checkKirchhoff(t, net, plain, nil)
	closed := 0
	for j, p := range net.Pipes {
		if p.CheckValve && s.g.solved[j] && plain.Flow[j] == 0 {
			closed++
		}
	}
	t.Logf("%d iterations, %d check valves closed, nnz(L) %d", plain.Iterations, closed, plain.FactorNonzeros)
	demand := make([]Flow, len(net.Nodes))
	for i, nd := range net.Nodes {
		demand[i] = nd.Demand
	}
	var draw Flow
	pinned := solveBoth("pinned", func() (*Solution, error) {
		sol, x, err := s.SolvePinned(demand, plain, pinNode, pinAt, pinHead, 0)
		draw = x
		return sol, err
	})
	if d := math.Abs(float64(pinned.Head[pinAt] - pinHead)); d > 1e-6 {
		t.Errorf("pinned head %.9f m, want %.9f m", float64(pinned.Head[pinAt]), float64(pinHead))
	}
	demand[pinNode] += draw
	checkKirchhoff(t, net, pinned, demand)
}

// sameBits fails unless a and b have bit-identical heads and flows and the
// same iteration count.
func sameBits(t *testing.T, name string, a, b *Solution) {
	t.Helper()
	if a.Iterations != b.Iterations {
		t.Errorf("%s: %d iterations against %d", name, a.Iterations, b.Iterations)
	}
	for i := range a.Head {
		if math.Float64bits(float64(a.Head[i])) != math.Float64bits(float64(b.Head[i])) {
			t.Fatalf("%s: node %d head %v against %v", name, i, a.Head[i], b.Head[i])
		}
	}
	for j := range a.Flow {
		if math.Float64bits(float64(a.Flow[j])) != math.Float64bits(float64(b.Flow[j])) {
			t.Fatalf("%s: pipe %d flow %v against %v", name, j, a.Flow[j], b.Flow[j])
		}
	}
}

// checkKirchhoff checks sol against the laws of the network with the
// given demands (nil: the network's own):
//
//   - continuity at every supplied junction: |Σ inflow − Σ outflow − q| ≤
//     1e-9 of the largest flow (the solver's continuityTolerance);
//   - energy on every open pipe carrying flow: |H_from − H_to − h(Q)| ≤
//     2e-4 m, h from hwLossFt (the solver converges to 1e-4 m on its own
//     curve, which differs from Hazen-Williams only in its linear branch
//     below 1e-5 ft/s, by under 1e-8 m for these mains);
//   - the pump: H_to − H_from = A − B·Q^C within 2e-4 m, or a closed pump
//     with H_to − H_from ≥ A − HeadTolerance;
//   - around every fundamental loop of the open pipes (a spanning forest
//     and each pipe not in it), the head losses h(Q) sum to zero within
//     2e-4 m per pipe of the loop.
func checkKirchhoff(t *testing.T, net *Network, sol *Solution, demand []Flow) {
	t.Helper()
	if demand == nil {
		demand = make([]Flow, len(net.Nodes))
		for i, nd := range net.Nodes {
			demand[i] = nd.Demand
		}
	}
	supplied := make([]bool, len(net.Nodes))
	for i := range net.Nodes {
		supplied[i] = !math.IsNaN(float64(sol.Head[i]))
	}
	// A shut check valve or pump reports zero flow while the solver keeps
	// a leak of 1e-10 m³/s per metre of head across it (shutResistance),
	// so continuity is not checked at its ends.
	shutEnd := make([]bool, len(net.Nodes))
	excess := make([]float64, len(net.Nodes))
	maxQ := 0.0
	for j, p := range net.Pipes {
		if (p.CheckValve || p.Pump != nil) && !p.Closed && sol.Flow[j] == 0 {
			shutEnd[p.From], shutEnd[p.To] = true, true
		}
		excess[p.From] -= float64(sol.Flow[j])
		excess[p.To] += float64(sol.Flow[j])
		maxQ = max(maxQ, math.Abs(float64(sol.Flow[j])))
	}
	for i, nd := range net.Nodes {
		if nd.Fixed || !supplied[i] || shutEnd[i] {
			continue
		}
		if e := math.Abs(excess[i] - float64(demand[i])); e > 1e-9*maxQ {
			t.Fatalf("node %s: continuity residual %.3g m³/s", nd.ID, e)
		}
	}
	// loss is the head loss along link j at its flow, ft; ok false for a
	// link the check leaves out (closed, unsupplied, shut, or no flow).
	loss := func(j int) (float64, bool) {
		p := net.Pipes[j]
		q := float64(sol.Flow[j])
		if p.Closed || !supplied[p.From] || !supplied[p.To] || q == 0 {
			return 0, false
		}
		if p.Pump != nil {
			return -p.Pump.Head(Flow(q)).Feet(), true
		}
		return hwLossFt(Flow(q).GPM(), float64(p.Diameter/Inch), p.C, float64(p.Length/Foot)), true
	}
	const tolFt = 2e-4 / 0.3048
	for j, p := range net.Pipes {
		h, ok := loss(j)
		if !ok {
			if p.Pump != nil && supplied[p.From] && !p.Closed {
				lift := float64(sol.Head[p.To] - sol.Head[p.From])
				if lift < p.Pump.A-1e-4 {
					t.Errorf("pump %s closed against a lift of %.4f m below its shutoff head %.4f m", p.ID, lift, p.Pump.A)
				}
			}
			continue
		}
		dh := (sol.Head[p.From] - sol.Head[p.To]).Feet()
		if math.Abs(dh-h) > tolFt {
			t.Fatalf("pipe %s: head drop %.6f ft, head loss %.6f ft", p.ID, dh, h)
		}
	}
	// Fundamental loops: a union-find spanning forest of the links
	// checked above, and for each other such link the tree path between
	// its ends, found by walking up a breadth-first forest.
	adj := make([][]int, len(net.Nodes))
	for j, p := range net.Pipes {
		if _, ok := loss(j); ok {
			adj[p.From] = append(adj[p.From], j)
			adj[p.To] = append(adj[p.To], j)
		}
	}
	up := make([]int, len(net.Nodes)) // node → tree link to its parent, −1 at a root
	depth := make([]int, len(net.Nodes))
	seen := make([]bool, len(net.Nodes))
	inTree := make([]bool, len(net.Pipes))
	for r := range net.Nodes {
		if seen[r] {
			continue
		}
		seen[r], up[r] = true, -1
		queue := []int{r}
		for len(queue) > 0 {
			v := queue[0]
			queue = queue[1:]
			for _, j := range adj[v] {
				w := net.Pipes[j].From + net.Pipes[j].To - v
				if !seen[w] {
					seen[w], up[w], depth[w], inTree[j] = true, j, depth[v]+1, true
					queue = append(queue, w)
				}
			}
		}
	}
	// signedLoss is the loss from v towards its parent.
	signedLoss := func(v int) float64 {
		j := up[v]
		h, _ := loss(j)
		if net.Pipes[j].From == v {
			return h
		}
		return -h
	}
	loops := 0
	for j, p := range net.Pipes {
		h, ok := loss(j)
		if !ok || inTree[j] {
			continue
		}
		// Around the loop From → To along j, then To → From in the tree.
		sum, n := h, 1
		a, b := p.To, p.From
		var back float64 // loss from b up to the meeting node
		for a != b {
			if depth[a] >= depth[b] {
				sum += signedLoss(a)
				a = net.Pipes[up[a]].From + net.Pipes[up[a]].To - a
			} else {
				back += signedLoss(b)
				b = net.Pipes[up[b]].From + net.Pipes[up[b]].To - b
			}
			n++
		}
		sum -= back
		if math.Abs(sum) > float64(n)*tolFt {
			t.Fatalf("loop closed by pipe %s (%d links): head losses sum to %.6f ft", p.ID, n, sum)
		}
		loops++
	}
	if loops == 0 {
		t.Fatal("no loop checked")
	}
}
