package gis

import (
	"database/sql"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// btreeCaseRow is row i of a test table t (id INTEGER PRIMARY KEY, a TEXT,
// b REAL, c INTEGER, d BLOB): text of every length class (none, short,
// just under and over the local payload limit, several overflow pages),
// reals with and without a fraction (SQLite keeps the integral ones as
// integers on disk), integers at every serial-type boundary, and NULLs.
func btreeCaseRow(i, textLen int) []sqliteValue {
	ints := []int64{0, 1, -1, 2, 127, 128, -128, -129, 32767, 32768, -32769, 1<<23 - 1, 1 << 23, 1<<31 - 1, 1 << 31,
		-1 << 31, -1<<31 - 1, 1<<47 - 1, 1 << 47, -1 << 47, 1 << 62, math.MaxInt64, math.MinInt64}
	reals := []float64{0.5, 3, -0.0, -2.25, 1e300, -1e-300, 1 << 53, 9.2233720368547e18, -9.2233720368547e18, 0x1p63, 123456.789}
	row := []sqliteValue{{}, {}, {}, {}, {}}
	if i%11 != 5 {
		n := textLen
		if n < 0 {
			n = []int{0, 1, 40, 4000, 4061, 4062, 9000, 20000}[i%8]
		}
		row[1] = sqliteValue{kind: sqliteText, s: strings.Repeat(string(rune('a'+i%26)), n)}
	}
	if i%13 != 7 {
		row[2] = sqliteValue{kind: sqliteFloat, f: reals[i%len(reals)]}
	}
	if i%17 != 3 {
		row[3] = sqliteValue{kind: sqliteInt, i: ints[i%len(ints)]}
	}
	if i%3 == 0 {
		row[4] = sqliteValue{kind: sqliteBlob, b: []byte(fmt.Sprintf("blob %d", i))}
	}
	return row
}

// The table B-tree written page by page (sqliteTableAppender) must be one
// SQLite itself reads as the same table it writes from the same rows:
// each case fills table t by the appender and table u, the same rows,
// through INSERTs; then SQLite's integrity_check finds nothing wrong, the
// row counts agree, every row of t equals u's of the same rowid
// (including typeof: a REAL column holds reals), and t takes a further
// INSERT with the next rowid. The cases: no rows (the empty root stays),
// one (a single leaf, which becomes the root), rows with overflow chains
// of up to five pages, 512 rows of one leaf each (the second interior page
// gets one child and must take one from the first), and 150,000 short
// rows (three levels).
func TestSQLiteTableAppender(t *testing.T) {
	cases := []struct {
		name    string
		rows    int
		textLen int // -1: every length class
	}{
		{"empty", 0, 0}, {"one_row", 1, 10}, {"overflow", 300, -1}, {"one_leaf_each", 512, 3000}, {"three_levels", 150_000, 5},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "t.sqlite")
			db, err := sql.Open("sqlite", "file:"+path)
			if err != nil {
				t.Fatal(err)
			}
			defer db.Close()
			for _, q := range []string{
				"CREATE TABLE t (id INTEGER PRIMARY KEY, a TEXT, b REAL, c INTEGER, d BLOB)",
				"CREATE TABLE u (id INTEGER PRIMARY KEY, a TEXT, b REAL, c INTEGER, d BLOB)",
			} {
				if _, err := db.Exec(q); err != nil {
					t.Fatal(err)
				}
			}
			tx, err := db.Begin()
			if err != nil {
				t.Fatal(err)
			}
			for i := range tc.rows {
				r := btreeCaseRow(i, tc.textLen)
				args := make([]any, 4)
				for k, v := range r[1:] {
					switch v.kind {
					case sqliteText:
						args[k] = v.s
					case sqliteFloat:
						args[k] = v.f
					case sqliteInt:
						args[k] = v.i
					case sqliteBlob:
						args[k] = v.b
					}
				}
				if _, err := tx.Exec("INSERT INTO u (a, b, c, d) VALUES (?, ?, ?, ?)", args...); err != nil {
					t.Fatal(err)
				}
			}
			if err := tx.Commit(); err != nil {
				t.Fatal(err)
			}
			root := sqliteRootPageClosing(t, db, "t")

			a, err := openSQLiteTableAppender(path, root, []bool{false, false, true, false, false})
			if err != nil {
				t.Fatal(err)
			}
			for i := range tc.rows {
				if err := a.appendRow(btreeCaseRow(i, tc.textLen)); err != nil {
					t.Fatal(err)
				}
			}
			if err := a.finish(); err != nil {
				t.Fatal(err)
			}

			db = sqliteOpenChecked(t, path, "PRAGMA integrity_check")
			var check string
			var nt, nu, differ int
			q := `SELECT (SELECT count(*) FROM t), (SELECT count(*) FROM u),
				(SELECT count(*) FROM t JOIN u USING (id) WHERE t.a IS NOT u.a OR t.b IS NOT u.b OR t.c IS NOT u.c OR t.d IS NOT u.d
					OR typeof(t.a) != typeof(u.a) OR typeof(t.b) != typeof(u.b) OR typeof(t.c) != typeof(u.c) OR typeof(t.d) != typeof(u.d))`
			if err := db.QueryRow(q).Scan(&nt, &nu, &differ); err != nil {
				t.Fatal(err)
			}
			if nt != tc.rows || nu != tc.rows || differ != 0 {
				t.Fatalf("t has %d rows, u %d (want %d); %d rows differ", nt, nu, tc.rows, differ)
			}
			var maxID int64
			if err := db.QueryRow("SELECT coalesce(max(id), 0) FROM t").Scan(&maxID); err != nil || maxID != int64(tc.rows) {
				t.Fatalf("max(id) %d %v, want %d", maxID, err, tc.rows)
			}
			res, err := db.Exec("INSERT INTO t (a) VALUES ('after')")
			if err != nil {
				t.Fatal(err)
			}
			if id, _ := res.LastInsertId(); id != int64(tc.rows)+1 {
				t.Errorf("the next insert got rowid %d, want %d", id, tc.rows+1)
			}
			if err := db.QueryRow("PRAGMA integrity_check").Scan(&check); err != nil || check != "ok" {
				t.Fatalf("integrity_check after an insert: %q %v", check, err)
			}
		})
	}
}

// Rows appended with rowids of the caller's, with gaps and rowids needing
// every varint length up to nine bytes (SQLite's rowids are any positive
// int64), read back as SQLite stores the same rows inserted with those
// rowids, and SQLite's integrity_check passes; a rowid not above the last
// one's is refused, leaving the rows before it.
func TestSQLiteTableAppenderRowIDs(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ids.sqlite")
	db, err := sql.Open("sqlite", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, q := range []string{"CREATE TABLE t (id INTEGER PRIMARY KEY, n)", "CREATE TABLE u (id INTEGER PRIMARY KEY, n)"} {
		if _, err := db.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	var ids []int64
	for i := int64(1); i < 3000; i++ {
		ids = append(ids, i*i*i*i*i) // up to about 2.4e17: 1 to 9-byte varints
	}
	ids = append(ids, math.MaxInt64)
	tx, err := db.Begin()
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range ids {
		if _, err := tx.Exec("INSERT INTO u (id, n) VALUES (?, ?)", id, id%1000); err != nil {
			t.Fatal(err)
		}
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	root := sqliteRootPageClosing(t, db, "t")
	a, err := openSQLiteTableAppender(path, root, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range ids {
		if err := a.appendRowID(id, []sqliteValue{{}, {kind: sqliteInt, i: id % 1000}}); err != nil {
			t.Fatal(err)
		}
	}
	if err := a.appendRowID(math.MaxInt64, []sqliteValue{{}, {kind: sqliteInt, i: 1}}); err == nil {
		t.Error("a repeated rowid was taken")
	}
	if err := a.finish(); err != nil {
		t.Fatal(err)
	}
	db = sqliteOpenChecked(t, path, "PRAGMA integrity_check")
	var nt, same int
	if err := db.QueryRow("SELECT (SELECT count(*) FROM t), (SELECT count(*) FROM t JOIN u USING (id) WHERE t.n IS u.n)").Scan(&nt, &same); err != nil {
		t.Fatal(err)
	}
	if nt != len(ids) || same != len(ids) {
		t.Fatalf("t has %d rows, %d of them as in u; want %d", nt, same, len(ids))
	}
}

// SQLite's varint (sqlite.org/fileformat2.html §1.6): 0x7f is one byte,
// 0x80 two (0x81 0x00), 2^56 − 1 eight, and anything wider nine with the
// last byte holding 8 bits (the first eight hold bits 57–63, 50–56, …, 8–14); sqliteVarintLen agrees with the encoding.
func TestSQLiteVarint(t *testing.T) {
	cases := []struct {
		v    uint64
		want []byte
	}{
		{0, []byte{0}}, {0x7f, []byte{0x7f}}, {0x80, []byte{0x81, 0x00}}, {0x3fff, []byte{0xff, 0x7f}},
		{0x4000, []byte{0x81, 0x80, 0x00}},
		{1<<56 - 1, []byte{0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x7f}},
		{1 << 56, []byte{0x80, 0xc0, 0x80, 0x80, 0x80, 0x80, 0x80, 0x80, 0x00}}, // bit 56 is the 7th bit of the second byte's group (bits 50–56)
		{math.MaxUint64, []byte{0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff}},
	}
	for _, tc := range cases {
		got := sqliteAppendVarint(nil, tc.v)
		if string(got) != string(tc.want) {
			t.Errorf("varint %#x = % x, want % x", tc.v, got, tc.want)
		}
		if n := sqliteVarintLen(tc.v); n != len(tc.want) {
			t.Errorf("varint length of %#x = %d, want %d", tc.v, n, len(tc.want))
		}
	}
}

// Every interior page btreeInteriorLevel makes has at least two children,
// the keys rise across the level, and no page overflows, for child counts
// around the page capacity (511 children of 2-byte keys on 4,096 bytes).
func TestBtreeInteriorLevel(t *testing.T) {
	for _, n := range []int{2, 3, 510, 511, 512, 513, 1021, 1022, 1023, 5000} {
		kids := make([]btreeKid, n)
		for i := range kids {
			kids[i] = btreeKid{page: uint32(10 + i), maxKey: int64(100 + 3*i)}
		}
		pages := btreeInteriorLevel(kids, 4096)
		var seen []btreeKid
		for k, pg := range pages {
			if len(pg.ends) < 1 {
				t.Fatalf("%d children: page %d has %d cells", n, k, len(pg.ends))
			}
			if size := btreeInteriorHeaderBytes + 2*len(pg.ends) + len(pg.cells); size > 4096 {
				t.Fatalf("%d children: page %d needs %d bytes", n, k, size)
			}
			seen = append(seen, pg.kids...)
			seen = append(seen, btreeKid{page: pg.right, maxKey: pg.maxKey})
		}
		if len(seen) != n {
			t.Fatalf("%d children placed, want %d", len(seen), n)
		}
		for i := range seen {
			if seen[i] != kids[i] {
				t.Fatalf("%d children: child %d is %v, want %v", n, i, seen[i], kids[i])
			}
		}
	}
}

// sqliteOpenChecked opens the database file at path, closed when the test
// ends, and fails the test unless SQLite answers the check query (PRAGMA
// integrity_check, or rtreecheck() of an R*Tree) with "ok".
func sqliteOpenChecked(t *testing.T, path, check string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	var got string
	if err := db.QueryRow(check).Scan(&got); err != nil || got != "ok" {
		t.Fatalf("%s: %q %v", check, got, err)
	}
	return db
}

// sqliteRootPageClosing reads the root page of table name and closes db,
// so that an appender can fill the table in the file.
func sqliteRootPageClosing(t *testing.T, db *sql.DB, name string) int64 {
	t.Helper()
	var root int64
	if err := db.QueryRow("SELECT rootpage FROM sqlite_schema WHERE name = ?", name).Scan(&root); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	return root
}
