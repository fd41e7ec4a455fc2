package hydraulics

import (
	"math/rand/v2"
	"slices"
)

// This file splits the large pieces of the nested dissection (ordering.go) by multilevel graph
// bisection, the scheme of Hendrickson & Leland (1995) and Karypis & Kumar (1998):
//
//  1. Coarsen: match each vertex with the unmatched neighbour joined by the heaviest edge
//     (heavy-edge matching) and contract the matched pairs, summing vertex and edge weights;
//     repeat until the graph is small or stops shrinking.
//  2. Bisect the coarsest graph by growing a region breadth-first from several seeds until it
//     holds half the vertex weight, refine each try and keep the one that cuts the least edge
//     weight.
//  3. Uncoarsen: project the two sides back level by level and refine each level with passes
//     of Fiduccia & Mattheyses (1982): move the boundary vertex of highest gain (cut weight
//     removed less cut weight added) that keeps both sides within the balance limit, lock it,
//     and at the end of a pass roll back to the best cut seen.
//  4. Turn the edge cut into a vertex separator: the smallest set of vertices covering every
//     cut edge, a minimum vertex cover of the bipartite graph of cut edges, found from a
//     maximum matching by König's theorem.
//
// Unlike a cut along a coordinate axis, the multilevel cut follows the network's own narrow
// places (the few mains crossing a river or joining two districts) and the grain of street
// grids at any angle.
//
// References (cited from memory):
//   - B. Hendrickson, R. Leland, "A multilevel algorithm for partitioning graphs", Proc.
//     Supercomputing '95, 1995.
//   - G. Karypis, V. Kumar, "A fast and high quality multilevel scheme for partitioning
//     irregular graphs", SIAM J. Sci. Comput. 20(1):359–392, 1998.
//   - C. M. Fiduccia, R. M. Mattheyses, "A linear-time heuristic for improving network
//     partitions", Proc. 19th Design Automation Conference, 175–181, 1982.
//   - D. Kőnig, "Gráfok és mátrixok", Matematikai és Fizikai Lapok 38:116–119, 1931.

// multilevelPiece is the smallest piece split by multilevel bisection; smaller pieces are
// split along a coordinate axis (or by level structures without coordinates).
const multilevelPiece = 1000

// coarsestPiece is the size at which coarsening stops.
const coarsestPiece = 120

// balanceLimit is the largest share of the vertex weight either side may hold.
const balanceLimit = 0.6

// weightedGraph is an undirected graph in compressed sparse row form with vertex and edge
// weights; edge k joins a vertex to nbr[k] with weight ew[k].
type weightedGraph struct {
	start []int32
	nbr   []int32
	ew    []int32
	vw    []int32
}

func (g *weightedGraph) order() int { return len(g.start) - 1 }

// pieceGraph returns the subgraph induced by the piece labelled id, with unit weights; vertex
// i of the result is piece[i] (o.local maps back).
func (o *orderer) pieceGraph(piece []int32, id int32) *weightedGraph {
	edges := 0
	for i, v := range piece {
		o.local[v] = int32(i)
		edges += o.g.start[v+1] - o.g.start[v]
	}
	g := &weightedGraph{start: make([]int32, len(piece)+1), nbr: make([]int32, 0, edges), vw: make([]int32, len(piece))}
	for i, v := range piece {
		g.vw[i] = 1
		for _, u := range o.g.neighbours(v) {
			if o.label[u] == id {
				g.nbr = append(g.nbr, o.local[u])
			}
		}
		g.start[i+1] = int32(len(g.nbr))
	}
	g.ew = make([]int32, len(g.nbr))
	for k := range g.ew {
		g.ew[k] = 1
	}
	return g
}

// coarsen contracts a heavy-edge matching of g, pairing no two vertices whose weights sum to
// more than maxWeight. It returns the coarse graph and the coarse vertex of each vertex.
// Vertices are visited in a fixed pseudo-random order, so the result is repeatable.
func (g *weightedGraph) coarsen(maxWeight int32) (*weightedGraph, []int32) {
	n := g.order()
	match := make([]int32, n)
	for v := range match {
		match[v] = -1
	}
	for _, v := range visitOrder(n) {
		if match[v] >= 0 {
			continue
		}
		best, bestW := v, int32(-1)
		for k := g.start[v]; k < g.start[v+1]; k++ {
			u := g.nbr[k]
			if match[u] < 0 && u != v && g.ew[k] > bestW && g.vw[v]+g.vw[u] <= maxWeight {
				best, bestW = u, g.ew[k]
			}
		}
		match[v], match[best] = best, v
	}
	cmap := make([]int32, n)
	rep := make([]int32, 0, n/2+1)
	for v := range n {
		if u := match[v]; int(u) >= v {
			cmap[v], cmap[u] = int32(len(rep)), int32(len(rep))
			rep = append(rep, int32(v))
		}
	}
	nc := len(rep)
	c := &weightedGraph{start: make([]int32, nc+1), nbr: make([]int32, 0, len(g.nbr)), vw: make([]int32, nc)}
	c.ew = make([]int32, 0, len(g.nbr))
	at := make([]int32, nc) // position of a coarse neighbour in the current row, or below its start
	for i := range at {
		at[i] = -1
	}
	for cv, v := range rep {
		rowStart := int32(len(c.nbr))
		pair := [2]int32{v, match[v]}
		members := pair[:1]
		if pair[1] != v {
			members = pair[:2]
		}
		for _, x := range members {
			c.vw[cv] += g.vw[x]
			for k := g.start[x]; k < g.start[x+1]; k++ {
				cu := cmap[g.nbr[k]]
				if int(cu) == cv {
					continue
				}
				if at[cu] >= rowStart {
					c.ew[at[cu]] += g.ew[k]
					continue
				}
				at[cu] = int32(len(c.nbr))
				c.nbr = append(c.nbr, cu)
				c.ew = append(c.ew, g.ew[k])
			}
		}
		c.start[cv+1] = int32(len(c.nbr))
	}
	return c, cmap
}

// bisect splits g into two sides (side[v] is 0 or 1) of at most balanceLimit of the vertex
// weight each, cutting little edge weight: steps 1–3 of the file comment.
func (g *weightedGraph) bisect() []uint8 {
	total := int64(0)
	for _, w := range g.vw {
		total += int64(w)
	}
	maxWeight := int32(max(1, 1.5*float64(total)/float64(coarsestPiece)))
	levels := []*weightedGraph{g}
	var maps [][]int32
	for levels[len(levels)-1].order() > coarsestPiece {
		fine := levels[len(levels)-1]
		c, cmap := fine.coarsen(maxWeight)
		if c.order() > fine.order()*19/20 {
			break
		}
		levels = append(levels, c)
		maps = append(maps, cmap)
	}
	side := levels[len(levels)-1].initialBisection(total)
	for l := len(levels) - 2; l >= 0; l-- {
		cmap := maps[l]
		fineSide := make([]uint8, levels[l].order())
		for v, cv := range cmap {
			fineSide[v] = side[cv]
		}
		side = fineSide
		levels[l].refine(side, total)
	}
	return side
}

// sideLimit is the most vertex weight one side may hold: balanceLimit of the total, but never
// less than half the total plus the heaviest vertex, so that coarse vertices can still move.
func (g *weightedGraph) sideLimit(total int64) int64 {
	heaviest := int32(0)
	for _, w := range g.vw {
		heaviest = max(heaviest, w)
	}
	return max(int64(balanceLimit*float64(total)), (total+1)/2+int64(heaviest))
}

// initialBisection grows a region breadth-first from each of a few seeds until it holds half
// the weight (restarting at the next unreached vertex if the graph is disconnected), refines
// each, and returns the one with the least cut.
func (g *weightedGraph) initialBisection(total int64) []uint8 {
	n := g.order()
	const tries = 6
	var best []uint8
	bestCut := int64(-1)
	for t := range tries {
		side := make([]uint8, n)
		for v := range side {
			side[v] = 1
		}
		weight := int64(0)
		queue := make([]int32, 0, n)
		next := 0
		seed := int32(t * n / tries)
		for weight < total/2 {
			if len(queue) == 0 {
				for side[seed] == 0 {
					seed = int32(next)
					next++
				}
				side[seed] = 0
				weight += int64(g.vw[seed])
				queue = append(queue, seed)
				continue
			}
			v := queue[0]
			queue = queue[1:]
			for k := g.start[v]; k < g.start[v+1] && weight < total/2; k++ {
				if u := g.nbr[k]; side[u] == 1 {
					side[u] = 0
					weight += int64(g.vw[u])
					queue = append(queue, u)
				}
			}
		}
		g.refine(side, total)
		if cut := g.cutWeight(side); bestCut < 0 || cut < bestCut {
			best, bestCut = side, cut
		}
	}
	return best
}

// cutWeight is the total weight of the edges joining the two sides.
func (g *weightedGraph) cutWeight(side []uint8) int64 {
	cut := int64(0)
	for v := range g.order() {
		for k := g.start[v]; k < g.start[v+1]; k++ {
			if side[g.nbr[k]] != side[v] {
				cut += int64(g.ew[k])
			}
		}
	}
	return cut / 2
}

// fmPasses is the most Fiduccia–Mattheyses passes per level (edge cut or separator); a pass
// gives up after fmStall moves without improvement (fewer on small graphs).
const (
	fmPasses = 4
	fmStall  = 150
)

// refine improves the bisection side in place with Fiduccia–Mattheyses passes, keeping each
// side within sideLimit, until a pass finds no better cut. ext[v] is the weight of v's edges to
// the other side, kept exact through every move and roll-back; the gain of moving v is
// 2·ext[v] − (weighted degree of v).
func (g *weightedGraph) refine(side []uint8, total int64) {
	n := g.order()
	limit := g.sideLimit(total)
	ext := make([]int32, n)
	wdeg := make([]int32, n)
	locked := make([]bool, n)
	var weight [2]int64
	for v := range n {
		weight[side[v]] += int64(g.vw[v])
		for k := g.start[v]; k < g.start[v+1]; k++ {
			wdeg[v] += g.ew[k]
			if side[g.nbr[k]] != side[v] {
				ext[v] += g.ew[k]
			}
		}
	}
	move := func(v int32) {
		from := side[v]
		to := 1 - from
		side[v] = to
		weight[from] -= int64(g.vw[v])
		weight[to] += int64(g.vw[v])
		ext[v] = wdeg[v] - ext[v]
		for k := g.start[v]; k < g.start[v+1]; k++ {
			if u := g.nbr[k]; side[u] == to {
				ext[u] -= g.ew[k]
			} else {
				ext[u] += g.ew[k]
			}
		}
	}
	// A side over the limit counts as worse than any cut difference.
	over := func() int64 { return max(0, weight[0]-limit) + max(0, weight[1]-limit) }
	var heap gainHeap
	var moved []int32
	stall := min(max(n/100, 25), fmStall)
	for range fmPasses {
		heap = heap[:0]
		for v := range n {
			locked[v] = false
			if ext[v] > 0 {
				heap.push(gainEntry{2*ext[v] - wdeg[v], int32(v)})
			}
		}
		cut, bestCut := int64(0), int64(0)
		bestOver, bestDiff := over(), abs64(weight[0]-weight[1])
		bestLen := 0
		moved = moved[:0]
		for len(heap) > 0 && len(moved)-bestLen < stall {
			e := heap.pop()
			v := e.v
			if locked[v] || e.gain != 2*ext[v]-wdeg[v] {
				continue
			}
			from, to := side[v], 1-side[v]
			locked[v] = true
			if weight[to]+int64(g.vw[v]) > limit && weight[to] >= weight[from] {
				continue
			}
			cut -= int64(e.gain)
			move(v)
			moved = append(moved, v)
			for k := g.start[v]; k < g.start[v+1]; k++ {
				if u := g.nbr[k]; !locked[u] {
					heap.push(gainEntry{2*ext[u] - wdeg[u], u})
				}
			}
			o, diff := over(), abs64(weight[0]-weight[1])
			if o < bestOver || (o == bestOver && (cut < bestCut || (cut == bestCut && diff < bestDiff))) {
				bestOver, bestCut, bestDiff, bestLen = o, cut, diff, len(moved)
			}
		}
		for _, v := range slices.Backward(moved[bestLen:]) {
			move(v)
		}
		if bestLen == 0 {
			return
		}
	}
}

func abs64(i int64) int64 {
	if i < 0 {
		return -i
	}
	return i
}

// gainEntry is a vertex and its gain when it was pushed; entries whose gain is out of date are
// skipped when popped.
type gainEntry struct {
	gain int32
	v    int32
}

// gainHeap is a binary max-heap of gain entries, highest gain first and lowest vertex on ties.
type gainHeap []gainEntry

func (h gainHeap) above(i, j int) bool {
	return h[i].gain > h[j].gain || (h[i].gain == h[j].gain && h[i].v < h[j].v)
}

func (h *gainHeap) push(e gainEntry) {
	*h = append(*h, e)
	s := *h
	for i := len(s) - 1; i > 0; {
		p := (i - 1) / 2
		if !s.above(i, p) {
			break
		}
		s[i], s[p] = s[p], s[i]
		i = p
	}
}

func (h *gainHeap) pop() gainEntry {
	s := *h
	top := s[0]
	last := len(s) - 1
	s[0] = s[last]
	s = s[:last]
	for i := 0; ; {
		l, r, m := 2*i+1, 2*i+2, i
		if l < len(s) && s.above(l, m) {
			m = l
		}
		if r < len(s) && s.above(r, m) {
			m = r
		}
		if m == i {
			break
		}
		s[i], s[m] = s[m], s[i]
		i = m
	}
	*h = s
	return top
}

// vertexSeparator returns a minimum set of vertices covering every edge of g that joins the
// two sides (step 4 of the file comment). Side-0 endpoints of cut edges are matched to side-1
// endpoints by augmenting paths (Kuhn's method); by König's theorem the cover is the matched
// side-0 vertices not reachable from an unmatched side-0 vertex along alternating paths, and
// the side-1 vertices that are.
func (g *weightedGraph) vertexSeparator(side []uint8) []int32 {
	n := g.order()
	mate := make([]int32, n)
	for v := range mate {
		mate[v] = -1
	}
	var left []int32
	for v := range n {
		if side[v] != 0 {
			continue
		}
		for k := g.start[v]; k < g.start[v+1]; k++ {
			if side[g.nbr[k]] == 1 {
				left = append(left, int32(v))
				break
			}
		}
	}
	seen := make([]int32, n) // stamp of the last search that reached a side-1 vertex
	stamp := int32(0)
	var augment func(v int32) bool
	augment = func(v int32) bool {
		for k := g.start[v]; k < g.start[v+1]; k++ {
			u := g.nbr[k]
			if side[u] != 1 || seen[u] == stamp {
				continue
			}
			seen[u] = stamp
			if mate[u] < 0 || augment(mate[u]) {
				mate[u], mate[v] = v, u
				return true
			}
		}
		return false
	}
	for _, v := range left {
		stamp++
		augment(v)
	}
	// Alternating reachability from the unmatched side-0 vertices.
	reach := make([]bool, n)
	var queue []int32
	for _, v := range left {
		if mate[v] < 0 {
			reach[v] = true
			queue = append(queue, v)
		}
	}
	for len(queue) > 0 {
		v := queue[len(queue)-1]
		queue = queue[:len(queue)-1]
		for k := g.start[v]; k < g.start[v+1]; k++ {
			u := g.nbr[k]
			if side[u] != 1 || reach[u] {
				continue
			}
			reach[u] = true
			if w := mate[u]; w >= 0 && !reach[w] {
				reach[w] = true
				queue = append(queue, w)
			}
		}
	}
	var cover []int32
	for v := range n {
		if (side[v] == 0 && mate[v] >= 0 && !reach[v]) || (side[v] == 1 && reach[v]) {
			cover = append(cover, int32(v))
		}
	}
	return cover
}

// multilevel orders the piece labelled id: it splits the piece by multilevel bisection,
// orders the two sides recursively and numbers the separator last.
func (o *orderer) multilevel(piece []int32, id int32) {
	g := o.pieceGraph(piece, id)
	side := g.bisect()
	for _, v := range g.vertexSeparator(side) {
		side[v] = inSeparator
	}
	g.refineSeparator(side, int64(len(piece)))
	var sep []int32
	for i, s := range side {
		if s == inSeparator {
			sep = append(sep, int32(i))
		}
	}
	left, right := o.newLabel(), o.newLabel()
	var lower, upper []int32
	for i, v := range piece {
		switch side[i] {
		case 0:
			o.label[v] = left
		case 1:
			o.label[v] = right
		}
	}
	for k, i := range sep {
		sep[k] = piece[i]
		o.label[piece[i]] = labelDone
	}
	for _, v := range piece {
		switch o.label[v] {
		case left:
			lower = append(lower, v)
		case right:
			upper = append(upper, v)
		}
	}
	if len(lower) == 0 || len(upper) == 0 {
		// No split found (e.g. a star): fall back to the single-level methods.
		for _, v := range piece {
			o.label[v] = id
		}
		o.smallDissect(piece, id)
		return
	}
	if len(upper) < parallelPiece {
		o.dissect(lower, left)
		o.dissect(upper, right)
	} else {
		f := o.fork(len(upper))
		done := make(chan struct{})
		go func() {
			f.dissect(upper, right)
			close(done)
		}()
		o.dissect(lower, left)
		<-done
		o.out = append(o.out, f.out...)
	}
	o.out = append(o.out, sep...)
}

// parallelPiece is the smallest side of a split ordered on a goroutine of its own.
const parallelPiece = 20000

// dissect orders the piece labelled id: by multilevel bisection if it is large, otherwise
// along coordinate axes when the piece has usable coordinates, or by level structures.
func (o *orderer) dissect(piece []int32, id int32) {
	if len(piece) >= multilevelPiece {
		o.multilevel(piece, id)
		return
	}
	o.smallDissect(piece, id)
}

func (o *orderer) smallDissect(piece []int32, id int32) {
	if o.x == nil || !usableCoordinates(piece, o.x, o.y) {
		o.graph(piece, id)
		return
	}
	byX := slices.Clone(piece)
	byY := slices.Clone(piece)
	slices.SortFunc(byX, func(a, b int32) int { return cmpCoord(o.x, a, b) })
	slices.SortFunc(byY, func(a, b int32) int { return cmpCoord(o.y, a, b) })
	o.geometric(byX, byY, id)
}

// Separator sides: where[v] is sideA, sideB or inSeparator.
const inSeparator uint8 = 2

// refineSeparator shrinks the vertex separator where[v] == inSeparator in place with the vertex
// form of the Fiduccia–Mattheyses passes (as in Karypis & Kumar's node refinement): moving a
// separator vertex v into side t pulls its neighbours on the other side into the separator,
// so the gain is vw[v] less their weight. The move of highest gain that keeps side t within
// sideLimit is made and v is locked; each pass ends with a roll-back to the smallest separator
// seen.
func (g *weightedGraph) refineSeparator(where []uint8, total int64) {
	n := g.order()
	limit := g.sideLimit(total)
	gain := [2][]int32{make([]int32, n), make([]int32, n)}
	locked := make([]bool, n)
	var heaps [2]gainHeap
	type move struct {
		v      int32
		to     uint8
		pulled int // end of this move's pulled vertices in the pulled list
	}
	var moves []move
	var pulled []int32
	fresh := func(v int32) {
		for t := range uint8(2) {
			s := g.vw[v]
			for k := g.start[v]; k < g.start[v+1]; k++ {
				if u := g.nbr[k]; where[u] == 1-t {
					s -= g.vw[u]
				}
			}
			gain[t][v] = s
			heaps[t].push(gainEntry{s, v})
		}
	}
	stall := min(max(n/100, 25), fmStall)
	for range fmPasses {
		var weight [3]int64
		for v := range n {
			weight[where[v]] += int64(g.vw[v])
			locked[v] = false
		}
		heaps[0], heaps[1] = heaps[0][:0], heaps[1][:0]
		for v := range n {
			if where[v] == inSeparator {
				fresh(int32(v))
			}
		}
		best, bestLen := weight[inSeparator], 0
		moves, pulled = moves[:0], pulled[:0]
		for len(moves)-bestLen < stall {
			// The best valid entry of each heap.
			var top [2]gainEntry
			var ok [2]bool
			for t := range 2 {
				for len(heaps[t]) > 0 {
					e := heaps[t][0]
					if where[e.v] != inSeparator || locked[e.v] || e.gain != gain[t][e.v] {
						heaps[t].pop()
						continue
					}
					if weight[t]+int64(g.vw[e.v]) > limit {
						heaps[t].pop()
						continue
					}
					top[t], ok[t] = e, true
					break
				}
			}
			if !ok[0] && !ok[1] {
				break
			}
			t := uint8(0)
			switch {
			case !ok[0]:
				t = 1
			case ok[1] && (top[1].gain > top[0].gain || (top[1].gain == top[0].gain && weight[1] < weight[0])):
				t = 1
			}
			v := heaps[t].pop().v
			locked[v] = true
			where[v] = t
			weight[inSeparator] -= int64(g.vw[v])
			weight[t] += int64(g.vw[v])
			first := len(pulled)
			for k := g.start[v]; k < g.start[v+1]; k++ {
				if u := g.nbr[k]; where[u] == 1-t {
					where[u] = inSeparator
					weight[1-t] -= int64(g.vw[u])
					weight[inSeparator] += int64(g.vw[u])
					pulled = append(pulled, u)
				}
			}
			moves = append(moves, move{v, t, len(pulled)})
			// Gains change for separator vertices next to v or to a pulled vertex.
			touch := func(x int32) {
				for k := g.start[x]; k < g.start[x+1]; k++ {
					if u := g.nbr[k]; where[u] == inSeparator && !locked[u] {
						fresh(u)
					}
				}
			}
			touch(v)
			for _, u := range pulled[first:] {
				if !locked[u] {
					fresh(u)
				}
				touch(u)
			}
			if weight[inSeparator] < best {
				best, bestLen = weight[inSeparator], len(moves)
			}
		}
		for i := len(moves) - 1; i >= bestLen; i-- {
			m := moves[i]
			start := 0
			if i > 0 {
				start = moves[i-1].pulled
			}
			for _, u := range pulled[start:m.pulled] {
				where[u] = 1 - m.to
			}
			where[m.v] = inSeparator
		}
		if bestLen == 0 {
			return
		}
	}
}

// matchBlock is the length of the runs of vertices that coarsen visits in shuffled order.
const matchBlock = 1024

// visitOrder returns 0..n-1 shuffled within consecutive blocks of matchBlock, by a generator
// with a fixed seed: random enough that matchings do not follow the numbering's grain, local
// enough that the graph's arrays stay in cache.
func visitOrder(n int) []int32 {
	order := make([]int32, n)
	for v := range order {
		order[v] = int32(v)
	}
	rng := rand.New(rand.NewPCG(uint64(n), 0x6865616472))
	for lo := 0; lo < n; lo += matchBlock {
		block := order[lo:min(lo+matchBlock, n)]
		rng.Shuffle(len(block), func(i, j int) { block[i], block[j] = block[j], block[i] })
	}
	return order
}
