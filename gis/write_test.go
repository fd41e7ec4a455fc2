package gis

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

func testLayer() *Layer {
	return &Layer{
		Name: "pipes",
		Columns: []Column{
			{Name: "id", Kind: String}, {Name: "rank", Kind: Integer}, {Name: "headloss_ft_per_kft", Kind: Real, Decimals: 3},
			{Name: "closed", Kind: String}, {Name: "note", Kind: String},
		},
		Rows: []Row{
			{Geometry: orb.LineString{{-97.123456789012345, 35.1}, {-97.2, 35.000000000000004}},
				Values: []any{"P-1", 1, 12.34567, false, `has "quotes", commas`}},
			{Geometry: nil, Values: []any{"P-2", 2, math.NaN(), true, nil}},
			{Geometry: orb.Point{1e-7, -45}, Values: []any{"Ünïcode <&>", int64(3), math.Inf(1), nil, "line\nbreak"}},
		},
	}
}

func TestWriteGeoJSON(t *testing.T) {
	path := filepath.Join(t.TempDir(), "pipes.geojson")
	if err := WriteGeoJSON(path, testLayer()); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	// encoding/json reads it, with properties in column order on each line.
	var doc struct {
		Type     string
		Features []struct {
			Type       string
			Properties map[string]any
			Geometry   json.RawMessage
		}
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatalf("encoding/json: %v\n%s", err, b)
	}
	if doc.Type != "FeatureCollection" || len(doc.Features) != 3 {
		t.Fatalf("type %q, %d features", doc.Type, len(doc.Features))
	}
	f1 := doc.Features[1].Properties
	if f1["headloss_ft_per_kft"] != nil || f1["note"] != nil || f1["closed"] != true || string(doc.Features[1].Geometry) != "null" {
		t.Errorf("feature 2: NaN and nil must be null, geometry null: %v %s", f1, doc.Features[1].Geometry)
	}
	if got := doc.Features[0].Properties["headloss_ft_per_kft"]; got != 12.346 {
		t.Errorf("3 decimals: got %v, want 12.346", got)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(lines) != 5 || !strings.HasPrefix(lines[1], `{"type":"Feature","properties":{"id":"P-1","rank":1,"headloss_ft_per_kft":12.346,`) {
		t.Errorf("layout (one feature per line, column order):\n%s", b)
	}
	// orb reads it back and coordinates round-trip exactly (shortest 'g' form).
	fc, err := geojson.UnmarshalFeatureCollection(b)
	if err != nil {
		t.Fatalf("orb: %v", err)
	}
	if !reflect.DeepEqual(fc.Features[0].Geometry, testLayer().Rows[0].Geometry) ||
		!reflect.DeepEqual(fc.Features[2].Geometry, testLayer().Rows[2].Geometry) {
		t.Errorf("geometry did not round-trip: %v %v", fc.Features[0].Geometry, fc.Features[2].Geometry)
	}
	if fc.Features[2].Properties["id"] != "Ünïcode <&>" || fc.Features[2].Properties["note"] != "line\nbreak" {
		t.Errorf("strings: %v", fc.Features[2].Properties)
	}
	// Deterministic bytes.
	path2 := filepath.Join(t.TempDir(), "again.geojson")
	if err := WriteGeoJSON(path2, testLayer()); err != nil {
		t.Fatal(err)
	}
	if b2, _ := os.ReadFile(path2); !bytes.Equal(b, b2) {
		t.Error("two writes differ")
	}
}

func TestWriteGeoJSONEmptyAndErrors(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "empty.geojson")
	if err := WriteGeoJSON(path, &Layer{Name: "empty", Columns: []Column{{Name: "a"}}}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	if _, err := geojson.UnmarshalFeatureCollection(b); err != nil {
		t.Errorf("empty layer: %v\n%s", err, b)
	}
	bad := []*Layer{
		{Columns: []Column{{Name: "a"}}, Rows: []Row{{Values: []any{1, 2}}}},
		{Columns: []Column{{Name: "a"}}, Rows: []Row{{Values: []any{struct{}{}}}}},
		{Columns: []Column{{Name: "a"}}, Rows: []Row{{Geometry: orb.Point{math.NaN(), 0}, Values: []any{1}}}},
	}
	for i, l := range bad {
		p := filepath.Join(dir, "bad.geojson")
		if err := WriteGeoJSON(p, l); err == nil {
			t.Errorf("bad layer %d: no error", i)
		}
		if _, err := os.Stat(p); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("bad layer %d: a file was left at the path", i)
		}
	}
	assertNoTemp(t, dir)
}

func TestWriteCSV(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ranked.csv")
	if err := WriteCSV(path, testLayer()); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{
		{"id", "rank", "headloss_ft_per_kft", "closed", "note"},
		{"P-1", "1", "12.346", "false", `has "quotes", commas`},
		{"P-2", "2", "", "true", ""},
		{"Ünïcode <&>", "3", "", "", "line\nbreak"},
	}
	if !reflect.DeepEqual(recs, want) {
		t.Errorf("got %q\nwant %q", recs, want)
	}
}

// Reals: fixed decimals, no "-0.00"; Integer columns round floats.
func TestFormatValue(t *testing.T) {
	cases := []struct {
		c    Column
		v    any
		want string
	}{
		{Column{Kind: Real, Decimals: 2}, -0.001, "0.00"},
		{Column{Kind: Real, Decimals: 2}, 2.675, "2.67"}, // 2.675 is 2.67499999… in binary
		{Column{Kind: Real, Decimals: -1}, 0.1, "0.1"},
		{Column{Kind: Integer}, 7.6, "8"},
		{Column{Kind: Integer}, uint64(1 << 63), "9223372036854775808"},
	}
	for _, tc := range cases {
		got, _, err := formatValue(nil, tc.c, tc.v)
		if err != nil || string(got) != tc.want {
			t.Errorf("%v %v: got %q %v, want %q", tc.c, tc.v, got, err, tc.want)
		}
	}
}

func assertNoTemp(t *testing.T, dir string) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp-") {
			t.Errorf("temporary file left: %s", e.Name())
		}
	}
}

func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.csv")
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := io.WriteString(w, "old\n"); return err }); err != nil {
		t.Fatal(err)
	}
	// A write that fails half-way leaves the old file intact and no temp file.
	boom := errors.New("disk on fire")
	err := WriteFileAtomic(path, func(w io.Writer) error {
		io.WriteString(w, "partial new content")
		return boom
	})
	if !errors.Is(err, boom) {
		t.Errorf("err = %v, want it to wrap the write error", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "old\n" {
		t.Errorf("file is %q after a failed write, want the old content", b)
	}
	// A failed first write leaves no file at all.
	fresh := filepath.Join(dir, "fresh.csv")
	WriteFileAtomic(fresh, func(w io.Writer) error { io.WriteString(w, "x"); return boom })
	if _, err := os.Stat(fresh); !errors.Is(err, os.ErrNotExist) {
		t.Error("a partial file was left")
	}
	assertNoTemp(t, dir)
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, err %v", fi.Mode(), err)
	}
	if err := WriteFileAtomic(filepath.Join(dir, "no", "such", "dir.csv"), func(io.Writer) error { return nil }); err == nil {
		t.Error("missing directory: want an error")
	}
}

// WriteCollection → ReadCollection keeps coordinates and numbers exactly.
func TestWriteCollectionRoundTrip(t *testing.T) {
	text := `{"type":"FeatureCollection","name":"demo","features":[
{"type":"Feature","id":9007199254740993,"properties":{"DIAM_IN":8,"C":"1.10","LEN":0.1},"geometry":{"type":"LineString","coordinates":[[-97.12345678901234,35.1],[-97.2,35.000000000000004]]}},
{"type":"Feature","properties":{"Z":-3.5e-7},"geometry":{"type":"Point","coordinates":[1e-7,-45]}}]}`
	fc := mustDecode(t, text)
	path := filepath.Join(t.TempDir(), "demo.geojson")
	if err := WriteCollection(path, fc); err != nil {
		t.Fatal(err)
	}
	back, err := ReadCollection(path, "pipes")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back, fc) {
		t.Errorf("round trip differs:\n%+v\n%+v", back.Features[0], fc.Features[0])
	}
	if idString(back.Features[0].ID) != "9007199254740993" || back.ExtraMembers["name"] != "demo" {
		t.Errorf("id %v, members %v", back.Features[0].ID, back.ExtraMembers)
	}
}

// ogrinfo (GDAL) must read a written layer: feature count and a field name.
func TestWriteGeoJSONOgrinfo(t *testing.T) {
	ogr := requireTool(t, "ogrinfo")
	path := filepath.Join(t.TempDir(), "pipes.geojson")
	if err := WriteGeoJSON(path, testLayer()); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(ogr, "-ro", "-al", "-so", path).CombinedOutput()
	if err != nil {
		t.Fatalf("ogrinfo: %v\n%s", err, out)
	}
	s := string(out)
	for _, want := range []string{"Feature Count: 3", "headloss_ft_per_kft: Real", "rank: Integer"} {
		if !strings.Contains(s, want) {
			t.Errorf("ogrinfo output lacks %q:\n%s", want, s)
		}
	}
}

// csvInjectionLayer holds one hostile or harmless id per row, beside typed
// numbers that must never be altered.
func csvInjectionLayer(ids []string) *Layer {
	l := &Layer{Name: "ranked", Columns: []Column{
		{Name: "id", Kind: String}, {Name: "=cmd|' /C calc'!A0", Kind: String},
		{Name: "delta_ft", Kind: Real, Decimals: 1}, {Name: "tiny", Kind: Real, Decimals: -1},
		{Name: "rank", Kind: Integer}, {Name: "as_text", Kind: Real, Decimals: 1},
	}}
	for _, id := range ids {
		l.Rows = append(l.Rows, Row{Values: []any{id, "CI", -12.5, -1e-7, -3, "-2.5"}})
	}
	return l
}

// Text that a spreadsheet would evaluate gets a leading single quote; plain
// numbers and ordinary text are left alone. The trigger characters and the
// quote prefix are the OWASP "CSV Injection" guidance (= + - @ tab CR).
func TestWriteCSVFormulaInjection(t *testing.T) {
	cases := []struct {
		name, id, want string
	}{
		{"hyperlink", `=HYPERLINK("http://x","y")`, `'=HYPERLINK("http://x","y")`},
		{"plus formula", "+1+1", "'+1+1"},
		{"minus formula", "-2+3", "'-2+3"},
		{"at function", "@SUM(A1)", "'@SUM(A1)"},
		{"tab then formula", "\t=1", "'\t=1"},
		{"carriage return then formula", "\r=1", "'\r=1"},
		{"lone minus", "-", "'-"},
		{"exponent with sign is not plain", "-1e3", "'-1e3"},
		{"negative decimal", "-12.5", "-12.5"},
		{"signed integer", "+3", "+3"},
		{"leading point", "-.5", "-.5"},
		{"exponent without sign", "1e3", "1e3"},
		{"ordinary id", "QM-001", "QM-001"},
		{"empty", "", ""},
		{"formula later in the text", "P=1", "P=1"},
		{"unicode", "Ünïcode", "Ünïcode"},
	}
	ids := make([]string, len(cases))
	for i, tc := range cases {
		ids[i] = tc.id
	}
	path := filepath.Join(t.TempDir(), "ranked.csv")
	if err := WriteCSV(path, csvInjectionLayer(ids)); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll() // the round trip: encoding/csv sees the quote
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != len(cases)+1 {
		t.Fatalf("got %d records, want %d", len(recs), len(cases)+1)
	}
	wantHeader := []string{"id", "'=cmd|' /C calc'!A0", "delta_ft", "tiny", "rank", "as_text"}
	if !reflect.DeepEqual(recs[0], wantHeader) {
		t.Errorf("header: got %q, want %q", recs[0], wantHeader)
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rec := recs[i+1]
			if rec[0] != tc.want {
				t.Errorf("id %q: got %q, want %q", tc.id, rec[0], tc.want)
			}
			// Typed numbers are written as they always were, also in 'g'
			// form; a numeric string in plain decimal form is unchanged.
			if want := []string{"CI", "-12.5", "-1e-07", "-3", "-2.5"}; !reflect.DeepEqual(rec[1:], want) {
				t.Errorf("other fields: got %q, want %q", rec[1:], want)
			}
		})
	}
}

// GeoJSON is data for GIS programs, not a spreadsheet: its text is written
// exactly as given.
func TestWriteGeoJSONKeepsFormulaText(t *testing.T) {
	ids := []string{`=HYPERLINK("http://x","y")`, "+1+1", "-2+3", "@SUM(A1)", "\t=1", "\r=1"}
	path := filepath.Join(t.TempDir(), "pipes.geojson")
	if err := WriteGeoJSON(path, csvInjectionLayer(ids)); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Features []struct{ Properties map[string]any }
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Features) != len(ids) {
		t.Fatalf("got %d features, want %d", len(doc.Features), len(ids))
	}
	for i, id := range ids {
		if got := doc.Features[i].Properties["id"]; got != id {
			t.Errorf("feature %d: id %q, want %q unchanged", i+1, got, id)
		}
		if _, ok := doc.Features[i].Properties["=cmd|' /C calc'!A0"]; !ok {
			t.Errorf("feature %d: property name changed: %v", i+1, doc.Features[i].Properties)
		}
	}
}

// Every plain decimal is a number to strconv.ParseFloat, the reference
// parser here; the reverse does not hold (exponents, "Inf", hex floats).
func TestIsPlainDecimal(t *testing.T) {
	cases := []struct {
		s    string
		want bool
	}{
		{"-12.5", true}, {"+3", true}, {"0", true}, {"-.5", true}, {"7.", true},
		{"", false}, {"-", false}, {".", false}, {"-.", false}, {"1.2.3", false},
		{"1e3", false}, {"-1e3", false}, {"1,000", false}, {" 1", false}, {"+-1", false},
		{"-Inf", false}, {"NaN", false}, {"0x1p3", false}, {"١٢", false},
	}
	for _, tc := range cases {
		t.Run(tc.s, func(t *testing.T) {
			if got := isPlainDecimal(tc.s); got != tc.want {
				t.Errorf("isPlainDecimal(%q) = %v, want %v", tc.s, got, tc.want)
			}
			if tc.want {
				if _, err := strconv.ParseFloat(tc.s, 64); err != nil {
					t.Errorf("%q is plain but ParseFloat rejects it: %v", tc.s, err)
				}
			}
		})
	}
}

// FuzzWriteCSVText writes any text as a CSV field and reads it back with
// encoding/csv: the field must come back as the text itself or as the text
// behind one single quote, and must never start with a formula character
// unless it is a plain decimal number (which ParseFloat must accept).
func FuzzWriteCSVText(f *testing.F) {
	for _, s := range []string{`=HYPERLINK("http://x","y")`, "+1+1", "-2+3", "@SUM(A1)", "\t=1", "\r=1", "-12.5", "QM-001", "", "a,b\n\"c\""} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		l := &Layer{Columns: []Column{{Name: "id", Kind: String}, {Name: "n", Kind: Integer}},
			Rows: []Row{{Values: []any{s, -1}}}}
		var b bytes.Buffer // writeCSV is WriteCSV without the file
		if err := writeCSV(&b, l); err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(bytes.NewReader(b.Bytes())).ReadAll()
		if err != nil {
			t.Fatalf("encoding/csv cannot read what WriteCSV wrote: %v\n%q", err, b.Bytes())
		}
		if len(recs) != 2 || len(recs[1]) != 2 || recs[1][1] != "-1" {
			t.Fatalf("records %q", recs)
		}
		got := recs[1][0]
		// encoding/csv reads a quoted \r\n as \n (RFC 4180 line breaks).
		want := strings.ReplaceAll(s, "\r\n", "\n")
		if got != want && got != "'"+want {
			t.Fatalf("text %q came back as %q", s, got)
		}
		if got != "" && strings.ContainsRune("=+-@\t\r", rune(got[0])) {
			if _, err := strconv.ParseFloat(got, 64); err != nil {
				t.Fatalf("text %q is written as %q, which a spreadsheet evaluates", s, got)
			}
		}
	})
}

// TestPackedAndViewLayers: a packed layer (PackLayer) and views of it
// (View: rows picked and reordered, columns reordered, geometry changed)
// write to CSV, GeoJSON, GeoPackage and shapefile the same bytes as plain
// layers holding the same rows copied, value types included. The rows span
// three chunks; one column changes type within a chunk (int, then
// float64, then int64), which packs it as mixed values; the ids are too
// many to number and are kept as strings, the grades are numbered.
func TestPackedAndViewLayers(t *testing.T) {
	cols := []Column{{Name: "id", Kind: String}, {Name: "x", Kind: Real, Decimals: 2},
		{Name: "rank", Kind: Integer}, {Name: "n", Kind: Real, Decimals: 1}, {Name: "ok", Kind: String},
		{Name: "grade", Kind: String}}
	n := 2*packedChunkRows + 100
	row := func(i int) Row {
		v := []any{fmt.Sprintf("P%05d", i), float64(i) / 3, n - i, nil, nil, []any{"A", "B", nil}[i%3]}
		switch {
		case i%7 == 0:
			v[1] = nil // nulls among floats
		case i == packedChunkRows+5:
			v[0] = nil
		}
		switch {
		case i > packedChunkRows+10 && i%2 == 0:
			v[3] = float64(i) + 0.25
		case i > packedChunkRows+10:
			v[3] = int64(i)
		case i%3 == 0:
			v[3] = i
		}
		if i%5 != 0 {
			v[4] = i%2 == 0
		}
		return Row{Geometry: orb.LineString{{float64(i) / 1000, 1}, {float64(i)/1000 + 0.001, 1.001}}, Values: v}
	}
	plain := &Layer{Name: "t", Columns: cols}
	for i := range n {
		plain.Rows = append(plain.Rows, row(i))
	}
	packed := PackLayer("t", cols, n, func(i int, v []any) orb.Geometry {
		r := row(i)
		copy(v, r.Values)
		return r.Geometry
	})
	if packed.Len() != n || packed.Rows != nil {
		t.Fatalf("packed layer: %d rows, Rows %v", packed.Len(), packed.Rows != nil)
	}
	rd := packed.Reader()
	for i := range n {
		if got := rd.Row(i); !reflect.DeepEqual(got, plain.Rows[i]) {
			t.Fatalf("packed row %d = %#v, want %#v", i, got, plain.Rows[i])
		}
	}
	compareWrites(t, "packed", packed, plain)

	picked := []int{5, 0, n - 1, packedChunkRows, 7}
	order := []int{2, 0, 1, 3, 4, 5}
	shift := func(g orb.Geometry) orb.Geometry {
		ls := g.(orb.LineString)
		return orb.LineString{{ls[0][0] + 1, ls[0][1]}, {ls[1][0] + 1, ls[1][1]}}
	}
	view := packed.View("t", picked, order, shift)
	copied := &Layer{Name: "t", Columns: []Column{cols[2], cols[0], cols[1], cols[3], cols[4], cols[5]}}
	for _, i := range picked {
		r := row(i)
		v := make([]any, len(order))
		for k, at := range order {
			v[k] = r.Values[at]
		}
		copied.Rows = append(copied.Rows, Row{Geometry: shift(r.Geometry), Values: v})
	}
	compareWrites(t, "view", view, copied)
	sameCells(t, "packed", packed, plain)
	sameCells(t, "view", view, copied)
	compareWrites(t, "view of all rows", plain.View("t", nil, nil, nil), plain)
}

// sameCells fails unless RowReader.Value and Geometry of a give b's rows,
// cell by cell.
func sameCells(t *testing.T, what string, a, b *Layer) {
	t.Helper()
	rd := a.Reader()
	for i, r := range b.Rows {
		if g := rd.Geometry(i); !reflect.DeepEqual(g, r.Geometry) {
			t.Fatalf("%s row %d: geometry %v, want %v", what, i, g, r.Geometry)
		}
		for k, want := range r.Values {
			if got := rd.Value(i, k); !reflect.DeepEqual(got, want) {
				t.Fatalf("%s row %d column %d: %#v, want %#v", what, i, k, got, want)
			}
		}
	}
}

// compareWrites writes a and b in every format and fails unless each pair
// of files is byte-identical.
func compareWrites(t *testing.T, what string, a, b *Layer) {
	t.Helper()
	dir := t.TempDir()
	for _, side := range []struct {
		name string
		l    *Layer
	}{{"a", a}, {"b", b}} {
		p := filepath.Join(dir, side.name)
		if err := WriteCSV(p+".csv", side.l); err != nil {
			t.Fatal(err)
		}
		if err := WriteGeoJSON(p+".geojson", side.l); err != nil {
			t.Fatal(err)
		}
		if err := WriteGeoPackage(p+".gpkg", SpatialRef{ID: 4326}, side.l); err != nil {
			t.Fatal(err)
		}
		if _, err := WriteShapefile(p+".shp", side.l, ""); err != nil {
			t.Fatal(err)
		}
	}
	for _, ext := range []string{".csv", ".geojson", ".gpkg", ".shp", ".shx", ".dbf"} {
		ga, errA := os.ReadFile(filepath.Join(dir, "a"+ext))
		gb, errB := os.ReadFile(filepath.Join(dir, "b"+ext))
		if errA != nil || errB != nil {
			t.Fatalf("%s %s: %v %v", what, ext, errA, errB)
		}
		if !bytes.Equal(ga, gb) {
			t.Errorf("%s: %s differs from the plain layer's (%d and %d bytes)", what, ext, len(ga), len(gb))
		}
	}
}
