package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"flag"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"headroom/hydraulics"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/demo")

// outputFiles are the text outputs of the default run, kept as golden
// files; binaryOutputs are compared between runs but not kept (a binary
// golden file cannot be reviewed as a diff).
var (
	outputFiles = []string{"ranked.csv", "pipes.geojson", "nodes.geojson", "hydrants.geojson", "problems.csv",
		"projects.csv", "plan.csv", "projects.geojson"}
	binaryOutputs = []string{"pipes.gpkg", "nodes.gpkg", "hydrants.gpkg", "projects.gpkg", "ranked.xlsx"}
)

// runHeadroom runs the command in-process and returns its exit code and output.
func runHeadroom(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var stdout, stderr bytes.Buffer
	code := headroomMain(args, &stdout, &stderr)
	return code, stdout.String(), stderr.String()
}

// builtIn runs the built-in demo once per test binary and returns its folder.
var builtInDir string

func builtInRun(t *testing.T) string {
	t.Helper()
	if builtInDir != "" {
		return builtInDir
	}
	dir, err := os.MkdirTemp("", "headroom-builtin")
	if err != nil {
		t.Fatal(err)
	}
	code, stdout, stderr := runHeadroom(t, "run", "--quiet", "--out", dir)
	if code != exitOK {
		t.Fatalf("headroom run: exit %d\nstdout:\n%s\nstderr:\n%s", code, stdout, stderr)
	}
	if stderr != "" {
		t.Errorf("--quiet run wrote to stderr:\n%s", stderr)
	}
	builtInDir = dir
	return dir
}

func TestMain(m *testing.M) {
	if os.Getenv(childEnv) == "1" { // the test binary acts as headroom (atomic_test.go)
		os.Exit(headroomMain(os.Args[1:], os.Stdout, os.Stderr))
	}
	flag.Parse()
	code := m.Run()
	if builtInDir != "" {
		os.RemoveAll(builtInDir)
	}
	os.Exit(code)
}

func TestBuiltInRunPrintsSummaryAndWritesFourFiles(t *testing.T) {
	dir := t.TempDir()
	code, stdout, stderr := runHeadroom(t, "run", "--out", dir)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{"average day", "max day", "peak hour", "relative flow change", "= demand", "Top ten", "Cautions", "planning-level screening", "licensed professional engineer"} {
		if !strings.Contains(strings.ToLower(stdout), strings.ToLower(want)) {
			t.Errorf("summary lacks %q:\n%s", want, stdout)
		}
	}
	for _, f := range append(outputFiles, binaryOutputs...) {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s not written: %v", f, err)
		}
	}
	// Progress: stderr is not a terminal here, so one line per stage.
	for _, stage := range []string{"reading", "snapping", "solving", "fire-flow sweep", "upsizing", "program", "writing"} {
		if !strings.Contains(stderr, "headroom: "+stage+" ") {
			t.Errorf("stderr lacks the %s stage line:\n%s", stage, stderr)
		}
	}
	if strings.Contains(stderr, "\r") {
		t.Errorf("stderr is not a terminal but holds a bar's carriage return:\n%q", stderr)
	}
}

// The demo written to disk and run from its headroom.toml must give the
// same bytes as the built-in run (issue: "must reproduce the built-in run").
func TestWrittenDemoReproducesBuiltInRun(t *testing.T) {
	want := builtInRun(t)
	demo, out := t.TempDir(), t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", demo); code != exitOK {
		t.Fatalf("demo: exit %d: %s", code, stderr)
	}
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(demo, demoConfigName), "--out", out); code != exitOK {
		t.Fatalf("run --config: exit %d: %s", code, stderr)
	}
	for _, f := range append(outputFiles, binaryOutputs...) {
		a, errA := os.ReadFile(filepath.Join(want, f))
		b, errB := os.ReadFile(filepath.Join(out, f))
		if errA != nil || errB != nil || !bytes.Equal(a, b) {
			t.Errorf("%s differs between the built-in run and the written demo run", f)
		}
	}
}

// Golden files of the demo outputs; regenerate with `go test ./cmd/headroom -update`.
func TestDemoGolden(t *testing.T) {
	dir := builtInRun(t)
	for _, f := range outputFiles {
		got, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil {
			t.Fatal(err)
		}
		golden := filepath.Join("..", "..", "testdata", "demo", f+".golden")
		if *update {
			if err := os.MkdirAll(filepath.Dir(golden), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(golden, got, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(golden)
		if err != nil {
			t.Fatalf("%v (run go test ./cmd/headroom -update to create it)", err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from %s; if the change is intended, rerun with -update and review the diff", f, golden)
		}
	}
}

// Mass balance and convergence on the demo town: sources out = demands
// (continuity, DESIGN.md "Network hydraulics"), and the solve met its tolerance.
func TestDemoMassBalanceAndConvergence(t *testing.T) {
	in, err := builtInDemo()
	if err != nil {
		t.Fatal(err)
	}
	in.cfg.FireFlow.Enabled = new(bool) // the scenarios only

	r, err := analyse(in)
	if err != nil {
		t.Fatal(err)
	}
	sol := r.sol
	if sol.RelativeFlowChange >= defaultSolverTolerance {
		t.Errorf("relative flow change %g, want < %g", sol.RelativeFlowChange, defaultSolverTolerance)
	}
	// The GGA flow update Q = Q − y + p·(H_a − H_b) meets continuity to the
	// round-off of p·H (the solver's floor, 64·ε·max p·max|H|, about 1e-9 m³/s
	// per node here), summed over some 1,400 junctions: 1e-8 of the demand is
	// well above that and far below anything a planner could see.
	if rel := math.Abs(float64(sol.Supply-sol.Demand)) / float64(sol.Demand); rel > 1e-8 {
		t.Errorf("supply %g m³/s vs demand %g m³/s: relative imbalance %g", sol.Supply, sol.Demand, rel)
	}
	var add hydraulics.Flow
	for _, n := range r.net.Nodes {
		if !n.Fixed {
			add += n.Demand
		}
	}
	want := add * hydraulics.Flow(r.cfg.Demands.PeakHourFactor)
	if rel := math.Abs(float64(sol.Demand-want)) / float64(want); rel > 1e-9 {
		t.Errorf("solved demand %g m³/s, want peak hour %g m³/s", sol.Demand, want)
	}
	if float64(sol.MaxHeadResidual) > 1e-6 {
		t.Errorf("largest head-balance residual %g m", sol.MaxHeadResidual)
	}
	// The demo must find real deficits (issue: several 4-in and 6-in mains cannot carry their load).
	var small int
	for i, p := range r.pipes {
		if len(r.parts[i]) > 0 && r.scores[i].Scored && r.checks[r.governing(i)].Deficit > 0 && p.Diameter.Inches() <= 6.01 {
			small++
		}
	}
	if small < 3 {
		t.Errorf("%d small mains with a deficit, want several", small)
	}
}

// Nothing is lost: every input pipe is in pipes.geojson, in order, and every
// scored pipe is in ranked.csv.
func TestEveryPipeAccountedFor(t *testing.T) {
	dir := builtInRun(t)
	in, err := builtInDemo()
	if err != nil {
		t.Fatal(err)
	}
	pipes := readGeoJSONProperties(t, filepath.Join(dir, "pipes.geojson"))
	if len(pipes) != len(in.pipes.Features) {
		t.Fatalf("pipes.geojson has %d features, input has %d", len(pipes), len(in.pipes.Features))
	}
	var scored int
	for i, p := range pipes {
		if p["feature"] != float64(i+1) {
			t.Fatalf("feature %d out of order: %v", i+1, p["feature"])
		}
		if p["rank"] != nil {
			scored++
		} else if p["reasons"] == "" || p["reasons"] == nil {
			t.Errorf("unscored pipe %v has no reason", p["pipe_id"])
		}
	}
	rows := readCSV(t, filepath.Join(dir, "ranked.csv"))
	if len(rows)-1 != scored {
		t.Errorf("ranked.csv has %d rows, pipes.geojson %d ranked pipes", len(rows)-1, scored)
	}
	if rows[0][0] != "rank" || rows[1][0] != "1" {
		t.Errorf("ranked.csv must start with rank 1: header %v, first row %v", rows[0][:3], rows[1][:3])
	}
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return rows
}

// GDAL reads every output as a layer with the right feature count and fields
// (skipped where ogrinfo is not installed; CI installs gdal-bin).
func TestOutputsOpenInGDAL(t *testing.T) {
	requireTool(t, "ogrinfo")
	dir := builtInRun(t)
	in, err := builtInDemo()
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		file   string
		count  int
		fields []string
	}{
		{"pipes.geojson", len(in.pipes.Features), []string{"pipe_id:", "diameter_in:", "flow_gpm: Real", "headloss_ft_per_kft: Real", "rank: Integer", "reasons: String"}},
		{"nodes.geojson", -1, []string{"node_id:", "head_ft: Real", "pressure_psi: Real"}},
		{"projects.geojson", len(readCSV(t, filepath.Join(dir, "projects.csv"))) - 1, []string{"project_id: String", "cost_usd:", "plan_year: Integer", "Geometry: Multi Line String"}},
		{"projects.gpkg", len(readCSV(t, filepath.Join(dir, "projects.csv"))) - 1, []string{"project_id: String", "cost_usd: Real"}},
	}
	for _, c := range cases {
		out, err := exec.Command("ogrinfo", "-ro", "-al", "-so", filepath.Join(dir, c.file)).CombinedOutput()
		if err != nil {
			t.Fatalf("ogrinfo %s: %v\n%s", c.file, err, out)
		}
		s := string(out)
		if c.count >= 0 && !strings.Contains(s, "Feature Count: "+strconv.Itoa(c.count)) {
			t.Errorf("%s: ogrinfo does not report %d features:\n%s", c.file, c.count, s)
		}
		for _, f := range c.fields {
			if !strings.Contains(s, f) {
				t.Errorf("%s: ogrinfo lacks field %q", c.file, f)
			}
		}
	}
}

// `headroom init` prints a template that loads back to the defaults.
func TestInitTemplateLoadsToDefaults(t *testing.T) {
	code, stdout, stderr := runHeadroom(t, "init")
	if code != exitOK {
		t.Fatalf("init: exit %d: %s", code, stderr)
	}
	cfg, err := decodeConfig(stdout, "template")
	if err != nil {
		t.Fatalf("template does not load: %v\n%s", err, stdout)
	}
	lim := cfg.limits()
	// 10 ft per 1,000 ft, 5 ft/s, 40 psi (defaults, common practice; DOMAIN.md §3).
	if math.Abs(lim.MaxSlope-0.010) > 1e-12 || math.Abs(lim.MaxVelocity.FPS()-5) > 1e-9 || math.Abs(lim.MinPressure.PSI()-40) > 1e-9 {
		t.Errorf("template limits %+v, want 10 ft/kft, 5 ft/s, 40 psi", lim)
	}
	if got, want := len(cfg.agingTable().Curves), len(hydraulics.DefaultAgingTable().Curves); got != want {
		t.Errorf("template has %d aging curves, want %d", got, want)
	}
	for _, key := range []string{"snap_tolerance_ft", "max_headloss_ft_per_kft", "max_velocity_fps", "min_pressure_psi", "peak_hour_factor", "[weights]", "[[aging.curve]]",
		"[breaks]", "[risk.edges]", "[economics]", "[projects]", "per_ft_by_diameter_in", "[plan]"} {
		if !strings.Contains(stdout, key) {
			t.Errorf("template lacks %s", key)
		}
	}
}

func TestUsageErrors(t *testing.T) {
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"no command", nil, "Commands:"},
		{"unknown command", []string{"rank"}, `unknown command "rank"`},
		{"demo without out", []string{"demo"}, "--out DIR is required"},
		{"bad flag", []string{"run", "--bogus"}, "bogus"},
		{"too many pipes", []string{"demo", "--out", "x", "--pipes", "2000000"}, "--pipes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := runHeadroom(t, c.args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d", code, exitUsage)
			}
			if !strings.Contains(stderr, c.want) {
				t.Errorf("stderr %q lacks %q", stderr, c.want)
			}
		})
	}
}

// readGeoJSONProperties returns the properties of each feature of a file.
func readGeoJSONProperties(t *testing.T, path string) []map[string]any {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var fc struct {
		Features []struct {
			Properties map[string]any `json:"properties"`
		} `json:"features"`
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	props := make([]map[string]any, len(fc.Features))
	for i, f := range fc.Features {
		props[i] = f.Properties
	}
	return props
}

// units = "si" writes SI column names and the same results converted:
// 1 gpm = 0.06309020 L/s and 1 in = 25.4 mm (DOMAIN.md §3.7, exact
// definitions); unit head loss is the same number in ft/kft and m/km.
func TestSIRunWritesSIColumns(t *testing.T) {
	us := builtInRun(t)
	demo, out := t.TempDir(), t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", demo); code != exitOK {
		t.Fatal(stderr)
	}
	cfgPath := filepath.Join(demo, demoConfigName)
	text, _ := os.ReadFile(cfgPath)
	if err := os.WriteFile(cfgPath, bytes.Replace(text, []byte(`units = "us"`), []byte(`units = "si"`), 1), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runHeadroom(t, "run", "--config", cfgPath, "--out", out); code != exitOK {
		t.Fatal(stderr)
	}
	usRows, siRows := readCSV(t, filepath.Join(us, "ranked.csv")), readCSV(t, filepath.Join(out, "ranked.csv"))
	col := func(rows [][]string, name string) int {
		for i, c := range rows[0] {
			if c == name {
				return i
			}
		}
		t.Fatalf("no column %q in %v", name, rows[0])
		return -1
	}
	pairs := []struct {
		us, si string
		factor float64 // SI value per US value
		tol    float64 // in SI units, from the written decimals
	}{
		{"flow_gpm", "flow_lps", 0.06309020, 0.006},
		{"diameter_in", "diameter_mm", 25.4, 0.2},
		{"headloss_ft_per_kft", "headloss_m_per_km", 1, 0.0011},
	}
	for _, p := range pairs {
		cu, cs := col(usRows, p.us), col(siRows, p.si)
		for k := 1; k < len(usRows) && k <= 50; k++ {
			u, _ := strconv.ParseFloat(usRows[k][cu], 64)
			s, _ := strconv.ParseFloat(siRows[k][cs], 64)
			if math.Abs(u*p.factor-s) > p.tol {
				t.Errorf("row %d: %s %v → %s %v, want %v", k, p.us, u, p.si, s, u*p.factor)
			}
		}
	}
	nodes := readGeoJSONProperties(t, filepath.Join(out, "nodes.geojson"))
	if _, ok := nodes[0]["pressure_kpa"]; !ok {
		t.Errorf("nodes.geojson lacks pressure_kpa: %v", nodes[0])
	}
}

// requireTool skips a test that needs an outside tool (GDAL's ogrinfo and
// ogr2ogr, PROJ's cs2cs) when it is missing, or fails it when
// HEADROOM_REQUIRE_GDAL=1, as CI sets, so that CI never skips them.
func requireTool(t *testing.T, name string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	if os.Getenv("HEADROOM_REQUIRE_GDAL") == "1" {
		t.Fatalf("%s is not installed and HEADROOM_REQUIRE_GDAL=1 (install gdal-bin and proj-bin)", name)
	}
	t.Skipf("%s not installed (Debian gdal-bin / proj-bin); skipping", name)
	return ""
}

// An SI run and a US run of the same network give the same physical answer
// within 0.05 % (issue 3): the unit system changes only what users read.
func TestSIAndUSRunsAgree(t *testing.T) {
	solve := func(units string) *result {
		in, err := builtInDemo()
		if err != nil {
			t.Fatal(err)
		}
		in.cfg.Units = units
		in.cfg.FireFlow.Enabled = new(bool) // the scenarios only
		r, err := analyse(in)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	us, si := solve("us"), solve("si")
	rel := func(a, b float64) float64 { return math.Abs(a-b) / math.Max(math.Abs(a), 1e-9) }
	for j := range us.sol.Flow {
		if a, b := float64(us.sol.Flow[j]), float64(si.sol.Flow[j]); math.Abs(a-b) > 1e-9 && rel(a, b) > 5e-4 {
			t.Fatalf("pipe %d: flow %g m³/s (us) vs %g m³/s (si)", j, a, b)
		}
	}
	for i := range us.sol.Head {
		if a, b := float64(us.sol.Head[i]), float64(si.sol.Head[i]); rel(a, b) > 5e-4 {
			t.Fatalf("node %d: head %g m (us) vs %g m (si)", i, a, b)
		}
	}
	for i := range us.scores {
		if us.scores[i].Rank != si.scores[i].Rank {
			t.Fatalf("pipe %s: rank %d (us) vs %d (si)", us.scores[i].ID, us.scores[i].Rank, si.scores[i].Rank)
		}
	}
}

// demands.allocation = "along_pipe" splits each point between the ends of
// its nearest pipe by position; the total demand is conserved (issue 5)
// and the run solves.
func TestAlongPipeAllocationConservesDemand(t *testing.T) {
	total := func(alloc string) (hydraulics.Flow, *result) {
		in, err := builtInDemo()
		if err != nil {
			t.Fatal(err)
		}
		in.cfg.Demands.Allocation = alloc
		in.cfg.FireFlow.Enabled = new(bool) // the scenarios only
		r, err := analyse(in)
		if err != nil {
			t.Fatal(err)
		}
		var sum hydraulics.Flow
		for _, n := range r.net.Nodes {
			sum += n.Demand
		}
		return sum, r
	}
	near, rn := total(allocateNearestNode)
	along, ra := total(allocateAlongPipe)
	if math.Abs(float64(along-near)) > 1e-12*float64(near) {
		t.Errorf("along-pipe total %g m³/s, nearest-node %g m³/s", along, near)
	}
	var differ int
	for i := range rn.net.Nodes {
		if rn.net.Nodes[i].Demand != ra.net.Nodes[i].Demand {
			differ++
		}
	}
	if differ == 0 {
		t.Error("along_pipe allocation gave the same node demands as nearest_node")
	}
}
