package hydraulics

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// spd is a symmetric positive-definite matrix with a fixed sparsity pattern, factorised as
// P·A·Pᵀ = L·D·Lᵀ. The ordering and the symbolic factorisation are computed once in newSPD;
// factor() repeats only the numeric factorisation, as the GGA needs on every Newton iteration.
//
// Storage: the strictly upper triangle of P·A·Pᵀ in compressed columns (column k holds the
// rows i < k of the permuted matrix), its diagonal apart, and L in compressed columns with a
// pattern fixed by the symbolic step. With the fill-reducing ordering of fillReducingOrder,
// nnz(L) is a few times n for pipe networks. Factor and solve reuse workspaces held in the
// value, so one spd must not be used from two goroutines at once.
//
// Method: the elimination tree and the column counts of L come from one pass over the pattern,
// the row indices of L from a second; the numeric factorisation is the left-looking supernodal
// LDLᵀ of supernodal.go, which factorises runs of columns with one row structure as dense
// blocks. Reference: T. A. Davis, Direct Methods for Sparse Linear Systems, SIAM, 2006, ch. 4
// (cited from memory; the code is written from the algorithm).
type spd struct {
	n    int
	perm []int32 // perm[k] is the caller's row eliminated k-th
	pinv []int32 // pinv[perm[k]] = k

	// Permuted matrix: diagonal and strict upper triangle by columns.
	diag     []float64
	colStart []int   // len n+1
	rowIdx   []int32 // row of each upper entry (< its column)
	val      []float64
	pairSlot []int32 // pairs[k] -> index into val, or -(p+1) for a self-pair on permuted row p

	// Symbolic factorisation.
	parent []int32 // elimination tree; -1 at a root
	lStart []int   // column starts of L, len n+1

	lRow []int32 // row indices of L by column, ascending (fixed by the symbolic step)
	// nnzExact is the number of structural nonzeros of L; lRow may hold
	// more, explicit zeros of the merged supernodes.
	nnzExact int
	sn       *supernodes // the supernodal partition of L (see supernodal.go)

	// Numeric factorisation.
	lVal []float64
	d    []float64

	// solvePlan runs the triangular solves of solve on the parallel plan
	// (solveparallel.go); nil: serially.
	solvePlan *solvePlan

	// Workspaces.
	snWork supernodeWork
	work   []float64
	work2  [][2]float64 // solve2's, made on first use
}

// pivotTiny is the smallest pivot d_k that factor accepts.
const pivotTiny = 1e-300

// notPositiveDefiniteError reports a pivot d_k <= 1e-300, or one that is not finite, in the
// LDLᵀ factorisation. Row is in the caller's numbering. For a head system it means that a
// group of nodes has no path to a fixed grade (the matrix is a singular Laplacian there) or
// that the conductances are not finite.
type notPositiveDefiniteError struct {
	Row   int
	Pivot float64
}

func (e *notPositiveDefiniteError) Error() string {
	return fmt.Sprintf("hydraulics: matrix not positive definite at row %d (pivot %g)", e.Row, e.Pivot)
}

// newSPD builds the pattern of an n×n matrix whose off-diagonal nonzeros are the pairs (i,j), i≠j
// (a pair and its mirror are one entry; repeated pairs are allowed and add up). x and y are planar
// node coordinates for a geometric ordering; either may be nil (then use a purely graph-based ordering).
//
// A pair with i = j is accepted and adds to the diagonal. An index outside [0, n) is a caller
// bug and panics. Cost: the ordering (about O(n log n) for planar networks) plus O(nnz(L)).
func newSPD(n int, pairs [][2]int32, x, y []float64) *spd {
	if n < 0 || n > math.MaxInt32 {
		panic(fmt.Sprintf("hydraulics: spd size %d out of range", n))
	}
	for k, p := range pairs {
		if p[0] < 0 || int(p[0]) >= n || p[1] < 0 || int(p[1]) >= n {
			panic(fmt.Sprintf("hydraulics: spd pair %d (%d, %d) outside 0..%d", k, p[0], p[1], n-1))
		}
	}
	return newSPDOrdered(n, pairs, fillReducingOrder(newAdjacency(n, pairs), x, y))
}

// newSPDOrdered is newSPD with a given elimination order: perm[k] is the row eliminated k-th.
// The pairs must already be checked against n.
//
// The order is then renumbered in a postorder of its elimination tree (the same fill and the
// same tree, relabelled), so that a column's last child comes just before it and supernodes
// can merge (see relax).
func newSPDOrdered(n int, pairs [][2]int32, perm []int32) *spd {
	m := &spd{n: n}
	m.setOrder(perm)
	m.buildUpper(pairs)
	m.symbolic()
	if post := m.postorder(); post != nil {
		for k, v := range post {
			post[k] = m.perm[v]
		}
		m.setOrder(post)
		m.buildUpper(pairs)
		m.symbolic()
	}
	m.lRow = make([]int32, m.lStart[n])
	m.fillPattern()
	m.findSupernodes()
	m.snWork = m.sn.newWork(n)
	m.solvePlan = m.solvePlanFor()
	m.lVal = make([]float64, m.lStart[n])
	m.d = make([]float64, n)
	m.work = make([]float64, n)
	return m
}

// setOrder sets the elimination order perm and its inverse.
func (m *spd) setOrder(perm []int32) {
	m.perm = perm
	m.pinv = make([]int32, m.n)
	for k, v := range perm {
		m.pinv[v] = int32(k)
	}
}

// postorder returns a postorder of the elimination tree (post[k] is the
// column numbered k-th), each column's children visited in ascending order
// of column count so that the child most like its parent comes last, or nil
// when the order is already that postorder.
func (m *spd) postorder() []int32 {
	n := m.n
	count := func(j int32) int { return m.lStart[j+1] - m.lStart[j] }
	// Children lists, each sorted by count then index.
	childStart := make([]int32, n+1)
	for _, p := range m.parent {
		if p >= 0 {
			childStart[p+1]++
		}
	}
	for i := range n {
		childStart[i+1] += childStart[i]
	}
	children := make([]int32, childStart[n])
	fill := append([]int32(nil), childStart[:n]...)
	var roots []int32
	for j, p := range m.parent {
		if p >= 0 {
			children[fill[p]] = int32(j)
			fill[p]++
		} else {
			roots = append(roots, int32(j))
		}
	}
	for i := range n {
		c := children[childStart[i]:childStart[i+1]]
		slices.SortStableFunc(c, func(a, b int32) int { return cmp.Compare(count(a), count(b)) })
	}
	post := make([]int32, 0, n)
	type frame struct{ v, next int32 }
	stack := make([]frame, 0, 64)
	for _, r := range roots {
		stack = append(stack, frame{r, childStart[r]})
		for len(stack) > 0 {
			top := &stack[len(stack)-1]
			if top.next < childStart[top.v+1] {
				c := children[top.next]
				top.next++
				stack = append(stack, frame{c, childStart[c]})
				continue
			}
			post = append(post, top.v)
			stack = stack[:len(stack)-1]
		}
	}
	identity := true
	for k, v := range post {
		if int(v) != k {
			identity = false
			break
		}
	}
	if identity {
		return nil
	}
	return post
}

// buildUpper lays out the permuted strict upper triangle by columns, merging repeated pairs
// into one slot, and records each pair's slot.
func (m *spd) buildUpper(pairs [][2]int32) {
	n := m.n
	m.diag = make([]float64, n)
	m.pairSlot = make([]int32, len(pairs))
	count := make([]int, n+1)
	for _, p := range pairs {
		if p[0] != p[1] {
			i, j := m.pinv[p[0]], m.pinv[p[1]]
			count[max(i, j)+1]++
		}
	}
	for k := range n {
		count[k+1] += count[k]
	}
	// Place every pair in its column, then compact each column, merging repeated rows.
	rows := make([]int32, count[n])
	owner := make([]int32, count[n]) // pair index of each placed entry
	next := make([]int, n)
	copy(next, count[:n])
	for k, p := range pairs {
		if p[0] == p[1] {
			m.pairSlot[k] = -(m.pinv[p[0]] + 1)
			continue
		}
		i, j := m.pinv[p[0]], m.pinv[p[1]]
		col := max(i, j)
		rows[next[col]] = min(i, j)
		owner[next[col]] = int32(k)
		next[col]++
	}
	m.colStart = make([]int, n+1)
	last := make([]int, n) // row -> slot of that row in the column being compacted
	seenIn := make([]int32, n)
	for i := range seenIn {
		seenIn[i] = -1
	}
	w := 0
	for col := range n {
		m.colStart[col] = w
		for q := count[col]; q < count[col+1]; q++ {
			r := rows[q]
			if seenIn[r] != int32(col) {
				seenIn[r] = int32(col)
				last[r] = w
				rows[w] = r
				w++
			}
			m.pairSlot[owner[q]] = int32(last[r])
		}
	}
	m.colStart[n] = w
	m.rowIdx = rows[:w:w]
	m.val = make([]float64, w)
}

// symbolic computes the elimination tree of the permuted matrix and the number of entries in
// each column of L. Row k of L has a nonzero in column i exactly when i is on the tree path from
// some upper entry (i₀, k) up to k; walking each such path and stopping at vertices already
// marked for row k visits every nonzero of L once. Cost O(nnz(L)).
func (m *spd) symbolic() {
	n := m.n
	m.parent = make([]int32, n)
	flag := make([]int32, n)
	colCount := make([]int, n)
	for k := range n {
		m.parent[k] = -1
		flag[k] = int32(k)
		for _, i := range m.rowIdx[m.colStart[k]:m.colStart[k+1]] {
			for ; flag[i] != int32(k); i = m.parent[i] {
				if m.parent[i] == -1 {
					m.parent[i] = int32(k)
				}
				colCount[i]++
				flag[i] = int32(k)
			}
		}
	}
	m.lStart = make([]int, n+1)
	for k := range n {
		m.lStart[k+1] = m.lStart[k] + colCount[k]
	}
}

// clear sets every value to zero and keeps the pattern.
func (m *spd) clear() {
	clear(m.diag)
	clear(m.val)
}

// addDiag adds v to A[i][i] (caller's numbering).
func (m *spd) addDiag(i int, v float64) { m.diag[m.pinv[i]] += v }

// permutedRows returns, for each row in rows (caller's numbering, or −1),
// its position in the elimination order (or −1), for addPermutedDiag.
func (m *spd) permutedRows(rows []int32) []int32 {
	out := make([]int32, len(rows))
	for k, i := range rows {
		out[k] = -1
		if i >= 0 {
			out[k] = m.pinv[i]
		}
	}
	return out
}

// addPermutedDiag adds v to the diagonal at position k of the elimination
// order: addDiag(perm[k], v).
func (m *spd) addPermutedDiag(k int32, v float64) { m.diag[k] += v }

// addPair adds v to A[i][j] and to A[j][i] for (i, j) = pairs[k]. O(1).
func (m *spd) addPair(k int, v float64) {
	if s := m.pairSlot[k]; s >= 0 {
		m.val[s] += v
	} else {
		m.diag[-s-1] += 2 * v
	}
}

// solve overwrites b with A⁻¹·b (caller's numbering) using the last factorisation:
//
//	w = P·b;  L·u = w;  v = D⁻¹·u;  Lᵀ·z = v;  b = Pᵀ·z
//
// Cost O(n + nnz(L)).
func (m *spd) solve(b []float64) {
	w := m.work
	for k, v := range m.perm {
		w[k] = b[v]
	}
	if m.solvePlan != nil {
		m.solveParallel(m.solvePlan, w)
		for k, v := range m.perm {
			b[v] = w[k]
		}
		return
	}
	for j := range m.n {
		m.forwardEntries(w, j, m.lStart[j], m.lStart[j+1])
	}
	for j := range m.n {
		w[j] /= m.d[j]
	}
	for j := m.n - 1; j >= 0; j-- {
		w[j] = m.backwardColumn(w, j)
	}
	for k, v := range m.perm {
		b[v] = w[k]
	}
}

// forwardEntries applies entries [start, end) of column j of L to w:
// w[r] −= L[r][j]·w[j], in ascending row order.
func (m *spd) forwardEntries(w []float64, j, start, end int) {
	wj := w[j]
	if wj == 0 {
		return
	}
	rows, vals := m.lRow[start:end], m.lVal[start:end]
	for q, r := range rows {
		w[r] -= vals[q] * wj
	}
}

// solve2 is solve for two right-hand sides at once (b1 and b2 are both
// overwritten), in one pass over L: the pinned solve of SolvePinned needs
// two solves per iteration, and the pass over L is most of a solve's cost.
func (m *spd) solve2(b1, b2 []float64) {
	if len(m.work2) != m.n {
		m.work2 = make([][2]float64, m.n)
	}
	w := m.work2
	for k, v := range m.perm {
		w[k] = [2]float64{b1[v], b2[v]}
	}
	for j := range m.n {
		wj := w[j]
		if wj[0] == 0 && wj[1] == 0 {
			continue
		}
		start, end := m.lStart[j], m.lStart[j+1]
		rows, vals := m.lRow[start:end], m.lVal[start:end]
		for q, r := range rows {
			v := vals[q]
			w[r][0] -= v * wj[0]
			w[r][1] -= v * wj[1]
		}
	}
	for j := range m.n {
		w[j][0] /= m.d[j]
		w[j][1] /= m.d[j]
	}
	for j := m.n - 1; j >= 0; j-- {
		start, end := m.lStart[j], m.lStart[j+1]
		rows, vals := m.lRow[start:end], m.lVal[start:end]
		s := w[j]
		for q, r := range rows {
			v := vals[q]
			s[0] -= v * w[r][0]
			s[1] -= v * w[r][1]
		}
		w[j] = s
	}
	for k, v := range m.perm {
		b1[v], b2[v] = w[k][0], w[k][1]
	}
}

// factorNonzeros returns nnz(L), the number of entries of L strictly below the diagonal.
func (m *spd) factorNonzeros() int { return m.nnzExact }
