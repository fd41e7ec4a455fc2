package gis

import (
	"iter"
	"slices"
	"strings"

	"github.com/paulmach/orb/geojson"
)

// Attrs is one feature's properties: names and values side by side, each
// name once. The GeoJSON reader fills them without a map per feature: the
// names are shared by the features that list the same ones in the same
// order (the usual case, one slice for a whole layer) and the values are
// cut from large blocks. At a million features a map each cost about a
// gigabyte of allocation and a third of the reading time.
type Attrs struct {
	names []string
	vals  []any
}

// attrsOf returns props as Attrs, names in sorted order (a map has none of
// its own).
func attrsOf(props geojson.Properties) Attrs {
	if len(props) == 0 {
		return Attrs{}
	}
	names := make([]string, 0, len(props))
	for k := range props {
		names = append(names, k)
	}
	slices.Sort(names)
	vals := make([]any, len(names))
	for i, k := range names {
		vals[i] = props[k]
	}
	return Attrs{names: names, vals: vals}
}

// attrsOfFeatures returns the properties of features as Attrs, leaving
// their maps as they are: the names in the order given (a layer's declared
// fields), shared by the features that have exactly those, and sorted
// (attrsOf) for the others.
func attrsOfFeatures(features []*geojson.Feature, order []string) []Attrs {
	out := make([]Attrs, len(features))
	var slab []any
	n := len(order)
	for i, f := range features {
		if n > 0 && len(f.Properties) == n {
			if len(slab) < n {
				slab = make([]any, max(attrValueSlab, n))
			}
			vals, all := slab[:n:n], true
			for k, name := range order {
				if vals[k], all = f.Properties[name]; !all {
					break
				}
			}
			if all {
				out[i], slab = Attrs{names: order, vals: vals}, slab[n:]
				continue
			}
		}
		out[i] = attrsOf(f.Properties)
	}
	return out
}

// giveMaps sets each feature's Properties to a map of its attrs, for the
// callers that want maps (ReadCollection, decodeGeoJSON); attrs nil means
// the features have theirs already.
func giveMaps(features []*geojson.Feature, attrs []Attrs) {
	if attrs == nil {
		return
	}
	for i, f := range features {
		f.Properties = attrs[i].Map()
	}
}

// Len is the number of properties.
func (a Attrs) Len() int { return len(a.names) }

// Get returns the value of the property named exactly name.
func (a Attrs) Get(name string) (any, bool) {
	for i, k := range a.names {
		if k == name {
			return a.vals[i], true
		}
	}
	return nil, false
}

// All yields each property's name and value in the order they were read.
func (a Attrs) All() iter.Seq2[string, any] {
	return func(yield func(string, any) bool) {
		for i, k := range a.names {
			if !yield(k, a.vals[i]) {
				return
			}
		}
	}
}

// Map returns the properties as a map.
func (a Attrs) Map() geojson.Properties {
	m := make(geojson.Properties, len(a.names))
	for i, k := range a.names {
		m[k] = a.vals[i]
	}
	return m
}

// Lookup finds property name: exactly, or else the one property whose name
// matches it case-insensitively. It returns the value and the name found.
func (a Attrs) Lookup(name string) (any, string, bool) {
	if name == "" {
		return nil, "", false
	}
	if v, ok := a.Get(name); ok {
		return v, name, true
	}
	at, n := -1, 0
	for i, k := range a.names {
		if strings.EqualFold(k, name) {
			at, n = i, n+1
		}
	}
	if n == 1 {
		return a.vals[at], a.names[at], true
	}
	return nil, "", false
}

// attrsBuilder makes the Attrs of a stream of features: it keeps the last
// feature's names to share with the next when they are the same, and cuts
// values from blocks of attrValueSlab.
type attrsBuilder struct {
	names []string // the names of the feature being read
	vals  []any    // its values
	last  []string // the names of the last feature finished: shared when the next has the same
	slab  []any
}

// attrValueSlab is how many values a block holds.
const attrValueSlab = 8192

// reset starts a feature.
func (b *attrsBuilder) reset() { b.names, b.vals = b.names[:0], b.vals[:0] }

// add appends a property; it reports false when name is already in the
// feature (the caller then reads the feature another way, where the last
// value of a repeated name wins).
func (b *attrsBuilder) add(name string, v any) bool {
	if slices.Contains(b.names, name) {
		return false
	}
	b.names, b.vals = append(b.names, name), append(b.vals, v)
	return true
}

// done returns the feature's Attrs.
func (b *attrsBuilder) done() Attrs {
	n := len(b.names)
	if n == 0 {
		return Attrs{}
	}
	if !slices.Equal(b.last, b.names) {
		b.last = slices.Clone(b.names)
	}
	if len(b.slab) < n {
		b.slab = make([]any, max(attrValueSlab, n))
	}
	vals := b.slab[:n:n]
	b.slab = b.slab[n:]
	copy(vals, b.vals)
	return Attrs{names: b.last, vals: vals}
}
