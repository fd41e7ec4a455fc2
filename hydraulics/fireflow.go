package hydraulics

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// FireFlowOptions controls FireFlow. The zero value is valid.
type FireFlowOptions struct {
	// Residual is the pressure that the hydrant and every other checked
	// junction must keep. Zero means 20 psi, the residual at which NFPA 291
	// rates hydrants (DOMAIN.md §4.3).
	Residual Pressure
	// Zone is a zone number per node. The junctions with the hydrant's
	// number are checked; nil means every supplied junction is.
	Zone []int
	// Ceiling is the largest extra demand tried. Zero means 10,000 gpm.
	Ceiling Flow
	// Tolerance is the bracket width at which the search stops: the true
	// available flow lies within Tolerance above the reported one. Zero
	// means 1 gpm.
	Tolerance Flow
	// Workers is the number of hydrants searched in parallel, each by its
	// own clone of the Solver. Zero means runtime.GOMAXPROCS(0).
	Workers int
	// Searched, when not nil, is called once after each hydrant's search,
	// from the worker that did it: it must be safe for concurrent use.
	Searched func()
	// Method selects the warm start of each search; the zero value,
	// FireFlowAuto, picks by the network's size (see FireFlowMethod).
	Method FireFlowMethod
}

// FireFlowResult is the available fire flow at one hydrant.
type FireFlowResult struct {
	Node int // the hydrant's node
	// Available is the largest extra demand at Node for which every checked
	// junction keeps at least FireFlowOptions.Residual; 0 when even the
	// background demand leaves one below it.
	Available Flow
	// Limiting is the checked junction whose pressure limits Available
	// (the first to fall below the residual just above it; it may be Node).
	Limiting int
	// Residual is the pressure at Node with Available drawn there.
	Residual Pressure
	// AtCeiling reports that Available is FireFlowOptions.Ceiling and the
	// criterion still held there.
	AtCeiling bool
	// Solves is the number of network solves done for this hydrant,
	// Iterations the Newton iterations of those solves and Factorisations
	// the iterations among them that factorised the head matrix.
	Solves, Iterations, Factorisations int
	// RegionSolves is the number of solves of the region model that
	// predicted the first solve's warm start (FireFlowPredicted).
	RegionSolves int
	// Err is set when the hydrant is not a supplied junction or a solve
	// failed; the other fields are then not to be reported.
	Err error
}

// Defaults of FireFlowOptions and the search.
const (
	defaultFireResidual  = 20 * PoundPerSquareInch
	defaultFireCeiling   = 10000 * USGallonPerMinute
	defaultFireTolerance = 1 * USGallonPerMinute
	// fireTestFlow is the flow of the first trial solve, a typical
	// hydrant-test flow (common practice).
	fireTestFlow = 1000 * USGallonPerMinute
	// maxFireSolves caps the solves of one hydrant's search.
	maxFireSolves = 60
)

// FireFlow finds, for each hydrant node, the available fire flow: the
// largest extra demand Q at the node, on top of the background demand, for
// which the pressure p_i = γ·(H_i − z_i) stays ≥ Residual at every checked
// junction (DOMAIN.md §4.4). demand is the background per node (SI; nil
// means the network's own times Options.DemandFactor, the max-day demand
// when the Solver was made with the max-day factor); base is the solution
// at that demand, used as the zero-flow point and as the warm start of
// every search. A nil base is solved here from a cold start, and every
// search solve then starts cold as well.
//
// Search, with f(Q) = min_i p_i(Q) − Residual, decreasing in Q:
//
//  1. f(0) from base; if f(0) < 0 the available flow is 0.
//  2. An estimate by pinned solves (Solver.SolvePinned): the extra demand
//     that puts the hydrant at exactly the residual pressure, then, if
//     another checked junction falls lower, the one that puts that junction
//     at the residual (see pinned). The estimate is one end of the bracket
//     (feasible or not by its own margin) and the first trial goes
//     0.45·Tolerance beyond it, so that two solves usually close the
//     bracket. When the pinned solves fail, the search starts as in 3.
//  3. Otherwise a trial solve at 1,000 gpm (or Ceiling if lower). Because the
//     pressure drop grows as Q^1.852 (Hazen-Williams), the root predicted
//     from two points is linear interpolation in u = Q^1.852, which from
//     the static point is the flow-test relation of NFPA 291:
//     Q_R = Q_F·(H_R/H_F)^0.54, H_R = f(0), H_F = f(0) − f(Q_F).
//  4. Until the bracket [lo, hi] (f(lo) ≥ 0 > f(hi)) is narrower than
//     Tolerance: the next trial is that interpolation between the bracket
//     ends (or extrapolation from the two highest feasible points, capped at
//     Ceiling, while no infeasible point is known), kept 0.45·Tolerance
//     inside the bracket so that a good estimate closes it from both sides;
//     after three moves of the same end in a row, bisection (regula falsi
//     with a bisection safeguard).
//
// Each search solve warm-starts from flows predicted, linearly in Q, from
// the hydrant's earlier solves (see warmFlows). The first pinned solve of
// step 2 starts from base (FireFlowFromBase) or, with FireFlowPredicted
// (FireFlowAuto on networks of predictMinJunctions junctions or more),
// from the flows a region model predicts with the fire flow drawn (see
// firePredictor), which cuts the factorisations of a search from 6.6 to
// 2.3 on the 130,000-pipe grid; every point of the search is still a solve
// of the whole network.
// Hydrants are divided among Workers, each with its own Solver clone;
// every hydrant's search depends only on base, so the results, in the order
// of hydrants, do not depend on Workers. s itself is not used for solving
// except for a nil base.
func FireFlow(s *Solver, demand []Flow, base *Solution, hydrants []int, opt FireFlowOptions) []FireFlowResult {
	results := make([]FireFlowResult, len(hydrants))
	for k, h := range hydrants {
		results[k].Node = h
		results[k].Limiting = -1
	}
	fail := func(err error) []FireFlowResult {
		for k := range results {
			results[k].Err = err
		}
		return results
	}
	if s == nil {
		return fail(errors.New("hydraulics: fire flow: nil solver"))
	}
	o, err := opt.withDefaults(len(s.g.net.Nodes))
	if err != nil {
		return fail(err)
	}
	background := make([]Flow, len(s.g.net.Nodes))
	if demand == nil {
		for i, d := range s.g.demand0 {
			background[i] = Flow(d)
		}
	} else {
		if len(demand) != len(background) {
			return fail(fmt.Errorf("hydraulics: fire flow: %d demands for %d nodes", len(demand), len(background)))
		}
		copy(background, demand)
	}
	cold := base == nil
	if cold {
		if base, err = s.Solve(background, nil); err != nil {
			return fail(fmt.Errorf("hydraulics: fire flow: background solve: %w", err))
		}
	}
	if len(base.Head) != len(background) || len(base.Flow) != len(s.g.net.Pipes) {
		return fail(errors.New("hydraulics: fire flow: base solution does not match the network"))
	}
	workers := min(o.Workers, len(hydrants))
	predict := !cold && usePrediction(s.g, o.Method)
	var adj *pipeAdjacency
	var checked map[int][]int
	if predict {
		adj, checked = newPipeAdjacency(s.g), checkedJunctions(s.g, o.Zone)
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			f := &fireSearch{s: s.Clone(), opt: o, base: base, cold: cold,
				demand: make([]Flow, len(background)), background: background}
			search := f.run
			if predict {
				// Without the base factorisation the search starts from base.
				if p, err := newFirePredictor(s, f, base, adj, checked); err == nil {
					search = p.run
				}
			}
			for {
				k := int(next.Add(1) - 1)
				if k >= len(hydrants) {
					return
				}
				results[k] = search(hydrants[k])
				if o.Searched != nil {
					o.Searched()
				}
			}
		}()
	}
	wg.Wait()
	return results
}

// withDefaults checks o against a network of nn nodes and fills defaults.
func (o FireFlowOptions) withDefaults(nn int) (FireFlowOptions, error) {
	switch {
	case o.Residual < 0 || !isFinite(float64(o.Residual)):
		return o, fmt.Errorf("hydraulics: fire flow: residual %g Pa is not a finite number ≥ 0", float64(o.Residual))
	case o.Ceiling < 0 || !isFinite(float64(o.Ceiling)):
		return o, fmt.Errorf("hydraulics: fire flow: ceiling %g m³/s is not a finite number ≥ 0", float64(o.Ceiling))
	case o.Tolerance < 0 || !isFinite(float64(o.Tolerance)):
		return o, fmt.Errorf("hydraulics: fire flow: tolerance %g m³/s is not a finite number ≥ 0", float64(o.Tolerance))
	case o.Workers < 0:
		return o, fmt.Errorf("hydraulics: fire flow: %d workers", o.Workers)
	case o.Zone != nil && len(o.Zone) != nn:
		return o, fmt.Errorf("hydraulics: fire flow: %d zone numbers for %d nodes", len(o.Zone), nn)
	}
	if o.Residual == 0 {
		o.Residual = defaultFireResidual
	}
	if o.Ceiling == 0 {
		o.Ceiling = defaultFireCeiling
	}
	if o.Tolerance == 0 {
		o.Tolerance = defaultFireTolerance
	}
	if o.Workers == 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
	return o, nil
}

// fireSearch is one worker's state.
type fireSearch struct {
	s          *Solver
	opt        FireFlowOptions
	base       *Solution
	cold       bool
	background []Flow
	demand     []Flow // background plus the trial flow at the hydrant

	hydrant        int
	start          *Solution // warm start of the first pinned solve, when not base
	warm           *Solution // buffer of the predicted warm-start flows
	solves         int
	iterations     int
	factorisations int
}

// firePoint is one trial: extra flow, margin f = min p − Residual, the
// junction of that minimum and the solution.
type firePoint struct {
	q     float64
	f     float64
	worst int
	sol   *Solution
}

// run searches one hydrant.
func (f *fireSearch) run(h int) FireFlowResult {
	r := FireFlowResult{Node: h, Limiting: -1}
	g := f.s.g
	if h < 0 || h >= len(g.net.Nodes) || g.net.Nodes[h].Fixed || !g.supplied[h] {
		r.Err = fmt.Errorf("hydraulics: fire flow: node %d is not a supplied junction", h)
		return r
	}
	f.hydrant, f.solves, f.iterations, f.factorisations = h, 0, 0, 0
	tol, ceiling := float64(f.opt.Tolerance), float64(f.opt.Ceiling)
	b := newFireBracket(f.point(0, f.base), tol, ceiling)
	finish := func(err error) FireFlowResult {
		r.Available = Flow(b.lo.q)
		r.Residual = pressureAt(g.net, b.lo.sol, h)
		r.Limiting = b.lo.worst
		if b.haveHi {
			r.Limiting = b.hi.worst
		}
		r.Solves, r.Iterations, r.Factorisations = f.solves, f.iterations, f.factorisations
		if err != nil {
			r.Err = fmt.Errorf("hydraulics: fire flow at node %d (id %q): %w", h, g.net.Nodes[h].ID, err)
		}
		return r
	}
	if b.lo.f < 0 {
		return finish(nil)
	}
	x := min(float64(fireTestFlow), ceiling)
	if cand, ok := f.pinned(h, b.lo); ok {
		// The estimate is one end of the bracket; the first trial, 0.45·Tolerance
		// beyond it, is meant to be the other.
		switch {
		case cand.q >= ceiling && cand.f >= 0:
			b.lo, r.AtCeiling = cand, true
			return finish(nil)
		case cand.q >= ceiling:
			x = ceiling
		case cand.f >= 0:
			b.prev, b.lo = b.lo, cand
			x = min(ceiling, cand.q+0.45*tol)
		default:
			b.hi, b.haveHi = cand, true
			x = max(b.lo.q+0.45*tol, cand.q-0.45*tol)
			if x >= b.hi.q {
				x = (b.lo.q + b.hi.q) / 2
			}
		}
	}
	for {
		if f.solves >= maxFireSolves {
			return finish(fmt.Errorf("bracket still %g gpm wide after %d solves", Flow(b.hi.q-b.lo.q).GPM(), f.solves))
		}
		p, err := f.trial(x, b.prev, b.lo, b.hi, b.haveHi)
		if err != nil {
			return finish(err)
		}
		b.add(p)
		var done bool
		if x, done = b.next(); done {
			r.AtCeiling = !b.haveHi
			return finish(nil)
		}
	}
}

// fireBracket is the state of one root search on the residual margin f(Q)
// (FireFlow, steps 3–4): lo the highest feasible point (f ≥ 0), prev the
// feasible point below it, hi the lowest infeasible one once found, and how
// many trials in a row moved the same end.
type fireBracket struct {
	prev, lo, hi       firePoint
	haveHi             bool
	lastSide, sameSide int
	tol, ceiling       float64 // m³/s
}

func newFireBracket(zero firePoint, tol, ceiling float64) *fireBracket {
	return &fireBracket{prev: zero, lo: zero, tol: tol, ceiling: ceiling}
}

// add takes trial point p as the new lo (feasible) or hi (not).
func (b *fireBracket) add(p firePoint) {
	side := 1
	if p.f >= 0 {
		b.prev, b.lo, side = b.lo, p, -1
	} else {
		b.hi, b.haveHi = p, true
	}
	if side == b.lastSide {
		b.sameSide++
	} else {
		b.lastSide, b.sameSide = side, 1
	}
}

// next returns the next trial flow, or done: the bracket is narrower than
// tol, or no infeasible point is known and lo has reached the ceiling.
// Without hi it extrapolates from prev and lo in u = Q^1.852 (growing by at
// least half when the pressure has not fallen); with it, regula falsi in u
// kept 0.45·tol inside the bracket, bisection after three moves of one end.
func (b *fireBracket) next() (x float64, done bool) {
	lo, hi, tol := b.lo, b.hi, b.tol
	if !b.haveHi {
		if lo.q >= b.ceiling {
			return 0, true
		}
		est := rootInU(b.prev, lo)
		if !(est > lo.q) {
			est = 1.5 * lo.q
		}
		return min(b.ceiling, max(est+0.45*tol, lo.q+tol)), false
	}
	width := hi.q - lo.q
	if width <= tol {
		return 0, true
	}
	d := 0.45 * tol
	x = rootInU(lo, hi)
	if b.sameSide >= 3 || !(x > lo.q && x < hi.q) {
		x = lo.q + width/2
	}
	return min(max(x, lo.q+d), hi.q-d), false
}

// count adds one solve, and the iterations and factorisations of sol (nil
// when the solve failed early), to the hydrant's statistics.
func (f *fireSearch) count(sol *Solution) {
	f.solves++
	if sol != nil {
		f.iterations += sol.Iterations
		f.factorisations += sol.Factorisations
	}
}

// pinned estimates the available flow with pinned solves (see
// Solver.SolvePinned): the extra demand at the hydrant that brings the
// pressure at a checked junction w to the residual exactly, first with w the
// hydrant, then, while some other junction falls lower than w by more than
// pinSlack, with w that junction, warm-starting from the solve before. It
// returns the last estimate as a point of the search, or false when a
// pinned solve failed or the limiting junction kept changing (the search
// then starts from its usual first trial).
func (f *fireSearch) pinned(h int, zero firePoint) (firePoint, bool) {
	g := f.s.g
	copy(f.demand, f.background)
	warm := f.base
	if f.start != nil {
		warm = f.start
	}
	if f.cold {
		warm = nil
	}
	w := h
	tight := g.opt.Tolerance
	g.opt.Tolerance = max(tight, pinTolerance)
	defer func() { g.opt.Tolerance = tight }()
	for range maxPinRounds {
		head := Head(g.net.Nodes[w].Elevation) + HeadOf(f.opt.Residual)
		sol, x, err := f.s.solvePinned(f.demand, warm, h, w, head, f.opt.Ceiling, w != h)
		f.count(sol)
		if err != nil || !(float64(x) > zero.q) {
			return firePoint{}, false
		}
		p := f.point(float64(x), sol)
		if p.worst == w || p.f >= -float64(pinSlack) {
			return p, true
		}
		w, warm = p.worst, sol
	}
	return firePoint{}, false
}

// Pinned estimates (see pinned): at most maxPinRounds solves, and a
// junction lower than the pinned one by no more than pinSlack (a thousandth
// of a psi) does not move the pin. A pinned solve may stop once the
// relative flow change is below pinTolerance (or the Solver's own
// tolerance, if looser): it must still pass the same head-balance
// (HeadTolerance, 1e-4 m per pipe) and continuity tests as every solve, and
// Newton's quadratic convergence leaves its draw within 1e-4 gpm of a solve
// to 1e-6 (measured on the benchmark grid), so its margin is a sound
// bracket end. It saves one or two factorisations per hydrant.
const (
	maxPinRounds = 4
	pinTolerance = 1e-3
	pinSlack     = 0.001 * PoundPerSquareInch
)

// trial solves with extra flow q at the hydrant. The warm start is the
// linear interpolation (or extrapolation) in Q of the pipe flows of the
// bracket ends, or, before a bracket exists, of the two highest feasible
// points (see warmFlows).
func (f *fireSearch) trial(q float64, prev, lo, hi firePoint, haveHi bool) (firePoint, error) {
	copy(f.demand, f.background)
	f.demand[f.hydrant] += Flow(q)
	var warm *Solution
	if !f.cold {
		a, b := prev, lo
		if haveHi {
			a, b = lo, hi
		}
		warm = f.warmFlows(q, a, b)
	}
	sol, err := f.s.SolveNear(f.demand, warm)
	f.count(sol)
	if err != nil {
		return firePoint{}, fmt.Errorf("solve at %.1f gpm: %w", Flow(q).GPM(), err)
	}
	return f.point(q, sol), nil
}

// warmFlows returns a warm start for extra flow q from the solutions at a
// and b: Q_j = Q_j(a) + (q − q_a)·(Q_j(b) − Q_j(a))/(q_b − q_a), the
// first-order prediction of each pipe's flow, which leaves a Newton
// iteration or two fewer than starting from either point. A check valve or
// pump keeps the flow (and so the status) of the nearer point. With a = b
// it is b's flows.
func (f *fireSearch) warmFlows(q float64, a, b firePoint) *Solution {
	if a.q == b.q {
		return b.sol
	}
	if f.warm == nil {
		f.warm = &Solution{Flow: make([]Flow, len(b.sol.Flow))}
	}
	t := (q - a.q) / (b.q - a.q)
	near := b
	if math.Abs(q-a.q) < math.Abs(q-b.q) {
		near = a
	}
	for j, qb := range b.sol.Flow {
		if f.s.g.check[j] {
			f.warm.Flow[j] = near.sol.Flow[j]
			continue
		}
		qa := a.sol.Flow[j]
		f.warm.Flow[j] = qa + Flow(t)*(qb-qa)
	}
	return f.warm
}

// point evaluates the margin of sol over the checked junctions.
func (f *fireSearch) point(q float64, sol *Solution) firePoint {
	g := f.s.g
	zone := f.opt.Zone
	worst, minP := -1, math.Inf(1)
	for i, nd := range g.net.Nodes {
		if nd.Fixed || !g.supplied[i] || (zone != nil && zone[i] != zone[f.hydrant]) {
			continue
		}
		if p := float64(pressureAt(g.net, sol, i)); p < minP || worst < 0 {
			worst, minP = i, p
		}
	}
	return firePoint{q: q, f: minP - float64(f.opt.Residual), worst: worst, sol: sol}
}

// rootInU returns the flow at which the line through a and b in the
// variables (u = Q^1.852, f) reaches f = 0, or NaN when f does not fall
// from a to b. From a = (0, f₀) it is Q_b·(f₀/(f₀ − f_b))^0.54, the NFPA 291
// flow-test relation (DOMAIN.md §4.3).
func rootInU(a, b firePoint) float64 {
	ua, ub := math.Pow(a.q, HWExponentFlow), math.Pow(b.q, HWExponentFlow)
	if !(a.f > b.f) || !(ub > ua) {
		return math.NaN()
	}
	u := ua + a.f*(ub-ua)/(a.f-b.f)
	return math.Pow(u, HWSlopeExponent)
}
