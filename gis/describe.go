package gis

import (
	"cmp"
	"encoding/json"
	"fmt"
	"slices"
	"strconv"

	"github.com/paulmach/orb"

	"headroom/hydraulics"
)

// LayerSummary is what `headroom inspect` shows of a layer.
type LayerSummary struct {
	File, Format string
	CRS          *CRS
	Note         string // how the CRS was settled, when the layer did not declare it
	Features     int
	Geometry     []GeometryCount // by type, most common first
	Extent       orb.Bound       // in the layer's own coordinates
	HasExtent    bool
	HasZ         bool
	Fields       []FieldSummary
}

// GeometryCount is how many features have one geometry type ("null" for none).
type GeometryCount struct {
	Type  string
	Count int
}

// FieldSummary describes one attribute over every feature.
type FieldSummary struct {
	Name     string
	Type     string   // declared type, or the kinds of value found (GeoJSON)
	Nulls    int      // features where it is null or absent
	Distinct int      // distinct non-null values, counted up to maxDistinct
	Samples  []string // up to three distinct values, in order of first appearance
}

const (
	maxSamples  = 3
	maxDistinct = 10000
)

// Describe summarises a layer: geometry types, extent and, per field, its
// type, nulls and sample values. Fields are in declared order, or sorted by
// name for GeoJSON, whose properties have no order.
func Describe(c *Collection) *LayerSummary {
	s := &LayerSummary{File: c.File, Format: c.Format, CRS: c.CRS, Note: c.Note, Features: len(c.Features.Features), HasZ: c.Z != nil}
	geom := map[string]int{}
	for _, f := range c.Features.Features {
		t := "null"
		if f.Geometry != nil {
			t = f.Geometry.GeoJSONType()
			b := f.Geometry.Bound()
			if s.HasExtent {
				s.Extent = s.Extent.Union(b)
			} else {
				s.Extent, s.HasExtent = b, true
			}
		}
		geom[t]++
	}
	for _, t := range sortedKeys(geom) {
		s.Geometry = append(s.Geometry, GeometryCount{t, geom[t]})
	}
	slices.SortStableFunc(s.Geometry, func(a, b GeometryCount) int { return cmp.Compare(b.Count, a.Count) })
	for _, fi := range fieldOrder(c) {
		s.Fields = append(s.Fields, describeField(c, fi))
	}
	return s
}

// fieldOrder lists the layer's fields with their declared types, or, for
// GeoJSON, every property name found, sorted, with no declared type.
func fieldOrder(c *Collection) []FieldInfo {
	if c.Fields != nil {
		return c.Fields
	}
	seen := map[string]bool{}
	for i := range c.Features.Features {
		for k := range c.Attrs(i).All() {
			seen[k] = true
		}
	}
	var out []FieldInfo
	for _, k := range sortedKeys(seen) {
		out = append(out, FieldInfo{Name: k})
	}
	return out
}

func describeField(c *Collection, fi FieldInfo) FieldSummary {
	fs := FieldSummary{Name: fi.Name, Type: fi.Type}
	kinds := map[string]bool{}
	distinct := map[string]bool{}
	for i := range c.Features.Features {
		v, ok := c.Attrs(i).Get(fi.Name)
		if !ok || v == nil {
			fs.Nulls++
			continue
		}
		kinds[valueKind(v)] = true
		text := idString(v)
		if !distinct[text] && len(distinct) < maxDistinct {
			distinct[text] = true
			if len(fs.Samples) < maxSamples {
				fs.Samples = append(fs.Samples, text)
			}
		}
	}
	fs.Distinct = len(distinct)
	if fs.Type == "" {
		ks := sortedKeys(kinds)
		switch len(ks) {
		case 0:
			fs.Type = "all null"
		case 1:
			fs.Type = ks[0]
		default:
			fs.Type = fmt.Sprintf("mixed %v", ks)
		}
	}
	return fs
}

// valueKind names the kind of a property value: integer, real, text
// (numeric text when every character makes a number), boolean.
func valueKind(v any) string {
	switch x := v.(type) {
	case json.Number:
		if _, err := strconv.ParseInt(string(x), 10, 64); err == nil {
			return "integer"
		}
		return "real"
	case float64:
		if x == float64(int64(x)) {
			return "integer"
		}
		return "real"
	case int, int32, int64:
		return "integer"
	case bool:
		return "boolean"
	case string:
		if _, err := strconv.ParseFloat(x, 64); err == nil {
			return "numeric text"
		}
		return "text"
	}
	return fmt.Sprintf("%T", v)
}

// LineDiagnostics builds the topology of a line layer from its geometry
// alone, as a run would with the given snap tolerance, and returns it with
// the problems found (bad geometry, near-misses, zero-length and duplicate
// pipes). Attributes are not read.
func LineDiagnostics(c *Collection, tolerance hydraulics.Length) ([]Pipe, *Topology, []Problem) {
	r := &pipeReader{file: c.File, seen: map[string]int{}}
	ll := c.LonLat()
	pipes := make([]Pipe, len(ll.Features))
	for i, f := range ll.Features {
		p := Pipe{Index: i + 1, File: c.File, ID: idString(f.ID), Geometry: f.Geometry, Usable: true}
		r.geometry(&p)
		if p.Usable {
			p.Length, p.LengthSource = GeodesicLength(p.Line), LengthGeodesic
		} else {
			p.Line = nil
		}
		pipes[i] = p
	}
	topo, probs := Snap(pipes, tolerance)
	return pipes, topo, append(r.probs, probs...)
}
