package gis

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// writeTemp writes text to name in a fresh temporary directory.
func writeTemp(t *testing.T, name, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

var testSchema = PipeSchema{ID: "PIPE_ID", Diameter: "DIAM_IN", Material: "MATL", InstallYear: "YR",
	MeasuredC: "C_TEST", Status: "STATUS", Zone: "ZONE", Length: "LEN_FT"}

// pipeFeature returns one pipe feature with the given properties JSON and a
// 100 m north–south line at latitude 35 (end points from PROJ geod, see geodCases).
func pipeFeature(props string) string {
	return `{"type":"Feature","properties":{` + props + `},"geometry":{"type":"LineString","coordinates":[[-97.5,35],[-97.5,35.000901383]]}}`
}

func collection(features ...string) string {
	return `{"type":"FeatureCollection","features":[` + strings.Join(features, ",\n") + `]}`
}

const goodProps = `"PIPE_ID":"P-1","DIAM_IN":8,"MATL":"CI","YR":1950`

func TestReadPipesGood(t *testing.T) {
	path := writeTemp(t, "pipes.geojson", collection(
		pipeFeature(goodProps+`,"C_TEST":"95","STATUS":"Closed","ZONE":"High","LEN_FT":"250"`),
		pipeFeature(`"PIPE_ID":2,"DIAM_IN":"12","MATL":"DI","YR":"1988","C_TEST":null,"STATUS":"open"`),
	))
	pipes, probs, err := ReadPipes(path, testSchema, 2026)
	if err != nil {
		t.Fatal(err)
	}
	if len(probs) != 0 {
		t.Errorf("unexpected problems: %+v", probs)
	}
	p := pipes[0]
	// Unit conversions are exact by definition: 1 in = 25.4 mm, 1 ft = 0.3048 m.
	if p.ID != "P-1" || p.Diameter != 8*hydraulics.Inch || p.Material != "CI" || p.InstallYear != 1950 ||
		p.MeasuredC != 95 || !p.Closed || p.Zone != "High" || p.Length != 250*hydraulics.Foot || !p.Usable || p.Index != 1 {
		t.Errorf("pipe 1 = %+v", p)
	}
	q := pipes[1]
	if q.ID != "2" || q.Diameter != 12*hydraulics.Inch || q.InstallYear != 1988 || q.MeasuredC != 0 || q.Closed {
		t.Errorf("pipe 2 = %+v", q)
	}
	// Length from the geometry: 100.0000 m by PROJ geod (geodCases "lat35 N-S 100m").
	if math.Abs(q.Length.Metres()-100) > geodTolerance(100) {
		t.Errorf("pipe 2 length %v m, want 100 m", q.Length.Metres())
	}
}

func TestReadPipesMillimetresAndMetres(t *testing.T) {
	s := testSchema
	s.DiameterUnit, s.LengthUnit = "mm", "m"
	props := strings.Replace(goodProps, `"DIAM_IN":8`, `"DIAM_IN":200`, 1)
	pipes, _, err := PipesFromCollection("p.geojson", mustDecode(t, collection(pipeFeature(props+`,"LEN_FT":12.5`))), s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	// 200 mm and 12.5 m by definition of the units.
	if pipes[0].Diameter != 200*hydraulics.Millimetre || pipes[0].Length != 12.5 {
		t.Errorf("got diameter %v m, length %v m", pipes[0].Diameter, pipes[0].Length)
	}
}

func mustDecode(t *testing.T, text string) *geojson.FeatureCollection {
	t.Helper()
	fc, err := decodeCollection(strings.NewReader(text), "test.geojson")
	if err != nil {
		t.Fatal(err)
	}
	return fc
}

// featureProblems drops the layer-level Problems (optional fields in no feature).
func featureProblems(probs []Problem) []Problem {
	var out []Problem
	for _, p := range probs {
		if p.Feature > 0 {
			out = append(out, p)
		}
	}
	return out
}

// An optional field mapped but in no feature is a layer-level Problem, not an error.
func TestReadPipesOptionalFieldAbsent(t *testing.T) {
	s := PipeSchema{ID: "PIPE_ID", Diameter: "DIAM_IN", Material: "MATL", InstallYear: "YR", Zone: "PRESSURE_ZONE"}
	_, probs, err := PipesFromCollection("pipes.geojson", mustDecode(t, collection(pipeFeature(goodProps))), s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	if len(probs) != 1 || probs[0].Feature != 0 || probs[0].Field != "PRESSURE_ZONE" ||
		probs[0].Action != "field ignored; check the config key pipes.fields.zone" {
		t.Errorf("problems = %+v", probs)
	}
}

// Each bad feature gives one Problem naming file, feature, id and field;
// the expected texts are the package's own wording (common practice, no source).
func TestReadPipesProblems(t *testing.T) {
	cases := []struct {
		name    string
		feature string
		field   string
		what    string // substring of Problem.What
		action  string // substring of Problem.Action
		usable  bool
		year    int
	}{
		{"negative diameter", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":-6,"MATL":"CI","YR":1950`),
			"DIAM_IN", "diameter -6 is not > 0", "pipe left out of the network; correct the diameter", false, 1950},
		{"zero diameter", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":0,"MATL":"CI","YR":1950`),
			"DIAM_IN", "diameter 0 is not > 0", "left out", false, 1950},
		{"non-numeric diameter", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":"eight","MATL":"CI","YR":1950`),
			"DIAM_IN", `diameter "eight" is not a number`, "left out", false, 1950},
		{"missing diameter", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":null,"MATL":"CI","YR":1950`),
			"DIAM_IN", "diameter is missing", "left out", false, 1950},
		{"future year", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":2031`),
			"YR", "install year 2031 is after the analysis year 2026", "pipe kept with age unknown", true, 0},
		{"implausible year", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1700`),
			"YR", "install year 1700 is before 1800", "age unknown", true, 0},
		{"missing year", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI"`),
			"YR", "install year is missing", "age unknown", true, 0},
		{"text year", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":"about 1950"`),
			"YR", `install year "about 1950" is not a number`, "age unknown", true, 0},
		{"unknown status", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"maybe"`),
			"STATUS", `status "maybe" is not a known value`, "treated as open", true, 1950},
		{"bad measured C", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950,"C_TEST":-20`),
			"C_TEST", "measured C -20 is not in 0–200", "measured C ignored", true, 1950},
		{"bad length", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950,"LEN_FT":"long"`),
			"LEN_FT", `length "long" is not a number`, "length taken from the geometry", true, 1950},
		{"missing material", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"YR":1950`),
			"MATL", "material is missing", "material unknown", true, 1950},
		{"point geometry", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"Point","coordinates":[-97.5,35]}}`,
			"geometry", "geometry is Point, want LineString or MultiLineString", "left out", false, 1950},
		{"null geometry", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":null}`,
			"geometry", "geometry is missing", "left out", false, 1950},
		{"one distinct vertex", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"LineString","coordinates":[[-97.5,35],[-97.5,35]]}}`,
			"geometry", "line has 1 distinct vertices, want at least 2", "left out", false, 1950},
		{"projected coordinates", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"LineString","coordinates":[[6500000,1900000],[6500100,1900000]]}}`,
			"geometry", "vertex 1 (6500000, 1900000) is not a lon/lat position", "lon/lat", false, 1950},
		// Plausibility bounds (gis.MinDiameter, MaxDiameter, MaxSegmentLength, PartGap): common practice, no source.
		{"absurd diameter", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":1000,"MATL":"CI","YR":1950`),
			"DIAM_IN", "diameter 1000 in is outside the plausible 1–144 in for a water main", "left out", false, 1950},
		{"diameter below an inch", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":0.5,"MATL":"CI","YR":1950`),
			"DIAM_IN", "diameter 0.5 in is outside the plausible 1–144 in", "diameter_unit", false, 1950},
		// 500 mi = 2,640,000 ft (1 mi = 5,280 ft by definition).
		{"500-mile length", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950,"LEN_FT":2640000`),
			"LEN_FT", "length 2640000 ft (804672.00 m, 2640000.0 ft) is more than 8046.72 m, 26400.0 ft for one segment", "length taken from the geometry", true, 1950},
		{"length below the snap tolerance", pipeFeature(`"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950,"LEN_FT":0.2`),
			"LEN_FT", "length 0.2 ft is shorter than 0.15 m, 0.5 ft", "length taken from the geometry", true, 1950},
		// 0.1° of latitude at 35° N is about 11.1 km (6.9 mi): longer than 5 mi.
		{"drawn longer than 5 miles", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"LineString","coordinates":[[-97.5,35],[-97.5,35.1]]}}`,
			"geometry", "more than 8046.72 m, 26400.0 ft for one segment", "pipe kept with its drawn length", true, 1950},
		{"disjoint parts", `{"type":"Feature","properties":{"PIPE_ID":"P-204","DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"MultiLineString","coordinates":[[[-97.5,35],[-97.5,35.001]],[[-97.4,35.001],[-97.4,35.002]]]}}`,
			"geometry", "part 2 does not start where part 1 ends", "split it into one feature per part", false, 1950},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			// A good second pipe keeps the layer usable, so only the Problem shows.
			fc := mustDecode(t, collection(tc.feature, pipeFeature(`"PIPE_ID":"P-2","DIAM_IN":8,"MATL":"CI","YR":1950`)))
			pipes, probs, err := PipesFromCollection("pipes.geojson", fc, testSchema, 2026)
			if err != nil {
				t.Fatal(err)
			}
			probs = featureProblems(probs)
			if len(probs) != 1 {
				t.Fatalf("got %d problems, want 1: %+v", len(probs), probs)
			}
			p := probs[0]
			if p.File != "pipes.geojson" || p.Feature != 1 || p.ID != "P-204" || p.Field != tc.field {
				t.Errorf("problem names %q feature %d id %q field %q, want pipes.geojson 1 P-204 %q", p.File, p.Feature, p.ID, p.Field, tc.field)
			}
			if !strings.Contains(p.What, tc.what) {
				t.Errorf("What = %q, want it to contain %q", p.What, tc.what)
			}
			if !strings.Contains(p.Action, tc.action) {
				t.Errorf("Action = %q, want it to contain %q", p.Action, tc.action)
			}
			if pipes[0].Usable != tc.usable || pipes[0].InstallYear != tc.year {
				t.Errorf("usable %v year %d, want %v %d", pipes[0].Usable, pipes[0].InstallYear, tc.usable, tc.year)
			}
			if !pipes[0].Usable && (pipes[0].Reason == "" || pipes[0].Line != nil) {
				t.Errorf("unusable pipe: reason %q line %v", pipes[0].Reason, pipes[0].Line)
			}
		})
	}
}

// The plausibility bounds are inclusive, in the layer's own unit: 1 in and
// 144 in are kept, and so are 25.4 mm and 3657.6 mm (1 in = 25.4 mm exactly).
func TestReadPipesDiameterBoundsInclusive(t *testing.T) {
	cases := []struct {
		name, unit string
		value      float64
		want       hydraulics.Length
	}{
		{"1 in", "in", 1, 1 * hydraulics.Inch},
		{"144 in", "in", 144, 144 * hydraulics.Inch},
		{"25.4 mm", "mm", 25.4, 25.4 * hydraulics.Millimetre},
		{"3657.6 mm", "mm", 3657.6, 3657.6 * hydraulics.Millimetre},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := testSchema
			s.DiameterUnit = c.unit
			props := strings.Replace(goodProps, `"DIAM_IN":8`, fmt.Sprintf(`"DIAM_IN":%v`, c.value), 1)
			pipes, _, err := PipesFromCollection("p.geojson", mustDecode(t, collection(pipeFeature(props))), s, 2026)
			if err != nil {
				t.Fatal(err)
			}
			if !pipes[0].Usable || math.Abs(float64(pipes[0].Diameter-c.want)) > 1e-12 {
				t.Errorf("usable %v diameter %v m, want %v m (%s)", pipes[0].Usable, pipes[0].Diameter, c.want, pipes[0].Reason)
			}
		})
	}
}

func TestReadPipesDuplicateID(t *testing.T) {
	fc := mustDecode(t, collection(pipeFeature(goodProps), pipeFeature(goodProps)))
	pipes, probs, err := PipesFromCollection("pipes.geojson", fc, testSchema, 2026)
	if err != nil {
		t.Fatal(err)
	}
	probs = featureProblems(probs)
	if len(probs) != 1 || probs[0].Feature != 2 || probs[0].ID != "P-1" ||
		!strings.Contains(probs[0].What, `id "P-1" is also used by feature 1`) ||
		!strings.Contains(probs[0].Action, "ids must be unique for the ranking to be traceable") {
		t.Fatalf("problems = %+v", probs)
	}
	if !pipes[1].Usable {
		t.Error("a duplicate id must keep the pipe usable")
	}
}

// The pipes are mapped on several goroutines and repeated ids found after;
// the pipes and the problems must be those of one reader taking the
// features in order (the reference, pipeReader with a seen map): on 6,000
// features, with ids repeated within and across chunks, ids in the
// feature's id member and in a differently cased property, missing ids, and
// features with a second problem after the id's.
func TestReadPipesChunkedAsOneReader(t *testing.T) {
	var features []string
	for i := range 6000 {
		id := fmt.Sprintf(`"PIPE_ID":"P-%d"`, i%3500) // features 3500.. repeat earlier ids
		switch i % 97 {
		case 5:
			id = ""
		case 11:
			id = fmt.Sprintf(`"pipe_id":"P-%d"`, i%40) // another case: lookup matches it
		}
		props := id + `,"DIAM_IN":8,"MATL":"CI","YR":1950`
		if id == "" {
			props = props[1:]
		}
		if i%13 == 0 {
			props = strings.Replace(props, `"DIAM_IN":8`, `"DIAM_IN":"eight"`, 1)
		}
		f := pipeFeature(props)
		if i%101 == 7 {
			f = strings.Replace(f, `{"type":"Feature",`, fmt.Sprintf(`{"type":"Feature","id":"F-%d",`, i%7), 1)
			f = strings.Replace(f, `"PIPE_ID":`, `"OTHER":`, 1)
		}
		features = append(features, f)
	}
	fc := mustDecode(t, collection(features...))
	pipes, probs, err := PipesFromCollection("pipes.geojson", fc, testSchema, 2026)
	if err != nil {
		t.Fatal(err)
	}
	ref := &pipeReader{file: "pipes.geojson", s: testSchema, dUnit: hydraulics.Inch, lUnit: hydraulics.Foot, year: 2026,
		closed: []string{"closed"}, seen: map[string]int{}}
	want := make([]Pipe, len(fc.Features))
	for i, f := range fc.Features {
		ref.a = attrsOf(f.Properties)
		want[i] = ref.pipe(i+1, f)
	}
	if !reflect.DeepEqual(pipes, want) {
		t.Error("the pipes differ from one reader's")
	}
	got := featureProblems(probs)
	if !reflect.DeepEqual(got, ref.probs) {
		n := min(len(got), len(ref.probs))
		for k := range n {
			if !reflect.DeepEqual(got[k], ref.probs[k]) {
				t.Fatalf("problem %d of %d (reference %d): %+v, want %+v", k, len(got), len(ref.probs), got[k], ref.probs[k])
			}
		}
		t.Fatalf("%d problems, want %d", len(got), len(ref.probs))
	}
	dups := 0
	for _, p := range got {
		if strings.Contains(p.What, "is also used by feature") {
			dups++
		}
	}
	if dups < 2000 {
		t.Errorf("%d repeated-id problems, want the test to make more than 2,000", dups)
	}
}

// MultiLineString parts that meet end to start (or end to end, reversed)
// are joined; the length is the sum of the two PROJ geod 1 km cases.
func TestReadPipesMultiLineJoined(t *testing.T) {
	a, b := geodCases[1], geodCases[4]
	f := `{"type":"Feature","properties":{` + goodProps + `},"geometry":{"type":"MultiLineString","coordinates":[` +
		`[[-97.500000000,35.009013828],[-97.5,35]],[[-97.489045678,34.999999506],[-97.5,35.0000001]]]}}`
	pipes, probs, err := PipesFromCollection("p.geojson", mustDecode(t, collection(f)), testSchema, 2026)
	if probs = featureProblems(probs); err != nil || len(probs) != 0 {
		t.Fatalf("err %v problems %+v", err, probs)
	}
	want := a.metres + b.metres
	if got := pipes[0].Length.Metres(); math.Abs(got-want) > geodTolerance(want)+0.02 {
		t.Errorf("length %.4f m, want %.4f m", got, want)
	}
	if n := len(pipes[0].Line); n != 3 || pipes[0].Line[2][0] != -97.489045678 {
		t.Errorf("line %v, want 3 vertices ending at the reversed part's start", pipes[0].Line)
	}
}

func TestReadPipesFatal(t *testing.T) {
	dir := t.TempDir()
	missing := filepath.Join(dir, "nowhere.geojson")
	cases := []struct {
		name string
		path string // file to read; "" writes text to pipes.geojson
		text string
		s    PipeSchema
		want []string // substrings of the error text
	}{
		{"missing file", missing, "", testSchema, []string{"nowhere.geojson", "cannot read", missing, "check the config key pipes.path"}},
		{"not JSON", "", "pipe,diameter\n1,8\n", testSchema, []string{"pipes.geojson", "not a GeoJSON file"}},
		{"wrong type", "", `{"type":"Point","coordinates":[1,2]}`, testSchema, []string{"pipes.geojson", `type "Point" is not FeatureCollection or Feature`}},
		{"no features", "", `{"type":"FeatureCollection","features":[]}`, testSchema, []string{"pipes.geojson", "no features"}},
		{"field in no feature", "", collection(pipeFeature(goodProps)),
			PipeSchema{ID: "PIPE_ID", Diameter: "DIAMETER", Material: "MATL", InstallYear: "YR"},
			[]string{`pipes.geojson: field "DIAMETER": is in no feature; check the config key pipes.fields.diameter`}},
		{"required field not mapped", "", collection(pipeFeature(goodProps)),
			PipeSchema{ID: "PIPE_ID", Diameter: "DIAM_IN", InstallYear: "YR"},
			[]string{"pipes.geojson", "not mapped", "pipes.fields.material"}},
		{"no usable pipe", "", collection(pipeFeature(`"PIPE_ID":"P-9","DIAM_IN":-1,"MATL":"CI","YR":1950`)), testSchema,
			[]string{"pipes.geojson", "no usable feature", "none of 1 pipes"}},
		{"bad geometry object", "", collection(`{"type":"Feature","id":"P-7","properties":{},"geometry":{"type":"Blob","coordinates":[]}}`), testSchema,
			[]string{`pipes.geojson: feature 1 (id "P-7"): field "geometry": not a GeoJSON geometry`}},
		{"bad unit", "", collection(pipeFeature(goodProps)),
			PipeSchema{ID: "PIPE_ID", Diameter: "DIAM_IN", Material: "MATL", InstallYear: "YR", DiameterUnit: "cm"},
			[]string{"pipes.geojson", `unit "cm"`, "pipes.fields.diameter_unit"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			path := tc.path
			if path == "" {
				path = writeTemp(t, "pipes.geojson", tc.text)
			}
			_, _, err := ReadPipes(path, tc.s, 2026)
			if err == nil {
				t.Fatal("got no error")
			}
			var fe *FieldError
			if !errors.As(err, &fe) {
				t.Errorf("error %T is not a *FieldError", err)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not contain %q", err, w)
				}
			}
		})
	}
}

// The error text follows the form in STYLE.md: file: feature N (id "X"): field "F": err.
func TestFieldErrorText(t *testing.T) {
	cases := []struct {
		e    FieldError
		want string
	}{
		{FieldError{File: "pipes.geojson", Feature: 17, ID: "P-204", Field: "DIAM_IN", Err: errors.New("-6 is not > 0")},
			`pipes.geojson: feature 17 (id "P-204"): field "DIAM_IN": -6 is not > 0`},
		{FieldError{File: "pipes.geojson", Err: errors.New("no features")}, "pipes.geojson: no features"},
		{FieldError{File: "pipes.geojson", Field: "D", Err: errors.New("x")}, `pipes.geojson: field "D": x`},
		{FieldError{Feature: 3, Err: errors.New("x")}, "feature 3: x"},
	}
	for _, tc := range cases {
		if got := tc.e.Error(); got != tc.want {
			t.Errorf("got %q, want %q", got, tc.want)
		}
	}
	inner := errors.New("inner")
	if !errors.Is(&FieldError{Err: inner}, inner) {
		t.Error("Unwrap does not reach the inner error")
	}
}

// Ids: GeoJSON numbers are kept as written, so 1 stays "1" and
// 2^53 + 1 = 9007199254740993 (not representable in float64) stays exact.
func TestIDs(t *testing.T) {
	fc := mustDecode(t, collection(
		pipeFeature(`"PIPE_ID":1,"DIAM_IN":8,"MATL":"CI","YR":1950`),
		pipeFeature(`"PIPE_ID":9007199254740993,"DIAM_IN":8,"MATL":"CI","YR":1950`),
		pipeFeature(`"PIPE_ID":"A-7","DIAM_IN":8,"MATL":"CI","YR":1950`),
		`{"type":"Feature","id":42,"properties":{"DIAM_IN":8,"MATL":"CI","YR":1950},"geometry":{"type":"LineString","coordinates":[[0,0],[0,0.001]]}}`,
	))
	pipes, _, err := PipesFromCollection("p.geojson", fc, testSchema, 2026)
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"1", "9007199254740993", "A-7", "42"}
	for i, w := range want {
		if pipes[i].ID != w {
			t.Errorf("pipe %d id %q, want %q", i+1, pipes[i].ID, w)
		}
	}
}

// A bare Feature is read as a layer of one.
func TestReadBareFeature(t *testing.T) {
	path := writeTemp(t, "one.geojson", pipeFeature(goodProps))
	pipes, _, err := ReadPipes(path, testSchema, 2026)
	if err != nil {
		t.Fatal(err)
	}
	if len(pipes) != 1 || pipes[0].ID != "P-1" || !pipes[0].Usable {
		t.Errorf("pipes = %+v", pipes)
	}
}

// Case-insensitive field matching: shapefile-derived layers often upper-case names.
func TestFieldNameCase(t *testing.T) {
	s := PipeSchema{ID: "pipe_id", Diameter: "diam_in", Material: "matl", InstallYear: "yr"}
	pipes, _, err := PipesFromCollection("p.geojson", mustDecode(t, collection(pipeFeature(goodProps))), s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	if pipes[0].ID != "P-1" || pipes[0].Diameter != 8*hydraulics.Inch {
		t.Errorf("pipe = %+v", pipes[0])
	}
}

func pointFeature(props string, lon, lat float64) string {
	return `{"type":"Feature","properties":{` + props + `},"geometry":{"type":"Point","coordinates":[` +
		fmtNum(lon) + `,` + fmtNum(lat) + `]}}`
}

func TestReadPoints(t *testing.T) {
	t.Run("sources", func(t *testing.T) {
		path := writeTemp(t, "sources.geojson", collection(
			pointFeature(`"SID":"T1","NAME":"Hill Tank","HGL":"850"`, -97.5, 35),
			pointFeature(`"SID":"T2","NAME":"Low Tank","HGL":null`, -97.6, 35),
		))
		pts, probs, err := ReadSources(path, SourceSchema{ID: "SID", Name: "NAME", Grade: "HGL"})
		if err != nil {
			t.Fatal(err)
		}
		// 850 ft = 259.08 m exactly (1 ft = 0.3048 m).
		if p := pts[0]; p.ID != "T1" || p.Name != "Hill Tank" || math.Abs(p.Value-259.08) > 1e-9 || !p.Usable {
			t.Errorf("source 1 = %+v", p)
		}
		if len(probs) != 1 || probs[0].Feature != 2 || probs[0].ID != "T2" || probs[0].Field != "HGL" ||
			probs[0].What != "grade is missing" || pts[1].Usable {
			t.Errorf("problems = %+v", probs)
		}
	})
	t.Run("demands", func(t *testing.T) {
		fc := mustDecode(t, collection(
			pointFeature(`"M":"m1","Q":100`, -97.5, 35),
			pointFeature(`"M":"m2","Q":-3`, -97.5, 35),
			`{"type":"Feature","properties":{"M":"m3","Q":1},"geometry":{"type":"LineString","coordinates":[[0,0],[1,1]]}}`,
		))
		pts, probs, err := DemandsFromCollection("demands.geojson", fc, DemandSchema{ID: "M", Demand: "Q"})
		if err != nil {
			t.Fatal(err)
		}
		// 100 gpm = 100 × 3.785411784 L / 60 s (US gallon by definition).
		if math.Abs(pts[0].Value-100*3.785411784e-3/60) > 1e-15 {
			t.Errorf("demand %v m³/s", pts[0].Value)
		}
		if len(probs) != 2 || probs[0].What != "demand -3 gpm is negative" || probs[1].Field != "geometry" ||
			probs[1].What != "geometry is LineString, want Point" {
			t.Errorf("problems = %+v", probs)
		}
	})
	t.Run("elevations", func(t *testing.T) {
		fc := mustDecode(t, collection(
			pointFeature(`"Z":"312.5"`, -97.5, 35),
			pointFeature(`"Z":-9999`, -97.5, 35),
		))
		pts, probs, err := ElevationsFromCollection("elev.geojson", fc, ElevationSchema{Elevation: "Z", ElevationUnit: "m"})
		if err != nil {
			t.Fatal(err)
		}
		if pts[0].Value != 312.5 || pts[1].Usable || len(probs) != 1 || !strings.Contains(probs[0].What, "no-data") {
			t.Errorf("points %+v problems %+v", pts, probs)
		}
	})
	t.Run("grade field in no feature", func(t *testing.T) {
		fc := mustDecode(t, collection(pointFeature(`"HGL":850`, -97.5, 35)))
		_, _, err := SourcesFromCollection("sources.geojson", fc, SourceSchema{Grade: "HEAD"})
		if err == nil || err.Error() != `sources.geojson: field "HEAD": is in no feature; check the config key sources.fields.grade` {
			t.Errorf("err = %v", err)
		}
	})
}

// A point layer is read on several goroutines; its problems are listed as
// one reader taking the points in order lists them: a repeated id first
// among its feature's problems, then the rest (here the expected list is
// written out independently of the reader).
func TestReadPointsChunkedProblemOrder(t *testing.T) {
	const n, distinct = 5000, 3000
	var features []string
	type want struct {
		feature int
		what    string
	}
	var wants []want
	for i := range n {
		q := 10
		if i%13 == 0 {
			q = -3
		}
		features = append(features, pointFeature(fmt.Sprintf(`"M":"m-%d","Q":%d`, i%distinct, q), -97.5, 35))
		if i >= distinct {
			wants = append(wants, want{i + 1, fmt.Sprintf(`id "m-%d" is also used by feature %d`, i%distinct, i%distinct+1)})
		}
		if q < 0 {
			wants = append(wants, want{i + 1, "demand -3 gpm is negative"})
		}
	}
	_, probs, err := DemandsFromCollection("demands.geojson", mustDecode(t, collection(features...)), DemandSchema{ID: "M", Demand: "Q"})
	if err != nil {
		t.Fatal(err)
	}
	probs = featureProblems(probs)
	if len(probs) != len(wants) {
		t.Fatalf("%d problems, want %d", len(probs), len(wants))
	}
	for k, w := range wants {
		if probs[k].Feature != w.feature || probs[k].What != w.what {
			t.Fatalf("problem %d: feature %d %q, want feature %d %q", k, probs[k].Feature, probs[k].What, w.feature, w.what)
		}
	}
}

// Numeric property values may come as numbers or numeric strings.
func TestNumber(t *testing.T) {
	cases := []struct {
		in   any
		want float64
		ok   bool
	}{
		{"8", 8, true}, {" 8.5 ", 8.5, true}, {float64(6), 6, true}, {"eight", 0, false},
		{"NaN", 0, false}, {"Inf", 0, false}, {true, 0, false},
	}
	for _, tc := range cases {
		got, err := number(tc.in)
		if (err == nil) != tc.ok || (tc.ok && got != tc.want) {
			t.Errorf("number(%#v) = %v, %v; want %v ok=%v", tc.in, got, err, tc.want, tc.ok)
		}
	}
	if _, err := number(""); err != errMissing {
		t.Errorf("blank: %v, want errMissing", err)
	}
}

// The old GeoJSON "crs" member: lon/lat WGS84 or NAD83 names are accepted,
// a projected system (here EPSG:2229, State Plane in US feet) is refused.
func TestReadCRS(t *testing.T) {
	cases := []struct {
		name, crs string
		ok        bool
	}{
		{"CRS84", "urn:ogc:def:crs:OGC:1.3:CRS84", true},
		{"EPSG 4326", "EPSG:4326", true},
		{"NAD83 geographic", "urn:ogc:def:crs:EPSG::4269", true},
		{"State Plane", "urn:ogc:def:crs:EPSG::2229", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			text := `{"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"` + tc.crs + `"}},"features":[` + pipeFeature(goodProps) + `]}`
			_, _, err := PipesFromCollection("pipes.geojson", mustDecode(t, text), testSchema, 2026)
			if (err == nil) != tc.ok {
				t.Fatalf("err = %v, want ok=%v", err, tc.ok)
			}
			if err != nil && !strings.Contains(err.Error(), `pipes.geojson: field "crs": coordinate system urn:ogc:def:crs:EPSG::2229 is not lon/lat WGS84`) {
				t.Errorf("err = %v", err)
			}
		})
	}
}

// FuzzReadPipes: any input gives an error or pipes, never a panic, and every
// usable pipe has a line of at least two distinct vertices and a diameter > 0.
func FuzzReadPipes(f *testing.F) {
	f.Add(collection(pipeFeature(goodProps)))
	f.Add(pipeFeature(`"PIPE_ID":1,"DIAM_IN":"8","MATL":null,"YR":"x"`))
	f.Add(`{"type":"FeatureCollection","features":[{"type":"Feature","properties":null,"geometry":{"type":"MultiLineString","coordinates":[[],[[0,0]]]}}]}`)
	f.Add(`{"type":"FeatureCollection","features":{}}`)
	f.Fuzz(func(t *testing.T, text string) {
		fc, err := decodeCollection(strings.NewReader(text), "f.geojson")
		if err != nil {
			return
		}
		pipes, _, err := PipesFromCollection("f.geojson", fc, testSchema, 2026)
		if err != nil {
			return
		}
		for _, p := range pipes {
			if p.Usable && (distinctVertices(p.Line) < 2 || p.Diameter <= 0) {
				t.Errorf("usable pipe %+v", p)
			}
		}
		Snap(pipes, halfFoot)
	})
}
