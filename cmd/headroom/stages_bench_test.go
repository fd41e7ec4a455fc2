package main

import (
	"fmt"
	"io"
	"path/filepath"
	"reflect"
	"runtime"
	"testing"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// benchmarkStages times each stage of a run on an N-segment demo town read
// from its files (peak hour with all outputs; the fire-flow sweep and the
// upsizing loop off, as bench/run.sh runs it), one sub-benchmark per stage,
// each reporting pipes/s. The town is written and analysed once, outside
// the timers; each stage then re-runs on that result.
func benchmarkStages(b *testing.B, n int) {
	dir := b.TempDir()
	if err := demoCommand([]string{"--out", dir, "--pipes", fmt.Sprint(n)}, io.Discard, io.Discard); err != nil {
		b.Fatal(err)
	}
	cfg, err := loadConfig(filepath.Join(dir, demoConfigName))
	if err != nil {
		b.Fatal(err)
	}
	off := false
	cfg.FireFlow.Enabled, cfg.Upsizing.Enabled = &off, &off
	in := &inputs{cfg: cfg, title: cfg.file}
	r, err := analyse(in)
	if err != nil {
		b.Fatal(err)
	}
	pipes := float64(len(r.pipes))
	stage := func(name string, run func() error) {
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if err := run(); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(pipes*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
		})
	}
	stage("read", func() error { return readLayers(in, &result{cfg: cfg, limits: r.limits}) })
	stage("snap", func() error {
		gis.Snap(r.pipes, hydraulics.Length(cfg.si(cfg.snapTolerance())))
		return nil
	})
	fixed := make([]bool, len(r.topo.Nodes))
	for _, s := range r.supplies {
		fixed[s.Node] = true
	}
	points := &result{cfg: cfg, limits: r.limits} // analyse lets the points go once joined
	if err := readLayers(in, points); err != nil {
		b.Fatal(err)
	}
	stage("allocate", func() error {
		gis.AllocateDemands(r.topo, points.demands, fixed, hydraulics.Length(cfg.si(cfg.warnDistance())))
		_, err := gis.InterpolateElevations(r.topo, points.elevations, cfg.Elevations.Neighbours, cfg.Elevations.Power)
		return err
	})
	stage("order+factorise", func() error {
		_, err := hydraulics.NewSolver(r.net, nil)
		return err
	})
	stage("solve", func() error {
		c := *r
		return c.scenariosOrLayerFlows()
	})
	stage("evaluate", func() error {
		hydraulics.CheckPipes(r.net, r.sol, r.limits)
		hydraulics.LowPressure(r.net, r.sol, r.limits)
		return nil
	})
	stage("score", func() error {
		_, err := scoring.Rank(r.scoringInput(), cfg.scoringConfig(), r.limits)
		return err
	})
	stage("program", func() error {
		c := *r
		return c.progRun(in)
	})
	stage("tables", func() error {
		r.pipeLayer()
		r.nodeLayer()
		return nil
	})
	out := b.TempDir()
	stage("write", func() error {
		_, err := writeOutputs(out, r, writeOptions{})
		return err
	})
}

func BenchmarkStages10k(b *testing.B)  { benchmarkStages(b, 10_000) }
func BenchmarkStages100k(b *testing.B) { benchmarkStages(b, 100_000) }
func BenchmarkStages1M(b *testing.B)   { benchmarkStages(b, 1_000_000) }

// TestPipeLayerInChunks: the pipe layer built in parallel chunks is the one
// built in a single pass (GOMAXPROCS 1), value for value, on a town large
// enough to split. With -race it also checks the chunks share nothing they
// write.
func TestPipeLayerInChunks(t *testing.T) {
	if testing.Short() {
		t.Skip("analyses a 20,000-pipe town")
	}
	dir := t.TempDir()
	if err := demoCommand([]string{"--out", dir, "--pipes", "20000"}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	cfg, err := loadConfig(filepath.Join(dir, demoConfigName))
	if err != nil {
		t.Fatal(err)
	}
	off := false
	cfg.FireFlow.Enabled, cfg.Upsizing.Enabled = &off, &off
	r, err := analyse(&inputs{cfg: cfg, title: cfg.file})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.pipes) < 2*8192 {
		t.Fatalf("%d pipes: too few to split in two chunks", len(r.pipes))
	}
	parallel := r.pipeLayer()
	prev := runtime.GOMAXPROCS(1)
	serial := r.pipeLayer()
	runtime.GOMAXPROCS(prev)
	a, b := layerRows(parallel), layerRows(serial)
	for i := range b {
		if !reflect.DeepEqual(a[i], b[i]) {
			t.Fatalf("row %d differs:\n%v\n%v", i, a[i].Values, b[i].Values)
		}
	}
}
