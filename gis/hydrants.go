package gis

import (
	"fmt"
	"path/filepath"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// HydrantSchema maps hydrant properties. All fields are optional: ID names
// the hydrant; NeededFlow is its needed (required) fire flow, in
// NeededFlowUnit: "gpm" (default), "lps", "mgd" or "cfs"; Zone is the
// pressure zone or district it belongs to.
type HydrantSchema struct {
	ID, NeededFlow string
	NeededFlowUnit string
	Zone           string
}

// Hydrant is one hydrant feature, in file order.
type Hydrant struct {
	Index int    // 1-based position in the file
	File  string // base name of the layer file (for Problems raised later)
	ID    string
	At    orb.Point // lon/lat
	// Node is the nearest node that is not fixed (index into
	// Topology.Nodes), set by AttachHydrants; -1 until then and when the
	// hydrant could not be attached.
	Node     int
	Distance hydraulics.Length // from At to the node, on the ellipsoid
	Needed   float64           // needed fire flow, m³/s; 0 = not given
	Zone     string
	Usable   bool
	Reason   string
}

// MaxNeededFireFlow is the largest needed fire flow taken from a hydrant
// layer: 12,000 gpm, the ceiling of the ISO needed-fire-flow method
// (DOMAIN.md §4.2). A larger value is a unit mix-up or a typing error.
const MaxNeededFireFlow = 12000 * hydraulics.USGallonPerMinute

// ReadHydrants reads a GeoJSON hydrant layer; see [HydrantsFromCollection].
func ReadHydrants(path string, s HydrantSchema) ([]Hydrant, []Problem, error) {
	fc, err := ReadCollection(path, "hydrants")
	if err != nil {
		return nil, nil, err
	}
	return HydrantsFromCollection(filepath.Base(path), fc, s)
}

// HydrantsFromCollection reads hydrants: Point features, with an optional
// needed fire flow (Needed in m³/s). A hydrant without a usable point is
// left out (Usable false) with a Problem. A needed flow that is not a
// number, negative or above MaxNeededFireFlow is reported and ignored
// (Needed 0, so the needed flow comes from elsewhere); zero or blank means
// not given. It returns an error if no hydrant is usable.
func HydrantsFromCollection(file string, fc *geojson.FeatureCollection, s HydrantSchema) ([]Hydrant, []Problem, error) {
	return hydrantsFrom(FromGeoJSON(file, fc), s)
}

// HydrantsFromLayer is HydrantsFromCollection for a layer in any
// coordinate system.
func HydrantsFromLayer(c *Collection, s HydrantSchema) ([]Hydrant, []Problem, error) {
	return hydrantsFrom(c.lonLatLayer(), s)
}

// hydrantsFrom reads the hydrants of a lon/lat layer (see
// HydrantsFromCollection).
func hydrantsFrom(c *Collection, s HydrantSchema) ([]Hydrant, []Problem, error) {
	file, fc := c.File, c.Features
	u, err := flowUnit(s.NeededFlowUnit, "hydrants.fields.needed_flow_unit")
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: err}
	}
	if fc == nil || len(fc.Features) == 0 {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("no features; check the config key hydrants.path")}
	}
	if err := checkCRS(file, fc); err != nil {
		return nil, nil, err
	}
	probs, err := checkFields(c, []fieldSpec{
		{key: "hydrants.fields.id", prop: s.ID, isID: true},
		{key: "hydrants.fields.needed_flow", prop: s.NeededFlow},
		{key: "hydrants.fields.zone", prop: s.Zone},
	})
	if err != nil {
		return nil, nil, err
	}
	unitName := unitLabel(s.NeededFlowUnit, "gpm")
	seen := map[string]int{}
	hs := make([]Hydrant, len(fc.Features))
	usable := 0
	for i, f := range fc.Features {
		h := Hydrant{Index: i + 1, File: file, Node: -1, Usable: true}
		a := c.Attrs(i)
		add := func(field, what, action string) {
			probs = append(probs, Problem{File: file, Feature: h.Index, ID: h.ID, Field: field, What: what, Action: action})
		}
		if s.ID != "" {
			h.ID = allocFeatureID(f, a, s.ID, seen, h.Index, add, "hydrant")
		}
		if what := hydPoint(f.Geometry, &h.At); what != "" {
			h.Usable, h.Reason = false, what
			add("geometry", what, "hydrant left out; supply a Point in lon/lat (WGS84)")
		}
		if v, _, ok := lookup(a, s.Zone); ok {
			h.Zone = idString(v)
		}
		h.Needed = hydNeeded(a, s.NeededFlow, u, unitName, add)
		if h.Usable {
			usable++
		}
		hs[i] = h
	}
	if usable == 0 {
		return hs, probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d hydrants can be used; see the problems list", ErrNoUsable, len(hs))}
	}
	return hs, probs, nil
}

// hydPoint sets *at from a Point geometry, or says what is wrong.
func hydPoint(g orb.Geometry, at *orb.Point) string {
	switch v := g.(type) {
	case nil:
		return "geometry is missing"
	case orb.Point:
		*at = v
		if !validLonLat(v) {
			return fmt.Sprintf("point (%s, %s) is not a lon/lat position", fmtNum(v[0]), fmtNum(v[1]))
		}
		return ""
	default:
		return fmt.Sprintf("geometry is %s, want Point", g.GeoJSONType())
	}
}

// hydNeeded reads the needed fire flow in m³/s, 0 when not given or not
// usable (reported through add).
func hydNeeded(props Attrs, prop string, u hydraulics.Flow, unitName string, add func(field, what, action string)) float64 {
	v, name, ok := lookup(props, prop)
	if !ok {
		return 0
	}
	const fix = "needed fire flow ignored (taken from the land-use table or fire_flow.needed_gpm); correct the value or leave it empty"
	x, err := number(v)
	q := hydraulics.Flow(x) * u
	switch {
	case err == errMissing:
		return 0
	case err != nil:
		add(name, "needed fire flow "+err.Error(), fix)
	case x < 0:
		add(name, fmt.Sprintf("needed fire flow %s %s is negative", fmtNum(x), unitName), fix)
	case q > MaxNeededFireFlow:
		add(name, fmt.Sprintf("needed fire flow %s %s (%.0f gpm) is above %.0f gpm, the ISO maximum",
			fmtNum(x), unitName, q.GPM(), MaxNeededFireFlow.GPM()), fix+"; check the config key hydrants.fields.needed_flow_unit")
	default:
		return float64(q)
	}
	return 0
}

// AttachHydrants joins each usable hydrant to its nearest node that is not
// fixed (fixed[k] true for source nodes; nil or short as for
// AllocateDemands), setting Node and Distance. Nearness is ranked in the
// topology's local planar metres; Distance is on the ellipsoid. A hydrant
// farther than maxDistance (> 0; ≤ 0 means no limit) from that node, or
// with no junction node at all, is marked unusable with a Problem. Several
// hydrants may share a node.
func AttachHydrants(t *Topology, hs []Hydrant, fixed []bool, maxDistance hydraulics.Length) []Problem {
	var probs []Problem
	isFixed := func(k int) bool { return k < len(fixed) && fixed[k] }
	for i := range hs {
		h := &hs[i]
		h.Node, h.Distance = -1, 0
		if !h.Usable {
			continue
		}
		k := -1
		if len(t.Nodes) > 0 {
			t.nearest(h.At, func(n int) bool {
				if isFixed(n) {
					return true
				}
				k = n
				return false
			})
		}
		if k < 0 {
			h.Usable, h.Reason = false, "there is no junction node to attach the hydrant to"
			probs = append(probs, Problem{File: h.File, Feature: h.Index, ID: h.ID, Field: "geometry",
				What: h.Reason, Action: "hydrant left out; check the pipe layer"})
			continue
		}
		d := hydraulics.Length(segmentMetres(h.At, t.Nodes[k].At))
		if maxDistance > 0 && d > maxDistance {
			h.Usable = false
			h.Reason = fmt.Sprintf("hydrant is %s from the nearest node %s, beyond the limit of %s",
				formatDistance(d), t.Nodes[k].ID, formatDistance(maxDistance))
			probs = append(probs, Problem{File: h.File, Feature: h.Index, ID: h.ID, Field: "geometry", What: h.Reason,
				Action: "hydrant left out of the fire-flow run; move it onto the main that feeds it or raise the distance limit"})
			continue
		}
		h.Node, h.Distance = k, d
	}
	return probs
}
