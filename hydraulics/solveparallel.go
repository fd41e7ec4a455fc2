package hydraulics

import (
	"runtime"
	"slices"
	"sync"
)

// The triangular solves on the parallel plan (planParallel): the subtrees
// the workers factorise are independent in the solves too. Let a task be
// one subtree, its columns the range [c0, c1) in postorder. Within a
// column of L the rows are ascending; those below c1 lie in the column's
// own subtree ("inside"), the rest are ancestors of the subtree, in the
// serial part ("outside").
//
// Forward (L·y = b, column by column): each worker applies its columns'
// inside rows, in column order; then one pass in column order applies the
// outside rows of the task columns and the whole of the serial columns. A
// row of the serial part receives its updates in ascending column order,
// as in the serial solve, and a task row only updates from its own
// subtree, so every entry is formed by the same operations in the same
// order: the result is the same to the bit.
//
// Backward (Lᵀ·x = y): the serial columns first, in descending order (their
// rows are all in the serial part), then the workers their columns in
// descending order; each column's sum runs over its rows in ascending
// order as in the serial solve, inside rows then outside ones.

// minParallelSolve is the factor size (entries of L) below which the solves
// run serially: there a goroutine costs more than it saves.
const minParallelSolve = 1 << 20

// solvePlan is the parallel plan of the triangular solves.
type solvePlan struct {
	tasks  [][][2]int32 // worker i's column ranges [c0, c1), ascending
	split  []int        // per column: where its outside rows start in lRow (lStart[j] for a serial column)
	tail   []int32      // ascending: the columns with outside rows (every serial column with a row)
	serial []int32      // ascending: the serial columns
}

// solvePlanFor makes the plan from the factorisation's, or returns nil when
// the solves should run serially.
func (m *spd) solvePlanFor() *solvePlan {
	if m.lStart[m.n] < minParallelSolve || runtime.GOMAXPROCS(0) < 2 {
		return nil
	}
	return m.buildSolvePlan()
}

// buildSolvePlan is the plan of the factorisation's tasks, whatever the
// size; nil without tasks.
func (m *spd) buildSolvePlan() *solvePlan {
	sn := m.sn
	if sn == nil || len(sn.tasks) < 2 {
		return nil
	}
	p := &solvePlan{tasks: make([][][2]int32, len(sn.tasks)), split: make([]int, m.n)}
	inTask := make([]bool, m.n)
	for i, ranges := range sn.tasks {
		for _, r := range ranges {
			c0, c1 := sn.first[r[0]], sn.first[r[1]]
			p.tasks[i] = append(p.tasks[i], [2]int32{c0, c1})
			for j := c0; j < c1; j++ {
				inTask[j] = true
				rows := m.lRow[m.lStart[j]:m.lStart[j+1]]
				k, _ := slices.BinarySearch(rows, c1)
				p.split[j] = m.lStart[j] + k
			}
		}
	}
	for j := range m.n {
		if !inTask[j] {
			p.split[j] = m.lStart[j]
			p.serial = append(p.serial, int32(j))
		}
		if p.split[j] < m.lStart[j+1] {
			p.tail = append(p.tail, int32(j))
		}
	}
	return p
}

// solveParallel is solve's forward, diagonal and backward steps on w (the
// permuted right-hand side) with plan p.
func (m *spd) solveParallel(p *solvePlan, w []float64) {
	var wg sync.WaitGroup
	for _, ranges := range p.tasks {
		wg.Go(func() {
			for _, r := range ranges {
				for j := int(r[0]); j < int(r[1]); j++ {
					m.forwardEntries(w, j, m.lStart[j], p.split[j])
				}
			}
		})
	}
	wg.Wait()
	for _, j := range p.tail {
		m.forwardEntries(w, int(j), p.split[j], m.lStart[j+1])
	}
	for j := range m.n {
		w[j] /= m.d[j]
	}
	for _, j := range slices.Backward(p.serial) {
		w[j] = m.backwardColumn(w, int(j))
	}
	for _, ranges := range p.tasks {
		wg.Go(func() {
			for _, r := range slices.Backward(ranges) {
				for j := r[1] - 1; j >= r[0]; j-- {
					w[j] = m.backwardColumn(w, int(j))
				}
			}
		})
	}
	wg.Wait()
}

// backwardColumn is w[j] less column j of L dotted with w, over its rows in
// ascending order.
func (m *spd) backwardColumn(w []float64, j int) float64 {
	start, end := m.lStart[j], m.lStart[j+1]
	rows, vals := m.lRow[start:end], m.lVal[start:end]
	s := w[j]
	for q, r := range rows {
		s -= vals[q] * w[r]
	}
	return s
}
