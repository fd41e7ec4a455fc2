package gis

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/paulmach/orb"
	"github.com/tidwall/rtree"

	"headroom/hydraulics"
)

// Supply is a source attached to a node.
type Supply struct {
	Node     int             // index into Topology.Nodes
	Source   int             // index into the sources given to AttachSources
	Grade    hydraulics.Head // hydraulic grade held at the node
	Distance hydraulics.Length
}

// nearest calls visit with nodes in order of planar distance from q, until
// visit returns false. Nodes at equal planar distance come in ascending index.
func (t *Topology) nearest(q orb.Point, visit func(k int) bool) {
	t.ensureIndex()
	xy := t.proj.xy(q)
	var tied []int
	tiedD := math.NaN()
	stop := false
	flush := func() {
		slices.Sort(tied)
		for _, k := range tied {
			if !visit(k) {
				stop = true
				return
			}
		}
		tied = tied[:0]
	}
	t.index.Nearby(rtree.BoxDist[float64, int](xy, xy, nil), func(_, _ [2]float64, k int, d float64) bool {
		if d != tiedD {
			flush()
			if stop {
				return false
			}
			tiedD = d
		}
		tied = append(tied, k)
		return true
	})
	if !stop {
		flush()
	}
}

// AttachSources joins each usable source to its nearest node. A source
// farther than maxDistance (on the ellipsoid) from every node is reported
// and left out; maxDistance ≤ 0 means no limit. When two sources land on one
// node the first (in file order) is kept and the other reported. Supplies
// come in source order.
func AttachSources(t *Topology, sources []Point, maxDistance hydraulics.Length) ([]Supply, []Problem) {
	var sup []Supply
	var probs []Problem
	if len(t.Nodes) == 0 {
		for _, s := range sources {
			if s.Usable {
				probs = append(probs, Problem{File: s.File, Feature: s.Index, ID: s.ID, Field: "geometry",
					What: "there is no node to attach the source to", Action: "source not connected; check the pipe layer"})
			}
		}
		return nil, probs
	}
	byNode := map[int]int{} // node → index into sup
	for i, s := range sources {
		if !s.Usable {
			continue
		}
		k := -1
		t.nearest(s.At, func(n int) bool { k = n; return false })
		d := hydraulics.Length(segmentMetres(s.At, t.Nodes[k].At))
		if maxDistance > 0 && d > maxDistance {
			probs = append(probs, Problem{File: s.File, Feature: s.Index, ID: s.ID, Field: "geometry",
				What: fmt.Sprintf("source is %s from the nearest node %s, beyond the limit of %s",
					formatDistance(d), t.Nodes[k].ID, formatDistance(maxDistance)),
				Action: "source not connected; move it onto the main it feeds or raise the distance limit"})
			continue
		}
		if j, dup := byNode[k]; dup {
			first := sources[sup[j].Source]
			probs = append(probs, Problem{File: s.File, Feature: s.Index, ID: s.ID, Field: "geometry",
				What: fmt.Sprintf("source joins node %s, which source feature %d (id %q) already feeds",
					t.Nodes[k].ID, first.Index, first.ID),
				Action: "source ignored, the first one kept; give each source its own connection node"})
			continue
		}
		byNode[k] = len(sup)
		sup = append(sup, Supply{Node: k, Source: i, Grade: hydraulics.Head(s.Value), Distance: d})
	}
	return sup, probs
}

// AllocateDemands adds each usable demand point to its nearest node that is
// not fixed (fixed[k] true for source nodes; fixed may be shorter than the
// node list, or nil). The result has one flow per node; its sum equals the
// sum of the usable demands unless every node is fixed. A demand farther
// than warnDistance from its node is still allocated and reported;
// warnDistance ≤ 0 turns the report off. Nearness is ranked in local planar
// metres (see Snap), ties to the lower node index, over a k-d tree of the
// junctions (kdTree); reported distances are on the ellipsoid.
func AllocateDemands(t *Topology, demands []Point, fixed []bool, warnDistance hydraulics.Length) ([]hydraulics.Flow, []Problem) {
	q := make([]hydraulics.Flow, len(t.Nodes))
	var probs []Problem
	isFixed := func(k int) bool { return k < len(fixed) && fixed[k] }
	// The nearest junction of every demand, in parallel; the sums and the
	// problems then follow in demand order, as they would one by one.
	t.ensureIndex()
	junctions := t.junctionTree(isFixed)
	node := make([]int, len(demands))
	forChunks(len(demands), func(lo, hi int) {
		hits := make([]kdHit, 0, 1)
		for i := lo; i < hi; i++ {
			node[i] = -1
			if !demands[i].Usable {
				continue
			}
			if hits = junctions.nearest(t.proj.xy(demands[i].At), 1, hits); len(hits) > 0 {
				node[i] = hits[0].id
			}
		}
	})
	for i, p := range demands {
		if !p.Usable {
			continue
		}
		k := node[i]
		if k < 0 {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: "there is no junction node to take the demand", Action: "demand left out; check the pipe layer"})
			continue
		}
		q[k] += hydraulics.Flow(p.Value)
		if d := hydraulics.Length(segmentMetres(p.At, t.Nodes[k].At)); warnDistance > 0 && d > warnDistance {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: fmt.Sprintf("demand point is %s from its nearest node %s, beyond %s",
					formatDistance(d), t.Nodes[k].ID, formatDistance(warnDistance)),
				Action: "demand allocated to that node anyway; check the point's position or the pipe layer there"})
		}
	}
	return q, probs
}

// Defaults of InterpolateElevations.
const (
	DefaultIDWNeighbours = 4
	DefaultIDWPower      = 2.0
)

// exactHit is the distance under which a point counts as lying on the node.
const exactHit = 1e-3 // metres

// InterpolateElevations gives each node the inverse-distance-weighted mean of
// the k nearest usable points (Shepard, 1968):
//
//	z = Σ wᵢ·zᵢ / Σ wᵢ,  wᵢ = 1 / dᵢ^power
//
// with dᵢ on the ellipsoid in metres. A point within 1 mm of the node gives
// its value directly (the mean of such points if there are several).
// The k nearest are ranked by planar distance in the topology's local
// projection (see Snap), ties to the lower point index, over a k-d tree
// (kdTree), and summed nearest first. k ≤ 0 means DefaultIDWNeighbours, power ≤ 0 means DefaultIDWPower. It
// returns an error if no point is usable.
func InterpolateElevations(t *Topology, points []Point, k int, power float64) ([]hydraulics.Length, error) {
	if k <= 0 {
		k = DefaultIDWNeighbours
	}
	if power <= 0 || math.IsNaN(power) {
		power = DefaultIDWPower
	}
	t.ensureIndex()
	pts := make([]kdPoint, 0, len(points))
	for i, p := range points {
		if p.Usable {
			pts = append(pts, kdPoint{xy: t.proj.xy(p.At), id: i})
		}
	}
	if len(pts) == 0 {
		return nil, errors.New("gis: no usable elevation point to interpolate node elevations from")
	}
	tr := newKDTree(pts)
	z := make([]hydraulics.Length, len(t.Nodes))
	forChunks(len(t.Nodes), func(lo, hi int) {
		hits := make([]kdHit, 0, k)
		for j := lo; j < hi; j++ {
			at := t.Nodes[j].At
			hits = tr.nearest(t.proj.xy(at), k, hits)
			z[j] = idwAt(at, hits, points, power)
		}
	})
	return z, nil
}

// idwAt is the inverse-distance-weighted mean at node position at of the
// points hits names, taken in the order given (InterpolateElevations).
func idwAt(at orb.Point, hits []kdHit, points []Point, power float64) hydraulics.Length {
	var sw, swz, hitSum float64
	exact := 0
	for _, h := range hits {
		p := points[h.id]
		d := segmentMetres(at, p.At)
		if d <= exactHit {
			hitSum += p.Value
			exact++
		} else {
			w := math.Pow(d, -power)
			sw += w
			swz += w * p.Value
		}
	}
	if exact > 0 {
		return hydraulics.Length(hitSum / float64(exact))
	}
	return hydraulics.Length(swz / sw)
}

// junctionTree returns a kdTree over the nodes in the topology's index that
// are not fixed, at the positions indexed, with node indices as ids: the
// nodes, and the coordinates, that nearest searches.
func (t *Topology) junctionTree(isFixed func(int) bool) *kdTree {
	pts := make([]kdPoint, 0, t.index.Len())
	t.index.Scan(func(xy, _ [2]float64, k int) bool {
		if !isFixed(k) {
			pts = append(pts, kdPoint{xy: xy, id: k})
		}
		return true
	})
	return newKDTree(pts)
}
