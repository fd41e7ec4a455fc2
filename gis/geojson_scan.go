package gis

import (
	"bytes"
	"encoding/json"
	"fmt"
	"runtime"
	"strconv"
	"sync"
	"unicode/utf8"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

// A hand-written GeoJSON reader (RFC 7946 over RFC 8259 JSON) for the layers
// headroom reads, about ten times faster than encoding/json into orb types.
//
// It gives exactly what decodeCollectionStd gives, value for value: ids and
// property values as encoding/json's UseNumber decoding makes them (string,
// json.Number, bool, nil; nested objects and arrays decoded by encoding/json
// itself), coordinates as encoding/json decodes them into orb's types (a
// third and later ordinate is dropped, a missing second one is 0). It
// handles the common shapes itself and hands everything else back:
//
//   - a feature that is well-formed JSON but unusual (a GeometryCollection,
//     a key spelt in another case, a repeated key, a null coordinate, any
//     feature that is an error) is decoded by encoding/json alone
//     (decodeFeatureStd), so its value or its error message is the
//     reference's;
//   - anything else it does not follow (malformed JSON, a bare Feature,
//     odd top-level members) makes the whole input go to
//     decodeCollectionStd.
//
// The equivalence is checked by TestGeoJSONScanMatchesStd and FuzzGeoJSONScan.

// scanMaxDepth bounds the nesting the scanner follows itself; deeper input
// goes to encoding/json, which has its own limit.
const scanMaxDepth = 256

// Slab sizes: features and coordinates are allocated in blocks of these many.
const (
	featureSlab = 1024
	pointSlab   = 8192
)

// scanner holds the input and the position of the next byte to read.
type scanner struct {
	data []byte
	pos  int
	file string

	// The features array is read in up to maxRuns parallel runs of at least
	// runBytes each (see splitRuns).
	maxRuns, runBytes int

	feats     []geojson.Feature // slab the next features are taken from
	pts       []orb.Point       // slab of coordinates; the current line starts at lineStart
	lineStart int
	props     attrsBuilder // the properties of the feature being read

	attrs []Attrs // per feature of fc, in order

	keys internTable[string] // property names
	strs internTable[any]    // boxed short string values
	nums internTable[any]    // boxed json.Number values
}

// decodeGeoJSON decodes a GeoJSON FeatureCollection or bare Feature from
// data with the scanner, falling back to decodeCollectionStd for input the
// scanner does not handle. The features' Properties are maps, as
// decodeCollectionStd gives them.
func decodeGeoJSON(data []byte, file string) (*geojson.FeatureCollection, error) {
	return decodeGeoJSONRuns(data, file, min(runtime.GOMAXPROCS(0), maxRuns), minRunBytes)
}

// decodeGeoJSONRuns is decodeGeoJSON reading the features in up to n runs
// of at least runBytes.
func decodeGeoJSONRuns(data []byte, file string, n, runBytes int) (*geojson.FeatureCollection, error) {
	fc, attrs, err := decodeGeoJSONAttrs(data, file, n, runBytes)
	if fc != nil {
		giveMaps(fc.Features, attrs)
	}
	return fc, err
}

// decodeGeoJSONAttrs is decodeGeoJSONRuns with each feature's properties
// as Attrs, one per feature, and the features' Properties nil; attrs is nil
// when the input went to decodeCollectionStd, whose features keep their
// maps.
func decodeGeoJSONAttrs(data []byte, file string, n, runBytes int) (fc *geojson.FeatureCollection, attrs []Attrs, err error) {
	s := &scanner{data: data, file: file, maxRuns: n, runBytes: runBytes}
	fc, ok, err := s.collection()
	if !ok {
		fc, err = decodeCollectionStd(bytes.NewReader(data), file)
		return fc, nil, err
	}
	return fc, s.attrs, err
}

// collection reads the top-level object. ok is false when the input is to
// go to decodeCollectionStd; err is a feature's error, as the reference
// gives it.
func (s *scanner) collection() (fc *geojson.FeatureCollection, ok bool, err error) {
	if !s.skipSpace() || s.data[s.pos] != '{' {
		return nil, false, nil
	}
	s.pos++
	fc = geojson.NewFeatureCollection()
	members := map[string][]byte{}
	typ := ""
	sawFeatures := false
	for first := true; ; first = false {
		if !s.skipSpace() {
			return nil, false, nil
		}
		if s.data[s.pos] == '}' && first {
			s.pos++
			break
		}
		name, ok := s.key()
		if !ok {
			return nil, false, nil
		}
		switch name {
		case "type":
			if !s.skipSpace() || s.data[s.pos] != '"' {
				return nil, false, nil
			}
			v, ok := s.stringValue()
			if !ok {
				return nil, false, nil
			}
			typ = v
		case "features":
			if sawFeatures {
				return nil, false, nil
			}
			sawFeatures = true
			if ok, err := s.features(fc); !ok || err != nil {
				return nil, ok, err
			}
		default:
			start := s.pos
			if !s.skipValue(0) {
				return nil, false, nil
			}
			members[name] = s.data[start:s.pos]
		}
		if !s.skipSpace() {
			return nil, false, nil
		}
		c := s.data[s.pos]
		s.pos++
		if c == '}' {
			break
		}
		if c != ',' {
			return nil, false, nil
		}
	}
	if typ != "FeatureCollection" || !sawFeatures {
		return nil, false, nil
	}
	for _, k := range sortedKeys(members) {
		if k == "bbox" {
			continue
		}
		var v any
		if err := unmarshalNumber(members[k], &v); err != nil {
			return nil, false, nil
		}
		if fc.ExtraMembers == nil {
			fc.ExtraMembers = geojson.Properties{}
		}
		fc.ExtraMembers[k] = v
	}
	return fc, true, nil
}

// key reads an object member's name and the colon after it.
func (s *scanner) key() (string, bool) {
	if !s.skipSpace() || s.data[s.pos] != '"' {
		return "", false
	}
	k, ok := s.stringValue()
	if !ok || !s.skipSpace() || s.data[s.pos] != ':' {
		return "", false
	}
	s.pos++
	return k, s.skipSpace()
}

// features reads the array value of "features" into fc. A long array is
// read in parallel runs (see splitRuns); the result is the sequential one.
func (s *scanner) features(fc *geojson.FeatureCollection) (ok bool, err error) {
	if !s.skipSpace() || s.data[s.pos] != '[' {
		return false, nil
	}
	s.pos++
	if !s.skipSpace() {
		return false, nil
	}
	if s.data[s.pos] == ']' {
		s.pos++
		return true, nil
	}
	runs := s.splitRuns(s.maxRuns, s.runBytes)
	if len(runs) > 1 {
		var wg sync.WaitGroup
		for _, r := range runs[1:] {
			wg.Go(func() { r.read(s.data, s.file) })
		}
		runs[0].read(s.data, s.file)
		wg.Wait()
	} else {
		runs[0].read(s.data, s.file)
	}
	for i, r := range runs {
		if r.bail {
			return false, nil
		}
		if r.maxErr != nil && i == 0 {
			fc.Features, s.attrs = append(fc.Features, r.feats...), append(s.attrs, r.attrs...)
			return true, r.maxErr
		}
		base := len(fc.Features)
		if base+len(r.feats) > MaxFeatures || r.errEnd > 0 && base+len(r.feats)+1 > MaxFeatures {
			// Read it all in one run, which stops at MaxFeatures as the reference does.
			break
		}
		fc.Features, s.attrs = append(fc.Features, r.feats...), append(s.attrs, r.attrs...)
		if r.errEnd > 0 {
			// The feature's error again, now with its index in the layer.
			_, err := decodeFeatureStd(s.data[r.errStart:r.errEnd], s.file, len(fc.Features)+1)
			return true, err
		}
		if r.closed {
			s.pos = r.end
			return true, nil
		}
		if i+1 < len(runs) && r.end == runs[i+1].start {
			continue
		}
		// The next run's start was not a feature: read on from here in one run.
		rest := &featureRun{start: r.end, limit: -1, base: len(fc.Features)}
		rest.read(s.data, s.file)
		if rest.bail {
			return false, nil
		}
		fc.Features, s.attrs = append(fc.Features, rest.feats...), append(s.attrs, rest.attrs...)
		s.pos = rest.end
		if rest.errEnd > 0 {
			return true, rest.err
		}
		return true, rest.maxErr
	}
	one := &featureRun{start: runs[0].start, limit: -1}
	one.read(s.data, s.file)
	fc.Features, s.attrs = append(fc.Features[:0], one.feats...), append(s.attrs[:0], one.attrs...)
	s.pos = one.end
	switch {
	case one.bail:
		return false, nil
	case one.errEnd > 0:
		return true, one.err
	}
	return true, one.maxErr
}

// Parallel reading: at most maxRuns runs, each of at least minRunBytes.
const (
	maxRuns     = 4
	minRunBytes = 4 << 20
)

// splitRuns divides the features array, which starts at s.pos, into up to
// n runs of about equal length, each at least runBytes long. Each run after the first starts at a guess
// at a feature's start: a '{' after "}," and spaces. A run reads features
// from its start until it reaches the next run's start, and the guess is
// confirmed when the run before lands on it exactly; when it does not,
// features reads on from where that run stopped, so that a wrong guess
// costs time, never correctness.
func (s *scanner) splitRuns(n, runBytes int) []*featureRun {
	runs := []*featureRun{{start: s.pos, limit: -1}}
	size := len(s.data) - s.pos
	if n < 2 || size < 2*runBytes {
		return runs
	}
	n = min(n, size/runBytes)
	for k := 1; k < n; k++ {
		at := nextFeatureGuess(s.data, s.pos+k*size/n)
		if at < 0 || at <= runs[len(runs)-1].start {
			break
		}
		runs[len(runs)-1].limit = at
		runs = append(runs, &featureRun{start: at, limit: -1})
	}
	return runs
}

// nextFeatureGuess returns the position of the first '{' at or after from
// that follows "}," and JSON spaces, or -1.
func nextFeatureGuess(data []byte, from int) int {
	for i := from; i < len(data); {
		j := bytes.Index(data[i:], []byte("},"))
		if j < 0 {
			return -1
		}
		k := i + j + 2
		for k < len(data) && (data[k] == ' ' || data[k] == '\n' || data[k] == '\r' || data[k] == '\t') {
			k++
		}
		if k < len(data) && data[k] == '{' {
			return k
		}
		i = k
	}
	return -1
}

// featureRun is a stretch of the features array read by one goroutine with
// its own scanner.
type featureRun struct {
	start int // position of the run's first feature
	limit int // the next run's start; -1 for the last run
	base  int // features before start, when known (the last run read alone)

	feats  []*geojson.Feature
	attrs  []Attrs // per feature of feats
	end    int     // where reading stopped: the first feature start ≥ limit, or just past ']'
	closed bool    // the array ended in this run
	bail   bool    // the input is to go to decodeCollectionStd

	errStart, errEnd int   // extent of the feature that is an error (errEnd 0: none)
	err              error // that error, numbered base + its place in the run
	maxErr           error // more than MaxFeatures features
}

// read reads the run's features from data.
func (r *featureRun) read(data []byte, file string) {
	s := &scanner{data: data, pos: r.start, file: file, pts: make([]orb.Point, 0, pointSlab)}
	for {
		if !s.skipSpace() {
			r.bail = true
			return
		}
		if r.limit >= 0 && s.pos >= r.limit {
			r.end = s.pos
			return
		}
		index := r.base + len(r.feats) + 1
		if index > MaxFeatures {
			r.maxErr = &FieldError{File: file, Err: fmt.Errorf("more than %d features; split the layer", MaxFeatures)}
			r.end = s.pos
			return
		}
		start := s.pos
		f, a, fast := s.feature()
		if !fast {
			s.pos = start
			if !s.skipValue(0) {
				r.bail = true
				return
			}
			var err error
			if f, err = decodeFeatureStd(data[start:s.pos], file, index); err != nil {
				r.errStart, r.errEnd, r.err = start, s.pos, err
				return
			}
			a, f.Properties = attrsOf(f.Properties), nil
		}
		r.feats, r.attrs = append(r.feats, f), append(r.attrs, a)
		if !s.skipSpace() {
			r.bail = true
			return
		}
		c := data[s.pos]
		s.pos++
		if c == ']' {
			r.closed, r.end = true, s.pos
			return
		}
		if c != ',' {
			r.bail = true
			return
		}
	}
}

// decodeFeatureStd decodes one feature, raw, as decodeCollectionStd does
// inside a collection. raw must be one well-formed JSON value.
func decodeFeatureStd(raw []byte, file string, index int) (*geojson.Feature, error) {
	var rf rawFeature
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	if err := dec.Decode(&rf); err != nil {
		return nil, &FieldError{File: file, Feature: index, Err: fmt.Errorf("not a GeoJSON feature: %w", err)}
	}
	return rf.feature(file, index)
}

// Feature members, as bits of a set.
const (
	seenType = 1 << iota
	seenID
	seenGeometry
	seenProperties
	seenCoordinates
)

// feature reads a feature object that the scanner handles itself, its
// Properties nil and its properties in a; fast is false when the feature
// is to be decoded by decodeFeatureStd instead.
func (s *scanner) feature() (f *geojson.Feature, a Attrs, fast bool) {
	if s.data[s.pos] != '{' {
		return nil, a, false
	}
	s.pos++
	if len(s.feats) == 0 {
		s.feats = make([]geojson.Feature, featureSlab)
	}
	f = &s.feats[0]
	*f = geojson.Feature{}
	seen := 0
	for first := true; ; first = false {
		if !s.skipSpace() {
			return nil, a, false
		}
		if s.data[s.pos] == '}' && first {
			s.pos++
			break
		}
		name, ok := s.rawKey()
		if !ok {
			return nil, a, false
		}
		var bit int
		switch string(name) {
		case "type":
			bit = seenType
			if v, plain, ok := s.stringToken(); !ok || !plain || string(v) != "Feature" {
				return nil, a, false
			}
			f.Type = "Feature"
		case "id":
			bit = seenID
			if f.ID, ok = s.value(0); !ok {
				return nil, a, false
			}
		case "geometry":
			bit = seenGeometry
			if f.Geometry, ok = s.geometry(); !ok {
				return nil, a, false
			}
		case "properties":
			bit = seenProperties
			if a, ok = s.properties(); !ok {
				return nil, a, false
			}
		default:
			if !plainOtherKey(name, "type", "id", "geometry", "properties") || !s.skipValue(0) {
				return nil, a, false
			}
		}
		if seen&bit != 0 {
			return nil, a, false
		}
		seen |= bit
		if !s.skipSpace() {
			return nil, a, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == '}' {
			break
		}
		if c != ',' {
			return nil, a, false
		}
	}
	if seen&seenType == 0 {
		return nil, a, false
	}
	s.feats = s.feats[1:]
	return f, a, true
}

// plainOtherKey reports whether name is an ASCII key that encoding/json
// matches to none of fields, which it compares without regard to case
// (and, beyond ASCII, with Unicode case folding, so such keys are refused).
func plainOtherKey(name []byte, fields ...string) bool {
	for i := 0; i < len(name); i++ {
		if name[i] >= utf8.RuneSelf {
			return false
		}
	}
	for _, f := range fields {
		if len(f) == len(name) && asciiEqualFold(f, name) {
			return false
		}
	}
	return true
}

func asciiEqualFold(a string, b []byte) bool {
	for i := 0; i < len(a); i++ {
		x, y := a[i], b[i]
		if 'A' <= x && x <= 'Z' {
			x += 'a' - 'A'
		}
		if 'A' <= y && y <= 'Z' {
			y += 'a' - 'A'
		}
		if x != y {
			return false
		}
	}
	return true
}

// properties reads a properties value: null (no properties, as the
// reference makes it an empty map) or an object of JSON values. A name
// repeated in the object is refused (ok false): the reference keeps its
// last value, and the feature is left to it.
func (s *scanner) properties() (Attrs, bool) {
	switch s.data[s.pos] {
	case 'n':
		return Attrs{}, s.literal("null")
	case '{':
	default:
		return Attrs{}, false
	}
	s.pos++
	b := &s.props
	b.reset()
	for first := true; ; first = false {
		if !s.skipSpace() {
			return Attrs{}, false
		}
		if s.data[s.pos] == '}' && first {
			s.pos++
			break
		}
		start := s.pos
		body, plain, ok := s.stringToken()
		if !ok {
			return Attrs{}, false
		}
		var name string
		if k := len(b.names); plain && k < len(b.last) && b.last[k] == string(body) {
			name = b.last[k]
		} else if plain {
			name = s.keys.get(body, plainString)
		} else if name, ok = decodeJSONString(s.data[start:s.pos]); !ok {
			return Attrs{}, false
		}
		if !s.skipSpace() || s.data[s.pos] != ':' {
			return Attrs{}, false
		}
		s.pos++
		if !s.skipSpace() {
			return Attrs{}, false
		}
		v, ok := s.value(0)
		if !ok || !b.add(name, v) {
			return Attrs{}, false
		}
		if !s.skipSpace() {
			return Attrs{}, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == '}' {
			break
		}
		if c != ',' {
			return Attrs{}, false
		}
	}
	return b.done(), true
}

// value reads any JSON value as encoding/json decodes it into an interface
// with UseNumber: string, json.Number, bool or nil; objects and arrays are
// left to encoding/json.
func (s *scanner) value(depth int) (any, bool) {
	switch c := s.data[s.pos]; {
	case c == '"':
		start := s.pos
		body, plain, ok := s.stringToken()
		if !ok {
			return nil, false
		}
		if plain {
			return s.strs.get(body, boxString), true
		}
		v, ok := decodeJSONString(s.data[start:s.pos])
		return v, ok
	case c == '-' || '0' <= c && c <= '9':
		start := s.pos
		if !s.skipNumber() {
			return nil, false
		}
		return s.nums.get(s.data[start:s.pos], boxNumber), true
	case c == 't':
		return true, s.literal("true")
	case c == 'f':
		return false, s.literal("false")
	case c == 'n':
		return nil, s.literal("null")
	case c == '{' || c == '[':
		start := s.pos
		if !s.skipValue(depth) {
			return nil, false
		}
		var v any
		if err := unmarshalNumber(s.data[start:s.pos], &v); err != nil {
			return nil, false
		}
		return v, true
	}
	return nil, false
}

func boxString(s string) any      { return s }
func boxNumber(s string) any      { return json.Number(s) }
func plainString(s string) string { return s }

// decodeJSONString decodes a quoted JSON string with escapes or non-ASCII
// bytes as encoding/json does (invalid UTF-8 becomes U+FFFD).
func decodeJSONString(quoted []byte) (string, bool) {
	var v string
	if err := json.Unmarshal(quoted, &v); err != nil {
		return "", false
	}
	return v, true
}

// hasEscapeOrHigh reports whether a string body holds an escape or a byte
// that is not valid UTF-8 (which encoding/json replaces).
func hasEscapeOrHigh(b []byte) bool {
	high := false
	for _, c := range b {
		if c == '\\' {
			return true
		}
		if c >= utf8.RuneSelf {
			high = true
		}
	}
	return high && !utf8.Valid(b)
}

// geometry reads a geometry value: null, or a geometry object of one of the
// six coordinate types. Anything else (a GeometryCollection, a "geometries"
// member, a missing or null "coordinates") goes to encoding/json.
func (s *scanner) geometry() (orb.Geometry, bool) {
	switch s.data[s.pos] {
	case 'n':
		return nil, s.literal("null")
	case '{':
	default:
		return nil, false
	}
	s.pos++
	typ := ""
	coords := -1 // start of "coordinates" met before "type"
	var g orb.Geometry
	seen := 0
	for first := true; ; first = false {
		if !s.skipSpace() {
			return nil, false
		}
		if s.data[s.pos] == '}' && first {
			s.pos++
			break
		}
		name, ok := s.rawKey()
		if !ok {
			return nil, false
		}
		var bit int
		switch string(name) {
		case "type":
			bit = seenType
			v, plain, ok := s.stringToken()
			if !ok || !plain {
				return nil, false
			}
			if typ = geometryType(v); typ == "" {
				return nil, false
			}
		case "coordinates":
			bit = seenCoordinates
			if typ == "" {
				coords = s.pos
				if !s.skipValue(0) {
					return nil, false
				}
			} else if g, ok = s.coordinates(typ); !ok {
				return nil, false
			}
		default:
			if !plainOtherKey(name, "type", "coordinates", "geometries") || !s.skipValue(0) {
				return nil, false
			}
		}
		if seen&bit != 0 {
			return nil, false
		}
		seen |= bit
		if !s.skipSpace() {
			return nil, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == '}' {
			break
		}
		if c != ',' {
			return nil, false
		}
	}
	if seen != seenType|seenCoordinates || typ == "" {
		return nil, false
	}
	if coords >= 0 {
		end := s.pos
		s.pos = coords
		var ok bool
		if g, ok = s.coordinates(typ); !ok {
			return nil, false
		}
		s.pos = end
	}
	return g, true
}

// geometryType returns the name of the geometry type that the scanner
// reads, "" for others.
func geometryType(name []byte) string {
	for _, t := range [...]string{"Point", "LineString", "MultiPoint", "MultiLineString", "Polygon", "MultiPolygon"} {
		if string(name) == t {
			return t
		}
	}
	return ""
}

// coordinates reads the coordinates of a geometry of type typ into the orb
// type encoding/json would fill.
func (s *scanner) coordinates(typ string) (orb.Geometry, bool) {
	switch typ {
	case "Point":
		p, ok := s.point()
		return p, ok
	case "LineString":
		ls, ok := s.line()
		return ls, ok
	case "MultiPoint":
		mp, ok := s.line()
		return orb.MultiPoint(mp), ok
	case "MultiLineString":
		ls, ok := s.lines()
		return orb.MultiLineString(ls), ok
	case "Polygon":
		ls, ok := s.lines()
		return linesToPolygon(ls), ok
	case "MultiPolygon":
		return s.multiPolygon()
	}
	return nil, false
}

// point reads a position [x, y, …] as encoding/json reads it into
// orb.Point ([2]float64): later ordinates are checked as JSON and dropped,
// missing ones are 0.
func (s *scanner) point() (orb.Point, bool) {
	var p orb.Point
	if !s.open('[') {
		return p, false
	}
	if s.data[s.pos] == ']' {
		s.pos++
		return p, true
	}
	for i := 0; ; i++ {
		if !s.skipSpace() {
			return p, false
		}
		if i < 2 {
			x, ok := s.float()
			if !ok {
				return p, false
			}
			p[i] = x
		} else if !s.skipValue(1) {
			return p, false
		}
		if !s.skipSpace() {
			return p, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == ']' {
			return p, true
		}
		if c != ',' {
			return p, false
		}
	}
}

// line reads an array of positions into the point slab.
func (s *scanner) line() (orb.LineString, bool) {
	if !s.open('[') {
		return nil, false
	}
	s.lineStart = len(s.pts)
	if s.data[s.pos] != ']' {
		for {
			p, ok := s.point()
			if !ok {
				return nil, false
			}
			s.addPoint(p)
			if !s.skipSpace() {
				return nil, false
			}
			c := s.data[s.pos]
			s.pos++
			if c == ']' {
				break
			}
			if c != ',' || !s.skipSpace() {
				return nil, false
			}
		}
	} else {
		s.pos++
	}
	n := len(s.pts)
	ls := orb.LineString(s.pts[s.lineStart:n:n])
	s.lineStart = n
	return ls, true
}

// addPoint appends p to the current line, moving the line to a new slab
// when this one is full.
func (s *scanner) addPoint(p orb.Point) {
	if len(s.pts) == cap(s.pts) {
		part := s.pts[s.lineStart:]
		next := make([]orb.Point, len(part), max(pointSlab, 2*len(part)))
		copy(next, part)
		s.pts, s.lineStart = next, 0
	}
	s.pts = append(s.pts, p)
}

// lines reads an array of arrays of positions.
func (s *scanner) lines() ([]orb.LineString, bool) {
	if !s.open('[') {
		return nil, false
	}
	out := []orb.LineString{}
	if s.data[s.pos] == ']' {
		s.pos++
		return out, true
	}
	for {
		ls, ok := s.line()
		if !ok {
			return nil, false
		}
		out = append(out, ls)
		if !s.skipSpace() {
			return nil, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == ']' {
			return out, true
		}
		if c != ',' || !s.skipSpace() {
			return nil, false
		}
	}
}

func linesToPolygon(ls []orb.LineString) orb.Polygon {
	if ls == nil {
		return nil
	}
	p := make(orb.Polygon, len(ls))
	for i, l := range ls {
		p[i] = orb.Ring(l)
	}
	return p
}

// multiPolygon reads an array of polygons.
func (s *scanner) multiPolygon() (orb.Geometry, bool) {
	if !s.open('[') {
		return nil, false
	}
	out := orb.MultiPolygon{}
	if s.data[s.pos] == ']' {
		s.pos++
		return out, true
	}
	for {
		ls, ok := s.lines()
		if !ok {
			return nil, false
		}
		out = append(out, linesToPolygon(ls))
		if !s.skipSpace() {
			return nil, false
		}
		c := s.data[s.pos]
		s.pos++
		if c == ']' {
			return out, true
		}
		if c != ',' || !s.skipSpace() {
			return nil, false
		}
	}
}

// open consumes the opening bracket c and the space after it, leaving a
// byte to read.
func (s *scanner) open(c byte) bool {
	if s.pos >= len(s.data) || s.data[s.pos] != c {
		return false
	}
	s.pos++
	return s.skipSpace()
}

// rawKey reads an object key without escapes, the colon and the space
// after it.
func (s *scanner) rawKey() ([]byte, bool) {
	k, plain, ok := s.stringToken()
	if !ok || !plain || !s.skipSpace() || s.data[s.pos] != ':' {
		return nil, false
	}
	s.pos++
	return k, s.skipSpace()
}

// stringToken checks and skips the string token at s.pos. body is what
// lies between the quotes; plain reports that body is the string's value
// (no escapes, valid UTF-8).
func (s *scanner) stringToken() (body []byte, plain, ok bool) {
	d := s.data
	if s.pos >= len(d) || d[s.pos] != '"' {
		return nil, false, false
	}
	start := s.pos + 1
	for i := start; i < len(d); i++ {
		c := d[i]
		if c == '"' {
			s.pos = i + 1
			return d[start:i], true, true
		}
		if c == '\\' || c < 0x20 || c >= utf8.RuneSelf {
			break
		}
	}
	if !s.skipString() {
		return nil, false, false
	}
	body = d[start : s.pos-1]
	return body, !hasEscapeOrHigh(body), true
}

// stringValue reads a string token and decodes it, escapes and all.
func (s *scanner) stringValue() (string, bool) {
	start := s.pos
	if !s.skipString() {
		return "", false
	}
	body := s.data[start+1 : s.pos-1]
	if !hasEscapeOrHigh(body) {
		return string(body), true
	}
	return decodeJSONString(s.data[start:s.pos])
}

// skipSpace skips JSON whitespace and reports whether a byte is left.
func (s *scanner) skipSpace() bool {
	for s.pos < len(s.data) {
		switch s.data[s.pos] {
		case ' ', '\n', '\r', '\t':
			s.pos++
		default:
			return true
		}
	}
	return false
}

// literal consumes the literal word (true, false, null).
func (s *scanner) literal(word string) bool {
	if len(s.data)-s.pos < len(word) || string(s.data[s.pos:s.pos+len(word)]) != word {
		return false
	}
	s.pos += len(word)
	return true
}

// skipValue checks and skips one JSON value (RFC 8259 §3), nested at most
// scanMaxDepth deep.
func (s *scanner) skipValue(depth int) bool {
	if !s.skipSpace() {
		return false
	}
	switch c := s.data[s.pos]; {
	case c == '"':
		return s.skipString()
	case c == '-' || '0' <= c && c <= '9':
		return s.skipNumber()
	case c == 't':
		return s.literal("true")
	case c == 'f':
		return s.literal("false")
	case c == 'n':
		return s.literal("null")
	case c == '{' || c == '[':
		if depth >= scanMaxDepth {
			return false
		}
		return s.skipContainer(depth)
	}
	return false
}

// skipContainer skips an object or an array.
func (s *scanner) skipContainer(depth int) bool {
	close := byte(']')
	isObject := s.data[s.pos] == '{'
	if isObject {
		close = '}'
	}
	s.pos++
	if !s.skipSpace() {
		return false
	}
	if s.data[s.pos] == close {
		s.pos++
		return true
	}
	for {
		if isObject {
			if !s.skipSpace() || s.data[s.pos] != '"' || !s.skipString() || !s.skipSpace() || s.data[s.pos] != ':' {
				return false
			}
			s.pos++
		}
		if !s.skipValue(depth+1) || !s.skipSpace() {
			return false
		}
		c := s.data[s.pos]
		s.pos++
		if c == close {
			return true
		}
		if c != ',' {
			return false
		}
	}
}

// skipString checks and skips a string token (RFC 8259 §7).
func (s *scanner) skipString() bool {
	d := s.data
	i := s.pos + 1
	for i < len(d) {
		c := d[i]
		switch {
		case c == '"':
			s.pos = i + 1
			return true
		case c < 0x20:
			return false
		case c == '\\':
			i++
			if i >= len(d) {
				return false
			}
			switch d[i] {
			case '"', '\\', '/', 'b', 'f', 'n', 'r', 't':
				i++
			case 'u':
				if i+4 >= len(d) {
					return false
				}
				for _, h := range d[i+1 : i+5] {
					if !isHex(h) {
						return false
					}
				}
				i += 5
			default:
				return false
			}
		default:
			i++
		}
	}
	return false
}

func isHex(c byte) bool {
	return '0' <= c && c <= '9' || 'a' <= c && c <= 'f' || 'A' <= c && c <= 'F'
}

// skipNumber checks and skips a number token (RFC 8259 §6):
//
//	[ - ] ( 0 | [1-9][0-9]* ) [ . [0-9]+ ] [ (e|E) [+|-] [0-9]+ ]
func (s *scanner) skipNumber() bool {
	_, _, _, _, ok := s.scanNumber()
	return ok
}

// scanNumber skips a number token and returns its decimal mantissa (the
// first 19 significant digits), the power of ten to scale it by, whether
// it was exact in 19 digits, and its sign.
func (s *scanner) scanNumber() (mant uint64, exp10 int, exact, neg, ok bool) {
	d := s.data
	i := s.pos
	if i < len(d) && d[i] == '-' {
		neg = true
		i++
	}
	if i >= len(d) {
		return 0, 0, false, false, false
	}
	exact = true
	digits := 0
	switch c := d[i]; {
	case c == '0':
		i++
	case '1' <= c && c <= '9':
		for i < len(d) && '0' <= d[i] && d[i] <= '9' {
			if digits < 19 {
				mant = mant*10 + uint64(d[i]-'0')
				digits++
			} else {
				exact = false
			}
			i++
		}
	default:
		return 0, 0, false, false, false
	}
	if i < len(d) && d[i] == '.' {
		i++
		start := i
		for i < len(d) && '0' <= d[i] && d[i] <= '9' {
			if mant == 0 && digits == 0 && d[i] == '0' {
				exp10-- // leading zeros of 0.000…
			} else if digits < 19 {
				mant = mant*10 + uint64(d[i]-'0')
				digits++
				exp10--
			} else {
				exact = false
			}
			i++
		}
		if i == start {
			return 0, 0, false, false, false
		}
	}
	if i < len(d) && (d[i] == 'e' || d[i] == 'E') {
		i++
		eneg := false
		if i < len(d) && (d[i] == '+' || d[i] == '-') {
			eneg = d[i] == '-'
			i++
		}
		start := i
		e := 0
		for i < len(d) && '0' <= d[i] && d[i] <= '9' {
			if e < 100000 {
				e = e*10 + int(d[i]-'0')
			}
			i++
		}
		if i == start {
			return 0, 0, false, false, false
		}
		if eneg {
			e = -e
		}
		exp10 += e
	}
	s.pos = i
	return mant, exp10, exact, neg, true
}

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// float reads a number token as strconv.ParseFloat(token, 64) does (which
// is what encoding/json uses), bit for bit. When the decimal mantissa m is
// below 2⁵³ and |k| ≤ 22, both m and 10^|k| are exact doubles and one
// IEEE multiplication or division rounds m·10^k correctly (Clinger, "How
// to read floating point numbers accurately", PLDI 1990, the fast path
// strconv also takes); other numbers go to strconv.ParseFloat. A number out
// of range is refused, as encoding/json refuses it.
func (s *scanner) float() (float64, bool) {
	start := s.pos
	mant, exp10, exact, neg, ok := s.scanNumber()
	if !ok {
		return 0, false
	}
	if exact && mant < 1<<53 && -22 <= exp10 && exp10 <= 22 {
		f := float64(mant)
		if exp10 < 0 {
			f /= pow10[-exp10]
		} else {
			f *= pow10[exp10]
		}
		if neg {
			f = -f
		}
		return f, true
	}
	f, err := strconv.ParseFloat(string(s.data[start:s.pos]), 64)
	return f, err == nil
}

// internTable is a direct-mapped cache of values made from short byte
// strings, so that the many repeated property names and values (materials,
// zones, diameters) share one string and one boxed interface.
type internTable[V any] struct {
	slots [1024]struct {
		used bool
		key  string
		val  V
	}
}

// internMaxLen is the longest byte string kept in an internTable.
const internMaxLen = 48

// get returns the value for b, made by mk from string(b) on a miss.
func (t *internTable[V]) get(b []byte, mk func(string) V) V {
	if len(b) > internMaxLen {
		return mk(string(b))
	}
	h := uint32(2166136261) // FNV-1a
	for _, c := range b {
		h = (h ^ uint32(c)) * 16777619
	}
	e := &t.slots[h&uint32(len(t.slots)-1)]
	if e.used && e.key == string(b) {
		return e.val
	}
	k := string(b)
	v := mk(k)
	e.used, e.key, e.val = true, k, v
	return v
}
