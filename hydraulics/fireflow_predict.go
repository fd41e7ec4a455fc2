package hydraulics

import (
	"container/heap"
	"fmt"
	"math"
)

// FireFlowMethod selects where each hydrant's search starts its first
// solve. Either way every point of the search is a solve of the whole
// network, so the available flow keeps the promise of
// FireFlowOptions.Tolerance; the methods differ in cost, and in which
// flows within the tolerance they report.
type FireFlowMethod int

const (
	// FireFlowAuto is FireFlowPredicted on networks of at least
	// predictMinJunctions supplied junctions and FireFlowFromBase on
	// smaller ones.
	FireFlowAuto FireFlowMethod = iota
	// FireFlowFromBase starts every hydrant's first (pinned) solve from the
	// base solution: the reference.
	FireFlowFromBase
	// FireFlowPredicted starts it from a prediction of the flows with the
	// fire flow drawn (see firePredictor), which saves two to five of the
	// six or seven factorisations of a search. It needs the base solution:
	// with a nil base FireFlow solves from cold starts, as for
	// FireFlowFromBase.
	FireFlowPredicted
)

// predictMinJunctions is the size from which FireFlowAuto predicts. The
// prediction pays where its region is a small share of the network:
// measured (CPU time of BenchmarkFireFlow100k and BenchmarkFireFlow20k,
// every hydrant searched both ways), on 100,000 junctions it saves a third
// of a sweep's CPU time, on 15,000 it costs a fifth more than it saves.
// Below the threshold, the demo town included, the reference method is
// kept.
const predictMinJunctions = 50000

// The prediction (see firePredictor).
const (
	// predictRegionJunctions caps the number of junctions of the region
	// solved in full around each hydrant, and predictRegionShare is the
	// largest share of the network's junctions it may take.
	predictRegionJunctions = 12000
	predictRegionShare     = 0.25
	// predictTolerance is the bracket width of the search in the region
	// model, as a multiple of FireFlowOptions.Tolerance: the prediction
	// only starts the search, which then brackets the root itself.
	predictTolerance = 5.0
)

// firePredictor is one worker's state for FireFlowPredicted. The head
// matrix A = Σ_j p_j·b_j·b_jᵀ of the Global Gradient Algorithm at the base
// solution (p_j = 1/h_j'(Q₀_j), b_j = e_from − e_to over the unknown heads;
// Todini & Pilati 1988) is factorised once. For hydrant h:
//
//  1. One triangular solve gives g = A⁻¹·e_h, the linear response of the
//     heads to a draw: δH ≈ −X·g (m per m³/s; Solver.HeadSensitivity's
//     λ), the pipes' flows δQ_j ≈ −X·p_j·(g_from − g_to).
//  2. The linear response underestimates the head loss near the hydrant
//     many times over, where the fire flow is many times the base flows
//     and the loss grows as Q^1.852. So a region R of
//     predictRegionJunctions junctions around h, taken in decreasing order
//     of g (the junctions whose heads the draw lowers most), is solved as a
//     network of its own with its full Hazen-Williams laws, the nodes just
//     outside held at H₀ − X·g.
//  3. The root of that model (the same bracketing as the search, to
//     predictTolerance) gives X̂; the prediction is the region's flows at
//     X̂ inside R and Q₀_j − X̂·p_j·(g_from − g_to) outside.
//
// Measured on the benchmark grids (fireflow_bench_test.go) the search
// then needs 2.3 factorisations per hydrant instead of 6.6 on 130,000
// pipes and 3.3 instead of 6.6 on 20,000: its first pinned solve converges
// from the prediction in two or three Newton iterations instead of five.
// The region's own solves (about four per hydrant, on up to
// predictRegionJunctions junctions) are the price; see
// predictMinJunctions for where it pays. The model's own root is not reported: the
// coupling at R's boundary is one-way (the linear far field does not see
// the region's extra losses) and the far field is linear about the base
// flows, which the fire flow exceeds many times over well beyond R. So the
// model's root is off, on average high, the more the smaller R is:
// measured on the 130,000-pipe benchmark grid (101 hydrants, fire flows
// near 7,000 gpm, the infeasible end of the model's bracket against the
// search's available flow), by up to 148 gpm (2.7 %; mean +19) with 1,000
// junctions in R (6.4 ms of one core a hydrant), 26 gpm (mean +3) with
// 3,000 (14.5 ms) and 4.8 gpm with 12,000 (52 ms).
// That is why the model only starts the search and is never reported: a
// region small enough to make a sweep fast would not keep the 1 gpm
// promise, and its error leans to the unsafe side.
type firePredictor struct {
	search *fireSearch // the worker's search, whose base and options it shares
	s      *Solver     // holds the factorisation of A at the base solution
	base   *Solution
	adj    *pipeAdjacency
	zones  map[int][]int // checked junctions per zone, or nil
	all    []int         // every checked junction, when there are no zones

	p0  []float64 // base conductance per pipe
	g   []float64 // per node: sensitivity (0 at fixed nodes)
	rhs []float64 // per unknown row

	region   []int   // R's junctions, hydrant first
	boundary []int   // nodes outside R joined to it by a solved pipe
	local    []int32 // node → index in the region network, or −1
	pipes    []int   // pipes of the region network
	inPipe   []bool  // pipe is in the region network
	queue    regionQueue
	queued   []uint32 // node → stamp of the last region that queued it
	stamp    uint32
	rank     []int32 // per region node, its position in the whole network's elimination order
	grades   []Head  // grades of the region network
	demand   []Flow  // demands of the region network
	warm     *Solution
	rs       *Solver   // the region's solver
	start    *Solution // the prediction
	solves   int       // region solves of the current hydrant
}

// pipeAdjacency lists the solved pipes at each node (compressed rows).
type pipeAdjacency struct {
	start []int32
	pipe  []int32
}

func newPipeAdjacency(g *gga) *pipeAdjacency {
	nn := len(g.net.Nodes)
	a := &pipeAdjacency{start: make([]int32, nn+1)}
	for j, ok := range g.solved {
		if ok {
			a.start[g.from[j]+1]++
			a.start[g.to[j]+1]++
		}
	}
	for i := range nn {
		a.start[i+1] += a.start[i]
	}
	a.pipe = make([]int32, a.start[nn])
	fill := append([]int32(nil), a.start[:nn]...)
	for j, ok := range g.solved {
		if ok {
			a.pipe[fill[g.from[j]]] = int32(j)
			fill[g.from[j]]++
			a.pipe[fill[g.to[j]]] = int32(j)
			fill[g.to[j]]++
		}
	}
	return a
}

// at returns the solved pipes at node i.
func (a *pipeAdjacency) at(i int) []int32 { return a.pipe[a.start[i]:a.start[i+1]] }

// usePrediction reports whether method m, on the network of g, predicts.
func usePrediction(g *gga, m FireFlowMethod) bool {
	switch m {
	case FireFlowFromBase:
		return false
	case FireFlowPredicted:
		return true
	}
	return g.nUnknown >= predictMinJunctions
}

// checkedJunctions returns, per zone number, the checked junctions of that
// zone (supplied, not fixed), ascending; with zone nil, all of them under
// zone 0.
func checkedJunctions(g *gga, zone []int) map[int][]int {
	m := map[int][]int{}
	for i, nd := range g.net.Nodes {
		if nd.Fixed || !g.supplied[i] {
			continue
		}
		z := 0
		if zone != nil {
			z = zone[i]
		}
		m[z] = append(m[z], i)
	}
	return m
}

// newFirePredictor factorises A at base in a clone of s.
func newFirePredictor(s *Solver, search *fireSearch, base *Solution, adj *pipeAdjacency, checked map[int][]int) (*firePredictor, error) {
	c := s.Clone()
	g := c.g
	if err := g.start(base); err != nil {
		return nil, err
	}
	nn, np := len(g.net.Nodes), len(g.q)
	p := &firePredictor{search: search, s: c, base: base, adj: adj,
		p0: make([]float64, np), g: make([]float64, nn), rhs: make([]float64, g.nUnknown),
		local: make([]int32, nn), inPipe: make([]bool, np), queued: make([]uint32, nn),
		start: &Solution{Flow: make([]Flow, np)}}
	if search.opt.Zone != nil {
		p.zones = checked
	} else {
		p.all = checked[0]
	}
	for i := range p.local {
		p.local[i] = -1
	}
	g.factored = false
	g.m.clear()
	for j, ok := range g.solved {
		if ok {
			_, p.p0[j] = g.lossAndConductance(j, g.q[j])
			g.assemble(j, p.p0[j])
		}
	}
	if err := g.m.factor(); err != nil {
		return nil, fmt.Errorf("hydraulics: fire flow: base head matrix: %w", err)
	}
	return p, nil
}

// run searches hydrant h from the prediction, or from the base solution
// when there is none.
func (p *firePredictor) run(h int) FireFlowResult {
	f := p.search
	f.start = nil
	if start, ok := p.predict(h); ok {
		f.start = start
	}
	p.clearRegion()
	r := f.run(h)
	f.start = nil
	r.RegionSolves = p.solves
	return r
}

// predict returns the prediction for hydrant h (see firePredictor), or
// false when there is none to make (the hydrant is no supplied junction,
// the base already fails the residual, or a region solve failed).
func (p *firePredictor) predict(h int) (*Solution, bool) {
	f := p.search
	g := f.s.g
	p.solves = 0
	if h < 0 || h >= len(g.net.Nodes) || g.net.Nodes[h].Fixed || !g.supplied[h] {
		return nil, false
	}
	f.hydrant = h
	zero := f.point(0, p.base)
	if zero.f < 0 {
		return nil, false
	}
	p.sensitivity(h)
	if err := p.buildRegion(h); err != nil {
		return nil, false
	}
	tol, ceiling := float64(f.opt.Tolerance), float64(f.opt.Ceiling)
	at, err := p.bracket(zero, p.linearRoot(h, ceiling), predictTolerance*tol, ceiling)
	if err != nil {
		return nil, false
	}
	w := p.start.Flow
	for j, ok := range g.solved {
		w[j] = p.base.Flow[j]
		if ok && !g.check[j] {
			w[j] -= Flow(at.q * p.p0[j] * (p.g[g.from[j]] - p.g[g.to[j]]))
		}
	}
	for k, j := range p.pipes {
		if !g.check[j] {
			w[j] = at.sol.Flow[k]
		}
	}
	return p.start, true
}

// sensitivity solves A·g = e_h and spreads g over the nodes.
func (p *firePredictor) sensitivity(h int) {
	g := p.s.g
	clear(p.rhs)
	p.rhs[g.unknown[h]] = 1
	g.m.solve(p.rhs)
	for i, k := range g.unknown {
		p.g[i] = 0
		if k >= 0 {
			p.g[i] = p.rhs[k]
		}
	}
}

// linearRoot is the root of the linear model, the least over the checked
// junctions of (p₀_i − Residual)/(γ·g_i), capped at ceiling: the model's
// first trial (it overestimates the root, as the linear model
// underestimates the losses).
func (p *firePredictor) linearRoot(h int, ceiling float64) float64 {
	net := p.s.g.net
	x := ceiling
	res := float64(p.search.opt.Residual)
	for _, i := range p.checked(h) {
		margin := float64(pressureAt(net, p.base, i)) - res
		if dp := float64(PressureOf(Head(p.g[i]))); dp > 0 && margin/dp < x {
			x = max(margin/dp, 0)
		}
	}
	return x
}

// checked returns the checked junctions of hydrant h's zone.
func (p *firePredictor) checked(h int) []int {
	if p.zones == nil {
		return p.all
	}
	return p.zones[p.search.opt.Zone[h]]
}

// regionItem is a candidate junction of the region and its priority, g.
type regionItem struct {
	node int
	g    float64
}

// regionQueue is a max-heap of regionItem by g, ties by node.
type regionQueue []regionItem

func (q regionQueue) Len() int { return len(q) }
func (q regionQueue) Less(a, b int) bool {
	if q[a].g != q[b].g {
		return q[a].g > q[b].g
	}
	return q[a].node < q[b].node
}
func (q regionQueue) Swap(a, b int) { q[a], q[b] = q[b], q[a] }
func (q *regionQueue) Push(x any)   { *q = append(*q, x.(regionItem)) }
func (q *regionQueue) Pop() any {
	old := *q
	x := old[len(old)-1]
	*q = old[:len(old)-1]
	return x
}

// buildRegion grows R from h over solved pipes, taking next the queued
// junction of largest g, up to predictRegionJunctions junctions or
// predictRegionShare of the network's (fixed
// nodes are never in R), and makes the region's Solver: R's junctions, then
// the boundary nodes as fixed nodes, with every solved pipe that has an
// end in R. The region's head matrix is eliminated in the whole network's
// order restricted to R (a nested-dissection order of the network is one of
// any part of it), which spares an ordering per hydrant: on the 130,000-pipe
// benchmark grid it cut the sweep's time by a tenth and left the
// factorisations per hydrant as they were. Cost O(|R| log |R|) plus the
// region's symbolic factorisation.
func (p *firePredictor) buildRegion(h int) error {
	g := p.s.g
	net := g.net
	p.stamp++
	p.queued[h] = p.stamp
	q := &p.queue
	*q = append((*q)[:0], regionItem{node: h, g: math.Inf(1)})
	size := max(1, min(predictRegionJunctions, int(predictRegionShare*float64(g.nUnknown))))
	for q.Len() > 0 && len(p.region) < size {
		i := heap.Pop(q).(regionItem).node
		p.local[i] = int32(len(p.region))
		p.region = append(p.region, i)
		for _, j := range p.adj.at(i) {
			o := int(g.to[j])
			if o == i {
				o = int(g.from[j])
			}
			if net.Nodes[o].Fixed || p.queued[o] == p.stamp {
				continue
			}
			p.queued[o] = p.stamp
			heap.Push(q, regionItem{node: o, g: p.g[o]})
		}
	}
	for _, i := range p.region {
		for _, j32 := range p.adj.at(i) {
			j := int(j32)
			if p.inPipe[j] {
				continue
			}
			p.inPipe[j] = true
			p.pipes = append(p.pipes, j)
			for _, o := range [2]int{int(g.from[j]), int(g.to[j])} {
				if p.local[o] < 0 {
					p.local[o] = int32(len(p.region) + len(p.boundary))
					p.boundary = append(p.boundary, o)
				}
			}
		}
	}
	sub := &Network{Nodes: make([]Node, 0, len(p.region)+len(p.boundary)), Pipes: make([]Pipe, 0, len(p.pipes))}
	for _, i := range p.region {
		nd := net.Nodes[i]
		sub.Nodes = append(sub.Nodes, Node{ID: nd.ID, Elevation: nd.Elevation, X: nd.X, Y: nd.Y})
	}
	for _, i := range p.boundary {
		nd := net.Nodes[i]
		sub.Nodes = append(sub.Nodes, Node{ID: nd.ID, Elevation: nd.Elevation, X: nd.X, Y: nd.Y, Fixed: true, Grade: p.base.Head[i]})
	}
	warm := &Solution{Flow: make([]Flow, len(p.pipes))}
	for k, j := range p.pipes {
		pp := net.Pipes[j]
		pp.From, pp.To = int(p.local[pp.From]), int(p.local[pp.To])
		sub.Pipes = append(sub.Pipes, pp)
		warm.Flow[k] = p.base.Flow[j]
	}
	opt := g.opt
	opt.DemandFactor = 1
	p.rank = append(p.rank[:0], make([]int32, len(sub.Nodes))...)
	for k, i := range p.region {
		p.rank[k] = g.m.pinv[g.unknown[i]]
	}
	rs, err := newSolverRanked(sub, &opt, p.rank)
	if err != nil {
		return err
	}
	p.rs, p.warm = rs, warm
	p.grades = append(p.grades[:0], make([]Head, len(sub.Nodes))...)
	p.demand = append(p.demand[:0], make([]Flow, len(sub.Nodes))...)
	for k, i := range p.region {
		p.demand[k] = p.search.background[i]
	}
	return nil
}

// clearRegion resets the marks of the last region.
func (p *firePredictor) clearRegion() {
	for _, i := range p.region {
		p.local[i] = -1
	}
	for _, i := range p.boundary {
		p.local[i] = -1
	}
	for _, j := range p.pipes {
		p.inPipe[j] = false
	}
	p.region, p.boundary, p.pipes, p.rs, p.warm = p.region[:0], p.boundary[:0], p.pipes[:0], nil, nil
}

// model solves the region with extra demand q at the hydrant and the
// boundary at H₀ − q·g, and evaluates the margin over the checked
// junctions: the region's solution inside R, H₀ − q·g outside.
func (p *firePredictor) model(q float64) (firePoint, error) {
	net := p.s.g.net
	nr := len(p.region)
	for k, i := range p.boundary {
		p.grades[nr+k] = p.base.Head[i] - Head(q*p.g[i])
	}
	if err := p.rs.SetGrades(p.grades); err != nil {
		return firePoint{}, err
	}
	d := p.demand[0]
	p.demand[0] += Flow(q)
	sol, err := p.rs.SolveNear(p.demand, p.warm)
	p.demand[0] = d
	p.solves++
	if err != nil {
		return firePoint{}, err
	}
	p.warm = sol
	pt := firePoint{q: q, sol: sol, worst: -1}
	minP := math.Inf(1)
	for _, i := range p.checked(p.region[0]) {
		var hd Head
		if k := p.local[i]; k >= 0 && int(k) < nr {
			hd = sol.Head[k]
		} else {
			hd = p.base.Head[i] - Head(q*p.g[i])
		}
		if pr := float64(PressureOf(hd - Head(net.Nodes[i].Elevation))); pr < minP || pt.worst < 0 {
			pt.worst, minP = i, pr
		}
	}
	pt.f = minP - float64(p.search.opt.Residual)
	return pt, nil
}

// bracket searches the model for its root from the base point zero and a
// first trial at guess, with the steps of the search (FireFlow, 3–4:
// regula falsi in u = Q^1.852 kept 0.45·tol inside the bracket, bisection
// after three moves of one end) until the bracket is narrower than tol. It
// returns the infeasible end (the feasible one at the ceiling).
func (p *firePredictor) bracket(zero firePoint, guess, tol, ceiling float64) (firePoint, error) {
	b := newFireBracket(zero, tol, ceiling)
	x := min(max(guess, tol), ceiling)
	for range maxFireSolves {
		pt, err := p.model(x)
		if err != nil {
			return pt, err
		}
		b.add(pt)
		var done bool
		if x, done = b.next(); done {
			if !b.haveHi {
				return b.lo, nil
			}
			return b.hi, nil
		}
	}
	return b.hi, fmt.Errorf("hydraulics: fire flow: region model bracket still %g gpm wide", Flow(b.hi.q-b.lo.q).GPM())
}
