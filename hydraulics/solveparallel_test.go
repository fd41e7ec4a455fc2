package hydraulics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The solves on the parallel plan give the serial solves' result to the
// bit (see solveparallel.go), and that result solves the system: checked
// by the residual of A·x − b against the matrix assembled independently.
func TestSolveParallelSameAsSerial(t *testing.T) {
	g, s := spBenchNetwork(316) // 100k unknowns: the factorisation has a parallel plan
	m := newSPD(g.n, g.pairs, g.x, g.y)
	spLoad(m, g, s)
	if err := m.factor(); err != nil {
		t.Fatal(err)
	}
	plan := m.buildSolvePlan()
	if plan == nil {
		t.Fatal("no parallel plan for a 100k network")
	}
	rhs := spRandomVector(rand.New(rand.NewPCG(3, 3)), g.n)
	serial := append([]float64(nil), rhs...)
	m.solvePlan = nil
	m.solve(serial)
	parallel := append([]float64(nil), rhs...)
	m.solvePlan = plan
	m.solve(parallel)
	for i := range serial {
		if math.Float64bits(serial[i]) != math.Float64bits(parallel[i]) {
			t.Fatalf("x[%d]: parallel %v, serial %v", i, parallel[i], serial[i])
		}
	}
	// Residual, with A from the pairs and weights (as spDenseOf, without the dense matrix).
	ax := make([]float64, g.n)
	for v, d := range s.diag {
		ax[v] += d * parallel[v]
	}
	for k, p := range g.pairs {
		a, b := p[0], p[1]
		w := s.w[k]
		ax[a] += w * (parallel[a] - parallel[b])
		ax[b] += w * (parallel[b] - parallel[a])
	}
	worst, scale := 0.0, 0.0
	for i := range ax {
		worst = max(worst, math.Abs(ax[i]-rhs[i]))
		scale = max(scale, math.Abs(rhs[i]))
	}
	if worst > 1e-9*scale {
		t.Errorf("residual %g of a right-hand side of size %g", worst, scale)
	}
}

// BenchmarkSPDSolve560k times one solve on the 750×750 street grid
// (562,500 unknowns), serially and on the parallel plan.
func BenchmarkSPDSolve560k(b *testing.B) {
	g, s := spBenchNetwork(750)
	m := newSPD(g.n, g.pairs, g.x, g.y)
	spLoad(m, g, s)
	if err := m.factor(); err != nil {
		b.Fatal(err)
	}
	plan := m.buildSolvePlan()
	rhs := spRandomVector(rand.New(rand.NewPCG(2, 2)), g.n)
	x := make([]float64, g.n)
	for _, c := range []struct {
		name string
		p    *solvePlan
	}{{"serial", nil}, {"parallel", plan}} {
		b.Run(c.name, func(b *testing.B) {
			m.solvePlan = c.p
			for b.Loop() {
				copy(x, rhs)
				m.solve(x)
			}
			b.ReportMetric(float64(m.factorNonzeros()), "nnzL")
		})
	}
}
