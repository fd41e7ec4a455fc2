package gis

import (
	"fmt"
	"math"
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

// Topology is the node–link structure made from pipe ends.
type Topology struct {
	Nodes []TopoNode
	// Ends holds, per input pipe (same order as the []Pipe given to Snap),
	// the node indices of its start and end; {-1,-1} for unusable pipes.
	Ends [][2]int

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

// Snap builds the node–link topology from the ends of the usable pipes. Each
// end joins the nearest existing node within tolerance (measured on the
// ellipsoid; ties go to the lower node index), or else makes a new node at
// its own position. Ends are taken in pipe order, start then end, so node IDs
// J1, J2, … follow first appearance and repeat exactly for the same input.
//
// Topology comes from pipe ends only: a pipe that ends on the middle of
// another pipe with no vertex (a T drawn without splitting the main) is not
// connected to it. Such ends, and dangling ends within 10× tolerance of
// another node, are reported as possible unsnapped ends.
//
// A pipe whose two ends join one node (a loop, or a pipe shorter than the
// tolerance) is marked unusable (pipes[i].Usable, Reason) with a Problem.
// Node positions are indexed in an R-tree in the local planar metres of
// [projection] about the mean position of the pipe ends. Cost is
// O(E log E) for E pipe ends.
func Snap(pipes []Pipe, tolerance hydraulics.Length) (*Topology, []Problem) {
	tol := math.Max(tolerance.Metres(), 0)
	t := &Topology{Ends: make([][2]int, len(pipes)), index: &rtree.RTreeG[int]{}}
	t.proj = originOf(pipes)
	var probs []Problem
	degree := []int{}
	firstPipe := []int{}
	for i := range pipes {
		p := &pipes[i]
		t.Ends[i] = [2]int{-1, -1}
		if !p.Usable || len(p.Line) < 2 {
			continue
		}
		n0 := len(t.Nodes)
		a := t.join(p.Line[0], tol)
		b := t.join(p.Line[len(p.Line)-1], tol)
		if a == b {
			for k := len(t.Nodes) - 1; k >= n0; k-- { // undo nodes only this pipe made
				xy := t.proj.xy(t.Nodes[k].At)
				t.index.Delete(xy, xy, k)
			}
			t.Nodes = t.Nodes[:n0]
			what := "both ends join one node (a closed loop, or shorter than the snap tolerance)"
			p.Usable, p.Reason, p.Line = false, what, nil
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry", What: what,
				Action: "pipe left out of the network; split the loop into two pipes or remove the stub"})
			continue
		}
		t.Ends[i] = [2]int{a, b}
		for len(degree) < len(t.Nodes) {
			degree = append(degree, 0)
			firstPipe = append(firstPipe, i)
		}
		degree[a]++
		degree[b]++
	}
	probs = append(probs, t.unsnapped(pipes, degree, firstPipe, tol)...)
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

// join returns the node the end at q joins, making a new one if none is
// within tol metres.
func (t *Topology) join(q orb.Point, tol float64) int {
	if k, _ := t.nearestWithin(q, tol, -1); k >= 0 {
		return k
	}
	k := len(t.Nodes)
	xy := t.proj.xy(q)
	t.Nodes = append(t.Nodes, TopoNode{ID: "J" + strconv.Itoa(k+1), At: q, X: xy[0], Y: xy[1]})
	t.index.Insert(xy, xy, k)
	return k
}

// nearestWithin returns the node nearest q (on the ellipsoid) within d
// metres, other than skip, and its distance; -1 if none.
func (t *Topology) nearestWithin(q orb.Point, d float64, skip int) (int, float64) {
	xy := t.proj.xy(q)
	r := d*searchSlack + 1e-9
	best, bestD := -1, math.Inf(1)
	t.index.Search([2]float64{xy[0] - r, xy[1] - r}, [2]float64{xy[0] + r, xy[1] + r},
		func(_, _ [2]float64, k int) bool {
			if k == skip {
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

// unsnapped reports dangling ends (nodes with one pipe end) that lie within
// 10× tol of another node, or of another pipe's centreline away from its
// ends (a T without a vertex), but were not joined.
func (t *Topology) unsnapped(pipes []Pipe, degree, firstPipe []int, tol float64) []Problem {
	reach := 10 * tol
	if reach <= 0 {
		return nil
	}
	var probs []Problem
	var segs *rtree.RTreeG[[2]int] // (pipe, segment) boxes, built on first need
	reported := map[[2]int]bool{}
	for k, deg := range degree {
		if deg != 1 {
			continue
		}
		pi := firstPipe[k]
		p := pipes[pi]
		at := t.Nodes[k].At
		if j, d := t.nearestWithin(at, reach, k); j >= 0 {
			pair := [2]int{min(j, k), max(j, k)}
			if !reported[pair] {
				reported[pair] = true
				probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
					What: fmt.Sprintf("possible unsnapped end: node %s, an end of this pipe, is %s from node %s but beyond the snap tolerance",
						t.Nodes[k].ID, formatDistance(hydraulics.Length(d)), t.Nodes[j].ID),
					Action: "not joined; if the mains connect, move the end onto the other node or raise the snap tolerance"})
			}
			continue
		}
		if segs == nil {
			segs = t.segmentIndex(pipes)
		}
		if qi, d := t.nearestInterior(pipes, segs, at, reach, pi); qi >= 0 {
			q := pipes[qi]
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: fmt.Sprintf("possible unsnapped end: node %s, an end of this pipe, is %s from the middle of pipe %s, which has no end there",
					t.Nodes[k].ID, formatDistance(hydraulics.Length(d)), pipeName(q)),
				Action: "not joined (topology comes from pipe ends only); if the mains connect, split the other pipe at this point"})
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

// nearestInterior returns the usable pipe (other than skip) whose centreline
// passes nearest q, within d metres, at a point more than d from both of its
// end nodes; -1 if none. Distances are planar in the local projection.
func (t *Topology) nearestInterior(pipes []Pipe, segs *rtree.RTreeG[[2]int], q orb.Point, d float64, skip int) (int, float64) {
	xy := t.proj.xy(q)
	r := d*searchSlack + 1e-9
	best, bestD := -1, math.Inf(1)
	segs.Search([2]float64{xy[0] - r, xy[1] - r}, [2]float64{xy[0] + r, xy[1] + r},
		func(_, _ [2]float64, ps [2]int) bool {
			i, s := ps[0], ps[1]
			if i == skip {
				return true
			}
			line := pipes[i].Line
			dk := pointSegment(xy, t.proj.xy(line[s-1]), t.proj.xy(line[s]))
			if dk > d || dk > bestD || (dk == bestD && i > best) {
				return true
			}
			for _, e := range t.Ends[i] {
				if math.Hypot(t.Nodes[e].X-xy[0], t.Nodes[e].Y-xy[1]) <= d {
					return true // near the pipe's end: a node case, handled above
				}
			}
			best, bestD = i, dk
			return true
		})
	return best, bestD
}

// pointSegment returns the planar distance from p to the segment a–b.
func pointSegment(p, a, b [2]float64) float64 {
	dx, dy := b[0]-a[0], b[1]-a[1]
	l2 := dx*dx + dy*dy
	u := 0.0
	if l2 > 0 {
		u = math.Max(0, math.Min(1, ((p[0]-a[0])*dx+(p[1]-a[1])*dy)/l2))
	}
	return math.Hypot(p[0]-a[0]-u*dx, p[1]-a[1]-u*dy)
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
