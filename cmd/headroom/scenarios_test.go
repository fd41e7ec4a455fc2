package main

import (
	"math"
	"testing"

	"headroom/hydraulics"
)

// TestScenariosShareOneSolver: the scenarios, solved on one Solver with
// each scenario's grades and factored demands (solveScenarios), are to the
// bit what a separate hydraulics.Solve of each scenario's network with its
// DemandFactor gives (the way the run solved them before sharing the
// ordering and symbolic factorisation), iteration counts included.
func TestScenariosShareOneSolver(t *testing.T) {
	r := demoResult(t)
	cfg := r.cfg
	for _, sc := range r.scenarios {
		want, err := hydraulics.Solve(r.ctlNetwork(sc.name), &hydraulics.Options{
			DemandFactor:  sc.factor,
			Tolerance:     cfg.Solver.Tolerance,
			MaxIterations: cfg.Solver.MaxIterations,
		})
		if err != nil {
			t.Fatalf("%s: %v", sc.name, err)
		}
		got := sc.sol
		if got.Iterations != want.Iterations || got.Factorisations != want.Factorisations {
			t.Errorf("%s: %d iterations (%d factorisations), separate solve %d (%d)",
				sc.name, got.Iterations, got.Factorisations, want.Iterations, want.Factorisations)
		}
		for i := range want.Head {
			if math.Float64bits(float64(got.Head[i])) != math.Float64bits(float64(want.Head[i])) {
				t.Fatalf("%s: node %d head %v, separate solve %v", sc.name, i, got.Head[i], want.Head[i])
			}
		}
		for j := range want.Flow {
			if math.Float64bits(float64(got.Flow[j])) != math.Float64bits(float64(want.Flow[j])) {
				t.Fatalf("%s: pipe %d flow %v, separate solve %v", sc.name, j, got.Flow[j], want.Flow[j])
			}
		}
		if got.Demand != want.Demand || got.Supply != want.Supply || got.MaxHeadResidual != want.MaxHeadResidual {
			t.Errorf("%s: demand, supply, head residual %v %v %v, separate solve %v %v %v", sc.name,
				got.Demand, got.Supply, got.MaxHeadResidual, want.Demand, want.Supply, want.MaxHeadResidual)
		}
	}
}
