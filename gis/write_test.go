package gis

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
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
