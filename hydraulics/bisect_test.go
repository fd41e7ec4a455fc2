package hydraulics

import (
	"math/bits"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync/atomic"
	"testing"
)

// orderTestGraph is the orderer state for bisecting all of g as one piece (label 0).
func orderTestGraph(g spGraph) (*orderer, []int32) {
	adj := newAdjacency(g.n, g.pairs)
	o := &orderer{g: adj, labels: new(atomic.Int32), label: make([]int32, g.n), local: make([]int32, g.n), visit: make([]int32, g.n)}
	piece := make([]int32, g.n)
	for v := range piece {
		piece[v] = int32(v)
	}
	return o, piece
}

// separate runs the steps of multilevel on the whole of g: bisection, minimum cover of the cut,
// separator refinement. It returns the sides (inSeparator for the separator).
func separate(g spGraph) ([]uint8, *weightedGraph) {
	o, piece := orderTestGraph(g)
	wg := o.pieceGraph(piece, 0)
	side := wg.bisect()
	for _, v := range wg.vertexSeparator(side) {
		side[v] = inSeparator
	}
	wg.refineSeparator(side, int64(g.n))
	return side, wg
}

// checkSeparates fails unless no edge of g joins side 0 to side 1.
func checkSeparates(t *testing.T, g spGraph, side []uint8) {
	t.Helper()
	for _, p := range g.pairs {
		a, b := side[p[0]], side[p[1]]
		if a != inSeparator && b != inSeparator && a != b {
			t.Fatalf("edge %d–%d joins the two sides", p[0], p[1])
		}
	}
}

func countSides(side []uint8) (n [3]int) {
	for _, s := range side {
		n[s]++
	}
	return n
}

// Two street grids of 30×30 joined by three mains (a river with three bridges): every split
// into parts of at most 60 % must cut the three bridges or at least 30 vertices of a grid, so
// the best separator has 3 vertices (by construction). The grids are interleaved in the
// numbering and the bridges are far from any axis-aligned median, which the multilevel cut
// does not look at.
func TestMultilevelFindsTheNarrowPlace(t *testing.T) {
	const side = 30
	g := spGraph{n: 2 * side * side}
	id := func(grid, i, j int) int32 { return int32(2*(j*side+i) + grid) }
	for grid := range 2 {
		for j := range side {
			for i := range side {
				if i+1 < side {
					g.pairs = append(g.pairs, [2]int32{id(grid, i, j), id(grid, i+1, j)})
				}
				if j+1 < side {
					g.pairs = append(g.pairs, [2]int32{id(grid, i, j), id(grid, i, j+1)})
				}
			}
		}
	}
	for _, j := range []int{3, 15, 27} {
		g.pairs = append(g.pairs, [2]int32{id(0, side-1, j), id(1, 0, j)})
	}
	sides, _ := separate(g)
	checkSeparates(t, g, sides)
	n := countSides(sides)
	if n[inSeparator] > 3 {
		t.Errorf("separator has %d vertices, want the 3 bridge ends", n[inSeparator])
	}
	if max(n[0], n[1]) > g.n*6/10 {
		t.Errorf("sides %d and %d: more than 60 %% on one side", n[0], n[1])
	}
}

// The cover of the cut edges is a minimum vertex cover: checked against exhaustive search over
// all subsets of the cut edges' end vertices on small random graphs (König's theorem says the
// matching method finds the minimum; the brute force does not rely on it).
func TestVertexSeparatorIsMinimumCover(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for trial := range 200 {
		n := 6 + rng.IntN(11)
		g := spGraph{n: n}
		for a := range n {
			for b := a + 1; b < n; b++ {
				if rng.Float64() < 0.3 {
					g.pairs = append(g.pairs, [2]int32{int32(a), int32(b)})
				}
			}
		}
		o, piece := orderTestGraph(g)
		wg := o.pieceGraph(piece, 0)
		side := make([]uint8, n)
		for v := range side {
			side[v] = uint8(rng.IntN(2))
		}
		cover := wg.vertexSeparator(side)
		in := make([]bool, n)
		for _, v := range cover {
			in[v] = true
		}
		var cut [][2]int32
		for _, p := range g.pairs {
			if side[p[0]] != side[p[1]] {
				cut = append(cut, p)
				if !in[p[0]] && !in[p[1]] {
					t.Fatalf("trial %d: cut edge %v not covered by %v", trial, p, cover)
				}
			}
		}
		best := n + 1
		for mask := uint32(0); mask < 1<<n; mask++ {
			covers := true
			for _, p := range cut {
				if mask&(1<<p[0]) == 0 && mask&(1<<p[1]) == 0 {
					covers = false
					break
				}
			}
			if covers {
				best = min(best, bits.OnesCount32(mask))
			}
		}
		if len(cover) != best {
			t.Fatalf("trial %d: cover of %d vertices, the minimum is %d", trial, len(cover), best)
		}
	}
}

// On network-like graphs the refined separator still separates, keeps both sides within the
// balance limit, and is no larger than the cover it started from.
func TestRefineSeparatorKeepsItASeparator(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for trial := range 5 {
		g := spNetworkLike(rng, 40+10*trial, 0.3)
		o, piece := orderTestGraph(g)
		wg := o.pieceGraph(piece, 0)
		side := wg.bisect()
		cover := wg.vertexSeparator(side)
		for _, v := range cover {
			side[v] = inSeparator
		}
		wg.refineSeparator(side, int64(g.n))
		checkSeparates(t, g, side)
		n := countSides(side)
		if n[inSeparator] > len(cover) {
			t.Errorf("trial %d: refined separator %d > cover %d", trial, n[inSeparator], len(cover))
		}
		if limit := wg.sideLimit(int64(g.n)); int64(max(n[0], n[1])) > limit {
			t.Errorf("trial %d: sides %d, %d over the limit %d", trial, n[0], n[1], limit)
		}
		if n[0] == 0 || n[1] == 0 {
			t.Errorf("trial %d: an empty side (%v)", trial, n)
		}
	}
}

// The ordering forks goroutines for large pieces; the result must not depend on how they are
// scheduled. Run under -race by .ci/run.
func TestOrderingRepeatable(t *testing.T) {
	g := spNetworkLike(rand.New(rand.NewPCG(7, 7)), 240, 0.3) // 57,600 vertices: pieces are forked
	adj := newAdjacency(g.n, g.pairs)
	want := fillReducingOrder(adj, g.x, g.y)
	for _, procs := range []int{1, 2, 4} {
		prev := runtime.GOMAXPROCS(procs)
		got := fillReducingOrder(adj, g.x, g.y)
		runtime.GOMAXPROCS(prev)
		if !slices.Equal(got, want) {
			t.Fatalf("GOMAXPROCS %d: a different ordering", procs)
		}
	}
	seen := make([]bool, g.n)
	for _, v := range want {
		if seen[v] {
			t.Fatalf("vertex %d ordered twice", v)
		}
		seen[v] = true
	}
	if len(want) != g.n {
		t.Fatalf("%d vertices ordered, want %d", len(want), g.n)
	}
}
