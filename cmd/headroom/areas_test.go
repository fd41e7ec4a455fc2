package main

import (
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/hydraulics"
)

// The area fixture: the invented hamlet of Fernwick (lon −97.2, lat 41.3),
// four nodes and three 8-in mains whose lengths come from a field so that
// the connected lengths are exact:
//
//	A ──P1 1000 ft── B ──P2 500 ft── C
//	                 │
//	                 P3 800 ft
//	                 │
//	                 D
//
// A is the source. Z-1 covers B and C, Z-2 covers D, and Z-3 lies east of
// every pipe.
var (
	areaNodeA = orb.Point{-97.2000, 41.3000}
	areaNodeB = orb.Point{-97.1960, 41.3000}
	areaNodeC = orb.Point{-97.1940, 41.3000}
	areaNodeD = orb.Point{-97.1960, 41.3030}
)

const areaConfig = `units = "us"
analysis_year = 2026

[pipes]
path = "mains.geojson"

[pipes.fields]
id = "main"
diameter = "dia_in"
material = "mat"
install_year = "laid"
length = "len_ft"
length_unit = "ft"

[sources]
path = "supply.geojson"

[sources.fields]
id = "name"
grade = "hgl_ft"

[demands]
path = "areas.geojson"
peak_hour_factor = 2.5
allocation = "areas"

[demands.fields]
id = "zone"
demand = "total_gpm"

[elevations]
path = "spots.geojson"

[elevations.fields]
elevation = "z_ft"

[fire_flow]
enabled = false
`

// areaBox is a closed rectangular ring from (lon0, lat0) to (lon1, lat1).
func areaBox(lon0, lat0, lon1, lat1 float64) orb.Polygon {
	return orb.Polygon{{{lon0, lat0}, {lon1, lat0}, {lon1, lat1}, {lon0, lat1}, {lon0, lat0}}}
}

// areaFixture writes the Fernwick layers and config into a new folder and
// returns the config's path.
func areaFixture(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	mains := geojson.NewFeatureCollection()
	for _, m := range []struct {
		id     string
		a, b   orb.Point
		length float64
	}{{"P1", areaNodeA, areaNodeB, 1000}, {"P2", areaNodeB, areaNodeC, 500}, {"P3", areaNodeB, areaNodeD, 800}} {
		f := geojson.NewFeature(orb.LineString{m.a, m.b})
		f.Properties = geojson.Properties{"main": m.id, "dia_in": 8, "mat": "PVC", "laid": 2000, "len_ft": m.length}
		mains.Append(f)
	}
	supply := geojson.NewFeatureCollection()
	s := geojson.NewFeature(areaNodeA)
	s.Properties = geojson.Properties{"name": "Fernwick standpipe", "hgl_ft": 300}
	supply.Append(s)
	areas := geojson.NewFeatureCollection()
	for _, a := range []struct {
		id    string
		poly  orb.Polygon
		total float64
	}{
		{"Z-1", areaBox(-97.1975, 41.2990, -97.1930, 41.3010), 100},
		{"Z-2", areaBox(-97.1970, 41.3020, -97.1950, 41.3040), 40},
		{"Z-3", areaBox(-97.1900, 41.2995, -97.1890, 41.3005), 10},
	} {
		f := geojson.NewFeature(a.poly)
		f.Properties = geojson.Properties{"zone": a.id, "total_gpm": a.total}
		areas.Append(f)
	}
	spots := geojson.NewFeatureCollection()
	for _, p := range []orb.Point{areaNodeA, areaNodeB, areaNodeC, areaNodeD} {
		f := geojson.NewFeature(p)
		f.Properties = geojson.Properties{"z_ft": 100}
		spots.Append(f)
	}
	writeCollections(t, dir, map[string]*geojson.FeatureCollection{
		"mains.geojson": mains, "supply.geojson": supply, "areas.geojson": areas, "spots.geojson": spots,
	})
	path := filepath.Join(dir, "headroom.toml")
	writeFile(t, path, areaConfig)
	return path
}

// areaNodeAt returns the network node at a fixture position.
func areaNodeAt(t *testing.T, r *result, at orb.Point) int {
	t.Helper()
	for k, n := range r.topo.Nodes {
		if math.Abs(n.At[0]-at[0]) < 1e-9 && math.Abs(n.At[1]-at[1]) < 1e-9 {
			return k
		}
	}
	t.Fatalf("no node at %v", at)
	return -1
}

func TestAreaDemandsByConnectedLength(t *testing.T) {
	r := analyseConfig(t, areaFixture(t))
	// Connected length, computed by hand: half of each main at each end.
	// B: ½(1000 + 500 + 800) = 1150 ft, C: ½·500 = 250 ft, D: ½·800 = 400 ft.
	// Z-1 (100 gpm) covers B and C: B 100·1150/1400, C 100·250/1400.
	// Z-2 (40 gpm) covers D alone. Z-3 (10 gpm) has no junction inside and
	// goes whole to the junction nearest its centroid, C (gis.AllocateAreaDemands).
	for _, tc := range []struct {
		name string
		at   orb.Point
		gpm  float64
	}{
		{"source A takes none", areaNodeA, 0},
		{"B", areaNodeB, 100 * 1150.0 / 1400},
		{"C with Z-3", areaNodeC, 100*250.0/1400 + 10},
		{"D", areaNodeD, 40},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := r.net.Nodes[areaNodeAt(t, r, tc.at)].Demand.GPM()
			if math.Abs(got-tc.gpm) > 1e-9 { // gpm; round-off only
				t.Errorf("average-day demand %.12f gpm, want %.12f gpm", got, tc.gpm)
			}
		})
	}
	// Conservation: the peak-hour solution's demand ÷ the peak-hour factor is
	// the sum of the area totals, 150 gpm (independent sum of the fixture).
	if got := r.sol.Demand.GPM() / r.cfg.Demands.PeakHourFactor; math.Abs(got-150) > 1e-9 {
		t.Errorf("solution demand ÷ factor %.12f gpm, want 150 gpm", got)
	}
	// The solve itself balances: supply = demand (DOMAIN.md §6: mass balance).
	if d := math.Abs(r.sol.Supply.GPM() - r.sol.Demand.GPM()); d > 1e-6 {
		t.Errorf("supply %.6f gpm ≠ demand %.6f gpm", r.sol.Supply.GPM(), r.sol.Demand.GPM())
	}
}

func TestAreaOutsideNetworkIsAProblemRow(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runHeadroom(t, "run", "--config", areaFixture(t), "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, stderr)
	}
	rows := readCSV(t, filepath.Join(out, "problems.csv"))[1:]
	found := slices.ContainsFunc(rows, func(r []string) bool {
		return r[0] == "areas.geojson" && r[1] == "3" && r[2] == "Z-3" && r[3] == "geometry" &&
			strings.Contains(r[4], "no junction node lies inside the demand area") && strings.Contains(r[5], "whole demand put on that node")
	})
	if !found {
		t.Errorf("problems.csv lacks the row for Z-3:\n%s", csvText(rows))
	}
	for _, r := range rows {
		if r[0] == "areas.geojson" && r[1] != "3" {
			t.Errorf("unexpected problem for a demand area that covers junctions: %v", r)
		}
	}
	// The summary accounts for every polygon, and the node layer carries
	// the 150 gpm of the three totals (written to 0.001 gpm per node).
	if want := "3 demand areas: 3 allocated, 0 left out; 150.0 gpm average day"; !strings.Contains(stdout, want) {
		t.Errorf("summary lacks %q:\n%s", want, stdout)
	}
	var sum float64
	for _, n := range readGeoJSONProperties(t, filepath.Join(out, "nodes.geojson")) {
		q, _ := n["average_day_demand_gpm"].(float64)
		sum += q
	}
	if math.Abs(sum-150) > 0.002 { // four nodes at 0.0005 gpm rounding each
		t.Errorf("nodes.geojson carries %.3f gpm average day, want 150", sum)
	}
}

func TestAreaValidation(t *testing.T) {
	text := strings.Replace(areaConfig, `allocation = "areas"`, `allocation = "zones"`, 1)
	_, err := decodeConfig(text, "t.toml")
	if err == nil || !strings.Contains(err.Error(), `"areas" (polygons)`) {
		t.Errorf("allocation = \"zones\": error %v, want one listing \"areas\"", err)
	}
}

// TestAreaDemoTownConservesTotal replaces the demo town's demand points by a
// 3 × 2 grid of rectangles over the pipes' own extent (a little larger, so
// that every node lies in one), with made-up totals.
func TestAreaDemoTownConservesTotal(t *testing.T) {
	in, err := builtInDemo()
	if err != nil {
		t.Fatal(err)
	}
	b := orb.Bound{Min: orb.Point{math.Inf(1), math.Inf(1)}, Max: orb.Point{math.Inf(-1), math.Inf(-1)}}
	for _, f := range in.pipes.Features {
		if f.Geometry != nil {
			b = b.Union(f.Geometry.Bound())
		}
	}
	b = b.Pad(1e-4)
	const cols, rows = 3, 2
	areas := geojson.NewFeatureCollection()
	var total float64
	for i := range cols {
		for j := range rows {
			lon0 := b.Min[0] + (b.Max[0]-b.Min[0])*float64(i)/cols
			lon1 := b.Min[0] + (b.Max[0]-b.Min[0])*float64(i+1)/cols
			lat0 := b.Min[1] + (b.Max[1]-b.Min[1])*float64(j)/rows
			lat1 := b.Min[1] + (b.Max[1]-b.Min[1])*float64(j+1)/rows
			q := 50 + 75*float64(i*rows+j) // gpm
			total += q
			f := geojson.NewFeature(areaBox(lon0, lat0, lon1, lat1))
			f.Properties = geojson.Properties{in.cfg.Demands.Fields.ID: fmt.Sprintf("Q-%d%d", i, j), in.cfg.Demands.Fields.Demand: q}
			areas.Append(f)
		}
	}
	in.demands = areas
	in.cfg.Demands.Allocation = allocateAreas
	off := false
	in.cfg.FireFlow.Enabled = &off // the sweep does not bear on allocation
	r, err := analyse(in)
	if err != nil {
		t.Fatal(err)
	}
	var nodes hydraulics.Flow
	for _, n := range r.net.Nodes {
		nodes += n.Demand
	}
	// Conservation, against the sum of the totals made above.
	if got := nodes.GPM(); math.Abs(got-total) > 1e-6 {
		t.Errorf("node demands add up to %.9f gpm, want %.0f gpm", got, total)
	}
	if got := r.sol.Demand.GPM() / r.cfg.Demands.PeakHourFactor; math.Abs(got-total) > 1e-6 {
		t.Errorf("peak-hour demand ÷ factor %.9f gpm, want %.0f gpm", got, total)
	}
	acc := r.accounts()[2]
	if acc.in != cols*rows || acc.used != cols*rows || acc.noun != "demand areas" {
		t.Errorf("demand account %+v, want %d demand areas all allocated", acc, cols*rows)
	}
}

// A projected demand layer's polygons come back to lon/lat: each ring vertex
// is the inverse projection of the projected vertex made from it (a round
// trip through the CRS's own forward and inverse, to 1e-9°).
func TestAreaPolygonsReprojected(t *testing.T) {
	crs, err := gis.ParseCRS("EPSG:2229")
	if err != nil {
		t.Fatal(err)
	}
	lonlat := areaBox(-118.30, 34.00, -118.29, 34.01)
	projected := make(orb.Ring, len(lonlat[0]))
	for k, q := range lonlat[0] {
		x, y := crs.Forward(q[0], q[1])
		projected[k] = orb.Point{x, y}
	}
	fc := geojson.NewFeatureCollection()
	fc.Append(geojson.NewFeature(orb.Polygon{projected}))
	fc.Append(geojson.NewFeature(orb.MultiPolygon{{projected}}))
	out := areaLonLat(&gis.Collection{File: "zones.shp", CRS: crs, Features: fc})
	for i, f := range out.Features {
		var ring orb.Ring
		switch g := f.Geometry.(type) {
		case orb.Polygon:
			ring = g[0]
		case orb.MultiPolygon:
			ring = g[0][0]
		default:
			t.Fatalf("feature %d: geometry %T", i+1, g)
		}
		for k, q := range ring {
			if d := math.Max(math.Abs(q[0]-lonlat[0][k][0]), math.Abs(q[1]-lonlat[0][k][1])); d > 1e-9 {
				t.Errorf("feature %d vertex %d: %v, want %v", i+1, k, q, lonlat[0][k])
			}
		}
	}
	if _, ok := fc.Features[0].Geometry.(orb.Polygon); !ok || fc.Features[0].Geometry.(orb.Polygon)[0][0] != projected[0] {
		t.Error("the layer's own features were changed")
	}
}
