package gis

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"

	"github.com/paulmach/orb"
)

// The R-tree index of a GeoPackage table (OGC 12-128 Annex F.3) is an
// SQLite R*Tree virtual table, rtree_<t>_geom(id, minx, maxx, miny, maxy).
// Filling it row by row runs SQLite's R*Tree insertion (choose a leaf,
// split full nodes) once per feature. gpkgFillRtree instead packs the
// whole tree in Go, with Sort-Tile-Recursive, and writes its nodes straight
// into the three tables that hold an R*Tree, as GDAL's GeoPackage driver
// does for a bulk load (sqlite_rtree_bulk_load.c, GDAL 3.9), and those as
// B-tree pages of the closed file (sqliteTableAppender), as the feature
// rows are written. The tables and the node format are those of SQLite's
// ext/rtree/rtree.c ("Database Format of R-Tree Tables"):
//
//	<r>_node(nodeno INTEGER PRIMARY KEY, data BLOB)   one row per node; the root is node 1
//	<r>_parent(nodeno INTEGER PRIMARY KEY, parentnode INTEGER)   one row per node but the root
//	<r>_rowid(rowid INTEGER PRIMARY KEY, nodeno INTEGER)   the leaf that holds each feature
//
// A node's data is a fixed-size blob (the size of the empty root SQLite
// makes): the tree depth as a big-endian uint16 (root only; 0 when the
// root is a leaf; 0 on other nodes), the number of cells as a big-endian
// uint16, then the cells, each a big-endian int64 (a feature's id in a
// leaf, a child's node number above) and the box minx, maxx, miny, maxy as
// big-endian float32. Boxes are rounded outwards to float32, as SQLite's
// rtreeValueDown and rtreeValueUp round them, so that every box holds its
// feature's. SQLite's own rtreecheck() checks the result in the tests.
//
// References: S. T. Leutenegger, M. A. Lopez and J. Edgington, "STR: a
// simple and efficient algorithm for R-tree packing", Proc. 13th ICDE
// (1997), 497–506.

// rtreeMaxCells is RTREE_MAXCELLS of SQLite's rtree.c, the most cells a
// node holds whatever the page size.
const rtreeMaxCells = 51

// rtreeCellBytes is the size of one 2-D cell: an int64 and four float32.
const rtreeCellBytes = 8 + 4*4

// rtreeCell is one entry of a node: a feature's id and box in a leaf, a
// child's node number and the box around it above.
type rtreeCell struct {
	id                     int64
	minX, maxX, minY, maxY float32
}

// rtreeNode is one packed node, numbered as it is written.
type rtreeNode struct {
	no    int64
	cells []rtreeCell
}

// gpkgRtreeTables are the root pages of an R*Tree's three shadow tables
// and the size of its node blobs, as SQLite made them.
type gpkgRtreeTables struct {
	node, parent, rowid int64
	nodeBytes           int
}

// gpkgCreateRtree creates the R*Tree rtree, reads the size of the empty
// root node SQLite puts in its node table (the node size it chose for the
// page size), deletes that row, so that all three shadow tables are
// empty for gpkgFillRtree, and returns the tables.
func gpkgCreateRtree(tx *gpkgTx, rtree string) (gpkgRtreeTables, error) {
	var rt gpkgRtreeTables
	if _, err := tx.Exec("CREATE VIRTUAL TABLE " + gpkgQuote(rtree) + " USING rtree(id, minx, maxx, miny, maxy)"); err != nil {
		return rt, fmt.Errorf("creating the spatial index: %w", err)
	}
	node := gpkgQuote(rtree + "_node")
	size, null, err := tx.queryInt64("SELECT length(data) FROM " + node + " WHERE nodeno = 1")
	if err == nil && null {
		err = errors.New("the root node has no data")
	}
	if err != nil {
		return rt, fmt.Errorf("reading the spatial index root: %w", err)
	}
	rt.nodeBytes = int(size)
	if _, err := tx.Exec("DELETE FROM " + node); err != nil {
		return rt, fmt.Errorf("emptying the spatial index: %w", err)
	}
	for _, t := range []struct {
		suffix string
		root   *int64
	}{{"node", &rt.node}, {"parent", &rt.parent}, {"rowid", &rt.rowid}} {
		root, err := gpkgRootPage(tx, rtree+"_"+t.suffix)
		if err != nil {
			return rt, fmt.Errorf("spatial index table %s_%s: %w", rtree, t.suffix, err)
		}
		*t.root = root
	}
	return rt, nil
}

// gpkgFillRtree packs the boxes of the rows that have one (has[i]; row i's
// id is its fid, i+1) into a tree and writes its rows into the empty
// shadow tables rt of the closed database file tmp as B-tree pages
// (sqliteTableAppender): every node, the root as node 1; each node's
// parent but the root's; each feature's leaf. With no boxes the tree is
// the empty root alone.
func gpkgFillRtree(tmp string, rt gpkgRtreeTables, boxes []orb.Bound, has []bool) error {
	fanout := min(rtreeMaxCells, (rt.nodeBytes-4)/rtreeCellBytes)
	if fanout < 2 {
		return fmt.Errorf("spatial index nodes of %d bytes hold fewer than 2 cells", rt.nodeBytes)
	}
	count := 0
	for _, h := range has {
		if h {
			count++
		}
	}
	leaves := make([]rtreeCell, 0, count)
	for i, b := range boxes {
		if has[i] {
			leaves = append(leaves, rtreeBox(int64(i+1), b))
		}
	}
	levels := [][]rtreeNode{{{no: 1}}} // the empty root
	if len(leaves) > 0 {
		levels = rtreePack(leaves, fanout)
	}
	if len(levels)-1 > math.MaxUint16 {
		return fmt.Errorf("spatial index %d levels deep", len(levels))
	}
	if err := rtreeAppendNodes(tmp, rt.node, rt.nodeBytes, levels); err != nil {
		return err
	}
	// (rowid, node) pairs in rowid order: the nodes below the root are
	// numbered 2, 3, ... and the features' ids are their fids, so each
	// pair goes straight to its place (no sort).
	parents := rtreePairsByID(levels[1:], 2, int64(rtreeNodeCount(levels)))
	rowids := rtreePairsByID(levels[:1], 1, int64(len(boxes)))
	if err := rtreeAppendPairs(tmp, rt.parent, parents); err != nil {
		return err
	}
	return rtreeAppendPairs(tmp, rt.rowid, rowids)
}

// rtreeNodeCount is the number of nodes in levels.
func rtreeNodeCount(levels [][]rtreeNode) int {
	n := 0
	for _, l := range levels {
		n += len(l)
	}
	return n
}

// rtreePairsByID lists (cell id, node number) for every cell of the nodes
// in levels, in the order of the ids, which lie in lo..hi: a slot per id,
// the ids no cell has left out.
func rtreePairsByID(levels [][]rtreeNode, lo, hi int64) [][2]int64 {
	if hi < lo {
		return nil
	}
	node := make([]int64, hi-lo+1) // 0: no cell has the id
	for _, l := range levels {
		for _, n := range l {
			for _, c := range n.cells {
				node[c.id-lo] = n.no
			}
		}
	}
	pairs := make([][2]int64, 0, len(node))
	for k, no := range node {
		if no != 0 {
			pairs = append(pairs, [2]int64{lo + int64(k), no})
		}
	}
	return pairs
}

// rtreeBox is b as a cell, rounded outwards to float32.
func rtreeBox(id int64, b orb.Bound) rtreeCell {
	return rtreeCell{id: id, minX: float32Down(b.Min[0]), maxX: float32Up(b.Max[0]), minY: float32Down(b.Min[1]), maxY: float32Up(b.Max[1])}
}

// float32Down is the largest float32 not above x (SQLite's rtreeValueDown).
func float32Down(x float64) float32 {
	f := float32(x)
	if float64(f) > x {
		f = math.Nextafter32(f, float32(math.Inf(-1)))
	}
	return f
}

// float32Up is the smallest float32 not below x (SQLite's rtreeValueUp).
func float32Up(x float64) float32 {
	f := float32(x)
	if float64(f) < x {
		f = math.Nextafter32(f, float32(math.Inf(1)))
	}
	return f
}

// rtreePack builds the tree over leaves bottom up and returns its levels,
// leaves first and the root (one node) last. Nodes are numbered from the
// root down, level by level, so the root is node 1.
func rtreePack(cells []rtreeCell, fanout int) [][]rtreeNode {
	var levels [][]rtreeNode
	for {
		nodes := rtreeTile(cells, fanout)
		levels = append(levels, nodes)
		if len(nodes) == 1 {
			break
		}
		cells = make([]rtreeCell, len(nodes))
		for k := range nodes {
			cells[k] = rtreeCover(nodes[k].cells)
			cells[k].id = int64(k) // the node's place in its level, until the nodes are numbered
		}
	}
	no := int64(1)
	for l := len(levels) - 1; l >= 0; l-- {
		for k := range levels[l] {
			levels[l][k].no = no
			no++
		}
	}
	for l := 1; l < len(levels); l++ {
		for _, parent := range levels[l] {
			for c := range parent.cells {
				parent.cells[c].id = levels[l-1][parent.cells[c].id].no
			}
		}
	}
	return levels
}

// rtreeTile groups cells into nodes of at most fanout by Sort-Tile-Recursive:
// the cells sorted by the x of their centres are cut into ⌈√P⌉ vertical
// slices (P = ⌈n/fanout⌉ nodes), and each slice, sorted by y, into runs of
// fanout. Ties fall back to the id, so the tree repeats exactly.
func rtreeTile(cells []rtreeCell, fanout int) []rtreeNode {
	keyed := make([]rtreeKeyed, len(cells))
	for k, c := range cells {
		keyed[k] = rtreeKeyed{key: rtreeOrderKey(float64(c.minX) + float64(c.maxX)), cell: c} // twice the centre's x
	}
	spare := make([]rtreeKeyed, len(keyed))
	rtreeSortKeyed(keyed, spare) // the cells come in id order: ties stay in it
	nodes := (len(keyed) + fanout - 1) / fanout
	slices2 := int(math.Ceil(math.Sqrt(float64(nodes))))
	per := slices2 * fanout // cells per vertical slice
	sorted := make([]rtreeCell, len(keyed))
	out := make([]rtreeNode, 0, nodes)
	for s := 0; s < len(keyed); s += per {
		slice := keyed[s:min(s+per, len(keyed))]
		for k := range slice {
			slice[k].key = uint64(slice[k].cell.id)
		}
		rtreeSortKeyed(slice, spare) // back to id order, so that ties in y stay in it
		for k := range slice {
			slice[k].key = rtreeOrderKey(float64(slice[k].cell.minY) + float64(slice[k].cell.maxY))
		}
		rtreeSortKeyed(slice, spare)
		for k := range slice {
			sorted[s+k] = slice[k].cell
		}
		for k := 0; k < len(slice); k += fanout {
			end := s + min(k+fanout, len(slice))
			out = append(out, rtreeNode{cells: sorted[s+k : end : end]})
		}
	}
	return out
}

// rtreeKeyed is a cell with the coordinate it is sorted by, computed once
// rather than in every comparison, as an unsigned integer that orders as
// the coordinate does (rtreeOrderKey).
type rtreeKeyed struct {
	key  uint64
	cell rtreeCell
}

// rtreeOrderKey maps x to an integer in the order of the floats, −0 and +0
// to the same one: the sign bit set for positive x, all bits flipped for
// negative x (the usual radix-sort key of IEEE 754 doubles).
func rtreeOrderKey(x float64) uint64 {
	b := math.Float64bits(x + 0) // −0 + 0 = +0
	if b>>63 != 0 {
		return ^b
	}
	return b | 1<<63
}

// rtreeSortKeyed sorts cells by key, stably, with spare (at least as long)
// as scratch space: a least-significant-digit radix sort, a byte a pass,
// that skips the passes in which every key has the same byte (the high
// bytes of coordinates that span a town). Stable, so the cells of equal
// keys keep their order: given in id order, they come out in the order of
// rtreeByKey, as slices.SortFunc(cells, rtreeByKey) sorts them.
func rtreeSortKeyed(cells, spare []rtreeKeyed) {
	if len(cells) < 2 {
		return
	}
	var counts [8][256]int
	for _, c := range cells {
		for d := range 8 {
			counts[d][byte(c.key>>(8*d))]++
		}
	}
	src, dst := cells, spare[:len(cells)]
	for d := range 8 {
		if counts[d][byte(cells[0].key>>(8*d))] == len(cells) {
			continue // one byte value in this digit: the pass would change nothing
		}
		var at [256]int
		sum := 0
		for b, n := range counts[d] {
			at[b] = sum
			sum += n
		}
		for _, c := range src {
			b := byte(c.key >> (8 * d))
			dst[at[b]] = c
			at[b]++
		}
		src, dst = dst, src
	}
	if &src[0] != &cells[0] {
		copy(cells, src)
	}
}

// rtreeCover is the box around cells.
func rtreeCover(cells []rtreeCell) rtreeCell {
	c := cells[0]
	for _, x := range cells[1:] {
		c.minX, c.maxX = min(c.minX, x.minX), max(c.maxX, x.maxX)
		c.minY, c.maxY = min(c.minY, x.minY), max(c.maxY, x.maxY)
	}
	return c
}

// rtreeAppendNodes writes the packed levels into the empty node table
// whose root page is root, one row (nodeno, data) a node in node-number
// order: the root, node 1, with the tree's depth, then each level below.
func rtreeAppendNodes(tmp string, root int64, nodeBytes int, levels [][]rtreeNode) error {
	return fillSQLiteTable(tmp, root, nil, func(out *sqliteTableAppender) error {
		depth := len(levels) - 1
		blob := make([]byte, nodeBytes)
		row := make([]sqliteValue, 2) // nodeno is the rowid: NULL in the record
		for l := depth; l >= 0; l-- {
			for _, n := range levels[l] {
				d := uint16(0)
				if l == depth {
					d = uint16(depth)
				}
				row[1] = sqliteValue{kind: sqliteBlob, b: rtreeEncode(blob, d, n.cells)}
				if err := out.appendRowID(n.no, row); err != nil {
					return fmt.Errorf("spatial index node %d: %w", n.no, err)
				}
			}
		}
		return nil
	})
}

// rtreeAppendPairs writes pairs (rowid, value), in rowid order, into the
// empty table of an INTEGER PRIMARY KEY and one integer column (the parent
// and rowid tables) whose root page is root.
func rtreeAppendPairs(tmp string, root int64, pairs [][2]int64) error {
	return fillSQLiteTable(tmp, root, nil, func(out *sqliteTableAppender) error {
		row := make([]sqliteValue, 2)
		for _, p := range pairs {
			row[1] = sqliteValue{kind: sqliteInt, i: p[1]}
			if err := out.appendRowID(p[0], row); err != nil {
				return fmt.Errorf("spatial index row %d: %w", p[0], err)
			}
		}
		return nil
	})
}

// rtreeEncode writes a node into blob (all of it: unused cells are zero)
// and returns blob.
func rtreeEncode(blob []byte, depth uint16, cells []rtreeCell) []byte {
	clear(blob)
	binary.BigEndian.PutUint16(blob[0:], depth)
	binary.BigEndian.PutUint16(blob[2:], uint16(len(cells)))
	p := 4
	for _, c := range cells {
		binary.BigEndian.PutUint64(blob[p:], uint64(c.id))
		for k, v := range [4]float32{c.minX, c.maxX, c.minY, c.maxY} {
			binary.BigEndian.PutUint32(blob[p+8+4*k:], math.Float32bits(v))
		}
		p += rtreeCellBytes
	}
	return blob
}
