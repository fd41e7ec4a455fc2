package hydraulics

import "testing"

// fireGrid is the street grid of bench_test.go (streetGrid) made fit for a
// fire-flow sweep: streetGrid's few supplies on the diagonal leave most of
// a large grid below 20 psi even at average day, so here the grid is
// divided into square blocks of fireBlock×fireBlock intersections, each a
// pressure zone (the zone number per node is returned) with a tank at its
// centre at grade fireTankGrade.
func fireGrid(side int) (*Network, []int) {
	net := streetGrid(side, 1, 1)
	zone := make([]int, len(net.Nodes))
	blocks := (side + fireBlock - 1) / fireBlock
	for i := range net.Nodes {
		row, col := i/side, i%side
		zone[i] = (row/fireBlock)*blocks + col/fireBlock
		if row%fireBlock == fireBlock/2 && col%fireBlock == fireBlock/2 {
			net.Nodes[i].Fixed, net.Nodes[i].Grade = true, fireTankGrade
		}
	}
	return net, zone
}

// benchFireTolerance is the relative flow change at which each re-solve
// stops, as in headroom run's sweep (cmd/headroom fireTolerance).
const benchFireTolerance = 1e-6

const (
	fireBlock     = 15
	fireTankGrade = Head(100) // m; elevations are 10–30 m
)

// benchmarkFireFlow sweeps the hydrants of fireGrid at max-day demand
// (factor 1.5), each checked against its own zone: every
// spacing-th junction is a hydrant. It reports hydrants/s, solves/s and
// pipes/s, the pipes of the network times the solves done per second (the
// same measure as BenchmarkSolve's pipes/s, so the two compare), with the
// mean solves and Newton iterations per hydrant, and the region-model
// solves of the predicted warm starts (FireFlowPredicted, which
// FireFlowAuto picks from predictMinJunctions junctions on: on the
// 317×317 grids, not on the 124×124 one). The Solver and the base
// solution are made once, outside the timing, as a run makes them once for
// all scenarios.
func benchmarkFireFlow(b *testing.B, side, spacing int) {
	net, zone := fireGrid(side)
	s, err := NewSolver(net, &Options{DemandFactor: 1.5, Tolerance: benchFireTolerance})
	if err != nil {
		b.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		b.Fatal(err)
	}
	var hydrants []int
	for i, nd := range net.Nodes {
		if !nd.Fixed && i%spacing == 0 {
			hydrants = append(hydrants, i)
		}
	}
	b.ReportAllocs()
	solves, iterations, factorisations, regionSolves := 0, 0, 0, 0
	for b.Loop() {
		for _, r := range FireFlow(s, nil, base, hydrants, FireFlowOptions{Zone: zone}) {
			if r.Err != nil {
				b.Fatal(r.Err)
			}
			solves += r.Solves
			iterations += r.Iterations
			factorisations += r.Factorisations
			regionSolves += r.RegionSolves
		}
	}
	sec := b.Elapsed().Seconds()
	b.ReportMetric(float64(len(hydrants)), "hydrants")
	b.ReportMetric(float64(len(hydrants)*b.N)/sec, "hydrants/s")
	b.ReportMetric(float64(solves)/sec, "solves/s")
	b.ReportMetric(float64(len(net.Pipes))*float64(solves)/sec, "pipes/s")
	b.ReportMetric(float64(solves)/float64(len(hydrants)*b.N), "solves/hydrant")
	b.ReportMetric(float64(iterations)/float64(solves), "iters/solve")
	b.ReportMetric(float64(factorisations)/float64(len(hydrants)*b.N), "factors/hydrant")
	b.ReportMetric(float64(regionSolves)/float64(len(hydrants)*b.N), "region-solves/hydrant")
}

// BenchmarkFireFlow20k: about 20,000 pipes (124×124 grid), every 10th
// junction a hydrant.
func BenchmarkFireFlow20k(b *testing.B) { benchmarkFireFlow(b, 124, 10) }

// BenchmarkFireFlow100k: about 130,000 pipes (317×317 grid, as
// BenchmarkSolve100k), every 1,000th junction a hydrant (101 hydrants): a
// hydrant takes about 0.14 s of CPU here (2.3 whole-network solves and the
// region model), so a sweep of every 5th junction takes over 20 minutes on
// two cores; the rates it reports are per hydrant and per solve, from which
// the time of a full sweep follows.
func BenchmarkFireFlow100k(b *testing.B) { benchmarkFireFlow(b, 317, 1000) }

// BenchmarkFireFlow100k20k: the sweep of issue 9's scale, about 130,000
// pipes (317×317 grid) with every 5th junction a hydrant (about 20,000).
// A full run takes a long time (tens of minutes on two cores); its rates
// are per hydrant, as BenchmarkFireFlow100k's.
func BenchmarkFireFlow100k20k(b *testing.B) { benchmarkFireFlow(b, 317, 5) }
