package gis

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"unsafe"

	"modernc.org/libc"
	sqlite3 "modernc.org/sqlite/lib"
)

// sqliteConn is a connection to an SQLite database through SQLite's own C interface, in
// modernc.org/sqlite's translation to Go, for the GeoPackage writer. database/sql and the
// driver cost more than SQLite itself on a bulk load: the driver opens every connection with
// SQLITE_OPEN_FULLMUTEX, so that each bind and step takes and releases the connection's mutex,
// and it looks up each parameter's name and copies each text and blob value into memory of its
// own (on the 1,000,000-segment demo town, binding took 3.8 s of the 11 s CPU that writing
// pipes.gpkg took). This connection is opened with SQLITE_OPEN_NOMUTEX, binds by position,
// and binds text and blobs from one buffer per statement that SQLite reads in place
// (SQLITE_STATIC). It must be used by one goroutine at a time.
type sqliteConn struct {
	tls *libc.TLS
	db  uintptr // sqlite3*
}

// sqliteOpen opens (creating if need be) the database at an SQLite URI filename.
func sqliteOpen(uri string) (*sqliteConn, error) {
	tls := libc.NewTLS()
	name, err := libc.CString(uri)
	if err != nil {
		tls.Close()
		return nil, err
	}
	defer libc.Xfree(tls, name)
	out := tls.Alloc(8)
	defer tls.Free(8)
	flags := int32(sqlite3.SQLITE_OPEN_READWRITE | sqlite3.SQLITE_OPEN_CREATE | sqlite3.SQLITE_OPEN_URI |
		sqlite3.SQLITE_OPEN_NOMUTEX | sqlite3.SQLITE_OPEN_EXRESCODE)
	rc := sqlite3.Xsqlite3_open_v2(tls, name, out, flags, 0)
	c := &sqliteConn{tls: tls, db: cPointer(out)}
	if rc != sqlite3.SQLITE_OK {
		err := c.error(rc)
		c.close()
		return nil, err
	}
	return c, nil
}

// cPointer reads the pointer stored at p (C memory).
func cPointer(p uintptr) uintptr {
	return uintptr(binary.NativeEndian.Uint64(libc.GoBytes(p, 8)))
}

// cMemory is the n bytes of C memory at p, from libc's allocator (outside the Go heap), as a
// slice. The conversion goes through &p so that p is never converted from a uintptr value.
func cMemory(p uintptr, n int) []byte {
	return unsafe.Slice((*byte)(*(*unsafe.Pointer)(unsafe.Pointer(&p))), n)
}

// error is the error of result code rc, with SQLite's message for the connection.
func (c *sqliteConn) error(rc int32) error {
	msg := libc.GoString(sqlite3.Xsqlite3_errstr(c.tls, rc))
	if c.db != 0 {
		if m := libc.GoString(sqlite3.Xsqlite3_errmsg(c.tls, c.db)); m != "" && m != msg {
			msg += ": " + m
		}
	}
	return fmt.Errorf("sqlite: %s (%d)", msg, rc)
}

// close closes the connection; statements must be closed first.
func (c *sqliteConn) close() error {
	var err error
	if c.db != 0 {
		if rc := sqlite3.Xsqlite3_close_v2(c.tls, c.db); rc != sqlite3.SQLITE_OK {
			err = c.error(rc)
		}
		c.db = 0
	}
	if c.tls != nil {
		c.tls.Close()
		c.tls = nil
	}
	return err
}

// exec runs one SQL statement with args (see sqliteStmt.exec), discarding any rows.
func (c *sqliteConn) exec(query string, args ...any) error {
	st, err := c.prepare(query)
	if err != nil {
		return err
	}
	err = st.exec(args)
	if cerr := st.close(); err == nil {
		err = cerr
	}
	return err
}

// queryInt64 runs a query of one row and one column and returns its integer, or null.
func (c *sqliteConn) queryInt64(query string) (v int64, null bool, err error) {
	st, err := c.prepare(query)
	if err != nil {
		return 0, false, err
	}
	defer st.close()
	switch rc := sqlite3.Xsqlite3_step(c.tls, st.p); rc {
	case sqlite3.SQLITE_ROW:
		if sqlite3.Xsqlite3_column_type(c.tls, st.p, 0) == sqlite3.SQLITE_NULL {
			return 0, true, nil
		}
		return sqlite3.Xsqlite3_column_int64(c.tls, st.p, 0), false, nil
	case sqlite3.SQLITE_DONE:
		return 0, false, errors.New("sqlite: the query returned no row")
	default:
		return 0, false, c.error(rc)
	}
}

// sqliteStmt is a prepared statement and the C buffer its text and blob values are bound from.
type sqliteStmt struct {
	c      *sqliteConn
	p      uintptr // sqlite3_stmt*
	params int
	buf    uintptr // C memory of bufLen bytes, or 0
	bufLen int
}

// prepare compiles one SQL statement.
func (c *sqliteConn) prepare(query string) (*sqliteStmt, error) {
	text, err := libc.CString(query)
	if err != nil {
		return nil, err
	}
	defer libc.Xfree(c.tls, text)
	out := c.tls.Alloc(8)
	defer c.tls.Free(8)
	if rc := sqlite3.Xsqlite3_prepare_v2(c.tls, c.db, text, -1, out, 0); rc != sqlite3.SQLITE_OK {
		return nil, c.error(rc)
	}
	st := &sqliteStmt{c: c, p: cPointer(out)}
	if st.p == 0 {
		return nil, fmt.Errorf("sqlite: no statement in %q", query)
	}
	st.params = int(sqlite3.Xsqlite3_bind_parameter_count(c.tls, st.p))
	return st, nil
}

// sqliteValue is one value to bind, unboxed: kind says which field holds it.
type sqliteValue struct {
	kind byte // sqliteNull, sqliteInt, sqliteFloat, sqliteText or sqliteBlob
	i    int64
	f    float64
	s    string
	b    []byte
}

const (
	sqliteNull byte = iota
	sqliteInt
	sqliteFloat
	sqliteText
	sqliteBlob
)

// sqliteValueOf is v as a sqliteValue: nil (NULL), int64, int, int32,
// float64, bool (0 or 1), string or []byte (nil is NULL).
func sqliteValueOf(v any) (sqliteValue, error) {
	switch x := v.(type) {
	case nil:
		return sqliteValue{}, nil
	case int64:
		return sqliteValue{kind: sqliteInt, i: x}, nil
	case int:
		return sqliteValue{kind: sqliteInt, i: int64(x)}, nil
	case int32:
		return sqliteValue{kind: sqliteInt, i: int64(x)}, nil
	case float64:
		return sqliteValue{kind: sqliteFloat, f: x}, nil
	case bool:
		if x {
			return sqliteValue{kind: sqliteInt, i: 1}, nil
		}
		return sqliteValue{kind: sqliteInt}, nil
	case string:
		return sqliteValue{kind: sqliteText, s: x}, nil
	case []byte:
		if x == nil {
			return sqliteValue{}, nil
		}
		return sqliteValue{kind: sqliteBlob, b: x}, nil
	}
	return sqliteValue{}, fmt.Errorf("sqlite: cannot store a %T", v)
}

// exec binds args (see sqliteValueOf) to the statement's parameters in
// order and runs it to completion.
func (st *sqliteStmt) exec(args []any) error {
	vals := make([]sqliteValue, len(args))
	for k, v := range args {
		var err error
		if vals[k], err = sqliteValueOf(v); err != nil {
			return fmt.Errorf("sqlite: value %d: %w", k+1, err)
		}
	}
	return st.execValues(vals)
}

// execValues binds vals to the statement's parameters in order and runs it
// to completion.
func (st *sqliteStmt) execValues(vals []sqliteValue) error {
	if len(vals) != st.params {
		return fmt.Errorf("sqlite: %d values for %d parameters", len(vals), st.params)
	}
	if err := st.bind(vals); err != nil {
		return err
	}
	c := st.c
	for {
		switch rc := sqlite3.Xsqlite3_step(c.tls, st.p); rc {
		case sqlite3.SQLITE_ROW:
			continue
		case sqlite3.SQLITE_DONE:
			if rc := sqlite3.Xsqlite3_reset(c.tls, st.p); rc != sqlite3.SQLITE_OK {
				return c.error(rc)
			}
			return nil
		default:
			err := c.error(rc)
			sqlite3.Xsqlite3_reset(c.tls, st.p)
			return err
		}
	}
}

// bind binds vals; text and blobs are first copied, end to end, into the
// statement's buffer, which SQLite reads in place until the next bind.
func (st *sqliteStmt) bind(vals []sqliteValue) error {
	c := st.c
	need := 1 // never a null pointer: an empty text bound from address 0 would be NULL
	for k := range vals {
		need += len(vals[k].s) + len(vals[k].b)
	}
	if need > st.bufLen {
		if st.buf != 0 {
			libc.Xfree(c.tls, st.buf)
		}
		size := max(need, 2*st.bufLen)
		if st.buf = libc.Xmalloc(c.tls, uint64(size)); st.buf == 0 {
			st.bufLen = 0
			return fmt.Errorf("sqlite: cannot allocate %d bytes", size)
		}
		st.bufLen = size
	}
	mem := cMemory(st.buf, st.bufLen)
	at := 0
	for k := range vals {
		v := &vals[k]
		i := int32(k + 1)
		var rc int32
		switch v.kind {
		case sqliteNull:
			rc = sqlite3.Xsqlite3_bind_null(c.tls, st.p, i)
		case sqliteInt:
			rc = sqlite3.Xsqlite3_bind_int64(c.tls, st.p, i, v.i)
		case sqliteFloat:
			rc = sqlite3.Xsqlite3_bind_double(c.tls, st.p, i, v.f)
		case sqliteText:
			if len(v.s) > math.MaxInt32 {
				return fmt.Errorf("sqlite: value %d: %d bytes of text", k+1, len(v.s))
			}
			copy(mem[at:], v.s)
			rc = sqlite3.Xsqlite3_bind_text(c.tls, st.p, i, st.buf+uintptr(at), int32(len(v.s)), 0)
			at += len(v.s)
		case sqliteBlob:
			if len(v.b) > math.MaxInt32 {
				return fmt.Errorf("sqlite: value %d: a blob of %d bytes", k+1, len(v.b))
			}
			copy(mem[at:], v.b)
			rc = sqlite3.Xsqlite3_bind_blob(c.tls, st.p, i, st.buf+uintptr(at), int32(len(v.b)), 0)
			at += len(v.b)
		default:
			return fmt.Errorf("sqlite: value %d: unknown kind %d", k+1, v.kind)
		}
		if rc != sqlite3.SQLITE_OK {
			return c.error(rc)
		}
	}
	return nil
}

// close finalises the statement and frees its buffer.
func (st *sqliteStmt) close() error {
	c := st.c
	var err error
	if st.p != 0 {
		if rc := sqlite3.Xsqlite3_finalize(c.tls, st.p); rc != sqlite3.SQLITE_OK {
			err = c.error(rc)
		}
		st.p = 0
	}
	if st.buf != 0 {
		libc.Xfree(c.tls, st.buf)
		st.buf, st.bufLen = 0, 0
	}
	return err
}
