package hydraulics

import (
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"
)

// relDiff returns |a − b| / max(|a|, |b|, floor).
func relDiff(a, b, floor float64) float64 {
	return math.Abs(a-b) / max(math.Abs(a), math.Abs(b), floor)
}

// TestSolverRepeatedDemands checks that one Solver, re-solved with new
// demands and warm-started from the last solution, gives what a fresh Solve
// of the network with that demand factor gives (independent computation:
// a new ordering, factorisation and cold start).
func TestSolverRepeatedDemands(t *testing.T) {
	net := streetGrid(30, 2, 7)
	// A tolerance near the round-off floor, so both solves end at the
	// solution itself rather than within 1e-8 of it.
	const tol = 1e-12
	s, err := NewSolver(net, &Options{Tolerance: tol})
	if err != nil {
		t.Fatal(err)
	}
	var warm *Solution
	for _, factor := range []float64{1, 2.5, 0.3, 4, 1} {
		demand := make([]Flow, len(net.Nodes))
		for i, nd := range net.Nodes {
			demand[i] = nd.Demand * Flow(factor)
		}
		got, err := s.Solve(demand, warm)
		if err != nil {
			t.Fatalf("factor %g: %v", factor, err)
		}
		want, err := Solve(net, &Options{DemandFactor: factor, Tolerance: tol})
		if err != nil {
			t.Fatalf("fresh solve, factor %g: %v", factor, err)
		}
		var maxQ float64
		for _, q := range want.Flow {
			maxQ = max(maxQ, math.Abs(float64(q)))
		}
		for i := range want.Head {
			if d := relDiff(float64(got.Head[i]), float64(want.Head[i]), 1); d > 1e-9 {
				t.Fatalf("factor %g node %d: head %.12g m, fresh %.12g m (rel %.2g)", factor, i, got.Head[i], want.Head[i], d)
			}
		}
		for j := range want.Flow {
			// Flows to 1e-8 of the largest: both iterations end at the
			// round-off floor of the relative flow change, about 2e-9 on
			// this grid (Options.Tolerance; DOMAIN.md §6.4).
			if d := math.Abs(float64(got.Flow[j]-want.Flow[j])) / maxQ; d > 1e-8 {
				t.Fatalf("factor %g pipe %d: flow %.12g, fresh %.12g m³/s (rel to max %.2g)", factor, j, got.Flow[j], want.Flow[j], d)
			}
		}
		if warm != nil && got.Iterations >= want.Iterations && factor == 1 {
			t.Errorf("warm start from the factor-1 state took %d iterations, cold %d", got.Iterations, want.Iterations)
		}
		warm = got
	}
}

// TestSolverCloneParallel checks that clones solving in parallel give
// results identical to the original Solver's (deterministic arithmetic).
func TestSolverCloneParallel(t *testing.T) {
	net := streetGrid(25, 3, 3)
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	factors := []float64{0.5, 1, 1.5, 2, 3, 4}
	demandAt := func(f float64) []Flow {
		d := make([]Flow, len(net.Nodes))
		for i, nd := range net.Nodes {
			d[i] = nd.Demand * Flow(f)
		}
		return d
	}
	want := make([]*Solution, len(factors))
	for k, f := range factors {
		if want[k], err = s.Solve(demandAt(f), nil); err != nil {
			t.Fatal(err)
		}
	}
	got := make([]*Solution, len(factors))
	errs := make([]error, len(factors))
	var wg sync.WaitGroup
	for k, f := range factors {
		c := s.Clone()
		wg.Add(1)
		go func() {
			defer wg.Done()
			got[k], errs[k] = c.Solve(demandAt(f), nil)
		}()
	}
	wg.Wait()
	for k := range factors {
		if errs[k] != nil {
			t.Fatal(errs[k])
		}
		for i := range want[k].Head {
			if got[k].Head[i] != want[k].Head[i] {
				t.Fatalf("factor %g node %d: clone head %v, original %v", factors[k], i, got[k].Head[i], want[k].Head[i])
			}
		}
	}
}

// TestSolverSetGrades checks a changed reservoir grade against the closed
// form of one pipe: H_J = H_R − h(Q), h from the HW velocity form
// (DOMAIN.md §1.1, hwLossFt).
func TestSolverSetGrades(t *testing.T) {
	net := &Network{
		Nodes: []Node{reservoir("R", 200), junction("J", 500)},
		Pipes: []Pipe{usPipe("RJ", 0, 1, 2000, 8, 110)},
	}
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, gradeFt := range []float64{200, 150, 260} {
		t.Run(fmt.Sprintf("%g ft", gradeFt), func(t *testing.T) {
			if err := s.SetGrades([]Head{Head(gradeFt) * Head(Foot), 0}); err != nil {
				t.Fatal(err)
			}
			sol, err := s.Solve(nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			want := gradeFt - hwLossFt(500, 8, 110, 2000)
			if got := sol.Head[1].Feet(); math.Abs(got-want) > 1e-4 {
				t.Errorf("grade %g ft: junction head %.5f ft, want %.5f ft", gradeFt, got, want)
			}
		})
	}
	if err := s.SetGrades([]Head{1}); err == nil {
		t.Error("SetGrades accepted a short slice")
	}
	if err := s.SetGrades([]Head{Head(math.NaN()), 0}); err == nil {
		t.Error("SetGrades accepted a NaN grade")
	}
}

// TestSolverInputErrors checks the length checks of Solver.Solve.
func TestSolverInputErrors(t *testing.T) {
	s, err := NewSolver(referenceNetwork(), nil)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name   string
		demand []Flow
		warm   *Solution
		want   string
	}{
		{"short demand", []Flow{1}, nil, "demands for"},
		{"NaN demand", []Flow{0, 0, Flow(math.NaN()), 0, 0}, nil, "not finite"},
		{"short warm start", nil, &Solution{Flow: []Flow{1}}, "warm start"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := s.Solve(tc.demand, tc.warm)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one containing %q", err, tc.want)
			}
		})
	}
}

// TestSolverRankedOrder: a Solver built with a given elimination order
// (newSolverRanked, used for the fire-flow region models) factorises in
// that order. Ranked by a fresh Solver's own final order, it must give the
// same fill (nonzeros of L) and the same solution to round-off; ranked by
// the reverse of that order, which eliminates the separators first, the fill
// must be far larger, so the rank is really used.
func TestSolverRankedOrder(t *testing.T) {
	net := streetGrid(40, 3, 7)
	fresh, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := fresh.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	g := fresh.g
	own := make([]int32, len(net.Nodes))
	reverse := make([]int32, len(net.Nodes))
	for i, k := range g.unknown {
		if k >= 0 {
			own[i] = g.m.pinv[k]
			reverse[i] = int32(g.nUnknown) - g.m.pinv[k]
		}
	}
	ranked, err := newSolverRanked(net, nil, own)
	if err != nil {
		t.Fatal(err)
	}
	got, err := ranked.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got.FactorNonzeros != want.FactorNonzeros {
		t.Errorf("ranked by the fresh order: %d nonzeros in L, fresh %d", got.FactorNonzeros, want.FactorNonzeros)
	}
	for i := range want.Head {
		if d := math.Abs(float64(got.Head[i] - want.Head[i])); d > 1e-6 {
			t.Fatalf("node %d: head %.9f m ranked, %.9f m fresh", i, got.Head[i], want.Head[i])
		}
	}
	rev, err := newSolverRanked(net, nil, reverse)
	if err != nil {
		t.Fatal(err)
	}
	if n := rev.g.m.factorNonzeros(); !(n > 2*want.FactorNonzeros) {
		t.Errorf("ranked in reverse: %d nonzeros in L, want well over the fresh order's %d", n, want.FactorNonzeros)
	}
}
