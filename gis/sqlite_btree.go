package gis

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
)

// sqliteTableAppender fills one empty table of a closed SQLite database
// file by writing the table's B-tree pages itself, in SQLite's file format
// (sqlite.org/fileformat2.html, "Database File Format": §1.3 the header,
// §1.6 B-tree pages, §1.7 cell payload overflow, §2.1 the record format).
// Rows get the rowids 1, 2, … in the order they are appended, or rowids
// of the caller's in increasing order (appendRowID); the leaf
// pages and any overflow pages are appended to the file as they fill, the
// interior pages at the end, and the top page of the tree is written over
// the table's root page, which SQLite made as an empty leaf when it
// created the table. finish then sets the header's page count and change
// counter, so that SQLite, opening the file again, finds the table full.
//
// SQLite storing the same rows spends most of its time in its virtual
// machine (on the 1,000,000-segment demo town, 4.4 s of the 5.2 s that
// writing pipes.gpkg took); the pages themselves are simple to lay out.
// The file must not be open in SQLite meanwhile, must have no free pages
// (a database just created and filled in one transaction has none) and no
// reserved bytes per page, and the table must be a rowid table with no
// rows yet.
type sqliteTableAppender struct {
	f        *os.File
	w        *fileSink // pages appended, in page order
	path     string
	pageSize int    // bytes a page
	format4  bool   // schema format 4: serial types 8 and 9 hold 0 and 1 (§2.1)
	root     uint32 // the table's root page
	next     uint32 // the number the next appended page gets
	rowid    int64  // of the last row appended
	real     []bool // columns of REAL affinity (see appendRecord)

	record []byte     // scratch: the row being appended, as a record
	cells  []byte     // the leaf being filled: its cells end to end
	ends   []int      // where each of its cells ends in cells
	page   []byte     // scratch page
	leaves []btreeKid // the leaves written, in rowid order
}

// btreeKid is a child page and the largest rowid under it.
type btreeKid struct {
	page   uint32
	maxKey int64
}

// B-tree page types and header sizes (fileformat2 §1.6).
const (
	btreeTableLeaf           = 0x0d
	btreeTableInterior       = 0x05
	btreeLeafHeaderBytes     = 8
	btreeInteriorHeaderBytes = 12
)

// openSQLiteTableAppender opens the database file at path to fill the
// empty table whose root page is root; real marks the record's columns of
// REAL affinity.
func openSQLiteTableAppender(path string, root int64, real []bool) (*sqliteTableAppender, error) {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		return nil, err
	}
	a := &sqliteTableAppender{f: f, path: path, real: real}
	if err := a.readHeader(root); err != nil {
		f.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if _, err := f.Seek(int64(a.next-1)*int64(a.pageSize), io.SeekStart); err != nil {
		f.Close()
		return nil, err
	}
	a.w = newFileSink(f, false) // whole pages past the page cache (filesink.go)
	a.page = make([]byte, a.pageSize)
	return a, nil
}

// fillSQLiteTable opens an appender on the empty table whose root page is
// root in the closed database file path, lets fill append the rows and
// finishes the table, even after fill fails (the file is a temporary one
// then, to be removed); the error is fill's, else finish's.
func fillSQLiteTable(path string, root int64, real []bool, fill func(*sqliteTableAppender) error) error {
	out, err := openSQLiteTableAppender(path, root, real)
	if err != nil {
		return err
	}
	err = fill(out)
	if ferr := out.finish(); err == nil {
		err = ferr
	}
	return err
}

// readHeader checks the database header and the root page (an empty table
// leaf) and sets the page size and the first page to append.
func (a *sqliteTableAppender) readHeader(root int64) error {
	var h [100]byte
	if _, err := a.f.ReadAt(h[:], 0); err != nil {
		return fmt.Errorf("reading the database header: %w", err)
	}
	if string(h[:16]) != "SQLite format 3\x00" {
		return errors.New("not an SQLite 3 database")
	}
	a.pageSize = int(binary.BigEndian.Uint16(h[16:]))
	if a.pageSize == 1 {
		a.pageSize = 65536
	}
	counter, validFor := binary.BigEndian.Uint32(h[24:]), binary.BigEndian.Uint32(h[92:])
	pages := binary.BigEndian.Uint32(h[28:])
	st, err := a.f.Stat()
	if err != nil {
		return err
	}
	switch {
	case a.pageSize < 512 || a.pageSize&(a.pageSize-1) != 0:
		return fmt.Errorf("page size %d", a.pageSize)
	case h[20] != 0:
		return fmt.Errorf("%d reserved bytes a page (only 0 is written here)", h[20])
	case binary.BigEndian.Uint32(h[36:]) != 0:
		return errors.New("the database has free pages (only a fresh one is filled here)")
	case binary.BigEndian.Uint32(h[56:]) != 1:
		return errors.New("the text encoding is not UTF-8")
	case counter != validFor || int64(pages)*int64(a.pageSize) != st.Size():
		return fmt.Errorf("the header's page count (%d pages of %d bytes) does not match the file (%d bytes)", pages, a.pageSize, st.Size())
	case root < 2 || root > int64(pages):
		return fmt.Errorf("root page %d is not in the file's %d pages", root, pages)
	}
	a.format4 = binary.BigEndian.Uint32(h[44:]) >= 4
	a.root, a.next = uint32(root), pages+1
	var leaf [btreeLeafHeaderBytes]byte
	if _, err := a.f.ReadAt(leaf[:], (root-1)*int64(a.pageSize)); err != nil {
		return fmt.Errorf("reading root page %d: %w", root, err)
	}
	if leaf[0] != btreeTableLeaf || binary.BigEndian.Uint16(leaf[3:]) != 0 {
		return fmt.Errorf("root page %d is not an empty table leaf", root)
	}
	return nil
}

// appendRow appends one row of vals, column by column as in the table's
// declaration (NULL for an INTEGER PRIMARY KEY, which is the rowid), with
// the rowid after the last one's.
func (a *sqliteTableAppender) appendRow(vals []sqliteValue) error {
	return a.appendRowID(a.rowid+1, vals)
}

// appendRowID appends one row of vals with the given rowid, which must be
// above the last row's (rows are appended in rowid order) and positive.
func (a *sqliteTableAppender) appendRowID(rowid int64, vals []sqliteValue) error {
	if rowid <= a.rowid || rowid <= 0 {
		return fmt.Errorf("rowid %d after rowid %d: rows must be appended in increasing rowid order, from 1", rowid, a.rowid)
	}
	a.record = appendRecord(a.record[:0], vals, a.real, a.format4)
	u := a.pageSize
	p := len(a.record)
	local := btreeLocalPayload(p, u)
	size := sqliteVarintLen(uint64(p)) + sqliteVarintLen(uint64(rowid)) + local
	if local < p {
		size += 4
	}
	if len(a.ends) > 0 && btreeLeafHeaderBytes+2*(len(a.ends)+1)+len(a.cells)+max(size, 4) > u {
		if err := a.flushLeaf(); err != nil {
			return err
		}
	}
	cellStart := len(a.cells)
	a.cells = sqliteAppendVarint(a.cells, uint64(p))
	a.cells = sqliteAppendVarint(a.cells, uint64(rowid))
	a.cells = append(a.cells, a.record[:local]...)
	if local < p {
		first, err := a.writeOverflow(a.record[local:])
		if err != nil {
			return err
		}
		a.cells = binary.BigEndian.AppendUint32(a.cells, first)
	}
	for len(a.cells)-cellStart < 4 { // SQLite counts a cell as at least 4 bytes
		a.cells = append(a.cells, 0)
	}
	a.ends = append(a.ends, len(a.cells))
	a.rowid = rowid
	return nil
}

// btreeLocalPayload is how many of a table leaf cell's p payload bytes are
// kept on its page of usable size u; the rest overflows (fileformat2
// §1.6: X = U−35, M = ((U−12)·32/255)−23, K = M+((P−M) mod (U−4))).
func btreeLocalPayload(p, u int) int {
	x := u - 35
	if p <= x {
		return p
	}
	m := (u-12)*32/255 - 23
	if k := m + (p-m)%(u-4); k <= x {
		return k
	}
	return m
}

// writeOverflow appends the overflow pages holding rest and returns the
// first one's number (fileformat2 §1.7: each page is the next page's
// number, 0 on the last, then U−4 bytes of payload).
func (a *sqliteTableAppender) writeOverflow(rest []byte) (uint32, error) {
	first := a.next
	per := a.pageSize - 4
	for len(rest) > 0 {
		n := min(per, len(rest))
		clear(a.page)
		if n < len(rest) {
			binary.BigEndian.PutUint32(a.page, a.next+1)
		}
		copy(a.page[4:], rest[:n])
		if err := a.writePage(); err != nil {
			return 0, err
		}
		rest = rest[n:]
	}
	return first, nil
}

// writePage appends a.page as page a.next.
func (a *sqliteTableAppender) writePage() error {
	if a.next == math.MaxUint32 {
		return errors.New("the database would pass SQLite's 4,294,967,294 pages")
	}
	if _, err := a.w.Write(a.page); err != nil {
		return err
	}
	a.next++
	return nil
}

// flushLeaf lays the pending cells out as a table leaf page and appends
// it. The cells go to the end of the page in rowid order; the cell
// pointer array follows the header.
func (a *sqliteTableAppender) flushLeaf() error {
	if len(a.ends) == 0 {
		return nil
	}
	layOutPage(a.page, btreeTableLeaf, a.cells, a.ends, 0)
	a.leaves = append(a.leaves, btreeKid{page: a.next, maxKey: a.rowid}) // the last row appended
	if err := a.writePage(); err != nil {
		return err
	}
	a.cells, a.ends = a.cells[:0], a.ends[:0]
	return nil
}

// layOutPage fills page with a B-tree page of type kind holding cells (end
// to end, each ending at ends[k]); right is the right-most child of an
// interior page. The cell content area is the page's tail, cells in order.
func layOutPage(page []byte, kind byte, cells []byte, ends []int, right uint32) {
	clear(page)
	header := btreeLeafHeaderBytes
	if kind == btreeTableInterior {
		header = btreeInteriorHeaderBytes
		binary.BigEndian.PutUint32(page[8:], right)
	}
	start := len(page) - len(cells)
	page[0] = kind
	binary.BigEndian.PutUint16(page[3:], uint16(len(ends)))
	binary.BigEndian.PutUint16(page[5:], uint16(start)) // 0 would mean 65536; start < len(page) always
	copy(page[start:], cells)
	from := 0
	for k, end := range ends {
		binary.BigEndian.PutUint16(page[header+2*k:], uint16(start+from))
		from = end
	}
}

// finish writes the last leaf and the interior pages, puts the top page of
// the tree on the root page, updates the header and closes the file. The
// file is not synced (the GeoPackage writer syncs it once complete).
func (a *sqliteTableAppender) finish() (err error) {
	defer func() {
		a.w.wait() // a write still in flight after an early return
		if cerr := a.f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			err = fmt.Errorf("%s: %w", a.path, err)
		}
	}()
	if err := a.flushLeaf(); err != nil {
		return err
	}
	if len(a.leaves) == 0 {
		return a.w.Flush() // no rows: the empty root stands
	}
	level := a.leaves
	var top []byte // the page that becomes the root
	if len(level) == 1 {
		// The one leaf is the root: it moves there from the end of the file.
		top = append([]byte(nil), a.page...)
		a.next--
	}
	for len(level) > 1 {
		pages := btreeInteriorLevel(level, a.pageSize)
		level = level[:0:0]
		for k, pg := range pages {
			layOutPage(a.page, btreeTableInterior, pg.cells, pg.ends, pg.right)
			if len(pages) == 1 && k == 0 {
				top = a.page
				break
			}
			level = append(level, btreeKid{page: a.next, maxKey: pg.maxKey})
			if err := a.writePage(); err != nil {
				return err
			}
		}
		if top != nil {
			break
		}
	}
	if err := a.w.Flush(); err != nil {
		return err
	}
	if _, err := a.f.WriteAt(top, int64(a.root-1)*int64(a.pageSize)); err != nil {
		return err
	}
	pages := a.next - 1
	if err := a.f.Truncate(int64(pages) * int64(a.pageSize)); err != nil {
		return err
	}
	return a.setPageCount(pages)
}

// setPageCount writes the header's page count and advances its change
// counter, with the version-valid-for number that makes SQLite trust the
// page count (fileformat2 §1.3.7, §1.3.14).
func (a *sqliteTableAppender) setPageCount(pages uint32) error {
	var h [100]byte
	if _, err := a.f.ReadAt(h[:], 0); err != nil {
		return err
	}
	counter := binary.BigEndian.Uint32(h[24:]) + 1
	binary.BigEndian.PutUint32(h[24:], counter)
	binary.BigEndian.PutUint32(h[28:], pages)
	binary.BigEndian.PutUint32(h[92:], counter)
	_, err := a.f.WriteAt(h[:], 0)
	return err
}

// btreeInterior is one interior page being built: its cells (child page,
// then the largest rowid under it, as a varint) end to end, and the
// right-most child.
type btreeInterior struct {
	cells  []byte
	ends   []int
	kids   []btreeKid // the children of the cells, for rebalancing the last page
	right  uint32
	maxKey int64
}

// btreeInteriorLevel groups kids into interior pages of pageSize bytes, as
// many to a page as fit, every page with at least two children.
func btreeInteriorLevel(kids []btreeKid, pageSize int) []btreeInterior {
	var pages []btreeInterior
	for i := 0; i < len(kids); {
		var pg btreeInterior
		for i < len(kids)-1 {
			k := kids[i]
			size := 4 + sqliteVarintLen(uint64(k.maxKey))
			if btreeInteriorHeaderBytes+2*(len(pg.ends)+1)+len(pg.cells)+size > pageSize {
				break
			}
			pg.addCell(k)
			i++
		}
		pg.right, pg.maxKey = kids[i].page, kids[i].maxKey
		i++
		pages = append(pages, pg)
	}
	if n := len(pages); n > 1 && len(pages[n-1].ends) == 0 {
		// The last page has only its right child: it takes the one before
		// (the previous page's right child), whose place goes to that
		// page's last cell.
		prev, last := &pages[n-2], &pages[n-1]
		moved := btreeKid{page: prev.right, maxKey: prev.maxKey}
		c := prev.kids[len(prev.kids)-1]
		prev.kids, prev.ends = prev.kids[:len(prev.kids)-1], prev.ends[:len(prev.ends)-1]
		prev.cells = prev.cells[:lastEnd(prev.ends)]
		prev.right, prev.maxKey = c.page, c.maxKey
		last.addCell(moved)
	}
	return pages
}

func lastEnd(ends []int) int {
	if len(ends) == 0 {
		return 0
	}
	return ends[len(ends)-1]
}

// addCell adds the cell of child k: its page and largest rowid.
func (pg *btreeInterior) addCell(k btreeKid) {
	pg.cells = binary.BigEndian.AppendUint32(pg.cells, k.page)
	pg.cells = sqliteAppendVarint(pg.cells, uint64(k.maxKey))
	pg.ends = append(pg.ends, len(pg.cells))
	pg.kids = append(pg.kids, k)
}

// appendRecord appends the record of vals (fileformat2 §2.1): a header of
// its own length and one serial type per value, then the values, integers
// and floats big-endian. A float in a column of REAL affinity with no
// fraction is stored as an integer, as SQLite stores it (its
// sqlite3VdbeIntegerAffinity on making the record; it reads back as a
// float); with format4, 0 and 1 take no bytes (serial types 8 and 9).
func appendRecord(dst []byte, vals []sqliteValue, real []bool, format4 bool) []byte {
	var types [64]uint64
	serial := types[:0]
	headerLen := 0
	for k := range vals {
		t := sqliteSerialType(&vals[k], k < len(real) && real[k], format4)
		serial = append(serial, t)
		headerLen += sqliteVarintLen(t)
	}
	size := headerLen + 1
	for sqliteVarintLen(uint64(size))+headerLen != size {
		size = headerLen + sqliteVarintLen(uint64(size))
	}
	dst = sqliteAppendVarint(dst, uint64(size))
	for _, t := range serial {
		dst = sqliteAppendVarint(dst, t)
	}
	for k := range vals {
		v := &vals[k]
		switch t := serial[k]; {
		case t >= 1 && t <= 6:
			i := v.i
			if v.kind == sqliteFloat {
				i = int64(v.f)
			}
			n := [7]int{0, 1, 2, 3, 4, 6, 8}[t]
			for b := n - 1; b >= 0; b-- {
				dst = append(dst, byte(uint64(i)>>(8*b)))
			}
		case t == 7:
			dst = binary.BigEndian.AppendUint64(dst, math.Float64bits(v.f))
		case t >= 12 && t%2 == 0:
			dst = append(dst, v.b...)
		case t >= 13:
			dst = append(dst, v.s...)
		}
	}
	return dst
}

// sqliteSerialType is the serial type SQLite gives v (its
// sqlite3VdbeSerialType): the fewest bytes that hold an integer.
func sqliteSerialType(v *sqliteValue, real, format4 bool) uint64 {
	switch v.kind {
	case sqliteNull:
		return 0
	case sqliteText:
		return 2*uint64(len(v.s)) + 13
	case sqliteBlob:
		return 2*uint64(len(v.b)) + 12
	case sqliteFloat:
		if !real || !realIsInteger(v.f) {
			return 7
		}
		return sqliteIntSerialType(int64(v.f), format4)
	}
	return sqliteIntSerialType(v.i, format4)
}

// realIsInteger reports whether SQLite keeps f as an integer in a REAL
// column: it has no fraction and lies strictly between the smallest and
// the largest int64.
func realIsInteger(f float64) bool {
	return f == math.Trunc(f) && f > -9.2233720368547e18 && f < 9.2233720368547e18
}

func sqliteIntSerialType(i int64, format4 bool) uint64 {
	if format4 && (i == 0 || i == 1) {
		return 8 + uint64(i)
	}
	u := uint64(i)
	if i < 0 {
		u = ^u
	}
	switch {
	case u <= 127:
		return 1
	case u <= 32767:
		return 2
	case u <= 8388607:
		return 3
	case u <= 2147483647:
		return 4
	case u <= 0x7fff_ffff_ffff:
		return 5
	}
	return 6
}

// sqliteAppendVarint appends v as SQLite's variable-length integer
// (fileformat2 §1.6): big-endian groups of 7 bits, each but the last with
// the high bit set; a ninth byte, when needed, holds 8 bits.
func sqliteAppendVarint(dst []byte, v uint64) []byte {
	if v <= 0x7f {
		return append(dst, byte(v))
	}
	var buf [9]byte
	if v>>56 != 0 {
		buf[8] = byte(v)
		v >>= 8
		for i := 7; i >= 0; i-- {
			buf[i] = byte(v&0x7f) | 0x80
			v >>= 7
		}
		return append(dst, buf[:]...)
	}
	n := 0
	for v != 0 {
		buf[n] = byte(v&0x7f) | 0x80
		v >>= 7
		n++
	}
	buf[0] &= 0x7f // the last group, once reversed
	for i := n - 1; i >= 0; i-- {
		dst = append(dst, buf[i])
	}
	return dst
}

// sqliteVarintLen is the length of v as an SQLite varint.
func sqliteVarintLen(v uint64) int {
	if v>>56 != 0 {
		return 9
	}
	n := 1
	for v > 0x7f {
		v >>= 7
		n++
	}
	return n
}
