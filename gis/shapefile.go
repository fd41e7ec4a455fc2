package gis

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

// ShapefileLayer is a shapefile as read: features in the file's own coordinates.
//
// Records flagged deleted in the .dbf are kept, so that feature i is always
// record i of the .shp, .shx and .dbf (and error messages that say
// "feature N" point at record N); their 1-based numbers are listed in
// Deleted. GDAL leaves such records out when it reads a layer; a caller that
// wants GDAL's view drops them.
type ShapefileLayer struct {
	Features *geojson.FeatureCollection // one Feature per record, in record order; geometry orb.LineString /
	// orb.MultiLineString (parts) / orb.Point / nil for Null shapes;
	// properties: string, float64, int64, bool, or nil (dbf null)
	Z         [][]float64 // per feature, Z per vertex in order (PolyLineZ / PointZ), nil when the file has no Z
	ShapeType string      // "Point", "PolyLine", "PolyLineZ", "PointZ", "PolyLineM", "PointM", "Null"
	PRJ       string      // text of the .prj (BOM and surrounding space trimmed), "" when there is none
	Encoding  string      // code page used for text: "UTF-8", "windows-1252", "ISO-8859-1", ...
	Fields    []DBFField  // in file order
	Deleted   []int       // 1-based numbers of the records the .dbf flags deleted ('*'), ascending
}

// Shape type codes of the ESRI Shapefile Technical Description (ESRI,
// July 1998), Table 1.
const (
	shpNull        = 0
	shpPoint       = 1
	shpPolyLine    = 3
	shpPolygon     = 5
	shpMultiPoint  = 8
	shpPointZ      = 11
	shpPolyLineZ   = 13
	shpPolygonZ    = 15
	shpMultiPointZ = 18
	shpPointM      = 21
	shpPolyLineM   = 23
	shpPolygonM    = 25
	shpMultiPointM = 28
	shpMultiPatch  = 31
)

// shpTypeNames names the shape type codes as the technical description does.
var shpTypeNames = map[int]string{
	shpNull: "Null", shpPoint: "Point", shpPolyLine: "PolyLine", shpPolygon: "Polygon",
	shpMultiPoint: "MultiPoint", shpPointZ: "PointZ", shpPolyLineZ: "PolyLineZ", shpPolygonZ: "PolygonZ",
	shpMultiPointZ: "MultiPointZ", shpPointM: "PointM", shpPolyLineM: "PolyLineM", shpPolygonM: "PolygonM",
	shpMultiPointM: "MultiPointM", shpMultiPatch: "MultiPatch",
}

func shpTypeName(t int) string {
	if s, ok := shpTypeNames[t]; ok {
		return s
	}
	return fmt.Sprintf("unknown (%d)", t)
}

// File layout (technical description, "Organization of the Main File"):
// a 100-byte header (file code 9994 and file length in 16-bit words, big
// endian at 0 and 24; version 1000 and shape type, little endian at 28 and
// 32; bounding box Xmin Ymin Xmax Ymax Zmin Zmax Mmin Mmax, little-endian
// doubles from 36), then records of an 8-byte big-endian header (record
// number, content length in words) and the content. The .shx has the same
// header followed by one 8-byte big-endian (offset, content length) pair
// per record, both in words.
const (
	shpHeaderSize    = 100
	shpRecHeaderSize = 8
	shpFileCode      = 9994
	shpVersion       = 1000
	shxEntrySize     = 8
)

// shpInput is what shpDecode reads: the three parts and the texts of the
// small sidecar files. Names are base names, used in errors.
type shpInput struct {
	shpName, shxName, dbfName string
	shp                       io.Reader
	shpSize                   int64
	shx                       []byte
	dbf                       io.Reader
	dbfSize                   int64
	cpg                       string
	hasCPG                    bool
	prj                       string
}

// ReadShapefile reads the shapefile at path (the .shp, or its name without
// extension) with its .shx, .dbf and, when present, .prj and .cpg. The
// sibling files are found case-insensitively (pipes.SHP with pipes.dbf).
//
// The .shp and .dbf are read once, sequentially, through 1 MiB buffers;
// only the .shx (8 bytes a record) is held whole. Every count in the file
// (file length, content length, NumParts, NumPoints, dbf header and record
// lengths) is checked against the record and the file length before
// anything is allocated from it, and the .shx offsets and content lengths
// must agree with the .shp's records. Shape types read: Null, Point,
// PolyLine and their Z and M forms; M values are dropped. Text is decoded
// from the code page named by the .cpg, else by the .dbf's LDID byte (see
// dbfEncoding); with neither (LDID 0), UTF-8 is assumed and a value that
// is not valid UTF-8 is read as windows-1252. Values follow GDAL's null
// conventions (see dbfValue). Errors are *FieldError with File set to the part at fault
// and Feature to the 1-based record number.
func ReadShapefile(path string) (*ShapefileLayer, error) {
	shpPath, err := shpMainPath(path)
	if err != nil {
		return nil, err
	}
	dir := filepath.Dir(shpPath)
	stem := strings.TrimSuffix(filepath.Base(shpPath), filepath.Ext(shpPath))
	in := shpInput{shpName: filepath.Base(shpPath)}

	f, err := os.Open(shpPath)
	if err != nil {
		return nil, &FieldError{File: in.shpName, Err: fmt.Errorf("opening the .shp: %w", err)}
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, &FieldError{File: in.shpName, Err: err}
	}
	in.shp, in.shpSize = f, st.Size()

	shxPath, ok := shpSibling(dir, stem, ".shx")
	if !ok {
		return nil, &FieldError{File: in.shpName, Err: errors.New("the .shx is missing: copy it beside the .shp " +
			"(headroom checks every record against it), or rebuild it with GDAL: ogrinfo --config SHAPE_RESTORE_SHX YES " + in.shpName)}
	}
	in.shxName = filepath.Base(shxPath)
	if in.shx, err = os.ReadFile(shxPath); err != nil {
		return nil, &FieldError{File: in.shxName, Err: err}
	}

	dbfPath, ok := shpSibling(dir, stem, ".dbf")
	if !ok {
		return nil, &FieldError{File: in.shpName, Err: errors.New("the .dbf is missing: copy it beside the .shp (it holds the attributes)")}
	}
	in.dbfName = filepath.Base(dbfPath)
	df, err := os.Open(dbfPath)
	if err != nil {
		return nil, &FieldError{File: in.dbfName, Err: fmt.Errorf("opening the .dbf: %w", err)}
	}
	defer df.Close()
	if st, err = df.Stat(); err != nil {
		return nil, &FieldError{File: in.dbfName, Err: err}
	}
	in.dbf, in.dbfSize = df, st.Size()

	if p, ok := shpSibling(dir, stem, ".cpg"); ok {
		b, err := os.ReadFile(p)
		if err != nil {
			return nil, &FieldError{File: filepath.Base(p), Err: err}
		}
		in.cpg, in.hasCPG = string(b), true
	}
	if p, ok := shpSibling(dir, stem, ".prj"); ok {
		b, err := os.ReadFile(p)
		if err != nil {
			return nil, &FieldError{File: filepath.Base(p), Err: err}
		}
		in.prj = strings.TrimSpace(strings.TrimPrefix(string(b), "\ufeff"))
	}
	return shpDecode(in)
}

// shpMainPath finds the .shp for path: path itself when it exists, else
// path's stem with a .shp extension in any case.
func shpMainPath(path string) (string, error) {
	if st, err := os.Stat(path); err == nil && !st.IsDir() {
		return path, nil
	}
	stem := path
	if strings.EqualFold(filepath.Ext(path), ".shp") {
		stem = strings.TrimSuffix(path, filepath.Ext(path))
	}
	if p, ok := shpSibling(filepath.Dir(stem), filepath.Base(stem), ".shp"); ok {
		return p, nil
	}
	return "", &FieldError{File: filepath.Base(path), Err: fmt.Errorf("no such shapefile: %w", fs.ErrNotExist)}
}

// shpSibling returns dir/stem+ext, matching the whole name without regard
// to case when the exact name does not exist. Of several case variants the
// first in directory order (sorted by name) is taken.
func shpSibling(dir, stem, ext string) (string, bool) {
	exact := filepath.Join(dir, stem+ext)
	if st, err := os.Stat(exact); err == nil && !st.IsDir() {
		return exact, true
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return "", false
	}
	for _, e := range entries {
		if !e.IsDir() && strings.EqualFold(e.Name(), stem+ext) {
			return filepath.Join(dir, e.Name()), true
		}
	}
	return "", false
}

// shpHeader is the part of the 100-byte header that the reader uses.
type shpHeader struct {
	shapeType int
	length    int64 // file length in bytes, from the header
}

// shpParseHeader checks a .shp or .shx header against the file's real size.
func shpParseHeader(b []byte, size int64, part string) (shpHeader, error) {
	var h shpHeader
	if len(b) < shpHeaderSize {
		return h, fmt.Errorf("the %s is %d bytes, shorter than the 100-byte shapefile header: copy it again from its source", part, len(b))
	}
	if code := int32(binary.BigEndian.Uint32(b[0:4])); code != shpFileCode {
		return h, fmt.Errorf("the %s does not start with the shapefile file code 9994 (it has %d): it is not a shapefile part", part, code)
	}
	h.length = 2 * int64(binary.BigEndian.Uint32(b[24:28]))
	h.shapeType = int(int32(binary.LittleEndian.Uint32(b[32:36])))
	if h.length < shpHeaderSize {
		return h, fmt.Errorf("the %s header gives a file length of %d bytes, less than the header itself: the file is damaged", part, h.length)
	}
	if h.length > size {
		return h, fmt.Errorf("the %s is truncated: its header says %d bytes, the file has %d: copy it again from its source", part, h.length, size)
	}
	return h, nil
}

// shpDecode reads the parts in in.
func shpDecode(in shpInput) (*ShapefileLayer, error) {
	shpErr := func(rec int, err error) error { return &FieldError{File: in.shpName, Feature: rec, Err: err} }
	br := bufio.NewReaderSize(in.shp, 1<<20)
	head := make([]byte, shpHeaderSize)
	n, _ := io.ReadFull(br, head)
	h, err := shpParseHeader(head[:n], in.shpSize, ".shp")
	if err != nil {
		return nil, shpErr(0, err)
	}
	switch h.shapeType {
	case shpNull, shpPoint, shpPolyLine, shpPointZ, shpPolyLineZ, shpPointM, shpPolyLineM:
	default:
		return nil, shpErr(0, fmt.Errorf("shape type %s is not read by headroom: pipes must be PolyLine (or PolyLineZ/M) and points Point (or PointZ/M); convert the layer with ogr2ogr", shpTypeName(h.shapeType)))
	}
	if _, err := shpParseHeader(in.shx, int64(len(in.shx)), ".shx"); err != nil {
		return nil, &FieldError{File: in.shxName, Err: err}
	}
	if (len(in.shx)-shpHeaderSize)%shxEntrySize != 0 {
		return nil, &FieldError{File: in.shxName, Err: fmt.Errorf("the .shx is %d bytes, not 100 plus 8 per record: it is truncated or damaged; copy it again or rebuild it with GDAL (SHAPE_RESTORE_SHX)", len(in.shx))}
	}
	count := (len(in.shx) - shpHeaderSize) / shxEntrySize

	hasZ := h.shapeType == shpPointZ || h.shapeType == shpPolyLineZ
	l := &ShapefileLayer{Features: geojson.NewFeatureCollection(), ShapeType: shpTypeName(h.shapeType), PRJ: in.prj}
	if hasZ {
		l.Z = make([][]float64, 0, min(count, 1<<16))
	}
	geoms := make([]orb.Geometry, 0, min(count, 1<<16))
	pos := int64(shpHeaderSize)
	var content []byte
	var rh [shpRecHeaderSize]byte
	for i := 0; i < count; i++ {
		rec := i + 1
		e := in.shx[shpHeaderSize+shxEntrySize*i:]
		off := 2 * int64(binary.BigEndian.Uint32(e[0:4]))
		shxLen := 2 * int64(binary.BigEndian.Uint32(e[4:8]))
		if off < pos {
			return nil, &FieldError{File: in.shxName, Feature: rec, Err: fmt.Errorf("the .shx puts record %d at byte %d, inside the record before it (which ends at byte %d): the .shx does not match the .shp; copy the matching one or rebuild it with GDAL (SHAPE_RESTORE_SHX)", rec, off, pos)}
		}
		if off+shpRecHeaderSize > h.length {
			return nil, shpErr(rec, fmt.Errorf("the .shp is truncated: the .shx puts record %d at byte %d but the .shp ends at byte %d; copy it again from its source", rec, off, h.length))
		}
		if off > pos { // a gap between records, which the .shx allows
			if _, err := io.CopyN(io.Discard, br, off-pos); err != nil {
				return nil, shpErr(rec, fmt.Errorf("the .shp ends before record %d: copy it again from its source", rec))
			}
		}
		if _, err := io.ReadFull(br, rh[:]); err != nil {
			return nil, shpErr(rec, fmt.Errorf("the .shp ends inside the header of record %d: copy it again from its source", rec))
		}
		clen := 2 * int64(binary.BigEndian.Uint32(rh[4:8]))
		if clen != shxLen {
			return nil, shpErr(rec, fmt.Errorf("record %d is %d bytes long in the .shp but %d in the .shx: the .shx does not match the .shp; copy the matching one or rebuild it with GDAL (SHAPE_RESTORE_SHX)", rec, clen, shxLen))
		}
		if end := off + shpRecHeaderSize + clen; end > h.length {
			return nil, shpErr(rec, fmt.Errorf("record %d claims %d bytes of content, running to byte %d, past the end of the .shp at byte %d: the file is truncated or damaged", rec, clen, end, h.length))
		}
		if clen < 4 {
			return nil, shpErr(rec, fmt.Errorf("record %d has content length %d, too short for its shape type: the .shp is damaged", rec, clen))
		}
		if int64(cap(content)) < clen {
			content = make([]byte, clen)
		}
		content = content[:clen]
		if _, err := io.ReadFull(br, content); err != nil {
			return nil, shpErr(rec, fmt.Errorf("the .shp ends inside record %d: copy it again from its source", rec))
		}
		pos = off + shpRecHeaderSize + clen
		g, z, err := shpParseRecord(content, h.shapeType, rec)
		if err != nil {
			return nil, shpErr(rec, err)
		}
		geoms = append(geoms, g)
		if hasZ {
			l.Z = append(l.Z, z)
		}
	}
	if pos+shpRecHeaderSize <= h.length {
		return nil, shpErr(0, fmt.Errorf("the .shp holds more records than the %d its .shx lists: the .shx does not match the .shp; copy the matching one or rebuild it with GDAL (SHAPE_RESTORE_SHX)", count))
	}

	t, err := readDBF(in.dbf, in.dbfSize, in.dbfName, in.cpg, in.hasCPG)
	if err != nil {
		return nil, err
	}
	if len(t.rows) != count {
		return nil, &FieldError{File: in.dbfName, Err: fmt.Errorf("the .dbf has %d records but the .shp has %d: the parts come from different versions of the layer; copy all of them again from one source", len(t.rows), count)}
	}
	l.Encoding, l.Fields, l.Deleted = t.encoding, t.fields, t.deleted
	for i, g := range geoms {
		f := geojson.NewFeature(g)
		for j, fd := range t.fields {
			f.Properties[fd.Name] = t.rows[i][j]
		}
		l.Features.Append(f)
	}
	return l, nil
}

// shpParseRecord decodes one record's content (after the 8-byte record
// header). Layouts, from the technical description (byte offsets within
// the content, little endian):
//
//	Null      0 type
//	Point     0 type, 4 X, 12 Y                          (20 bytes)
//	PointM    ... 20 M                                   (28)
//	PointZ    ... 20 Z, 28 M (M optional)                (28 or 36)
//	PolyLine  0 type, 4 Box[4], 36 NumParts, 40 NumPoints, 44 Parts[NumParts],
//	          then Points[NumPoints] (X, Y)              (44 + 4·NumParts + 16·NumPoints)
//	PolyLineZ ... then Zmin, Zmax, Z[NumPoints], then optionally M range and M[]
//	PolyLineM ... then optionally M range and M[]
//
// Every count is checked against len(c) before it is used. A record of a
// type other than the file's (and not Null) is an error, as the
// description requires one type per file.
func shpParseRecord(c []byte, fileType, rec int) (orb.Geometry, []float64, error) {
	t := int(int32(binary.LittleEndian.Uint32(c[0:4])))
	if t == shpNull {
		return nil, nil, nil
	}
	if t != fileType {
		return nil, nil, fmt.Errorf("record %d has shape type %s in a %s file: the .shp is damaged (a shapefile holds one shape type)", rec, shpTypeName(t), shpTypeName(fileType))
	}
	short := func(need int64) error {
		return fmt.Errorf("record %d is %d bytes, too short for a %s that needs %d: the .shp is damaged", rec, len(c), shpTypeName(t), need)
	}
	switch t {
	case shpPoint, shpPointM, shpPointZ:
		need := int64(20)
		if t != shpPoint {
			need = 28
		}
		if int64(len(c)) < need {
			return nil, nil, short(need)
		}
		p := orb.Point{shpFloat(c, 4), shpFloat(c, 12)}
		if !shpFinite(p) {
			return nil, nil, fmt.Errorf("record %d: a coordinate is not a finite number: correct the geometry", rec)
		}
		if t == shpPointZ {
			return p, []float64{shpFloat(c, 20)}, nil
		}
		return p, nil, nil
	}
	// PolyLine, PolyLineZ, PolyLineM.
	if len(c) < 44 {
		return nil, nil, short(44)
	}
	numParts := int64(int32(binary.LittleEndian.Uint32(c[36:40])))
	numPoints := int64(int32(binary.LittleEndian.Uint32(c[40:44])))
	if numParts < 0 || numPoints < 0 {
		return nil, nil, fmt.Errorf("record %d has NumParts %d and NumPoints %d; counts cannot be negative: the .shp is damaged", rec, numParts, numPoints)
	}
	need := 44 + 4*numParts + 16*numPoints
	if t == shpPolyLineZ {
		need += 16 + 8*numPoints
	}
	if need > int64(len(c)) {
		return nil, nil, fmt.Errorf("record %d has NumParts %d and NumPoints %d, which need %d bytes, but the record is %d bytes: the .shp is damaged", rec, numParts, numPoints, need, len(c))
	}
	np, n := int(numParts), int(numPoints)
	starts := make([]int, np+1)
	for k := 0; k < np; k++ {
		s := int(int32(binary.LittleEndian.Uint32(c[44+4*k:])))
		if s < 0 || s > n || (k == 0 && s != 0) || (k > 0 && s < starts[k-1]) {
			return nil, nil, fmt.Errorf("record %d: part %d starts at point %d, which is out of order or outside its %d points: the .shp is damaged", rec, k+1, s, n)
		}
		starts[k] = s
	}
	starts[np] = n
	if np == 0 && n > 0 {
		return nil, nil, fmt.Errorf("record %d has %d points but no parts: the .shp is damaged", rec, n)
	}
	ptBase := 44 + 4*np
	pts := make([]orb.Point, n)
	for k := range pts {
		pts[k] = orb.Point{shpFloat(c, ptBase+16*k), shpFloat(c, ptBase+16*k+8)}
		if !shpFinite(pts[k]) {
			return nil, nil, fmt.Errorf("record %d: point %d is not a finite number: correct the geometry", rec, k+1)
		}
	}
	var z []float64
	if t == shpPolyLineZ {
		zBase := ptBase + 16*n + 16
		z = make([]float64, n)
		for k := range z {
			z[k] = shpFloat(c, zBase+8*k)
		}
	}
	var ml orb.MultiLineString
	for k := 0; k < np; k++ {
		if starts[k+1] > starts[k] { // an empty part has no vertices to keep
			ml = append(ml, orb.LineString(pts[starts[k]:starts[k+1]:starts[k+1]]))
		}
	}
	switch len(ml) {
	case 0:
		return nil, z, nil
	case 1:
		return ml[0], z, nil
	}
	return ml, z, nil
}

func shpFloat(c []byte, off int) float64 {
	return math.Float64frombits(binary.LittleEndian.Uint64(c[off : off+8]))
}

func shpFinite(p orb.Point) bool {
	return !math.IsNaN(p[0]) && !math.IsInf(p[0], 0) && !math.IsNaN(p[1]) && !math.IsInf(p[1], 0)
}
