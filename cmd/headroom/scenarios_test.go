package main

import (
	"math"
	"testing"

	"headroom/hydraulics"
)

// TestScenariosShareOneSolver: the scenarios, solved on one Solver with
// each scenario's grades and factored demands, each after the first started
// from the ones before it (solveScenarios, warmStart), agree with a
// separate cold hydraulics.Solve of each scenario's network with its
// DemandFactor to within what the solver's convergence test allows: heads
// to 1e-6 m and flows to 1e-6 of the largest flow (the test stops at a
// relative flow change of 1e-8; common practice for comparing two converged
// Newton solves, the figures ours). The first scenario, solved cold both
// ways, agrees to the bit; a warm start takes no more iterations.
func TestScenariosShareOneSolver(t *testing.T) {
	r := demoResult(t)
	cfg := r.cfg
	for k, sc := range r.scenarios {
		want, err := hydraulics.Solve(r.ctlNetwork(sc.name), &hydraulics.Options{
			DemandFactor:  sc.factor,
			Tolerance:     cfg.Solver.Tolerance,
			MaxIterations: cfg.Solver.MaxIterations,
		})
		if err != nil {
			t.Fatalf("%s: %v", sc.name, err)
		}
		got := sc.sol
		if (k == 0 && got.Iterations != want.Iterations) || got.Iterations > want.Iterations {
			t.Errorf("%s: %d iterations, separate cold solve %d", sc.name, got.Iterations, want.Iterations)
		}
		headTol, flowTol := 1e-6, 1e-6*maxAbsFlow(want.Flow)
		if k == 0 {
			headTol, flowTol = 0, 0
		}
		for i := range want.Head {
			if d := math.Abs(float64(got.Head[i] - want.Head[i])); d > headTol {
				t.Fatalf("%s: node %d head %v, separate solve %v", sc.name, i, got.Head[i], want.Head[i])
			}
		}
		for j := range want.Flow {
			if d := math.Abs(float64(got.Flow[j] - want.Flow[j])); d > flowTol {
				t.Fatalf("%s: pipe %d flow %v, separate solve %v", sc.name, j, got.Flow[j], want.Flow[j])
			}
		}
		if math.Abs(float64(got.Demand-want.Demand)) > 1e-9*math.Abs(float64(want.Demand)) ||
			math.Abs(float64(got.Supply-want.Supply)) > flowTol+1e-9*math.Abs(float64(want.Supply)) {
			t.Errorf("%s: demand, supply %v %v, separate solve %v %v", sc.name, got.Demand, got.Supply, want.Demand, want.Supply)
		}
		t.Logf("%s: %d iterations, cold %d", sc.name, got.Iterations, want.Iterations)
	}
}

func maxAbsFlow(q []hydraulics.Flow) float64 {
	m := 0.0
	for _, x := range q {
		m = max(m, math.Abs(float64(x)))
	}
	return m
}
