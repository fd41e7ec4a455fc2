package hydraulics

import (
	"errors"
	"fmt"
	"math"
)

// FlowCheck says how well flows given from elsewhere (a calibrated model)
// satisfy the network's two laws, energy around loops and continuity at
// nodes; see GivenFlows.
type FlowCheck struct {
	// Tree marks, per pipe, the pipes of the breadth-first spanning forest
	// the heads were carried along from the fixed nodes.
	Tree []bool
	// LoopMismatch is, per pipe, |H_from − H_to − h(Q)| for an open pipe
	// between two supplied nodes that is not in the tree (it closes a loop
	// or joins two fixed nodes); zero for every other pipe.
	LoopMismatch []Head
	// Imbalance is, per node, inflow − outflow − factored demand at a
	// supplied junction; zero at fixed and unsupplied nodes.
	Imbalance []Flow
	// Loops is the number of pipes LoopMismatch is computed for.
	Loops int
	// WorstPipe is the pipe with the largest LoopMismatch and WorstNode
	// the node with the largest |Imbalance|, the first of equals; −1 when
	// there is none.
	WorstPipe, WorstNode int
}

// GivenFlows builds the steady state implied by pipe flows computed
// elsewhere (positive From→To), without solving: each open pipe's friction
// loss is Hazen-Williams on its given flow (HeadLoss; a pump link adds
// PumpCurve.Head instead), and heads are carried from the fixed nodes
// outward along a breadth-first spanning forest of the open pipes,
//
//	H_to = H_from − h(Q_j)   (or H_from = H_to + h(Q_j) when reached from To),
//
// visiting nodes first in, then pipes in index order, so the tree is
// deterministic. The pipes left out of the tree then check the flows:
//
//	loop mismatch_j = |H_from − H_to − h(Q_j)|
//	imbalance_k     = Σ Q_in − Σ Q_out − f·q_k      (junction k, factor f)
//
// Both are zero for flows that solve the network. The Solution has the
// heads (NaN at junctions no open path joins to a fixed node, listed in
// Unsupplied), the flows (zero for closed and unsupplied pipes),
// MaxHeadResidual = the largest loop mismatch, MaxContinuityResidual = the
// largest |imbalance|, Supply = the net flow out of the fixed nodes, Demand
// = the factored demand of the supplied junctions, and zero Iterations.
// demandFactor multiplies every Demand as Options.DemandFactor does (zero
// means 1). GivenFlows validates net (Network.Validate) and returns an error
// when len(flow) ≠ len(net.Pipes), a flow is not finite, or the factor is
// negative or not finite. Cost O(nodes + pipes).
func GivenFlows(net *Network, flow []Flow, demandFactor float64) (*Solution, *FlowCheck, error) {
	if err := net.Validate(); err != nil {
		return nil, nil, err
	}
	if len(flow) != len(net.Pipes) {
		return nil, nil, fmt.Errorf("hydraulics: %d given flows for %d pipes", len(flow), len(net.Pipes))
	}
	if demandFactor == 0 {
		demandFactor = 1
	}
	if !(demandFactor > 0) || math.IsInf(demandFactor, 0) {
		return nil, nil, fmt.Errorf("hydraulics: demand factor %g: must be > 0 and finite", demandFactor)
	}
	for j, q := range flow {
		if !isFinite(float64(q)) {
			return nil, nil, fmt.Errorf("hydraulics: given flow %g in pipe %s is not finite", float64(q), net.Pipes[j].ID)
		}
	}
	n := len(net.Nodes)
	sol := &Solution{Head: make([]Head, n), Flow: make([]Flow, len(net.Pipes))}
	chk := &FlowCheck{Tree: make([]bool, len(net.Pipes)), LoopMismatch: make([]Head, len(net.Pipes)),
		Imbalance: make([]Flow, n), WorstPipe: -1, WorstNode: -1}
	at := givenAdjacency(net)
	seen := make([]bool, n)
	queue := make([]int, 0, n)
	for k, nd := range net.Nodes {
		sol.Head[k] = Head(math.NaN())
		if nd.Fixed {
			sol.Head[k], seen[k] = nd.Grade, true
			queue = append(queue, k)
		}
	}
	if len(queue) == 0 {
		return nil, nil, errors.New("hydraulics: no fixed-grade node to carry heads from")
	}
	for len(queue) > 0 {
		u := queue[0]
		queue = queue[1:]
		for _, j := range at[u] {
			p := net.Pipes[j]
			v, h := p.To, sol.Head[u]-givenLoss(p, flow[j])
			if p.To == u {
				v, h = p.From, sol.Head[u]+givenLoss(p, flow[j])
			}
			if seen[v] {
				continue
			}
			seen[v], sol.Head[v], chk.Tree[j] = true, h, true
			queue = append(queue, v)
		}
	}
	for k := range net.Nodes {
		if !seen[k] {
			sol.Unsupplied = append(sol.Unsupplied, k)
		}
	}
	for j, p := range net.Pipes {
		if p.Closed || !seen[p.From] || !seen[p.To] {
			continue
		}
		q := flow[j]
		sol.Flow[j] = q
		chk.Imbalance[p.From] -= q
		chk.Imbalance[p.To] += q
		if chk.Tree[j] {
			continue
		}
		chk.Loops++
		m := Head(math.Abs(float64(sol.Head[p.From] - sol.Head[p.To] - givenLoss(p, q))))
		chk.LoopMismatch[j] = m
		if chk.WorstPipe < 0 || m > chk.LoopMismatch[chk.WorstPipe] {
			chk.WorstPipe = j
		}
		sol.MaxHeadResidual = max(sol.MaxHeadResidual, m)
	}
	for k, nd := range net.Nodes {
		switch {
		case nd.Fixed:
			sol.Supply -= chk.Imbalance[k] // net outflow
			chk.Imbalance[k] = 0
		case !seen[k]:
			chk.Imbalance[k] = 0
		default:
			d := nd.Demand * Flow(demandFactor)
			sol.Demand += d
			chk.Imbalance[k] -= d
			e := Flow(math.Abs(float64(chk.Imbalance[k])))
			if chk.WorstNode < 0 || e > Flow(math.Abs(float64(chk.Imbalance[chk.WorstNode]))) {
				chk.WorstNode = k
			}
			sol.MaxContinuityResidual = max(sol.MaxContinuityResidual, e)
		}
	}
	return sol, chk, nil
}

// givenLoss is the head lost from From to To at flow q: Hazen-Williams
// friction for a pipe, minus the head a pump adds.
func givenLoss(p Pipe, q Flow) Head {
	if p.Pump != nil {
		return -p.Pump.Head(q)
	}
	return HeadLoss(q, p.Diameter, p.Length, p.C)
}

// givenAdjacency lists, per node, its open pipes in index order.
func givenAdjacency(net *Network) [][]int {
	at := make([][]int, len(net.Nodes))
	for j, p := range net.Pipes {
		if p.Closed {
			continue
		}
		at[p.From] = append(at[p.From], j)
		at[p.To] = append(at[p.To], j)
	}
	return at
}
