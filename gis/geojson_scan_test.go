package gis

import (
	"bytes"
	"errors"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb/geojson"

	"headroom/demotown"
)

// The reference for every check here is decodeCollectionStd: encoding/json
// with UseNumber into rawFeature and orb's geojson.UnmarshalGeometry, the
// decoder the scanner replaces. The scanner must give the same collection
// (reflect.DeepEqual) or the same error message.

// sameDecode decodes text with both decoders and reports a difference.
func sameDecode(t *testing.T, name string, data []byte) {
	t.Helper()
	want, wantErr := decodeCollectionStd(bytes.NewReader(data), name)
	got, gotErr := decodeGeoJSON(data, name)
	sameResult(t, name, got, gotErr, want, wantErr)
	// Again in up to 5 parallel runs of a few bytes, so that the guesses at
	// where features start are often wrong.
	got, gotErr = decodeGeoJSONRuns(data, name, 5, 16)
	sameResult(t, name+" in runs", got, gotErr, want, wantErr)
}

func sameResult(t *testing.T, name string, got *geojson.FeatureCollection, gotErr error, want *geojson.FeatureCollection, wantErr error) {
	t.Helper()
	if (wantErr == nil) != (gotErr == nil) {
		t.Fatalf("%s: scanner error %v, encoding/json error %v", name, gotErr, wantErr)
	}
	if wantErr != nil {
		if gotErr.Error() != wantErr.Error() {
			t.Fatalf("%s: scanner error\n\t%v\nencoding/json error\n\t%v", name, gotErr, wantErr)
		}
		var fw, fg *FieldError
		if errors.As(wantErr, &fw) != errors.As(gotErr, &fg) {
			t.Fatalf("%s: FieldError in one error only: %v", name, gotErr)
		}
		return
	}
	if !reflect.DeepEqual(got, want) {
		for i := range min(len(got.Features), len(want.Features)) {
			if !reflect.DeepEqual(got.Features[i], want.Features[i]) {
				t.Fatalf("%s: feature %d differs:\nscanner %#v\nencoding/json %#v", name, i+1, got.Features[i], want.Features[i])
			}
		}
		t.Fatalf("%s: collections differ (%d and %d features, extra members %#v and %#v)",
			name, len(got.Features), len(want.Features), got.ExtraMembers, want.ExtraMembers)
	}
}

// Every GeoJSON file in the test data: the gis fixtures and the end-to-end
// corpus (testdata/ at the top, with its bad inputs).
func TestGeoJSONScanMatchesStdOnTestdata(t *testing.T) {
	n := 0
	for _, root := range []string{"testdata", filepath.Join("..", "testdata"), filepath.Join("..", "cmd", "headroom", "testdata")} {
		err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
			if errors.Is(err, fs.ErrNotExist) && path == root {
				return fs.SkipDir
			}
			if err != nil || d.IsDir() || !strings.HasSuffix(path, ".geojson") {
				return err
			}
			data, err := os.ReadFile(path)
			if err != nil {
				return err
			}
			sameDecode(t, path, data)
			n++
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	if n < 100 {
		t.Errorf("only %d GeoJSON files found", n)
	}
}

// The demo town's seven layers, as headroom writes them.
func TestGeoJSONScanMatchesStdOnDemoTown(t *testing.T) {
	town, err := demotown.Generate(demotown.Options{Pipes: 3000, Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for i, fc := range []*geojson.FeatureCollection{town.Pipes, town.Sources, town.Demands, town.Elevations,
		town.Hydrants, town.Breaks, town.Facilities} {
		path := filepath.Join(dir, strconv.Itoa(i)+".geojson")
		if err := WriteCollection(path, fc); err != nil {
			t.Fatal(err)
		}
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		sameDecode(t, filepath.Base(path), data)
	}
}

// scanCases are hand-made inputs for the corners: each shape the scanner
// reads itself, and each it hands to encoding/json.
var scanCases = []string{
	`{"type":"FeatureCollection","features":[]}`,
	`{"features":[],"type":"FeatureCollection"}`,
	` {"type":"FeatureCollection","features":[ ]} trailing`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":null,"properties":null}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":7,"properties":{"a":1,"b":"x","c":true,"d":false,"e":null,"f":[1,{"g":2.50}],"h":{"i":"j"},"k":-0,"l":1e400,"m":"\u00e9\n","n":"caf` + "\xc3\xa9" + `","o":"` + "\xff" + `"}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":"P-1","geometry":{"type":"Point","coordinates":[1.5,2.25]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":{"x":1},"geometry":{"coordinates":[1,2,3],"type":"Point"}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2,"z",{"a":[]}]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[null,2]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":null}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point"}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1e400,0]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":["1",0]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"LineString","coordinates":[[0.1,0.2,9],[1.7976931348623157e308,-4.9e-324],[123456789012345678901234,0.30000000000000004]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"LineString","coordinates":[]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"LineString","coordinates":[[1,2],null]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"MultiPoint","coordinates":[[1,2],[3,4]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"MultiLineString","coordinates":[[],[[0,0],[1,1]]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,0]],[]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"MultiPolygon","coordinates":[[[[0,0],[1,0],[1,1],[0,0]]],[]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"MultiPolygon","coordinates":[]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"GeometryCollection","geometries":[{"type":"Point","coordinates":[1,2]}]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2],"geometries":[]}}]}`,
	// orb v0.14.0 panics on these two unless decodeCollectionStd stops them first.
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"GeometryCollection","geometries":[null]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2],"geometries":[{"type":"GeometryCollection","geometries":[{"type":"Point","coordinates":[1,2]},null]}]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2],"geometries":[null]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Circle","coordinates":[1,2]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"TYPE":"Point","Coordinates":[1,2]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2],"bbox":[1,2,1,2]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2],"type":"LineString"}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":5}]}`,
	`{"type":"FeatureCollection","features":[{"Type":"Feature","PROPERTIES":{"a":1}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","propertieſ":{"a":1}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"a":1},"properties":{"b":2}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"a":1,"a":2}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","properties":[1]}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","typ\u0065":"Feature"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feat\u0075re"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"feature"}]}`,
	`{"type":"FeatureCollection","features":[{"type":7}]}`,
	`{"type":"FeatureCollection","features":[null]}`,
	`{"type":"FeatureCollection","features":[1]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature"},]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature"} {"type":"Feature"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","other":{"deep":[[[[{}]]]]}}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":01}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":1.}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":"a` + "\x01" + `"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature","id":"\x"}]}`,
	`{"type":"FeatureCollection","features":[{"type":"Feature"}`,
	`{"type":"FeatureCollection","features":null}`,
	`{"type":"FeatureCollection","features":{}}`,
	`{"type":"FeatureCollection","features":[],"features":[{"type":"Feature"}]}`,
	`{"type":"FeatureCollection"}`,
	`{"type":"FeatureCollection","features":[],"crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:OGC:1.3:CRS84"}},"bbox":[0,0,1,1],"name":"mains","n":1.50}`,
	`{"type":"FeatureCollection","type":"Feature","features":[]}`,
	`{"type":null,"features":[]}`,
	`{"type":"Feature","id":3,"properties":{"a":"b"},"geometry":{"type":"Point","coordinates":[1,2]}}`,
	`{"type":"Topology"}`,
	`{}`,
	`[]`,
	"\xef\xbb\xbf{\"type\":\"FeatureCollection\",\"features\":[]}",
	``,
	`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"LineString","coordinates":[[0.000000000000000000001234,1E+2],[-0.0,12345678901234567890],[1e-22,1e22],[9007199254740993,4.5e15]]}}]}`,
}

func TestGeoJSONScanMatchesStdOnCorners(t *testing.T) {
	for i, text := range scanCases {
		sameDecode(t, "case"+strconv.Itoa(i)+".geojson", []byte(text))
	}
}

// Numbers: the scanner's float reading against strconv.ParseFloat, bit for bit.
func TestScanFloatMatchesParseFloat(t *testing.T) {
	for _, text := range []string{"0", "-0", "1", "-98.8783713", "38.2531862", "0.1", "0.30000000000000004",
		"1e22", "1e23", "9007199254740992", "9007199254740993", "4503599627370497.5", "1.7976931348623157e308",
		"4.9e-324", "2.2250738585072014e-308", "123456789012345678901234567890", "0.000001", "1E-7", "5e-1",
		"1234567890123456789", "12345678901234567890", "0.1234567890123456789", "3.14159265358979323846"} {
		s := &scanner{data: []byte(text)}
		got, ok := s.float()
		want, err := strconv.ParseFloat(text, 64)
		if !ok || err != nil || s.pos != len(text) {
			t.Errorf("%s: ok %v, err %v, pos %d", text, ok, err, s.pos)
			continue
		}
		if math64bits(got) != math64bits(want) {
			t.Errorf("%s: got %v, strconv.ParseFloat %v", text, got, want)
		}
	}
}

// FuzzGeoJSONScan: on any input the scanner and encoding/json give the same
// collection or the same error.
func FuzzGeoJSONScan(f *testing.F) {
	for _, text := range scanCases {
		f.Add(text)
	}
	f.Add(collection(pipeFeature(goodProps)))
	f.Fuzz(func(t *testing.T, text string) {
		sameDecode(t, "f.geojson", []byte(text))
	})
}

// FuzzScanFloat: any number token reads as strconv.ParseFloat reads it.
func FuzzScanFloat(f *testing.F) {
	for _, s := range []string{"0", "-98.8783713", "1e22", "9007199254740993", "4.9e-324", "0.1e-5"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, text string) {
		s := &scanner{data: []byte(text)}
		got, ok := s.float()
		if !ok || s.pos != len(text) {
			return
		}
		want, err := strconv.ParseFloat(text, 64)
		if err != nil {
			t.Fatalf("%q: scanner read %v, strconv.ParseFloat: %v", text, got, err)
		}
		if math64bits(got) != math64bits(want) {
			t.Fatalf("%q: got %v, strconv.ParseFloat %v", text, got, want)
		}
	})
}

func math64bits(x float64) uint64 { return math.Float64bits(x) }

// mixedCollection builds a collection of n features that mixes what the
// scanner reads itself with what it hands to encoding/json, with "},{"
// inside strings and nested objects to mislead the guesses at run starts,
// and lines long enough to fill several coordinate slabs. bad, if > 0, is
// a feature that is an error.
func mixedCollection(n, bad int) string {
	var b strings.Builder
	b.WriteString(`{"type":"FeatureCollection","name":"mixed","features":[` + "\n")
	for i := 1; i <= n; i++ {
		if i > 1 {
			b.WriteString(",\n")
		}
		id := strconv.Itoa(i)
		switch {
		case i == bad:
			b.WriteString(`{"type":"Feature","id":` + id + `,"geometry":{"type":"Point","coordinates":["x",1]}}`)
		case i%7 == 0:
			b.WriteString(`{"type":"Feature","id":"s` + id + `","properties":{"note":"},{\"type\":\"Feature\"},{","n":{"a":[{"b":1},{"c":2}]}},"geometry":null}`)
		case i%11 == 0:
			b.WriteString(`{"Type":"Feature","id":` + id + `,"geometry":{"type":"MultiLineString","coordinates":[[[1,2],[3,4]]]}}`)
		case i%13 == 0:
			b.WriteString(`{"type":"Feature","id":` + id + `,"geometry":{"type":"GeometryCollection","geometries":[{"type":"Point","coordinates":[` + id + `,1]}]},"properties":{}}`)
		case i%50 == 0:
			b.WriteString(`{"type":"Feature","id":` + id + `,"geometry":{"type":"LineString","coordinates":[`)
			for k := range 3000 + i {
				if k > 0 {
					b.WriteByte(',')
				}
				b.WriteString("[" + strconv.Itoa(k) + ".125,-" + id + ".5," + strconv.Itoa(k%3) + "]")
			}
			b.WriteString(`]},"properties":{"zone":"Z01"}}`)
		default:
			b.WriteString(`{"type":"Feature","id":` + id + `,"geometry":{"type":"LineString","coordinates":[[-98.87` + id + `,38.25],[-98.876,38.2` + id + `]]},"properties":{"diam_in":` + strconv.Itoa(4+i%3*2) + `,"material":"PVC","yr_laid":` + strconv.Itoa(1950+i%70) + `}}`)
		}
	}
	b.WriteString("\n]}\n")
	return b.String()
}

// Long collections read in parallel runs, with and without an error, give
// what encoding/json gives.
func TestGeoJSONScanRuns(t *testing.T) {
	for _, bad := range []int{0, 3, 150, 399} {
		text := mixedCollection(400, bad)
		sameDecode(t, "mixed"+strconv.Itoa(bad)+".geojson", []byte(text))
		for _, runBytes := range []int{1000, 10000, 100000} {
			data := []byte(text)
			want, wantErr := decodeCollectionStd(bytes.NewReader(data), "m.geojson")
			got, gotErr := decodeGeoJSONRuns(data, "m.geojson", 64, runBytes)
			sameResult(t, "mixed runs "+strconv.Itoa(runBytes), got, gotErr, want, wantErr)
		}
	}
}

// Runs whose guessed starts fall inside strings and nested objects: the
// run before passes over them and reading goes on from there.
func TestGeoJSONScanRunsWrongGuesses(t *testing.T) {
	var b strings.Builder
	b.WriteString(`{"type":"FeatureCollection","features":[`)
	for i := range 300 {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(`{"type":"Feature","id":` + strconv.Itoa(i) + `,"properties":{"note":"},{\"type\":\"Feature\"},{","n":{"a":[{"b":1},{"c":2}]}},"geometry":{"type":"Point","coordinates":[1,2]}}`)
	}
	b.WriteString(`]}`)
	data := []byte(b.String())
	want, wantErr := decodeCollectionStd(bytes.NewReader(data), "w.geojson")
	for _, runBytes := range []int{40, 100, 333, 1000} {
		got, gotErr := decodeGeoJSONRuns(data, "w.geojson", 64, runBytes)
		sameResult(t, "wrong guesses "+strconv.Itoa(runBytes), got, gotErr, want, wantErr)
	}
	// An error after the wrong guesses, numbered as encoding/json numbers it.
	bad := bytes.Replace(data, []byte(`"id":250,`), []byte(`"id":250,"type":"Point",`), 1)
	want, wantErr = decodeCollectionStd(bytes.NewReader(bad), "w.geojson")
	got, gotErr := decodeGeoJSONRuns(bad, "w.geojson", 64, 100)
	sameResult(t, "wrong guesses and an error", got, gotErr, want, wantErr)
	if wantErr == nil || !strings.Contains(wantErr.Error(), "feature 251") {
		t.Errorf("reference error %v, want one at feature 251", wantErr)
	}
}

// A GeometryCollection with a null member is an error naming the feature
// and the geometry field, not a panic inside orb.
func TestGeometryCollectionNullIsAnError(t *testing.T) {
	text := `{"type":"FeatureCollection","features":[{"type":"Feature","id":"G1","geometry":{"type":"GeometryCollection","geometries":[null]}}]}`
	_, err := decodeCollection(strings.NewReader(text), "g.geojson")
	want := `g.geojson: feature 1 (id "G1"): field "geometry": not a GeoJSON geometry: a GeometryCollection holds a null geometry`
	if err == nil || err.Error() != want {
		t.Errorf("err = %v, want %s", err, want)
	}
}

// A path that opens but cannot be read (a directory) is "not a GeoJSON
// file", with the read error, as it was when encoding/json read the file.
func TestReadCollectionDirectory(t *testing.T) {
	dir := t.TempDir()
	_, err := ReadCollection(dir, "pipes")
	f, openErr := os.Open(dir)
	if openErr != nil {
		t.Fatal(openErr)
	}
	defer f.Close()
	_, stdErr := decodeCollectionStd(f, filepath.Base(dir))
	want := filepath.Base(dir) + ": not a GeoJSON file (" + stdErr.Error() + "); check the config key pipes.path"
	if err == nil || err.Error() != want {
		t.Errorf("err = %v, want %s", err, want)
	}
}
