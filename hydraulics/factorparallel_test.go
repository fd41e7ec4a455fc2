package hydraulics

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"
)

// spFactorColumnwise is the supernodal factorisation as it was before the
// blocked kernels (axpy4, updateTrailing) and the parallel plan: one axpy
// per column in the update sums and in the dense LDLᵀ of each block, all
// supernodes in column order on one goroutine. It is the reference the
// faster code must reproduce to the bit (same operations, same order).
func spFactorColumnwise(m *spd) error {
	sn, wk := m.sn, &m.snWork
	wk.clearLists()
	dw := &wk.dense[0]
	dw.deferring, dw.helper = false, nil
	for s := 0; s+1 < len(sn.first); s++ {
		f, l := int(sn.first[s]), int(sn.first[s+1])-1
		below := m.lRow[m.lStart[l]:m.lStart[l+1]]
		width := l - f + 1
		t := width + len(below)
		w := dw.w[:t*width]
		m.scatterA(dw, f, l, below, t, w)
		for k := wk.head[s]; k >= 0; {
			nextK := wk.next[k]
			spUpdateFromColumnwise(m, dw, s, int(k), l, t, w)
			k = nextK
		}
		for c := range width {
			col := w[c*t : (c+1)*t]
			dc := col[c]
			if !(dc > pivotTiny) || math.IsInf(dc, 0) {
				return &notPositiveDefiniteError{Row: int(m.perm[f+c]), Pivot: dc}
			}
			m.d[f+c] = dc
			for c2 := c + 1; c2 < width; c2++ {
				axpy(w[c2*t+c2:(c2+1)*t], col[c2:], -col[c2]/dc)
			}
			inv := 1 / dc
			dst := m.lVal[m.lStart[f+c]:m.lStart[f+c+1]]
			for i, v := range col[c+1:] {
				dst[i] = v * inv
			}
		}
		wk.ptr[s] = 0
		m.waitFor(dw, s, int32(s), below)
	}
	return nil
}

// spUpdateFromColumnwise is updateFrom with one axpy per column of k.
func spUpdateFromColumnwise(m *spd, dw *denseWork, time, k, l, t int, w []float64) {
	sn, wk := m.sn, &m.snWork
	fk, lk := int(sn.first[k]), int(sn.first[k+1])-1
	rows := m.lRow[m.lStart[lk]:m.lStart[lk+1]]
	p0 := int(wk.ptr[k])
	p1 := p0
	for p1 < len(rows) && int(rows[p1]) <= l {
		p1++
	}
	rel := dw.relK[:len(rows)-p0]
	for i, r := range rows[p0:] {
		rel[i] = dw.rel[r]
	}
	sum := dw.sum[:len(rel)]
	for a := 0; a < p1-p0; a++ {
		clear(sum[a:])
		for c := fk; c <= lk; c++ {
			off := m.lStart[c] + (lk - c) + p0
			v := m.lVal[off : off+len(rel)]
			axpy(sum[a:], v[a:], v[a]*m.d[c])
		}
		col := w[int(rel[a])*t : int(rel[a]+1)*t]
		for i := a; i < len(sum); i++ {
			col[rel[i]] -= sum[i]
		}
	}
	wk.ptr[k] = int32(p1)
	m.waitFor(dw, time, int32(k), rows[p1:])
}

// spParallelCases are matrices large enough for a parallel plan.
func spParallelCases(rng *rand.Rand) []struct {
	name string
	g    spGraph
} {
	return []struct {
		name string
		g    spGraph
	}{
		{"network-like 160", spNetworkLike(rng, 160, 0.3)},
		{"grid 120x120", spGrid(120, 120)},
		{"grid with dead ends", spWithDeadEnds(rng, spGrid(110, 110), 3000, 6)},
	}
}

// TestSPDFactorBitwise: the blocked kernels and the parallel factorisation
// give the factor of the column-by-column reference to the bit, since they
// do the same floating-point operations in the same order.
func TestSPDFactorBitwise(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	cases := append(spParallelCases(rng), struct {
		name string
		g    spGraph
	}{"grid 250x250", spGrid(250, 250)})
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			m := newSPD(tc.g.n, tc.g.pairs, tc.g.x, tc.g.y)
			if len(m.sn.tasks) != parallelWorkers {
				t.Fatalf("no parallel plan for %d unknowns; the case does not exercise it", m.n)
			}
			if tc.name == "grid 250x250" && !spHelperSplits(m) {
				t.Fatal("no dense update of the serial part is large enough to be split")
			}
			spLoad(m, tc.g, spRandomSystem(rng, tc.g))
			if err := spFactorColumnwise(m); err != nil {
				t.Fatal(err)
			}
			wantL, wantD := slices.Clone(m.lVal), slices.Clone(m.d)
			for _, run := range []struct {
				name   string
				factor func() error
			}{{"serial", m.factorSerial}, {"parallel", m.factorParallel}} {
				clear(m.lVal)
				clear(m.d)
				if err := run.factor(); err != nil {
					t.Fatalf("%s: %v", run.name, err)
				}
				for k := range wantL {
					if math.Float64bits(m.lVal[k]) != math.Float64bits(wantL[k]) {
						t.Fatalf("%s: L entry %d = %x, column-wise reference %x", run.name, k, m.lVal[k], wantL[k])
					}
				}
				for k := range wantD {
					if math.Float64bits(m.d[k]) != math.Float64bits(wantD[k]) {
						t.Fatalf("%s: d[%d] = %x, column-wise reference %x", run.name, k, m.d[k], wantD[k])
					}
				}
			}
		})
	}
}

// TestSPDParallelPlan: the plan's subtrees are whole subtrees of the
// elimination tree (a supernode and its parent share an owner unless the
// parent is in the serial part), every supernode is owned once, and the
// two workers' shares are within a factor two of each other.
func TestSPDParallelPlan(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 6))
	for _, tc := range spParallelCases(rng) {
		t.Run(tc.name, func(t *testing.T) {
			m := newSPD(tc.g.n, tc.g.pairs, tc.g.x, tc.g.y)
			sn := m.sn
			ns := len(sn.first) - 1
			covered := make([]int, ns)
			for i, ranges := range sn.tasks {
				for _, r := range ranges {
					for s := r[0]; s < r[1]; s++ {
						covered[s]++
						if int(sn.owner[s]) != i {
							t.Fatalf("supernode %d in worker %d's range is owned by %d", s, i, sn.owner[s])
						}
					}
				}
			}
			own := m.supernodeWorkEstimate()
			var load [parallelWorkers]float64
			for s := range ns {
				o := sn.owner[s]
				if (o >= 0) != (covered[s] == 1) || covered[s] > 1 {
					t.Fatalf("supernode %d: owner %d, in %d ranges", s, o, covered[s])
				}
				if o >= 0 {
					load[o] += own[s]
				}
				if p := m.parent[sn.first[s+1]-1]; p >= 0 && o >= 0 {
					if po := sn.owner[sn.of[p]]; po != o && po >= 0 {
						t.Fatalf("supernode %d (worker %d) has its parent in worker %d", s, o, po)
					}
				}
			}
			if !(load[0] > 0.5*load[1] && load[1] > 0.5*load[0]) {
				t.Errorf("worker loads %v are unbalanced", load)
			}
		})
	}
}

// TestSPDParallelError: a matrix that is not positive definite gives the
// parallel factorisation the error of the serial one (the first failing
// pivot in column order), whichever part it falls in.
func TestSPDParallelError(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	g := spNetworkLike(rng, 160, 0.3)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	sys := spRandomSystem(rng, g)
	for _, owner := range []int8{0, 1, -1} {
		// A strongly negative diagonal at a row of that part.
		row := -1
		for k := m.n - 1; k >= 0; k-- {
			if m.sn.owner[m.sn.of[k]] == owner {
				row = int(m.perm[k])
				break
			}
		}
		if row < 0 {
			t.Fatalf("no column owned by %d", owner)
		}
		spLoad(m, g, sys)
		m.addDiag(row, -1e9)
		serialErr := m.factorSerial()
		parallelErr := m.factorParallel()
		var se, pe *notPositiveDefiniteError
		if !errors.As(serialErr, &se) || !errors.As(parallelErr, &pe) {
			t.Fatalf("owner %d: errors %v and %v, want not positive definite", owner, serialErr, parallelErr)
		}
		if *se != *pe {
			t.Errorf("owner %d: parallel error %+v, serial %+v", owner, *pe, *se)
		}
	}
}

// TestSolveSameOnOneProcessor: a whole solve on a network with a parallel
// plan gives the same heads and flows, to the bit, on one processor as on
// two (the factor does not depend on the number of workers).
func TestSolveSameOnOneProcessor(t *testing.T) {
	net := streetGrid(150, 6, 3)
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.g.m.sn.tasks) != parallelWorkers {
		t.Fatal("no parallel plan; the case does not exercise it")
	}
	two, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(1))
	one, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if one.Iterations != two.Iterations {
		t.Errorf("iterations %d on one processor, %d on two", one.Iterations, two.Iterations)
	}
	for i := range one.Head {
		if math.Float64bits(float64(one.Head[i])) != math.Float64bits(float64(two.Head[i])) {
			t.Fatalf("node %d: head %v on one processor, %v on two", i, one.Head[i], two.Head[i])
		}
	}
	for j := range one.Flow {
		if math.Float64bits(float64(one.Flow[j])) != math.Float64bits(float64(two.Flow[j])) {
			t.Fatalf("pipe %d: flow %v on one processor, %v on two", j, one.Flow[j], two.Flow[j])
		}
	}
}

// spHelperSplits reports whether the trailing update of some supernode of
// the serial part is large enough to be shared with the helper.
func spHelperSplits(m *spd) bool {
	sn := m.sn
	for s := 0; s+1 < len(sn.first); s++ {
		f, l := int(sn.first[s]), int(sn.first[s+1])-1
		width := l - f + 1
		t := width + m.lStart[l+1] - m.lStart[l]
		if sn.owner[s] < 0 && 4*(width-4)*(t-4) >= parallelGrain {
			return true
		}
	}
	return false
}

// TestAssembleAtPermutedRows: assembling the head matrix at the diagonal
// positions found once (gga.da, gga.db) gives the matrix of addDiag, which
// looks each row up in the elimination order, to the bit.
func TestAssembleAtPermutedRows(t *testing.T) {
	net := streetGrid(40, 3, 2)
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	g := s.g
	g.m.clear()
	for j, ok := range g.solved {
		if ok {
			g.assemble(j, 1/float64(j+3))
		}
	}
	got := slices.Clone(g.m.diag)
	g.m.clear()
	for j, ok := range g.solved {
		if !ok {
			continue
		}
		p := 1 / float64(j+3)
		if a := g.ua[j]; a >= 0 {
			g.m.addDiag(int(a), p)
		}
		if b := g.ub[j]; b >= 0 {
			g.m.addDiag(int(b), p)
		}
	}
	for k := range got {
		if math.Float64bits(got[k]) != math.Float64bits(g.m.diag[k]) {
			t.Fatalf("diagonal %d: %v, addDiag gives %v", k, got[k], g.m.diag[k])
		}
	}
}
