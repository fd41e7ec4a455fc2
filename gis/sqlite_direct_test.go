package gis

import (
	"database/sql"
	"path/filepath"
	"strings"
	"testing"
)

// Values bound on the direct connection read back through the database/sql
// driver as SQLite stores them (sqlite.org/datatype3.html): NULL for nil and
// a nil blob, an empty text (not NULL) for an empty string, integers for bools, and text
// and blobs byte for byte, across statements whose buffers must grow.
func TestSQLiteConnBindsEveryKind(t *testing.T) {
	path := filepath.Join(t.TempDir(), "kinds.sqlite")
	uri, err := gpkgURI(path, "")
	if err != nil {
		t.Fatal(err)
	}
	c, err := sqliteOpen(uri)
	if err != nil {
		t.Fatal(err)
	}
	if err := c.exec("CREATE TABLE t (k INTEGER PRIMARY KEY, v ANY) STRICT"); err != nil {
		t.Fatal(err)
	}
	long := strings.Repeat("Quillmere Lane ", 500)
	values := []any{nil, int64(-7), 42, int32(3), 2.5, true, false, "", "héad loss\x00tail", long, []byte(nil), []byte{0, 1, 2, 255}, []byte{}}
	st, err := c.prepare("INSERT INTO t (k, v) VALUES (?, ?)")
	if err != nil {
		t.Fatal(err)
	}
	for k, v := range values {
		if err := st.exec([]any{int64(k), v}); err != nil {
			t.Fatalf("value %d (%#v): %v", k, v, err)
		}
	}
	if err := st.exec([]any{int64(0), "again"}); err == nil || !strings.Contains(err.Error(), "UNIQUE constraint failed") {
		t.Errorf("repeated key: error %v, want SQLite's UNIQUE constraint message", err)
	}
	if err := st.exec([]any{int64(1)}); err == nil {
		t.Error("one value for two parameters: no error")
	}
	if err := st.close(); err != nil {
		t.Fatal(err)
	}
	n, null, err := c.queryInt64("SELECT count(*) FROM t")
	if err != nil || null || n != int64(len(values)) {
		t.Errorf("count = %d (null %v, err %v), want %d", n, null, err, len(values))
	}
	if err := c.close(); err != nil {
		t.Fatal(err)
	}

	db, err := sql.Open("sqlite", uri)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	want := []struct {
		typ  string
		text string
	}{{"null", ""}, {"integer", "-7"}, {"integer", "42"}, {"integer", "3"}, {"real", "2.5"}, {"integer", "1"}, {"integer", "0"},
		{"text", ""}, {"text", "héad loss\x00tail"}, {"text", long}, {"null", ""}, {"blob", "\x00\x01\x02\xff"}, {"blob", ""}}
	rows, err := db.Query("SELECT typeof(v), CAST(v AS BLOB) FROM t ORDER BY k")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	k := 0
	for ; rows.Next(); k++ {
		var typ string
		var raw []byte
		if err := rows.Scan(&typ, &raw); err != nil {
			t.Fatal(err)
		}
		if typ != want[k].typ || string(raw) != want[k].text {
			t.Errorf("row %d: %s %q, want %s %q", k, typ, raw, want[k].typ, want[k].text)
		}
	}
	if k != len(want) {
		t.Errorf("%d rows, want %d", k, len(want))
	}
}
