package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/BurntSushi/toml"
)

// The bad-input corpus: one folder per failure seen in utility data under
// testdata/bad/, each a small run of the invented hamlet of Brindlecombe
// (lon −98.4, lat 38.6) with one thing wrong, and a want.toml saying what
// headroom must do with it. Adding a folder adds a subtest. The shapefile and
// GeoPackage cases were made with GDAL 3.6.2's ogr2ogr from the case's
// pipe layer; each want.toml records the exact command in made_with.
const corpusDir = "../../testdata/bad"

// corpusWant is a case's want.toml.
type corpusWant struct {
	Input    string `toml:"input"`     // the bad input, for the README table
	Outcome  string `toml:"outcome"`   // what headroom does, for the README table
	MadeWith string `toml:"made_with"` // the command that made a binary fixture
	Exit     int    `toml:"exit"`
	// Stderr are parts of the fatal message; Stdout parts of the run summary.
	Stderr  []string      `toml:"stderr"`
	Stdout  []string      `toml:"stdout"`
	Problem []wantProblem `toml:"problem"`
	Pipe    []wantPipe    `toml:"pipe"`
}

// wantProblem is a row expected in problems.csv: file, feature (0 for a row
// about no one feature), id and field exactly; problem and action contain
// the parts given.
type wantProblem struct {
	File, ID, Field, Problem, Action string
	Feature                          int
}

// wantPipe is a feature of pipes.geojson: scored or not, with Reason a part
// of its reasons ("" for any).
type wantPipe struct {
	Feature int
	Scored  bool
	Reason  string
}

func corpusCases(t *testing.T) []string {
	t.Helper()
	entries, err := os.ReadDir(corpusDir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		if e.IsDir() {
			names = append(names, e.Name())
		}
	}
	if len(names) < 30 {
		t.Fatalf("%d corpus cases in %s, want the 30 the issue lists", len(names), corpusDir)
	}
	return names
}

func readWant(t *testing.T, dir string) corpusWant {
	t.Helper()
	var w corpusWant
	md, err := toml.DecodeFile(filepath.Join(dir, "want.toml"), &w)
	if err != nil {
		t.Fatal(err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		t.Fatalf("want.toml: unknown keys %v", und)
	}
	if w.Input == "" || w.Outcome == "" {
		t.Fatal("want.toml needs input and outcome (they make the README table)")
	}
	if w.Exit == exitOK && len(w.Problem)+len(w.Pipe)+len(w.Stdout) == 0 || w.Exit != exitOK && len(w.Stderr) == 0 {
		t.Fatal("want.toml expects nothing to check")
	}
	return w
}

// runGuarded runs headroom in-process and fails the test if it panics: a
// panic is never how a bad input may end.
func runGuarded(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	defer func() {
		if p := recover(); p != nil {
			t.Fatalf("headroom panicked: %v", p)
		}
	}()
	return runHeadroom(t, args...)
}

func TestBadInputCorpus(t *testing.T) {
	for _, name := range corpusCases(t) {
		t.Run(name, func(t *testing.T) {
			dir := filepath.Join(corpusDir, name)
			want := readWant(t, dir)
			out := filepath.Join(t.TempDir(), "out")
			code, stdout, stderr := runGuarded(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out)
			// A Go panic exits 2 and prints "panic:"; neither is a bad input's end.
			if code == exitUsage || strings.Contains(stderr, "panic:") {
				t.Fatalf("exit %d with stderr:\n%s", code, stderr)
			}
			if code != want.Exit {
				t.Fatalf("exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, want.Exit, stdout, stderr)
			}
			for _, part := range want.Stderr {
				if !strings.Contains(stderr, part) {
					t.Errorf("stderr lacks %q:\n%s", part, stderr)
				}
			}
			for _, part := range want.Stdout {
				if !strings.Contains(stdout, part) {
					t.Errorf("summary lacks %q:\n%s", part, stdout)
				}
			}
			if code != exitOK {
				if stdout != "" {
					t.Errorf("a run that stopped printed a summary:\n%s", stdout)
				}
				if entries, _ := os.ReadDir(out); len(entries) > 0 {
					t.Errorf("a run that stopped wrote %d files", len(entries))
				}
				return
			}
			checkRunOutputs(t, dir, out, stdout, want)
		})
	}
}

// checkRunOutputs checks a case that ran: the problems and pipes want.toml
// expects, no NaN or Inf in any text output, and the accounting.
func checkRunOutputs(t *testing.T, dir, out, stdout string, want corpusWant) {
	t.Helper()
	problems := readCSV(t, filepath.Join(out, "problems.csv"))
	if got := strings.Join(problems[0], ","); got != "file,feature,id,field,problem,action" {
		t.Fatalf("problems.csv header %q", got)
	}
	rows := problems[1:]
	for _, w := range want.Problem {
		if !slices.ContainsFunc(rows, w.matches) {
			t.Errorf("problems.csv lacks %+v; it has:\n%s", w, csvText(rows))
		}
	}
	pipes := readGeoJSONProperties(t, filepath.Join(out, "pipes.geojson"))
	for _, w := range want.Pipe {
		if w.Feature < 1 || w.Feature > len(pipes) {
			t.Fatalf("want.toml names pipe feature %d of %d", w.Feature, len(pipes))
		}
		p := pipes[w.Feature-1]
		reasons, _ := p["reasons"].(string)
		if (p["rank"] != nil) != w.Scored || !strings.Contains(reasons, w.Reason) {
			t.Errorf("pipe feature %d: rank %v, reasons %q; want scored %v with %q", w.Feature, p["rank"], reasons, w.Scored, w.Reason)
		}
	}
	for _, f := range []string{"ranked.csv", "pipes.geojson", "nodes.geojson", "problems.csv"} {
		b, err := os.ReadFile(filepath.Join(out, f))
		if err != nil {
			t.Fatal(err)
		}
		if m := nonFinite.Find(b); m != nil {
			t.Errorf("%s holds %q", f, m)
		}
	}
	checkNegativePressureRows(t, rows)
	checkAccounting(t, dir, out, stdout, rows, pipes)
}

// nonFinite matches a NaN or infinity as any writer would spell it.
var nonFinite = regexp.MustCompile(`(?i)\bnan\b|[+-]?\binf(inity)?\b`)

func (w wantProblem) matches(r []string) bool {
	feature := ""
	if w.Feature > 0 {
		feature = strconv.Itoa(w.Feature)
	}
	return r[0] == w.File && r[1] == feature && r[2] == w.ID && r[3] == w.Field &&
		strings.Contains(r[4], w.Problem) && strings.Contains(r[5], w.Action)
}

func csvText(rows [][]string) string {
	var b strings.Builder
	for _, r := range rows {
		b.WriteString(strings.Join(r, " | ") + "\n")
	}
	return b.String()
}

// A junction's pressure row must agree with its own grade and ground:
// p = (H − z) · 0.43333 psi/ft (γ = 62.4 lb/ft³; DOMAIN.md §3, "1 ft =
// 0.43333 psi"), to the 0.1 ft the figures are written to.
var pressureRow = regexp.MustCompile(`pressure of (-?[0-9.]+) psi \(hydraulic grade (-?[0-9.]+) ft, ground (-?[0-9.]+) ft\)`)

func checkNegativePressureRows(t *testing.T, rows [][]string) {
	t.Helper()
	for _, r := range rows {
		m := pressureRow.FindStringSubmatch(r[4])
		if m == nil {
			continue
		}
		p, _ := strconv.ParseFloat(m[1], 64)
		h, _ := strconv.ParseFloat(m[2], 64)
		z, _ := strconv.ParseFloat(m[3], 64)
		if want := (h - z) * 0.43333; p >= 0 || math.Abs(p-want) > 0.1*0.43333+0.05 {
			t.Errorf("junction %s: pressure %v psi, but (%v − %v) ft × 0.43333 = %.2f psi", r[2], p, h, z, want)
		}
	}
}

// checkAccounting checks from the written files, not the summary, that every
// input feature ends in the outputs: each pipe is a feature of
// pipes.geojson, scored or with its reason (and a problems.csv row when it
// was left out or no source reaches it); each source, demand and elevation
// point is used or has a problems.csv row saying it was left out. The sources
// used are the source nodes of nodes.geojson, and the demands used must add
// up to the average-day demand written on the nodes. Then the summary's
// counts must equal the ones found here.
func checkAccounting(t *testing.T, dir, out, stdout string, rows [][]string, pipes []map[string]any) {
	t.Helper()
	cfg, err := loadConfig(filepath.Join(dir, "headroom.toml"))
	if err != nil {
		t.Fatal(err)
	}
	listed := map[string]map[int][]string{} // file → feature → actions
	for _, r := range rows {
		if r[1] == "" {
			continue
		}
		k, err := strconv.Atoi(r[1])
		if err != nil {
			t.Fatalf("problems.csv feature %q", r[1])
		}
		if listed[r[0]] == nil {
			listed[r[0]] = map[int][]string{}
		}
		listed[r[0]][k] = append(listed[r[0]][k], r[5])
	}
	leftOut := func(file string, k int, marks ...string) bool {
		for _, a := range listed[file][k] {
			for _, m := range marks {
				if strings.HasPrefix(a, m) {
					return true
				}
			}
		}
		return false
	}
	counts := map[string][3]int{} // summary path → in, used, left out

	// Pipes: one feature of pipes.geojson per input feature, in order.
	pipeFile := filepath.Base(cfg.Pipes.Path)
	in := readInputFeatures(t, cfg.path(cfg.Pipes.Path))
	if len(pipes) != len(in) {
		t.Fatalf("pipes.geojson has %d features, the pipe layer %d", len(pipes), len(in))
	}
	scored := 0
	for i, p := range pipes {
		reasons, _ := p["reasons"].(string)
		switch {
		case p["feature"] != float64(i+1):
			t.Errorf("pipes.geojson feature %d is numbered %v", i+1, p["feature"])
		case p["rank"] != nil:
			scored++
		case reasons == "":
			t.Errorf("pipe feature %d is unscored with no reason", i+1)
		case !strings.HasPrefix(reasons, "closed") && len(listed[pipeFile][i+1]) == 0:
			t.Errorf("pipe feature %d is unscored (%q) but not in problems.csv", i+1, reasons)
		}
	}
	counts[cfg.Pipes.Path] = [3]int{len(in), scored, len(in) - scored}

	// Sources: the ones not left out are exactly the sources on the nodes.
	nodes := readGeoJSONProperties(t, filepath.Join(out, "nodes.geojson"))
	var onNodes, joined []string
	var nodeDemand float64
	for _, n := range nodes {
		if id, ok := n["source_id"].(string); ok {
			onNodes = append(onNodes, id)
		}
		q, _ := n["average_day_demand_gpm"].(float64)
		nodeDemand += q
	}
	srcFile := filepath.Base(cfg.Sources.Path)
	in = readInputFeatures(t, cfg.path(cfg.Sources.Path))
	for k, f := range in {
		if !leftOut(srcFile, k+1, "source left out", "source not connected", "source ignored") {
			joined = append(joined, fmt.Sprint(f[cfg.Sources.Fields.ID]))
		}
	}
	slices.Sort(onNodes)
	slices.Sort(joined)
	if !slices.Equal(onNodes, joined) {
		t.Errorf("sources on nodes.geojson %v, but the sources not left out are %v", onNodes, joined)
	}
	counts[cfg.Sources.Path] = [3]int{len(in), len(joined), len(in) - len(joined)}

	// Demands: the ones not left out add up to the demand on the nodes
	// (written to 0.001 gpm per node).
	demFile := filepath.Base(cfg.Demands.Path)
	in = readInputFeatures(t, cfg.path(cfg.Demands.Path))
	used, sum := 0, 0.0
	for k, f := range in {
		if leftOut(demFile, k+1, "demand point left out", "demand left out", "demand area left out") {
			continue
		}
		used++
		q, ok := f[cfg.Demands.Fields.Demand].(float64)
		if !ok {
			t.Errorf("demand feature %d (%v) is neither used nor left out", k+1, f[cfg.Demands.Fields.Demand])
		}
		sum += q
	}
	if tol := 0.0005*float64(len(nodes)) + 1e-9; math.Abs(sum-nodeDemand) > tol {
		t.Errorf("demands not left out add up to %.3f gpm, the nodes carry %.3f gpm", sum, nodeDemand)
	}
	counts[cfg.Demands.Path] = [3]int{len(in), used, len(in) - used}

	// Elevations: used unless left out.
	elevFile := filepath.Base(cfg.Elevations.Path)
	in = readInputFeatures(t, cfg.path(cfg.Elevations.Path))
	used = 0
	for k := range in {
		if !leftOut(elevFile, k+1, "elevation point left out") {
			used++
		}
	}
	counts[cfg.Elevations.Path] = [3]int{len(in), used, len(in) - used}

	// Every problem row names a feature that exists.
	sizes := map[string]int{}
	for path, c := range counts {
		sizes[filepath.Base(path)] = c[0]
	}
	if cfg.Hydrants.Path != "" { // hydrant rows (needed.go) name features of the hydrant layer
		sizes[filepath.Base(cfg.Hydrants.Path)] = len(readInputFeatures(t, cfg.path(cfg.Hydrants.Path)))
	}
	if cfg.Facilities.Path != "" {
		sizes[filepath.Base(cfg.Facilities.Path)] = len(readInputFeatures(t, cfg.path(cfg.Facilities.Path)))
	}
	if cfg.Breaks.Path != "" {
		// Breaks: each joined to a main or left out with a problems.csv row.
		breakFile := filepath.Base(cfg.Breaks.Path)
		in := readInputFeatures(t, cfg.path(cfg.Breaks.Path))
		sizes[breakFile] = len(in)
		notJoined := 0
		for k := range in {
			if leftOut(breakFile, k+1, "break left out", "break not joined") {
				notJoined++
			}
		}
		m := regexp.MustCompile(`(\d+) breaks: (\d+) joined by pipe id, (\d+) to the nearest main, (\d+) matched no main`).FindStringSubmatch(stdout)
		if m == nil {
			t.Fatalf("the summary has no break line:\n%s", stdout)
		}
		if m[1] != strconv.Itoa(len(in)) || m[4] != strconv.Itoa(notJoined) {
			t.Errorf("summary: %s breaks, %s matched no main; the layer has %d, problems.csv leaves %d out", m[1], m[4], len(in), notJoined)
		}
	}
	for file, features := range listed {
		for k := range features {
			if n, ok := sizes[file]; !ok || k < 1 || k > n {
				t.Errorf("problems.csv names %s feature %d, which the inputs do not have", file, k)
			}
		}
	}
	checkSummaryCounts(t, stdout, counts)
}

// summaryCount matches an Inputs line: "  path  N noun: U verb, L left out|unscored".
var summaryCount = regexp.MustCompile(`(?m)^  (\S+)\s+(\d+) [a-z ]+: (\d+) [a-z ]+, (\d+) (?:left out|unscored)`)

func checkSummaryCounts(t *testing.T, stdout string, counts map[string][3]int) {
	t.Helper()
	seen := 0
	for _, m := range summaryCount.FindAllStringSubmatch(stdout, -1) {
		want, ok := counts[m[1]]
		if !ok {
			continue
		}
		seen++
		var got [3]int
		for k := range got {
			got[k], _ = strconv.Atoi(m[2+k])
		}
		if got != want {
			t.Errorf("summary says %s: in %d, used %d, left out %d; the files say %d, %d, %d",
				m[1], got[0], got[1], got[2], want[0], want[1], want[2])
		}
		if got[0] != got[1]+got[2] {
			t.Errorf("summary %s: %d in ≠ %d used + %d left out", m[1], got[0], got[1], got[2])
		}
	}
	if seen != len(counts) {
		t.Errorf("summary has in/out counts for %d of %d layers:\n%s", seen, len(counts), stdout)
	}
}

// readInputFeatures reads the properties of each feature of a GeoJSON
// input layer with encoding/json, independently of headroom's reader.
func readInputFeatures(t *testing.T, path string) []map[string]any {
	t.Helper()
	if ext := filepath.Ext(path); ext != ".geojson" && ext != ".json" {
		t.Fatalf("%s: a corpus case that runs must use GeoJSON layers, so the test can count them", path)
	}
	return readGeoJSONProperties(t, path)
}

// The README's "Bad input" table lists every corpus case with its exit
// code, and nothing else: every row is a passing subtest above.
func TestReadmeListsBadInputCorpus(t *testing.T) {
	b, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	start := strings.Index(text, "\n## Bad input\n")
	if start < 0 {
		t.Fatal(`README.md has no "## Bad input" section`)
	}
	section := text[start+1:]
	if end := strings.Index(section[3:], "\n## "); end >= 0 {
		section = section[:end+3]
	}
	row := regexp.MustCompile("(?m)^\\| `([a-z0-9-]+)` \\|[^|]*\\| ([0-9]) \\|")
	listed := map[string]string{}
	for _, m := range row.FindAllStringSubmatch(section, -1) {
		listed[m[1]] = m[2]
	}
	for _, name := range corpusCases(t) {
		want := readWant(t, filepath.Join(corpusDir, name))
		code, ok := listed[name]
		switch {
		case !ok:
			t.Errorf("README's Bad input table lacks %s", name)
		case code != strconv.Itoa(want.Exit):
			t.Errorf("README gives %s exit %s, want.toml %d", name, code, want.Exit)
		}
		delete(listed, name)
	}
	for name := range listed {
		t.Errorf("README lists %s, which has no folder in testdata/bad", name)
	}
}
