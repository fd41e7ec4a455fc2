package main

import (
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/hydraulics"
)

// The layer-flow fixtures are set in the invented village of Ashgrove
// (lon −96.5, lat 40.2). Lengths come from a field so that they are exact.

// layerFlowMain is one pipe of a fixture: its line, in digitised order.
type layerFlowMain struct {
	id       string
	line     orb.LineString
	dIn, len float64
	mat      string
	laid     int
	flow     any // the q_gpm property; nil leaves it out
}

// layerFlowDemand is a demand point with its average-day gpm.
type layerFlowDemand struct {
	at  orb.Point
	gpm float64
}

const layerFlowConfig = `units = "us"
analysis_year = 2026

[pipes]
path = "mains.geojson"
# The independent checks in these tests use the layer's diameter as the inside diameter.
diameter_is = "inside"

[pipes.fields]
id = "main"
diameter = "dia_in"
material = "mat"
install_year = "laid"
length = "len_ft"
length_unit = "ft"
status = "state"
flow = "q_gpm"

[sources]
path = "supply.geojson"

[sources.fields]
id = "name"
grade = "hgl_ft"

[demands]
path = "meters.geojson"
peak_hour_factor = 2.5

[demands.fields]
id = "meter"
demand = "add_gpm"

[elevations]
path = "spots.geojson"

[elevations.fields]
elevation = "z_ft"

[solver]
flows = "FLOWS"

# A run on given flows has no fire-flow sweep; the solved run it is
# compared with must not charge fire-flow shortfalls to its mains either.
[fire_flow]
enabled = false
`

var (
	layerFlowA = orb.Point{-96.5000, 40.2000}
	layerFlowB = orb.Point{-96.4980, 40.2000}
	layerFlowC = orb.Point{-96.4960, 40.2000}
	layerFlowD = orb.Point{-96.4970, 40.2015}
	layerFlowE = orb.Point{-96.4940, 40.2000}
)

// layerFlowLoop is a looped network: A (the source) – B, then the loop
// B–C–D–B and a 4-in tail C–E. L4 is digitised D→B, against its flow.
func layerFlowLoop() []layerFlowMain {
	return []layerFlowMain{
		{"L1", orb.LineString{layerFlowA, layerFlowB}, 12, 1000, "PVC", 2000, nil},
		{"L2", orb.LineString{layerFlowB, layerFlowC}, 6, 800, "CI", 1950, nil},
		{"L3", orb.LineString{layerFlowC, layerFlowD}, 6, 600, "CI", 1960, nil},
		{"L4", orb.LineString{layerFlowD, layerFlowB}, 8, 700, "DI", 1980, nil},
		{"L5", orb.LineString{layerFlowC, layerFlowE}, 4, 900, "CI", 1940, nil},
	}
}

var layerFlowLoopDemands = []layerFlowDemand{{layerFlowC, 150}, {layerFlowD, 100}, {layerFlowE, 80}}

// layerFlowFixture writes a fixture's layers and config (solver.flows =
// flows) into dir and returns the config's path.
func layerFlowFixture(t *testing.T, dir string, mains []layerFlowMain, demands []layerFlowDemand, flows string) string {
	t.Helper()
	fc := geojson.NewFeatureCollection()
	spots := geojson.NewFeatureCollection()
	for _, m := range mains {
		f := geojson.NewFeature(m.line)
		f.Properties = geojson.Properties{"main": m.id, "dia_in": m.dIn, "mat": m.mat, "laid": m.laid, "len_ft": m.len, "state": "open"}
		if m.flow != nil {
			f.Properties["q_gpm"] = m.flow
		}
		fc.Append(f)
		for _, p := range m.line {
			s := geojson.NewFeature(p)
			s.Properties = geojson.Properties{"z_ft": 100 + 2000*(p[1]-40.2)} // gently rising to the north
			spots.Append(s)
		}
	}
	supply := geojson.NewFeatureCollection()
	s := geojson.NewFeature(layerFlowA)
	s.Properties = geojson.Properties{"name": "Ashgrove reservoir", "hgl_ft": 260}
	supply.Append(s)
	meters := geojson.NewFeatureCollection()
	for k, d := range demands {
		f := geojson.NewFeature(d.at)
		f.Properties = geojson.Properties{"meter": "M-" + strconv.Itoa(k+1), "add_gpm": d.gpm}
		meters.Append(f)
	}
	writeCollections(t, dir, map[string]*geojson.FeatureCollection{
		"mains.geojson": fc, "supply.geojson": supply, "meters.geojson": meters, "spots.geojson": spots,
	})
	path := filepath.Join(dir, "headroom.toml")
	writeFile(t, path, strings.Replace(layerFlowConfig, "FLOWS", flows, 1))
	return path
}

// layerFlowSolvedThenGiven solves the loop, writes each pipe's solved flow
// into the pipe layer and runs again with flows from the layer.
func layerFlowSolvedThenGiven(t *testing.T) (solved, given *result, dir string) {
	t.Helper()
	dir = t.TempDir()
	mains := layerFlowLoop()
	solved = analyseConfig(t, layerFlowFixture(t, dir, mains, layerFlowLoopDemands, flowsSolve))
	for i := range mains {
		if len(solved.parts[i]) != 1 {
			t.Fatalf("pipe %s has %d parts; the fixture has no tees", mains[i].id, len(solved.parts[i]))
		}
		mains[i].flow = solved.sol.Flow[solved.parts[i][0]].GPM() // full float64 precision in the GeoJSON
	}
	given = analyseConfig(t, layerFlowFixture(t, dir, mains, layerFlowLoopDemands, flowsFromLayer))
	return solved, given, dir
}

func TestLayerFlowsReproduceTheSolve(t *testing.T) {
	solved, given, _ := layerFlowSolvedThenGiven(t)
	if given.flowCheck == nil || solved.flowCheck != nil {
		t.Fatal("flowCheck set on the wrong run")
	}
	// Sign convention: L4 is digitised D→B and carries flow from B to D.
	if q := solved.sol.Flow[solved.parts[3][0]]; q >= 0 {
		t.Fatalf("solved flow in L4 %.3f gpm, want negative (digitised against the flow)", q.GPM())
	}
	for i, p := range given.pipes {
		j := given.parts[i][0]
		a, b := solved.checks[j], given.checks[j]
		t.Run("pipe "+p.ID, func(t *testing.T) {
			// Same flow, pipe and C: the Hazen-Williams loss is the same
			// function of the same numbers (ft per 1,000 ft).
			if d := math.Abs(a.Slope-b.Slope) * 1000; d > 1e-9 {
				t.Errorf("head loss %.9f ft/kft given, %.9f solved", b.Slope*1000, a.Slope*1000)
			}
			if math.Abs((a.Deficit-b.Deficit).GPM()) > 1e-6 || a.Required != b.Required || a.OverSlope != b.OverSlope || a.OverVelocity != b.OverVelocity {
				t.Errorf("check %+v given, %+v solved", b, a)
			}
			if sa, sb := solved.scores[i], given.scores[i]; sa.Rank != sb.Rank || sa.Scored != sb.Scored {
				t.Errorf("rank %d (scored %v) given, %d (%v) solved", sb.Rank, sb.Scored, sa.Rank, sa.Scored)
			}
		})
	}
	for k, n := range given.net.Nodes {
		// Pressures to 0.01 psi: the solver meets its head tolerance (1e-4 m)
		// on every pipe, and tree paths here are at most four pipes deep.
		pa := hydraulics.NodePressure(n, solved.sol.Head[k]).PSI()
		pb := hydraulics.NodePressure(n, given.sol.Head[k]).PSI()
		if math.Abs(pa-pb) > 0.01 {
			t.Errorf("node %s: %.4f psi given, %.4f psi solved", n.ID, pb, pa)
		}
	}
	// The flows of a converged solve pass their own check.
	if m := given.sol.MaxHeadResidual.Feet(); m > 0.001 {
		t.Errorf("loop mismatch %.4f ft on solved flows", m)
	}
	if e := given.sol.MaxContinuityResidual.GPM(); e > 1e-6 {
		t.Errorf("node imbalance %.2e gpm on solved flows", e)
	}
	if given.flowCheck.Loops != 1 { // five pipes, five nodes: one loop
		t.Errorf("%d loop pipes, want 1", given.flowCheck.Loops)
	}
	if got, want := given.sol.Demand.GPM(), 2.5*330; math.Abs(got-want) > 1e-9 {
		t.Errorf("demand %.6f gpm, want 2.5 × 330 gpm", got)
	}
	if len(given.scenarios) != 1 || len(given.hydrants) != 0 {
		t.Errorf("%d scenarios and %d hydrants with layer flows, want peak hour only and no fire flow", len(given.scenarios), len(given.hydrants))
	}
}

func TestLayerFlowsRunWritesPeakHourOnly(t *testing.T) {
	_, _, dir := layerFlowSolvedThenGiven(t)
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, stderr)
	}
	for _, want := range []string{`Flows from the pipe layer (field "q_gpm"`, "pipes closing loops: 1, largest loop mismatch 0.00 ft", "average day, max day and the fire-flow sweep need a network solve: skipped"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("summary lacks %q:\n%s", want, stdout)
		}
	}
	if strings.Contains(stdout, "Global Gradient Algorithm") {
		t.Errorf("summary reports a solve that did not happen:\n%s", stdout)
	}
	pipes := readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson"))
	for _, p := range pipes {
		if _, ok := p["avg_day_flow_gpm"]; ok {
			t.Fatalf("pipes.geojson has average-day columns with layer flows: %v", p)
		}
		if _, ok := p["headloss_ft_per_kft"].(float64); !ok {
			t.Errorf("pipe %v has no head loss", p["pipe_id"])
		}
	}
	header := readCSV(t, filepath.Join(out, "ranked.csv"))[0]
	if slices.Contains(header, "max_day_flow_gpm") || !slices.Contains(header, "flow_gpm") {
		t.Errorf("ranked.csv header %v", header)
	}
	if _, err := os.Stat(filepath.Join(out, "hydrants.geojson")); err == nil {
		t.Error("hydrants.geojson written without a fire-flow sweep")
	}
}

// A main split by a tee carries its one given flow on both parts, so the
// tee and the main's far end show the branch flow as imbalances, by hand:
//
//	A ──────── B ──────── C     M1, 1500 ft, given 100 gpm, split at B
//	           │
//	           D                M2, given 40 gpm
//
// with peak demands 60 gpm at C and 40 gpm at D (24 and 16 gpm × 2.5):
// at B, 100 in − (100 + 40) out = −40 gpm; at C, 100 − 60 = +40 gpm.
func TestLayerFlowsTeeImbalance(t *testing.T) {
	dir := t.TempDir()
	mid := orb.Point{-96.4985, 40.2000}
	mains := []layerFlowMain{
		{"M1", orb.LineString{layerFlowA, mid, {-96.4970, 40.2000}}, 8, 1500, "PVC", 2010, 100.0},
		{"M2", orb.LineString{mid, {-96.4985, 40.2010}}, 6, 500, "PVC", 2010, "40"},
	}
	demands := []layerFlowDemand{{orb.Point{-96.4970, 40.2000}, 24}, {orb.Point{-96.4985, 40.2010}, 16}}
	r := analyseConfig(t, layerFlowFixture(t, dir, mains, demands, flowsFromLayer))
	if len(r.parts[0]) != 2 {
		t.Fatalf("M1 has %d parts, want 2 (split at the tee)", len(r.parts[0]))
	}
	tee := r.net.Pipes[r.parts[0][0]].To
	end := r.net.Pipes[r.parts[0][1]].To
	for _, tc := range []struct {
		name string
		node int
		gpm  float64
	}{{"tee", tee, -40}, {"far end", end, 40}} {
		if got := r.flowCheck.Imbalance[tc.node].GPM(); math.Abs(got-tc.gpm) > 1e-9 {
			t.Errorf("%s: imbalance %.6f gpm, want %.0f gpm", tc.name, got, tc.gpm)
		}
		id := r.net.Nodes[tc.node].ID
		if !slices.ContainsFunc(r.problems, func(p gis.Problem) bool {
			return p.ID == id && p.Field == "q_gpm" && strings.Contains(p.What, "unbalanced") && strings.Contains(p.Action, "at a tee")
		}) {
			t.Errorf("%s: no problem row for junction %s", tc.name, id)
		}
	}
	// The heads follow the tree: H_B = 260 ft − h(100 gpm over 750 ft of 8 in),
	// by the SI form h = 10.674·L·Q^(1/0.54)/(C^(1/0.54)·D^(2.63/0.54)) with
	// the constant DOMAIN.md §1.3 derives, at M1's aged C; headroom takes its
	// constant from k = 1.318 instead, and §1.6 shows such choices move the
	// loss by up to 0.1 %, the tolerance here.
	c := r.net.Pipes[r.parts[0][0]].C
	q := 100 * float64(hydraulics.USGallonPerMinute)
	h := 10.674 * (750 * 0.3048) * math.Pow(q, 1/0.54) / (math.Pow(c, 1/0.54) * math.Pow(8*0.0254, 2.63/0.54)) / 0.3048
	if got := r.sol.Head[tee].Feet(); math.Abs(got-(260-h)) > 1e-3*h {
		t.Errorf("head at the tee %.6f ft, want 260 − %.6f ft (link %.4f ft)", got, h, r.net.Pipes[r.parts[0][0]].Length.Feet())
	}
}

func TestLayerFlowsBadValuesNameTheFeature(t *testing.T) {
	mains := layerFlowLoop()
	for i := range mains {
		mains[i].flow = 10.0
	}
	mains[1].flow = nil    // L2: missing
	mains[3].flow = "lots" // L4: text
	mains[4].flow = "  "   // L5: blank
	dir := t.TempDir()
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runHeadroom(t, "run", "--config", layerFlowFixture(t, dir, mains, layerFlowLoopDemands, flowsFromLayer), "--out", out)
	if code != exitError || stdout != "" {
		t.Fatalf("exit %d, stdout %q; want exit %d and no summary", code, stdout, exitError)
	}
	for _, want := range []string{
		`mains.geojson: feature 2 (id "L2"): field "q_gpm": flow is missing`,
		`mains.geojson: feature 4 (id "L4"): field "q_gpm": flow "lots" is not a number`,
		`mains.geojson: feature 5 (id "L5"): field "q_gpm": flow is missing`,
	} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr lacks %q:\n%s", want, stderr)
		}
	}
	if strings.Contains(stderr, `"L1"`) || strings.Contains(stderr, `"L3"`) {
		t.Errorf("stderr names a pipe whose flow is fine:\n%s", stderr)
	}
	if entries, _ := os.ReadDir(out); len(entries) > 0 {
		t.Errorf("a run that stopped wrote %d files", len(entries))
	}
}

func TestLayerFlowConfig(t *testing.T) {
	base := strings.Replace(layerFlowConfig, "FLOWS", flowsFromLayer, 1)
	for _, tc := range []struct {
		name, from, to, want string
	}{
		{"flows value", `flows = "from_layer"`, `flows = "given"`, `solver.flows = "given": use "solve" or "from_layer"`},
		{"no flow field", `flow = "q_gpm"`, `flow = ""`, `needs pipes.fields.flow`},
		{"flow unit", `flow = "q_gpm"`, "flow = \"q_gpm\"\nflow_unit = \"gph\"", `pipes.fields.flow_unit = "gph"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := decodeConfig(strings.Replace(base, tc.from, tc.to, 1), "t.toml")
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
	defaults := strings.Replace(layerFlowConfig, "flows = \"FLOWS\"\n", "", 1)
	defaults = strings.Replace(defaults, "enabled = false\n", "", 1) // fire flow at its default
	cfg, err := decodeConfig(defaults, "t.toml")
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Solver.Flows != flowsSolve || cfg.layerFlowsOn() || !cfg.fireFlowOn() {
		t.Errorf("default solver.flows %q, want %q with fire flow on", cfg.Solver.Flows, flowsSolve)
	}
}

func TestLayerFlowUnits(t *testing.T) {
	// DOMAIN.md §3.7 (computed there, 6–7 significant figures).
	for _, tc := range []struct {
		unit string
		gpm  float64
	}{{"", 1}, {"gpm", 1}, {"cfs", 448.8312}, {"mgd", 694.4444}, {"lps", 15.85032}, {"L/S", 15.85032}, {"m3s", 35.31467 * 448.8312}} {
		t.Run(tc.unit, func(t *testing.T) {
			u, err := layerFlowUnit(tc.unit)
			if err != nil {
				t.Fatal(err)
			}
			if got := u.GPM(); math.Abs(got-tc.gpm) > 1e-6*tc.gpm {
				t.Errorf("1 %s = %.7f gpm, want %.7f", tc.unit, got, tc.gpm)
			}
		})
	}
}

// A closed pipe carries no flow: a flow given on it is a problem row and is
// not used, while a missing one is no problem at all.
func TestLayerFlowsClosedPipe(t *testing.T) {
	dir := t.TempDir()
	mains := layerFlowLoop()
	for i := range mains {
		mains[i].flow = 0.0
	}
	mains[0].flow = 120.0
	mains[4].flow = 35.0 // L5, closed below
	path := layerFlowFixture(t, dir, mains, nil, flowsFromLayer)
	text := strings.Replace(readText(t, filepath.Join(dir, "mains.geojson")), `"q_gpm":35,"state":"open"`, `"q_gpm":35,"state":"closed"`, 1)
	if !strings.Contains(text, `"state":"closed"`) {
		t.Fatalf("fixture edit failed:\n%s", text)
	}
	writeFile(t, filepath.Join(dir, "mains.geojson"), text)
	writeFile(t, filepath.Join(dir, "meters.geojson"), `{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"meter":"M-1","add_gpm":48},"geometry":{"type":"Point","coordinates":[-96.498,40.2]}}]}`)
	r := analyseConfig(t, path)
	if !slices.ContainsFunc(r.problems, func(p gis.Problem) bool {
		return p.Feature == 5 && p.ID == "L5" && p.Field == "q_gpm" && strings.Contains(p.What, "closed pipe has a given flow of 35 gpm")
	}) {
		t.Errorf("no problem row for the closed pipe's flow")
	}
	if q := r.sol.Flow[r.parts[4][0]]; q != 0 {
		t.Errorf("closed pipe carries %.3f gpm", q.GPM())
	}
	// 120 gpm into B, where the whole 48 × 2.5 = 120 gpm peak demand is
	// taken: B balances (by hand).
	b := r.net.Pipes[r.parts[0][0]].To
	if e := r.flowCheck.Imbalance[b].GPM(); math.Abs(e) > 1e-9 {
		t.Errorf("imbalance at B %.6f gpm, want 0", e)
	}
}

func readText(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// A source that feeds the network through a pump (controls.go): the pipe
// layer holds no pump flow, so it is taken from continuity at the pump's
// discharge node. Given the flows of a solve, the pump's flow and every
// pressure come back as solved (pressures to 0.01 psi, as above).
func TestLayerFlowsThroughAPump(t *testing.T) {
	dir := t.TempDir()
	mains := layerFlowLoop()
	fixture := func(flows string) string {
		path := layerFlowFixture(t, dir, mains, layerFlowLoopDemands, flows)
		// A wet well at 150 ft and a pump with shutoff 140 ft, 110 ft at
		// 825 gpm and 60 ft at 1,500 gpm (invented figures).
		writeFile(t, filepath.Join(dir, "supply.geojson"), `{"type":"FeatureCollection","features":[{"type":"Feature",`+
			`"properties":{"name":"Ashgrove booster","hgl_ft":150,"h0":140,"qd":825,"hd":110,"qm":1500,"hm":60},`+
			`"geometry":{"type":"Point","coordinates":[-96.5,40.2]}}]}`)
		text := strings.Replace(readText(t, path), `grade = "hgl_ft"`, `grade = "hgl_ft"
pump_shutoff_head = "h0"
pump_design_flow = "qd"
pump_design_head = "hd"
pump_max_flow = "qm"
pump_max_head = "hm"`, 1)
		writeFile(t, path, text)
		return path
	}
	solved := analyseConfig(t, fixture(flowsSolve))
	if len(solved.ctlPumps) != 1 {
		t.Fatalf("%d pump stations, want 1", len(solved.ctlPumps))
	}
	for i := range mains {
		mains[i].flow = solved.sol.Flow[solved.parts[i][0]].GPM()
	}
	given := analyseConfig(t, fixture(flowsFromLayer))
	j := solved.ctlPumps[0].Link
	// Continuity at the discharge: the pump delivers the whole 2.5 × 330 gpm.
	if a, b := solved.sol.Flow[j].GPM(), given.sol.Flow[j].GPM(); math.Abs(a-b) > 1e-6 || math.Abs(b-825) > 1e-6 {
		t.Errorf("pump flow %.6f gpm given, %.6f solved; want 825", b, a)
	}
	for k, n := range given.net.Nodes {
		pa := hydraulics.NodePressure(n, solved.sol.Head[k]).PSI()
		pb := hydraulics.NodePressure(n, given.sol.Head[k]).PSI()
		if math.Abs(pa-pb) > 0.01 {
			t.Errorf("node %s: %.4f psi given, %.4f psi solved", n.ID, pb, pa)
		}
	}
}
