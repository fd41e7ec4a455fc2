package hydraulics

import "fmt"

// HeadSensitivity returns, per pipe j, the weight w_j of the first-order
// change of the head at node when each pipe's head-loss curve is shifted
// at its present flow:
//
//	δH_node ≈ Σ_j w_j · δh_j,   w_j = p_j · (λ_a − λ_b),   G·λ = e_node,
//
// where δh_j is the change of pipe j's loss h_j(Q_j) (signed, From→To) with
// its flow held at sol's, p_j = 1/h_j'(Q_j) its conductance, a and b its
// From and To nodes (λ is zero at fixed nodes) and G = Σ_j p_j·(e_a −
// e_b)(e_a − e_b)ᵀ the head matrix of the Global Gradient Algorithm at
// sol's flows (Todini & Pilati 1988, DOMAIN.md §2). It follows from
// linearising H_a − H_b = h_j(Q_j) + δh_j with the demands fixed: the
// shifts act as head sources, and δH = G⁻¹·Σ_j p_j·δh_j·(e_a − e_b).
//
// For a main that alone joins a tank to node, w_j = −1: a loss lower by
// 1 m raises the node 1 m. In a loop |w_j| is the share of the node's
// supply the main carries. Upsizing a main lowers its loss; the first-order
// gain δH overestimates the true one when the change is large, since the
// larger main draws flow from its neighbours.
//
// Pipes not solved (closed, unsupplied) have w_j = 0, and so has every
// pipe when node is fixed. Cost: one numeric factorisation and one solve.
func (s *Solver) HeadSensitivity(sol *Solution, node int) ([]float64, error) {
	g := s.g
	if sol == nil || len(sol.Flow) != len(g.q) {
		return nil, fmt.Errorf("hydraulics: head sensitivity: the solution is not of this network")
	}
	if node < 0 || node >= len(g.unknown) {
		return nil, fmt.Errorf("hydraulics: head sensitivity: node %d out of range", node)
	}
	if !g.supplied[node] {
		return nil, fmt.Errorf("hydraulics: head sensitivity: node %d is not supplied", node)
	}
	w := make([]float64, len(g.q))
	row := g.unknown[node]
	if row < 0 {
		return w, nil
	}
	if err := g.start(sol); err != nil {
		return nil, err
	}
	g.factored = false
	g.m.clear()
	for j, ok := range g.solved {
		if ok {
			_, g.p[j] = g.lossAndConductance(j, g.q[j])
			g.assemble(j, g.p[j])
		}
	}
	if err := g.m.factor(); err != nil {
		return nil, fmt.Errorf("hydraulics: head sensitivity: %w", err)
	}
	clear(g.rhs)
	g.rhs[row] = 1
	g.m.solve(g.rhs)
	lambda := func(k int32) float64 {
		if k < 0 {
			return 0
		}
		return g.rhs[k]
	}
	for j, ok := range g.solved {
		if ok {
			w[j] = g.p[j] * (lambda(g.ua[j]) - lambda(g.ub[j]))
		}
	}
	return w, nil
}
