package hydraulics

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// spGraph is a matrix pattern with planar coordinates, as a pipe network gives it.
type spGraph struct {
	n     int
	pairs [][2]int32
	x, y  []float64
}

// spGrid is the nx×ny 5-point grid, numbered row by row, at unit spacing.
func spGrid(nx, ny int) spGraph {
	g := spGraph{n: nx * ny, x: make([]float64, nx*ny), y: make([]float64, nx*ny)}
	for j := range ny {
		for i := range nx {
			v := j*nx + i
			g.x[v], g.y[v] = float64(i), float64(j)
			if i+1 < nx {
				g.pairs = append(g.pairs, [2]int32{int32(v), int32(v + 1)})
			}
			if j+1 < ny {
				g.pairs = append(g.pairs, [2]int32{int32(v), int32(v + nx)})
			}
		}
	}
	return g
}

// spGridRemoved is a street grid with a fraction of its links removed at random.
func spGridRemoved(rng *rand.Rand, nx, ny int, frac float64) spGraph {
	g := spGrid(nx, ny)
	kept := g.pairs[:0]
	for _, p := range g.pairs {
		if rng.Float64() >= frac {
			kept = append(kept, p)
		}
	}
	g.pairs = kept
	return g
}

// spNetworkLike is a random spanning tree of a jittered side×side grid plus extra grid links,
// extra·n of them: with extra = 0.3 the mean degree is about 2.6, as in LIBRARIES.md §6 (a).
func spNetworkLike(rng *rand.Rand, side int, extra float64) spGraph {
	full := spGrid(side, side)
	for v := range full.n {
		full.x[v] += 0.3 * (rng.Float64() - 0.5)
		full.y[v] += 0.3 * (rng.Float64() - 0.5)
	}
	edges := slices.Clone(full.pairs)
	rng.Shuffle(len(edges), func(i, j int) { edges[i], edges[j] = edges[j], edges[i] })
	uf := newSPUnionFind(full.n)
	var tree, rest [][2]int32
	for _, e := range edges {
		if uf.union(int(e[0]), int(e[1])) {
			tree = append(tree, e)
		} else {
			rest = append(rest, e)
		}
	}
	nExtra := min(len(rest), int(extra*float64(full.n)))
	full.pairs = append(tree, rest[:nExtra]...)
	return full
}

// spWithDeadEnds attaches chains of the given length to randomly chosen vertices.
func spWithDeadEnds(rng *rand.Rand, g spGraph, chains, length int) spGraph {
	for range chains {
		at := int32(rng.IntN(g.n))
		for range length {
			v := int32(g.n)
			g.n++
			g.x = append(g.x, g.x[at]+0.2)
			g.y = append(g.y, g.y[at]+0.1)
			g.pairs = append(g.pairs, [2]int32{at, v})
			at = v
		}
	}
	return g
}

type spUnionFind struct{ up []int }

func newSPUnionFind(n int) *spUnionFind {
	u := &spUnionFind{up: make([]int, n)}
	for i := range u.up {
		u.up[i] = i
	}
	return u
}

func (u *spUnionFind) find(i int) int {
	for u.up[i] != i {
		u.up[i] = u.up[u.up[i]]
		i = u.up[i]
	}
	return i
}

func (u *spUnionFind) union(a, b int) bool {
	ra, rb := u.find(a), u.find(b)
	if ra == rb {
		return false
	}
	u.up[ra] = rb
	return true
}

// spSystem is a weighted graph Laplacian plus a positive diagonal at Dirichlet (fixed-head)
// nodes: the structure of the GGA head matrix (DOMAIN.md §6.2).
type spSystem struct {
	w    []float64 // conductance of each pair
	diag []float64 // Dirichlet term of each node (0 at most nodes)
}

// spLogUniform draws from a log-uniform distribution over [1e-2, 1e2], four decades.
func spLogUniform(rng *rand.Rand) float64 { return math.Pow(10, 4*rng.Float64()-2) }

// spRandomSystem gives each pair a log-uniform conductance and puts a Dirichlet term on the first
// vertex of every connected component plus on about 1 % of the others, so that A is SPD
// (DOMAIN.md §6.2: SPD when every component reaches a fixed head).
func spRandomSystem(rng *rand.Rand, g spGraph) spSystem {
	s := spSystem{w: make([]float64, len(g.pairs)), diag: make([]float64, g.n)}
	uf := newSPUnionFind(g.n)
	for k, p := range g.pairs {
		s.w[k] = spLogUniform(rng)
		uf.union(int(p[0]), int(p[1]))
	}
	seen := make([]bool, g.n)
	for v := range g.n {
		if r := uf.find(v); !seen[r] {
			seen[r] = true
			s.diag[v] += spLogUniform(rng)
		}
		if rng.Float64() < 0.01 {
			s.diag[v] += spLogUniform(rng)
		}
	}
	return s
}

// spLoad assembles s into m the way the GGA does (DOMAIN.md §6.2, element by element).
func spLoad(m *spd, g spGraph, s spSystem) {
	m.clear()
	for k, p := range g.pairs {
		m.addDiag(int(p[0]), s.w[k])
		m.addDiag(int(p[1]), s.w[k])
		m.addPair(k, -s.w[k])
	}
	for v, d := range s.diag {
		if d != 0 {
			m.addDiag(v, d)
		}
	}
}

// spDenseOf assembles s as a dense row-major matrix, independently of spd.
func spDenseOf(g spGraph, s spSystem) []float64 {
	a := make([]float64, g.n*g.n)
	for k, p := range g.pairs {
		i, j := int(p[0]), int(p[1])
		a[i*g.n+i] += s.w[k]
		a[j*g.n+j] += s.w[k]
		a[i*g.n+j] -= s.w[k]
		a[j*g.n+i] -= s.w[k]
	}
	for v, d := range s.diag {
		a[v*g.n+v] += d
	}
	return a
}

// spDenseCholeskySolve solves a·x = b by the textbook dense Cholesky a = R·Rᵀ with square roots
// (Golub & Van Loan, Matrix Computations, alg. 4.2.1, from memory), an implementation
// independent of the sparse LDLᵀ under test.
func spDenseCholeskySolve(t *testing.T, n int, a, b []float64) []float64 {
	t.Helper()
	r := slices.Clone(a)
	for j := range n {
		s := r[j*n+j]
		for k := range j {
			s -= r[j*n+k] * r[j*n+k]
		}
		if s <= 0 {
			t.Fatalf("dense Cholesky: matrix not SPD at row %d", j)
		}
		r[j*n+j] = math.Sqrt(s)
		for i := j + 1; i < n; i++ {
			s := r[i*n+j]
			for k := range j {
				s -= r[i*n+k] * r[j*n+k]
			}
			r[i*n+j] = s / r[j*n+j]
		}
	}
	x := slices.Clone(b)
	for i := range n {
		for k := range i {
			x[i] -= r[i*n+k] * x[k]
		}
		x[i] /= r[i*n+i]
	}
	for i := n - 1; i >= 0; i-- {
		for k := i + 1; k < n; k++ {
			x[i] -= r[k*n+i] * x[k]
		}
		x[i] /= r[i*n+i]
	}
	return x
}

// spRelResidual returns ‖A·x − b‖₂ / ‖b‖₂ with A applied edge by edge from g and s.
func spRelResidual(g spGraph, s spSystem, x, b []float64) float64 {
	r := make([]float64, g.n)
	for v := range g.n {
		r[v] = s.diag[v]*x[v] - b[v]
	}
	for k, p := range g.pairs {
		i, j := p[0], p[1]
		f := s.w[k] * (x[i] - x[j])
		r[i] += f
		r[j] -= f
	}
	return spNorm2(r) / spNorm2(b)
}

func spNorm2(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return math.Sqrt(s)
}

func spRandomVector(rng *rand.Rand, n int) []float64 {
	b := make([]float64, n)
	for i := range b {
		b[i] = rng.Float64()*2 - 1
	}
	return b
}

// spMaxRelDiff returns max|a−b| / max|b|.
func spMaxRelDiff(a, b []float64) float64 {
	var d, s float64
	for i := range a {
		d = max(d, math.Abs(a[i]-b[i]))
		s = max(s, math.Abs(b[i]))
	}
	return d / s
}

func TestSPDAgainstDenseCholesky(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	cases := []struct {
		name     string
		g        spGraph
		noCoords bool
	}{
		{"grid 15x14, 25% links removed", spGridRemoved(rng, 15, 14, 0.25), false},
		{"spanning tree + 30% links", spNetworkLike(rng, 17, 0.3), false},
		{"spanning tree + 30% links, no coordinates", spNetworkLike(rng, 17, 0.3), true},
		{"tree with dead-end chains", spWithDeadEnds(rng, spNetworkLike(rng, 10, 0), 20, 6), false},
		{"grid with dead-end chains", spWithDeadEnds(rng, spGrid(12, 12), 15, 5), false},
		{"grid with dead-end chains, no coordinates", spWithDeadEnds(rng, spGrid(12, 12), 15, 5), true},
		{"full grid 20x20", spGrid(20, 20), false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			x, y := tc.g.x, tc.g.y
			if tc.noCoords {
				x, y = nil, nil
			}
			s := spRandomSystem(rng, tc.g)
			m := newSPD(tc.g.n, tc.g.pairs, x, y)
			spLoad(m, tc.g, s)
			if err := m.factor(); err != nil {
				t.Fatalf("factor: %v", err)
			}
			b := spRandomVector(rng, tc.g.n)
			got := slices.Clone(b)
			m.solve(got)
			want := spDenseCholeskySolve(t, tc.g.n, spDenseOf(tc.g, s), b)
			// Tolerances: conductances span 4 decades, so κ(A) is up to ~1e8; double precision
			// then leaves at least ~1e-8 relative accuracy in x (common practice, no source).
			if d := spMaxRelDiff(got, want); d > 1e-8 {
				t.Errorf("max |x - x_dense| / max |x_dense| = %.3g, want <= 1e-8", d)
			}
			if r := spRelResidual(tc.g, s, got, b); r > 1e-10 {
				t.Errorf("||Ax-b||/||b|| = %.3g, want < 1e-10", r)
			}
		})
	}
}

// TestSPDChainClosedForm: the chain matrix tridiag(−1, 2, −1) of order n (both ends tied to a
// zero head) with b = 1 has the solution x_i = i·(n+1−i)/2, i = 1..n (the discrete Poisson
// problem −u″ = 1, u(0) = u(n+1) = 0, whose quadratic solution the 3-point stencil reproduces
// exactly).
func TestSPDChainClosedForm(t *testing.T) {
	for _, n := range []int{1, 2, 7, 200, 1001} {
		t.Run(fmt.Sprintf("n=%d", n), func(t *testing.T) {
			pairs := make([][2]int32, n-1)
			xs := make([]float64, n)
			ys := make([]float64, n)
			for i := range n - 1 {
				pairs[i] = [2]int32{int32(i), int32(i + 1)}
			}
			for i := range n {
				xs[i] = float64(i)
			}
			m := newSPD(n, pairs, xs, ys)
			for i := range n {
				m.addDiag(i, 2)
			}
			for k := range pairs {
				m.addPair(k, -1)
			}
			if err := m.factor(); err != nil {
				t.Fatal(err)
			}
			b := make([]float64, n)
			for i := range b {
				b[i] = 1
			}
			m.solve(b)
			for i := range n {
				want := float64((i+1)*(n-i)) / 2
				if math.Abs(b[i]-want) > 1e-9*want {
					t.Fatalf("x[%d] = %.12g, want %.12g", i, b[i], want)
				}
			}
			// A chain has no fill: L has exactly the n−1 links (George & Liu 1981: eliminating a
			// vertex of degree ≤ 1 adds no edge).
			if got := m.factorNonzeros(); got != n-1 {
				t.Errorf("nnz(L) = %d, want %d", got, n-1)
			}
		})
	}
}

// TestSPDGridEigenvector: on an N×N grid with zero heads all round, the 5-point matrix has the
// eigenvector v_ij = sin(iθ)·sin(jθ), θ = π/(N+1), with eigenvalue λ = 4·(1 − cos θ) (standard
// result for the discrete Laplacian, e.g. LeVeque, Finite Difference Methods, 2007, §3.4; from
// memory). So A·x = v has the solution x = v/λ.
func TestSPDGridEigenvector(t *testing.T) {
	for _, tc := range []struct {
		name     string
		side     int
		noCoords bool
	}{
		{"30x30", 30, false},
		{"30x30 no coordinates", 30, true},
		{"101x101", 101, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			g := spGrid(tc.side, tc.side)
			x, y := g.x, g.y
			if tc.noCoords {
				x, y = nil, nil
			}
			m := newSPD(g.n, g.pairs, x, y)
			for v := range g.n {
				m.addDiag(v, 4)
			}
			for k := range g.pairs {
				m.addPair(k, -1)
			}
			if err := m.factor(); err != nil {
				t.Fatal(err)
			}
			theta := math.Pi / float64(tc.side+1)
			lambda := 4 * (1 - math.Cos(theta))
			b := make([]float64, g.n)
			for v := range g.n {
				i, j := v%tc.side+1, v/tc.side+1
				b[v] = math.Sin(float64(i)*theta) * math.Sin(float64(j)*theta)
			}
			want := slices.Clone(b)
			for v := range want {
				want[v] /= lambda
			}
			m.solve(b)
			// κ ≈ 8/λ ≈ 4e3 at N = 101: 1e-10 relative is ample (no source).
			if d := spMaxRelDiff(b, want); d > 1e-10 {
				t.Errorf("max relative error %.3g, want <= 1e-10", d)
			}
		})
	}
}

// spNaturalNonzeros is nnz(L) for the pattern in its given order.
func spNaturalNonzeros(g spGraph) int {
	perm := make([]int32, g.n)
	for i := range perm {
		perm[i] = int32(i)
	}
	return newSPDOrdered(g.n, g.pairs, perm).factorNonzeros()
}

// TestSPDFill: nested dissection must cut the fill far below that of the natural (banded)
// order. A k×k grid in row order fills the whole band, nnz(L) ≈ k³; nested dissection gives
// O(k² log k) (George 1973). LIBRARIES.md §6 measured a 7.5× reduction at 300².
func TestSPDFill(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	grid := spGrid(100, 100)
	net := spNetworkLike(rng, 100, 0.3)
	for _, tc := range []struct {
		name     string
		g        spGraph
		noCoords bool
		maxRatio float64 // largest accepted nnz(L, ordered) / nnz(L, natural)
	}{
		{"grid 100x100, geometric", grid, false, 1.0 / 3},
		{"grid 100x100, graph", grid, true, 1.0 / 3},
		{"network-like 100x100, geometric", net, false, 1.0 / 3},
		{"network-like 100x100, graph", net, true, 1.0 / 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x, y := tc.g.x, tc.g.y
			if tc.noCoords {
				x, y = nil, nil
			}
			nd := newSPD(tc.g.n, tc.g.pairs, x, y).factorNonzeros()
			nat := spNaturalNonzeros(tc.g)
			t.Logf("nnz(L): ordered %d, natural %d, ratio %.3f", nd, nat, float64(nd)/float64(nat))
			if float64(nd) > tc.maxRatio*float64(nat) {
				t.Errorf("nnz(L) = %d with the ordering, natural %d: ratio %.3f, want < %.3f",
					nd, nat, float64(nd)/float64(nat), tc.maxRatio)
			}
		})
	}
}

// TestSPDTreeNoFill: a tree (a branched network with no loops) is eliminated leaves first,
// which creates no fill, so nnz(L) equals the number of links (George & Liu 1981).
func TestSPDTreeNoFill(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	g := spWithDeadEnds(rng, spNetworkLike(rng, 40, 0), 50, 10)
	for _, coords := range []bool{true, false} {
		x, y := g.x, g.y
		if !coords {
			x, y = nil, nil
		}
		if got := newSPD(g.n, g.pairs, x, y).factorNonzeros(); got != len(g.pairs) {
			t.Errorf("coordinates %v: nnz(L) = %d, want %d (the links)", coords, got, len(g.pairs))
		}
	}
}

// TestSPDSingular: a Laplacian block with no Dirichlet node is singular (its rows sum to zero;
// DOMAIN.md §6.2), and factor must say so with the caller's row number.
func TestSPDSingular(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	tree := spNetworkLike(rng, 8, 0)
	// Two copies of a grid: the first tied to a fixed head, the second floating.
	grid := spGrid(6, 6)
	two := spGraph{n: 2 * grid.n}
	for _, p := range grid.pairs {
		two.pairs = append(two.pairs, p, [2]int32{p[0] + int32(grid.n), p[1] + int32(grid.n)})
	}
	two.x = append(slices.Clone(grid.x), grid.x...)
	two.y = append(slices.Clone(grid.y), grid.y...)
	for i := grid.n; i < two.n; i++ {
		two.y[i] += 10
	}
	for _, tc := range []struct {
		name    string
		g       spGraph
		w       func(k int) float64
		fixed   []int // Dirichlet nodes, unit term
		badFrom int   // the failing row must be >= badFrom
	}{
		// Integer conductances on a tree eliminate exactly (every multiplier is ±1), so the last
		// pivot is exactly zero.
		{"tree, integer conductances", tree, func(k int) float64 { return float64(1 + k%5) }, nil, 0},
		{"second grid floating", two, func(int) float64 { return 1 }, []int{0}, grid.n},
		{"NaN conductance", grid, func(k int) float64 {
			if k == 7 {
				return math.NaN()
			}
			return 1
		}, []int{0}, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := newSPD(tc.g.n, tc.g.pairs, tc.g.x, tc.g.y)
			for k, p := range tc.g.pairs {
				m.addDiag(int(p[0]), tc.w(k))
				m.addDiag(int(p[1]), tc.w(k))
				m.addPair(k, -tc.w(k))
			}
			for _, v := range tc.fixed {
				m.addDiag(v, 1)
			}
			err := m.factor()
			var npd *notPositiveDefiniteError
			if !errors.As(err, &npd) {
				t.Fatalf("factor() = %v, want *notPositiveDefiniteError", err)
			}
			if npd.Row < tc.badFrom || npd.Row >= tc.g.n {
				t.Errorf("Row = %d, want in [%d, %d)", npd.Row, tc.badFrom, tc.g.n)
			}
			want := fmt.Sprintf("hydraulics: matrix not positive definite at row %d (pivot %g)", npd.Row, npd.Pivot)
			if err.Error() != want {
				t.Errorf("Error() = %q, want %q", err.Error(), want)
			}
		})
	}
}

// TestSPDRefactor: one pattern, several value sets, as on successive Newton iterations,
// including recovery after a failed factorisation.
func TestSPDRefactor(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	g := spWithDeadEnds(rng, spNetworkLike(rng, 14, 0.3), 10, 4)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	for round := range 4 {
		if round == 2 {
			// An indefinite system must fail and leave m reusable. A unit Laplacian with −1 on
			// one diagonal entry has xᵀAx = −1 for x = 1, so by Sylvester's law of inertia some
			// pivot d_k is negative, whatever the rounding. (A floating Laplacian is only
			// singular: in floating point its last pivot may come out as +2e-15 instead of 0,
			// which the absolute test d_k <= 1e-300 cannot catch; see TestSPDSingular.)
			m.clear()
			for k, p := range g.pairs {
				m.addDiag(int(p[0]), 1)
				m.addDiag(int(p[1]), 1)
				m.addPair(k, -1)
			}
			m.addDiag(0, -1)
			var npd *notPositiveDefiniteError
			if err := m.factor(); !errors.As(err, &npd) {
				t.Fatalf("round %d: factor() = %v, want *notPositiveDefiniteError", round, err)
			}
			continue
		}
		s := spRandomSystem(rng, g)
		spLoad(m, g, s)
		if err := m.factor(); err != nil {
			t.Fatalf("round %d: %v", round, err)
		}
		b := spRandomVector(rng, g.n)
		got := slices.Clone(b)
		m.solve(got)
		want := spDenseCholeskySolve(t, g.n, spDenseOf(g, s), b)
		if d := spMaxRelDiff(got, want); d > 1e-8 {
			t.Errorf("round %d: max relative difference from dense %.3g, want <= 1e-8", round, d)
		}
		if r := spRelResidual(g, s, got, b); r > 1e-10 {
			t.Errorf("round %d: residual %.3g, want < 1e-10", round, r)
		}
	}
}

// TestSPDRepeatedPairs: repeated pairs and mirrored pairs add into one entry; a self-pair adds
// to the diagonal twice (A[i][i] += v and A[i][i] += v).
func TestSPDRepeatedPairs(t *testing.T) {
	g := spGraph{n: 4, pairs: [][2]int32{{0, 1}, {1, 0}, {1, 2}, {2, 3}, {1, 2}, {3, 3}}}
	w := []float64{0.5, 1.5, 2, 3, 1, 0.25}
	m := newSPD(g.n, g.pairs, nil, nil)
	s := spSystem{w: w, diag: []float64{1, 0, 0, 0}}
	spLoad(m, g, s)
	if err := m.factor(); err != nil {
		t.Fatal(err)
	}
	// Dense matrix written out by hand from the pairs above (self-pair (3,3): +0.25+0.25 from
	// the two addDiag calls in load and −2·0.25 from addPair, net 0).
	a := []float64{
		3, -2, 0, 0,
		-2, 5, -3, 0,
		0, -3, 6, -3,
		0, 0, -3, 3,
	}
	b := []float64{1, 2, 3, 4}
	got := slices.Clone(b)
	m.solve(got)
	want := spDenseCholeskySolve(t, 4, a, b)
	if d := spMaxRelDiff(got, want); d > 1e-13 {
		t.Errorf("got %v, want %v", got, want)
	}
}

// TestFillReducingOrderIsPermutation covers awkward inputs: isolated vertices, a hub of degree
// above the small-piece size, coincident and non-finite coordinates.
func TestFillReducingOrderIsPermutation(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	star := spGraph{n: 200}
	for i := 1; i < 200; i++ {
		star.pairs = append(star.pairs, [2]int32{0, int32(i)}, [2]int32{int32(i), int32(1 + i%199)})
	}
	grid := spGrid(20, 20)
	same := make([]float64, grid.n)
	nan := slices.Clone(grid.x)
	nan[5] = math.NaN()
	cases := []struct {
		name string
		n    int
		g    spGraph
		x, y []float64
	}{
		{"empty", 0, spGraph{}, nil, nil},
		{"isolated vertices", 50, spGraph{pairs: [][2]int32{{3, 4}}}, nil, nil},
		{"wheel of 200", 200, star, nil, nil},
		{"coincident points", grid.n, grid, same, same},
		{"NaN coordinate", grid.n, grid, nan, grid.y},
		{"network-like", 400, spNetworkLike(rng, 20, 0.3), nil, nil},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			perm := fillReducingOrder(newAdjacency(tc.n, tc.g.pairs), tc.x, tc.y)
			if len(perm) != tc.n {
				t.Fatalf("len(perm) = %d, want %d", len(perm), tc.n)
			}
			seen := make([]bool, tc.n)
			for _, v := range perm {
				if v < 0 || int(v) >= tc.n || seen[v] {
					t.Fatalf("perm is not a permutation: %d repeated or out of range", v)
				}
				seen[v] = true
			}
		})
	}
}

// spBenchNetwork is the LIBRARIES.md §6 (a) street grid: random spanning tree plus 30 % extra
// links (mean degree ~2.6), log-uniform conductances, Dirichlet nodes.
func spBenchNetwork(side int) (spGraph, spSystem) {
	rng := rand.New(rand.NewPCG(1, 1))
	g := spNetworkLike(rng, side, 0.3)
	return g, spRandomSystem(rng, g)
}

func benchmarkSPDFactor(b *testing.B, side int) {
	g, s := spBenchNetwork(side)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	spLoad(m, g, s)
	b.ReportAllocs()
	for b.Loop() {
		if err := m.factor(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(m.factorNonzeros()), "nnzL")
	b.ReportMetric(float64(g.n), "n")
}

func BenchmarkSPDFactor10k(b *testing.B)  { benchmarkSPDFactor(b, 100) }
func BenchmarkSPDFactor100k(b *testing.B) { benchmarkSPDFactor(b, 316) }

// BenchmarkSPDOrder100k times newSPD: ordering, pattern layout and symbolic factorisation.
func BenchmarkSPDOrder100k(b *testing.B) {
	g, _ := spBenchNetwork(316)
	var m *spd
	b.ReportAllocs()
	for b.Loop() {
		m = newSPD(g.n, g.pairs, g.x, g.y)
	}
	b.ReportMetric(float64(m.factorNonzeros()), "nnzL")
}

// BenchmarkSPDOrderGraph100k is BenchmarkSPDOrder100k without coordinates.
func BenchmarkSPDOrderGraph100k(b *testing.B) {
	g, _ := spBenchNetwork(316)
	var m *spd
	for b.Loop() {
		m = newSPD(g.n, g.pairs, nil, nil)
	}
	b.ReportMetric(float64(m.factorNonzeros()), "nnzL")
}

func BenchmarkSPDSolve100k(b *testing.B) {
	g, s := spBenchNetwork(316)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	spLoad(m, g, s)
	if err := m.factor(); err != nil {
		b.Fatal(err)
	}
	rhs := spRandomVector(rand.New(rand.NewPCG(2, 2)), g.n)
	x := make([]float64, g.n)
	for b.Loop() {
		copy(x, rhs)
		m.solve(x)
	}
}
