package gis

import (
	"bytes"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/paulmach/orb/geojson"
)

// lookupInMap is the property lookup every reader used while properties
// were maps, kept here as the reference for Attrs.Lookup: exactly, or else
// the one property whose name matches case-insensitively.
func lookupInMap(p geojson.Properties, name string) (any, string, bool) {
	if name == "" {
		return nil, "", false
	}
	if v, ok := p[name]; ok {
		return v, name, true
	}
	match, n := "", 0
	for k := range p {
		if strings.EqualFold(k, name) {
			match, n = k, n+1
		}
	}
	if n == 1 {
		return p[match], match, true
	}
	return nil, "", false
}

// TestAttrsLookupAsMap: Attrs.Lookup and Get give what the map lookup gave,
// for exact names, other cases, names two properties match without regard
// to case, JSON nulls, absent names and the empty name.
func TestAttrsLookupAsMap(t *testing.T) {
	props := []geojson.Properties{
		{},
		{"PIPE_ID": "P-1", "diam_in": 8, "Note": nil},
		{"zone": "A", "ZONE": "B", "Zone": "C", "status": "open"},
		{"Ñame": "x", "ñame": "y", "id": "7"},
	}
	names := []string{"", "PIPE_ID", "pipe_id", "DIAM_IN", "note", "Note", "zone", "ZONE", "zOnE", "Status", "ñame", "ÑAME", "missing", "ID"}
	for k, p := range props {
		a := attrsOf(p)
		if a.Len() != len(p) || !reflect.DeepEqual(a.Map(), p) {
			t.Fatalf("properties %d: attrs %v, want %v", k, a.Map(), p)
		}
		for _, name := range names {
			v, found, ok := a.Lookup(name)
			wv, wfound, wok := lookupInMap(p, name)
			if ok != wok || found != wfound || !reflect.DeepEqual(v, wv) {
				t.Errorf("properties %d, %q: got %v %q %v, want %v %q %v", k, name, v, found, ok, wv, wfound, wok)
			}
			gv, gok := a.Get(name)
			mv, mok := p[name]
			if gok != mok || !reflect.DeepEqual(gv, mv) {
				t.Errorf("properties %d, Get %q: got %v %v, want %v %v", k, name, gv, gok, mv, mok)
			}
		}
	}
}

// TestOpenLayerAttrsAsReference: the properties a layer opens with are
// those of the reference readers, feature by feature: encoding/json
// (decodeCollectionStd) for GeoJSON, including a repeated name (its last
// value wins), "properties": null and no properties member; ReadShapefile
// and ReadGeoPackage, whose maps the layer takes over, for the others.
// Features listing the same names share one slice of them.
func TestOpenLayerAttrsAsReference(t *testing.T) {
	dir := t.TempDir()
	odd := filepath.Join(dir, "odd.geojson")
	oddJSON := `{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"a":1,"b":"x"},"geometry":null},
{"type":"Feature","properties":{"a":2,"b":"y"},"geometry":null},
{"type":"Feature","properties":{"a":3,"a":4},"geometry":null},
{"type":"Feature","properties":null,"geometry":null},
{"type":"Feature","geometry":null},
{"type":"Feature","properties":{"b":"z","a":5,"c\u00e9":true},"geometry":null}]}`
	if err := os.WriteFile(odd, []byte(oddJSON), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{odd, "testdata/shp/pipes.geojson", "testdata/gpkg/mains.geojson", "testdata/gpkg/hydrants.geojson"} {
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		want, err := decodeCollectionStd(bytes.NewReader(data), filepath.Base(path))
		if err != nil {
			t.Fatal(err)
		}
		c, err := OpenLayer(path, OpenOptions{Key: "test"})
		if err != nil {
			t.Fatal(err)
		}
		if c.attrs == nil {
			t.Fatalf("%s: opened with the properties in maps", path)
		}
		checkAttrs(t, path, c, want.Features)
	}
	c, err := OpenLayer(odd, OpenOptions{Key: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if &c.attrs[0].names[0] != &c.attrs[1].names[0] {
		t.Error("two features with the same names keep a slice each")
	}
	references := []struct {
		path string
		read func(string) (*geojson.FeatureCollection, error)
	}{
		{"testdata/shp/pipes_2229.shp", func(p string) (*geojson.FeatureCollection, error) {
			l, err := ReadShapefile(p)
			if err != nil {
				return nil, err
			}
			return l.Features, nil
		}},
		{"testdata/gpkg/mains_2229.gpkg", func(p string) (*geojson.FeatureCollection, error) {
			l, err := ReadGeoPackage(p, "")
			if err != nil {
				return nil, err
			}
			return l.Features, nil
		}},
	}
	for _, ref := range references {
		want, err := ref.read(ref.path)
		if err != nil {
			t.Fatal(err)
		}
		c, err := OpenLayer(ref.path, OpenOptions{Key: "test"})
		if err != nil {
			t.Fatal(err)
		}
		checkAttrs(t, ref.path, c, want.Features)
	}
}

func checkAttrs(t *testing.T, name string, c *Collection, want []*geojson.Feature) {
	t.Helper()
	if len(c.Features.Features) != len(want) || len(want) == 0 {
		t.Fatalf("%s: %d features, reference %d", name, len(c.Features.Features), len(want))
	}
	for i, f := range want {
		a := c.Attrs(i)
		if got := a.Map(); !reflect.DeepEqual(got, f.Properties) || a.Len() != len(f.Properties) {
			t.Errorf("%s: feature %d: %d properties %v, reference %v", name, i+1, a.Len(), got, f.Properties)
		}
		for k, v := range f.Properties {
			if got, ok := a.Get(k); !ok || !reflect.DeepEqual(got, v) {
				t.Errorf("%s: feature %d: %s is %v, reference %v", name, i+1, k, got, v)
			}
		}
		if c.Features.Features[i].Properties != nil {
			t.Errorf("%s: feature %d keeps a map as well", name, i+1)
		}
	}
}
