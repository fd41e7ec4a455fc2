package hydraulics

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
)

// Options controls Solve. The zero value (and a nil *Options) is valid.
type Options struct {
	// DemandFactor multiplies every junction's Demand (a peaking factor such
	// as max day / average day). Zero means 1; negative is an error.
	DemandFactor float64
	// Tolerance is the relative flow change Σ|ΔQ|/Σ|Q| below which the
	// iteration may stop. Zero means 1e-8. Round-off in the head solve puts a
	// floor under the change (DOMAIN.md §6.4), near 1e-8 in networks with
	// short, wide pipes; so the iteration also stops once the change is
	// below 1e-6 and has stopped falling (no halving against the best of the
	// two iterations before), which Newton's quadratic convergence rules out
	// above the floor. The head and continuity tests apply in both cases.
	Tolerance float64
	// HeadTolerance is the largest head-balance residual
	// |H_from − H_to − h(Q)| accepted at convergence, checked together with
	// Tolerance. Zero means 1e-4 m (about 0.0003 ft).
	HeadTolerance Head
	// MaxIterations caps the Newton iterations. Zero means 200.
	MaxIterations int
}

// Solution is the steady state of a network: heads at nodes and flows in
// pipes, with the statistics a caller reports for every scenario.
type Solution struct {
	// Head is per node: fixed nodes at their Grade, NaN at unsupplied
	// junctions.
	Head []Head
	// Flow is per pipe, positive From→To; zero for closed pipes and for
	// pipes in unsupplied parts of the network.
	Flow []Flow
	// Unsupplied lists, ascending, the junctions that no path of open pipes
	// joins to a fixed node. They are not solved.
	Unsupplied []int
	// Iterations is the number of Newton iterations done, and
	// Factorisations those of them that factorised the head matrix afresh
	// (the others were chord steps on an earlier factorisation; see
	// Solver.SolveNear).
	Iterations, Factorisations int
	// RelativeFlowChange is Σ|ΔQ|/Σ|Q| at the last iteration. It may be
	// above Options.Tolerance when the iteration stopped at the round-off
	// floor (see Options.Tolerance).
	RelativeFlowChange float64
	// MaxHeadResidual is the largest |H_from − H_to − h(Q)| over the solved
	// open pipes, h being the solver's head-loss curve (Hazen-Williams, with
	// a linear branch at near-zero flow; see Solve).
	MaxHeadResidual Head
	// MaxContinuityResidual is the largest |inflow − outflow − demand| over
	// the solved junctions.
	MaxContinuityResidual Flow
	// Supply is the net flow out of the fixed nodes.
	Supply Flow
	// Demand is the total factored demand at the solved junctions; at
	// convergence Supply equals Demand to round-off.
	Demand Flow
	// FactorNonzeros is the number of nonzeros below the diagonal of the
	// factor of the head matrix (a measure of the cost of one iteration).
	FactorNonzeros int
}

// NotConvergedError reports a Solve that reached Options.MaxIterations
// without meeting both convergence tests.
type NotConvergedError struct {
	Iterations         int
	RelativeFlowChange float64
	MaxHeadResidual    Head
	// Pipe is the index of the pipe with the largest head residual, or −1.
	Pipe int
}

func (e *NotConvergedError) Error() string {
	return fmt.Sprintf("hydraulics: no convergence after %d iterations: relative flow change %.3g, largest head residual %.3g m at pipe %d",
		e.Iterations, e.RelativeFlowChange, float64(e.MaxHeadResidual), e.Pipe)
}

// ErrNoSupply is returned by Solve when no junction is joined to a fixed
// node by open pipes.
var ErrNoSupply = errors.New("hydraulics: no junction is connected to a fixed-grade node through open pipes")

// Defaults of Options.
const (
	defaultTolerance     = 1e-8
	defaultHeadTolerance = Head(1e-4)
	defaultMaxIterations = 200
)

// The zero-flow switch of each pipe (DOMAIN.md §6.3 (i), common practice):
// below the flow q0 the head-loss curve is replaced by its secant through
// (q0, h(q0)), h = g·Q with g = r·q0^0.852, a linear resistor of finite
// conductance 1/g. The curve stays continuous and monotone, so the solution
// is unique. q0 is the larger of
//
//   - the flow at linearBelowVelocity (1e-5 ft/s, about 0.001 gpm in a
//     6-in main), which governs for ordinary mains, and
//   - the flow at which g reaches minLinearSlope, which governs for short,
//     wide pipes and keeps every conductance below 1/minLinearSlope, so
//     round-off in the heads cannot swamp the flows (DOMAIN.md §6.4).
//
// The curve differs from Hazen-Williams by less than g·q0 in head, under
// 1e-8 m for ordinary mains and under 1e-4·q0 m for the short ones.
const (
	linearBelowVelocity = 1e-5 * FootPerSecond
	minLinearSlope      = 1e-4 // m per m³/s
)

// initialVelocity is the mean velocity of the starting flows (DOMAIN.md §6.3).
const initialVelocity = 1 * FootPerSecond

// continuityTolerance is the largest continuity residual accepted at
// convergence, relative to the largest flow or demand in the network. The
// GGA flow update meets continuity to round-off, so this guards the linear
// solve rather than the iteration.
const continuityTolerance = 1e-9

// Solve computes the steady state of net with the Global Gradient Algorithm
// of Todini & Pilati (1988): Newton's method on pipe flows Q and junction
// heads H, eliminating ΔQ so that each iteration solves the symmetric
// positive-definite system for the heads, assembled pipe by pipe
// (DOMAIN.md §6.2):
//
//	p_j = 1 / h'_j(Q_j),   y_j = p_j · h_j(Q_j)
//	A_aa += p_j, A_bb += p_j, A_ab −= p_j            (junctions a, b)
//	F_a  += Q_j − y_j (into a) … ,  + p_j·H_f for a fixed end,  − q_a
//	Q_j  ← Q_j − y_j + p_j · (H_a − H_b)
//
// with h_j(Q) = r_j·Q·|Q|^0.852 (Hazen-Williams, see Resistance) and a
// linear branch near zero flow (see linearBelowVelocity and
// minLinearSlope). Iteration starts
// from 1 ft/s in every pipe and stops when Σ|ΔQ|/Σ|Q| < Tolerance (or has
// reached its round-off floor, see Options.Tolerance) and the head and
// continuity residuals are small.
//
// Before solving, a breadth-first search over open pipes finds the
// junctions joined to a fixed node; the others are listed in
// Solution.Unsupplied, get NaN heads and their pipes zero flow. Closed pipes
// are dropped from the matrix and carry zero flow. Fixed nodes' Demand is
// ignored. The fill-reducing ordering and symbolic factorisation are done
// once per call, the numeric factorisation every iteration.
//
// Solve validates net first (see Network.Validate). If the iteration does
// not converge within MaxIterations, Solve returns the last iterate together
// with a *NotConvergedError; callers must not report results from it.
//
// Reference: E. Todini & S. Pilati, "A gradient algorithm for the analysis
// of pipe networks", in Coulbeck & Orr (eds.), Computer Applications in
// Water Supply, Vol. 1, 1988, pp. 1–20.
//
// Pumps and check valves (Pipe.Pump, Pipe.CheckValve) are handled as
// described at Solver.Solve. Solve is NewSolver followed by one
// Solver.Solve with the network's own demands and a cold start.
func Solve(net *Network, opt *Options) (*Solution, error) {
	s, err := NewSolver(net, opt)
	if err != nil {
		return nil, err
	}
	return s.Solve(nil, nil)
}

// withDefaults returns a copy of o with zero fields replaced by defaults.
func (o *Options) withDefaults() (Options, error) {
	var r Options
	if o != nil {
		r = *o
	}
	switch {
	case r.DemandFactor < 0 || math.IsNaN(r.DemandFactor) || math.IsInf(r.DemandFactor, 0):
		return r, fmt.Errorf("hydraulics: demand factor %g is not a finite number ≥ 0", r.DemandFactor)
	case r.Tolerance < 0 || math.IsNaN(r.Tolerance):
		return r, fmt.Errorf("hydraulics: tolerance %g is negative", r.Tolerance)
	case r.HeadTolerance < 0 || math.IsNaN(float64(r.HeadTolerance)):
		return r, fmt.Errorf("hydraulics: head tolerance %g m is negative", float64(r.HeadTolerance))
	case r.MaxIterations < 0:
		return r, fmt.Errorf("hydraulics: max iterations %d is negative", r.MaxIterations)
	}
	if r.DemandFactor == 0 {
		r.DemandFactor = 1
	}
	if r.Tolerance == 0 {
		r.Tolerance = defaultTolerance
	}
	if r.HeadTolerance == 0 {
		r.HeadTolerance = defaultHeadTolerance
	}
	if r.MaxIterations == 0 {
		r.MaxIterations = defaultMaxIterations
	}
	return r, nil
}

// gga holds one Solve's working state. Arrays indexed by pipe cover every
// pipe; solved[j] says whether pipe j takes part. The fields down to q0,
// and pump, check, qStart and demand0, are read-only after newGGA and are
// shared by the clones of a Solver; the rest is each clone's workspace.
type gga struct {
	net *Network
	opt Options

	unknown  []int32 // node → row of the head system, or −1 (fixed or unsupplied)
	nUnknown int
	supplied []bool // node is fixed or joined to a fixed node by open pipes

	solved []bool    // pipe is open with both ends supplied
	from   []int32   // pipe → From node (copied for locality in the loops)
	to     []int32   // pipe → To node
	ua, ub []int32   // pipe → row of its From and To node, or −1
	da, db []int32   // pipe → position of ua, ub on the permuted diagonal of m (spd.pinv), or −1
	pair   []int32   // pipe → index into pairs, or −1 when an end is not an unknown
	r      []float64 // resistance, SI
	q0     []float64 // zero-flow switch, m³/s
	p, y   []float64 // per pipe at the current flows: 1/h'(Q) and h(Q)/h'(Q)

	pump    []PumpCurve // per pipe, the pump curve (B > 0) or zero; nil when there is no pump
	check   []bool      // per pipe, a check valve or a pump (flow From→To only)
	qStart  []float64   // cold-start flow per pipe, m³/s
	demand0 []float64   // the network's own factored demand per node, m³/s
	shut    []bool      // per pipe, a check valve or pump closed by the status rules

	q      []float64 // flows, m³/s
	h      []float64 // heads, m (fixed nodes at Grade)
	demand []float64 // factored demand per node, m³/s (zero at fixed and unsupplied nodes)

	m   *spd
	rhs []float64 // right-hand side, then the solution

	excess []float64 // balance's buffer

	pin     *headPin  // the extra unknown of SolvePinned, or nil
	pinWork []float64 // its buffer, kept between solves

	// factored says m holds the factorisation at the conductances s.p (the
	// last step succeeded); reuse asks the next run to start with chord
	// steps on it (Solver.SolveNear).
	factored, reuse bool
	// factorisations counts the numeric factorisations of the current solve.
	factorisations int
}

func newGGA(net *Network, o Options) *gga { return newGGARanked(net, o, nil) }

// newGGARanked is newGGA with the elimination order of the head matrix
// given instead of found: the unknown junctions in ascending rank[i]
// (per node; ties by node index). With rank nil it finds a fill-reducing
// order (see fillReducingOrder).
func newGGARanked(net *Network, o Options, rank []int32) *gga {
	nn, np := len(net.Nodes), len(net.Pipes)
	s := &gga{
		net: net, opt: o,
		unknown: make([]int32, nn), supplied: reachFromFixed(net),
		solved: make([]bool, np), pair: make([]int32, np),
		from: make([]int32, np), to: make([]int32, np), ua: make([]int32, np), ub: make([]int32, np),
		r: make([]float64, np), q0: make([]float64, np),
		p: make([]float64, np), y: make([]float64, np),
		q: make([]float64, np), h: make([]float64, nn), demand: make([]float64, nn),
		check: make([]bool, np), qStart: make([]float64, np), shut: make([]bool, np),
	}
	xs, ys := make([]float64, 0, nn), make([]float64, 0, nn)
	for i, nd := range net.Nodes {
		s.unknown[i] = -1
		switch {
		case nd.Fixed:
			s.h[i] = float64(nd.Grade)
		case s.supplied[i]:
			s.unknown[i] = int32(s.nUnknown)
			s.nUnknown++
			s.demand[i] = float64(nd.Demand) * o.DemandFactor
			s.h[i] = float64(nd.Elevation)
			xs, ys = append(xs, nd.X), append(ys, nd.Y)
		default:
			s.h[i] = math.NaN()
		}
	}
	if s.nUnknown == 0 {
		return s
	}
	// One pair per pipe between two unknowns: newSPD merges parallel pipes
	// into one matrix entry (in pipe order, as their conductances add).
	pairs := make([][2]int32, 0, np)
	for j, p := range net.Pipes {
		s.pair[j] = -1
		if p.Closed || !s.supplied[p.From] || !s.supplied[p.To] {
			continue
		}
		s.solved[j] = true
		s.check[j] = p.CheckValve || p.Pump != nil
		if p.Pump != nil {
			if s.pump == nil {
				s.pump = make([]PumpCurve, np)
			}
			s.pump[j] = *p.Pump
			s.q0[j] = pumpLinearFraction * p.Pump.runout()
			s.qStart[j] = p.Pump.startFlow()
		} else {
			s.r[j], s.q0[j], s.qStart[j] = pipeCoefficients(p)
		}
		s.q[j] = s.qStart[j]
		a, b := s.unknown[p.From], s.unknown[p.To]
		s.from[j], s.to[j], s.ua[j], s.ub[j] = int32(p.From), int32(p.To), a, b
		if a < 0 || b < 0 {
			continue
		}
		s.pair[j] = int32(len(pairs))
		pairs = append(pairs, [2]int32{min(a, b), max(a, b)})
	}
	if rank == nil {
		s.m = newSPD(s.nUnknown, pairs, xs, ys)
	} else {
		s.m = newSPDOrdered(s.nUnknown, pairs, rankedOrder(s.unknown, rank, s.nUnknown))
	}
	s.da, s.db = s.m.permutedRows(s.ua), s.m.permutedRows(s.ub)
	s.rhs = make([]float64, s.nUnknown)
	s.demand0 = append([]float64(nil), s.demand...)
	return s
}

// rankedOrder returns the rows of the unknown nodes (unknown[i] ≥ 0) in
// ascending rank[i], ties by node index: an elimination order.
func rankedOrder(unknown, rank []int32, n int) []int32 {
	nodes := make([]int32, 0, n)
	for i, k := range unknown {
		if k >= 0 {
			nodes = append(nodes, int32(i))
		}
	}
	slices.SortStableFunc(nodes, func(a, b int32) int { return cmp.Compare(rank[a], rank[b]) })
	perm := make([]int32, n)
	for k, i := range nodes {
		perm[k] = unknown[i]
	}
	return perm
}

// pipeCoefficients returns a pipe's Hazen-Williams resistance r (SI, see
// Resistance), its zero-flow switch q0 (see linearBelowVelocity) and its
// cold-start flow (initialVelocity over its area), in m³/s.
func pipeCoefficients(p Pipe) (r, q0, qStart float64) {
	area := math.Pi / 4 * float64(p.Diameter) * float64(p.Diameter)
	r = Resistance(p.Length, p.Diameter, p.C)
	q0 = max(area*float64(linearBelowVelocity), math.Pow(minLinearSlope/r, 1/(HWExponentFlow-1)))
	return r, q0, area * float64(initialVelocity)
}

// reachFromFixed marks the nodes joined to a fixed node through open pipes
// (fixed nodes included), by breadth-first search. O(nodes + pipes).
func reachFromFixed(net *Network) []bool {
	nn := len(net.Nodes)
	// Adjacency in compressed form, open pipes only.
	start := make([]int32, nn+1)
	for _, p := range net.Pipes {
		if !p.Closed {
			start[p.From+1]++
			start[p.To+1]++
		}
	}
	for i := 0; i < nn; i++ {
		start[i+1] += start[i]
	}
	adj := make([]int32, start[nn])
	fill := append([]int32(nil), start[:nn]...)
	for _, p := range net.Pipes {
		if !p.Closed {
			adj[fill[p.From]] = int32(p.To)
			fill[p.From]++
			adj[fill[p.To]] = int32(p.From)
			fill[p.To]++
		}
	}
	seen := make([]bool, nn)
	queue := make([]int32, 0, nn)
	for i, nd := range net.Nodes {
		if nd.Fixed {
			seen[i] = true
			queue = append(queue, int32(i))
		}
	}
	for len(queue) > 0 {
		v := queue[0]
		queue = queue[1:]
		for _, w := range adj[start[v]:start[v+1]] {
			if !seen[w] {
				seen[w] = true
				queue = append(queue, w)
			}
		}
	}
	return seen
}

// lossAndConductance returns the head loss h(Q) of pipe j and p = 1/h'(Q),
// using the linear branch below the zero-flow switch. A shut check valve or
// pump is a linear resistor of resistance shutResistance; an open pump's
// loss is the negative of its head gain (see pumpLoss).
func (s *gga) lossAndConductance(j int, q float64) (h, p float64) {
	if s.shut[j] {
		return shutResistance * q, 1 / shutResistance
	}
	if s.pump != nil && s.pump[j].B > 0 {
		return pumpLoss(&s.pump[j], s.q0[j], q)
	}
	r, aq := s.r[j], math.Abs(q)
	if aq < s.q0[j] {
		g := r * hwPow(s.q0[j]) // secant slope through (q0, h(q0))
		return g * q, 1 / g
	}
	pw := hwPow(aq) // |Q|^0.852; aq > 0 here
	return r * q * pw, 1 / (HWExponentFlow * r * pw)
}

// run iterates to convergence and builds the Solution.
func (s *gga) run() (*Solution, error) {
	var relChange float64
	var history []float64 // relative flow change per Newton iteration
	iter := 0
	refactor := !s.reuse || !s.factored
	s.reuse = false
	for iter < s.opt.MaxIterations {
		iter++
		if err := s.step(refactor); err != nil {
			s.factored = false
			return s.solution(iter, relChange, math.NaN()), fmt.Errorf("hydraulics: iteration %d: %w", iter, err)
		}
		s.factored = true
		chord := !refactor
		if refactor {
			s.factorisations++
		}
		// Flow update and relative change.
		var sumDQ, sumQ float64
		for j, ok := range s.solved {
			if !ok {
				continue
			}
			dh := s.h[s.from[j]] - s.h[s.to[j]]
			qNew := s.q[j] - s.y[j] + s.p[j]*dh
			sumDQ += math.Abs(qNew - s.q[j])
			sumQ += math.Abs(qNew)
			s.q[j] = qNew
		}
		prevChange := relChange
		relChange = relativeChange(sumDQ, sumQ)
		if chord {
			// Keep the old factorisation while it converges fast (see chordFirst).
			refactor = !(relChange < chordFirst) || (iter > 1 && !(relChange <= chordShrink*prevChange))
		} else {
			history = append(history, relChange)
		}
		if relChange < s.opt.Tolerance || (!chord && stalled(history)) {
			headRes, _ := s.headResidual()
			if headRes <= float64(s.opt.HeadTolerance) && s.continuityOK() {
				return s.solution(iter, relChange, headRes), nil
			}
			refactor = true
		}
	}
	sol := s.solution(iter, relChange, math.NaN())
	_, worst := s.headResidual()
	return sol, &NotConvergedError{Iterations: iter, RelativeFlowChange: relChange, MaxHeadResidual: sol.MaxHeadResidual, Pipe: worst}
}

// Chord steps (see Solver.SolveNear): the first must change the flows by
// less than chordFirst (relative), and each later one must shrink the
// change by chordShrink, or the next step factorises afresh.
const (
	chordFirst  = 1e-3
	chordShrink = 0.1
)

// stallCeiling is the relative flow change below which a change that has
// stopped falling is taken as the round-off floor.
const stallCeiling = 1e-6

// stalled reports whether the last relative flow change is below
// stallCeiling and not below half the smaller of the two before it.
func stalled(history []float64) bool {
	n := len(history)
	if n < 3 {
		return false
	}
	last := history[n-1]
	return last < stallCeiling && last > 0.5*min(history[n-2], history[n-3])
}

func relativeChange(sumDQ, sumQ float64) float64 {
	if sumQ > 0 {
		return sumDQ / sumQ
	}
	if sumDQ == 0 {
		return 0
	}
	return math.Inf(1)
}

// step assembles and solves the head system at the current flows and
// stores the new heads of the unknown nodes. With refactor false it is a
// chord step: the conductances s.p and the factorisation of the last full
// step are kept, and only h_j(Q_j) and the right-hand side are new, so the
// flow update Q_j ← Q_j + p̃_j·(H_a − H_b − h_j(Q_j)) still meets continuity
// and has the same fixed point.
func (s *gga) step(refactor bool) error {
	if refactor {
		s.m.clear()
	}
	if s.pin != nil {
		s.demand[s.pin.demandNode] = s.pin.base
	}
	for i, k := range s.unknown {
		if k >= 0 {
			s.rhs[k] = -s.demand[i]
		}
	}
	ForPipeRanges(len(s.solved), func(lo, hi int) { s.losses(lo, hi, refactor) })
	for j, ok := range s.solved {
		if !ok {
			continue
		}
		p := s.p[j]
		carry := s.q[j] - s.y[j] // Q − y
		a, b := s.ua[j], s.ub[j]
		if a >= 0 {
			s.rhs[a] -= carry // flow leaves a
			if b < 0 {
				s.rhs[a] += p * s.h[s.to[j]]
			}
		}
		if b >= 0 {
			s.rhs[b] += carry // flow enters b
			if a < 0 {
				s.rhs[b] += p * s.h[s.from[j]]
			}
		}
		if refactor {
			s.assemble(j, p)
		}
	}
	if refactor {
		if err := s.m.factor(); err != nil {
			var npd *notPositiveDefiniteError
			if errors.As(err, &npd) {
				return fmt.Errorf("head matrix not positive definite at a junction (pivot %g): %w", npd.Pivot, err)
			}
			return err
		}
	}
	if s.pin == nil {
		s.m.solve(s.rhs)
	} else {
		clear(s.pin.g)
		s.pin.g[s.pin.demandRow] = 1
		s.m.solve2(s.rhs, s.pin.g)
		if err := s.pin.apply(s.rhs, s.demand); err != nil {
			return err
		}
	}
	for i := range s.net.Nodes {
		if k := s.unknown[i]; k >= 0 {
			s.h[i] = s.rhs[k]
		}
	}
	return nil
}

// losses sets y_j = p_j·h_j(Q_j) for the solved pipes j in [lo, hi), and
// with refactor the conductances p_j = 1/h'_j(Q_j) as well (a chord step
// keeps the last ones). It writes only its own pipes' entries, so ranges
// may run at once (step runs them on the cores through ForPipeRanges: the
// fractional powers are most of a step's own work).
func (s *gga) losses(lo, hi int, refactor bool) {
	for j := lo; j < hi; j++ {
		if !s.solved[j] {
			continue
		}
		h, p := s.lossAndConductance(j, s.q[j])
		if refactor {
			s.p[j] = p
		} else {
			p = s.p[j]
		}
		s.y[j] = p * h
	}
}

// assemble adds pipe j's conductance p to the head matrix (at the
// diagonal positions found once, da and db: the same additions as addDiag,
// one random access fewer per end).
func (s *gga) assemble(j int, p float64) {
	if a := s.da[j]; a >= 0 {
		s.m.addPermutedDiag(a, p)
	}
	if b := s.db[j]; b >= 0 {
		s.m.addPermutedDiag(b, p)
	}
	if k := s.pair[j]; k >= 0 {
		s.m.addPair(int(k), -p)
	}
}

// headResidual returns max |H_from − H_to − h(Q)| over solved pipes, with h
// the solver's head-loss curve (Hazen-Williams with its zero-flow linear
// branch), and the pipe where it occurs (−1 if none).
func (s *gga) headResidual() (float64, int) {
	worst, at := 0.0, -1
	for j, ok := range s.solved {
		if !ok {
			continue
		}
		h, _ := s.lossAndConductance(j, s.q[j])
		res := math.Abs(s.h[s.from[j]] - s.h[s.to[j]] - h)
		if !(res <= worst) { // NaN counts as worst
			worst, at = res, j
		}
	}
	return worst, at
}

// balance returns the net inflow minus demand at every node (zero where
// not solved) and the net outflow of the fixed nodes.
// The slice is the clone's own buffer, overwritten by the next call.
func (s *gga) balance() (excess []float64, supply float64) {
	if len(s.excess) != len(s.net.Nodes) {
		s.excess = make([]float64, len(s.net.Nodes))
	}
	excess = s.excess
	clear(excess)
	for j, ok := range s.solved {
		if ok {
			excess[s.from[j]] -= s.q[j]
			excess[s.to[j]] += s.q[j]
		}
	}
	for i, nd := range s.net.Nodes {
		if nd.Fixed {
			supply -= excess[i]
			excess[i] = 0
		} else {
			excess[i] -= s.demand[i]
		}
	}
	return excess, supply
}

// continuityOK reports whether every junction balances to
// continuityTolerance times the largest flow or demand, plus the round-off
// floor of the flow update, 64·ε·max p·max|H| (Q = … + p·(H_a − H_b)).
func (s *gga) continuityOK() bool {
	excess, _ := s.balance()
	scale, maxP, maxH := 0.0, 0.0, 0.0
	for j, q := range s.q {
		scale = max(scale, math.Abs(q))
		if s.solved[j] {
			maxP = max(maxP, s.p[j])
		}
	}
	for i, d := range s.demand {
		scale = max(scale, math.Abs(d))
		if s.supplied[i] {
			maxH = max(maxH, math.Abs(s.h[i]))
		}
	}
	tol := continuityTolerance*scale + 64*epsilon*maxP*maxH
	for _, e := range excess {
		if !(math.Abs(e) <= tol) {
			return false
		}
	}
	return true
}

// epsilon is the float64 unit round-off, 2^−52.
const epsilon = 0x1p-52

// solution copies the state into a Solution; headRes is the largest head
// residual at the current flows, or NaN to have it computed here.
func (s *gga) solution(iter int, relChange, headRes float64) *Solution {
	sol := &Solution{
		Head:               make([]Head, len(s.h)),
		Flow:               make([]Flow, len(s.q)),
		Iterations:         iter,
		Factorisations:     s.factorisations,
		RelativeFlowChange: relChange,
		FactorNonzeros:     s.m.factorNonzeros(),
	}
	for i, h := range s.h {
		sol.Head[i] = Head(h)
		if !s.supplied[i] {
			sol.Unsupplied = append(sol.Unsupplied, i)
		}
	}
	for j, q := range s.q {
		if s.solved[j] && !s.shut[j] {
			sol.Flow[j] = Flow(q)
		}
	}
	if math.IsNaN(headRes) {
		headRes, _ = s.headResidual()
	}
	sol.MaxHeadResidual = Head(headRes)
	excess, supply := s.balance()
	var maxExcess float64
	for _, e := range excess {
		if !(math.Abs(e) <= maxExcess) {
			maxExcess = math.Abs(e)
		}
	}
	sol.MaxContinuityResidual = Flow(maxExcess)
	sol.Supply = Flow(supply)
	var demand float64
	for _, d := range s.demand {
		demand += d
	}
	sol.Demand = Flow(demand)
	return sol
}

// Validate checks that the network can be solved: node indices in range,
// no pipe joining a node to itself, positive and finite length, diameter
// and C (for a pump instead a curve with A, B, C > 0 and finite), finite
// elevations, demands and grades, and at least one fixed node. It reports up to 10 problems, each naming the pipe or node ID.
func (n *Network) Validate() error {
	const maxErrors = 10
	var errs []error
	add := func(format string, args ...any) {
		if len(errs) < maxErrors {
			errs = append(errs, fmt.Errorf("hydraulics: "+format, args...))
		}
	}
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	fixed := 0
	for i, nd := range n.Nodes {
		if nd.Fixed {
			fixed++
			if !finite(float64(nd.Grade)) {
				add("node %d (id %q): grade %g is not finite", i, nd.ID, float64(nd.Grade))
			}
		}
		if !finite(float64(nd.Elevation)) {
			add("node %d (id %q): elevation %g is not finite", i, nd.ID, float64(nd.Elevation))
		}
		if !finite(float64(nd.Demand)) {
			add("node %d (id %q): demand %g is not finite", i, nd.ID, float64(nd.Demand))
		}
	}
	for j, p := range n.Pipes {
		switch {
		case p.From < 0 || p.From >= len(n.Nodes):
			add("pipe %d (id %q): from-node index %d is out of range", j, p.ID, p.From)
		case p.To < 0 || p.To >= len(n.Nodes):
			add("pipe %d (id %q): to-node index %d is out of range", j, p.ID, p.To)
		case p.From == p.To:
			add("pipe %d (id %q): both ends at node %q", j, p.ID, n.Nodes[p.From].ID)
		}
		if p.Pump != nil {
			if err := p.Pump.validate(); err != nil {
				add("pipe %d (id %q): %v", j, p.ID, err)
			}
			continue
		}
		if !(p.Length > 0) || !finite(float64(p.Length)) {
			add("pipe %d (id %q): length %g m is not > 0 and finite", j, p.ID, float64(p.Length))
		}
		if !(p.Diameter > 0) || !finite(float64(p.Diameter)) {
			add("pipe %d (id %q): diameter %g m is not > 0 and finite", j, p.ID, float64(p.Diameter))
		}
		if !(p.C > 0) || !finite(p.C) {
			add("pipe %d (id %q): C %g is not > 0 and finite", j, p.ID, p.C)
		}
	}
	if fixed == 0 {
		add("network has no fixed-grade node (tank, reservoir or supply)")
	}
	return errors.Join(errs...)
}
