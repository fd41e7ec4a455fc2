package hydraulics

import (
	"errors"
	"fmt"
)

// Solver solves one network many times: for scenarios, for fire flows and
// for trial sizes of a single pipe's neighbours, with other demands or
// grades but the same pipes. NewSolver does the work that depends only on
// the network's topology (validation, the search for the supplied part, the
// fill-reducing ordering and the symbolic factorisation of the head matrix);
// each Solve repeats only the Newton iterations.
//
// A Solver is not safe for use by several goroutines at once; Clone gives
// each worker its own numeric workspace, sharing the read-only symbolic
// part. The Solver keeps the pipe data it read from the network: later
// edits to the Network are not seen.
type Solver struct {
	g *gga
}

// NewSolver validates net (see Network.Validate), applies the defaults of
// opt and prepares the head system. It returns ErrNoSupply when no junction
// is joined to a fixed node through open pipes. Cost: the ordering, about
// O(n log n) for a planar network of n junctions, plus O(nnz(L)).
func NewSolver(net *Network, opt *Options) (*Solver, error) {
	if net == nil {
		return nil, errors.New("hydraulics: solve: nil network")
	}
	if err := net.Validate(); err != nil {
		return nil, err
	}
	o, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	g := newGGA(net, o)
	if g.nUnknown == 0 {
		return nil, ErrNoSupply
	}
	return &Solver{g: g}, nil
}

// Clone returns a Solver with its own numeric workspace (flows, heads,
// demands, grades, link status and the numeric factor) that shares the
// read-only symbolic part with s. Clones may run in parallel. The clone
// starts with s's current fixed grades (see SetGrades).
func (s *Solver) Clone() *Solver {
	g := *s.g // shallow: the read-only slices are shared
	g.p = make([]float64, len(s.g.p))
	g.y = make([]float64, len(s.g.y))
	g.q = make([]float64, len(s.g.q))
	g.h = append([]float64(nil), s.g.h...)
	g.demand = make([]float64, len(s.g.demand))
	g.shut = make([]bool, len(s.g.shut))
	g.rhs = make([]float64, len(s.g.rhs))
	g.m = s.g.m.cloneNumeric()
	return &Solver{g: &g}
}

// Network returns the network s was built from.
func (s *Solver) Network() *Network { return s.g.net }

// Supplied reports whether node i is fixed or joined to a fixed node
// through open pipes (and so has a head in every Solution).
func (s *Solver) Supplied(i int) bool { return i >= 0 && i < len(s.g.supplied) && s.g.supplied[i] }

// SetGrades sets the hydraulic grade of the fixed nodes for the following
// solves (a tank's low level for fire flow, say): grades has one entry per
// node, read only at fixed nodes; other entries are ignored. It returns an
// error, and changes nothing, when the length is wrong or a fixed node's
// grade is not finite.
func (s *Solver) SetGrades(grades []Head) error {
	g := s.g
	if len(grades) != len(g.net.Nodes) {
		return fmt.Errorf("hydraulics: set grades: %d grades for %d nodes", len(grades), len(g.net.Nodes))
	}
	for i, nd := range g.net.Nodes {
		if nd.Fixed && !isFinite(float64(grades[i])) {
			return fmt.Errorf("hydraulics: set grades: node %d (id %q): grade %g is not finite", i, nd.ID, float64(grades[i]))
		}
	}
	for i, nd := range g.net.Nodes {
		if nd.Fixed {
			g.h[i] = float64(grades[i])
		}
	}
	return nil
}

// maxStatusRounds caps the solves of one Solve that end with a change of
// check-valve or pump status.
const maxStatusRounds = 12

// Solve computes the steady state with the given demand per node (SI,
// already factored; positive leaves the network; read at supplied
// junctions only). A nil demand means the network's own Demand times
// Options.DemandFactor. When warm is non-nil the iteration starts from
// warm.Flow (a solution of this network, for instance at another demand),
// else from 1 ft/s in every pipe, as Solve does.
//
// The Newton iteration is the Global Gradient Algorithm described at Solve.
// Pumps and check valves enter it as links with their own head curve: a
// pump's head gain −(A − B·Q^C) takes the place of the friction loss and
// its derivative B·C·Q^(C−1) that of a pipe's (Todini & Pilati 1988), with
// a secant branch near zero flow (see pumpLinearFraction). After each
// converged solve the status rules (see updateStatus) close a check valve
// or pump whose flow runs backwards and reopen a closed one that the grades
// would drive forwards; a closed link is a resistance of shutResistance
// and reports zero flow. When a status changed, the iteration resumes from
// the current flows, at most maxStatusRounds times. A warm start takes a
// check valve or pump with zero flow in warm as closed.
//
// Solution.Iterations counts the Newton iterations of all rounds. Errors
// are as for Solve.
func (s *Solver) Solve(demand []Flow, warm *Solution) (*Solution, error) {
	g := s.g
	if err := g.setDemand(demand); err != nil {
		return nil, err
	}
	if err := g.start(warm); err != nil {
		return nil, err
	}
	total := 0
	for round := 1; ; round++ {
		sol, err := g.run()
		total += sol.Iterations
		sol.Iterations = total
		if err != nil {
			var nc *NotConvergedError
			if errors.As(err, &nc) {
				nc.Iterations = total
			}
			return sol, err
		}
		if !g.updateStatus() {
			return sol, nil
		}
		if round == maxStatusRounds {
			return sol, fmt.Errorf("hydraulics: check valve and pump status still changing after %d solves", round)
		}
	}
}

// setDemand fills g.demand from demand (nil: the network's own).
func (g *gga) setDemand(demand []Flow) error {
	if demand == nil {
		copy(g.demand, g.demand0)
		return nil
	}
	if len(demand) != len(g.net.Nodes) {
		return fmt.Errorf("hydraulics: solve: %d demands for %d nodes", len(demand), len(g.net.Nodes))
	}
	for i, k := range g.unknown {
		if k < 0 {
			g.demand[i] = 0
			continue
		}
		if !isFinite(float64(demand[i])) {
			return fmt.Errorf("hydraulics: solve: node %d (id %q): demand %g is not finite", i, g.net.Nodes[i].ID, float64(demand[i]))
		}
		g.demand[i] = float64(demand[i])
	}
	return nil
}

// start sets the starting flows and link status: from warm when given,
// else the cold start.
func (g *gga) start(warm *Solution) error {
	if warm != nil && len(warm.Flow) != len(g.q) {
		return fmt.Errorf("hydraulics: solve: warm start has %d flows for %d pipes", len(warm.Flow), len(g.q))
	}
	for j, ok := range g.solved {
		g.shut[j] = false
		g.q[j] = g.qStart[j]
		if !ok || warm == nil {
			continue
		}
		switch q := float64(warm.Flow[j]); {
		case g.check[j] && q == 0:
			g.shut[j], g.q[j] = true, 0
		case isFinite(q):
			g.q[j] = q
		}
	}
	return nil
}

// cloneNumeric returns an spd that shares m's pattern, ordering and
// symbolic factorisation and has its own values, factor and workspaces.
func (m *spd) cloneNumeric() *spd {
	c := *m
	c.diag = make([]float64, len(m.diag))
	c.val = make([]float64, len(m.val))
	c.lVal = make([]float64, len(m.lVal))
	c.d = make([]float64, len(m.d))
	c.snWork = m.sn.newWork(m.n)
	c.work = make([]float64, len(m.work))
	return &c
}

// pressureAt returns the gauge pressure γ·(H − z) at node i of sol.
func pressureAt(net *Network, sol *Solution, i int) Pressure {
	return PressureOf(sol.Head[i] - Head(net.Nodes[i].Elevation))
}
