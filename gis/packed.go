package gis

import (
	"math"
	"strconv"

	"github.com/paulmach/orb"
)

// packedChunkRows is how many rows a packed layer keeps in one chunk: each
// chunk is filled by one goroutine and types its columns on its own.
const packedChunkRows = 8192

// packedRows holds a layer's values column by column, in chunks of
// packedChunkRows rows: a float, integer or boolean column is one word a
// row, a text column a string header, and neither boxes a value, so a
// million rows of seventy columns take a third of the memory of rows of
// []any and give the garbage collector almost no pointers to follow.
type packedRows struct {
	n      int
	chunks []packedChunk
}

// packedChunk is packedChunkRows consecutive rows (fewer in the last).
type packedChunk struct {
	geometry []orb.Geometry
	columns  []packedColumn
}

// packedKind is the Go type a packed column holds besides nil.
type packedKind uint8

const (
	packedNone   packedKind = iota // every value so far is nil
	packedFloat                    // float64
	packedInt                      // int
	packedBool                     // bool
	packedString                   // string
	packedMixed                    // values of more than one type, kept as []any
)

// packedColumn is one column of a chunk. null has a bit per row, set for
// nil; words holds float64 bits, ints or bools; mixed holds the values of
// a mixed column. A text column with few distinct values (a material, a
// status, a reason) keeps each row's number in dict, codes; one with many
// (an id) keeps the strings themselves in text.
type packedColumn struct {
	kind  packedKind
	null  []uint64
	words []uint64
	codes []uint16
	dict  []string
	index map[string]uint16 // dict's numbers, while the chunk is filled
	text  []string
	mixed []any
}

// packedDictMax is the most distinct texts a chunk's column numbers; past
// it the column keeps its strings.
const packedDictMax = 1024

// PackLayer builds a layer of n rows kept column by column (see packedRows):
// fill sets row i's values, len(columns) of them and all nil on entry, in
// column order with the types Row allows, and returns its geometry. Rows
// are filled in parallel chunks, so fill must be safe to call from several
// goroutines at once for different rows. The rows read back exactly as
// fill set them, value type included.
func PackLayer(name string, columns []Column, n int, fill func(i int, values []any) orb.Geometry) *Layer {
	p := &packedRows{n: n, chunks: make([]packedChunk, (n+packedChunkRows-1)/packedChunkRows)}
	forChunksOf(len(p.chunks), 1, func(lo, hi int) {
		values := make([]any, len(columns))
		for c := lo; c < hi; c++ {
			p.chunks[c] = packChunk(c*packedChunkRows, min(n, (c+1)*packedChunkRows), values, fill)
		}
	})
	return &Layer{Name: name, Columns: columns, packed: p}
}

// packChunk fills and packs rows [lo, hi).
func packChunk(lo, hi int, values []any, fill func(int, []any) orb.Geometry) packedChunk {
	ch := packedChunk{geometry: make([]orb.Geometry, hi-lo), columns: make([]packedColumn, len(values))}
	for i := lo; i < hi; i++ {
		clear(values)
		ch.geometry[i-lo] = fill(i, values)
		for k, v := range values {
			ch.columns[k].put(i-lo, hi-lo, v)
		}
	}
	for k := range ch.columns {
		ch.columns[k].index = nil
	}
	return ch
}

// put stores v as row j of a column of rows rows.
func (c *packedColumn) put(j, rows int, v any) {
	if v == nil {
		if c.null == nil {
			c.null = make([]uint64, (rows+63)/64)
		}
		c.null[j/64] |= 1 << (j % 64)
		if c.kind == packedMixed {
			c.mixed[j] = nil
		}
		return
	}
	kind := kindOf(v)
	if c.kind == packedNone {
		c.start(kind, rows)
	}
	if kind != c.kind && c.kind != packedMixed {
		c.toMixed(j)
	}
	switch c.kind {
	case packedFloat:
		c.words[j] = math.Float64bits(v.(float64))
	case packedInt:
		c.words[j] = uint64(v.(int))
	case packedBool:
		if v.(bool) {
			c.words[j] = 1
		}
	case packedString:
		c.putText(j, v.(string))
	case packedMixed:
		c.mixed[j] = v
	}
}

// putText stores s as row j, by its number while the column has few
// distinct texts.
func (c *packedColumn) putText(j int, s string) {
	if c.text != nil {
		c.text[j] = s
		return
	}
	code, ok := c.index[s]
	if !ok {
		if len(c.dict) == packedDictMax {
			c.text = make([]string, len(c.codes))
			for i := range j {
				c.text[i] = c.dict[c.codes[i]]
			}
			c.codes, c.dict, c.index = nil, nil, nil
			c.text[j] = s
			return
		}
		code = uint16(len(c.dict))
		c.dict = append(c.dict, s)
		c.index[s] = code
	}
	c.codes[j] = code
}

// kindOf is the packed kind of a non-nil value: packedMixed for the types
// kept as they are.
func kindOf(v any) packedKind {
	switch v.(type) {
	case float64:
		return packedFloat
	case int:
		return packedInt
	case bool:
		return packedBool
	case string:
		return packedString
	}
	return packedMixed
}

// start makes the storage of a column's first non-nil kind.
func (c *packedColumn) start(kind packedKind, rows int) {
	c.kind = kind
	switch kind {
	case packedFloat, packedInt, packedBool:
		c.words = make([]uint64, rows)
	case packedString:
		c.codes, c.index = make([]uint16, rows), map[string]uint16{}
	case packedMixed:
		c.mixed = make([]any, rows)
	}
}

// toMixed turns a typed column into a []any one, keeping rows [0, j).
func (c *packedColumn) toMixed(j int) {
	rows := max(len(c.words), len(c.codes), len(c.text))
	mixed := make([]any, rows)
	for i := range j {
		mixed[i] = c.get(i)
	}
	c.kind, c.words, c.codes, c.dict, c.index, c.text, c.mixed = packedMixed, nil, nil, nil, nil, nil, mixed
}

// get returns row j's value, boxed.
func (c *packedColumn) get(j int) any {
	if c.isNull(j) {
		return nil
	}
	switch c.kind {
	case packedFloat:
		return math.Float64frombits(c.words[j])
	case packedInt:
		return int(c.words[j])
	case packedBool:
		return c.words[j] != 0
	case packedString:
		if c.text == nil {
			return c.dict[c.codes[j]]
		}
		return c.text[j]
	case packedMixed:
		return c.mixed[j]
	}
	return nil
}

// layerView is another layer's rows seen through a selection of rows, an
// order of columns and a change of geometry (Layer.View).
type layerView struct {
	source   *Layer
	rows     []int                           // row i is source row rows[i]; nil: the same rows
	columns  []int                           // column k is source column columns[k]; nil: the same
	geometry func(orb.Geometry) orb.Geometry // nil: the source's
}

// View is a layer whose row i is l's row rows[i] (all of l's rows, in
// order, when rows is nil), whose column k is l's column columns[k] (l's
// columns when nil) and whose geometry is geometry applied to l's (l's
// own when nil; it is called as rows are read, so it should be cheap or
// its result is made anew each time). Nothing is copied: the view reads l
// when it is written.
func (l *Layer) View(name string, rows, columns []int, geometry func(orb.Geometry) orb.Geometry) *Layer {
	cols := l.Columns
	if columns != nil {
		cols = make([]Column, len(columns))
		for k, at := range columns {
			cols[k] = l.Columns[at]
		}
	}
	return &Layer{Name: name, Columns: cols, view: &layerView{source: l, rows: rows, columns: columns, geometry: geometry}}
}

// Len is the number of rows of l.
func (l *Layer) Len() int {
	switch {
	case l.view != nil && l.view.rows != nil:
		return len(l.view.rows)
	case l.view != nil:
		return l.view.source.Len()
	case l.packed != nil:
		return l.packed.n
	}
	return len(l.Rows)
}

// RowReader reads the rows of one layer for one goroutine. The Values of
// the Row it returns may be its own buffer, rewritten by its next call:
// copy them to keep them.
type RowReader struct {
	l      *Layer
	values []any
	source *RowReader // a view's
}

// Reader returns a RowReader of l. Several readers of one layer may be used
// at once.
func (l *Layer) Reader() *RowReader {
	rd := &RowReader{l: l}
	switch {
	case l.view != nil:
		rd.source = l.view.source.Reader()
		if l.view.columns != nil {
			rd.values = make([]any, len(l.view.columns))
		}
	case l.packed != nil:
		rd.values = make([]any, len(l.Columns))
	}
	return rd
}

// Row returns row i of the reader's layer, 0 ≤ i < Len().
func (rd *RowReader) Row(i int) Row {
	l := rd.l
	switch {
	case l.view != nil:
		return rd.viewRow(i)
	case l.packed != nil:
		ch := &l.packed.chunks[i/packedChunkRows]
		j := i % packedChunkRows
		for k := range ch.columns {
			rd.values[k] = ch.columns[k].get(j)
		}
		return Row{Geometry: ch.geometry[j], Values: rd.values}
	}
	return l.Rows[i]
}

// viewRow is row i of a view.
func (rd *RowReader) viewRow(i int) Row {
	v := rd.l.view
	if v.rows != nil {
		i = v.rows[i]
	}
	r := rd.source.Row(i)
	if v.columns != nil {
		for k, at := range v.columns {
			rd.values[k] = r.Values[at]
		}
		r.Values = rd.values
	}
	if v.geometry != nil {
		r.Geometry = v.geometry(r.Geometry)
	}
	return r
}

// Value is row i's value in column k, read without the rest of the row.
func (rd *RowReader) Value(i, k int) any {
	if c, j := rd.packedCell(i, k); c != nil {
		return c.get(j)
	}
	l, i, k := rd.resolve(i, k)
	return l.Rows[i].Values[k]
}

// resolve follows rd's views down to the layer that holds row i, column k
// and returns it with the row and column there.
func (rd *RowReader) resolve(i, k int) (*Layer, int, int) {
	for r := rd; ; r = r.source {
		v := r.l.view
		if v == nil {
			return r.l, i, k
		}
		if v.rows != nil {
			i = v.rows[i]
		}
		if v.columns != nil {
			k = v.columns[k]
		}
	}
}

// Geometry is row i's geometry, read without its values.
func (rd *RowReader) Geometry(i int) orb.Geometry {
	l := rd.l
	switch {
	case l.view != nil:
		if l.view.rows != nil {
			i = l.view.rows[i]
		}
		g := rd.source.Geometry(i)
		if l.view.geometry != nil {
			g = l.view.geometry(g)
		}
		return g
	case l.packed != nil:
		return l.packed.chunks[i/packedChunkRows].geometry[i%packedChunkRows]
	}
	return l.Rows[i].Geometry
}

// FirstNonFinite returns the first row of l holding a NaN or ±Inf: a
// float64 or float32 value or a coordinate of its geometry. A packed layer
// is scanned column by column, without boxing its values.
func (l *Layer) FirstNonFinite() (row int, found bool) {
	if l.packed == nil {
		rd := l.Reader()
		for i := range l.Len() {
			if r := rd.Row(i); valuesNonFinite(r.Values) || geometryNonFinite(r.Geometry) {
				return i, true
			}
		}
		return 0, false
	}
	for c, ch := range l.packed.chunks {
		first := len(ch.geometry) // the chunk's first such row found so far
		for k := range ch.columns {
			first = ch.columns[k].firstNonFinite(first)
		}
		for j, g := range ch.geometry[:first] {
			if geometryNonFinite(g) {
				first = j
				break
			}
		}
		if first < len(ch.geometry) {
			return c*packedChunkRows + first, true
		}
	}
	return 0, false
}

// firstNonFinite is the first row before end whose value is a non-finite
// float, or end.
func (c *packedColumn) firstNonFinite(end int) int {
	switch c.kind {
	case packedFloat: // a null row's word is 0, a finite 0.0
		for j, w := range c.words[:end] {
			if x := math.Float64frombits(w); math.IsNaN(x) || math.IsInf(x, 0) {
				return j
			}
		}
	case packedMixed:
		for j, v := range c.mixed[:end] {
			if valuesNonFinite([]any{v}) {
				return j
			}
		}
	}
	return end
}

// valuesNonFinite reports a float64 or float32 value that is NaN or ±Inf.
func valuesNonFinite(values []any) bool {
	for _, v := range values {
		var x float64
		switch f := v.(type) {
		case float64:
			x = f
		case float32:
			x = float64(f)
		default:
			continue
		}
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return true
		}
	}
	return false
}

// geometryNonFinite reports a NaN or ±Inf coordinate in g.
func geometryNonFinite(g orb.Geometry) bool {
	bad := false
	EachPoint(g, func(p orb.Point) {
		bad = bad || math.IsNaN(p[0]) || math.IsInf(p[0], 0) || math.IsNaN(p[1]) || math.IsInf(p[1], 0)
	})
	return bad
}

// packedCell resolves row i, column k of rd's layer through its views to
// the packed column holding it and the row within that column's chunk;
// nil when the layer underneath is not packed.
func (rd *RowReader) packedCell(i, k int) (*packedColumn, int) {
	l, i, k := rd.resolve(i, k)
	if l.packed == nil {
		return nil, 0
	}
	return &l.packed.chunks[i/packedChunkRows].columns[k], i % packedChunkRows
}

// isNull reports whether row j of the chunk column c is null.
func (c *packedColumn) isNull(j int) bool { return c.null != nil && c.null[j/64]&(1<<(j%64)) != 0 }

// scalar is row i's value in column k without boxing, for the writers'
// inner loops: a float's bits with packedFloat, an int with packedInt, 0
// with packedNone for a null; packedMixed when the value is of another
// type or the layer is not packed, and then Value has it.
func (rd *RowReader) scalar(i, k int) (uint64, packedKind) {
	c, j := rd.packedCell(i, k)
	switch {
	case c == nil:
	case c.isNull(j):
		return 0, packedNone
	case c.kind == packedFloat || c.kind == packedInt:
		return c.words[j], c.kind
	}
	return 0, packedMixed
}

// text is row i's value in column k when the layer holds it as packed
// text (not null), without boxing; ok is false otherwise, and Value has it.
func (rd *RowReader) text(i, k int) (string, bool) {
	c, j := rd.packedCell(i, k)
	switch {
	case c == nil || c.kind != packedString || c.isNull(j):
		return "", false
	case c.text == nil:
		return c.dict[c.codes[j]], true
	}
	return c.text[j], true
}

// width is the number of values row i holds: a plain layer's row may be
// short or long, which the writers report; packed rows and views have one
// a column.
func (rd *RowReader) width(i int) int {
	if rd.l.view == nil && rd.l.packed == nil {
		return len(rd.l.Rows[i].Values)
	}
	return len(rd.l.Columns)
}

// appendNumber appends row i's value in column k as formatValue writes
// it, when the layer holds it unboxed (a packed float or int, or a null:
// null reports it); ok is false otherwise, and the caller reads Value.
func (rd *RowReader) appendNumber(buf []byte, i, k int, c Column) (out []byte, null, ok bool) {
	switch bits, kind := rd.scalar(i, k); kind {
	case packedNone:
		return buf, true, true
	case packedFloat:
		out, null, _ = formatFloat(buf, c, math.Float64frombits(bits)) // never fails
		return out, null, true
	case packedInt:
		return strconv.AppendInt(buf, int64(bits), 10), false, true
	}
	return buf, false, false
}
