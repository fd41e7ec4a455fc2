package hydraulics

import (
	"errors"
	"fmt"
	"math"
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
func NewSolver(net *Network, opt *Options) (*Solver, error) { return newSolverRanked(net, opt, nil) }

// newSolverRanked is NewSolver with the elimination order given by rank
// (see newGGARanked); nil finds one.
func newSolverRanked(net *Network, opt *Options, rank []int32) (*Solver, error) {
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
	g := newGGARanked(net, o, rank)
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
	g.pin, g.pinWork, g.excess = nil, nil, nil
	g.factored, g.reuse = false, false
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
	reuse := g.reuse
	g.pin, g.reuse = nil, false
	if err := g.setDemand(demand); err != nil {
		return nil, err
	}
	if err := g.start(warm); err != nil {
		return nil, err
	}
	g.reuse = reuse
	return g.rounds()
}

// SolveNear is Solve for a demand and warm start close to those of this
// Solver's last solve, as the trials of a fire-flow search are: the
// iteration starts with chord steps on the last factorisation (its
// conductances stand in for the current ones, which near the last
// solution differ little), and factorises afresh as soon as a chord step
// changes the flows by 1e-3 or more, or shrinks the change by less than
// ten times. The solution and its tests are those of Solve.
func (s *Solver) SolveNear(demand []Flow, warm *Solution) (*Solution, error) {
	s.g.reuse = true
	return s.Solve(demand, warm)
}

// rounds runs the Newton iteration and the check-valve and pump status
// rules until no status changes (see Solve).
func (g *gga) rounds() (*Solution, error) {
	total := 0
	g.factorisations = 0
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

// headPin turns the demand at one junction into an unknown, X, fixed by
// requiring the head at another (or the same) junction to be Target.
type headPin struct {
	demandRow, headRow int     // rows of the head system of the two junctions
	demandNode         int     // the junction whose demand is base + X
	base               float64 // its demand without X, m³/s
	target             float64 // the head required at the pinned junction, m
	x                  float64 // the current X, m³/s
	limit              float64 // the largest X allowed, m³/s (+Inf: none)
	g                  []float64
}

// SolvePinned solves like Solve with one more unknown: an extra demand X
// at junction node, chosen so that the head at junction at is head (for a
// fire flow: the largest draw at a hydrant that leaves at the residual
// pressure). It returns the solution, whose Demand includes X, and X.
// maxDraw > 0 caps X: an iteration whose X would exceed it uses maxDraw,
// so when the cap binds the solve ends as a plain solve with the extra
// demand maxDraw and the head at `at` above head (a fire-flow search's
// ceiling; the cap also keeps the first iterations, whose linearisation at
// the background flows overestimates X several times, from straying far).
//
// Each Newton iteration solves the head system twice with one
// factorisation: A·H₀ = F (the usual right-hand side with X = 0) and
// A·g = e_node; the heads are H = H₀ − X·g, since X enters F as −X at node,
// and X = (H₀[at] − head)/g[at] makes H[at] = head. This is Newton's method
// on the system extended by X and the one head equation, so it converges
// as Solve does. g[at] > 0 whenever both junctions are supplied (A⁻¹ of a
// connected head matrix is positive); X may come out negative (a supply),
// when even the demand without X leaves the head at below head.
func (s *Solver) SolvePinned(demand []Flow, warm *Solution, node, at int, head Head, maxDraw Flow) (*Solution, Flow, error) {
	return s.solvePinned(demand, warm, node, at, head, maxDraw, false)
}

// solvePinned is SolvePinned; near starts with chord steps on the last
// factorisation, as SolveNear does.
func (s *Solver) solvePinned(demand []Flow, warm *Solution, node, at int, head Head, maxDraw Flow, near bool) (*Solution, Flow, error) {
	g := s.g
	g.pin, g.reuse = nil, false
	for _, i := range []int{node, at} {
		if i < 0 || i >= len(g.unknown) || g.unknown[i] < 0 {
			return nil, 0, fmt.Errorf("hydraulics: pinned solve: node %d is not a supplied junction", i)
		}
	}
	if !isFinite(float64(head)) {
		return nil, 0, fmt.Errorf("hydraulics: pinned solve: head %g m is not finite", float64(head))
	}
	limit := math.Inf(1)
	if maxDraw > 0 {
		limit = float64(maxDraw)
	}
	if err := g.setDemand(demand); err != nil {
		return nil, 0, err
	}
	if err := g.start(warm); err != nil {
		return nil, 0, err
	}
	if len(g.pinWork) != g.nUnknown {
		g.pinWork = make([]float64, g.nUnknown)
	}
	g.pin = &headPin{
		demandRow: int(g.unknown[node]), headRow: int(g.unknown[at]), demandNode: node,
		base: g.demand[node], target: float64(head), limit: limit, g: g.pinWork,
	}
	g.reuse = near
	sol, err := g.rounds()
	x := g.pin.x
	g.demand[node] = g.pin.base
	g.pin = nil
	return sol, Flow(x), err
}

// apply finishes a head solve for the pin: rhs holds H₀ and p.g holds g
// (both solved by step, the pinned junction's demand at its base); it sets
// X and the heads H = H₀ − X·g in rhs, and puts base + X into the demand.
func (p *headPin) apply(rhs []float64, demand []float64) error {
	gw := p.g[p.headRow]
	if !(gw > 0) || !isFinite(gw) {
		return fmt.Errorf("hydraulics: pinned solve: the pinned head does not depend on the demand (sensitivity %g)", gw)
	}
	p.x = min((rhs[p.headRow]-p.target)/gw, p.limit)
	for k, v := range p.g {
		rhs[k] -= p.x * v
	}
	demand[p.demandNode] = p.base + p.x
	return nil
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
	c.work2 = nil
	return &c
}

// pressureAt returns the gauge pressure γ·(H − z) at node i of sol.
func pressureAt(net *Network, sol *Solution, i int) Pressure {
	return PressureOf(sol.Head[i] - Head(net.Nodes[i].Elevation))
}
