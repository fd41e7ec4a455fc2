package gis

import (
	"bytes"
	"database/sql"
	"encoding/base64"
	"errors"
	"fmt"
	"io"
	"math"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
	_ "modernc.org/sqlite" // pure-Go SQLite driver "sqlite"
)

// GeoPackage (OGC 12-128, version 1.2) feature tables are read and written
// here through database/sql and a pure-Go SQLite. Geometries are stored as
// GeoPackage binary geometry: a header ('G','P', version, flags, srs_id,
// optional envelope) followed by ISO WKB (OGC 12-128 §2.1.3; OGC 06-103r4
// for WKB).

// SpatialRef is one row of gpkg_spatial_ref_sys.
type SpatialRef struct {
	ID           int    // srs_id
	Name         string // srs_name
	Organization string // "EPSG", "NONE"
	OrgID        int    // organization_coordsys_id
	Definition   string // WKT (WKT1 as GDAL writes it), "undefined" for −1/0
}

// GeoPackageField is one attribute column of a feature table: its name and
// its declared SQLite type as written in the table's schema ("TEXT",
// "REAL", "MEDIUMINT", "BOOLEAN", ...).
type GeoPackageField struct{ Name, Type string }

// GeoPackageLayer is one feature table read from a GeoPackage.
//
// Features holds one Feature per row in fid order; the Feature's ID is the
// fid (int64) and its geometry is in the table's SRS, as stored (a NULL or
// EMPTY geometry gives a nil Geometry). Property values are int64, float64,
// string, bool (for columns declared BOOLEAN), or nil for SQL NULL. DATE
// columns give "2006-01-02" strings and DATETIME columns RFC 3339 strings
// in UTC. BLOB values are given as standard base64 strings (RFC 4648 §4),
// so that no column is silently lost; Fields says which columns are BLOBs.
//
// Z is nil when no geometry of the table has Z values; otherwise it has one
// entry per feature, the Z of each vertex in the order the vertices appear
// (parts and rings in order), nil for a feature without Z.
type GeoPackageLayer struct {
	Features     *geojson.FeatureCollection
	Z            [][]float64
	Table        string
	GeometryType string // gpkg_geometry_columns.geometry_type_name: "LINESTRING", "MULTILINESTRING", "POINT", ...
	SRS          SpatialRef
	Fields       []GeoPackageField // attribute columns in column order, fid and geometry excluded
}

// gpkgSQLiteMagic is the first 16 bytes of every SQLite 3 database file
// (sqlite.org/fileformat.html §1.3.1).
var gpkgSQLiteMagic = []byte("SQLite format 3\x00")

// gpkgError returns a *FieldError about the whole file path.
func gpkgError(path string, format string, args ...any) error {
	return &FieldError{File: filepath.Base(path), Err: fmt.Errorf(format, args...)}
}

// gpkgURI turns a file path into an SQLite URI filename with the given
// query (sqlite.org/uri.html), escaping the characters URIs reserve.
func gpkgURI(path, query string) (string, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return "", err
	}
	p := filepath.ToSlash(abs)
	if !strings.HasPrefix(p, "/") {
		p = "/" + p // a Windows drive letter: file:/C:/...
	}
	u := "file:" + (&url.URL{Path: p}).EscapedPath()
	if query != "" {
		u += "?" + query
	}
	return u, nil
}

// gpkgOpenRead checks that path is an SQLite database holding the
// GeoPackage core tables and opens it read-only.
func gpkgOpenRead(path string) (*sql.DB, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &FieldError{File: filepath.Base(path), Err: err}
	}
	head := make([]byte, 20)
	n, _ := io.ReadFull(f, head)
	f.Close()
	if n < len(head) || !bytes.Equal(head[:len(gpkgSQLiteMagic)], gpkgSQLiteMagic) {
		return nil, gpkgError(path, "not a GeoPackage: the file is not an SQLite database; export the layer from your GIS as GeoPackage (.gpkg)")
	}
	query := "mode=ro"
	// Header bytes 18–19 are 2 for a database in WAL mode. Opened read-only,
	// SQLite would create -wal and -shm files beside the input; when there is
	// no -wal file there is nothing in one to read, so open it immutable.
	if _, err := os.Stat(path + "-wal"); head[18] == 2 && errors.Is(err, os.ErrNotExist) {
		query += "&immutable=1"
	}
	uri, err := gpkgURI(path, query)
	if err != nil {
		return nil, &FieldError{File: filepath.Base(path), Err: err}
	}
	db, err := sql.Open("sqlite", uri)
	if err != nil {
		return nil, &FieldError{File: filepath.Base(path), Err: err}
	}
	db.SetMaxOpenConns(1)
	var count int
	err = db.QueryRow(`SELECT count(*) FROM sqlite_master WHERE type IN ('table','view') AND name IN ('gpkg_contents','gpkg_geometry_columns','gpkg_spatial_ref_sys')`).Scan(&count)
	if err != nil {
		db.Close()
		return nil, gpkgError(path, "not a GeoPackage: cannot read it as SQLite: %v", err)
	}
	if count < 3 {
		db.Close()
		return nil, gpkgError(path, "not a GeoPackage: an SQLite database without the gpkg_contents, gpkg_geometry_columns and gpkg_spatial_ref_sys tables; export the layer from your GIS as GeoPackage (.gpkg)")
	}
	return db, nil
}

// GeoPackageTables returns the names of the feature tables listed in
// gpkg_contents (data_type 'features') of the GeoPackage at path, sorted.
func GeoPackageTables(path string) ([]string, error) {
	db, err := gpkgOpenRead(path)
	if err != nil {
		return nil, err
	}
	defer db.Close()
	return gpkgFeatureTables(db, path)
}

func gpkgFeatureTables(db *sql.DB, path string) ([]string, error) {
	rows, err := db.Query(`SELECT table_name FROM gpkg_contents WHERE data_type = 'features'`)
	if err != nil {
		return nil, gpkgError(path, "reading gpkg_contents: %v", err)
	}
	defer rows.Close()
	var names []string
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return nil, gpkgError(path, "reading gpkg_contents: %v", err)
		}
		names = append(names, name)
	}
	if err := rows.Err(); err != nil {
		return nil, gpkgError(path, "reading gpkg_contents: %v", err)
	}
	slices.Sort(names)
	return names, nil
}

// gpkgQuote quotes an SQL identifier ("a""b").
func gpkgQuote(name string) string {
	return `"` + strings.ReplaceAll(name, `"`, `""`) + `"`
}

// gpkgListTables formats table names for a message: "a", "b".
func gpkgListTables(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = strconv.Quote(n)
	}
	return strings.Join(q, ", ")
}

// ReadGeoPackage reads the feature table named table from the GeoPackage at
// path, opened read-only. An empty table means the only feature table; if
// the file has more than one, the error lists them. Table names match
// exactly, or else ignoring case (as SQLite does).
func ReadGeoPackage(path, table string) (*GeoPackageLayer, error) {
	db, err := gpkgOpenRead(path)
	if err != nil {
		return nil, err
	}
	defer db.Close()
	tables, err := gpkgFeatureTables(db, path)
	if err != nil {
		return nil, err
	}
	table, err = gpkgChooseTable(path, table, tables)
	if err != nil {
		return nil, err
	}
	layer := &GeoPackageLayer{Table: table}
	geomCol, err := gpkgGeometryColumn(db, path, layer)
	if err != nil {
		return nil, err
	}
	if err := gpkgReadSRS(db, path, &layer.SRS); err != nil {
		return nil, err
	}
	fidCol, err := gpkgColumns(db, path, layer, geomCol)
	if err != nil {
		return nil, err
	}
	if err := gpkgReadRows(db, path, layer, fidCol, geomCol); err != nil {
		return nil, err
	}
	return layer, nil
}

func gpkgChooseTable(path, table string, tables []string) (string, error) {
	if len(tables) == 0 {
		return "", gpkgError(path, "the GeoPackage has no feature tables (gpkg_contents lists none with data_type 'features')")
	}
	if table == "" {
		if len(tables) > 1 {
			return "", gpkgError(path, "the GeoPackage has %d feature tables (%s); set the layer's table key in the config to choose one", len(tables), gpkgListTables(tables))
		}
		return tables[0], nil
	}
	if slices.Contains(tables, table) {
		return table, nil
	}
	for _, t := range tables {
		if strings.EqualFold(t, table) {
			return t, nil
		}
	}
	return "", gpkgError(path, "feature table %q not found; the GeoPackage has %s; set the layer's table key in the config to one of them", table, gpkgListTables(tables))
}

// gpkgGeometryColumn reads the table's row of gpkg_geometry_columns into
// layer and returns the geometry column's name.
func gpkgGeometryColumn(db *sql.DB, path string, layer *GeoPackageLayer) (string, error) {
	var col, typ string
	err := db.QueryRow(`SELECT column_name, geometry_type_name, srs_id FROM gpkg_geometry_columns WHERE table_name = ?`, layer.Table).
		Scan(&col, &typ, &layer.SRS.ID)
	if errors.Is(err, sql.ErrNoRows) {
		return "", gpkgError(path, "feature table %q has no row in gpkg_geometry_columns; the file is not a valid GeoPackage", layer.Table)
	}
	if err != nil {
		return "", gpkgError(path, "reading gpkg_geometry_columns for %q: %v", layer.Table, err)
	}
	layer.GeometryType = strings.ToUpper(typ)
	return col, nil
}

// gpkgReadSRS fills srs from gpkg_spatial_ref_sys by srs.ID.
func gpkgReadSRS(db *sql.DB, path string, srs *SpatialRef) error {
	var def sql.NullString
	err := db.QueryRow(`SELECT srs_name, organization, organization_coordsys_id, definition FROM gpkg_spatial_ref_sys WHERE srs_id = ?`, srs.ID).
		Scan(&srs.Name, &srs.Organization, &srs.OrgID, &def)
	if errors.Is(err, sql.ErrNoRows) {
		return gpkgError(path, "srs_id %d is not in gpkg_spatial_ref_sys; the file is not a valid GeoPackage", srs.ID)
	}
	if err != nil {
		return gpkgError(path, "reading gpkg_spatial_ref_sys row %d: %v", srs.ID, err)
	}
	srs.Definition = def.String
	return nil
}

// gpkgColumns reads the table's columns into layer.Fields (without the fid
// and geometry columns) and returns the name of the integer primary key.
func gpkgColumns(db *sql.DB, path string, layer *GeoPackageLayer, geomCol string) (string, error) {
	rows, err := db.Query(`SELECT name, type, pk FROM pragma_table_info(?)`, layer.Table)
	if err != nil {
		return "", gpkgError(path, "reading the columns of %q: %v", layer.Table, err)
	}
	defer rows.Close()
	fid := ""
	haveGeom := false
	for rows.Next() {
		var name, typ string
		var pk int
		if err := rows.Scan(&name, &typ, &pk); err != nil {
			return "", gpkgError(path, "reading the columns of %q: %v", layer.Table, err)
		}
		switch {
		case pk == 1 && fid == "" && strings.EqualFold(typ, "INTEGER"):
			fid = name
		case strings.EqualFold(name, geomCol):
			haveGeom = true
		default:
			layer.Fields = append(layer.Fields, GeoPackageField{Name: name, Type: typ})
		}
	}
	if err := rows.Err(); err != nil {
		return "", gpkgError(path, "reading the columns of %q: %v", layer.Table, err)
	}
	if !haveGeom {
		return "", gpkgError(path, "feature table %q has no geometry column %q named in gpkg_geometry_columns", layer.Table, geomCol)
	}
	if fid == "" {
		fid = "rowid" // OGC 12-128 Req 29 asks for an INTEGER PRIMARY KEY; fall back to SQLite's rowid
	}
	return fid, nil
}

// gpkgReadRows reads every row of the table in fid order into layer.
func gpkgReadRows(db *sql.DB, path string, layer *GeoPackageLayer, fidCol, geomCol string) error {
	cols := []string{gpkgQuote(fidCol), gpkgQuote(geomCol)}
	for _, f := range layer.Fields {
		cols = append(cols, gpkgQuote(f.Name))
	}
	q := "SELECT " + strings.Join(cols, ", ") + " FROM " + gpkgQuote(layer.Table) + " ORDER BY " + gpkgQuote(fidCol)
	rows, err := db.Query(q)
	if err != nil {
		return gpkgError(path, "reading table %q: %v", layer.Table, err)
	}
	defer rows.Close()
	fc := geojson.NewFeatureCollection()
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	var zs [][]float64
	hasZ := false
	file := filepath.Base(path)
	for row := 1; rows.Next(); row++ {
		if err := rows.Scan(ptrs...); err != nil {
			return &FieldError{File: file, Feature: row, Err: fmt.Errorf("table %q: %w", layer.Table, err)}
		}
		fid, _ := vals[0].(int64)
		var g orb.Geometry
		var z []float64
		switch b := vals[1].(type) {
		case nil:
		case []byte:
			g, z, err = gpkgDecodeGeometry(b)
			if err != nil {
				return &FieldError{File: file, Feature: row, ID: strconv.FormatInt(fid, 10), Field: geomCol,
					Err: fmt.Errorf("table %q: corrupt geometry blob: %w; repair the layer in your GIS (or re-export it) and try again", layer.Table, err)}
			}
		default:
			return &FieldError{File: file, Feature: row, ID: strconv.FormatInt(fid, 10), Field: geomCol,
				Err: fmt.Errorf("table %q: geometry is a %T, not a GeoPackage geometry blob", layer.Table, b)}
		}
		f := geojson.NewFeature(g)
		f.ID = fid
		for j, fld := range layer.Fields {
			f.Properties[fld.Name] = gpkgValue(vals[j+2], fld.Type)
		}
		fc.Append(f)
		if z != nil {
			hasZ = true
		}
		zs = append(zs, z)
	}
	if err := rows.Err(); err != nil {
		return gpkgError(path, "reading table %q: %v", layer.Table, err)
	}
	layer.Features = fc
	if hasZ {
		layer.Z = zs
	}
	return nil
}

// gpkgValue converts a scanned SQLite value to a property value.
func gpkgValue(v any, declType string) any {
	switch x := v.(type) {
	case int64:
		if strings.EqualFold(declType, "BOOLEAN") {
			return x != 0
		}
		return x
	case []byte:
		return base64.StdEncoding.EncodeToString(x)
	case time.Time:
		if strings.EqualFold(declType, "DATE") {
			return x.UTC().Format("2006-01-02")
		}
		return x.UTC().Format(time.RFC3339Nano)
	}
	return v // float64, string, nil
}

// Geometry blob decoding.

// gpkgMaxDepth bounds the nesting of geometry collections in WKB.
const gpkgMaxDepth = 16

// gpkgEnvelopeBytes is the envelope size for each envelope contents
// indicator (OGC 12-128 §2.1.3.1.1): none, XY, XYZ, XYM, XYZM.
var gpkgEnvelopeBytes = [5]int{0, 32, 48, 48, 64}

// gpkgDecodeGeometry decodes a GeoPackage binary geometry blob: the header
//
//	magic 'G','P' | version 0 | flags | srs_id int32 | envelope (0, 4, 6 or 8 float64)
//
// then ISO WKB (Z: type+1000, M: +2000, ZM: +3000; EWKB's high flag bits are
// accepted as well). It returns nil geometry for an EMPTY geometry, and the
// Z ordinates per vertex when the WKB has Z (else nil). Counts in the WKB
// are checked against the bytes left before anything is allocated.
func gpkgDecodeGeometry(b []byte) (orb.Geometry, []float64, error) {
	if len(b) < 8 {
		return nil, nil, fmt.Errorf("%d bytes, shorter than the 8-byte header", len(b))
	}
	if b[0] != 'G' || b[1] != 'P' {
		return nil, nil, fmt.Errorf("header starts with %#02x %#02x, not the magic 'GP'", b[0], b[1])
	}
	if b[2] != 0 {
		return nil, nil, fmt.Errorf("geometry version %d; only version 0 (GeoPackage 1.x) is known", b[2])
	}
	flags := b[3]
	if flags&0x20 != 0 {
		return nil, nil, errors.New("extended geometry type (an extension's own encoding); export it as a standard geometry type")
	}
	env := int(flags>>1) & 0x7
	if env >= len(gpkgEnvelopeBytes) {
		return nil, nil, fmt.Errorf("envelope contents indicator %d is invalid", env)
	}
	start := 8 + gpkgEnvelopeBytes[env]
	if len(b) < start {
		return nil, nil, fmt.Errorf("%d bytes, shorter than the header with its envelope (%d)", len(b), start)
	}
	if flags&0x10 != 0 { // empty geometry
		return nil, nil, nil
	}
	r := gpkgWKB{b: b[start:]}
	g, err := r.geometry(0)
	if err != nil {
		return nil, nil, err
	}
	if len(r.b) != 0 {
		return nil, nil, fmt.Errorf("%d bytes left over after the WKB geometry", len(r.b))
	}
	if r.hasZ {
		return g, r.z, nil
	}
	return g, nil, nil
}

// gpkgWKB reads WKB from b, consuming it.
type gpkgWKB struct {
	b    []byte
	z    []float64
	hasZ bool
	zSet bool // hasZ has been fixed by the first geometry
}

func (r *gpkgWKB) uint32(little bool) (uint32, error) {
	if len(r.b) < 4 {
		return 0, errors.New("WKB truncated")
	}
	var v uint32
	if little {
		v = uint32(r.b[0]) | uint32(r.b[1])<<8 | uint32(r.b[2])<<16 | uint32(r.b[3])<<24
	} else {
		v = uint32(r.b[3]) | uint32(r.b[2])<<8 | uint32(r.b[1])<<16 | uint32(r.b[0])<<24
	}
	r.b = r.b[4:]
	return v, nil
}

func (r *gpkgWKB) float(little bool) float64 {
	var v uint64
	for i := range 8 {
		if little {
			v |= uint64(r.b[i]) << (8 * i)
		} else {
			v |= uint64(r.b[7-i]) << (8 * i)
		}
	}
	r.b = r.b[8:]
	return math.Float64frombits(v)
}

// gpkgWKBHeader is the byte order and type of one WKB geometry.
type gpkgWKBHeader struct {
	little bool
	base   uint32 // 1 Point ... 7 GeometryCollection
	dims   int    // 2, 3 or 4 ordinates per point
	hasZ   bool
}

func (r *gpkgWKB) header() (gpkgWKBHeader, error) {
	var h gpkgWKBHeader
	if len(r.b) < 5 {
		return h, errors.New("WKB truncated in a geometry header")
	}
	switch r.b[0] {
	case 0:
	case 1:
		h.little = true
	default:
		return h, fmt.Errorf("WKB byte order %d is neither 0 nor 1", r.b[0])
	}
	r.b = r.b[1:]
	t, _ := r.uint32(h.little)
	var hasM bool
	if t&0xE0000000 != 0 { // EWKB flags: Z 0x80000000, M 0x40000000, SRID 0x20000000
		h.hasZ, hasM = t&0x80000000 != 0, t&0x40000000 != 0
		if t&0x20000000 != 0 {
			if _, err := r.uint32(h.little); err != nil {
				return h, err
			}
		}
		t &= 0x0FFFFFFF
	} else {
		switch t / 1000 {
		case 0:
		case 1:
			h.hasZ = true
		case 2:
			hasM = true
		case 3:
			h.hasZ, hasM = true, true
		default:
			return h, fmt.Errorf("unsupported WKB geometry type %d", t)
		}
		t %= 1000
	}
	if t < 1 || t > 7 {
		return h, fmt.Errorf("unsupported WKB geometry type %d (only points, lines, polygons and their collections are read)", t)
	}
	h.base = t
	h.dims = 2
	if h.hasZ {
		h.dims++
	}
	if hasM {
		h.dims++
	}
	return h, nil
}

// count reads an element count and checks that count elements of at least
// minBytes each fit in what is left.
func (r *gpkgWKB) count(little bool, minBytes int, what string) (int, error) {
	n, err := r.uint32(little)
	if err != nil {
		return 0, err
	}
	if uint64(n)*uint64(minBytes) > uint64(len(r.b)) {
		return 0, fmt.Errorf("WKB says %d %s but only %d bytes are left", n, what, len(r.b))
	}
	return int(n), nil
}

func (r *gpkgWKB) geometry(depth int) (orb.Geometry, error) {
	if depth > gpkgMaxDepth {
		return nil, fmt.Errorf("WKB geometry collections nested deeper than %d", gpkgMaxDepth)
	}
	h, err := r.header()
	if err != nil {
		return nil, err
	}
	if !r.zSet {
		r.hasZ, r.zSet = h.hasZ, true
	} else if h.hasZ != r.hasZ {
		return nil, errors.New("WKB mixes parts with and without Z")
	}
	switch h.base {
	case 1:
		if len(r.b) < 8*h.dims {
			return nil, errors.New("WKB truncated in a point")
		}
		p := r.point(h)
		if math.IsNaN(p[0]) && math.IsNaN(p[1]) { // POINT EMPTY
			if h.hasZ {
				r.z = r.z[:len(r.z)-1]
			}
			return nil, nil
		}
		return p, nil
	case 2:
		return r.points(h)
	case 3:
		return r.polygon(h)
	}
	// Multi* and GeometryCollection: parts, each with its own header.
	n, err := r.count(h.little, 5, "parts")
	if err != nil {
		return nil, err
	}
	var parts []orb.Geometry
	for range n {
		g, err := r.geometry(depth + 1)
		if err != nil {
			return nil, err
		}
		parts = append(parts, g)
	}
	return gpkgCollect(h.base, parts)
}

// gpkgCollect builds the Multi* geometry of kind base from parts.
func gpkgCollect(base uint32, parts []orb.Geometry) (orb.Geometry, error) {
	switch base {
	case 4:
		mp := make(orb.MultiPoint, 0, len(parts))
		for _, g := range parts {
			p, ok := g.(orb.Point)
			if !ok {
				return nil, fmt.Errorf("a MultiPoint part is a %s", gpkgTypeName(g))
			}
			mp = append(mp, p)
		}
		return mp, nil
	case 5:
		ml := make(orb.MultiLineString, 0, len(parts))
		for _, g := range parts {
			ls, ok := g.(orb.LineString)
			if !ok {
				return nil, fmt.Errorf("a MultiLineString part is a %s", gpkgTypeName(g))
			}
			ml = append(ml, ls)
		}
		return ml, nil
	case 6:
		mp := make(orb.MultiPolygon, 0, len(parts))
		for _, g := range parts {
			p, ok := g.(orb.Polygon)
			if !ok {
				return nil, fmt.Errorf("a MultiPolygon part is a %s", gpkgTypeName(g))
			}
			mp = append(mp, p)
		}
		return mp, nil
	}
	c := make(orb.Collection, 0, len(parts))
	for _, g := range parts {
		if g != nil {
			c = append(c, g)
		}
	}
	return c, nil
}

func gpkgTypeName(g orb.Geometry) string {
	if g == nil {
		return "empty point"
	}
	return g.GeoJSONType()
}

// point reads one point of h.dims ordinates (the caller checked the length),
// keeping Z and dropping M.
func (r *gpkgWKB) point(h gpkgWKBHeader) orb.Point {
	x, y := r.float(h.little), r.float(h.little)
	if h.hasZ {
		r.z = append(r.z, r.float(h.little))
	}
	if h.dims == 4 || (h.dims == 3 && !h.hasZ) {
		r.float(h.little) // M
	}
	return orb.Point{x, y}
}

func (r *gpkgWKB) points(h gpkgWKBHeader) (orb.LineString, error) {
	n, err := r.count(h.little, 8*h.dims, "points")
	if err != nil {
		return nil, err
	}
	ls := make(orb.LineString, n)
	for i := range ls {
		ls[i] = r.point(h)
	}
	return ls, nil
}

func (r *gpkgWKB) polygon(h gpkgWKBHeader) (orb.Polygon, error) {
	n, err := r.count(h.little, 4, "rings")
	if err != nil {
		return nil, err
	}
	p := make(orb.Polygon, n)
	for i := range p {
		ls, err := r.points(h)
		if err != nil {
			return nil, err
		}
		p[i] = orb.Ring(ls)
	}
	return p, nil
}
