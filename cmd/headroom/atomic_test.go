package main

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/paulmach/orb"

	"headroom/gis"
)

// childEnv, set to "1", makes the test binary run headroomMain on its
// arguments and exit (see TestMain), so a test can start a real headroom
// process and kill it (the x/tools cmd/stringer end-to-end trick).
const childEnv = "HEADROOM_TEST_MAIN"

// atomicKillPipes is the size of the demo town the kill test runs: large
// enough that writing its layers takes a good part of a second, so that
// the kill lands while files are being written.
const atomicKillPipes = 10_000

// atomicSnapshot maps each regular file in dir (not in sub-folders) to the
// SHA-256 of its bytes; it also returns the names of the sub-folders.
func atomicSnapshot(t *testing.T, dir string) (map[string][32]byte, []string) {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	files := map[string][32]byte{}
	var folders []string
	for _, e := range entries {
		if e.IsDir() {
			folders = append(folders, e.Name())
			continue
		}
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		files[e.Name()] = sha256.Sum256(b)
	}
	return files, folders
}

// atomicSameFiles fails unless got and want hold the same names with the
// same bytes.
func atomicSameFiles(t *testing.T, what string, got, want map[string][32]byte) {
	t.Helper()
	for name, h := range want {
		g, ok := got[name]
		switch {
		case !ok:
			t.Errorf("%s: %s is missing", what, name)
		case g != h:
			t.Errorf("%s: %s changed", what, name)
		}
	}
	for name := range got {
		if _, ok := want[name]; !ok {
			t.Errorf("%s: unexpected file %s", what, name)
		}
	}
}

// atomicDemo writes a demo town of n pipes with the given seed and returns
// its config path.
func atomicDemo(t *testing.T, n int, seed string) string {
	t.Helper()
	dir := t.TempDir()
	if code, _, stderr := runHeadroom(t, "demo", "--out", dir, "--pipes", strconv.Itoa(n), "--seed", seed); code != exitOK {
		t.Fatalf("demo: exit %d: %s", code, stderr)
	}
	// The fire-flow sweep of a large town takes longer than the writing
	// this test is about; the scenarios and their outputs are enough.
	cfg := filepath.Join(dir, demoConfigName)
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	off := strings.Replace(string(text), "[fire_flow]  # max day plus fire flow at each hydrant, one at a time\nenabled = true",
		"[fire_flow]  # max day plus fire flow at each hydrant, one at a time\nenabled = false", 1)
	if off == string(text) {
		t.Fatal("could not turn fire flow off in the demo config")
	}
	if err := os.WriteFile(cfg, []byte(off), 0o644); err != nil {
		t.Fatal(err)
	}
	return cfg
}

// A run killed (SIGKILL) while it writes leaves every previous output
// byte-identical and nothing half-written beside them; the next run into
// the folder removes the staging folder the killed run left and leaves
// exactly its own outputs (issue 4 item 5). Three different towns make the
// three runs' outputs differ: the built-in town first, a larger demo town
// for the killed run, the bad-input town last.
func TestKilledRunLeavesPreviousOutputs(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a child process that runs a 10,000-pipe town")
	}
	// The two last runs are compared byte for byte, manifest.json too, whose
	// time is to the second: fix it, as a reproducible build would.
	t.Setenv("SOURCE_DATE_EPOCH", "1780000000")
	large := atomicDemo(t, atomicKillPipes, "2")
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runHeadroom(t, "run", "--out", out); code != exitOK {
		t.Fatalf("first run: exit %d: %s", code, stderr)
	}
	before, folders := atomicSnapshot(t, out)
	// ranked.csv, problems.csv, c_calibration.csv, projects.csv, plan.csv,
	// pipes, nodes, hydrants and projects as GeoJSON and GeoPackage, and
	// ranked.xlsx, report.html and manifest.json
	if len(before) != 16 || len(folders) != 0 {
		t.Fatalf("first run wrote %d files and %d folders, want 16 files and no folder", len(before), len(folders))
	}

	var stderr bytes.Buffer
	child := exec.Command(os.Args[0], "run", "--config", large, "--out", out)
	child.Env = append(os.Environ(), childEnv+"=1")
	child.Stdout, child.Stderr = io.Discard, &stderr
	if err := child.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- child.Wait() }()
	stage, err := atomicAwaitStagedFile(out, "ranked.csv", done, 60*time.Second)
	if err != nil {
		child.Process.Kill()
		<-done
		t.Fatalf("%v; child stderr:\n%s", err, stderr.String())
	}
	if err := child.Process.Kill(); err != nil {
		t.Fatal(err)
	}
	<-done
	entries, _ := os.ReadDir(filepath.Join(out, stage))
	var staged []string
	for _, e := range entries {
		staged = append(staged, e.Name())
	}
	t.Logf("killed with %s holding %v", stage, staged)

	after, folders := atomicSnapshot(t, out)
	atomicSameFiles(t, "after the kill", after, before)
	if !slices.Equal(folders, []string{stage}) {
		t.Errorf("after the kill the output folder holds folders %v, want only the staging folder %s", folders, stage)
	}

	// The next run removes the staging folder and leaves exactly its own
	// outputs, the same bytes as the same run into an empty folder.
	fixture := filepath.Join(writeFixture(t, nil), "headroom.toml")
	fresh := filepath.Join(t.TempDir(), "fresh")
	for _, o := range []string{out, fresh} {
		if code, _, stderr := runHeadroom(t, "run", "--config", fixture, "--out", o); code != exitOK {
			t.Fatalf("run into %s: exit %d: %s", o, code, stderr)
		}
	}
	final, folders := atomicSnapshot(t, out)
	want, _ := atomicSnapshot(t, fresh)
	atomicSameFiles(t, "after the next run", final, want)
	if len(folders) != 0 {
		t.Errorf("the next run left folders %v", folders)
	}
}

// atomicAwaitStagedFile polls dir until a staging folder in it holds name
// (a file the writers have finished) and a temporary file (one being
// written), and returns the staging folder's name. It fails
// if the child exits first or the time runs out.
func atomicAwaitStagedFile(dir, name string, done <-chan error, limit time.Duration) (string, error) {
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		select {
		case err := <-done:
			return "", errors.New("the run ended before it could be killed (exit: " + errString(err) + ")")
		default:
		}
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if e.IsDir() && strings.HasPrefix(e.Name(), stagingPrefix) {
				if atomicMidWrite(filepath.Join(dir, e.Name()), name) {
					return e.Name(), nil
				}
			}
		}
		time.Sleep(time.Millisecond)
	}
	return "", errors.New("no staging folder with " + name + " appeared within " + limit.String())
}

// atomicMidWrite reports whether stage holds the finished file name and a
// temporary file ("." first) that a writer is filling.
func atomicMidWrite(stage, name string) bool {
	entries, _ := os.ReadDir(stage)
	done, busy := false, false
	for _, e := range entries {
		done = done || e.Name() == name
		busy = busy || strings.HasPrefix(e.Name(), ".")
	}
	return done && busy
}

func errString(err error) string {
	if err == nil {
		return "success"
	}
	return err.Error()
}

// atomicOutput is an output that writes text through the atomic writer.
func atomicOutput(name, text string) output {
	return output{name, func(p string) error {
		return gis.WriteFileAtomic(p, func(w io.Writer) error { _, err := io.WriteString(w, text); return err })
	}}
}

// atomicShapefile writes the parts of a shapefile output (placeholder
// bytes: commitOutputs moves files, it does not read them), leaving out
// the parts in skip.
func atomicShapefile(name, text string, skip ...string) output {
	return output{name, func(p string) error {
		stem := strings.TrimSuffix(p, ".shp")
		for _, part := range shapefileParts {
			if slices.Contains(skip, part) {
				continue
			}
			if err := os.WriteFile(stem+part, []byte(text+part), 0o644); err != nil {
				return err
			}
		}
		return nil
	}}
}

// commitOutputs is all-or-nothing: a failing writer or a folder in the way
// of a rename leaves the previous outputs as they were and no staging
// folder; a successful commit replaces every file, every shapefile part
// included, removes a stale part and any staging folder a killed run left.
func TestCommitOutputs(t *testing.T) {
	previous := map[string]string{"a.csv": "old a", "b.csv": "old b", "layer.shp": "old shp", "layer.shx": "old shx",
		"layer.dbf": "old dbf", "layer.prj": "old prj", "layer.cpg": "old cpg"}
	failing := output{"b.csv", func(string) error { return errors.New("disk full") }}
	cases := []struct {
		name    string
		outs    []output
		prepare func(t *testing.T, dir string)
		wantErr string            // "" for success
		want    map[string]string // the folder's files afterwards
	}{
		{"writer fails", []output{atomicOutput("a.csv", "new a"), failing, atomicShapefile("layer.shp", "new")},
			nil, "disk full", previous},
		{"folder in the way", []output{atomicOutput("a.csv", "new a"), atomicOutput("c.csv", "new c")},
			func(t *testing.T, dir string) { mkdir(t, filepath.Join(dir, "c.csv")) }, "is a folder", previous},
		{"success", []output{atomicOutput("a.csv", "new a"), atomicShapefile("layer.shp", "new", ".prj"), atomicOutput("b.csv", "new b")},
			func(t *testing.T, dir string) {
				mkdir(t, filepath.Join(dir, stagingPrefix+"killed"))
				writeFile(t, filepath.Join(dir, stagingPrefix+"killed", "a.csv"), "half")
			}, "",
			map[string]string{"a.csv": "new a", "b.csv": "new b", "layer.shp": "new.shp", "layer.shx": "new.shx",
				"layer.dbf": "new.dbf", "layer.cpg": "new.cpg"}}, // the old .prj would describe another run's layer
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			for name, text := range previous {
				writeFile(t, filepath.Join(dir, name), text)
			}
			if tc.prepare != nil {
				tc.prepare(t, dir)
			}
			written, err := commitOutputs(dir, tc.outs)
			switch {
			case tc.wantErr == "" && err != nil:
				t.Fatalf("commit: %v", err)
			case tc.wantErr != "" && (err == nil || !strings.Contains(err.Error(), tc.wantErr)):
				t.Fatalf("commit error %v, want one containing %q", err, tc.wantErr)
			case tc.wantErr == "" && len(written) != len(tc.outs):
				t.Errorf("written %v, want %d paths", written, len(tc.outs))
			}
			got := map[string]string{}
			entries, _ := os.ReadDir(dir)
			for _, e := range entries {
				if e.IsDir() {
					if strings.HasPrefix(e.Name(), stagingPrefix) {
						t.Errorf("staging folder %s left behind", e.Name())
					}
					continue
				}
				b, _ := os.ReadFile(filepath.Join(dir, e.Name()))
				got[e.Name()] = string(b)
			}
			for name, text := range tc.want {
				if got[name] != text {
					t.Errorf("%s = %q, want %q", name, got[name], text)
				}
			}
			for name := range got {
				if _, ok := tc.want[name]; !ok {
					t.Errorf("unexpected file %s = %q", name, got[name])
				}
			}
		})
	}
}

func mkdir(t *testing.T, dir string) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
}

func writeFile(t *testing.T, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// atomicLayeredFixture is the bad-input town with its layers in a
// sub-folder "layers" beside the config; it returns the config's folder.
func atomicLayeredFixture(t *testing.T) string {
	t.Helper()
	dir := writeFixture(t, nil)
	mkdir(t, filepath.Join(dir, "layers"))
	cfg, err := os.ReadFile(filepath.Join(dir, "headroom.toml"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(cfg)
	for _, l := range []string{"pipes", "sources", "demands", "elevations"} {
		name := l + ".geojson"
		if err := os.Rename(filepath.Join(dir, name), filepath.Join(dir, "layers", "town-"+name)); err != nil {
			t.Fatal(err)
		}
		text = strings.Replace(text, `"`+name+`"`, `"layers/town-`+name+`"`, 1)
	}
	writeFile(t, filepath.Join(dir, "headroom.toml"), text)
	return dir
}

// --out may not be a folder that holds an input (a layer or the config)
// unless --allow-input-folder is given; even then an input file is never
// overwritten (issue 4 item 5).
func TestOutFolderHoldingAnInput(t *testing.T) {
	layered := atomicLayeredFixture(t)
	flat := writeFixture(t, nil) // pipes.geojson is both an input and an output name
	link := filepath.Join(t.TempDir(), "link")
	if err := os.Symlink(filepath.Join(layered, "layers"), link); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name     string
		config   string
		out      string
		allow    bool
		wantCode int
		want     []string // in stderr
	}{
		{"layer folder", layered, filepath.Join(layered, "layers"), false, exitError,
			[]string{"town-pipes.geojson", "--allow-input-folder", "inputs are never overwritten"}},
		{"config folder", layered, layered, false, exitError, []string{"headroom.toml", "--allow-input-folder"}},
		{"layer folder through a link", layered, link, false, exitError, []string{"--allow-input-folder"}},
		{"layer folder allowed", layered, filepath.Join(layered, "layers"), true, exitOK, nil},
		{"input file never overwritten", flat, flat, true, exitError,
			[]string{filepath.Join(flat, "pipes.geojson"), "inputs are never overwritten"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			inputs := atomicInputs(t, tc.config)
			beforeOut, _ := atomicSnapshot(t, tc.out)
			args := []string{"run", "--config", filepath.Join(tc.config, "headroom.toml"), "--out", tc.out}
			if tc.allow {
				args = append(args, "--allow-input-folder")
			}
			code, _, stderr := runHeadroom(t, args...)
			if code != tc.wantCode {
				t.Fatalf("exit %d, want %d; stderr %s", code, tc.wantCode, stderr)
			}
			for _, w := range tc.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr lacks %q: %s", w, stderr)
				}
			}
			atomicKept(t, atomicInputs(t, tc.config), inputs)
			afterOut, folders := atomicSnapshot(t, tc.out)
			if tc.wantCode != exitOK {
				atomicSameFiles(t, "refused --out", afterOut, beforeOut)
				return
			}
			for _, f := range append(outputFiles, binaryOutputs...) {
				if _, ok := afterOut[f]; !ok {
					t.Errorf("%s not written", f)
				}
			}
			if len(folders) != 0 {
				t.Errorf("folders left in --out: %v", folders)
			}
		})
	}
}

// atomicKept fails unless every input in want is in got with its bytes.
func atomicKept(t *testing.T, got, want map[string][32]byte) {
	t.Helper()
	for name, h := range want {
		if g, ok := got[name]; !ok || g != h {
			t.Errorf("input %s was changed or removed", name)
		}
	}
}

// atomicInputs snapshots a fixture's config folder and its layers folder.
func atomicInputs(t *testing.T, dir string) map[string][32]byte {
	t.Helper()
	files, folders := atomicSnapshot(t, dir)
	for _, f := range folders {
		sub, _ := atomicSnapshot(t, filepath.Join(dir, f))
		for name, h := range sub {
			files[f+"/"+name] = h
		}
	}
	return files
}

// A shapefile run moves every part of each shapefile into --out and
// leaves no staging folder.
func TestShapefileOutputsAllMoved(t *testing.T) {
	dir := writeFixture(t, func(name, text string) string {
		switch name {
		case "headroom.toml":
			return text + "[output]\nformats = [\"shp\"]\n"
		case "pipes.geojson": // a shapefile holds one shape type: leave out the Point "pipe"
			var keep []string
			for _, line := range strings.Split(text, "\n") {
				if !strings.Contains(line, `"id":"P7"`) {
					keep = append(keep, line)
				}
			}
			return strings.Join(keep, "\n")
		}
		return text
	})
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runHeadroom(t, "run", "--config", filepath.Join(dir, "headroom.toml"), "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	files, folders := atomicSnapshot(t, out)
	var want []string
	for _, l := range []string{"pipes", "nodes", "hydrants"} { // fire flow is on: every junction is a hydrant
		for _, part := range shapefileParts {
			want = append(want, l+part)
		}
	}
	want = append(want, "ranked.csv", "fields.csv", "c_calibration.csv", "problems.csv", "projects.csv", "plan.csv",
		"ranked.xlsx", "report.html", "manifest.json")
	for _, f := range want {
		if _, ok := files[f]; !ok {
			t.Errorf("%s not in --out", f)
		}
	}
	if len(files) != len(want) || len(folders) != 0 {
		t.Errorf("--out holds %d files and folders %v, want the %d files %v", len(files), folders, len(want), want)
	}
}

// checkFinite finds a NaN or ±Inf in a value or a coordinate and names
// the layer, row, id, input feature and column; null and finite values pass.
func TestCheckFinite(t *testing.T) {
	layer := func(v any, g orb.Geometry) *gis.Layer {
		return &gis.Layer{Name: "pipes", Columns: []gis.Column{
			{Name: "pipe_id", Kind: gis.String}, {Name: "feature", Kind: gis.Integer}, {Name: "velocity_fps", Kind: gis.Real, Decimals: 3},
		}, Rows: []gis.Row{
			{Geometry: orb.LineString{{0, 0}, {1, 1}}, Values: []any{"P-1", 1, 2.5}},
			{Geometry: g, Values: []any{"P-2", 7, v}},
		}}
	}
	line := orb.LineString{{0, 0}, {1, 1}}
	cases := []struct {
		name string
		l    *gis.Layer
		want []string // nil: no error
	}{
		{"finite", layer(3.0, line), nil},
		{"null", layer(nil, nil), nil},
		{"NaN", layer(math.NaN(), line), []string{"pipes", "row 2", `pipe_id "P-2"`, "input feature 7", "velocity_fps is NaN", "no outputs were written"}},
		{"+Inf float32", layer(float32(math.Inf(1)), line), []string{"row 2", "velocity_fps is +Inf"}},
		{"-Inf", layer(math.Inf(-1), line), []string{"velocity_fps is -Inf"}},
		{"NaN coordinate", layer(1.0, orb.MultiLineString{line, {{2, 2}, {math.NaN(), 3}}}), []string{"row 2", "geometry is NaN"}},
		{"Inf point in a collection", layer(1.0, orb.Collection{orb.Point{math.Inf(1), 0}}), []string{"geometry is +Inf"}},
	}
	// Each again packed (gis.PackLayer scans its float columns directly),
	// and a packed layer whose NaN is in its second chunk.
	packed := func(l *gis.Layer) *gis.Layer {
		return gis.PackLayer(l.Name, l.Columns, len(l.Rows), func(i int, v []any) orb.Geometry {
			copy(v, l.Rows[i].Values)
			return l.Rows[i].Geometry
		})
	}
	for _, tc := range slices.Clone(cases) {
		cases = append(cases, struct {
			name string
			l    *gis.Layer
			want []string
		}{tc.name + " packed", packed(tc.l), tc.want})
	}
	long := layer(1.0, line)
	for i := range 10_000 {
		v := any(float64(i))
		if i == 9_000 {
			v = math.NaN()
		}
		long.Rows = append(long.Rows, gis.Row{Geometry: line, Values: []any{fmt.Sprint("L-", i), 100 + i, v}})
	}
	cases = append(cases, struct {
		name string
		l    *gis.Layer
		want []string
	}{"second chunk packed", packed(long), []string{"row 9003", `pipe_id "L-9000"`, "input feature 9100", "velocity_fps is NaN"}})
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			err := checkFinite(&gis.Layer{Name: "nodes"}, tc.l)
			if tc.want == nil {
				if err != nil {
					t.Fatalf("got %v, want no error", err)
				}
				return
			}
			if err == nil {
				t.Fatal("got no error")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
		})
	}
}

// A NaN that reaches a built layer stops writeOutputs before anything is
// written, with an error that exits 1 (not a usage or solver error). The
// NaN is put into the analysed run's C-factors, which feed the pipe layer.
func TestNaNStopsTheWrite(t *testing.T) {
	dir := writeFixture(t, nil)
	in, err := openInputs(filepath.Join(dir, "headroom.toml"))
	if err != nil {
		t.Fatal(err)
	}
	r, err := analyse(in)
	if err != nil {
		t.Fatal(err)
	}
	r.cFactor[2] = math.NaN() // P3, input feature 3
	out := filepath.Join(t.TempDir(), "out")
	_, err = writeOutputs(out, r, writeOptions{})
	if err == nil || !strings.Contains(err.Error(), `pipe_id "P3"`) || !strings.Contains(err.Error(), "c_factor is NaN") {
		t.Fatalf("got %v, want a NaN error naming P3 and c_factor", err)
	}
	var ue usageError
	var se solverError
	if errors.As(err, &ue) || errors.As(err, &se) {
		t.Errorf("NaN error is a %T; want a plain error (exit 1)", err)
	}
	if _, err := os.Stat(out); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("--out was created (stat: %v); nothing should be written", err)
	}
}

// BenchmarkCommitWindow measures the window of a commit (swapIn: the
// renames) when it replaces six synced 8 MB outputs, about the size of a
// 10,000-pipe town's layers; ns/op is the window. The README and
// commitOutputs promise well under a millisecond on a local disk.
func BenchmarkCommitWindow(b *testing.B) {
	const size = 8 << 20
	data := make([]byte, size)
	var outs []output
	for _, name := range []string{"ranked.csv", "pipes.geojson", "nodes.geojson", "pipes.gpkg", "nodes.gpkg", "problems.csv"} {
		outs = append(outs, output{name: name})
	}
	dir := b.TempDir()
	put := func(path string) {
		f, err := os.Create(path)
		if err == nil {
			_, err = f.Write(data)
		}
		if err == nil {
			err = f.Sync()
		}
		if err == nil {
			err = f.Close()
		}
		if err != nil {
			b.Fatal(err)
		}
	}
	for _, o := range outs {
		put(filepath.Join(dir, o.name))
	}
	for b.Loop() {
		b.StopTimer()
		stage, err := os.MkdirTemp(dir, stagingPrefix)
		if err != nil {
			b.Fatal(err)
		}
		for _, o := range outs {
			put(filepath.Join(stage, o.name))
		}
		moves, stale := planSwap(stage, dir, outs)
		b.StartTimer()
		if err := swapIn(stage, dir, moves, stale); err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		os.RemoveAll(stage)
		b.StartTimer()
	}
	b.ReportMetric(float64(len(outs)*size)/1e6, "MB-replaced")
}

// writeStaged writes outputs at the same time, the last one only after all
// the others, and reports the first failure in output order. The checks
// are made by the writers themselves: two writers that each wait for the
// other to start can only both finish if they run at the same time, and the
// last writer looks for every other output's file.
func TestWriteStagedParallel(t *testing.T) {
	if runtime.GOMAXPROCS(0) < 2 {
		t.Skip("needs GOMAXPROCS >= 2")
	}
	const wait = 10 * time.Second // far longer than any scheduling delay
	meet := func(mine, theirs chan struct{}) func(string) error {
		return func(p string) error {
			close(mine)
			select {
			case <-theirs:
			case <-time.After(wait):
				return errors.New("the other writer never started: the writes ran one after another")
			}
			return os.WriteFile(p, []byte("x"), 0o644)
		}
	}
	t.Run("concurrent, last after the rest", func(t *testing.T) {
		stage := t.TempDir()
		a, b := make(chan struct{}), make(chan struct{})
		outs := []output{{"a.csv", meet(a, b)}, {"b.csv", meet(b, a)}, {"manifest.json", func(p string) error {
			for _, f := range []string{"a.csv", "b.csv"} {
				if _, err := os.Stat(filepath.Join(stage, f)); err != nil {
					return fmt.Errorf("the last output ran before %s was complete: %w", f, err)
				}
			}
			return os.WriteFile(p, []byte("m"), 0o644)
		}}}
		if err := writeStaged(stage, "out", outs); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("first failure in output order", func(t *testing.T) {
		started := make(chan struct{})
		outs := []output{
			{"slow.csv", func(string) error {
				select {
				case <-started:
				case <-time.After(wait):
					return errors.New("fast.csv never started")
				}
				time.Sleep(50 * time.Millisecond)
				return errors.New("slow failure")
			}},
			{"fast.csv", func(string) error { close(started); return errors.New("fast failure") }},
			{"manifest.json", func(string) error { return errors.New("the last output ran after a failure") }},
		}
		err := writeStaged(t.TempDir(), "out", outs)
		if err == nil || !strings.Contains(err.Error(), "slow.csv: slow failure") {
			t.Errorf("error %v, want the one of slow.csv, the first output", err)
		}
	})
}
