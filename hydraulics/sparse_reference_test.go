package hydraulics

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// spUpLooking is an independent factorisation of m's current values by the
// up-looking (row-by-row) simplicial LDLᵀ: row k of L is the solution of the
// sparse triangular system L[0:k,0:k]·D·l = A[0:k, k], whose pattern is the
// reach of column k of A in the elimination tree, and
// d_k = a_kk − Σ_i l_i²·d_i (T. A. Davis, Direct Methods for Sparse Linear
// Systems, SIAM, 2006, ch. 4, cited from memory). It returns L's row indices
// and values by column (in the column starts of m) and D, for comparison
// with the supernodal factor, which may store explicit zeros besides.
func spUpLooking(m *spd) (start []int, rows []int32, vals, d []float64, ok bool) {
	n := m.n
	flag := make([]int32, n)
	start = make([]int, n+1)
	for k := range n { // exact column counts, from the elimination tree
		flag[k] = int32(k)
		for _, i := range m.rowIdx[m.colStart[k]:m.colStart[k+1]] {
			for ; flag[i] != int32(k); i = m.parent[i] {
				start[i+1]++
				flag[i] = int32(k)
			}
		}
	}
	for k := range n {
		start[k+1] += start[k]
		flag[k] = -1
	}
	rows, vals, d = make([]int32, start[n]), make([]float64, start[n]), make([]float64, n)
	y := make([]float64, n)
	pattern := make([]int32, n)
	count := make([]int, n)
	for k := range n {
		k32 := int32(k)
		flag[k] = k32
		top := n
		for p := m.colStart[k]; p < m.colStart[k+1]; p++ {
			i := m.rowIdx[p]
			y[i] += m.val[p]
			length := 0
			for ; flag[i] != k32; i = m.parent[i] {
				pattern[length] = i
				length++
				flag[i] = k32
			}
			for length > 0 {
				top--
				length--
				pattern[top] = pattern[length]
			}
		}
		dk := m.diag[k]
		for _, i := range pattern[top:n] {
			yi := y[i]
			y[i] = 0
			s := start[i]
			for q := s; q < s+count[i]; q++ {
				y[rows[q]] -= vals[q] * yi
			}
			lki := yi / d[i]
			dk -= lki * yi
			rows[s+count[i]] = k32
			vals[s+count[i]] = lki
			count[i]++
		}
		if !(dk > pivotTiny) {
			return start, rows, vals, d, false
		}
		d[k] = dk
	}
	return start, rows, vals, d, true
}

// TestSPDSupernodalMatchesUpLooking: the supernodal factor equals the
// simplicial up-looking one (an independent algorithm for the same L and D,
// which are unique for a positive-definite matrix and a given ordering) to
// round-off, pattern and values, on networks with large supernodes.
func TestSPDSupernodalMatchesUpLooking(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	cases := []struct {
		name string
		g    spGraph
	}{
		{"grid 30x30", spGrid(30, 30)},
		{"network-like 60", spNetworkLike(rng, 60, 0.3)},
		{"grid with dead ends", spWithDeadEnds(rng, spGrid(20, 20), 30, 5)},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			m := newSPD(tc.g.n, tc.g.pairs, tc.g.x, tc.g.y)
			spLoad(m, tc.g, spRandomSystem(rng, tc.g))
			if err := m.factor(); err != nil {
				t.Fatal(err)
			}
			widest := 0
			for s := 0; s+1 < len(m.sn.first); s++ {
				widest = max(widest, int(m.sn.first[s+1]-m.sn.first[s]))
			}
			if widest < 4 {
				t.Fatalf("widest supernode has %d columns; the case does not exercise the dense blocks", widest)
			}
			start, rows, vals, d, ok := spUpLooking(m)
			if !ok {
				t.Fatal("up-looking factorisation failed")
			}
			if got := m.factorNonzeros(); got != start[m.n] {
				t.Errorf("factorNonzeros() = %d, the elimination tree gives %d", got, start[m.n])
			}
			for c := range m.n {
				stored := m.lRow[m.lStart[c]:m.lStart[c+1]]
				storedVal := m.lVal[m.lStart[c]:m.lStart[c+1]]
				matched := 0
				for q := start[c]; q < start[c+1]; q++ {
					at, found := slices.BinarySearch(stored, rows[q])
					if !found {
						t.Fatalf("column %d: row %d of the exact pattern is not stored", c, rows[q])
					}
					if e := math.Abs(vals[q] - storedVal[at]); e > 1e-10*math.Max(1, math.Abs(vals[q])) {
						t.Fatalf("L[%d][%d] = %g, up-looking gives %g", rows[q], c, storedVal[at], vals[q])
					}
					matched++
				}
				nonzero := 0
				for _, v := range storedVal {
					if v != 0 {
						nonzero++
					}
				}
				if nonzero > matched {
					t.Fatalf("column %d: %d stored nonzeros, %d in the exact pattern", c, nonzero, matched)
				}
			}
			for k := range d {
				if e := math.Abs(d[k] - m.d[k]); e > 1e-10*math.Abs(d[k]) {
					t.Fatalf("d[%d] = %g, up-looking gives %g", k, m.d[k], d[k])
				}
			}
		})
	}
}

// TestSPDSolve2MatchesSolve: the two-right-hand-side solve gives, for each,
// what the one-vector solve gives (the same arithmetic in one pass), and a
// residual ‖A·x − b‖/‖b‖ at round-off (an independent check on A itself).
func TestSPDSolve2MatchesSolve(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 9))
	g := spNetworkLike(rng, 40, 0.3)
	sys := spRandomSystem(rng, g)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	spLoad(m, g, sys)
	if err := m.factor(); err != nil {
		t.Fatal(err)
	}
	b1, b2 := spRandomVector(rng, g.n), make([]float64, g.n)
	b2[g.n/3] = 1 // a unit demand, as the pinned solve's
	x1, x2 := slices.Clone(b1), slices.Clone(b2)
	m.solve2(x1, x2)
	y1, y2 := slices.Clone(b1), slices.Clone(b2)
	m.solve(y1)
	m.solve(y2)
	for i := range x1 {
		if x1[i] != y1[i] || x2[i] != y2[i] {
			t.Fatalf("row %d: solve2 (%g, %g), solve (%g, %g)", i, x1[i], x2[i], y1[i], y2[i])
		}
	}
	for k, pair := range [][2][]float64{{x1, b1}, {x2, b2}} {
		if r := spRelResidual(g, sys, pair[0], pair[1]); r > 1e-10 { // as TestSPDAgainstDenseCholesky
			t.Errorf("right-hand side %d: relative residual %g", k+1, r)
		}
	}
}
