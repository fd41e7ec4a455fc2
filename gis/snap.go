package gis

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"

	"github.com/paulmach/orb"
	"github.com/tidwall/rtree"

	"headroom/hydraulics"
)

// TopoNode is a node of the snapped topology.
type TopoNode struct {
	ID string    // "J1", "J2", … in order of first appearance
	At orb.Point // lon/lat of the first pipe end that made the node
	// X, Y are local planar metres east and north of the layer's mean
	// position (see Snap), used to order the sparse factorisation.
	X, Y float64
}

// Link is one network link: a whole input pipe, or the part of one between
// two nodes where other pipes join it (a tee drawn without a break).
type Link struct {
	Pipe     int // index of the input pipe it is a part of
	From, To int // node indices, From nearer the pipe's start
	// Length is the link's share of the pipe's Length, in proportion to its
	// geodesic share of the centreline: L_part = L_pipe · g_part / g_line.
	// An unsplit pipe keeps its Length exactly.
	Length hydraulics.Length
}

// Topology is the node–link structure made from the usable pipes.
type Topology struct {
	Nodes []TopoNode
	// Ends holds, per input pipe (same order as the []Pipe given to Snap),
	// the node indices of its start and end; {-1,-1} for unusable pipes.
	Ends [][2]int
	// Links are the network links: each usable pipe's parts, pipes in input
	// order, the parts of one pipe in order along it from its start.
	Links []Link
	// Parts holds, per input pipe, the indices into Links of its parts
	// along the pipe; nil for unusable pipes.
	Parts [][]int
	// Splits counts the points where a pipe was split because another
	// pipe's end lies on its interior; len(Links) = usable pipes + Splits.
	Splits int
	// Dangles counts the nodes that only one link reaches: pipe ends that
	// join nothing (dead ends, or ends that should meet another main).
	Dangles int

	proj  projection
	index *rtree.RTreeG[int] // node positions in planar metres
}

// projection is an equirectangular projection about (lon0, lat0) with the
// WGS84 radii of curvature there:
//
//	x = N(φ0)·cos φ0·(λ − λ0),  y = M(φ0)·(φ − φ0)   (λ, φ in radians)
//
// Away from φ0 the east–west scale is off by about tan φ0·Δφ (0.12 % at 11 km
// from the mean latitude at 35°). It is used only to find candidates and to
// order them; distances that decide anything are measured on the ellipsoid.
// Being affine in lon/lat, it maps a point a fraction u along a segment in
// lon/lat to the point the same fraction along the projected segment.
type projection struct {
	lon0, lat0 float64 // degrees
	kx, ky     float64 // metres per degree
	set        bool
}

func newProjection(lon0, lat0 float64) projection {
	m, n := radii(lat0 * degree)
	return projection{lon0: lon0, lat0: lat0, kx: n * math.Cos(lat0*degree) * degree, ky: m * degree, set: true}
}

func (p projection) xy(q orb.Point) [2]float64 {
	return [2]float64{(q[0] - p.lon0) * p.kx, (q[1] - p.lat0) * p.ky}
}

// searchSlack widens planar search boxes so that the projection's scale
// error cannot hide a candidate that is within the distance on the ellipsoid.
const searchSlack = 1.1

// topoNearMiss times the snap tolerance is the reach within which a
// dangling end that joins nothing is reported as a near-miss.
const topoNearMiss = 5

// topoMinPart is the shortest part, in metres along the line, a split may
// leave; a split closer than this to a pipe end or to another split of the
// same pipe is not made (it would give a link of no length).
const topoMinPart = 1e-3

// Snap builds the node–link topology of the usable pipes, as utilities draw
// it, with distances measured on the ellipsoid and ties going to the lower
// index:
//
//   - A pipe whose vertices all lie within tolerance of one point (the
//     centre of their lon/lat bounding box) is a zero-length pipe: marked
//     unusable (pipes[i].Usable, Reason) with a Problem.
//   - Each end joins the nearest existing node within tolerance, or else
//     makes a new node at its own position. Ends are taken in pipe order,
//     start then end, so node IDs J1, J2, … follow first appearance and
//     repeat exactly for the same input; any two nodes are more than the
//     tolerance apart. A pipe whose two ends join one node (a closed loop)
//     is marked unusable with a Problem.
//   - Tees drawn without a break: a node within tolerance of the interior of
//     another usable pipe (its nearest segment there, at a point more than
//     the tolerance from that pipe's end nodes) splits that pipe at the
//     node's projection onto the segment. Several such nodes split one pipe
//     into several parts, in order along it. Splits are counted in
//     Topology.Splits, not reported: a tee is normal utility drawing.
//   - Dangling ends (nodes only one link reaches) are counted in
//     Topology.Dangles; those closer than 5 × the tolerance to
//     another node or pipe are reported as near-misses.
//   - Two usable pipes joining the same two end nodes along the same line
//     (discrete Hausdorff distance within tolerance) are both kept, as they
//     may be parallel mains, and the pair is reported.
//
// Nodes and segments are indexed in R-trees in the local planar metres of
// [projection] about the mean position of the pipe ends. Cost is
// O(V log N) for V vertices and N nodes, plus the pairs of pipes that share
// both end nodes.
func Snap(pipes []Pipe, tolerance hydraulics.Length) (*Topology, []Problem) {
	tol := math.Max(tolerance.Metres(), 0)
	t := &Topology{Ends: make([][2]int, len(pipes)), Parts: make([][]int, len(pipes))}
	t.proj = originOf(pipes)
	grid := newNodeGrid(tol*searchSlack+1e-9, len(pipes))
	var probs []Problem
	for i := range pipes {
		p := &pipes[i]
		t.Ends[i] = [2]int{-1, -1}
		if !p.Usable || len(p.Line) < 2 {
			continue
		}
		if topoZeroLength(p.Line, tol) {
			what := fmt.Sprintf("zero-length pipe: all its vertices lie within the snap tolerance (%s) of one point",
				formatDistance(hydraulics.Length(tol)))
			p.Usable, p.Reason, p.Line = false, what, nil
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry", What: what,
				Action: "pipe left out of the network; remove the stub or redraw the main"})
			continue
		}
		n0 := len(t.Nodes)
		a := t.join(grid, p.Line[0], tol)
		b := t.join(grid, p.Line[len(p.Line)-1], tol)
		if a == b {
			for k := len(t.Nodes) - 1; k >= n0; k-- { // undo nodes only this pipe made
				grid.removeLast(t.Nodes[k].X, t.Nodes[k].Y, k)
			}
			t.Nodes = t.Nodes[:n0]
			what := "both ends join one node (a closed loop)"
			p.Usable, p.Reason, p.Line = false, what, nil
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry", What: what,
				Action: "pipe left out of the network; split the loop into two pipes"})
			continue
		}
		t.Ends[i] = [2]int{a, b}
	}
	// The segment index the near-miss check needs is built meanwhile on
	// another core: it reads only the pipes, the ends and the projection,
	// which are fixed from here on (1M demo town: 0.54 s of the stage's
	// 2.2 s); so, on this one, is the nodes' R-tree, in node order.
	segs := make(chan *rtree.RTreeG[[2]int], 1)
	go func() { segs <- t.segmentIndex(pipes) }()
	t.ensureIndex()
	t.topoLink(pipes, t.topoFindSplits(pipes, tol))
	probs = append(probs, t.topoNearMisses(pipes, tol, segs)...)
	probs = append(probs, t.topoDuplicates(pipes, tol)...)
	return t, probs
}

// originOf returns the projection about the mean position of the usable
// pipe ends (or of all vertices if none is usable).
func originOf(pipes []Pipe) projection {
	var sx, sy float64
	n := 0
	for _, p := range pipes {
		if p.Usable && len(p.Line) >= 2 {
			for _, q := range [2]orb.Point{p.Line[0], p.Line[len(p.Line)-1]} {
				sx += q[0]
				sy += q[1]
				n++
			}
		}
	}
	if n == 0 {
		return newProjection(0, 0)
	}
	return newProjection(sx/float64(n), sy/float64(n))
}

// topoZeroLength reports whether every vertex of line lies within tol
// metres (on the ellipsoid) of the centre of its lon/lat bounding box.
func topoZeroLength(line orb.LineString, tol float64) bool {
	c := line.Bound().Center()
	for _, q := range line {
		if segmentMetres(c, q) > tol {
			return false
		}
	}
	return true
}

// join returns the node the end at q joins, making a new one if none is
// within tol metres: the nearest node (on the ellipsoid) within tol, ties
// to the lower index, among those whose planar position lies in the box of
// half-side grid.r about q's, as nearestWithin finds it in the R-tree.
func (t *Topology) join(grid *nodeGrid, q orb.Point, tol float64) int {
	xy := t.proj.xy(q)
	lo, hi := [2]float64{xy[0] - grid.r, xy[1] - grid.r}, [2]float64{xy[0] + grid.r, xy[1] + grid.r}
	best, bestD := -1, math.Inf(1)
	grid.search(lo, hi, func(k int) {
		n := &t.Nodes[k]
		if n.X < lo[0] || n.X > hi[0] || n.Y < lo[1] || n.Y > hi[1] {
			return // outside the box, as the R-tree's search compares
		}
		dk := segmentMetres(q, n.At)
		if dk <= tol && (dk < bestD || (dk == bestD && k < best)) {
			best, bestD = k, dk
		}
	})
	if best >= 0 {
		return best
	}
	k := len(t.Nodes)
	t.Nodes = append(t.Nodes, TopoNode{ID: "J" + strconv.Itoa(k+1), At: q, X: xy[0], Y: xy[1]})
	grid.add(xy[0], xy[1], k)
	return k
}

// A nodeGrid finds the nodes near a point while Snap makes them: a hash of
// square cells of nodeGridCells search radii a side, each a list of its
// nodes, newest first. Nodes are added one at a time and only the newest
// removed, as Snap needs; on the 1M demo town the join of two million
// ends took 0.9 s through the R-tree (a search and an insert each).
type nodeGrid struct {
	r, cell float64          // search half-side and cell side, planar metres
	head    map[[2]int64]int // cell → its newest node
	next    []int            // node → the next older node in its cell, or −1
}

// nodeGridCells is the cell side in search radii: a search box then lies in
// one cell nearly always (at the default 0.5 ft tolerance, cells of about
// 10 m, against mains tens of metres long).
const nodeGridCells = 64

func newNodeGrid(r float64, capacity int) *nodeGrid {
	return &nodeGrid{r: r, cell: nodeGridCells * r, head: make(map[[2]int64]int, capacity), next: make([]int, 0, capacity)}
}

func (g *nodeGrid) cellOf(x, y float64) [2]int64 {
	return [2]int64{int64(math.Floor(x / g.cell)), int64(math.Floor(y / g.cell))}
}

// add puts node k, the next in order, at (x, y).
func (g *nodeGrid) add(x, y float64, k int) {
	c := g.cellOf(x, y)
	prev, ok := g.head[c]
	if !ok {
		prev = -1
	}
	g.next = append(g.next[:k], prev)
	g.head[c] = k
}

// removeLast takes node k, the newest, out again.
func (g *nodeGrid) removeLast(x, y float64, k int) {
	c := g.cellOf(x, y)
	if g.next[k] < 0 {
		delete(g.head, c)
	} else {
		g.head[c] = g.next[k]
	}
	g.next = g.next[:k]
}

// search calls visit with every node in the cells the box lo–hi touches.
func (g *nodeGrid) search(lo, hi [2]float64, visit func(k int)) {
	cl, ch := g.cellOf(lo[0], lo[1]), g.cellOf(hi[0], hi[1])
	for cx := cl[0]; cx <= ch[0]; cx++ {
		for cy := cl[1]; cy <= ch[1]; cy++ {
			k, ok := g.head[[2]int64{cx, cy}]
			for ok && k >= 0 {
				visit(k)
				k = g.next[k]
			}
		}
	}
}

// nearestWithin returns the node nearest q (on the ellipsoid) within d
// metres, other than skip1 and skip2, and its distance; -1 if none.
func (t *Topology) nearestWithin(q orb.Point, d float64, skip1, skip2 int) (int, float64) {
	xy := t.proj.xy(q)
	r := d*searchSlack + 1e-9
	best, bestD := -1, math.Inf(1)
	t.index.Search([2]float64{xy[0] - r, xy[1] - r}, [2]float64{xy[0] + r, xy[1] + r},
		func(_, _ [2]float64, k int) bool {
			if k == skip1 || k == skip2 {
				return true
			}
			dk := segmentMetres(q, t.Nodes[k].At)
			if dk <= d && (dk < bestD || (dk == bestD && k < best)) {
				best, bestD = k, dk
			}
			return true
		})
	return best, bestD
}

// topoSplit is a point where node splits a pipe: a fraction u along its
// segment seg (from vertex seg−1 to seg), at metres along the line.
type topoSplit struct {
	node, seg int
	u         float64
	at        float64
}

// topoFoot is the point of pipe i's segment s nearest q: its fraction u
// along the segment (found in the local projection), its lon/lat position
// and its distance from q on the ellipsoid in metres.
func (t *Topology) topoFoot(pipes []Pipe, i, s int, q orb.Point) (u float64, foot orb.Point, d float64) {
	a, b := pipes[i].Line[s-1], pipes[i].Line[s]
	u = projectedFraction(t.proj.xy(q), t.proj.xy(a), t.proj.xy(b))
	foot = orb.Point{a[0] + u*(b[0]-a[0]), a[1] + u*(b[1]-a[1])}
	return u, foot, segmentMetres(q, foot)
}

// topoFindSplits returns, per pipe, the tees that split it, in order along
// the line. Each segment of each usable pipe is tested against the nodes
// within tol of its box in the node R-tree.
func (t *Topology) topoFindSplits(pipes []Pipe, tol float64) [][]topoSplit {
	splits := make([][]topoSplit, len(pipes))
	type hit struct {
		node, seg int
		u, d      float64
	}
	var hits []hit
	r := tol*searchSlack + 1e-9
	for i, p := range pipes {
		e := t.Ends[i]
		if e[0] < 0 {
			continue
		}
		hits = hits[:0]
		for s := 1; s < len(p.Line); s++ {
			a, b := t.proj.xy(p.Line[s-1]), t.proj.xy(p.Line[s])
			t.index.Search([2]float64{min(a[0], b[0]) - r, min(a[1], b[1]) - r}, [2]float64{max(a[0], b[0]) + r, max(a[1], b[1]) + r},
				func(_, _ [2]float64, k int) bool {
					if k == e[0] || k == e[1] {
						return true
					}
					u, foot, d := t.topoFoot(pipes, i, s, t.Nodes[k].At)
					if d > tol || segmentMetres(foot, t.Nodes[e[0]].At) <= tol || segmentMetres(foot, t.Nodes[e[1]].At) <= tol {
						return true // off the line, or at the pipe's end, where the end node is the join
					}
					hits = append(hits, hit{k, s, u, d})
					return true
				})
		}
		if len(hits) == 0 {
			continue
		}
		// the nearest segment for each node
		slices.SortFunc(hits, func(a, b hit) int {
			return cmp.Or(cmp.Compare(a.node, b.node), cmp.Compare(a.d, b.d), cmp.Compare(a.seg, b.seg))
		})
		for h, c := range hits {
			if h == 0 || hits[h-1].node != c.node {
				splits[i] = append(splits[i], topoSplit{node: c.node, seg: c.seg, u: c.u})
			}
		}
		splits[i] = topoOrderSplits(p.Line, splits[i])
	}
	return splits
}

// topoOrderSplits sorts the splits of one line along it, sets their
// distance along the line, and drops any that would leave a part shorter
// than topoMinPart.
func topoOrderSplits(line orb.LineString, sp []topoSplit) []topoSplit {
	slices.SortFunc(sp, func(a, b topoSplit) int {
		return cmp.Or(cmp.Compare(a.seg, b.seg), cmp.Compare(a.u, b.u), cmp.Compare(a.node, b.node))
	})
	cum := topoCumulative(line)
	total := cum[len(cum)-1]
	kept := sp[:0]
	last := 0.0
	for _, s := range sp {
		a, b := line[s.seg-1], line[s.seg]
		s.at = cum[s.seg-1] + segmentMetres(a, orb.Point{a[0] + s.u*(b[0]-a[0]), a[1] + s.u*(b[1]-a[1])})
		if s.at-last < topoMinPart || total-s.at < topoMinPart {
			continue
		}
		kept = append(kept, s)
		last = s.at
	}
	return kept
}

// topoCumulative returns the geodesic distance in metres along line to each
// of its vertices (see GeodesicLength).
func topoCumulative(line orb.LineString) []float64 {
	cum := make([]float64, len(line))
	for v := 1; v < len(line); v++ {
		cum[v] = cum[v-1] + segmentMetres(line[v-1], line[v])
	}
	return cum
}

// topoLink makes the links of every usable pipe from its end nodes and its
// splits, and counts splits and dangling ends. A pipe's parts are
// consecutive links, so Parts are windows on one index slice.
func (t *Topology) topoLink(pipes []Pipe, splits [][]topoSplit) {
	first := make([]int, len(pipes))
	t.Links = make([]Link, 0, len(pipes))
	for i, p := range pipes {
		first[i] = len(t.Links)
		e := t.Ends[i]
		if e[0] < 0 {
			continue
		}
		sp := splits[i]
		if len(sp) == 0 {
			t.Links = append(t.Links, Link{Pipe: i, From: e[0], To: e[1], Length: p.Length})
			continue
		}
		cum := topoCumulative(p.Line)
		total := cum[len(cum)-1]
		from, at := e[0], 0.0
		for k := 0; k <= len(sp); k++ {
			to, next := e[1], total
			if k < len(sp) {
				to, next = sp[k].node, sp[k].at
			}
			t.Links = append(t.Links, Link{Pipe: i, From: from, To: to, Length: p.Length * hydraulics.Length((next-at)/total)})
			from, at = to, next
		}
		t.Splits += len(sp)
	}
	seq := make([]int, len(t.Links))
	for j := range seq {
		seq[j] = j
	}
	for i := range pipes {
		end := len(t.Links)
		if i+1 < len(pipes) {
			end = first[i+1]
		}
		if end > first[i] {
			t.Parts[i] = seq[first[i]:end:end]
		}
	}
	for _, d := range t.topoDegree() {
		if d == 1 {
			t.Dangles++
		}
	}
}

// topoDegree returns, per node, the number of link ends there.
func (t *Topology) topoDegree() []int {
	deg := make([]int, len(t.Nodes))
	for _, l := range t.Links {
		deg[l.From]++
		deg[l.To]++
	}
	return deg
}

// topoNearMisses reports the dangling ends that lie within topoNearMiss ×
// tol of another node (other than the far end of their own link), or else of
// another pipe's centreline, but were not joined to it. A pair of dangling
// ends near each other is reported once.
//
// segs delivers the index of the pipes' segments (segmentIndex), taken the
// first time a dangling end has no node near it.
func (t *Topology) topoNearMisses(pipes []Pipe, tol float64, segs <-chan *rtree.RTreeG[[2]int]) []Problem {
	reach := topoNearMiss * tol
	if reach <= 0 {
		return nil
	}
	// the one link at each dangling end
	deg := t.topoDegree()
	only := make([]int, len(t.Nodes))
	for j, l := range t.Links {
		only[l.From], only[l.To] = j, j
	}
	var probs []Problem
	var index *rtree.RTreeG[[2]int] // (pipe, segment) boxes, taken from segs on first need
	reported := map[[2]int]bool{}
	for k, d := range deg {
		if d != 1 {
			continue
		}
		l := t.Links[only[k]]
		far := l.From + l.To - k
		p := pipes[l.Pipe]
		at := t.Nodes[k].At
		if j, dist := t.nearestWithin(at, reach, k, far); j >= 0 {
			pair := [2]int{min(j, k), max(j, k)}
			if !reported[pair] {
				reported[pair] = true
				probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
					What: fmt.Sprintf("near-miss: node %s, an end of this pipe, joins nothing but lies %s from node %s",
						t.Nodes[k].ID, formatDistance(hydraulics.Length(dist)), t.Nodes[j].ID),
					Action: fmt.Sprintf("not joined (snap tolerance %s); if the mains connect, move the end onto the other node or raise the snap tolerance",
						formatDistance(hydraulics.Length(tol)))})
			}
			continue
		}
		if index == nil {
			index = <-segs
		}
		if qi, dist := t.topoNearestPipe(pipes, index, at, reach, l.Pipe, far); qi >= 0 {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: fmt.Sprintf("near-miss: node %s, an end of this pipe, joins nothing but lies %s from pipe %s",
					t.Nodes[k].ID, formatDistance(hydraulics.Length(dist)), pipeName(pipes[qi])),
				Action: fmt.Sprintf("not joined (snap tolerance %s); if the mains connect, move the end onto the other pipe (it is then split there) or raise the snap tolerance",
					formatDistance(hydraulics.Length(tol)))})
		}
	}
	return probs
}

func pipeName(p Pipe) string {
	if p.ID != "" {
		return strconv.Quote(p.ID)
	}
	return "#" + strconv.Itoa(p.Index)
}

// segmentIndex indexes every segment of the usable pipes by its planar box.
func (t *Topology) segmentIndex(pipes []Pipe) *rtree.RTreeG[[2]int] {
	tr := &rtree.RTreeG[[2]int]{}
	for i, p := range pipes {
		if t.Ends[i][0] < 0 {
			continue
		}
		for s := 1; s < len(p.Line); s++ {
			a, b := t.proj.xy(p.Line[s-1]), t.proj.xy(p.Line[s])
			tr.Insert([2]float64{min(a[0], b[0]), min(a[1], b[1])}, [2]float64{max(a[0], b[0]), max(a[1], b[1])}, [2]int{i, s})
		}
	}
	return tr
}

// topoNearestPipe returns the usable pipe whose centreline passes nearest q
// (on the ellipsoid), within d metres, and that distance; -1 if none. It
// leaves out pipe skip (the dangling end's own) and the pipes with a link at
// node far (the other end of that pipe: a short stub lies near them all).
func (t *Topology) topoNearestPipe(pipes []Pipe, segs *rtree.RTreeG[[2]int], q orb.Point, d float64, skip, far int) (int, float64) {
	xy := t.proj.xy(q)
	r := d*searchSlack + 1e-9
	best, bestD := -1, math.Inf(1)
	segs.Search([2]float64{xy[0] - r, xy[1] - r}, [2]float64{xy[0] + r, xy[1] + r},
		func(_, _ [2]float64, ps [2]int) bool {
			i, s := ps[0], ps[1]
			if i == skip || t.topoTouches(i, far) {
				return true
			}
			_, _, dk := t.topoFoot(pipes, i, s, q)
			if dk <= d && (dk < bestD || (dk == bestD && i < best)) {
				best, bestD = i, dk
			}
			return true
		})
	return best, bestD
}

// topoTouches reports whether a link of pipe i ends at node k.
func (t *Topology) topoTouches(i, k int) bool {
	for _, j := range t.Parts[i] {
		if l := t.Links[j]; l.From == k || l.To == k {
			return true
		}
	}
	return false
}

// topoDuplicates reports each pair of usable pipes that join the same two
// end nodes (either way round) along nearly the same line: a discrete
// Hausdorff distance (see topoHausdorffWithin) within tol. Both stay in the
// network. The later pipe of a pair carries the Problem.
func (t *Topology) topoDuplicates(pipes []Pipe, tol float64) []Problem {
	type keyed struct {
		a, b, pipe int
	}
	var ks []keyed
	for i, e := range t.Ends {
		if e[0] >= 0 {
			ks = append(ks, keyed{min(e[0], e[1]), max(e[0], e[1]), i})
		}
	}
	slices.SortFunc(ks, func(x, y keyed) int {
		return cmp.Or(cmp.Compare(x.a, y.a), cmp.Compare(x.b, y.b), cmp.Compare(x.pipe, y.pipe))
	})
	var probs []Problem
	for g := 0; g < len(ks); {
		h := g + 1
		for h < len(ks) && ks[h].a == ks[g].a && ks[h].b == ks[g].b {
			h++
		}
		for y := g + 1; y < h; y++ {
			for x := g; x < y; x++ {
				pa, pb := pipes[ks[x].pipe], pipes[ks[y].pipe]
				if !t.topoHausdorffWithin(pa.Line, pb.Line, tol) {
					continue
				}
				probs = append(probs, Problem{File: pb.File, Feature: pb.Index, ID: pb.ID, Field: "geometry",
					What: fmt.Sprintf("duplicate: joins nodes %s and %s along the same line as pipe %s (feature %d), within %s",
						t.Nodes[ks[g].a].ID, t.Nodes[ks[g].b].ID, pipeName(pa), pa.Index, formatDistance(hydraulics.Length(tol))),
					Action: "both kept in the network as parallel mains; if one is a copy of the other, delete it"})
				break // one report per pipe, naming the first it repeats
			}
		}
		g = h
	}
	return probs
}

// topoHausdorffWithin reports whether the lines a and b are within tol
// metres of each other in the Hausdorff sense, max(h(a,b), h(b,a)) with
// h(a,b) the largest distance from a point of a to the line b. Points of a
// are taken at its vertices and every tol (at least every 1/1000 of a
// segment) along its segments, so the result errs by at most tol/2 (the
// distance to b changes no faster than the point moves). Distances are
// planar in the local projection.
func (t *Topology) topoHausdorffWithin(a, b orb.LineString, tol float64) bool {
	pa, pb := t.topoPlanar(a), t.topoPlanar(b)
	return topoDirectedWithin(pa, pb, tol) && topoDirectedWithin(pb, pa, tol)
}

func (t *Topology) topoPlanar(line orb.LineString) [][2]float64 {
	out := make([][2]float64, len(line))
	for v, q := range line {
		out[v] = t.proj.xy(q)
	}
	return out
}

// topoDirectedWithin reports whether every sampled point of a lies within
// tol of the line b (see topoHausdorffWithin).
func topoDirectedWithin(a, b [][2]float64, tol float64) bool {
	near := func(p [2]float64) bool {
		for s := 1; s < len(b); s++ {
			if pointSegment(p, b[s-1], b[s]) <= tol {
				return true
			}
		}
		return len(b) == 1 && math.Hypot(p[0]-b[0][0], p[1]-b[0][1]) <= tol
	}
	if !near(a[0]) {
		return false
	}
	for s := 1; s < len(a); s++ {
		p, q := a[s-1], a[s]
		l := math.Hypot(q[0]-p[0], q[1]-p[1])
		n := 1
		if tol > 0 {
			n = max(int(math.Min(math.Ceil(l/tol), 1000)), 1)
		}
		for k := 1; k <= n; k++ {
			u := float64(k) / float64(n)
			if !near([2]float64{p[0] + u*(q[0]-p[0]), p[1] + u*(q[1]-p[1])}) {
				return false
			}
		}
	}
	return true
}

// projectedFraction returns the fraction u in [0, 1] along the segment a–b
// of the point nearest p (planar).
func projectedFraction(p, a, b [2]float64) float64 {
	dx, dy := b[0]-a[0], b[1]-a[1]
	l2 := dx*dx + dy*dy
	if l2 == 0 {
		return 0
	}
	return math.Max(0, math.Min(1, ((p[0]-a[0])*dx+(p[1]-a[1])*dy)/l2))
}

// pointSegment returns the planar distance from p to the segment a–b.
func pointSegment(p, a, b [2]float64) float64 {
	u := projectedFraction(p, a, b)
	return math.Hypot(p[0]-a[0]-u*(b[0]-a[0]), p[1]-a[1]-u*(b[1]-a[1]))
}

// ensureIndex builds the projection and node index of a Topology made by
// hand (not by Snap).
func (t *Topology) ensureIndex() {
	if t.index != nil && t.proj.set {
		return
	}
	if !t.proj.set {
		var sx, sy float64
		for _, n := range t.Nodes {
			sx += n.At[0]
			sy += n.At[1]
		}
		if len(t.Nodes) > 0 {
			t.proj = newProjection(sx/float64(len(t.Nodes)), sy/float64(len(t.Nodes)))
		} else {
			t.proj = newProjection(0, 0)
		}
	}
	t.index = &rtree.RTreeG[int]{}
	for k, n := range t.Nodes {
		xy := t.proj.xy(n.At)
		t.index.Insert(xy, xy, k)
	}
}

// DanglingEnds returns, per dangling node (one that only one link reaches)
// in node order, the node and the input pipe whose end it is.
func (t *Topology) DanglingEnds() [][2]int {
	var out [][2]int
	deg := t.topoDegree()
	for _, l := range t.Links {
		for _, n := range [2]int{l.From, l.To} {
			if deg[n] == 1 {
				out = append(out, [2]int{n, l.Pipe})
			}
		}
	}
	slices.SortFunc(out, func(a, b [2]int) int { return cmp.Compare(a[0], b[0]) })
	return out
}
