package demotown

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"reflect"
	"sync"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

var (
	defaultOnce sync.Once
	defaultTown *Town
	defaultErr  error
)

// quillmere returns the default town, generated once for all tests.
func quillmere(t testing.TB) *Town {
	t.Helper()
	defaultOnce.Do(func() { defaultTown, defaultErr = Generate(Options{}) })
	if defaultErr != nil {
		t.Fatalf("Generate(default): %v", defaultErr)
	}
	return defaultTown
}

func layers(tw *Town) map[string]*geojson.FeatureCollection {
	return map[string]*geojson.FeatureCollection{
		"pipes": tw.Pipes, "sources": tw.Sources, "demands": tw.Demands, "elevations": tw.Elevations,
		"hydrants": tw.Hydrants, "breaks": tw.Breaks, "facilities": tw.Facilities,
	}
}

var layerNames = []string{"pipes", "sources", "demands", "elevations", "hydrants", "breaks", "facilities"}

func marshal(t *testing.T, fc *geojson.FeatureCollection) []byte {
	t.Helper()
	b, err := json.Marshal(fc)
	if err != nil {
		t.Fatalf("marshal: %v", err)
	}
	return b
}

func TestDeterministic(t *testing.T) {
	a := quillmere(t)
	b, err := Generate(Options{Pipes: DefaultPipes, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	c, err := Generate(Options{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range layerNames {
		t.Run(name, func(t *testing.T) {
			if !bytes.Equal(marshal(t, layers(a)[name]), marshal(t, layers(b)[name])) {
				t.Errorf("two runs with the same options differ")
			}
			if name != "sources" && bytes.Equal(marshal(t, layers(a)[name]), marshal(t, layers(c)[name])) {
				t.Errorf("seeds 1 and 2 give the same layer")
			}
		})
	}
}

func TestJSONRoundTrip(t *testing.T) {
	tw := quillmere(t)
	for _, name := range layerNames {
		t.Run(name, func(t *testing.T) {
			fc := layers(tw)[name]
			back, err := geojson.UnmarshalFeatureCollection(marshal(t, fc))
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(fc.Features, back.Features) {
				t.Errorf("layer changes through a JSON round trip")
			}
		})
	}
}

func TestSizeErrors(t *testing.T) {
	for _, n := range []int{-1, 1, minPipes - 1, MaxPipes + 1} {
		if _, err := Generate(Options{Pipes: n}); !errors.Is(err, ErrSize) {
			t.Errorf("Pipes=%d: got %v, want ErrSize", n, err)
		}
	}
}

func TestTownFigures(t *testing.T) {
	tw := quillmere(t)
	if tw.Name != "Quillmere" || tw.AnalysisYear != 2026 {
		t.Errorf("got %q %d, want Quillmere 2026", tw.Name, tw.AnalysisYear)
	}
	// DOMAIN.md §3.6: peak hour / average day is typically 2.0–4.0.
	if tw.PeakHourFactor < 2 || tw.PeakHourFactor > 4 {
		t.Errorf("peak-hour factor %.2f outside 2–4", tw.PeakHourFactor)
	}
}

func TestDefaultCounts(t *testing.T) {
	tw := quillmere(t)
	if n := len(tw.Pipes.Features); n < 1500 || n > 3000 {
		t.Errorf("got %d pipes, want 1,500–3,000", n)
	}
	if n := len(tw.Sources.Features); n != 2 {
		t.Fatalf("got %d sources, want 2", n)
	}
	kinds := map[string]float64{}
	for _, f := range tw.Sources.Features {
		kinds[f.Properties[SourceKind].(string)] = f.Properties[SourceGrade].(float64)
	}
	if len(kinds) != 2 || kinds["tank"] == kinds["reservoir"] {
		t.Errorf("want one tank and one reservoir at different grades, got %v", kinds)
	}
	nd, np := len(tw.Demands.Features), len(tw.Pipes.Features)
	if nd < np*8/10 || nd > np*3/2 {
		t.Errorf("got %d demand points for %d pipes, want about one per pipe", nd, np)
	}
	// 1 MGD = 1e6 gal / 1,440 min = 694.44 gpm (DOMAIN.md §3.7).
	mgd := totalADD(tw) * 1440 / 1e6
	if mgd < 2 || mgd > 4 {
		t.Errorf("total average-day demand %.2f MGD, want 2–4", mgd)
	}
	big := 0
	for _, f := range tw.Demands.Features {
		if f.Properties[DemandADD].(float64) >= 15 {
			big++
		}
	}
	if big < 3 {
		t.Errorf("got %d large users (≥ 15 gpm), want several", big)
	}
	if n := len(tw.Elevations.Features); n < 200 {
		t.Errorf("got %d spot heights, want a grid of hundreds", n)
	}
}

func totalADD(tw *Town) float64 {
	var s float64
	for _, f := range tw.Demands.Features {
		s += f.Properties[DemandADD].(float64)
	}
	return s
}

func TestReliefAndStaticPressure(t *testing.T) {
	tw := quillmere(t)
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, f := range tw.Elevations.Features {
		v := f.Properties[ElevationValue].(float64)
		lo, hi = min(lo, v), max(hi, v)
	}
	if r := hi - lo; r < 80 || r > 150 {
		t.Errorf("relief %.1f ft (%.1f–%.1f), want 80–150", r, lo, hi)
	}
	gLo, gHi := math.Inf(1), math.Inf(-1)
	for _, f := range tw.Sources.Features {
		g := f.Properties[SourceGrade].(float64)
		gLo, gHi = min(gLo, g), max(gHi, g)
	}
	// Static pressure = (grade − ground) / 2.3077 ft per psi (DOMAIN.md
	// §3.7); planning targets 40 psi at peak hour and ≤ 110 psi static are
	// common practice (DOMAIN.md §3.1), so the statics sit at 40–110 psi.
	const ftPerPSI = 144 / 62.4
	if p := (gLo - hi) / ftPerPSI; p < 38 {
		t.Errorf("static pressure at the highest ground %.1f psi, want ≥ 38", p)
	}
	if p := (gHi - lo) / ftPerPSI; p > 110 {
		t.Errorf("static pressure at the lowest ground %.1f psi, want ≤ 110", p)
	}
}

func TestMaterialsAndDecades(t *testing.T) {
	tw := quillmere(t)
	type span struct{ y0, y1, d0, d1 float64 }
	// The decades of the brief: core 1900s–30s unlined cast iron 4–6 in
	// (8 on main streets, 1940s on the river road), 1950s–70s AC 6–8 in
	// (10 on bridges and collectors), 1970s–2000s DI 8–12 in (6 on
	// cul-de-sacs; loop and transmission 12–20 in), 2000s–20s PVC 6–12 in
	// (16 where the loop passes through new ground), steel only on a
	// transmission main.
	want := map[string]span{
		"CI":  {1900, 1949, 4, 8},
		"AC":  {1950, 1977, 6, 10},
		"DI":  {1976, 2006, 6, 24},
		"PVC": {2000, 2025, 6, 16},
		"STL": {1940, 1980, 16, 24},
	}
	count := map[string]int{}
	for _, f := range tw.Pipes.Features {
		m := f.Properties[PipeMaterial].(string)
		y, d := f.Properties[PipeYear].(float64), f.Properties[PipeDiameter].(float64)
		w, ok := want[m]
		if !ok {
			t.Fatalf("%s: unknown material %q", f.Properties[PipeID], m)
		}
		if y < w.y0 || y > w.y1 || d < w.d0 || d > w.d1 {
			t.Errorf("%s: %s %g in laid %g outside %v", f.Properties[PipeID], m, d, y, w)
		}
		count[m]++
	}
	n := len(tw.Pipes.Features)
	for _, m := range []string{"CI", "AC", "DI", "PVC"} {
		if count[m] < n/20 {
			t.Errorf("%s: %d pipes, want at least 5 %% of %d", m, count[m], n)
		}
	}
	loop, trans := 0, 0
	for _, f := range tw.Pipes.Features {
		switch d := f.Properties[PipeDiameter].(float64); {
		case d >= 16 && d <= 24:
			trans++
		case d == 12:
			loop++
		}
	}
	if trans < 4 || loop < 20 {
		t.Errorf("got %d mains of 16–24 in and %d of 12 in, want a transmission main and an arterial loop", trans, loop)
	}
}

func TestClosedAndTested(t *testing.T) {
	tw := quillmere(t)
	closed, tested := 0, 0
	sum := map[string][2]float64{}
	for _, f := range tw.Pipes.Features {
		if f.Properties[PipeStatus] == StatusClosed {
			closed++
		}
		if c, ok := f.Properties[PipeMeasuredC].(float64); ok {
			tested++
			// DOMAIN.md §2.1–2.2: C runs from about 40 (badly tuberculated
			// iron) to 150 (new PVC).
			if c < 40 || c > 150 {
				t.Errorf("%s: measured C %g outside 40–150", f.Properties[PipeID], c)
			}
			m := f.Properties[PipeMaterial].(string)
			sum[m] = [2]float64{sum[m][0] + c, sum[m][1] + 1}
		}
	}
	if closed < 3 || closed > 20 {
		t.Errorf("got %d closed pipes, want a few (3–20)", closed)
	}
	if tested < 10 || tested > 30 {
		t.Errorf("got %d tested pipes, want 10–30", tested)
	}
	ci, pvc := sum["CI"], sum["PVC"]
	if ci[1] > 0 && pvc[1] > 0 && ci[0]/ci[1] >= pvc[0]/pvc[1] {
		t.Errorf("mean tested C of old cast iron %.0f not below PVC %.0f", ci[0]/ci[1], pvc[0]/pvc[1])
	}
}

func TestUniqueIDs(t *testing.T) {
	tw := quillmere(t)
	for _, c := range []struct {
		name, field string
		fc          *geojson.FeatureCollection
	}{
		{"pipes", PipeID, tw.Pipes}, {"sources", SourceID, tw.Sources}, {"demands", DemandID, tw.Demands},
		{"hydrants", HydrantID, tw.Hydrants},
	} {
		t.Run(c.name, func(t *testing.T) {
			seen := map[string]bool{}
			for _, f := range c.fc.Features {
				id := f.Properties[c.field].(string)
				if seen[id] {
					t.Errorf("duplicate id %q", id)
				}
				seen[id] = true
			}
		})
	}
}

// kind of a property value: "s" string, "n" number, "n?" number or null.
func checkSchema(t *testing.T, fc *geojson.FeatureCollection, geom string, fields map[string]string) {
	t.Helper()
	for k, f := range fc.Features {
		if f.Geometry.GeoJSONType() != geom {
			t.Fatalf("feature %d: geometry %s, want %s", k, f.Geometry.GeoJSONType(), geom)
		}
		for name, kind := range fields {
			v, ok := f.Properties[name]
			if !ok {
				t.Fatalf("feature %d: no field %q", k, name)
			}
			switch v.(type) {
			case string:
				ok = kind == "s"
			case float64:
				ok = kind == "n" || kind == "n?"
			case nil:
				ok = kind == "n?"
			default:
				ok = false
			}
			if !ok {
				t.Fatalf("feature %d: field %q is %T, want %s", k, name, v, kind)
			}
		}
		if len(f.Properties) != len(fields) {
			t.Fatalf("feature %d: %d fields, want %d", k, len(f.Properties), len(fields))
		}
	}
}

func TestSchema(t *testing.T) {
	tw := quillmere(t)
	checkSchema(t, tw.Pipes, "LineString", map[string]string{PipeID: "s", PipeDiameter: "n", PipeMaterial: "s",
		PipeYear: "n", PipeMeasuredC: "n?", PipeStatus: "s", PipeZone: "s", PipeStreet: "s", PipeSurface: "s"})
	checkSchema(t, tw.Sources, "Point", map[string]string{SourceID: "s", SourceName: "s", SourceGrade: "n",
		SourceKind: "s", SourceZone: "s"})
	checkSchema(t, tw.Demands, "Point", map[string]string{DemandID: "s", DemandADD: "n", DemandUse: "s"})
	checkSchema(t, tw.Elevations, "Point", map[string]string{ElevationValue: "n"})
	checkSchema(t, tw.Hydrants, "Point", map[string]string{HydrantID: "s", HydrantNeeded: "n", HydrantZone: "s"})
	for _, f := range tw.Pipes.Features {
		if s := f.Properties[PipeStatus]; s != StatusOpen && s != StatusClosed {
			t.Fatalf("%s: status %q", f.Properties[PipeID], s)
		}
		for _, p := range f.Geometry.(orb.LineString) {
			// The brief: central US plains near lon −98.3, lat 38.6, and
			// coordinates rounded to 1e-7 degree.
			if p[0] < -99.5 || p[0] > -97.5 || p[1] < 38 || p[1] > 39.5 {
				t.Fatalf("%s: vertex %v outside the central plains", f.Properties[PipeID], p)
			}
			for _, c := range p {
				if r := c * 1e7; math.Abs(r-math.Round(r)) > 1e-6 {
					t.Fatalf("%s: coordinate %v not rounded to 1e-7°", f.Properties[PipeID], c)
				}
			}
		}
	}
}

// endpointKey identifies a vertex by its coordinates in units of 1e-7°.
type endpointKey [2]int64

func keyOf(p orb.Point) endpointKey {
	return endpointKey{int64(math.Round(p[0] * 1e7)), int64(math.Round(p[1] * 1e7))}
}

// feetPerDegree returns ground feet per degree of longitude and latitude at
// lat, on a sphere of radius 6,371,008.8 m (the mean Earth radius): close
// enough (±0.5 %) for a 0.5-ft snapping tolerance check.
func feetPerDegree(lat float64) (lon, latFt float64) {
	m := 6371008.8 * math.Pi / 180 / 0.3048
	return m * math.Cos(lat*math.Pi/180), m
}

type topo struct {
	ends  [][2]endpointKey
	nodes map[endpointKey][]int // pipes meeting at each endpoint
}

func topology(fc *geojson.FeatureCollection) topo {
	tp := topo{nodes: map[endpointKey][]int{}}
	for k, f := range fc.Features {
		ls := f.Geometry.(orb.LineString)
		e := [2]endpointKey{keyOf(ls[0]), keyOf(ls[len(ls)-1])}
		tp.ends = append(tp.ends, e)
		tp.nodes[e[0]] = append(tp.nodes[e[0]], k)
		tp.nodes[e[1]] = append(tp.nodes[e[1]], k)
	}
	return tp
}

func TestTopology(t *testing.T) {
	tw := quillmere(t)
	tp := topology(tw.Pipes)
	sources := map[endpointKey]bool{}
	for _, f := range tw.Sources.Features {
		sources[keyOf(f.Geometry.(orb.Point))] = true
	}
	// Distinct endpoints must be more than 0.5 ft apart, or a snapping
	// tolerance of 0.5 ft would join them (the brief).
	lonFt, latFt := feetPerDegree(38.665)
	cell := map[endpointKey][]endpointKey{}
	const cellDeg = 1e-4
	for k := range tp.nodes {
		c := endpointKey{int64(math.Floor(float64(k[0]) * 1e-7 / cellDeg)), int64(math.Floor(float64(k[1]) * 1e-7 / cellDeg))}
		cell[c] = append(cell[c], k)
	}
	for c, ks := range cell {
		for dx := int64(-1); dx <= 1; dx++ {
			for dy := int64(-1); dy <= 1; dy++ {
				for _, a := range ks {
					for _, b := range cell[endpointKey{c[0] + dx, c[1] + dy}] {
						if a == b {
							continue
						}
						d := math.Hypot(float64(a[0]-b[0])*1e-7*lonFt, float64(a[1]-b[1])*1e-7*latFt)
						if d <= 0.5 {
							t.Fatalf("endpoints %v and %v only %.2f ft apart", a, b, d)
						}
					}
				}
			}
		}
	}
	dead := 0
	for k, e := range tp.ends {
		if e[0] == e[1] {
			t.Fatalf("pipe %d starts and ends at the same point", k)
		}
		for _, end := range e {
			if len(tp.nodes[end]) == 1 && !sources[end] {
				dead++
			}
		}
	}
	n := len(tw.Pipes.Features)
	if dead == 0 || dead > n/5 {
		t.Errorf("got %d dead ends for %d pipes, want some but not a fifth", dead, n)
	}
}

func TestSourcesAtMainEnds(t *testing.T) {
	tw := quillmere(t)
	tp := topology(tw.Pipes)
	for _, f := range tw.Sources.Features {
		k := keyOf(f.Geometry.(orb.Point))
		ps := tp.nodes[k]
		if len(ps) != 1 {
			t.Errorf("%s: %d mains end at the source, want 1", f.Properties[SourceID], len(ps))
			continue
		}
		if d := tw.Pipes.Features[ps[0]].Properties[PipeDiameter].(float64); d < 16 || d > 24 {
			t.Errorf("%s: main at the source is %g in, want a 16–24 in transmission main", f.Properties[SourceID], d)
		}
	}
}

// checkConnected runs a breadth-first search from the sources over open
// pipes through shared endpoints and fails for any pipe not reached.
func checkConnected(t *testing.T, tw *Town) {
	t.Helper()
	tp := topology(tw.Pipes)
	open := func(k int) bool { return tw.Pipes.Features[k].Properties[PipeStatus] == StatusOpen }
	seen := map[endpointKey]bool{}
	var queue []endpointKey
	for _, f := range tw.Sources.Features {
		k := keyOf(f.Geometry.(orb.Point))
		seen[k] = true
		queue = append(queue, k)
	}
	for len(queue) > 0 {
		v := queue[0]
		queue = queue[1:]
		for _, p := range tp.nodes[v] {
			if !open(p) {
				continue
			}
			for _, w := range tp.ends[p] {
				if !seen[w] {
					seen[w] = true
					queue = append(queue, w)
				}
			}
		}
	}
	for k, e := range tp.ends {
		if !seen[e[0]] || !seen[e[1]] {
			t.Fatalf("pipe %s not reachable from a source over open pipes", tw.Pipes.Features[k].Properties[PipeID])
		}
	}
}

func TestConnected(t *testing.T) { checkConnected(t, quillmere(t)) }

// planeFeet returns p in feet east and north of the town centre (local
// equirectangular projection, ample for picking the nearest main).
func planeFeet(p orb.Point) (x, y float64) {
	lonFt, latFt := feetPerDegree(38.665)
	return (p[0] + 98.40) * lonFt, (p[1] - 38.665) * latFt
}

// distToSegment returns the distance from (px, py) to segment a–b.
func distToSegment(px, py, ax, ay, bx, by float64) float64 {
	dx, dy := bx-ax, by-ay
	t := ((px-ax)*dx + (py-ay)*dy) / (dx*dx + dy*dy)
	t = min(1, max(0, t))
	return math.Hypot(px-ax-t*dx, py-ay-t*dy)
}

// TestSmallMainsOverloaded checks, without a network solver, that several
// 4-in and 6-in dead-end mains cannot carry their peak-hour load at the
// 10 ft/kft criterion. Each demand point is given to its nearest main; on a
// dead-end branch the flow in a main is all demand beyond it. Unit head loss
// is Hazen-Williams in US units, S = 10.44·Q^1.852/(C^1.852·d^4.87) ft/ft
// ×1000 per kft (Q gpm, d in; DOMAIN.md §1.3), with C of unlined cast iron
// from Sharp & Walski (1988) at e0 = 0.00085 ft and a = 0.00025 ft/yr
// (DOMAIN.md §2.3, §2.4).
func TestSmallMainsOverloaded(t *testing.T) {
	tw := quillmere(t)
	pipes := tw.Pipes.Features
	type seg struct{ ax, ay, bx, by float64 }
	segs := make([]seg, len(pipes))
	for k, f := range pipes {
		ls := f.Geometry.(orb.LineString)
		ax, ay := planeFeet(ls[0])
		bx, by := planeFeet(ls[len(ls)-1])
		segs[k] = seg{ax, ay, bx, by}
	}
	load := make([]float64, len(pipes)) // average-day gpm drawn on each main
	for _, f := range tw.Demands.Features {
		px, py := planeFeet(f.Geometry.(orb.Point))
		best, bd := -1, math.Inf(1)
		for k, s := range segs {
			if d := distToSegment(px, py, s.ax, s.ay, s.bx, s.by); d < bd {
				best, bd = k, d
			}
		}
		load[best] += f.Properties[DemandADD].(float64)
	}
	tp := topology(tw.Pipes)
	over := 0
	for _, ps := range tp.nodes {
		if len(ps) != 1 {
			continue
		}
		// Walk up the dead-end branch from its end while the branch is a chain.
		k, at, flow := ps[0], endpointKey{}, 0.0
		for _, e := range tp.ends[k] {
			if len(tp.nodes[e]) == 1 {
				at = e
			}
		}
		for steps := 0; steps < 50; steps++ {
			flow += load[k]
			f := pipes[k]
			d := f.Properties[PipeDiameter].(float64)
			if f.Properties[PipeMaterial] == "CI" && d <= 6 {
				age := float64(tw.AnalysisYear) - f.Properties[PipeYear].(float64)
				c := 18.0 - 37.2*math.Log10((0.00085+0.00025*age)/(d/12))
				q := flow * tw.PeakHourFactor
				s := 1000 * 10.44 * math.Pow(q, 1.852) / (math.Pow(c, 1.852) * math.Pow(d, 4.87))
				if s > 10 {
					over++
				}
			}
			next := tp.ends[k][0]
			if next == at {
				next = tp.ends[k][1]
			}
			if len(tp.nodes[next]) != 2 {
				break
			}
			at = next
			for _, p := range tp.nodes[next] {
				if p != k {
					k = p
					break
				}
			}
		}
	}
	t.Logf("%d small CI dead-end mains over 10 ft/kft", over)
	if over < 4 {
		t.Errorf("got %d small cast-iron dead-end mains over 10 ft/kft at peak hour, want several", over)
	}
	n4, n6 := 0, 0
	for _, f := range pipes {
		switch f.Properties[PipeDiameter].(float64) {
		case 4:
			n4++
		case 6:
			n6++
		}
	}
	if n4 < 20 || n6 < 100 {
		t.Errorf("got %d 4-in and %d 6-in mains, want many small mains", n4, n6)
	}
}

func TestScale50k(t *testing.T) {
	if testing.Short() {
		t.Skip("large town")
	}
	const want = 50_000
	tw, err := Generate(Options{Pipes: want, Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	if n := len(tw.Pipes.Features); n < want*9/10 || n > want*11/10 {
		t.Errorf("got %d pipes, want %d ± 10 %%", n, want)
	}
	// Demand scales with the town: the default town's gpm per pipe ± 30 %.
	def := quillmere(t)
	perDef := totalADD(def) / float64(len(def.Pipes.Features))
	per := totalADD(tw) / float64(len(tw.Pipes.Features))
	if per < 0.7*perDef || per > 1.3*perDef {
		t.Errorf("demand %.3f gpm per pipe, default town %.3f", per, perDef)
	}
	if n := len(tw.Sources.Features); n < 4 {
		t.Errorf("got %d sources, want more supplies for a larger town", n)
	}
	checkConnected(t, tw)
}

func BenchmarkGenerate100k(b *testing.B) {
	pipes := 0
	for b.Loop() {
		tw, err := Generate(Options{Pipes: 100_000})
		if err != nil {
			b.Fatal(err)
		}
		pipes += len(tw.Pipes.Features)
	}
	b.ReportMetric(float64(pipes)/b.Elapsed().Seconds(), "pipes/s")
}
