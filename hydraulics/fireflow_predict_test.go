package hydraulics

import (
	"math"
	"testing"
)

// comparePredicted runs the sweep with both warm starts and checks the
// predicted one against the reference, FireFlowFromBase. Each promises the
// root within Tolerance above its Available, so the two differ by at most
// Tolerance; the limiting junction and the ceiling flag are the same, and
// the residual at the hydrant differs by what the pressure falls over that
// difference (under 0.1 psi per gpm here). It returns both sweeps.
func comparePredicted(t *testing.T, s *Solver, base *Solution, hydrants []int, opt FireFlowOptions) (ref, pred []FireFlowResult) {
	t.Helper()
	opt.Method = FireFlowFromBase
	ref = FireFlow(s, nil, base, hydrants, opt)
	opt.Method = FireFlowPredicted
	pred = FireFlow(s, nil, base, hydrants, opt)
	tol := defaultFireTolerance.GPM()
	refFactors, predFactors := 0, 0
	for k, h := range hydrants {
		e, p := ref[k], pred[k]
		if e.Err != nil || p.Err != nil {
			t.Fatalf("hydrant %d: errors %v, %v", h, e.Err, p.Err)
		}
		refFactors += e.Factorisations
		predFactors += p.Factorisations
		if d := math.Abs((p.Available - e.Available).GPM()); d > tol+1e-9 {
			t.Errorf("hydrant %d: predicted start %.3f gpm, from base %.3f gpm", h, p.Available.GPM(), e.Available.GPM())
		}
		if p.Limiting != e.Limiting || p.AtCeiling != e.AtCeiling {
			t.Errorf("hydrant %d: limiting %d (ceiling %v), from base %d (%v)", h, p.Limiting, p.AtCeiling, e.Limiting, e.AtCeiling)
		}
		if d := math.Abs((p.Residual - e.Residual).PSI()); d > 0.1*tol {
			t.Errorf("hydrant %d: residual %.3f psi, from base %.3f psi", h, p.Residual.PSI(), e.Residual.PSI())
		}
		if p.RegionSolves == 0 && e.Available > 0 {
			t.Errorf("hydrant %d: no region solve: the prediction was not made", h)
		}
	}
	// The prediction is there to save factorisations (counted, not timed).
	if !(predFactors < refFactors) {
		t.Errorf("%d factorisations with predicted starts, %d from base: want fewer", predFactors, refFactors)
	}
	return ref, pred
}

// checkPromise checks a result against solves of the whole network from a
// cold start (Solver.Solve, independent of the search and its warm
// starts): every checked junction keeps the residual with Available drawn
// at the hydrant (to pinSlack, as the search's end may be a pinned solve
// that puts a junction at the residual exactly), some junction falls below
// it with Available + Tolerance, the lowest of them then being Limiting.
func checkPromise(t *testing.T, s *Solver, r FireFlowResult, zone []int) {
	t.Helper()
	net := s.Network()
	demand := make([]Flow, len(net.Nodes))
	lowest := func(extra Flow) (int, Pressure) {
		for i, d := range s.g.demand0 {
			demand[i] = Flow(d)
		}
		demand[r.Node] += extra
		sol, err := s.Solve(demand, nil)
		if err != nil {
			t.Fatalf("hydrant %d: solve at %.1f gpm: %v", r.Node, extra.GPM(), err)
		}
		worst, minP := -1, Pressure(math.Inf(1))
		for i, nd := range net.Nodes {
			if nd.Fixed || !s.Supplied(i) || (zone != nil && zone[i] != zone[r.Node]) {
				continue
			}
			if p := pressureAt(net, sol, i); p < minP {
				worst, minP = i, p
			}
		}
		return worst, minP
	}
	if _, p := lowest(r.Available); p < defaultFireResidual-pinSlack {
		t.Errorf("hydrant %d: %.3f psi somewhere at the available %.3f gpm", r.Node, p.PSI(), r.Available.GPM())
	}
	if r.AtCeiling {
		return
	}
	if w, p := lowest(r.Available + defaultFireTolerance); p >= defaultFireResidual || w != r.Limiting {
		t.Errorf("hydrant %d: at %.3f gpm + 1 gpm the lowest is %.3f psi at %d, want below 20 psi at the limiting %d", r.Node, r.Available.GPM(), p.PSI(), w, r.Limiting)
	}
}

// TestFireFlowPredictedGrid: on the benchmark grid (fireGrid, tanks in
// every block), with and without zones.
func TestFireFlowPredictedGrid(t *testing.T) {
	net, zone := fireGrid(60)
	s, err := NewSolver(net, &Options{DemandFactor: 1.5, Tolerance: benchFireTolerance})
	if err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var hydrants []int
	for i, nd := range net.Nodes {
		if !nd.Fixed && i%53 == 0 {
			hydrants = append(hydrants, i)
		}
	}
	for _, z := range [][]int{zone, nil} {
		_, pred := comparePredicted(t, s, base, hydrants, FireFlowOptions{Zone: z})
		for k := 0; k < len(pred); k += 5 {
			checkPromise(t, s, pred[k], z)
		}
	}
}

// TestFireFlowPredictedStreetGrid: streetGrid's two supplies on the
// diagonal, so that the fire flow comes from far away and the region
// (a quarter of the junctions here) does not hold the whole drawdown.
func TestFireFlowPredictedStreetGrid(t *testing.T) {
	net := streetGrid(30, 2, 7)
	s, err := NewSolver(net, &Options{DemandFactor: 1.5})
	if err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var hydrants []int
	for i, nd := range net.Nodes {
		if !nd.Fixed && i%7 == 3 {
			hydrants = append(hydrants, i)
		}
	}
	_, pred := comparePredicted(t, s, base, hydrants, FireFlowOptions{Residual: 10 * PoundPerSquareInch})
	positive := 0
	for _, r := range pred {
		if r.Available > 0 {
			positive++
		}
	}
	if positive == 0 {
		t.Fatal("no hydrant has fire flow: the test does not exercise the search")
	}
}

// TestFireFlowPredictedClosedForm: the single main of TestFireFlowNFPA291
// (closed form Q = ((H_static − 20 psi)/r)^0.54, hwRGPM, DOMAIN.md §1.1)
// and the high junction of TestFireFlowLimitingNode, with the prediction
// forced on these small networks.
func TestFireFlowPredictedClosedForm(t *testing.T) {
	const gradeFt, lengthFt, dIn, c = 250, 3000, 8, 110
	s, err := NewSolver(singleMain(gradeFt, lengthFt, dIn, c), nil)
	if err != nil {
		t.Fatal(err)
	}
	r := FireFlow(s, nil, nil, []int{1}, FireFlowOptions{Method: FireFlowPredicted})[0]
	closed := math.Pow((gradeFt-20*psiFt)/hwRGPM(dIn, c, lengthFt), 0.54)
	if got := r.Available.GPM(); r.Err != nil || !(got <= closed+1e-3 && got >= closed-1.001) || r.Limiting != 1 {
		t.Errorf("got %+v (%.3f gpm), closed form %.3f gpm", r, got, closed)
	}

	const zKFt = 150
	net := &Network{
		Nodes: []Node{reservoir("R", gradeFt), junction("H", 0), {ID: "K", Elevation: zKFt * Foot}},
		Pipes: []Pipe{usPipe("main", 0, 1, 2000, dIn, 120), usPipe("H-K", 1, 2, 200, 6, 120)},
	}
	if s, err = NewSolver(net, nil); err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	r = FireFlow(s, nil, base, []int{1}, FireFlowOptions{Method: FireFlowPredicted})[0]
	closed = math.Pow((gradeFt-zKFt-20*psiFt)/hwRGPM(dIn, 120, 2000), 0.54)
	if got := r.Available.GPM(); r.Err != nil || !(got <= closed+1e-3 && got >= closed-1.001) || r.Limiting != 2 || r.RegionSolves == 0 {
		t.Errorf("got %+v (%.3f gpm), closed form %.3f gpm limited by K (2)", r, got, closed)
	}
}

// TestFireFlowPredictedDeterministic: each hydrant's prediction and search
// depend only on the base solution, so the results do not depend on the
// number of workers.
func TestFireFlowPredictedDeterministic(t *testing.T) {
	net, zone := fireGrid(45)
	s, err := NewSolver(net, &Options{DemandFactor: 1.5, Tolerance: benchFireTolerance})
	if err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var hydrants []int
	for i, nd := range net.Nodes {
		if !nd.Fixed && i%31 == 5 {
			hydrants = append(hydrants, i)
		}
	}
	opt := FireFlowOptions{Zone: zone, Method: FireFlowPredicted, Workers: 1}
	one := FireFlow(s, nil, base, hydrants, opt)
	opt.Workers = 2
	two := FireFlow(s, nil, base, hydrants, opt)
	for k := range hydrants {
		if one[k] != two[k] {
			t.Errorf("hydrant %d: 1 worker %+v, 2 workers %+v", hydrants[k], one[k], two[k])
		}
	}
}

// TestFireFlowAutoMethod: FireFlowAuto predicts from predictMinJunctions
// junctions on and starts from base below: fireGrid(224) has 50,176 nodes
// of which 225 are tanks (one per 15×15 block), fireGrid(225) 50,625 with
// 225 tanks.
func TestFireFlowAutoMethod(t *testing.T) {
	if testing.Short() {
		t.Skip("orders two 50,000-junction grids")
	}
	for _, tc := range []struct {
		side       int
		junctions  int
		predicting bool
	}{{224, 50176 - 225, false}, {225, 50625 - 225, true}} {
		net, _ := fireGrid(tc.side)
		s, err := NewSolver(net, nil)
		if err != nil {
			t.Fatal(err)
		}
		if s.g.nUnknown != tc.junctions {
			t.Fatalf("side %d: %d junctions, want %d", tc.side, s.g.nUnknown, tc.junctions)
		}
		if got := usePrediction(s.g, FireFlowAuto); got != tc.predicting {
			t.Errorf("side %d (%d junctions): predicts %v, want %v", tc.side, s.g.nUnknown, got, tc.predicting)
		}
		if usePrediction(s.g, FireFlowFromBase) || !usePrediction(s.g, FireFlowPredicted) {
			t.Errorf("side %d: the explicit methods are not kept", tc.side)
		}
	}
}
