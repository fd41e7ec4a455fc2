package gis

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/paulmach/orb"
)

// gpkgApplicationID is 'GPKG' as a big-endian int32 (OGC 12-128 Req 2).
const gpkgApplicationID = 0x47504B47

// gpkgUserVersion is GeoPackage 1.2.0 (Req 2: MMmmPP).
const gpkgUserVersion = 10200

// gpkgLastChange is the fixed gpkg_contents.last_change we write, so that
// the same layers give the same bytes (the column is required; its format
// is %Y-%m-%dT%H:%M:%fZ, OGC 12-128 Req 15).
const gpkgLastChange = "1970-01-01T00:00:00.000Z"

// gpkgRtreeDefinition is the gpkg_extensions.definition of the R-tree
// spatial index extension of GeoPackage 1.2 (OGC 12-128 Annex F.3).
const gpkgRtreeDefinition = "http://www.geopackage.org/spec120/#extension_rtree"

// gpkgWGS84 is the WKT1 definition of EPSG:4326 as GDAL writes it.
const gpkgWGS84 = `GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AXIS["Latitude",NORTH],AXIS["Longitude",EAST],AUTHORITY["EPSG","4326"]]`

// gpkgSRSRow is a gpkg_spatial_ref_sys row with its description.
type gpkgSRSRow struct {
	SpatialRef
	Description string
}

// gpkgRequiredSRS are the rows every GeoPackage must hold (OGC 12-128
// Req 11): WGS 84 geographic, undefined Cartesian and undefined geographic.
var gpkgRequiredSRS = []gpkgSRSRow{
	{SpatialRef{-1, "Undefined Cartesian SRS", "NONE", -1, "undefined"}, "undefined Cartesian coordinate reference system"},
	{SpatialRef{0, "Undefined geographic SRS", "NONE", 0, "undefined"}, "undefined geographic coordinate reference system"},
	{SpatialRef{4326, "WGS 84 geodetic", "EPSG", 4326, gpkgWGS84}, "longitude/latitude coordinates in decimal degrees on the WGS 84 spheroid"},
}

// The core tables (OGC 12-128 Annex C, table definition SQL).
var gpkgCoreDDL = []string{
	`CREATE TABLE gpkg_spatial_ref_sys (srs_name TEXT NOT NULL, srs_id INTEGER NOT NULL PRIMARY KEY, organization TEXT NOT NULL, organization_coordsys_id INTEGER NOT NULL, definition TEXT NOT NULL, description TEXT)`,
	`CREATE TABLE gpkg_contents (table_name TEXT NOT NULL PRIMARY KEY, data_type TEXT NOT NULL, identifier TEXT UNIQUE, description TEXT DEFAULT '', last_change DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')), min_x DOUBLE, min_y DOUBLE, max_x DOUBLE, max_y DOUBLE, srs_id INTEGER, CONSTRAINT fk_gc_r_srs_id FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys(srs_id))`,
	`CREATE TABLE gpkg_geometry_columns (table_name TEXT NOT NULL, column_name TEXT NOT NULL, geometry_type_name TEXT NOT NULL, srs_id INTEGER NOT NULL, z TINYINT NOT NULL, m TINYINT NOT NULL, CONSTRAINT pk_geom_cols PRIMARY KEY (table_name, column_name), CONSTRAINT uk_gc_table_name UNIQUE (table_name), CONSTRAINT fk_gc_tn FOREIGN KEY (table_name) REFERENCES gpkg_contents(table_name), CONSTRAINT fk_gc_srs FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys (srs_id))`,
	`CREATE TABLE gpkg_extensions (table_name TEXT, column_name TEXT, extension_name TEXT NOT NULL, definition TEXT NOT NULL, scope TEXT NOT NULL, CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name))`,
}

// gpkgRtreeTriggers are the six triggers of the R-tree extension (OGC
// 12-128 Annex F.3, GeoPackage 1.2) with <t>, <c> and <i> for the quoted
// table, geometry column and fid column, and <r> for the quoted rtree table.
var gpkgRtreeTriggers = []string{
	`CREATE TRIGGER <n_insert> AFTER INSERT ON <t> WHEN (new.<c> NOT NULL AND NOT ST_IsEmpty(NEW.<c>)) BEGIN INSERT OR REPLACE INTO <r> VALUES (NEW.<i>, ST_MinX(NEW.<c>), ST_MaxX(NEW.<c>), ST_MinY(NEW.<c>), ST_MaxY(NEW.<c>)); END`,
	`CREATE TRIGGER <n_update1> AFTER UPDATE OF <c> ON <t> WHEN OLD.<i> = NEW.<i> AND (NEW.<c> NOTNULL AND NOT ST_IsEmpty(NEW.<c>)) BEGIN INSERT OR REPLACE INTO <r> VALUES (NEW.<i>, ST_MinX(NEW.<c>), ST_MaxX(NEW.<c>), ST_MinY(NEW.<c>), ST_MaxY(NEW.<c>)); END`,
	`CREATE TRIGGER <n_update2> AFTER UPDATE OF <c> ON <t> WHEN OLD.<i> = NEW.<i> AND (NEW.<c> ISNULL OR ST_IsEmpty(NEW.<c>)) BEGIN DELETE FROM <r> WHERE id = OLD.<i>; END`,
	`CREATE TRIGGER <n_update3> AFTER UPDATE ON <t> WHEN OLD.<i> != NEW.<i> AND (NEW.<c> NOTNULL AND NOT ST_IsEmpty(NEW.<c>)) BEGIN DELETE FROM <r> WHERE id = OLD.<i>; INSERT OR REPLACE INTO <r> VALUES (NEW.<i>, ST_MinX(NEW.<c>), ST_MaxX(NEW.<c>), ST_MinY(NEW.<c>), ST_MaxY(NEW.<c>)); END`,
	`CREATE TRIGGER <n_update4> AFTER UPDATE ON <t> WHEN OLD.<i> != NEW.<i> AND (NEW.<c> ISNULL OR ST_IsEmpty(NEW.<c>)) BEGIN DELETE FROM <r> WHERE id IN (OLD.<i>, NEW.<i>); END`,
	`CREATE TRIGGER <n_delete> AFTER DELETE ON <t> WHEN old.<c> NOT NULL BEGIN DELETE FROM <r> WHERE id = OLD.<i>; END`,
}

const (
	gpkgFidColumn  = "fid"
	gpkgGeomColumn = "geom"
)

// gpkgPlan is one layer ready to write.
type gpkgPlan struct {
	layer    *Layer
	geomType string // geometry_type_name
	promote  bool   // write LineStrings as one-part MultiLineStrings (and points, polygons alike)
}

// WriteGeoPackage writes layers as a GeoPackage 1.2 file at path (OGC
// 12-128), atomically: a temporary file in the same folder, renamed over
// path when complete. Each layer becomes a feature table named Layer.Name
// with an integer primary key "fid" (1, 2, ... in row order), a geometry
// column "geom", and one column per Column, declared TEXT, INTEGER or REAL
// from its Kind. Coordinates are written as given, in srs (the caller
// reprojects); srs gets a gpkg_spatial_ref_sys row beside the required
// rows −1, 0 and 4326 (srs replaces the required row of the same ID unless
// its Definition is empty).
//
// The geometry type of a table is that of its geometries when they are all
// of one type. A table that mixes single and multi geometries of one kind
// (LineString and MultiLineString) is declared multi and its single ones
// are written as one-part multis; any other mixture is declared GEOMETRY.
// A nil or empty geometry, or one with a NaN or infinite coordinate, is
// written as SQL NULL (an EMPTY blob fails GDAL's validator). Values follow
// the column's Kind: NaN and ±Inf are written as NULL, Real values are
// rounded to the column's Decimals as the CSV and GeoJSON writers print
// them, integers and bools go to INTEGER and REAL columns, and any value
// goes to TEXT as its text.
//
// Each table gets gpkg_contents (with the extent of its geometries) and
// gpkg_geometry_columns rows, and an R-tree spatial index (Annex F.3) so
// that viewers draw it fast. The same layers give the same bytes: the
// last_change of every table is written as 1970-01-01T00:00:00.000Z.
func WriteGeoPackage(path string, srs SpatialRef, layers ...*Layer) error {
	file := filepath.Base(path)
	srsRows, err := gpkgSRSRows(srs)
	if err != nil {
		return &FieldError{File: file, Err: err}
	}
	plans, err := gpkgPlanLayers(file, layers)
	if err != nil {
		return err
	}
	return gpkgWriteAtomic(path, func(tmp string) error {
		return gpkgBuild(tmp, file, int32(srs.ID), srsRows, plans)
	})
}

// gpkgSRSRows returns the gpkg_spatial_ref_sys rows to write, by srs_id.
func gpkgSRSRows(srs SpatialRef) ([]gpkgSRSRow, error) {
	if srs.ID < math.MinInt32 || srs.ID > math.MaxInt32 {
		return nil, fmt.Errorf("srs_id %d does not fit the geometry header's int32", srs.ID)
	}
	rows := make([]gpkgSRSRow, 0, 4)
	replaced := false
	for _, r := range gpkgRequiredSRS {
		if r.ID == srs.ID && srs.Definition != "" {
			r = gpkgSRSRow{SpatialRef: srs}
			replaced = true
		}
		rows = append(rows, r)
	}
	if replaced || srs.ID == -1 || srs.ID == 0 || srs.ID == 4326 {
		return rows, nil
	}
	if srs.Name == "" || srs.Organization == "" || srs.Definition == "" {
		return nil, fmt.Errorf("spatial reference %d needs a name, an organization and a definition (WKT); give the layer's CRS, e.g. EPSG:2229", srs.ID)
	}
	return append(rows, gpkgSRSRow{SpatialRef: srs}), nil
}

// gpkgPlanLayers checks names and chooses each table's geometry type.
func gpkgPlanLayers(file string, layers []*Layer) ([]gpkgPlan, error) {
	if len(layers) == 0 {
		return nil, &FieldError{File: file, Err: errors.New("no layers to write")}
	}
	seen := map[string]bool{}
	plans := make([]gpkgPlan, 0, len(layers))
	for _, l := range layers {
		if l == nil {
			return nil, &FieldError{File: file, Err: errors.New("a nil layer")}
		}
		if err := gpkgCheckNames(l, seen); err != nil {
			return nil, &FieldError{File: file, Err: err}
		}
		p := gpkgPlan{layer: l}
		var err error
		if p.geomType, p.promote, err = gpkgLayerType(file, l); err != nil {
			return nil, err
		}
		plans = append(plans, p)
	}
	return plans, nil
}

func gpkgCheckNames(l *Layer, seen map[string]bool) error {
	key := strings.ToLower(l.Name)
	switch {
	case l.Name == "":
		return errors.New("a layer without a name; every table needs one")
	case strings.HasPrefix(key, "gpkg_") || strings.HasPrefix(key, "rtree_") || strings.HasPrefix(key, "sqlite_"):
		return fmt.Errorf("layer name %q starts with a prefix GeoPackage and SQLite reserve (gpkg_, rtree_, sqlite_); choose another", l.Name)
	case seen[key]:
		return fmt.Errorf("two layers named %q (names are compared ignoring case)", l.Name)
	}
	seen[key] = true
	cols := map[string]bool{gpkgFidColumn: true, gpkgGeomColumn: true}
	for _, c := range l.Columns {
		k := strings.ToLower(c.Name)
		switch {
		case c.Name == "":
			return fmt.Errorf("layer %q has a column without a name", l.Name)
		case k == gpkgFidColumn || k == gpkgGeomColumn:
			return fmt.Errorf("layer %q: column name %q is taken by the table's own %s column; rename it", l.Name, c.Name, k)
		case cols[k]:
			return fmt.Errorf("layer %q: two columns named %q (names are compared ignoring case)", l.Name, c.Name)
		}
		cols[k] = true
	}
	return nil
}

// gpkgKind is the GeoPackage type name of a geometry, its multi form, and
// whether it is already multi.
func gpkgKind(g orb.Geometry) (name, multi string, ok bool) {
	switch g.(type) {
	case orb.Point:
		return "POINT", "MULTIPOINT", true
	case orb.MultiPoint:
		return "MULTIPOINT", "MULTIPOINT", true
	case orb.LineString:
		return "LINESTRING", "MULTILINESTRING", true
	case orb.MultiLineString:
		return "MULTILINESTRING", "MULTILINESTRING", true
	case orb.Polygon:
		return "POLYGON", "MULTIPOLYGON", true
	case orb.MultiPolygon:
		return "MULTIPOLYGON", "MULTIPOLYGON", true
	case orb.Collection:
		return "GEOMETRYCOLLECTION", "GEOMETRYCOLLECTION", true
	}
	return "", "", false
}

// gpkgLayerType chooses the table's geometry_type_name (see WriteGeoPackage).
func gpkgLayerType(file string, l *Layer) (string, bool, error) {
	first, firstMulti := "", ""
	mixedKind, mixedMulti := false, false
	rd := l.Reader()
	for i := range l.Len() {
		g := rd.Geometry(i) // not Row: that would box every value of a packed layer
		if g == nil {
			continue
		}
		name, multi, ok := gpkgKind(g)
		if !ok {
			return "", false, &FieldError{File: file, Feature: i + 1, Field: "geometry",
				Err: fmt.Errorf("layer %q: unsupported geometry type %T; GeoPackage output takes points, lines, polygons and their multi forms", l.Name, g)}
		}
		switch {
		case first == "":
			first, firstMulti = name, multi
		case name == first:
		case multi == firstMulti:
			mixedMulti = true
		default:
			mixedKind = true
		}
	}
	switch {
	case first == "" || mixedKind:
		return "GEOMETRY", false, nil
	case mixedMulti:
		return firstMulti, true, nil
	}
	return first, false, nil
}

// gpkgWriteAtomic runs build on a temporary file in path's folder and
// renames it over path; on error the temporary file is removed.
func gpkgWriteAtomic(path string, build func(tmp string) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	tmp := f.Name()
	f.Close()
	defer func() {
		if err != nil {
			os.Remove(tmp)
			os.Remove(tmp + "-journal")
		}
	}()
	if err = build(tmp); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = gpkgSyncFile(tmp); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if d, derr := os.Open(dir); derr == nil { // make the rename durable; best effort
		d.Sync()
		d.Close()
	}
	return nil
}

func gpkgSyncFile(name string) error {
	f, err := os.OpenFile(name, os.O_RDWR, 0)
	if err != nil {
		return err
	}
	if err := f.Chmod(0o644); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// gpkgBuild writes the whole GeoPackage into the empty file tmp in three
// steps: SQLite creates the GeoPackage tables, the empty feature tables
// and their empty R-trees in one transaction on a direct connection
// (sqliteConn); the feature rows and the packed R-trees are then written
// into the closed file as B-tree pages (sqliteTableAppender); and SQLite,
// opening it again, writes each table's gpkg_contents,
// gpkg_geometry_columns and gpkg_extensions rows and its R-tree triggers.
func gpkgBuild(tmp, file string, srsID int32, srsRows []gpkgSRSRow, plans []gpkgPlan) error {
	tables, err := gpkgCreate(tmp, srsRows, plans)
	if err != nil {
		return err
	}
	filled := make([]gpkgFeatures, len(plans))
	for k, p := range plans {
		filled[k] = gpkgFeatures{file: file, srsID: srsID, plan: p}
		if err := filled[k].fill(tmp, tables[k].features); err != nil {
			return err
		}
		if err := gpkgFillRtree(tmp, tables[k].rtree, filled[k].boxes, filled[k].has); err != nil {
			return fmt.Errorf("table %q: %w", p.layer.Name, err)
		}
	}
	return gpkgSQL(tmp, false, func(tx *gpkgTx) error {
		for k := range filled {
			if err := gpkgIndexTable(tx, &filled[k]); err != nil {
				return err
			}
		}
		return nil
	})
}

// gpkgTables are the root pages of a feature table and of its R-tree's
// tables, all empty.
type gpkgTables struct {
	features int64
	rtree    gpkgRtreeTables
}

// gpkgCreate makes the GeoPackage tables and each plan's empty feature
// table and R-tree, and returns their root pages.
func gpkgCreate(tmp string, srsRows []gpkgSRSRow, plans []gpkgPlan) ([]gpkgTables, error) {
	tables := make([]gpkgTables, len(plans))
	err := gpkgSQL(tmp, true, func(tx *gpkgTx) error {
		if err := gpkgWriteCore(tx, srsRows); err != nil {
			return err
		}
		for k, p := range plans {
			var err error
			if tables[k].features, err = gpkgCreateTable(tx, p); err != nil {
				return err
			}
			if tables[k].rtree, err = gpkgCreateRtree(tx, gpkgRtreeName(p.layer.Name)); err != nil {
				return fmt.Errorf("table %q: %w", p.layer.Name, err)
			}
		}
		return nil
	})
	return tables, err
}

// gpkgSQL runs build in one transaction on a direct connection to the
// database file tmp, set up for a bulk load, and closes it; create also
// sets the GeoPackage's application_id and user_version.
func gpkgSQL(tmp string, create bool, build func(tx *gpkgTx) error) (err error) {
	uri, err := gpkgURI(tmp, "")
	if err != nil {
		return err
	}
	c, err := sqliteOpen(uri)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := c.close(); err == nil {
			err = cerr
		}
	}()
	pragmas := []string{
		"PRAGMA journal_mode = MEMORY", // the file is a temporary one until renamed
		"PRAGMA synchronous = OFF",     // it is synced once, when complete
		"PRAGMA cache_size = -65536",   // 64 MiB of page cache: the R-tree load touches its nodes at random
	}
	if create {
		pragmas = append([]string{
			"PRAGMA application_id = " + strconv.Itoa(gpkgApplicationID),
			"PRAGMA user_version = " + strconv.Itoa(gpkgUserVersion),
		}, pragmas...)
	}
	for _, p := range pragmas {
		if err := c.exec(p); err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
	}
	if err := c.exec("BEGIN"); err != nil {
		return err
	}
	defer func() {
		if err != nil {
			c.exec("ROLLBACK")
		}
	}()
	if err := build(&gpkgTx{c: c}); err != nil {
		return err
	}
	return c.exec("COMMIT")
}

func gpkgWriteCore(tx *gpkgTx, srsRows []gpkgSRSRow) error {
	for _, ddl := range gpkgCoreDDL {
		if _, err := tx.Exec(ddl); err != nil {
			return fmt.Errorf("creating the GeoPackage tables: %w", err)
		}
	}
	for _, r := range srsRows {
		var desc any
		if r.Description != "" {
			desc = r.Description
		}
		_, err := tx.Exec(`INSERT INTO gpkg_spatial_ref_sys (srs_name, srs_id, organization, organization_coordsys_id, definition, description) VALUES (?, ?, ?, ?, ?, ?)`,
			r.Name, r.ID, r.Organization, r.OrgID, r.Definition, desc)
		if err != nil {
			return fmt.Errorf("writing spatial reference %d: %w", r.ID, err)
		}
	}
	return nil
}

// gpkgSQLType is the declared type of a column of kind k.
func gpkgSQLType(k Kind) string {
	switch k {
	case Integer:
		return "INTEGER"
	case Real:
		return "REAL"
	}
	return "TEXT"
}

// gpkgCreateTable creates p's feature table, empty, and returns its root
// page.
func gpkgCreateTable(tx *gpkgTx, p gpkgPlan) (int64, error) {
	l := p.layer
	defs := []string{gpkgQuote(gpkgFidColumn) + " INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL", gpkgQuote(gpkgGeomColumn) + " " + p.geomType}
	for _, c := range l.Columns {
		defs = append(defs, gpkgQuote(c.Name)+" "+gpkgSQLType(c.Kind))
	}
	if _, err := tx.Exec("CREATE TABLE " + gpkgQuote(l.Name) + " (" + strings.Join(defs, ", ") + ")"); err != nil {
		return 0, fmt.Errorf("creating table %q: %w", l.Name, err)
	}
	root, err := gpkgRootPage(tx, l.Name)
	if err != nil {
		return 0, fmt.Errorf("table %q: %w", l.Name, err)
	}
	return root, nil
}

// gpkgRootPage is the root page of the table named name.
func gpkgRootPage(tx *gpkgTx, name string) (int64, error) {
	root, null, err := tx.queryInt64("SELECT rootpage FROM sqlite_schema WHERE type = 'table' AND name = " + gpkgLiteral(name))
	if err == nil && null {
		err = errors.New("no root page")
	}
	if err != nil {
		return 0, fmt.Errorf("finding its root page: %w", err)
	}
	return root, nil
}

// gpkgIndexTable checks the rows written into w's table and writes its
// sqlite_sequence, gpkg_contents and gpkg_geometry_columns rows and its
// R-tree.
func gpkgIndexTable(tx *gpkgTx, w *gpkgFeatures) error {
	l, p := w.plan.layer, w.plan
	if err := gpkgCheckFids(tx, l.Name, w.rows); err != nil {
		return &FieldError{File: w.file, Err: fmt.Errorf("layer %q: %w", l.Name, err)}
	}
	if w.rows > 0 { // the AUTOINCREMENT counter SQLite keeps for the table (sqlite.org/autoinc.html)
		if _, err := tx.Exec(`INSERT INTO sqlite_sequence (name, seq) VALUES (?, ?)`, l.Name, int64(w.rows)); err != nil {
			return fmt.Errorf("table %q: sqlite_sequence: %w", l.Name, err)
		}
	}
	var bounds [4]any
	if w.haveExtent {
		bounds = [4]any{w.extent.Min[0], w.extent.Min[1], w.extent.Max[0], w.extent.Max[1]}
	}
	if _, err := tx.Exec(`INSERT INTO gpkg_contents (table_name, data_type, identifier, description, last_change, min_x, min_y, max_x, max_y, srs_id) VALUES (?, 'features', ?, '', ?, ?, ?, ?, ?, ?)`,
		l.Name, l.Name, gpkgLastChange, bounds[0], bounds[1], bounds[2], bounds[3], w.srsID); err != nil {
		return fmt.Errorf("table %q: gpkg_contents: %w", l.Name, err)
	}
	if _, err := tx.Exec(`INSERT INTO gpkg_geometry_columns (table_name, column_name, geometry_type_name, srs_id, z, m) VALUES (?, ?, ?, ?, 0, 0)`,
		l.Name, gpkgGeomColumn, p.geomType, w.srsID); err != nil {
		return fmt.Errorf("table %q: gpkg_geometry_columns: %w", l.Name, err)
	}
	return gpkgWriteRtree(tx, l.Name)
}

// gpkgCheckFids checks, through SQLite, that the table holds n rows keyed
// 1 … n: the largest fid is n (the rows were written with the keys 1, 2,
// … in row order, which the R-tree and the error messages take them to
// be).
func gpkgCheckFids(tx *gpkgTx, table string, n int) error {
	last, null, err := tx.queryInt64("SELECT max(" + gpkgQuote(gpkgFidColumn) + ") FROM " + gpkgQuote(table))
	if err != nil {
		return fmt.Errorf("reading the last fid: %w", err)
	}
	if null {
		last = 0
	}
	if last != int64(n) {
		return fmt.Errorf("%d features written, but the last fid is %d", n, last)
	}
	return nil
}

// gpkgFeatures fills one feature table: each row's geometry blob and
// values go to the table's B-tree (sqliteTableAppender), its envelope to
// the R-tree and the extent.
type gpkgFeatures struct {
	file       string
	srsID      int32
	plan       gpkgPlan
	row        gpkgRow
	out        *sqliteTableAppender
	rows       int         // rows written
	boxes      []orb.Bound // row i's envelope, if has[i]
	has        []bool
	extent     orb.Bound
	haveExtent bool
	blob       []byte // the row's geometry
}

// fill writes every row of w's layer into its table, whose root page is
// root, in the closed database file tmp.
func (w *gpkgFeatures) fill(tmp string, root int64) error {
	l := w.plan.layer
	real := make([]bool, 2+len(l.Columns)) // fid, geom, then the columns
	for j, c := range l.Columns {
		real[2+j] = c.Kind == Real
	}
	out, err := openSQLiteTableAppender(tmp, root, real)
	if err != nil {
		return fmt.Errorf("table %q: %w", l.Name, err)
	}
	w.out, w.row = out, make(gpkgRow, len(real))
	w.boxes, w.has = make([]orb.Bound, l.Len()), make([]bool, l.Len())
	rd := l.Reader()
	for i := range l.Len() {
		if err = w.add(i, rd); err != nil {
			break
		}
	}
	if ferr := out.finish(); err == nil && ferr != nil {
		err = &FieldError{File: w.file, Err: fmt.Errorf("layer %q: %w", l.Name, ferr)}
	}
	return err
}

// add writes row i (0-based; it gets fid i+1), read through rd: packed
// numbers and text unboxed (cell), other values through gpkgBind.
func (w *gpkgFeatures) add(i int, rd *RowReader) error {
	l, row := w.plan.layer, w.row
	if n := rd.width(i); n != len(l.Columns) {
		return &FieldError{File: w.file, Feature: i + 1, Err: fmt.Errorf("layer %q: %d values for %d columns", l.Name, n, len(l.Columns))}
	}
	row.setNull(0) // the fid: an INTEGER PRIMARY KEY is the rowid, stored as NULL
	row.setNull(1)
	if g := gpkgPromote(rd.Geometry(i), w.plan.promote); gpkgWritable(g) {
		w.boxes[i], w.has[i] = g.Bound(), true
		w.blob = gpkgEncodeGeometry(w.blob[:0], w.srsID, g, w.boxes[i])
		row.setBlob(1, w.blob)
		if w.haveExtent {
			w.extent = w.extent.Union(w.boxes[i])
		} else {
			w.extent, w.haveExtent = w.boxes[i], true
		}
	}
	for j, c := range l.Columns {
		if err := w.cell(rd, i, j, c); err != nil {
			return &FieldError{File: w.file, Feature: i + 1, Field: c.Name, Err: fmt.Errorf("layer %q: %w", l.Name, err)}
		}
	}
	if err := w.out.appendRow(row); err != nil {
		return &FieldError{File: w.file, Feature: i + 1, Err: fmt.Errorf("layer %q: %w", l.Name, err)}
	}
	w.rows++
	return nil
}

// gpkgRow is the values of one row, column by column.
type gpkgRow []sqliteValue

func (r gpkgRow) set(j int, v sqliteValue) { r[j] = v }
func (r gpkgRow) setNull(j int)            { r[j] = sqliteValue{} }
func (r gpkgRow) setInt(j int, v int64)    { r[j] = sqliteValue{kind: sqliteInt, i: v} }
func (r gpkgRow) setText(j int, v string)  { r[j] = sqliteValue{kind: sqliteText, s: v} }
func (r gpkgRow) setBlob(j int, b []byte)  { r[j] = sqliteValue{kind: sqliteBlob, b: b} }

// cell stores row i's value of column j as gpkgBind would: the common
// cases of a packed layer (a null, a float in a REAL column, an int in an
// INTEGER column, text in a TEXT column) without boxing them.
func (w *gpkgFeatures) cell(rd *RowReader, i, j int, c Column) error {
	in := w.row
	bits, kind := rd.scalar(i, j)
	switch {
	case kind == packedNone:
		in.setNull(2 + j)
		return nil
	case kind == packedFloat && c.Kind == Real:
		in.set(2+j, gpkgRealValue(c, math.Float64frombits(bits)))
		return nil
	case kind == packedInt && c.Kind == Integer:
		in.setInt(2+j, int64(bits))
		return nil
	}
	if c.Kind == String {
		if s, ok := rd.text(i, j); ok {
			in.setText(2+j, s)
			return nil
		}
	}
	v, err := gpkgBind(c, rd.Value(i, j))
	if err != nil {
		return err
	}
	in.set(2+j, v)
	return nil
}

// gpkgTx is the transaction a GeoPackage is built in, on its connection.
type gpkgTx struct {
	c *sqliteConn
}

// Exec runs one statement with args (sqliteStmt.exec); the first result
// is always 0, so that call sites read like database/sql's.
func (tx *gpkgTx) Exec(query string, args ...any) (int, error) {
	return 0, tx.c.exec(query, args...)
}

// queryInt64 runs a query of one integer (or NULL) result.
func (tx *gpkgTx) queryInt64(query string) (v int64, null bool, err error) {
	return tx.c.queryInt64(query)
}

// gpkgRtreeName is the R-tree of a table's geometry column (OGC 12-128
// Annex F.3: rtree_<t>_<c>).
func gpkgRtreeName(table string) string { return "rtree_" + table + "_" + gpkgGeomColumn }

// gpkgWriteRtree completes the R-tree index of a table, created and filled
// before (gpkgCreateRtree, gpkgFillRtree): the extension row, and the
// triggers that keep it current when other programs edit the file.
func gpkgWriteRtree(tx *gpkgTx, table string) error {
	rtree := gpkgRtreeName(table)
	if _, err := tx.Exec(`INSERT INTO gpkg_extensions (table_name, column_name, extension_name, definition, scope) VALUES (?, ?, 'gpkg_rtree_index', ?, 'write-only')`,
		table, gpkgGeomColumn, gpkgRtreeDefinition); err != nil {
		return fmt.Errorf("table %q: gpkg_extensions: %w", table, err)
	}
	rep := strings.NewReplacer("<t>", gpkgQuote(table), "<c>", gpkgQuote(gpkgGeomColumn), "<i>", gpkgQuote(gpkgFidColumn), "<r>", gpkgQuote(rtree))
	for _, trig := range gpkgRtreeTriggers {
		name := trig[len("CREATE TRIGGER <n_"):strings.Index(trig, "> ")]
		sqlText := "CREATE TRIGGER " + gpkgQuote(rtree+"_"+name) + rep.Replace(trig[strings.Index(trig, "> ")+1:])
		if _, err := tx.Exec(sqlText); err != nil {
			return fmt.Errorf("table %q: spatial index trigger %s: %w", table, name, err)
		}
	}
	return nil
}

// gpkgPromote wraps a single geometry in its multi form when promote is set.
func gpkgPromote(g orb.Geometry, promote bool) orb.Geometry {
	if !promote {
		return g
	}
	switch x := g.(type) {
	case orb.Point:
		return orb.MultiPoint{x}
	case orb.LineString:
		return orb.MultiLineString{x}
	case orb.Polygon:
		return orb.MultiPolygon{x}
	}
	return g
}

// gpkgWritable reports a non-nil, non-empty geometry whose coordinates are
// all finite.
func gpkgWritable(g orb.Geometry) bool {
	if g == nil {
		return false
	}
	n := 0
	ok := true
	EachPoint(g, func(p orb.Point) {
		n++
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			ok = false
		}
	})
	return ok && n > 0
}

// gpkgEncodeGeometry appends the GeoPackage binary geometry of g:
//
//	'G' 'P' 0 flags | srs_id int32 LE | envelope minx, maxx, miny, maxy | ISO WKB (LE)
//
// flags 0x03 (little-endian, XY envelope); points get no envelope (flags
// 0x01), as OGC 12-128 §2.1.3.1.1 allows.
func gpkgEncodeGeometry(buf []byte, srsID int32, g orb.Geometry, box orb.Bound) []byte {
	_, isPoint := g.(orb.Point)
	flags := byte(0x03)
	if isPoint {
		flags = 0x01
	}
	buf = append(buf, 'G', 'P', 0, flags)
	buf = binary.LittleEndian.AppendUint32(buf, uint32(srsID))
	if !isPoint {
		for _, v := range [4]float64{box.Min[0], box.Max[0], box.Min[1], box.Max[1]} {
			buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(v))
		}
	}
	return gpkgAppendWKB(buf, g)
}

// gpkgAppendWKB appends g as little-endian 2-D WKB (OGC 06-103r4 §8.2).
func gpkgAppendWKB(buf []byte, g orb.Geometry) []byte {
	head := func(t uint32) {
		buf = append(buf, 1)
		buf = binary.LittleEndian.AppendUint32(buf, t)
	}
	count := func(n int) { buf = binary.LittleEndian.AppendUint32(buf, uint32(n)) }
	pts := func(ps []orb.Point) {
		count(len(ps))
		for _, p := range ps {
			buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(p[0]))
			buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(p[1]))
		}
	}
	switch x := g.(type) {
	case orb.Point:
		head(1)
		buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(x[0]))
		buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(x[1]))
	case orb.LineString:
		head(2)
		pts(x)
	case orb.Polygon:
		head(3)
		count(len(x))
		for _, r := range x {
			pts(r)
		}
	case orb.MultiPoint:
		head(4)
		count(len(x))
		for _, p := range x {
			buf = gpkgAppendWKB(buf, p)
		}
	case orb.MultiLineString:
		head(5)
		count(len(x))
		for _, ls := range x {
			buf = gpkgAppendWKB(buf, ls)
		}
	case orb.MultiPolygon:
		head(6)
		count(len(x))
		for _, p := range x {
			buf = gpkgAppendWKB(buf, p)
		}
	case orb.Collection:
		head(7)
		count(len(x))
		for _, m := range x {
			buf = gpkgAppendWKB(buf, m)
		}
	}
	return buf
}

// gpkgBind converts a Row value to what is stored in a column of c.Kind
// (see WriteGeoPackage), unboxed; nil is SQL NULL.
func gpkgBind(c Column, v any) (sqliteValue, error) {
	if v == nil {
		return sqliteValue{}, nil
	}
	switch c.Kind {
	case String:
		if s, ok := v.(string); ok {
			return sqliteValue{kind: sqliteText, s: s}, nil
		}
		text, isNull, err := formatValue(nil, c, v)
		if err != nil || isNull {
			return sqliteValue{}, err
		}
		return sqliteValue{kind: sqliteText, s: string(text)}, nil
	case Integer:
		if x, ok := v.(int64); ok {
			return sqliteValue{kind: sqliteInt, i: x}, nil
		}
		x, err := gpkgInteger(v)
		if err != nil || x == nil {
			return sqliteValue{}, err
		}
		return sqliteValue{kind: sqliteInt, i: x.(int64)}, nil
	case Real:
		f, ok, err := gpkgReal(v)
		if err != nil || !ok {
			return sqliteValue{}, err
		}
		return gpkgRealValue(c, f), nil
	}
	return sqliteValue{}, fmt.Errorf("unknown column kind %v", c.Kind)
}

// gpkgRealValue is f as stored in the REAL column c: NULL for NaN and ±Inf,
// else rounded to c.Decimals when that is not negative (gpkgRound).
func gpkgRealValue(c Column, f float64) sqliteValue {
	switch {
	case math.IsNaN(f) || math.IsInf(f, 0):
		return sqliteValue{}
	case c.Decimals >= 0:
		return sqliteValue{kind: sqliteFloat, f: gpkgRound(c, f)}
	}
	return sqliteValue{kind: sqliteFloat, f: f}
}

// gpkgPow10 holds 10^k for k = 0…22, the powers of ten a float64 holds
// exactly (5^22 < 2^53).
var gpkgPow10 = func() (p [23]float64) {
	p[0] = 1
	for k := 1; k < len(p); k++ {
		p[k] = p[k-1] * 10
	}
	return p
}()

// gpkgRound is the finite f rounded to c.Decimals ≥ 0 places as the CSV
// and GeoJSON writers print it, read back: strconv.ParseFloat of
// formatFloat's text. It takes the shortcut the text would, without the
// text, when it can prove the same result; otherwise it formats and parses.
//
// The shortcut (d = c.Decimals ≤ 22, p = 10^d exact): y = f·p rounded to
// a float64 is within |y|·2^-53 of the exact product, so when y's
// fraction is farther than that from ½ the exact product rounds to the
// same integer n = round(y), and n is the number formatFloat prints, as
// n·10^-d (strconv rounds the exact binary value of f correctly). With
// |n| < 2^51 and p exact, the float64 division n/p is correctly rounded,
// the double nearest n·10^-d, which is what ParseFloat returns for the
// text (W. D. Clinger, "How to read floating point numbers accurately",
// PLDI 1990: the fast path strconv itself takes). n = 0 gives +0, as
// formatFloat prints no "-0". The margin used is 4 times that bound.
func gpkgRound(c Column, f float64) float64 {
	if d := c.Decimals; d < len(gpkgPow10) {
		y := float64(f * gpkgPow10[d]) // float64(): rounded here, not fused into what follows
		if a := math.Abs(y); a < 1<<51 {
			frac := a - math.Floor(a) // exact below 2^52
			if math.Abs(frac-0.5) > a*0x1p-51 {
				n := math.Round(y)
				if n == 0 {
					return 0
				}
				return n / gpkgPow10[d]
			}
		}
	}
	text, _, _ := formatFloat(nil, c, f)
	r, _ := strconv.ParseFloat(string(text), 64)
	return r
}

func gpkgInteger(v any) (any, error) {
	switch x := v.(type) {
	case bool:
		if x {
			return int64(1), nil
		}
		return int64(0), nil
	case int:
		return int64(x), nil
	case int8:
		return int64(x), nil
	case int16:
		return int64(x), nil
	case int32:
		return int64(x), nil
	case int64:
		return x, nil
	case uint:
		return gpkgUint(uint64(x))
	case uint32:
		return int64(x), nil
	case uint64:
		return gpkgUint(x)
	case float32, float64:
		f, ok, _ := gpkgReal(v)
		if !ok {
			return nil, nil
		}
		f = math.Round(f)
		if f < -(1<<63) || f >= 1<<63 {
			return nil, fmt.Errorf("%g does not fit an INTEGER column", f)
		}
		return int64(f), nil
	}
	return nil, fmt.Errorf("%T value %v in an integer column", v, v)
}

func gpkgUint(x uint64) (any, error) {
	if x > math.MaxInt64 {
		return nil, fmt.Errorf("%d does not fit an INTEGER column", x)
	}
	return int64(x), nil
}

// gpkgReal returns v as a float64; ok is false for NaN and ±Inf.
func gpkgReal(v any) (f float64, ok bool, err error) {
	switch x := v.(type) {
	case float64:
		f = x
	case float32:
		f = float64(x)
	case bool:
		if x {
			f = 1
		}
	case int, int8, int16, int32, int64, uint, uint32, uint64:
		i, err := gpkgInteger(v)
		if err != nil {
			return 0, false, err
		}
		f = float64(i.(int64))
	default:
		return 0, false, fmt.Errorf("%T value %v in a real column", v, v)
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, false, nil
	}
	return f, true, nil
}

// gpkgLiteral is s as an SQL string literal: in single quotes, each
// single quote doubled.
func gpkgLiteral(s string) string {
	return "'" + strings.ReplaceAll(s, "'", "''") + "'"
}
