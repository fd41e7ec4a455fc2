package gis

import (
	"math/rand/v2"
	"testing"

	"headroom/hydraulics"
)

// joinBenchTown is a hand-made topology at the 1,000,000-pipe demo town's
// scale: 751 × 751 = 564,001 junctions on a 100 m street grid, each moved
// up to 10 m, with 1,000,000 elevation points and 1,000,000 demand points
// spread uniformly over it (seeded), every 200th node fixed.
func joinBenchTown() (*Topology, []Point, []Point, []bool) {
	const side, pts = 751, 1_000_000
	rng := rand.New(rand.NewPCG(1, 2))
	topo := &Topology{Nodes: make([]TopoNode, 0, side*side)}
	for i := range side {
		for j := range side {
			topo.Nodes = append(topo.Nodes, TopoNode{At: local(100*float64(i)+20*(rng.Float64()-0.5), 100*float64(j)+20*(rng.Float64()-0.5))})
		}
	}
	topo.ensureIndex()
	scatter := func() []Point {
		p := make([]Point, pts)
		for i := range p {
			p[i] = testPoint(i+1, "", 75_000*rng.Float64(), 75_000*rng.Float64(), 100*rng.Float64())
		}
		return p
	}
	fixed := make([]bool, len(topo.Nodes))
	for k := 0; k < len(fixed); k += 200 {
		fixed[k] = true
	}
	return topo, scatter(), scatter(), fixed
}

// BenchmarkInterpolateElevations1M: the four nearest of 1,000,000 points
// at each of 564,001 nodes (InterpolateElevations, its k-d tree built in
// each run), against the R-tree search it replaced (rtree, the reference
// in kdtree_test.go).
func BenchmarkInterpolateElevations1M(b *testing.B) {
	topo, elev, _, _ := joinBenchTown()
	for _, bc := range []struct {
		name string
		run  func(*Topology, []Point, int, float64) ([]hydraulics.Length, error)
	}{{"kdtree", InterpolateElevations}, {"rtree", refInterpolateElevations}} {
		b.Run(bc.name, func(b *testing.B) {
			b.ReportAllocs()
			cpu := processCPU()
			for b.Loop() {
				if _, err := bc.run(topo, elev, DefaultIDWNeighbours, DefaultIDWPower); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(len(topo.Nodes))*float64(b.N)/b.Elapsed().Seconds(), "nodes/s")
			b.ReportMetric((processCPU()-cpu).Seconds()/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkAllocateDemands1M: 1,000,000 demand points each onto its
// nearest of 564,001 junctions (AllocateDemands, its k-d tree of the
// junctions built in each run), against the R-tree search it replaced.
func BenchmarkAllocateDemands1M(b *testing.B) {
	topo, _, dem, fixed := joinBenchTown()
	for _, bc := range []struct {
		name string
		run  func(*Topology, []Point, []bool, hydraulics.Length) ([]hydraulics.Flow, []Problem)
	}{{"kdtree", AllocateDemands}, {"rtree", refAllocateDemands}} {
		b.Run(bc.name, func(b *testing.B) {
			b.ReportAllocs()
			cpu := processCPU()
			for b.Loop() {
				bc.run(topo, dem, fixed, 0)
			}
			b.ReportMetric(float64(len(dem))*float64(b.N)/b.Elapsed().Seconds(), "points/s")
			b.ReportMetric((processCPU()-cpu).Seconds()/float64(b.N), "cpu-s/op")
		})
	}
}
