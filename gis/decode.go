package gis

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"

	"github.com/paulmach/orb/geojson"
)

// MaxFeatures caps the number of features read from one layer, so that a
// hostile or mistaken file cannot exhaust memory.
const MaxFeatures = 10_000_000

// rawFeature is one GeoJSON feature as decoded with json.Number for numbers.
type rawFeature struct {
	Type       string          `json:"type"`
	ID         any             `json:"id"`
	Geometry   json.RawMessage `json:"geometry"`
	Properties map[string]any  `json:"properties"`
}

// ReadCollection reads a GeoJSON FeatureCollection (or a bare Feature) from
// path. Numbers in ids and properties are kept as json.Number, so an id 1
// reads back as "1" and 9007199254740993 stays exact. key is the config
// section ("pipes", "sources", …) named in the error messages.
//
// The file is read whole into memory and decoded by the scanner of
// geojson_scan.go (decodeGeoJSON), which gives what decodeCollectionStd
// gives.
func ReadCollection(path, key string) (*geojson.FeatureCollection, error) {
	fc, attrs, err := readGeoJSON(path, key)
	if err != nil {
		return nil, err
	}
	giveMaps(fc.Features, attrs)
	return fc, nil
}

// readGeoJSON is ReadCollection with the properties as Attrs, one per
// feature, and the features' Properties nil (see decodeGeoJSONAttrs); attrs
// is nil when the features keep their maps.
func readGeoJSON(path, key string) (*geojson.FeatureCollection, []Attrs, error) {
	file := filepath.Base(path)
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, &FieldError{File: file, Err: fmt.Errorf("cannot read %s: %w; check the config key %s.path", path, err, key)}
	}
	defer f.Close()
	data, err := readAllFile(f)
	if err == nil {
		var fc *geojson.FeatureCollection
		var attrs []Attrs
		if fc, attrs, err = decodeGeoJSONAttrs(data, file, min(runtime.GOMAXPROCS(0), maxRuns), minRunBytes); err == nil {
			return fc, attrs, nil
		}
	}
	var fe *FieldError
	if errors.As(err, &fe) {
		return nil, nil, err
	}
	return nil, nil, &FieldError{File: file, Err: fmt.Errorf("not a GeoJSON file (%w); check the config key %s.path", err, key)}
}

// readAllFile reads the rest of f into one buffer sized from its length.
//
// The buffer is made at its full size and read into directly: growing a
// bytes.Buffer to the size first clears every byte (append-based growth
// zeroes the new space), which on the 1,000,000-segment demo town's 291 MB
// pipe layer took 0.55 to 1.0 s against 0.12 s read this way (one core;
// the clearing and its page faults are most of it). A file that grows
// while it is read is read to its new end.
func readAllFile(f *os.File) ([]byte, error) {
	st, err := f.Stat()
	if err != nil || st.Size() <= 0 || int64(int(st.Size())) != st.Size() {
		return io.ReadAll(f)
	}
	data := make([]byte, int(st.Size())+1) // one byte more, to see the end
	n, err := io.ReadFull(f, data)
	switch err {
	case io.EOF, io.ErrUnexpectedEOF:
		return data[:n], nil
	case nil: // longer than it was: read on
		rest, err := io.ReadAll(f)
		return append(data, rest...), err
	}
	return data[:n], err
}

// decodeCollection reads all of r and decodes it with decodeGeoJSON.
func decodeCollection(r io.Reader, file string) (*geojson.FeatureCollection, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, err
	}
	return decodeGeoJSON(data, file)
}

// decodeCollectionStd streams a GeoJSON object from r with encoding/json: a
// FeatureCollection, whose features are decoded one by one, or a single
// Feature, returned as a collection of one. Foreign top-level members (such
// as the old "crs") are kept in ExtraMembers of a collection.
//
// It is the reference that the fast scanner (geojson_scan.go) must agree
// with, and the scanner's fallback for input it does not handle itself.
func decodeCollectionStd(r io.Reader, file string) (*geojson.FeatureCollection, error) {
	dec := json.NewDecoder(r)
	dec.UseNumber()
	tok, err := dec.Token()
	if err != nil {
		return nil, err
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return nil, errors.New("the top level is not a JSON object")
	}
	fc := geojson.NewFeatureCollection()
	members := map[string]json.RawMessage{}
	var typ string
	sawFeatures := false
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			return nil, err
		}
		name, _ := tok.(string)
		switch name {
		case "type":
			if err := dec.Decode(&typ); err != nil {
				return nil, fmt.Errorf("member \"type\": %w", err)
			}
		case "features":
			sawFeatures = true
			if err := decodeFeatures(dec, fc, file); err != nil {
				return nil, err
			}
		default:
			var raw json.RawMessage
			if err := dec.Decode(&raw); err != nil {
				return nil, fmt.Errorf("member %q: %w", name, err)
			}
			members[name] = raw
		}
	}
	if _, err := dec.Token(); err != nil {
		return nil, err
	}
	switch typ {
	case "FeatureCollection":
		if !sawFeatures {
			return nil, errors.New(`a FeatureCollection without "features"`)
		}
		for _, k := range sortedKeys(members) {
			if k == "bbox" {
				continue
			}
			var v any
			if err := unmarshalNumber(members[k], &v); err == nil {
				if fc.ExtraMembers == nil {
					fc.ExtraMembers = geojson.Properties{}
				}
				fc.ExtraMembers[k] = v
			}
		}
		return fc, nil
	case "Feature":
		raw := rawFeature{Type: typ, Geometry: members["geometry"]}
		if id, ok := members["id"]; ok {
			if err := unmarshalNumber(id, &raw.ID); err != nil {
				return nil, fmt.Errorf("member \"id\": %w", err)
			}
		}
		if p, ok := members["properties"]; ok {
			if err := unmarshalNumber(p, &raw.Properties); err != nil {
				return nil, fmt.Errorf("member \"properties\": %w", err)
			}
		}
		f, err := raw.feature(file, 1)
		if err != nil {
			return nil, err
		}
		fc.Append(f)
		return fc, nil
	case "":
		return nil, errors.New(`no "type" member`)
	default:
		return nil, fmt.Errorf("type %q is not FeatureCollection or Feature", typ)
	}
}

// decodeFeatures reads the array value of "features" feature by feature.
func decodeFeatures(dec *json.Decoder, fc *geojson.FeatureCollection, file string) error {
	tok, err := dec.Token()
	if err != nil {
		return err
	}
	if d, ok := tok.(json.Delim); !ok || d != '[' {
		return errors.New(`"features" is not an array`)
	}
	for dec.More() {
		index := len(fc.Features) + 1
		if index > MaxFeatures {
			return &FieldError{File: file, Err: fmt.Errorf("more than %d features; split the layer", MaxFeatures)}
		}
		var raw rawFeature
		if err := dec.Decode(&raw); err != nil {
			return &FieldError{File: file, Feature: index, Err: fmt.Errorf("not a GeoJSON feature: %w", err)}
		}
		f, err := raw.feature(file, index)
		if err != nil {
			return err
		}
		fc.Append(f)
	}
	_, err = dec.Token()
	return err
}

// feature turns a decoded raw feature into an orb feature. Properties are
// never nil afterwards.
func (raw rawFeature) feature(file string, index int) (*geojson.Feature, error) {
	if raw.Type != "Feature" {
		return nil, &FieldError{File: file, Feature: index, ID: idString(raw.ID),
			Err: fmt.Errorf("type %q is not Feature", raw.Type)}
	}
	f := &geojson.Feature{Type: "Feature", ID: raw.ID, Properties: raw.Properties}
	if f.Properties == nil {
		f.Properties = geojson.Properties{}
	}
	g := strings.TrimSpace(string(raw.Geometry))
	if g != "" && g != "null" {
		if nullInCollection(raw.Geometry) {
			return nil, &FieldError{File: file, Feature: index, ID: idString(raw.ID), Field: "geometry",
				Err: errors.New("not a GeoJSON geometry: a GeometryCollection holds a null geometry")}
		}
		geom, err := geojson.UnmarshalGeometry(raw.Geometry)
		if err != nil {
			return nil, &FieldError{File: file, Feature: index, ID: idString(raw.ID), Field: "geometry",
				Err: fmt.Errorf("not a GeoJSON geometry: %w", err)}
		}
		f.Geometry = geom.Geometry()
	}
	return f, nil
}

// nullInCollection reports whether a GeometryCollection in the geometry
// raw, at any depth, has null among its "geometries": orb v0.14.0's decoder
// dereferences such a member and panics.
func nullInCollection(raw []byte) bool {
	if !bytes.Contains(raw, []byte("null")) {
		return false
	}
	var g struct {
		Type       string            `json:"type"`
		Geometries []json.RawMessage `json:"geometries"`
	}
	if json.Unmarshal(raw, &g) != nil {
		return false // orb reports the error itself
	}
	for _, m := range g.Geometries {
		if strings.TrimSpace(string(m)) == "null" {
			if g.Type == "GeometryCollection" {
				return true
			}
		} else if nullInCollection(m) {
			return true
		}
	}
	return false
}

func unmarshalNumber(data []byte, v any) error {
	dec := json.NewDecoder(strings.NewReader(string(data)))
	dec.UseNumber()
	return dec.Decode(v)
}

// idString renders an id or a text value: strings as they are, numbers
// exactly as written (json.Number) or in shortest form (float64), "" for nil.
func idString(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return strings.TrimSpace(x)
	case json.Number:
		return x.String()
	case float64:
		return strconv.FormatFloat(x, 'f', -1, 64)
	case float32:
		return strconv.FormatFloat(float64(x), 'f', -1, 32)
	case int:
		return strconv.Itoa(x)
	case int64:
		return strconv.FormatInt(x, 10)
	case int32:
		return strconv.FormatInt(int64(x), 10)
	case uint64:
		return strconv.FormatUint(x, 10)
	case bool:
		return strconv.FormatBool(x)
	default:
		return fmt.Sprint(x)
	}
}

// ErrMissing marks a value that is absent, null or blank (see Number).
var ErrMissing = errors.New("missing")

// errMissing is ErrMissing under the name the readers use.
var errMissing = ErrMissing

// Number reads a numeric attribute value as the layer readers do: a JSON
// number, or a string holding one; ErrMissing for nil and blank strings,
// and an error saying why otherwise (NaN and ±Inf are refused).
func Number(v any) (float64, error) { return number(v) }

// number reads a numeric property: a JSON number, or a string holding one
// ("8", " 8.5 "). It returns errMissing for nil and blank strings, and an
// error saying why otherwise ("eight" is not a number; NaN and ±Inf are refused).
func number(v any) (float64, error) {
	var x float64
	switch t := v.(type) {
	case nil:
		return 0, errMissing
	case json.Number:
		f, err := strconv.ParseFloat(t.String(), 64)
		if err != nil {
			return 0, fmt.Errorf("%s is not a number", t)
		}
		x = f
	case float64:
		x = t
	case float32:
		x = float64(t)
	case int:
		x = float64(t)
	case int64:
		x = float64(t)
	case int32:
		x = float64(t)
	case string:
		s := strings.TrimSpace(t)
		if s == "" {
			return 0, errMissing
		}
		f, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return 0, fmt.Errorf("%q is not a number", t)
		}
		x = f
	default:
		return 0, fmt.Errorf("%s is not a number", shortJSON(v))
	}
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, fmt.Errorf("%v is not a finite number", x)
	}
	return x, nil
}

// shortJSON renders any value briefly for a message.
func shortJSON(v any) string {
	b, err := json.Marshal(v)
	if err != nil {
		return fmt.Sprintf("%v", v)
	}
	s := string(b)
	if len(s) > 40 {
		s = s[:37] + "..."
	}
	return s
}

// fmtNum formats a number for a message in shortest form.
func fmtNum(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }
