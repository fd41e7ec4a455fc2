package gis

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/paulmach/orb"
)

// ShapefileField maps one .dbf field to the Layer column it came from.
// Short is the dbf name (≤ 10 bytes, unique without regard to case) and
// Full the column name; Truncated counts the values of a character field
// that were cut to the 254-byte limit of dBASE III.
type ShapefileField struct {
	Short, Full string
	Truncated   int
}

// dbfWriteDate is the header date of every .dbf we write, 2000-01-01
// (stored as years since 1900, month, day), fixed so that the same layer
// gives the same bytes.
var dbfWriteDate = [3]byte{100, 1, 1}

// WriteShapefile writes l as an ESRI shapefile: path's .shp (path may also
// be the name without extension), .shx, .dbf, .cpg ("UTF-8") and, when prj
// is not "", .prj with prj as its text. Each file is written atomically
// with WriteFileAtomic; all checks run before the first file is written.
//
// The shape type comes from the first non-nil geometry: orb.LineString
// and orb.MultiLineString give PolyLine, orb.Point gives Point; a layer of
// nil geometries only is a Null shapefile. Other geometry types, a mix of
// lines and points, and NaN or infinite coordinates are errors. A nil or
// empty geometry is written as a Null record (shape type 0, 4 bytes);
// empty parts of a MultiLineString are left out. Bounding boxes (the
// file's over its non-null records, and each PolyLine record's) are exact;
// Z and M ranges are 0.
//
// Columns become dbf fields (see dbfPlan): a column whose non-nil values
// are all bool is L; String is C as wide as its longest value in UTF-8
// bytes (at least 1, at most 254; a longer value is cut at a rune
// boundary and counted in Truncated); Integer is N(10,0), wider when a
// value needs it; Real is N(24,Decimals), wider when a value needs it. Nil,
// NaN and ±Inf are written as GDAL writes null: '*' across a numeric
// field, spaces in a character field, '?' in a logical one. Numbers are
// right-aligned and text left-aligned, both padded with spaces. A string
// or bool in an Integer or Real column (other than a column of bools only)
// is an error. Reading back, "" and leading spaces are lost, as with GDAL
// (an all-space field is null and text is trimmed). The header
// date is fixed at 2000-01-01 and the LDID byte is 0, so the .cpg alone
// names the code page. Field names are laundered like GDAL's (see
// shpLaunderNames) and returned, one per column, in column order.
func WriteShapefile(path string, l *Layer, prj string) ([]ShapefileField, error) {
	stem, ext := path, filepath.Ext(path)
	if strings.EqualFold(ext, ".shp") {
		stem = strings.TrimSuffix(path, ext)
	}
	sideExt := func(e string) string {
		if ext == ".SHP" {
			return stem + strings.ToUpper(e)
		}
		return stem + e
	}
	rd := l.Reader()
	for i := range l.Len() {
		r := rd.Row(i)
		if len(r.Values) != len(l.Columns) {
			return nil, fmt.Errorf("gis: layer %q row %d: %d values for %d columns", l.Name, i+1, len(r.Values), len(l.Columns))
		}
	}
	recs, err := shpPlan(l)
	if err != nil {
		return nil, err
	}
	plan, names, err := dbfPlan(l)
	if err != nil {
		return nil, err
	}
	if err := WriteFileAtomic(sideExt(".shp"), func(w io.Writer) error { return shpWriteMain(w, l, recs) }); err != nil {
		return nil, err
	}
	if err := WriteFileAtomic(sideExt(".shx"), func(w io.Writer) error { return shpWriteIndex(w, recs) }); err != nil {
		return nil, err
	}
	if err := WriteFileAtomic(sideExt(".dbf"), func(w io.Writer) error { return dbfWrite(w, l, plan) }); err != nil {
		return nil, err
	}
	if err := WriteFileAtomic(sideExt(".cpg"), func(w io.Writer) error { _, err := io.WriteString(w, "UTF-8"); return err }); err != nil {
		return nil, err
	}
	if prj != "" {
		if err := WriteFileAtomic(sideExt(".prj"), func(w io.Writer) error { _, err := io.WriteString(w, prj); return err }); err != nil {
			return nil, err
		}
	}
	return names, nil
}

// shpRecords is the first pass over the geometries: the file's shape type,
// each record's content length in bytes and the file's bounding box.
type shpRecords struct {
	shapeType int
	lengths   []int64
	total     int64 // file length in bytes
	box       orb.Bound
	hasBox    bool
}

// shpPlan chooses the shape type and measures every record.
func shpPlan(l *Layer) (*shpRecords, error) {
	p := &shpRecords{shapeType: shpNull, lengths: make([]int64, l.Len()), total: shpHeaderSize}
	rd := l.Reader()
	for i := range l.Len() {
		r := rd.Row(i)
		t := shpNull
		switch g := r.Geometry.(type) {
		case nil:
		case orb.Point:
			t = shpPoint
		case orb.LineString, orb.MultiLineString:
			t = shpPolyLine
		default:
			return nil, fmt.Errorf("gis: layer %q row %d: a shapefile cannot hold %T geometry here (only LineString, MultiLineString and Point)", l.Name, i+1, g)
		}
		if t != shpNull {
			if p.shapeType == shpNull {
				p.shapeType = t
			} else if t != p.shapeType {
				return nil, fmt.Errorf("gis: layer %q row %d: %s geometry in a layer of %s: a shapefile holds one shape type", l.Name, i+1, shpTypeName(t), shpTypeName(p.shapeType))
			}
		}
		parts, n := shpParts(r.Geometry)
		for _, ls := range parts {
			for _, q := range ls {
				if !shpFinite(q) {
					return nil, fmt.Errorf("gis: layer %q row %d: %w", l.Name, i+1, errBadCoordinate)
				}
				if !p.hasBox {
					p.box, p.hasBox = orb.Bound{Min: q, Max: q}, true
				}
				p.box = p.box.Extend(q)
			}
		}
		switch {
		case n == 0:
			p.lengths[i] = 4
		case t == shpPoint:
			p.lengths[i] = 20
		default:
			p.lengths[i] = 44 + 4*int64(len(parts)) + 16*int64(n)
		}
		p.total += shpRecHeaderSize + p.lengths[i]
	}
	if p.total/2 > math.MaxInt32 {
		return nil, fmt.Errorf("gis: layer %q: the .shp would be %d bytes, over the format's limit of 4 GiB: write GeoPackage instead", l.Name, p.total)
	}
	return p, nil
}

// shpParts returns the non-empty parts of g and their number of points; a
// Point is one part of one point.
func shpParts(g orb.Geometry) ([]orb.LineString, int) {
	var parts []orb.LineString
	switch x := g.(type) {
	case orb.Point:
		parts = []orb.LineString{{x}}
	case orb.LineString:
		parts = []orb.LineString{x}
	case orb.MultiLineString:
		parts = x
	}
	out := parts[:0:0]
	n := 0
	for _, ls := range parts {
		if len(ls) > 0 {
			out = append(out, ls)
			n += len(ls)
		}
	}
	return out, n
}

// shpAppendHeader appends the 100-byte main/index file header.
func shpAppendHeader(b []byte, lengthBytes int64, p *shpRecords) []byte {
	b = binary.BigEndian.AppendUint32(b, shpFileCode)
	b = append(b, make([]byte, 20)...)
	b = binary.BigEndian.AppendUint32(b, uint32(lengthBytes/2))
	b = binary.LittleEndian.AppendUint32(b, shpVersion)
	b = binary.LittleEndian.AppendUint32(b, uint32(p.shapeType))
	for _, v := range [4]float64{p.box.Min[0], p.box.Min[1], p.box.Max[0], p.box.Max[1]} {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
	}
	return append(b, make([]byte, 32)...) // Z and M ranges
}

func shpAppendFloat(b []byte, v float64) []byte {
	return binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
}

// shpWriteMain writes the .shp.
func shpWriteMain(w io.Writer, l *Layer, p *shpRecords) error {
	bw := bufio.NewWriterSize(w, 1<<20)
	b := shpAppendHeader(make([]byte, 0, 4096), p.total, p)
	rd := l.Reader()
	for i := range l.Len() {
		r := rd.Row(i)
		b = binary.BigEndian.AppendUint32(b, uint32(i+1))
		b = binary.BigEndian.AppendUint32(b, uint32(p.lengths[i]/2))
		parts, n := shpParts(r.Geometry)
		switch {
		case n == 0:
			b = binary.LittleEndian.AppendUint32(b, shpNull)
		case p.shapeType == shpPoint:
			b = binary.LittleEndian.AppendUint32(b, shpPoint)
			b = shpAppendFloat(shpAppendFloat(b, parts[0][0][0]), parts[0][0][1])
		default:
			box := orb.Bound{Min: parts[0][0], Max: parts[0][0]}
			for _, ls := range parts {
				box = box.Union(ls.Bound())
			}
			b = binary.LittleEndian.AppendUint32(b, shpPolyLine)
			for _, v := range [4]float64{box.Min[0], box.Min[1], box.Max[0], box.Max[1]} {
				b = shpAppendFloat(b, v)
			}
			b = binary.LittleEndian.AppendUint32(b, uint32(len(parts)))
			b = binary.LittleEndian.AppendUint32(b, uint32(n))
			start := 0
			for _, ls := range parts {
				b = binary.LittleEndian.AppendUint32(b, uint32(start))
				start += len(ls)
			}
			for _, ls := range parts {
				for _, q := range ls {
					b = shpAppendFloat(shpAppendFloat(b, q[0]), q[1])
				}
			}
		}
		if _, err := bw.Write(b); err != nil {
			return err
		}
		b = b[:0]
	}
	return bw.Flush()
}

// shpWriteIndex writes the .shx: the header and each record's offset and
// content length in 16-bit words.
func shpWriteIndex(w io.Writer, p *shpRecords) error {
	b := shpAppendHeader(make([]byte, 0, shpHeaderSize+shxEntrySize*len(p.lengths)), shpHeaderSize+shxEntrySize*int64(len(p.lengths)), p)
	off := int64(shpHeaderSize)
	for _, n := range p.lengths {
		b = binary.BigEndian.AppendUint32(b, uint32(off/2))
		b = binary.BigEndian.AppendUint32(b, uint32(n/2))
		off += shpRecHeaderSize + n
	}
	_, err := w.Write(b)
	return err
}

// dbfColumn is the plan for one column: its field and how values are
// turned into text.
type dbfColumn struct {
	field   DBFField
	fixed   int // digits after the point for Real values; -1 for the shortest form
	maxRune int // for C fields: byte limit for a value
}

// ShapefileFieldNames returns the dbf field names WriteShapefile gives l's
// columns, one per column in column order (see shpLaunderNames), with
// Truncated 0: the names depend on the column names alone, so they can be
// known before, or while, the shapefile is written.
func ShapefileFieldNames(l *Layer) ([]ShapefileField, error) {
	full := make([]string, len(l.Columns))
	for j, c := range l.Columns {
		full[j] = c.Name
	}
	short, err := shpLaunderNames(full)
	if err != nil {
		return nil, fmt.Errorf("gis: layer %q: %w", l.Name, err)
	}
	names := make([]ShapefileField, len(l.Columns))
	for j := range l.Columns {
		names[j] = ShapefileField{Short: short[j], Full: l.Columns[j].Name}
	}
	return names, nil
}

// dbfPlan chooses each column's dbf field (type, width, decimals) from the
// column kind and the values, and launders the names.
func dbfPlan(l *Layer) ([]dbfColumn, []ShapefileField, error) {
	full := make([]string, len(l.Columns))
	for j, c := range l.Columns {
		full[j] = c.Name
	}
	short, err := shpLaunderNames(full)
	if err != nil {
		return nil, nil, fmt.Errorf("gis: layer %q: %w", l.Name, err)
	}
	plan := make([]dbfColumn, len(l.Columns))
	names := make([]ShapefileField, len(l.Columns))
	recordLen := 1
	for j, c := range l.Columns {
		names[j] = ShapefileField{Short: short[j], Full: c.Name}
		col := dbfColumn{field: DBFField{Name: short[j]}, fixed: c.Decimals}
		allBool, seen := true, false
		rd := l.Reader()
		for i := range l.Len() {
			r := rd.Row(i)
			if v := r.Values[j]; v != nil {
				seen = true
				if _, ok := v.(bool); !ok {
					allBool = false
				}
			}
		}
		switch {
		case seen && allBool:
			col.field.Type, col.field.Length = 'L', 1
		case c.Kind == String:
			col.field.Type, col.field.Length = 'C', 1
			rd := l.Reader()
			for i := range l.Len() {
				r := rd.Row(i)
				s, isNull, err := formatValue(nil, c, r.Values[j])
				if err != nil {
					return nil, nil, fmt.Errorf("gis: layer %q column %q: %w", l.Name, c.Name, err)
				}
				if isNull {
					continue
				}
				if len(s) > dbfMaxWidth {
					names[j].Truncated++
				}
				col.field.Length = max(col.field.Length, min(len(s), dbfMaxWidth))
			}
		default:
			col.field.Type, col.field.Length = 'N', 10
			if c.Kind == Real {
				col.field.Length = 24
				col.field.Decimals = max(c.Decimals, 0)
			}
			maxFrac := 0
			rd := l.Reader()
			for i := range l.Len() {
				r := rd.Row(i)
				s, err := dbfNumber(nil, c, r.Values[j])
				if err != nil {
					return nil, nil, fmt.Errorf("gis: layer %q row %d column %q: %w", l.Name, i+1, c.Name, err)
				}
				if dot := strings.IndexByte(string(s), '.'); dot >= 0 {
					maxFrac = max(maxFrac, len(s)-dot-1)
				}
				col.field.Length = max(col.field.Length, len(s))
			}
			if c.Kind == Real && c.Decimals < 0 {
				col.field.Decimals = min(max(maxFrac, 1), 15)
			}
			if col.field.Length > dbfMaxWidth {
				return nil, nil, fmt.Errorf("gis: layer %q column %q: a value needs %d characters, more than a .dbf number can hold (%d)", l.Name, c.Name, col.field.Length, dbfMaxWidth)
			}
			col.field.Decimals = min(col.field.Decimals, col.field.Length-1, 255)
		}
		recordLen += col.field.Length
		plan[j] = col
	}
	if recordLen > math.MaxUint16 || dbfHeaderSize+dbfDescriptorSize*len(plan)+1 > math.MaxUint16 {
		return nil, nil, fmt.Errorf("gis: layer %q: %d columns of %d bytes in all are more than a .dbf can hold: write GeoPackage instead", l.Name, len(plan), recordLen)
	}
	return plan, names, nil
}

// dbfNumber appends the text of a numeric value, or nothing for null. An
// Integer column is written with no decimals; a Real column with its
// Decimals ('f' format), or the shortest form that reads back exactly
// when Decimals is negative (never an exponent).
func dbfNumber(b []byte, c Column, v any) ([]byte, error) {
	switch x := v.(type) {
	case nil:
		return b, nil
	case string, bool:
		return b, fmt.Errorf("%T value %v in a numeric column", v, v)
	case float64:
		if c.Kind == Real && c.Decimals < 0 && !math.IsNaN(x) && !math.IsInf(x, 0) {
			if x == 0 {
				x = 0 // no "-0"
			}
			return strconv.AppendFloat(b, x, 'f', -1, 64), nil
		}
	case float32:
		return dbfNumber(b, c, float64(x))
	}
	s, _, err := formatValue(b, c, v)
	return s, err
}

// shpLaunderNames makes dbf field names the way GDAL's shapefile driver
// does (ogrshapelayer.cpp, CreateField, checked against ogr2ogr 3.6.2 in
// TestShapefileLaunderGDAL): a name is cut to 10 bytes (here at a rune
// boundary); a name already taken (compared without regard to case) is
// replaced by its first 8 bytes + "_" + one digit (1…9), then its first 7
// bytes + "_" + two digits (10…99). An empty name becomes "FIELD".
func shpLaunderNames(full []string) ([]string, error) {
	taken := make(map[string]bool, len(full))
	out := make([]string, len(full))
	for j, name := range full {
		name = strings.TrimSpace(name)
		if name == "" {
			name = "FIELD"
		}
		radix := shpCut(name, 10)
		cand := radix
		for k := 1; taken[strings.ToUpper(cand)]; k++ {
			switch {
			case k < 10:
				cand = fmt.Sprintf("%s_%d", shpCut(radix, 8), k)
			case k < 100:
				cand = fmt.Sprintf("%s_%02d", shpCut(radix, 7), k)
			default:
				return nil, fmt.Errorf("column %q: more than 99 columns share its first 10 characters; rename them", full[j])
			}
		}
		taken[strings.ToUpper(cand)] = true
		out[j] = cand
	}
	return out, nil
}

// shpCut returns the longest prefix of s of at most n bytes that ends on a
// rune boundary.
func shpCut(s string, n int) string {
	if len(s) <= n {
		return s
	}
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n]
}

// dbfWrite writes the .dbf for l with the planned fields.
func dbfWrite(w io.Writer, l *Layer, plan []dbfColumn) error {
	bw := bufio.NewWriterSize(w, 1<<20)
	recordLen := 1
	for _, c := range plan {
		recordLen += c.field.Length
	}
	headerLen := dbfHeaderSize + dbfDescriptorSize*len(plan) + 1
	h := make([]byte, dbfHeaderSize, headerLen)
	h[0] = 0x03 // dBASE III without memo
	copy(h[1:4], dbfWriteDate[:])
	binary.LittleEndian.PutUint32(h[4:8], uint32(l.Len()))
	binary.LittleEndian.PutUint16(h[8:10], uint16(headerLen))
	binary.LittleEndian.PutUint16(h[10:12], uint16(recordLen))
	// h[29], the LDID, stays 0: the .cpg names the code page.
	for _, c := range plan {
		d := make([]byte, dbfDescriptorSize)
		copy(d[:10], c.field.Name)
		d[11] = c.field.Type
		d[16] = byte(c.field.Length)
		d[17] = byte(c.field.Decimals)
		h = append(h, d...)
	}
	h = append(h, dbfTerminator)
	if _, err := bw.Write(h); err != nil {
		return err
	}
	rec := make([]byte, 0, recordLen)
	var val []byte
	rd := l.Reader()
	for i := range l.Len() {
		r := rd.Row(i)
		rec = append(rec[:0], ' ')
		for j, c := range plan {
			col := l.Columns[j]
			v := r.Values[j]
			width := c.field.Length
			switch c.field.Type {
			case 'L':
				switch v {
				case true:
					rec = append(rec, 'T')
				case false:
					rec = append(rec, 'F')
				default:
					rec = append(rec, '?')
				}
			case 'C':
				s, isNull, err := formatValue(val[:0], col, v)
				if err != nil {
					return fmt.Errorf("gis: layer %q row %d column %q: %w", l.Name, i+1, col.Name, err)
				}
				val = s
				if isNull {
					s = s[:0]
				}
				s = []byte(shpCut(string(s), width))
				rec = append(rec, s...)
				rec = append(rec, strings.Repeat(" ", width-len(s))...)
			default:
				s, err := dbfNumber(val[:0], col, v)
				if err != nil {
					return fmt.Errorf("gis: layer %q row %d column %q: %w", l.Name, i+1, col.Name, err)
				}
				val = s
				if len(s) == 0 {
					rec = append(rec, strings.Repeat("*", width)...)
				} else {
					rec = append(rec, strings.Repeat(" ", width-len(s))...)
					rec = append(rec, s...)
				}
			}
		}
		if _, err := bw.Write(rec); err != nil {
			return err
		}
	}
	if err := bw.WriteByte(dbfEOF); err != nil {
		return err
	}
	return bw.Flush()
}
