package hydraulics

import "math"

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
}

// supernodeWork is one factorisation's workspace.
type supernodeWork struct {
	w    []float64 // the dense trapezoid of the supernode being factorised, column-major
	rel  []int32   // row → its position in that trapezoid
	relK []int32   // positions of an updating supernode's rows in the trapezoid
	sum  []float64 // one column of an update from a supernode of several columns
	head []int32   // supernode → first updating supernode waiting for it, or −1
	next []int32   // supernode → next in the list it waits in
	ptr  []int32   // supernode → position in its row list of the first row not yet used
}

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

// newSupernodeWork allocates the workspace of a factorisation.
func (sn *supernodes) newWork(n int) supernodeWork {
	ns := len(sn.first) - 1
	return supernodeWork{
		w: make([]float64, sn.block), rel: make([]int32, n), relK: make([]int32, n), sum: make([]float64, n),
		head: make([]int32, ns), next: make([]int32, ns), ptr: make([]int32, ns),
	}
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
// It returns *notPositiveDefiniteError when some d_k <= 1e-300 or is not
// finite; the factor is then unusable until the next successful call.
func (m *spd) factor() error {
	sn, wk := m.sn, &m.snWork
	for s := range wk.head {
		wk.head[s] = -1
	}
	for s := 0; s+1 < len(sn.first); s++ {
		f, l := int(sn.first[s]), int(sn.first[s+1])-1
		below := m.lRow[m.lStart[l]:m.lStart[l+1]]
		width := l - f + 1
		t := width + len(below)
		w := wk.w[:t*width]
		m.scatterA(f, l, below, t, w)
		for k := wk.head[s]; k >= 0; {
			nextK := wk.next[k]
			m.updateFrom(int(k), l, t, w)
			k = nextK
		}
		if err := m.factorBlock(f, width, t, w); err != nil {
			return err
		}
		wk.ptr[s] = 0
		m.waitFor(int32(s), below)
	}
	return nil
}

// scatterA clears the trapezoid w of the supernode f..l (rows f..l, then
// below) and adds the entries of A in its columns.
func (m *spd) scatterA(f, l int, below []int32, t int, w []float64) {
	sn, rel := m.sn, m.snWork.rel
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
func (m *spd) updateFrom(k, l, t int, w []float64) {
	sn, wk := m.sn, &m.snWork
	fk, lk := int(sn.first[k]), int(sn.first[k+1])-1
	rows := m.lRow[m.lStart[lk]:m.lStart[lk+1]]
	p0 := int(wk.ptr[k])
	p1 := p0
	for p1 < len(rows) && int(rows[p1]) <= l {
		p1++
	}
	rel := wk.relK[:len(rows)-p0]
	for i, r := range rows[p0:] {
		rel[i] = wk.rel[r]
	}
	if fk == lk {
		m.updateFromColumn(fk, lk, p0, p1, rel, t, w)
	} else {
		m.updateFromBlock(fk, lk, p0, p1, rel, t, w)
	}
	wk.ptr[k] = int32(p1)
	m.waitFor(int32(k), rows[p1:])
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
func (m *spd) updateFromBlock(fk, lk, p0, p1 int, rel []int32, t int, w []float64) {
	sum := m.snWork.sum[:len(rel)]
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
}

// waitFor puts supernode s in the list of the supernode of the first of
// its remaining rows, if any.
func (m *spd) waitFor(s int32, remaining []int32) {
	if len(remaining) == 0 {
		return
	}
	wk := &m.snWork
	target := m.sn.of[remaining[0]]
	wk.next[s] = wk.head[target]
	wk.head[target] = s
}

// factorBlock factorises the dense t×width trapezoid w of the supernode
// starting at column f and stores its columns in L and D.
func (m *spd) factorBlock(f, width, t int, w []float64) error {
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
	return nil
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
