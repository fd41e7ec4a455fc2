package main

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"

	"github.com/paulmach/orb"

	"headroom/gis"
)

// stagingPrefix begins the name of the staging folder a run makes inside
// its output folder. A folder with this prefix is never an output: it is
// either being written by the run that made it or left by a killed run,
// and the next run into the folder removes it.
const stagingPrefix = ".headroom-staging-"

// previousPrefix names, in the staging folder, the extra link to an
// output about to be replaced (see renameAll).
const previousPrefix = ".previous-"

// shapefileParts are the files the shapefile writer makes for one layer.
var shapefileParts = []string{".shp", ".shx", ".dbf", ".prj", ".cpg"}

// producedFiles lists the file names an output writes: its own name, or for
// a shapefile every sibling part (.prj only when the layer has a CRS).
func producedFiles(name string) []string {
	ext := filepath.Ext(name)
	if !strings.EqualFold(ext, ".shp") {
		return []string{name}
	}
	stem := strings.TrimSuffix(name, ext)
	files := make([]string, len(shapefileParts))
	for i, part := range shapefileParts {
		files[i] = stem + part
	}
	return files
}

// checkOutFolder refuses an output folder that holds one of the inputs (a
// layer file or the config), unless allow (--allow-input-folder) is set.
// Even then no input file is overwritten (see result.isInput).
func checkOutFolder(dir string, inputs []string, allow bool) error {
	if allow {
		return nil
	}
	for _, in := range inputs {
		if sameFolder(dir, filepath.Dir(in)) {
			return fmt.Errorf("--out %s holds the input %s; choose another --out so inputs are never overwritten, "+
				"or pass --allow-input-folder to write the results beside the inputs", dir, in)
		}
	}
	return nil
}

// sameFolder reports whether a and b name one folder: the same absolute
// path, or (both existing) the same file by os.SameFile, which also sees
// through symbolic links.
func sameFolder(a, b string) bool {
	aa, errA := filepath.Abs(a)
	ab, errB := filepath.Abs(b)
	if errA == nil && errB == nil && aa == ab {
		return true
	}
	sa, errA := os.Stat(a)
	sb, errB := os.Stat(b)
	return errA == nil && errB == nil && os.SameFile(sa, sb)
}

// checkFinite returns an error naming the first value in the layers that is
// NaN or ±Inf: a float attribute or a geometry coordinate. The writers
// would turn such a value into a null without a word; a run must instead
// stop before it writes anything. Rows are numbered from 1 in layer order;
// the row's id (its first column, when that is text) and its input feature
// number (a "feature" column) are named when the layer has them.
func checkFinite(layers ...*gis.Layer) error {
	for _, l := range layers {
		i, found := l.FirstNonFinite()
		if !found {
			continue
		}
		row := l.Reader().Row(i)
		for j, v := range row.Values {
			if x, ok := floatValue(v); ok && !finite(x) && j < len(l.Columns) {
				return nonFiniteError(l, i, row, l.Columns[j].Name, x)
			}
		}
		if x, ok := nonFinitePoint(row.Geometry); ok {
			return nonFiniteError(l, i, row, "geometry", x)
		}
	}
	return nil
}

// floatValue returns v as a float64 when it is a floating-point value.
func floatValue(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case float32:
		return float64(x), true
	}
	return 0, false
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// nonFinitePoint returns the first non-finite coordinate of g, if any.
func nonFinitePoint(g orb.Geometry) (float64, bool) {
	var bad float64
	found := false
	gis.EachPoint(g, func(p orb.Point) {
		for _, x := range p {
			if !found && !finite(x) {
				bad, found = x, true
			}
		}
	})
	return bad, found
}

// nonFiniteError describes a non-finite value in row i of l.
func nonFiniteError(l *gis.Layer, i int, row gis.Row, column string, x float64) error {
	var who []string
	if len(l.Columns) > 0 && len(row.Values) > 0 {
		if id, ok := row.Values[0].(string); ok && l.Columns[0].Kind == gis.String {
			who = append(who, fmt.Sprintf("%s %q", l.Columns[0].Name, id))
		}
	}
	for j, c := range l.Columns {
		if c.Name == "feature" && j < len(row.Values) && row.Values[j] != nil {
			who = append(who, fmt.Sprintf("input feature %v", row.Values[j]))
		}
	}
	where := fmt.Sprintf("row %d", i+1)
	if len(who) > 0 {
		where += " (" + strings.Join(who, ", ") + ")"
	}
	return fmt.Errorf("%s layer %s: %s is %v, not a number an output can hold; no outputs were written. "+
		"Check that feature's diameter, length, elevation and C, and report it if they look sound", l.Name, where, column, x)
}

// commitOutputs writes every output into a fresh staging folder inside dir
// and, only when all of them are complete, renames each file into dir and
// removes the staging folder. It returns the outputs' paths in dir, in
// the order of outs.
//
// The outputs are written at the same time, as many at once as
// GOMAXPROCS, except the last, which is written after all the others are
// complete so that it can read them (manifest.json hashes them). Each
// writer gets its own path and must share nothing else it changes.
//
// Before it stages anything it removes any staging folder a killed run left
// in dir, and it refuses a destination that is a folder (a rename could not
// replace it). Each writer syncs its file to disk before it returns, and dir
// is synced after the renames.
//
// A failure or a kill while the files are written leaves every previous
// output in dir untouched; a failed run also removes its staging folder.
// The renames are the one window: a kill (or power loss) between the first
// and the last rename (one rename per file in one folder; a fraction of a
// millisecond on a local disk, as no file's blocks are freed meanwhile)
// leaves some files from this run and the rest from the previous one, each
// of them whole. Files are renamed in the reverse of outs' order, so the
// first output (ranked.csv) is replaced last: when it is new, every file
// is. A shapefile part the previous run wrote and this one does not (a
// .prj) is removed after the renames, so that a set of parts never mixes
// two runs once the commit is complete.
//
// Two runs into one folder at the same time are not supported: the later
// one removes the earlier one's staging folder, whose writes (or, rarely,
// renames) then fail.
func commitOutputs(dir string, outs []output) ([]string, error) {
	if err := removeStaging(dir); err != nil {
		return nil, err
	}
	for _, o := range outs {
		for _, f := range producedFiles(o.name) {
			if st, err := os.Lstat(filepath.Join(dir, f)); err == nil && st.IsDir() {
				return nil, fmt.Errorf("%s is a folder, where the output %s goes; move it out of %s", filepath.Join(dir, f), f, dir)
			}
		}
	}
	stage, err := os.MkdirTemp(dir, stagingPrefix)
	if err != nil {
		return nil, fmt.Errorf("creating a staging folder in %s: %w", dir, err)
	}
	// Best effort: once the outputs are in place a staging folder that
	// cannot be removed is harmless, and the next run removes it.
	defer os.RemoveAll(stage)
	if err := writeStaged(stage, dir, outs); err != nil {
		return nil, fmt.Errorf("%w; the previous outputs in %s are unchanged", err, dir)
	}
	if err := renameAll(stage, dir, outs); err != nil {
		return nil, err
	}
	written := make([]string, len(outs))
	for i, o := range outs {
		written[i] = filepath.Join(dir, o.name)
	}
	return written, nil
}

// writeStaged writes each of outs into stage (dir is only named in
// errors): all but the last at the same time, at most GOMAXPROCS at once,
// started in startOrder, then the last alone, once the others are
// complete. Once a write fails no further write is started, and the
// writes already started are waited for. The error names the first output
// in the order of outs whose write failed, not the first to fail in time.
func writeStaged(stage, dir string, outs []output) error {
	if len(outs) == 0 {
		return nil
	}
	errs := make([]error, len(outs)) // one slot per output, in outs' order
	var (
		wg     sync.WaitGroup
		failed atomic.Bool
	)
	slots := make(chan struct{}, runtime.GOMAXPROCS(0))
	for _, k := range startOrder(outs[:len(outs)-1]) {
		o := outs[k]
		slots <- struct{}{}
		if failed.Load() {
			<-slots
			break
		}
		wg.Go(func() {
			defer func() { <-slots }()
			if err := o.write(filepath.Join(stage, o.name)); err != nil {
				errs[k] = err
				failed.Store(true)
			}
		})
	}
	wg.Wait()
	if !failed.Load() {
		last := outs[len(outs)-1]
		errs[len(outs)-1] = last.write(filepath.Join(stage, last.name))
	}
	for k, err := range errs {
		if err != nil {
			return fmt.Errorf("writing %s: %w", filepath.Join(dir, outs[k].name), err)
		}
	}
	return nil
}

// longestFirst names the outputs that take longest to write, longest
// first, as measured on the 1,000,000-segment demo town on two cores on
// 2026-12-03 (two runs: pipes.geojson 6.4-6.9 s, ranked.xlsx 4.1-5.9,
// pipes.gpkg 4.3-4.5, ranked.csv 2.7-4.1, report.html 2.9-3.5,
// nodes.geojson 1.3-1.6, nodes.gpkg 0.9-1.5; the shapefiles, not
// measured, beside their GeoJSON). Starting the longest jobs first
// (Graham's longest-processing-time rule, 1969) keeps a long one from
// starting last while the other slots sit idle: in the order outs are
// listed in, the writing stage took 14.3 s (measured before the writers of
// the GeoPackages and the workbook were made faster).
var longestFirst = []string{"pipes.geojson", "pipes.shp", "ranked.xlsx", "pipes.gpkg", "ranked.csv",
	"report.html", "nodes.geojson", "nodes.shp", "nodes.gpkg"}

// startOrder returns the indices of outs in the order writeStaged starts
// them: those named in longestFirst in its order, then the rest in the
// order of outs.
func startOrder(outs []output) []int {
	rank := func(name string) int {
		if i := slices.Index(longestFirst, name); i >= 0 {
			return i
		}
		return len(longestFirst)
	}
	order := make([]int, len(outs))
	for k := range order {
		order[k] = k
	}
	slices.SortStableFunc(order, func(a, b int) int { return rank(outs[a].name) - rank(outs[b].name) })
	return order
}

// renameAll moves every staged file of outs into dir, last output first,
// then removes stale shapefile parts and syncs dir.
//
// Each file it replaces is first hard-linked into the staging folder, so
// that a rename only swaps a folder entry: the old file's blocks are freed
// when the staging folder is removed, after the renames, not during them
// (freeing tens of megabytes on rename would stretch the window from
// microseconds to tens of milliseconds). Where links are not supported
// the renames proceed without them.
func renameAll(stage, dir string, outs []output) error {
	moves, stale := planSwap(stage, dir, outs)
	if err := swapIn(stage, dir, moves, stale); err != nil {
		return err
	}
	return syncFolder(dir)
}

// planSwap links each existing output of outs into stage (see renameAll)
// and lists, last output first, the staged files to move and the files
// this run did not write (stale shapefile parts) to remove.
func planSwap(stage, dir string, outs []output) (moves, stale []string) {
	for _, o := range slices.Backward(outs) {
		for _, f := range producedFiles(o.name) {
			os.Link(filepath.Join(dir, f), filepath.Join(stage, previousPrefix+f)) // best effort; fails where f is new
			if _, err := os.Lstat(filepath.Join(stage, f)); errors.Is(err, fs.ErrNotExist) {
				stale = append(stale, f)
			} else {
				moves = append(moves, f)
			}
		}
	}
	return moves, stale
}

// swapIn is the window of a commit: it renames each of moves from stage
// into dir, in order, then removes each of stale from dir.
func swapIn(stage, dir string, moves, stale []string) error {
	for k, f := range moves {
		if err := os.Rename(filepath.Join(stage, f), filepath.Join(dir, f)); err != nil {
			return fmt.Errorf("moving %s into place: %w; already replaced: %s", f, err, listOrNone(moves[:k]))
		}
	}
	for _, f := range stale {
		if err := os.Remove(filepath.Join(dir, f)); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fmt.Errorf("removing %s, left by an earlier run: %w", filepath.Join(dir, f), err)
		}
	}
	return nil
}

func listOrNone(names []string) string {
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// removeStaging removes every staging folder in dir, each left by a run
// that was killed before it finished.
func removeStaging(dir string) error {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("reading output folder: %w", err)
	}
	for _, e := range entries {
		if e.IsDir() && strings.HasPrefix(e.Name(), stagingPrefix) {
			if err := os.RemoveAll(filepath.Join(dir, e.Name())); err != nil {
				return fmt.Errorf("removing %s, left by an earlier run: %w", filepath.Join(dir, e.Name()), err)
			}
		}
	}
	return nil
}

// syncFolder flushes dir's entries (the renames) to disk. Some systems
// cannot sync a folder; that is not an error, as the files themselves are
// already on disk.
func syncFolder(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return fmt.Errorf("syncing %s: %w", dir, err)
	}
	d.Sync() // best effort: not every file system syncs a folder
	return d.Close()
}
