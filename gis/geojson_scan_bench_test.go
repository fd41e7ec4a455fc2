package gis

import (
	"bufio"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/paulmach/orb/geojson"

	"headroom/demotown"
)

// benchTown caches the generated 100k-pipe demo town's layers on disk, so
// that generating and writing stay outside the benchmark timers.
var benchTown struct {
	once  sync.Once
	dir   string
	pipes string
	err   error
}

func benchPipeLayer(b *testing.B) string {
	b.Helper()
	benchTown.once.Do(func() {
		town, err := demotown.Generate(demotown.Options{Pipes: 100_000})
		if err != nil {
			benchTown.err = err
			return
		}
		dir, err := os.MkdirTemp("", "headroom-bench-read")
		if err != nil {
			benchTown.err = err
			return
		}
		benchTown.dir = dir
		benchTown.pipes = filepath.Join(dir, "pipes.geojson")
		benchTown.err = WriteCollection(benchTown.pipes, town.Pipes)
	})
	if benchTown.err != nil {
		b.Fatal(benchTown.err)
	}
	return benchTown.pipes
}

// BenchmarkReadGeoJSON reads a generated 100k-segment pipe layer from its
// file and reports MB/s (10⁶ bytes of file per second) and features/s:
// "scan" is ReadCollection (the scanner, in parallel runs), "scan-1run" the
// scanner in one goroutine, "std" the encoding/json decoder it replaced.
func BenchmarkReadGeoJSON(b *testing.B) {
	path := benchPipeLayer(b)
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	size := st.Size()
	decoders := []struct {
		name string
		read func(path string) (*geojson.FeatureCollection, error)
	}{
		{"scan", func(path string) (*geojson.FeatureCollection, error) { return ReadCollection(path, "pipes") }},
		{"scan-1run", func(path string) (*geojson.FeatureCollection, error) {
			data, err := os.ReadFile(path)
			if err != nil {
				return nil, err
			}
			return decodeGeoJSONRuns(data, filepath.Base(path), 1, minRunBytes)
		}},
		{"std", readStd},
	}
	for _, d := range decoders {
		b.Run(d.name, func(b *testing.B) {
			b.ReportAllocs()
			features := 0
			cpu0 := processCPU()
			for b.Loop() {
				fc, err := d.read(path)
				if err != nil {
					b.Fatal(err)
				}
				features += len(fc.Features)
			}
			sec := b.Elapsed().Seconds()
			reportCPU(b, processCPU()-cpu0, size)
			b.ReportMetric(float64(size)*float64(b.N)/1e6/sec, "MB/s")
			b.ReportMetric(float64(features)/sec, "features/s")
			b.ReportMetric(float64(features)/float64(b.N), "features/op")
		})
	}
}

// reportCPU reports the CPU time per iteration and the megabytes read per
// CPU second (cpu-MB/s: all goroutines and the garbage collector counted,
// so for one goroutine it is about the single-core rate on an idle machine).
func reportCPU(b *testing.B, cpu time.Duration, size int64) {
	if cpu <= 0 {
		return
	}
	b.ReportMetric(cpu.Seconds()*1e3/float64(b.N), "cpu-ms/op")
	b.ReportMetric(float64(size)*float64(b.N)/1e6/cpu.Seconds(), "cpu-MB/s")
}

// readStd reads a file with the encoding/json decoder, as ReadCollection
// did before the scanner.
func readStd(path string) (*geojson.FeatureCollection, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return decodeCollectionStd(bufio.NewReaderSize(f, 1<<20), filepath.Base(path))
}

// BenchmarkReadGeoJSONFiles reads the GeoJSON files listed in
// HEADROOM_BENCH_GEOJSON (separated by commas) with the scanner and with
// encoding/json (decodeCollectionStd), one read of every file per
// iteration; it is skipped when the variable is unset. Peak memory is
// measured outside, for example with /usr/bin/time -v on the test binary.
func BenchmarkReadGeoJSONFiles(b *testing.B) {
	list := os.Getenv("HEADROOM_BENCH_GEOJSON")
	if list == "" {
		b.Skip("HEADROOM_BENCH_GEOJSON names no files")
	}
	paths := strings.Split(list, ",")
	var size int64
	for _, p := range paths {
		st, err := os.Stat(p)
		if err != nil {
			b.Fatal(err)
		}
		size += st.Size()
	}
	decoders := []struct {
		name string
		read func(path string) (*geojson.FeatureCollection, error)
	}{
		{"scan", func(path string) (*geojson.FeatureCollection, error) { return ReadCollection(path, "bench") }},
		{"std", readStd},
	}
	for _, d := range decoders {
		b.Run(d.name, func(b *testing.B) {
			b.ReportAllocs()
			features := 0
			cpu0 := processCPU()
			for b.Loop() {
				for _, p := range paths {
					fc, err := d.read(p)
					if err != nil {
						b.Fatal(err)
					}
					features += len(fc.Features)
				}
			}
			sec := b.Elapsed().Seconds()
			reportCPU(b, processCPU()-cpu0, size)
			b.ReportMetric(float64(size)*float64(b.N)/1e6/sec, "MB/s")
			b.ReportMetric(float64(features)/sec, "features/s")
		})
	}
}
