package hydraulics

import (
	"math"
	"testing"
)

// TestHeadSensitivitySeries: on a branch fed from one reservoir every main
// between the tank and the node carries all of the node's supply, so its
// weight is −1 (a loss 1 m lower raises the node 1 m: the energy equation
// along a single path, DOMAIN.md §1), and a main beyond the node has
// weight 0.
func TestHeadSensitivitySeries(t *testing.T) {
	net := &Network{
		Nodes: []Node{reservoir("R", 200), junction("A", 300), junction("B", 200), junction("C", 100)},
		Pipes: []Pipe{usPipe("RA", 0, 1, 1000, 8, 110), usPipe("AB", 1, 2, 800, 6, 100), usPipe("BC", 2, 3, 600, 6, 100)},
	}
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	sol, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	w, err := s.HeadSensitivity(sol, 2)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{-1, -1, 0}
	for j := range want {
		if math.Abs(w[j]-want[j]) > 1e-9 {
			t.Errorf("pipe %s: weight %.12f, want %g", net.Pipes[j].ID, w[j], want[j])
		}
	}
}

// TestHeadSensitivityFiniteDifference: in a looped network the weights
// predict the head change of a small C change in one main, checked against
// two full solves (a central difference of the solver's own results; the
// first-order term is exact as the change goes to zero).
func TestHeadSensitivityFiniteDifference(t *testing.T) {
	net := cureSixInchNet()
	s, err := NewSolver(net, &Options{Tolerance: 1e-12})
	if err != nil {
		t.Fatal(err)
	}
	sol, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	const node = 4 // J3, on the loop
	w, err := s.Clone().HeadSensitivity(sol, node)
	if err != nil {
		t.Fatal(err)
	}
	for j := range net.Pipes {
		const dc = 0.05
		head := func(c float64) float64 {
			n := &Network{Nodes: net.Nodes, Pipes: append([]Pipe(nil), net.Pipes...)}
			n.Pipes[j].C = c
			got, err := Solve(n, &Options{Tolerance: 1e-12})
			if err != nil {
				t.Fatal(err)
			}
			return float64(got.Head[node])
		}
		p := net.Pipes[j]
		lossAt := func(c float64) float64 { return float64(HeadLoss(sol.Flow[j], p.Diameter, p.Length, c)) }
		dh := lossAt(p.C-dc) - lossAt(p.C+dc)
		measured := head(p.C-dc) - head(p.C+dc)
		predicted := w[j] * dh
		if math.Abs(measured-predicted) > 1e-3*math.Abs(measured)+1e-9 {
			t.Errorf("pipe %s: head change %.9f m, the weights predict %.9f m (w %.6f)", p.ID, measured, predicted, w[j])
		}
	}
}
