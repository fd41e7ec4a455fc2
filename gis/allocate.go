package gis

import (
	"fmt"
	"math"
	"path/filepath"
	"slices"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
	"github.com/paulmach/orb/planar"
	"github.com/tidwall/rtree"

	"headroom/hydraulics"
)

// allocOnPipe is where a demand point falls on a pipe: the link (part) it
// lies on and the fraction of that link's length from its From node.
type allocOnPipe struct {
	pipe, link int
	frac       float64
	foot       orb.Point
}

// AllocateDemandsToPipes puts each usable demand point on its nearest usable
// pipe (one in the topology) and splits it between the two end nodes of the
// part it falls on (the whole pipe, or the link between two tees when the
// pipe was split; see Topology.Links and Parts) in inverse proportion to the
// distance along the line:
//
//	q_To = q · f,  q_From = q · (1 − f)
//
// with f the fraction of the part's geodesic length from its From node to
// the foot of the perpendicular from the point (so the nearer end gets more).
// A fixed node (fixed[k] true for source nodes; fixed may be shorter than
// the node list, or nil) never takes demand: on a part with one fixed end
// the other end takes it all, and a part with both ends fixed is passed over
// for the next nearest pipe. Nearness is ranked in the topology's local
// planar metres (see Snap) over an R-tree of pipe segments; the reported
// distance (point to foot, warned beyond warnDistance > 0) is on the
// ellipsoid. Closed pipes take demand like open ones (their services are
// still on them). The result has one flow per node; its sum equals the sum
// of the usable demands, to rounding, unless no pipe has a junction end.
// Cost: one nearest-segment search per point, O(log S) for S segments.
func AllocateDemandsToPipes(t *Topology, pipes []Pipe, demands []Point, fixed []bool, warnDistance hydraulics.Length) ([]hydraulics.Flow, []Problem) {
	q := make([]hydraulics.Flow, len(t.Nodes))
	var probs []Problem
	isFixed := func(k int) bool { return k < len(fixed) && fixed[k] }
	t.ensureIndex()
	segs := t.segmentIndex(pipes)
	cum := make([][]float64, len(pipes)) // geodesic distance to each vertex, filled on first need
	for _, p := range demands {
		if !p.Usable {
			continue
		}
		on, ok := t.allocNearestPipe(pipes, segs, cum, p.At, isFixed)
		if !ok {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: "there is no pipe with a junction node to take the demand", Action: "demand left out; check the pipe layer"})
			continue
		}
		l := t.Links[on.link]
		v := hydraulics.Flow(p.Value)
		switch {
		case isFixed(l.From):
			q[l.To] += v
		case isFixed(l.To):
			q[l.From] += v
		default:
			share := v * hydraulics.Flow(on.frac)
			q[l.To] += share
			q[l.From] += v - share // the two shares add up to v exactly
		}
		if d := hydraulics.Length(segmentMetres(p.At, on.foot)); warnDistance > 0 && d > warnDistance {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: fmt.Sprintf("demand point is %s from its nearest pipe %s, beyond %s",
					formatDistance(d), pipeName(pipes[on.pipe]), formatDistance(warnDistance)),
				Action: "demand split between that pipe's end nodes anyway; check the point's position or the pipe layer there"})
		}
	}
	return q, probs
}

// allocNearestPipe returns where q falls on the nearest pipe segment (planar
// distance in the local projection, ties to the lower pipe, then segment)
// whose part there has at least one end that is not fixed.
func (t *Topology) allocNearestPipe(pipes []Pipe, segs *rtree.RTreeG[[2]int], cum [][]float64, q orb.Point, isFixed func(int) bool) (allocOnPipe, bool) {
	xy := t.proj.xy(q)
	segD2 := func(_, _ [2]float64, ps [2]int) float64 { // squared planar distance to the segment itself
		line := pipes[ps[0]].Line
		d := pointSegment(xy, t.proj.xy(line[ps[1]-1]), t.proj.xy(line[ps[1]]))
		return d * d
	}
	best := allocOnPipe{pipe: -1}
	bestD2, bestSeg := math.Inf(1), 0
	// Items come in order of their exact squared distance; ties are broken
	// by pipe, then segment, so the result does not depend on the tree.
	segs.Nearby(rtree.BoxDist[float64, [2]int](xy, xy, segD2), func(_, _ [2]float64, ps [2]int, d2 float64) bool {
		if d2 > bestD2 {
			return false
		}
		i, s := ps[0], ps[1]
		if d2 == bestD2 && (i > best.pipe || (i == best.pipe && s > bestSeg)) {
			return true
		}
		on := t.allocLocate(pipes, cum, i, s, q)
		if l := t.Links[on.link]; isFixed(l.From) && isFixed(l.To) {
			return true
		}
		best, bestD2, bestSeg = on, d2, s
		return true
	})
	return best, best.pipe >= 0
}

// allocLocate finds the part of pipe i that the foot of q on segment s lies
// on, and the fraction along that part. The parts' boundaries along the
// line are the cumulative shares of the pipe's Length, which Snap gives in
// proportion to geodesic length (Link.Length).
func (t *Topology) allocLocate(pipes []Pipe, cum [][]float64, i, s int, q orb.Point) allocOnPipe {
	p := pipes[i]
	if cum[i] == nil {
		cum[i] = topoCumulative(p.Line)
	}
	c := cum[i]
	_, foot, _ := t.topoFoot(pipes, i, s, q)
	total := c[len(c)-1]
	pos := 0.0 // fraction of the line's geodesic length from its start
	if total > 0 {
		pos = (c[s-1] + segmentMetres(p.Line[s-1], foot)) / total
	}
	parts := t.Parts[i]
	at := 0.0
	for n, j := range parts {
		share := 1.0
		if p.Length > 0 {
			share = float64(t.Links[j].Length / p.Length)
		}
		if pos <= at+share || n == len(parts)-1 {
			f := 0.0
			if share > 0 {
				f = math.Max(0, math.Min(1, (pos-at)/share))
			}
			return allocOnPipe{pipe: i, link: j, frac: f, foot: foot}
		}
		at += share
	}
	return allocOnPipe{pipe: i, link: parts[0], foot: foot} // no parts: not reached for a pipe in the topology
}

// AreaDemand is a polygon (service area, pressure zone, parcel) with a total
// average-day demand.
type AreaDemand struct {
	Index int    // 1-based position in the file
	File  string // base name of the layer file
	ID    string
	// Area is the polygon in lon/lat; a Polygon is read as a MultiPolygon
	// of one.
	Area   orb.MultiPolygon
	Value  float64 // total average-day demand, m³/s
	Usable bool
	Reason string
}

// ReadAreaDemands reads a GeoJSON layer of demand areas; see [AreaDemandsFromCollection].
func ReadAreaDemands(path string, s DemandSchema) ([]AreaDemand, []Problem, error) {
	fc, err := ReadCollection(path, "demands")
	if err != nil {
		return nil, nil, err
	}
	return AreaDemandsFromCollection(filepath.Base(path), fc, s)
}

// AreaDemandsFromCollection reads demand areas: Polygon or MultiPolygon
// features with a total average-day demand (Value in m³/s; DemandUnit as
// for points). A negative demand or a missing or non-areal geometry leaves
// the area out with a Problem; zero is kept. It returns an error if no
// area is usable.
func AreaDemandsFromCollection(file string, fc *geojson.FeatureCollection, s DemandSchema) ([]AreaDemand, []Problem, error) {
	return areaDemandsFrom(FromGeoJSON(file, fc), s)
}

// AreaDemandsFromLayer is AreaDemandsFromCollection for a layer whose
// features are already in lon/lat (areas are taken to lon/lat by their
// caller, which keeps their edges' shape), with the layer's properties.
func AreaDemandsFromLayer(c *Collection, lonLat *geojson.FeatureCollection, s DemandSchema) ([]AreaDemand, []Problem, error) {
	out := *c
	out.Features, out.CRS = lonLat, CRS84
	return areaDemandsFrom(&out, s)
}

// areaDemandsFrom reads the demand areas of a lon/lat layer (see
// AreaDemandsFromCollection).
func areaDemandsFrom(c *Collection, s DemandSchema) ([]AreaDemand, []Problem, error) {
	file, fc := c.File, c.Features
	u, err := flowUnit(s.DemandUnit, "demands.fields.demand_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	if fc == nil || len(fc.Features) == 0 {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("no features; check the config key demands.path")}
	}
	if err := checkCRS(file, fc); err != nil {
		return nil, nil, err
	}
	probs, err := checkFields(c, []fieldSpec{
		{key: "demands.fields.demand", prop: s.Demand, required: true},
		{key: "demands.fields.id", prop: s.ID, isID: true},
	})
	if err != nil {
		return nil, nil, err
	}
	unitName := unitLabel(s.DemandUnit, "gpm")
	seen := map[string]int{}
	areas := make([]AreaDemand, len(fc.Features))
	usable := 0
	for i, f := range fc.Features {
		a := AreaDemand{Index: i + 1, File: file, Usable: true}
		add := func(field, what, action string) {
			probs = append(probs, Problem{File: file, Feature: a.Index, ID: a.ID, Field: field, What: what, Action: action})
		}
		drop := func(field, what, fix string) {
			if a.Usable {
				a.Usable, a.Reason = false, what
			}
			add(field, what, "demand area left out; "+fix)
		}
		if s.ID != "" {
			a.ID = allocFeatureID(f, c.Attrs(i), s.ID, seen, a.Index, add, "demand area")
		}
		mp, what := allocAreaGeometry(f.Geometry)
		if what != "" {
			drop("geometry", what, "supply a Polygon or MultiPolygon in lon/lat (WGS84)")
		}
		a.Area = mp
		v, name, _ := lookup(c.Attrs(i), s.Demand)
		if name == "" {
			name = s.Demand
		}
		x, err := number(v)
		switch {
		case err == errMissing:
			drop(name, "demand is missing", "correct the demand")
		case err != nil:
			drop(name, "demand "+err.Error(), "correct the demand")
		case x < 0:
			drop(name, fmt.Sprintf("demand %s %s is negative", fmtNum(x), unitName), "correct the demand")
		default:
			a.Value = x * float64(u)
		}
		if a.Usable {
			usable++
		}
		areas[i] = a
	}
	if usable == 0 {
		return areas, probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d demand areas can be used; see the problems list", ErrNoUsable, len(areas))}
	}
	return areas, probs, nil
}

// allocFeatureID reads a feature's id (the mapped property, else the
// feature's own id member) and reports one already used.
func allocFeatureID(f *geojson.Feature, a Attrs, prop string, seen map[string]int, index int, add func(field, what, action string), noun string) string {
	v, name, ok := lookup(a, prop)
	if !ok {
		v, name = f.ID, "id"
	}
	id := idString(v)
	if first, dup := seen[id]; dup && id != "" {
		add(name, fmt.Sprintf("id %q is also used by feature %d", id, first),
			noun+" kept; ids must be unique for the results to be traceable")
	} else if id != "" {
		seen[id] = index
	}
	return id
}

// allocAreaGeometry returns g as a MultiPolygon, or what is wrong with it.
func allocAreaGeometry(g orb.Geometry) (orb.MultiPolygon, string) {
	var mp orb.MultiPolygon
	switch v := g.(type) {
	case nil:
		return nil, "geometry is missing"
	case orb.Polygon:
		mp = orb.MultiPolygon{v}
	case orb.MultiPolygon:
		mp = v
	default:
		return nil, fmt.Sprintf("geometry is %s, want Polygon or MultiPolygon", g.GeoJSONType())
	}
	rings := 0
	for _, poly := range mp {
		for _, ring := range poly {
			for _, q := range ring {
				if !validLonLat(q) {
					return nil, fmt.Sprintf("vertex (%s, %s) is not a lon/lat position", fmtNum(q[0]), fmtNum(q[1]))
				}
			}
			rings++
		}
		if len(poly) == 0 || len(poly[0]) < 4 {
			return nil, "a polygon has an outer ring of fewer than 4 positions"
		}
	}
	if rings == 0 {
		return nil, "the polygon is empty"
	}
	return mp, ""
}

// AllocateAreaDemands spreads each usable area's total over the junctions
// inside it in proportion to the pipe length connected to each:
//
//	q_k = Q_area · w_k / Σ w,  w_k = Σ ½·L_link over the open links at k
//
// so a node in the middle of a street grid, with four half-blocks of main,
// takes twice the share of a dead end. Junctions are the nodes that are not
// fixed (fixed[k] true for source nodes; nil or short as for
// AllocateDemands); a node is inside when planar.MultiPolygonContains holds
// in lon/lat, the plane in which RFC 7946 draws a polygon's edges. A node in
// two overlapping areas takes from both. If the junctions inside have no
// open main at all they share equally; an area with no junction inside goes
// whole to the junction nearest its centroid (planar.CentroidArea in
// lon/lat), both with a Problem. Each area's shares add up to its total to
// rounding.
func AllocateAreaDemands(t *Topology, pipes []Pipe, areas []AreaDemand, fixed []bool) ([]hydraulics.Flow, []Problem) {
	q := make([]hydraulics.Flow, len(t.Nodes))
	var probs []Problem
	isFixed := func(k int) bool { return k < len(fixed) && fixed[k] }
	t.ensureIndex()
	w := t.allocConnectedLength(pipes)
	var inside []int
	for _, a := range areas {
		if !a.Usable {
			continue
		}
		inside = t.allocNodesInside(a.Area, isFixed, inside[:0])
		v := hydraulics.Flow(a.Value)
		if len(inside) == 0 {
			c, _ := planar.CentroidArea(a.Area)
			k := -1
			t.nearest(c, func(n int) bool {
				if isFixed(n) {
					return true
				}
				k = n
				return false
			})
			if k < 0 {
				probs = append(probs, Problem{File: a.File, Feature: a.Index, ID: a.ID, Field: "geometry",
					What: "there is no junction node to take the demand", Action: "demand left out; check the pipe layer"})
				continue
			}
			q[k] += v
			probs = append(probs, Problem{File: a.File, Feature: a.Index, ID: a.ID, Field: "geometry",
				What: fmt.Sprintf("no junction node lies inside the demand area; the node nearest its centroid, %s, is %s away",
					t.Nodes[k].ID, formatDistance(hydraulics.Length(segmentMetres(c, t.Nodes[k].At)))),
				Action: "whole demand put on that node; check the area's outline or the pipe layer there"})
			continue
		}
		var sum float64
		for _, k := range inside {
			sum += w[k]
		}
		if sum <= 0 {
			for _, k := range inside {
				q[k] += v / hydraulics.Flow(len(inside))
			}
			probs = append(probs, Problem{File: a.File, Feature: a.Index, ID: a.ID, Field: "geometry",
				What:   fmt.Sprintf("none of the %d junction nodes inside the demand area has an open main", len(inside)),
				Action: "demand shared equally among them; check the pipes' status there"})
			continue
		}
		for _, k := range inside {
			q[k] += v * hydraulics.Flow(w[k]/sum)
		}
	}
	return q, probs
}

// allocConnectedLength returns, per node, half the length in metres of
// each open link that ends there.
func (t *Topology) allocConnectedLength(pipes []Pipe) []float64 {
	w := make([]float64, len(t.Nodes))
	for _, l := range t.Links {
		if l.Pipe < len(pipes) && pipes[l.Pipe].Closed {
			continue
		}
		h := 0.5 * l.Length.Metres()
		w[l.From] += h
		w[l.To] += h
	}
	return w
}

// allocNodesInside appends to out the junction nodes inside mp, in
// ascending order. Candidates come from the node R-tree over the area's
// bounding box (the local projection is affine in lon/lat, so the box
// maps to a box).
func (t *Topology) allocNodesInside(mp orb.MultiPolygon, isFixed func(int) bool, out []int) []int {
	b := mp.Bound()
	lo, hi := t.proj.xy(b.Min), t.proj.xy(b.Max)
	t.index.Search(lo, hi, func(_, _ [2]float64, k int) bool {
		if !isFixed(k) && planar.MultiPolygonContains(mp, t.Nodes[k].At) {
			out = append(out, k)
		}
		return true
	})
	slices.Sort(out)
	return out
}
