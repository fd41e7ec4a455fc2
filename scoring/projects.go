package scoring

import (
	"cmp"
	"container/heap"
	"errors"
	"fmt"
	"math"
	"slices"
)

// Segment is one main as project grouping sees it: its end nodes (any
// numbering shared by the segments), length, street and whether it
// qualifies for replacement on its own.
type Segment struct {
	From, To  int
	Length    float64 // metres
	Street    string  // "" when the layer has no street name
	Qualifies bool
	// Skip leaves the segment out of grouping altogether (not in the
	// network, or closed): it is neither a project segment nor a gap.
	Skip bool
}

// GroupOptions limit the projects. MaxLength caps a project's length
// (metres; 0 = no cap); MaxGap is the longest run of segments that do not
// qualify that is taken into a project to join two that do (metres; 0 =
// none). With ByStreet, segments join only along one street name.
type GroupOptions struct {
	MaxLength, MaxGap float64
	ByStreet          bool
}

// Group is one project: its segments in the order a walk along it meets
// them, and which of them are gaps (taken in only to join two qualifying
// runs).
type Group struct {
	Segments []int
	Gap      []bool
	Length   float64
}

// GroupSegments forms projects from qualifying segments (DOMAIN.md §7.5,
// common practice with no single source):
//
//  1. Gaps: a run of non-qualifying segments no longer than MaxGap in all,
//     joining an end of one qualifying segment to an end of another (along
//     one street with ByStreet), is taken in; the shortest such run is
//     found by a bounded Dijkstra search from every node a qualifying
//     segment touches.
//  2. The qualifying segments and the gaps taken in are joined where they
//     share a node (and, with ByStreet, a street), into connected runs.
//  3. A run longer than MaxLength is cut into connected pieces: each
//     grows breadth-first from a qualifying end segment (the fewest
//     neighbours left, then the lowest index) while the next segment fits;
//     a segment longer than MaxLength alone is a project of its own. A gap
//     segment that ends up joining nothing within its piece is dropped.
//
// Every qualifying segment is in exactly one group; groups come in order
// of their lowest qualifying segment index.
func GroupSegments(segs []Segment, opt GroupOptions) ([]Group, error) {
	if opt.MaxLength < 0 || opt.MaxGap < 0 || math.IsNaN(opt.MaxLength) || math.IsNaN(opt.MaxGap) {
		return nil, errors.New("projects: negative or NaN length limit")
	}
	for i, s := range segs {
		if !s.Skip && (s.Length < 0 || math.IsNaN(s.Length)) {
			return nil, fmt.Errorf("projects: segment %d has length %g", i, s.Length)
		}
	}
	g := newSegmentGraph(segs, opt)
	in := make([]bool, len(segs))
	gap := make([]bool, len(segs))
	for i, s := range segs {
		in[i] = s.Qualifies && !s.Skip
	}
	if opt.MaxGap > 0 {
		g.fillGaps(in, gap)
	}
	var groups []Group
	seen := make([]bool, len(segs))
	for i := range segs {
		if !in[i] || gap[i] || seen[i] {
			continue
		}
		run := g.component(i, in, seen)
		groups = append(groups, g.cut(run, gap, opt.MaxLength)...)
	}
	slices.SortStableFunc(groups, func(a, b Group) int { return cmp.Compare(firstQualifying(a), firstQualifying(b)) })
	return groups, nil
}

// firstQualifying is the lowest index of a non-gap segment of g.
func firstQualifying(g Group) int {
	low := math.MaxInt
	for k, s := range g.Segments {
		if !g.Gap[k] {
			low = min(low, s)
		}
	}
	return low
}

// segmentGraph is the segments' adjacency through shared nodes.
type segmentGraph struct {
	segs   []Segment
	opt    GroupOptions
	atNode map[int][]int // node → segments ending there (lookup only; lists in index order)
}

func newSegmentGraph(segs []Segment, opt GroupOptions) *segmentGraph {
	g := &segmentGraph{segs: segs, opt: opt, atNode: map[int][]int{}}
	for i, s := range segs {
		if s.Skip {
			continue
		}
		g.atNode[s.From] = append(g.atNode[s.From], i)
		if s.To != s.From {
			g.atNode[s.To] = append(g.atNode[s.To], i)
		}
	}
	return g
}

// joins reports whether segments a and b may be in one project where
// they meet.
func (g *segmentGraph) joins(a, b int) bool {
	return !g.opt.ByStreet || g.segs[a].Street == g.segs[b].Street
}

// neighbours returns the segments sharing a node with i that may join it.
func (g *segmentGraph) neighbours(i int) []int {
	var out []int
	s := g.segs[i]
	for _, n := range []int{s.From, s.To} {
		for _, k := range g.atNode[n] {
			if k != i && g.joins(i, k) && !slices.Contains(out, k) {
				out = append(out, k)
			}
		}
		if s.To == s.From {
			break
		}
	}
	slices.Sort(out)
	return out
}

// fillGaps marks the gap runs of GroupSegments step 1 in gap and in.
func (g *segmentGraph) fillGaps(in, gap []bool) {
	qualifying := slices.Clone(in)
	for i, ok := range qualifying {
		if !ok {
			continue
		}
		s := g.segs[i]
		for _, start := range []int{s.From, s.To} {
			g.gapFrom(i, start, qualifying, in, gap)
		}
	}
}

// gapFrom searches from node start, at an end of qualifying segment q,
// along non-qualifying segments of q's street for the nearest node where
// another qualifying segment of that street ends, within MaxGap, and
// takes the run in.
func (g *segmentGraph) gapFrom(q, start int, qualifying, in, gap []bool) {
	dist := map[int]float64{start: 0} // lookup only
	via := map[int]int{}              // node → segment that reached it
	h := &nodeHeap{{node: start}}
	for h.Len() > 0 {
		cur := heap.Pop(h).(nodeDist)
		if cur.d > dist[cur.node] {
			continue
		}
		if cur.node != start && g.endsQualifying(cur.node, q, qualifying) {
			for n := cur.node; n != start; {
				k := via[n]
				in[k], gap[k] = true, true
				n = g.other(k, n)
			}
			return
		}
		for _, k := range g.atNode[cur.node] {
			if qualifying[k] || !g.joins(q, k) {
				continue
			}
			next := g.other(k, cur.node)
			d := cur.d + g.segs[k].Length
			if d > g.opt.MaxGap {
				continue
			}
			if old, ok := dist[next]; !ok || d < old {
				dist[next], via[next] = d, k
				heap.Push(h, nodeDist{node: next, d: d})
			}
		}
	}
}

// endsQualifying reports whether a qualifying segment other than q, and
// joinable with it, ends at node n.
func (g *segmentGraph) endsQualifying(n, q int, qualifying []bool) bool {
	for _, k := range g.atNode[n] {
		if k != q && qualifying[k] && g.joins(q, k) {
			return true
		}
	}
	return false
}

// other returns segment k's end that is not node n.
func (g *segmentGraph) other(k, n int) int {
	if s := g.segs[k]; s.From == n {
		return s.To
	}
	return g.segs[k].From
}

// component returns the segments joined to i through segments in in, in
// index order, and marks them seen.
func (g *segmentGraph) component(i int, in, seen []bool) []int {
	run := []int{i}
	seen[i] = true
	for k := 0; k < len(run); k++ {
		for _, n := range g.neighbours(run[k]) {
			if in[n] && !seen[n] {
				seen[n] = true
				run = append(run, n)
			}
		}
	}
	slices.Sort(run)
	return run
}

// cut splits run into connected pieces of at most maxLength (see
// GroupSegments step 3): each piece grows breadth-first from a start, a
// qualifying segment with the fewest neighbours left (then the lowest
// index), through the segments not yet in a piece, while they fit.
func (g *segmentGraph) cut(run []int, gap []bool, maxLength float64) []Group {
	left := map[int]bool{} // lookup only: run segments in no piece yet
	for _, k := range run {
		left[k] = true
	}
	degree := func(k int) int {
		n := 0
		for _, m := range g.neighbours(k) {
			if left[m] {
				n++
			}
		}
		return n
	}
	var groups []Group
	for {
		start := -1
		for _, k := range run { // run is in index order
			if left[k] && !gap[k] && (start < 0 || degree(k) < degree(start)) {
				start = k
			}
		}
		if start < 0 {
			return groups
		}
		piece := Group{Segments: []int{start}, Length: g.segs[start].Length}
		delete(left, start)
		for k := 0; k < len(piece.Segments); k++ {
			for _, m := range g.neighbours(piece.Segments[k]) {
				l := g.segs[m].Length
				if !left[m] || (maxLength > 0 && piece.Length+l > maxLength) {
					continue
				}
				delete(left, m)
				piece.Segments, piece.Length = append(piece.Segments, m), piece.Length+l
			}
		}
		groups = append(groups, g.dropDanglingGaps(piece, gap, left))
	}
}

// dropDanglingGaps removes from piece, one at a time, gap segments that
// meet at most one other segment of the piece (they join nothing), and
// returns them to left; removing such a leaf keeps the piece connected.
func (g *segmentGraph) dropDanglingGaps(piece Group, gap []bool, left map[int]bool) Group {
	member := map[int]bool{} // lookup only
	for _, k := range piece.Segments {
		member[k] = true
	}
	for changed := true; changed; {
		changed = false
		for _, k := range piece.Segments {
			if !member[k] || !gap[k] {
				continue
			}
			n := 0
			for _, m := range g.neighbours(k) {
				if member[m] {
					n++
				}
			}
			if n <= 1 {
				delete(member, k)
				left[k] = true
				changed = true
			}
		}
	}
	out := Group{}
	for _, k := range piece.Segments {
		if member[k] {
			out.Segments = append(out.Segments, k)
			out.Gap = append(out.Gap, gap[k])
			out.Length += g.segs[k].Length
		}
	}
	return out
}

// nodeDist is a node reached at a distance.
type nodeDist struct {
	node int
	d    float64
}

// nodeHeap orders nodeDist by distance, then node; a
// container/heap.Interface.
type nodeHeap []nodeDist

func (h nodeHeap) Len() int { return len(h) }
func (h nodeHeap) Less(a, b int) bool {
	if h[a].d != h[b].d {
		return h[a].d < h[b].d
	}
	return h[a].node < h[b].node
}
func (h nodeHeap) Swap(a, b int) { h[a], h[b] = h[b], h[a] }
func (h *nodeHeap) Push(x any)   { *h = append(*h, x.(nodeDist)) }
func (h *nodeHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}
