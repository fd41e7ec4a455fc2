package gis

import "sync"

// kdTree is a static 2-d tree (Bentley, 1975) over points in the local
// planar projection, for the k-nearest searches of the joining stage
// (elevations, demands onto nodes). It is built once over a fixed set and
// never changed, so it is packed into one slice: the node over pts[lo:hi]
// has its splitting point at m = (lo+hi)/2, the points of pts[lo:m] lie on
// or below it along axis[m] and those of pts[m+1:hi] on or above; a range
// of kdLeaf points or fewer is a leaf, scanned in full.
//
// The order of the answers is fixed by the data, not by the tree: by
// squared planar distance
//
//	d² = (qx − px)² + (qy − py)²
//
// in square metres (each square rounded, then the sum, as the R-tree's box
// distance computes it), then by id. Any tree over the same points gives
// the same answers.
//
// Cost: building O(n log n); a query visits O(log n + k) nodes on data
// without extreme clustering.
//
// Reference: J. L. Bentley, Multidimensional binary search trees used for
// associative searching, Communications of the ACM 18(9), 1975.
type kdTree struct {
	pts  []kdPoint
	axis []uint8 // splitting axis (0 x, 1 y) at each median position
}

// kdPoint is one indexed point: its planar position in metres and the
// caller's id (an index into its own slice).
type kdPoint struct {
	xy [2]float64
	id int
}

// kdHit is one answer: the id and its squared planar distance in m².
type kdHit struct {
	id int
	d2 float64
}

// kdLeaf is the most points a leaf holds.
const kdLeaf = 8

// kdParallelBuild is the fewest points in a range whose two halves are
// built on goroutines of their own.
const kdParallelBuild = 1 << 16

// newKDTree builds the tree over pts, which it takes over (and reorders).
func newKDTree(pts []kdPoint) *kdTree {
	t := &kdTree{pts: pts, axis: make([]uint8, len(pts))}
	t.build(0, len(pts))
	return t
}

// build arranges pts[lo:hi] as a subtree: it splits along the wider side
// of the range's bounding box at the median, then builds the two halves
// (on two goroutines when the range is large).
func (t *kdTree) build(lo, hi int) {
	if hi-lo <= kdLeaf {
		return
	}
	p := t.pts[lo:hi]
	minX, maxX, minY, maxY := p[0].xy[0], p[0].xy[0], p[0].xy[1], p[0].xy[1]
	for _, q := range p[1:] {
		minX, maxX = min(minX, q.xy[0]), max(maxX, q.xy[0])
		minY, maxY = min(minY, q.xy[1]), max(maxY, q.xy[1])
	}
	ax := 0
	if maxY-minY > maxX-minX {
		ax = 1
	}
	m := (lo + hi) / 2
	kdSelect(p, m-lo, ax)
	t.axis[m] = uint8(ax)
	if hi-lo < kdParallelBuild {
		t.build(lo, m)
		t.build(m+1, hi)
		return
	}
	var wg sync.WaitGroup
	wg.Go(func() { t.build(lo, m) })
	t.build(m+1, hi)
	wg.Wait()
}

// kdSelect reorders p so that p[k] holds the value of rank k along axis ax,
// with every point before it at or below and every point after at or above
// (Hoare's FIND, 1961, with a median-of-three pivot).
func kdSelect(p []kdPoint, k, ax int) {
	lo, hi := 0, len(p)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		a, b, c := p[lo].xy[ax], p[mid].xy[ax], p[hi].xy[ax]
		v := max(min(a, b), min(max(a, b), c)) // median of the three
		i, j := lo, hi
		for i <= j {
			for p[i].xy[ax] < v {
				i++
			}
			for p[j].xy[ax] > v {
				j--
			}
			if i <= j {
				p[i], p[j] = p[j], p[i]
				i++
				j--
			}
		}
		// Now p[lo:j+1] ≤ v, p[i:hi+1] ≥ v and anything between equals v.
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// kdDist2 is the squared planar distance from q to p in m², rounded as the
// R-tree's box distance rounds it (each square, then the sum; the
// conversions keep the compiler from fusing them into one multiply-add).
func kdDist2(q, p [2]float64) float64 {
	dx, dy := q[0]-p[0], q[1]-p[1]
	return float64(dx*dx) + float64(dy*dy)
}

// kdBefore reports whether hit (d2, id) ranks before h: nearer, or as
// near with a lower id.
func kdBefore(d2 float64, id int, h kdHit) bool {
	return d2 < h.d2 || (d2 == h.d2 && id < h.id)
}

// nearest appends to out (which it first empties) the k points nearest q,
// nearest first, ties in ascending id; fewer if the tree holds fewer.
func (t *kdTree) nearest(q [2]float64, k int, out []kdHit) []kdHit {
	s := kdSearch{t: t, q: q, k: k, hits: out[:0]}
	if k > 0 && len(t.pts) > 0 {
		s.visit(0, len(t.pts))
	}
	return s.hits
}

// kdSearch is the state of one nearest search: the best hits so far, in
// order.
type kdSearch struct {
	t    *kdTree
	q    [2]float64
	k    int
	hits []kdHit
}

// offer puts p among the hits if it ranks within the first k.
func (s *kdSearch) offer(p kdPoint) {
	d2 := kdDist2(s.q, p.xy)
	n := len(s.hits)
	if n == s.k {
		if !kdBefore(d2, p.id, s.hits[n-1]) {
			return
		}
		n--
	} else {
		s.hits = append(s.hits, kdHit{})
	}
	i := n // insertion into the sorted prefix hits[:n]
	for i > 0 && kdBefore(d2, p.id, s.hits[i-1]) {
		s.hits[i] = s.hits[i-1]
		i--
	}
	s.hits[i] = kdHit{id: p.id, d2: d2}
}

// visit searches the subtree over pts[lo:hi]: the near side of the split
// first, then the far side unless the splitting line is already farther
// than the k-th hit. A point beyond the line is at least that far (the
// roundings are monotonic, so also in floating point), and the test keeps
// an equal distance in, for a tie with a lower id.
func (s *kdSearch) visit(lo, hi int) {
	pts := s.t.pts
	for hi-lo > kdLeaf {
		m := (lo + hi) / 2
		ax := s.t.axis[m]
		s.offer(pts[m])
		diff := s.q[ax] - pts[m].xy[ax]
		nearLo, nearHi, farLo, farHi := lo, m, m+1, hi
		if diff >= 0 {
			nearLo, nearHi, farLo, farHi = m+1, hi, lo, m
		}
		s.visit(nearLo, nearHi)
		if len(s.hits) == s.k && float64(diff*diff) > s.hits[s.k-1].d2 {
			return
		}
		lo, hi = farLo, farHi // the far side, as a loop rather than a call
	}
	for _, p := range pts[lo:hi] {
		s.offer(p)
	}
}
