package gis

import (
	"fmt"
	"math"
	"path/filepath"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
	"github.com/tidwall/rtree"

	"headroom/hydraulics"
)

// FacilitySchema maps the properties of a critical-facility layer
// (hospitals, schools, dialysis clinics, …). Both fields are optional: ID
// names the facility, Kind says what it is (free text).
type FacilitySchema struct {
	ID, Kind string
}

// Facility is one critical facility, in file order.
type Facility struct {
	Index int    // 1-based position in the file
	File  string // base name of the layer file (for Problems raised later)
	ID    string
	Kind  string
	At    orb.Point // lon/lat
	// Usable is false for a feature without a usable point; Reason says why.
	Usable bool
	Reason string
}

// ReadFacilities reads a GeoJSON critical-facility layer; see
// [FacilitiesFromCollection].
func ReadFacilities(path string, s FacilitySchema) ([]Facility, []Problem, error) {
	fc, err := ReadCollection(path, "facilities")
	if err != nil {
		return nil, nil, err
	}
	return FacilitiesFromCollection(filepath.Base(path), fc, s)
}

// FacilitiesFromCollection reads critical facilities: Point features. A
// facility without a usable point is left out (Usable false) with a
// Problem. It returns an error if no facility is usable.
func FacilitiesFromCollection(file string, fc *geojson.FeatureCollection, s FacilitySchema) ([]Facility, []Problem, error) {
	return facilitiesFrom(FromGeoJSON(file, fc), s)
}

// FacilitiesFromLayer is FacilitiesFromCollection for a layer in any
// coordinate system.
func FacilitiesFromLayer(c *Collection, s FacilitySchema) ([]Facility, []Problem, error) {
	return facilitiesFrom(c.lonLatLayer(), s)
}

// facilitiesFrom reads the facilities of a lon/lat layer (see
// FacilitiesFromCollection).
func facilitiesFrom(layer *Collection, s FacilitySchema) ([]Facility, []Problem, error) {
	file, fc := layer.File, layer.Features
	if fc == nil || len(fc.Features) == 0 {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("no features; check the config key facilities.path")}
	}
	if err := checkCRS(file, fc); err != nil {
		return nil, nil, err
	}
	probs, err := checkFields(layer, []fieldSpec{
		{key: "facilities.fields.id", prop: s.ID, isID: true},
		{key: "facilities.fields.kind", prop: s.Kind},
	})
	if err != nil {
		return nil, nil, err
	}
	seen := map[string]int{}
	fs := make([]Facility, len(fc.Features))
	usable := 0
	for i, f := range fc.Features {
		c := Facility{Index: i + 1, File: file, Usable: true}
		add := func(field, what, action string) {
			probs = append(probs, Problem{File: file, Feature: c.Index, ID: c.ID, Field: field, What: what, Action: action})
		}
		if s.ID != "" {
			c.ID = allocFeatureID(f, layer.Attrs(i), s.ID, seen, c.Index, add, "facility")
		}
		if v, _, ok := lookup(layer.Attrs(i), s.Kind); ok {
			c.Kind = idString(v)
		}
		if what := hydPoint(f.Geometry, &c.At); what != "" {
			c.Usable, c.Reason, c.At = false, what, orb.Point{}
			add("geometry", what, "facility left out; supply a Point in lon/lat (WGS84), for a building or campus outline its centroid")
		} else {
			usable++
		}
		fs[i] = c
	}
	if usable == 0 {
		return fs, probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d facilities can be used; see the problems list", ErrNoUsable, len(fs))}
	}
	return fs, probs, nil
}

// FacilityNear is the critical facility nearest a pipe.
type FacilityNear struct {
	Facility int               // index into the facilities given to NearestFacilities; -1 when none
	Distance hydraulics.Length // from the pipe's line to the facility (0 when none)
}

// NearestFacilities returns, per pipe in pipe order, the nearest usable
// facility within `within` of the pipe's line (within ≤ 0: no limit), with
// the distance from the facility to the nearest point of the line (see
// [pointLineMetres]). Ties go to the lower facility index. Unusable pipes,
// and pipes with no facility in reach, get Facility −1. Facilities are
// indexed by position in an R-tree; each pipe searches its line's lon/lat
// box widened by the reach (see [reachBox]), so the cost is O(log F) per
// pipe for F facilities plus the facilities in reach. Lines that cross the
// antimeridian (±180°) are not handled.
func NearestFacilities(pipes []Pipe, facilities []Facility, within hydraulics.Length) []FacilityNear {
	var tree rtree.RTreeG[int]
	for k, f := range facilities {
		if f.Usable {
			tree.Insert(f.At, f.At, k)
		}
	}
	limit := math.Max(within.Metres(), 0)
	out := make([]FacilityNear, len(pipes))
	forChunks(len(pipes), func(lo, hi int) { // the tree is only read from here on
		for i := lo; i < hi; i++ {
			out[i] = nearestFacility(&tree, facilities, pipes[i], limit)
		}
	})
	return out
}

// nearestFacility is NearestFacilities for one pipe.
func nearestFacility(tree *rtree.RTreeG[int], facilities []Facility, p Pipe, limit float64) FacilityNear {
	if !p.Usable || len(p.Line) == 0 {
		return FacilityNear{Facility: -1}
	}
	bound := p.Line.Bound()
	k, d := nearestGrowing(limit, tree.Len() > 0, func(r float64) (int, float64) {
		lo, hi := reachBox(bound, r)
		best, bestD := -1, math.Inf(1)
		tree.Search(lo, hi, func(_, _ [2]float64, k int) bool {
			d := pointLineMetres(facilities[k].At, p.Line)
			if d <= r && (d < bestD || (d == bestD && k < best)) {
				best, bestD = k, d
			}
			return true
		})
		return best, bestD
	})
	if k < 0 {
		return FacilityNear{Facility: -1}
	}
	return FacilityNear{Facility: k, Distance: hydraulics.Length(d)}
}
