package hydraulics

import (
	"math"
	"runtime"
)

// supernodes is the supernodal partition of L, computed once with the
// symbolic factorisation and shared, read-only, by the clones of an spd.
//
// A supernode is a run of consecutive columns f..l of L in which each column
// j < l has the elimination-tree parent j+1 and one entry more than column
// j+1: the columns then share one row structure below the block, and the
// block's diagonal part is dense. Column j of the supernode holds the rows
// j+1..l followed by the rows of column l, so a supernode is a dense lower
// trapezoid stored column by column in the ordinary compressed columns of L
// (which the triangular solves read unchanged).
//
// Reference for the method: T. A. Davis, Direct Methods for Sparse Linear
// Systems, SIAM, 2006, ch. 4 and 9, and E. Ng & B. Peyton, "Block sparse
// Cholesky algorithms on advanced uniprocessor computers", SIAM J. Sci.
// Comput. 14 (1993) 1034–1056 (both cited from memory; the code is written
// from the algorithm).
type supernodes struct {
	first []int32 // first column of each supernode, and n at the end
	of    []int32 // column → its supernode

	// The strict lower triangle of the permuted matrix by columns: column c
	// holds the rows r > c, and each entry's slot in spd.val (which holds
	// the same entries as the strict upper triangle by columns).
	lowStart []int
	lowRow   []int32
	lowSlot  []int32

	block int // largest t·w of a supernode: t rows (w diagonal and the rest below) by w columns

	// The parallel plan (see planParallel): owner is the worker of each
	// supernode, or −1 for the serial part; tasks[i] are worker i's
	// subtrees, as ascending ranges [first, end) of supernodes. Both nil
	// when the factorisation runs serially.
	owner []int8
	tasks [][][2]int32
}

// supernodeWork is one factorisation's workspace: the lists of updating
// supernodes, shared by the workers, and each worker's dense workspace.
type supernodeWork struct {
	head []int32 // supernode → first updating supernode waiting for it, or −1
	next []int32 // supernode → next in the list it waits in
	ptr  []int32 // supernode → position in its row list of the first row not yet used
	// dense[i] is worker i's; dense[0] also serves the serial part.
	dense []denseWork
}

// denseWork is the workspace of one worker of a factorisation.
type denseWork struct {
	w    []float64 // the dense trapezoid of the supernode being factorised, column-major
	rel  []int32   // row → its position in that trapezoid
	relK []int32   // positions of an updating supernode's rows in the trapezoid
	sum  []float64 // one column of an update from a supernode of several columns
	sum2 []float64 // the next column, when two are summed at once
	// In the parallel phase (see factorParallel), the moves of a supernode
	// into the list of a supernode of the serial part, in the order made.
	deferring bool
	log       []listMove
	// helper, when not nil, is the idle worker's workspace: the serial part
	// of a parallel factorisation splits its large dense updates with it.
	helper *denseWork
	err    error // the worker's failure, at supernode errAt
	errAt  int
}

// listMove records that, while supernode time was factorised, supernode s
// was put at the head of target's list.
type listMove struct{ time, s, target int32 }

// findSupernodes partitions the columns of L into supernodes, merging
// small ones into their parents (relaxed amalgamation, see relax), lays out
// L's pattern for that partition and builds the lower-triangle index of the
// permuted matrix. It needs the elimination tree, the exact column starts
// of L and its row indices (fillPattern). Cost O(n + nnz(L)).
func (m *spd) findSupernodes() {
	n := m.n
	m.nnzExact = m.lStart[n]
	sn := &supernodes{of: make([]int32, n)}
	count := func(j int) int { return m.lStart[j+1] - m.lStart[j] }
	var fundamental []int32
	for j := 0; j < n; j++ {
		if j == 0 || !(int(m.parent[j-1]) == j && count(j-1) == count(j)+1) {
			fundamental = append(fundamental, int32(j))
		}
	}
	fundamental = append(fundamental, int32(n))
	sn.first = m.relax(fundamental)
	for s := 0; s+1 < len(sn.first); s++ {
		for j := sn.first[s]; j < sn.first[s+1]; j++ {
			sn.of[j] = int32(s)
		}
	}
	if len(sn.first) < len(fundamental) {
		m.layOutSupernodes(sn.first)
	}
	for s := 0; s+1 < len(sn.first); s++ {
		f, l := int(sn.first[s]), int(sn.first[s+1])-1
		w := l - f + 1
		sn.block = max(sn.block, (w+count(l))*w)
	}
	// Transpose the strict upper triangle (column k: rows i < k) into the
	// strict lower one (column i: rows k > i).
	sn.lowStart = make([]int, n+1)
	for _, i := range m.rowIdx {
		sn.lowStart[i+1]++
	}
	for i := range n {
		sn.lowStart[i+1] += sn.lowStart[i]
	}
	sn.lowRow = make([]int32, len(m.rowIdx))
	sn.lowSlot = make([]int32, len(m.rowIdx))
	fill := append([]int(nil), sn.lowStart[:n]...)
	for k := range n {
		for p := m.colStart[k]; p < m.colStart[k+1]; p++ {
			i := m.rowIdx[p]
			sn.lowRow[fill[i]] = int32(k)
			sn.lowSlot[fill[i]] = int32(p)
			fill[i]++
		}
	}
	m.sn = sn
	m.planParallel()
}

// Relaxed amalgamation (common practice in supernodal codes; the limits are
// of the kind CHOLMOD's documentation gives, from memory): a supernode is
// merged with the supernode that follows it when that one holds its parent
// in the elimination tree, and the merged block has at most relaxAlways
// columns, or at most relaxSmall columns with under relaxSmallZeros of its
// stored entries zero, or under relaxZeros zero at any width. The explicit
// zeros cost a little arithmetic and save far more in per-block overhead on
// pipe networks, where most fundamental supernodes are single columns.
const (
	relaxAlways     = 4
	relaxSmall      = 16
	relaxSmallZeros = 0.5
	relaxMid        = 48
	relaxMidZeros   = 0.1
	relaxZeros      = 0.05
)

// relax merges consecutive fundamental supernodes (first columns, n at the
// end) by the rules above and returns the merged partition.
func (m *spd) relax(fundamental []int32) []int32 {
	count := func(j int) int { return m.lStart[j+1] - m.lStart[j] }
	merged := []int32{fundamental[0]}
	gf, exact := int(fundamental[0]), 0 // current group: first column, true entries
	for s := 0; s+1 < len(fundamental); s++ {
		f, l := int(fundamental[s]), int(fundamental[s+1])-1
		for c := f; c <= l; c++ {
			exact += count(c)
		}
		if s+2 >= len(fundamental) || int(m.parent[l]) != l+1 {
			merged, gf, exact = append(merged, int32(l+1)), l+1, 0
			continue
		}
		// Would merging with the next supernode [l+1, l2] pay?
		l2 := int(fundamental[s+2]) - 1
		nextExact := 0
		for c := l + 1; c <= l2; c++ {
			nextExact += count(c)
		}
		width, below := l2-gf+1, count(l2)
		stored := width*(width-1)/2 + width*below
		zeros := float64(stored-exact-nextExact) / float64(max(stored, 1))
		if width <= relaxAlways || (width <= relaxSmall && zeros < relaxSmallZeros) ||
			(width <= relaxMid && zeros < relaxMidZeros) || zeros < relaxZeros {
			continue // keep growing the group
		}
		merged, gf, exact = append(merged, int32(l+1)), l+1, 0
	}
	return merged
}

// layOutSupernodes rewrites the column starts and row indices of L for the
// partition first: column c of supernode f..l holds the rows c+1..l and then
// the rows of the exact column l below l, which contain the exact rows of c
// (every row of column c beyond l is also a row of its ancestor l).
func (m *spd) layOutSupernodes(first []int32) {
	n := m.n
	start := make([]int, n+1)
	for s := 0; s+1 < len(first); s++ {
		f, l := int(first[s]), int(first[s+1])-1
		below := m.lStart[l+1] - m.lStart[l]
		for c := f; c <= l; c++ {
			start[c+1] = start[c] + (l - c) + below
		}
	}
	rows := make([]int32, start[n])
	for s := 0; s+1 < len(first); s++ {
		f, l := int(first[s]), int(first[s+1])-1
		tail := m.lRow[m.lStart[l]:m.lStart[l+1]]
		for c := f; c <= l; c++ {
			q := start[c]
			for r := c + 1; r <= l; r++ {
				rows[q] = int32(r)
				q++
			}
			copy(rows[q:], tail)
		}
	}
	m.lStart, m.lRow = start, rows
}

// fillPattern writes the row indices of L, ascending in each column, from
// the elimination tree: row k has an entry in column i exactly when i is on
// the tree path from some upper entry (i₀, k) up to k. Cost O(nnz(L)).
func (m *spd) fillPattern() {
	n := m.n
	filled := make([]int, n)
	flag := make([]int32, n)
	for k := range n {
		k32 := int32(k)
		flag[k] = k32
		for _, i := range m.rowIdx[m.colStart[k]:m.colStart[k+1]] {
			for ; flag[i] != k32; i = m.parent[i] {
				m.lRow[m.lStart[i]+filled[i]] = k32
				filled[i]++
				flag[i] = k32
			}
		}
	}
}

// newWork allocates the workspace of a factorisation: one dense workspace
// per worker of the parallel plan (see planParallel), at least one.
func (sn *supernodes) newWork(n int) supernodeWork {
	ns := len(sn.first) - 1
	wk := supernodeWork{head: make([]int32, ns), next: make([]int32, ns), ptr: make([]int32, ns)}
	wk.dense = make([]denseWork, max(1, len(sn.tasks)))
	for i := range wk.dense {
		wk.dense[i] = denseWork{w: make([]float64, sn.block), rel: make([]int32, n), relK: make([]int32, n), sum: make([]float64, n), sum2: make([]float64, n)}
	}
	return wk
}

// factor computes the numeric factorisation P·A·Pᵀ = L·D·Lᵀ for the current
// values, supernode by supernode in column order (left-looking). For
// supernode J with columns f..l and rows T = f..l followed by the rows R_J
// below the block, the dense t×w trapezoid W is
//
//	W = A[T, f..l] − Σ_K L[T, K]·D_K·L[f..l, K]ᵀ
//
// summed over the earlier supernodes K with an entry in a row of f..l (each
// waits in a linked list for the next supernode its rows reach), and then
// factorised in place by dense LDLᵀ: for each column c,
//
//	d_c = W_cc,   l_ic = W_ic / d_c,   W_ij −= l_ic·d_c·l_jc   (i ≥ j > c).
//
// With a parallel plan and two or more processors, independent subtrees of
// the elimination tree are factorised by two workers at once (see
// factorParallel); the factor is the same to the bit either way.
//
// It returns *notPositiveDefiniteError when some d_k <= 1e-300 or is not
// finite (the first in column order); the factor is then unusable until
// the next successful call.
func (m *spd) factor() error {
	if len(m.sn.tasks) > 1 && runtime.GOMAXPROCS(0) > 1 {
		return m.factorParallel()
	}
	return m.factorSerial()
}

// factorSerial is factor's loop over the supernodes in column order.
func (m *spd) factorSerial() error {
	m.snWork.clearLists()
	dw := &m.snWork.dense[0]
	dw.deferring, dw.helper = false, nil
	for s := 0; s+1 < len(m.sn.first); s++ {
		if err := m.factorSupernode(dw, s); err != nil {
			return err
		}
	}
	return nil
}

// clearLists empties the lists of updating supernodes.
func (wk *supernodeWork) clearLists() {
	for s := range wk.head {
		wk.head[s] = -1
	}
}

// factorSupernode forms and factorises the trapezoid of supernode s from A
// and the supernodes waiting in its list, then puts s in the list of the
// supernode of its first row below the block.
func (m *spd) factorSupernode(dw *denseWork, s int) error {
	sn, wk := m.sn, &m.snWork
	f, l := int(sn.first[s]), int(sn.first[s+1])-1
	below := m.lRow[m.lStart[l]:m.lStart[l+1]]
	width := l - f + 1
	t := width + len(below)
	w := dw.w[:t*width]
	m.scatterA(dw, f, l, below, t, w)
	for k := wk.head[s]; k >= 0; {
		nextK := wk.next[k]
		m.updateFrom(dw, s, int(k), l, t, w)
		k = nextK
	}
	if err := m.factorBlock(dw, f, width, t, w); err != nil {
		return err
	}
	wk.ptr[s] = 0
	m.waitFor(dw, s, int32(s), below)
	return nil
}

// scatterA clears the trapezoid w of the supernode f..l (rows f..l, then
// below) and adds the entries of A in its columns.
func (m *spd) scatterA(dw *denseWork, f, l int, below []int32, t int, w []float64) {
	sn, rel := m.sn, dw.rel
	clear(w)
	for c := f; c <= l; c++ {
		rel[c] = int32(c - f)
	}
	for q, r := range below {
		rel[r] = int32(l - f + 1 + q)
	}
	for c := f; c <= l; c++ {
		col := w[(c-f)*t : (c-f+1)*t]
		col[c-f] = m.diag[c]
		for p := sn.lowStart[c]; p < sn.lowStart[c+1]; p++ {
			col[rel[sn.lowRow[p]]] += m.val[sn.lowSlot[p]]
		}
	}
}

// updateFrom subtracts from the trapezoid w of the supernode ending at
// column l the contribution L[P, K]·D_K·L[Pc, K]ᵀ of the earlier supernode
// k, where P are k's rows from its pointer on and Pc those of them ≤ l; then
// it moves k's pointer past Pc and lets k wait for its next supernode.
func (m *spd) updateFrom(dw *denseWork, time, k, l, t int, w []float64) {
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
	if fk == lk {
		m.updateFromColumn(fk, lk, p0, p1, rel, t, w)
	} else {
		m.updateFromBlock(dw, fk, lk, p0, p1, rel, t, w)
	}
	wk.ptr[k] = int32(p1)
	m.waitFor(dw, time, int32(k), rows[p1:])
}

// updateFromColumn is updateFrom for a supernode of one column c: for each
// row a of Pc, W[P, a] −= l_Pc·d_c·l_ac, subtracted in place.
func (m *spd) updateFromColumn(c, lk, p0, p1 int, rel []int32, t int, w []float64) {
	off := m.lStart[c] + (lk - c) + p0 // column c's entry in row rows[p0]
	v := m.lVal[off : off+len(rel)]
	dc := m.d[c]
	for a := 0; a < p1-p0; a++ {
		s := v[a] * dc
		col := w[int(rel[a])*t : int(rel[a]+1)*t]
		for i := a; i < len(v); i++ {
			col[rel[i]] -= v[i] * s
		}
	}
}

// updateFromBlock is updateFrom for a supernode of several columns fk..lk:
// each column a of the update, Σ_c l_Pc·d_c·l_ac, is summed in a dense
// buffer over the columns c and then subtracted from W in one pass.
//
// The columns c are taken four at a time (axpy4), which adds their terms to
// each entry of the sum in the same order as one axpy per column would, so
// the result is the same to the bit, with a quarter of the passes over it.
func (m *spd) updateFromBlock(dw *denseWork, fk, lk, p0, p1 int, rel []int32, t int, w []float64) {
	n := len(rel)
	cols := p1 - p0
	if h := dw.helper; h != nil && cols*n*(lk-fk+1) >= parallelGrain {
		// The columns a of the update are independent: split them in two
		// halves of equal work, column a costing n − a.
		mid := splitTriangle(0, cols, n)
		done := make(chan struct{})
		go func() {
			m.updateFromBlockCols(h.sum[:n], h.sum2[:n], fk, lk, p0, mid, cols, rel, t, w)
			close(done)
		}()
		m.updateFromBlockCols(dw.sum[:n], dw.sum2[:n], fk, lk, p0, 0, mid, rel, t, w)
		<-done
		return
	}
	m.updateFromBlockCols(dw.sum[:n], dw.sum2[:n], fk, lk, p0, 0, cols, rel, t, w)
}

// updateFromBlockCols is updateFromBlock for the columns a0 ≤ a < a1 of
// the update, with sum as its buffer.
func (m *spd) updateFromBlockCols(sum, sum2 []float64, fk, lk, p0, a0, a1 int, rel []int32, t int, w []float64) {
	n := len(rel)
	colOf := func(c int) []float64 {
		off := m.lStart[c] + (lk - c) + p0
		return m.lVal[off : off+n]
	}
	a := a0
	for ; a+1 < a1; a += 2 {
		m.updateFromBlockPair(sum, sum2, fk, lk, p0, a, rel, t, w)
	}
	for ; a < a1; a++ {
		clear(sum[a:])
		c := fk
		for ; c+3 <= lk; c += 4 {
			v0, v1, v2, v3 := colOf(c), colOf(c+1), colOf(c+2), colOf(c+3)
			axpy4(sum[a:], v0[a:], v1[a:], v2[a:], v3[a:],
				v0[a]*m.d[c], v1[a]*m.d[c+1], v2[a]*m.d[c+2], v3[a]*m.d[c+3])
		}
		for ; c <= lk; c++ {
			v := colOf(c)
			axpy(sum[a:], v[a:], v[a]*m.d[c])
		}
		col := w[int(rel[a])*t : int(rel[a]+1)*t]
		for i := a; i < len(sum); i++ {
			col[rel[i]] -= sum[i]
		}
	}
}

// updateFromBlockPair is updateFromBlockCols for the two columns a and
// a+1, whose sums (in sum and sum2) share the loads of k's columns. Each
// entry gets its terms in the order of the one-column loop.
func (m *spd) updateFromBlockPair(sum, sum2 []float64, fk, lk, p0, a int, rel []int32, t int, w []float64) {
	n := len(rel)
	colOf := func(c int) []float64 {
		off := m.lStart[c] + (lk - c) + p0
		return m.lVal[off : off+n]
	}
	clear(sum[a:])
	clear(sum2[a+1:])
	c := fk
	for ; c+3 <= lk; c += 4 {
		v0, v1, v2, v3 := colOf(c), colOf(c+1), colOf(c+2), colOf(c+3)
		d0, d1, d2, d3 := m.d[c], m.d[c+1], m.d[c+2], m.d[c+3]
		s0, s1, s2, s3 := v0[a]*d0, v1[a]*d1, v2[a]*d2, v3[a]*d3
		sum[a] = sum[a] + s0*v0[a] + s1*v1[a] + s2*v2[a] + s3*v3[a]
		axpy4x2(sum[a+1:], sum2[a+1:], v0[a+1:], v1[a+1:], v2[a+1:], v3[a+1:],
			[4]float64{s0, s1, s2, s3},
			[4]float64{v0[a+1] * d0, v1[a+1] * d1, v2[a+1] * d2, v3[a+1] * d3})
	}
	for ; c <= lk; c++ {
		v := colOf(c)
		axpy(sum[a:], v[a:], v[a]*m.d[c])
		axpy(sum2[a+1:], v[a+1:], v[a+1]*m.d[c])
	}
	col := w[int(rel[a])*t : int(rel[a]+1)*t]
	for i := a; i < n; i++ {
		col[rel[i]] -= sum[i]
	}
	col = w[int(rel[a+1])*t : int(rel[a+1]+1)*t]
	for i := a + 1; i < n; i++ {
		col[rel[i]] -= sum2[i]
	}
}

// axpy4x2 is axpy4 into two sums at once with the same x: dstA gets the
// multipliers sa, dstB those of sb, each entry in axpy4's order.
func axpy4x2(dstA, dstB, x0, x1, x2, x3 []float64, sa, sb [4]float64) {
	n := len(x0)
	dstA, dstB, x1, x2, x3 = dstA[:n], dstB[:n], x1[:n], x2[:n], x3[:n]
	a0, a1, a2, a3 := sa[0], sa[1], sa[2], sa[3]
	b0, b1, b2, b3 := sb[0], sb[1], sb[2], sb[3]
	for i := range dstA {
		y0, y1, y2, y3 := x0[i], x1[i], x2[i], x3[i]
		dstA[i] = dstA[i] + a0*y0 + a1*y1 + a2*y2 + a3*y3
		dstB[i] = dstB[i] + b0*y0 + b1*y1 + b2*y2 + b3*y3
	}
}

// splitTriangle returns k in [lo, hi] that halves Σ (n − i) over lo ≤ i < hi:
// the split of a loop whose step i costs n − i.
func splitTriangle(lo, hi, n int) int {
	total := 0
	for i := lo; i < hi; i++ {
		total += n - i
	}
	acc := 0
	for i := lo; i < hi; i++ {
		if 2*acc >= total {
			return i
		}
		acc += n - i
	}
	return hi
}

// waitFor puts supernode s in the list of the supernode of the first of
// its remaining rows, if any, while supernode time is factorised. In the
// parallel phase a move into the list of a supernode of the serial part is
// logged instead, for factorParallel to replay in column order.
func (m *spd) waitFor(dw *denseWork, time int, s int32, remaining []int32) {
	if len(remaining) == 0 {
		return
	}
	wk := &m.snWork
	target := m.sn.of[remaining[0]]
	if dw.deferring && m.sn.owner[target] < 0 {
		dw.log = append(dw.log, listMove{time: int32(time), s: s, target: target})
		return
	}
	wk.next[s] = wk.head[target]
	wk.head[target] = s
}

// factorBlock factorises the dense t×width trapezoid w of the supernode
// starting at column f and stores its columns in L and D.
//
// The columns are taken in panels of four: the panel's own columns are
// updated one after the other, then each later column receives the four
// updates in one pass (axpy4), in the same order as column by column, so
// the factor is the same to the bit.
func (m *spd) factorBlock(dw *denseWork, f, width, t int, w []float64) error {
	for c := 0; c < width; c += 4 {
		end := min(c+4, width) // the panel is c..end−1
		for cc := c; cc < end; cc++ {
			col := w[cc*t : (cc+1)*t]
			dc := col[cc]
			if !(dc > pivotTiny) || math.IsInf(dc, 0) {
				return &notPositiveDefiniteError{Row: int(m.perm[f+cc]), Pivot: dc}
			}
			m.d[f+cc] = dc
			for c2 := cc + 1; c2 < end; c2++ {
				axpy(w[c2*t+c2:(c2+1)*t], col[c2:], -col[c2]/dc)
			}
		}
		if end < width { // then the panel has four columns
			m.updateTrailing(dw, c, width, t, w)
		}
		for cc := c; cc < end; cc++ {
			col := w[cc*t : (cc+1)*t]
			inv := 1 / col[cc]
			dst := m.lVal[m.lStart[f+cc]:m.lStart[f+cc+1]]
			for i, v := range col[cc+1:] {
				dst[i] = v * inv
			}
		}
	}
	return nil
}

// updateTrailing subtracts the panel of the four factorised columns c..c+3
// of the trapezoid w from its columns c+4..width−1:
// W[c2.., c2] −= Σ_k W[c2.., k]·W[c2, k]/d_k, k = c..c+3 in order.
func (m *spd) updateTrailing(dw *denseWork, c, width, t int, w []float64) {
	if dw.helper != nil && 4*(width-c-4)*(t-c-4) >= parallelGrain {
		// The columns j are independent; column j costs t − j.
		mid := splitTriangle(c+4, width, t)
		done := make(chan struct{})
		go func() {
			m.updateTrailingCols(c, mid, width, t, w)
			close(done)
		}()
		m.updateTrailingCols(c, c+4, mid, t, w)
		<-done
		return
	}
	m.updateTrailingCols(c, c+4, width, t, w)
}

// updateTrailingCols is updateTrailing for the columns j0 ≤ j < j1.
func (m *spd) updateTrailingCols(c, j0, j1, t int, w []float64) {
	c0, c1, c2, c3 := w[c*t:(c+1)*t], w[(c+1)*t:(c+2)*t], w[(c+2)*t:(c+3)*t], w[(c+3)*t:(c+4)*t]
	d0, d1, d2, d3 := c0[c], c1[c+1], c2[c+2], c3[c+3]
	for j := j0; j < j1; j++ {
		axpy4(w[j*t+j:(j+1)*t], c0[j:], c1[j:], c2[j:], c3[j:],
			-c0[j]/d0, -c1[j]/d1, -c2[j]/d2, -c3[j]/d3)
	}
}

// axpy adds s·x to dst (len(dst) ≥ len(x)), four entries at a time.
func axpy(dst, x []float64, s float64) {
	dst = dst[:len(x)]
	i := 0
	for ; i+4 <= len(x); i += 4 {
		d, v := dst[i:i+4:i+4], x[i:i+4:i+4]
		d[0] += s * v[0]
		d[1] += s * v[1]
		d[2] += s * v[2]
		d[3] += s * v[3]
	}
	for ; i < len(x); i++ {
		dst[i] += s * x[i]
	}
}

// axpy4 adds s0·x0 + s1·x1 + s2·x2 + s3·x3 to dst (len(dst) ≥ len(x0), the
// x of equal length), each entry as ((((dst + s0·x0) + s1·x1) + s2·x2) +
// s3·x3): the same roundings as four axpy calls in that order.
func axpy4(dst, x0, x1, x2, x3 []float64, s0, s1, s2, s3 float64) {
	n := len(x0)
	dst, x1, x2, x3 = dst[:n], x1[:n], x2[:n], x3[:n]
	for i := range dst {
		dst[i] = dst[i] + s0*x0[i] + s1*x1[i] + s2*x2[i] + s3*x3[i]
	}
}
