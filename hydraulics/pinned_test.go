package hydraulics

import (
	"math"
	"testing"
)

// TestSolvePinnedSingleMain: one main from a reservoir to a junction; the
// extra demand that holds the junction's head at T is the flow whose
// Hazen-Williams loss is H₀ − T, Q = ((H₀ − T)/r)^0.54 (the HW head-loss
// form h = r·Q^1.852 solved for Q, DOMAIN.md §1), less the background
// demand the junction already draws.
func TestSolvePinnedSingleMain(t *testing.T) {
	const grade, target = 100.0, 80.0 // m
	background := 200 * USGallonPerMinute
	net := &Network{
		Nodes: []Node{
			{ID: "R", Fixed: true, Grade: grade},
			{ID: "J", Elevation: 40, Demand: background},
		},
		Pipes: []Pipe{{ID: "P", From: 0, To: 1, Length: 1000, Diameter: 8 * Inch, C: 120}},
	}
	s, err := NewSolver(net, &Options{Tolerance: 1e-12})
	if err != nil {
		t.Fatal(err)
	}
	sol, x, err := s.SolvePinned(nil, nil, 1, 1, target, 0)
	if err != nil {
		t.Fatal(err)
	}
	r := Resistance(1000, 8*Inch, 120)
	want := math.Pow((grade-target)/r, HWSlopeExponent) - float64(background)
	if relDiff(float64(x), want, 1e-12) > 1e-9 {
		t.Errorf("X = %.6f gpm, closed form %.6f gpm", x.GPM(), Flow(want).GPM())
	}
	if math.Abs(float64(sol.Head[1])-target) > 1e-9 {
		t.Errorf("pinned head %.12f m, want %.12f", float64(sol.Head[1]), target)
	}
	if relDiff(float64(sol.Demand), float64(background+x), 1e-12) > 1e-12 {
		t.Errorf("solution demand %g, want background + X = %g", float64(sol.Demand), float64(background+x))
	}
}

// TestSolvePinnedMatchesPlainSolve: on a looped grid with two supplies, the
// pinned solve (demand at one junction unknown, head at another fixed)
// gives the X for which a plain re-solve with that extra demand puts the
// pinned junction's head at the target, and the same heads everywhere (an
// independent solve: a new factorisation of the fixed-demand problem).
func TestSolvePinnedMatchesPlainSolve(t *testing.T) {
	net := streetGrid(20, 2, 5)
	s, err := NewSolver(net, &Options{Tolerance: 1e-12})
	if err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name       string
		node, at   int
		dropMetres Head
	}{
		{"at the draw", 150, 150, 15},
		{"at a neighbour", 150, 151, 10},
		{"far away", 37, 380, 2},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			target := base.Head[tc.at] - tc.dropMetres
			got, x, err := s.SolvePinned(nil, base, tc.node, tc.at, target, 0)
			if err != nil {
				t.Fatal(err)
			}
			if !(x > 0) {
				t.Fatalf("X = %g, want a positive draw for a head drop", float64(x))
			}
			demand := make([]Flow, len(net.Nodes))
			for i, nd := range net.Nodes {
				demand[i] = nd.Demand
			}
			demand[tc.node] += x
			plain, err := pinSolver(t, net).Solve(demand, nil)
			if err != nil {
				t.Fatal(err)
			}
			if d := math.Abs(float64(plain.Head[tc.at] - target)); d > 1e-6 {
				t.Errorf("plain solve with X puts the pinned head %.3g m off its target", d)
			}
			for i := range net.Nodes {
				if d := math.Abs(float64(plain.Head[i] - got.Head[i])); d > 1e-6 {
					t.Fatalf("node %d: pinned %.9f m, plain %.9f m", i, float64(got.Head[i]), float64(plain.Head[i]))
				}
			}
		})
	}
	if _, _, err := s.SolvePinned(nil, base, -1, 3, 10, 0); err == nil {
		t.Error("pinned solve at node -1: no error")
	}
}

// pinSolver is NewSolver with a tight tolerance, failing the test on error.
func pinSolver(t *testing.T, net *Network) *Solver {
	t.Helper()
	s, err := NewSolver(net, &Options{Tolerance: 1e-12})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestSolveNearChordSteps: a re-solve at a demand 0.1 % away from the last,
// warm-started from the last solution, converges on chord steps with the
// last factorisation alone (no new factorisation) to the same
// heads as an independent cold Solve (a new solver, ordering and
// factorisation), to 1e-6 m; and a far re-solve, where chord steps would
// crawl, factorises on every iteration after the first, failed, chord step.
func TestSolveNearChordSteps(t *testing.T) {
	net := streetGrid(30, 2, 9)
	s := pinSolver(t, net)
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name       string
		factor     float64
		wantChords int // iterations without a factorisation
	}{
		{"near", 1.001, -1}, // every iteration
		{"far", 3, 1},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			demand := make([]Flow, len(net.Nodes))
			for i, nd := range net.Nodes {
				demand[i] = nd.Demand * Flow(tc.factor)
			}
			if _, err := s.Solve(nil, base); err != nil { // the last solve is the base again
				t.Fatal(err)
			}
			got, err := s.SolveNear(demand, base)
			if err != nil {
				t.Fatal(err)
			}
			want, err := Solve(net, &Options{DemandFactor: tc.factor, Tolerance: 1e-12})
			if err != nil {
				t.Fatal(err)
			}
			for i := range net.Nodes {
				if d := math.Abs(float64(got.Head[i] - want.Head[i])); d > 1e-6 {
					t.Fatalf("node %d: SolveNear %.9f m, Solve %.9f m", i, float64(got.Head[i]), float64(want.Head[i]))
				}
			}
			wantChords := tc.wantChords
			if wantChords < 0 {
				wantChords = got.Iterations
			}
			if chords := got.Iterations - got.Factorisations; chords != wantChords {
				t.Errorf("%d factorisations in %d iterations: %d chord steps, want %d",
					got.Factorisations, got.Iterations, chords, wantChords)
			}
		})
	}
}
