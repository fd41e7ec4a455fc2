package hydraulics

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// streetGrid builds a synthetic distribution network on a side×side grid
// of street intersections 150 m apart: a random spanning tree of the grid
// plus about 30 % extra links (mean node degree ≈ 2.6, like real systems),
// random mains of 6–16 in with C 70–140, demands of 0.5–3 gpm per node and
// nFixed supplies spread along the diagonal. seed makes it repeatable.
func streetGrid(side, nFixed int, seed uint64) *Network {
	rng := rand.New(rand.NewPCG(seed, 2026))
	n := side * side
	net := &Network{Nodes: make([]Node, n)}
	for i := range net.Nodes {
		row, col := i/side, i%side
		net.Nodes[i] = Node{
			ID:        fmt.Sprintf("N%d", i),
			Elevation: Length(10 + 20*rng.Float64()),
			Demand:    Flow(0.5+2.5*rng.Float64()) * USGallonPerMinute,
			X:         150 * float64(col), Y: 150 * float64(row),
		}
	}
	for k := 0; k < nFixed; k++ {
		d := (2*k + 1) * side / (2 * nFixed) // spread along the diagonal
		i := d*side + d
		net.Nodes[i].Fixed = true
		net.Nodes[i].Grade = 90
	}
	// Grid edges in random order; Kruskal with union-find keeps a random
	// spanning tree, the rest are candidates for loops.
	var edges [][2]int
	for i := 0; i < n; i++ {
		if i%side+1 < side {
			edges = append(edges, [2]int{i, i + 1})
		}
		if i+side < n {
			edges = append(edges, [2]int{i, i + side})
		}
	}
	rng.Shuffle(len(edges), func(a, b int) { edges[a], edges[b] = edges[b], edges[a] })
	parent := make([]int, n)
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	var tree, rest [][2]int
	for _, e := range edges {
		a, b := find(e[0]), find(e[1])
		if a != b {
			parent[a] = b
			tree = append(tree, e)
		} else {
			rest = append(rest, e)
		}
	}
	extra := min(len(rest), int(0.3*float64(n)))
	links := append(tree, rest[:extra]...)
	diameters := []float64{6, 8, 8, 8, 12, 16}
	for k, e := range links {
		net.Pipes = append(net.Pipes, Pipe{
			ID: fmt.Sprintf("P%d", k), From: e[0], To: e[1],
			Length:   Length(100 + 150*rng.Float64()),
			Diameter: Length(diameters[rng.IntN(len(diameters))]) * Inch,
			C:        70 + 70*rng.Float64(),
		})
	}
	return net
}

func benchmarkSolve(b *testing.B, side, nFixed int) {
	net := streetGrid(side, nFixed, 1)
	b.ReportAllocs()
	var iters, nnz int
	for b.Loop() {
		sol, err := Solve(net, nil)
		if err != nil {
			b.Fatal(err)
		}
		iters += sol.Iterations
		nnz = sol.FactorNonzeros
	}
	b.ReportMetric(float64(iters)/float64(b.N), "iters/op")
	b.ReportMetric(float64(len(net.Pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
	b.ReportMetric(float64(nnz), "nnzL")
}

func BenchmarkSolve10k(b *testing.B)  { benchmarkSolve(b, 100, 4) }
func BenchmarkSolve100k(b *testing.B) { benchmarkSolve(b, 317, 20) }

// BenchmarkSolve1M is the street grid of side 1000: 1,000,000 nodes and
// about 1.3 million pipes (issue 9's scale: under 10 s on two cores).
func BenchmarkSolve1M(b *testing.B) { benchmarkSolve(b, 1000, 60) }
