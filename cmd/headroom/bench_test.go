package main

import (
	"bytes"
	"testing"

	"headroom/demotown"
)

// benchmarkRun measures the whole pipeline (read from memory, snap, join,
// age, solve the scenarios, check, score, write the outputs) on a demo town of about
// n pipe segments. The town is generated once, outside the timer.
func benchmarkRun(b *testing.B, n int) {
	town, err := demotown.Generate(demotown.Options{Pipes: n})
	if err != nil {
		b.Fatal(err)
	}
	var text bytes.Buffer
	if err := writeConfig(&text, demoConfig(town)); err != nil {
		b.Fatal(err)
	}
	cfg, err := decodeConfig(text.String(), "bench")
	if err != nil {
		b.Fatal(err)
	}
	// The three scenarios and the writers; the fire-flow sweep has its own
	// benchmarks in hydraulics (BenchmarkFireFlow20k, BenchmarkFireFlow100k).
	cfg.FireFlow.Enabled = new(bool)
	in := &inputs{cfg: cfg, title: "bench", pipes: town.Pipes, sources: town.Sources, demands: town.Demands, elevations: town.Elevations}
	out := b.TempDir()
	var iters int
	for b.Loop() {
		r, err := analyse(in)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := writeOutputs(out, r, writeOptions{}); err != nil {
			b.Fatal(err)
		}
		iters = r.sol.Iterations
	}
	pipes := float64(len(town.Pipes.Features))
	b.ReportMetric(pipes*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
	b.ReportMetric(float64(iters), "GGA-iters")
}

func BenchmarkRunDemo10k(b *testing.B)  { benchmarkRun(b, 10_000) }
func BenchmarkRunDemo100k(b *testing.B) { benchmarkRun(b, 100_000) }

// benchmarkSolveTown measures the three scenarios (average day, max day,
// peak hour: solveScenarios) on a demo town of about n pipe segments, the
// tree-heavy networks the program meets, unlike hydraulics' street grid.
// The town is generated and taken through the pipeline once (fire flow, the
// upsizing loop and the replacement program off), outside the timer.
func benchmarkSolveTown(b *testing.B, n int) {
	town, err := demotown.Generate(demotown.Options{Pipes: n})
	if err != nil {
		b.Fatal(err)
	}
	var text bytes.Buffer
	if err := writeConfig(&text, demoConfig(town)); err != nil {
		b.Fatal(err)
	}
	cfg, err := decodeConfig(text.String(), "bench")
	if err != nil {
		b.Fatal(err)
	}
	cfg.FireFlow.Enabled, cfg.Upsizing.Enabled = new(bool), new(bool)
	in := &inputs{cfg: cfg, title: "bench", pipes: town.Pipes, sources: town.Sources, demands: town.Demands, elevations: town.Elevations,
		hydrants: town.Hydrants}
	cfg.Breaks.Path, cfg.Facilities.Path = "", "" // the replacement program needs no solve of its own
	r, err := analyse(in)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	var iters, nnz int
	for b.Loop() {
		if err := r.solveScenarios(); err != nil {
			b.Fatal(err)
		}
		iters = 0
		for _, sc := range r.scenarios {
			iters += sc.sol.Iterations
		}
		nnz = r.sol.FactorNonzeros
	}
	b.ReportMetric(float64(len(r.net.Pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
	b.ReportMetric(float64(iters), "GGA-iters")
	b.ReportMetric(float64(nnz), "nnzL")
}

func BenchmarkSolveTown100k(b *testing.B) { benchmarkSolveTown(b, 100_000) }
func BenchmarkSolveTown1M(b *testing.B)   { benchmarkSolveTown(b, 1_000_000) }
