package gis

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

// Kind is the type of a Column.
type Kind int

// Column kinds.
const (
	String Kind = iota
	Integer
	Real
)

// String returns "string", "integer" or "real".
func (k Kind) String() string {
	switch k {
	case String:
		return "string"
	case Integer:
		return "integer"
	case Real:
		return "real"
	}
	return "Kind(" + strconv.Itoa(int(k)) + ")"
}

// Column is one attribute of a Layer. Decimals is the number of digits after
// the point for Real values ('f' formatting); a negative Decimals writes the
// shortest form that reads back exactly.
type Column struct {
	Name     string
	Kind     Kind
	Decimals int
}

// Row is one feature of a Layer. Values are in column order, each a string,
// an integer type, a float64 (NaN and ±Inf are written as null), a bool or
// nil (null).
type Row struct {
	Geometry orb.Geometry
	Values   []any
}

// Layer is a neutral table of features, written as GeoJSON, CSV,
// GeoPackage or shapefile. A small layer lists its Rows; a large one is
// packed column by column (PackLayer) or is a view of another (View), and
// then Rows is nil. The writers read every layer through Len and Reader.
type Layer struct {
	Name    string
	Columns []Column
	Rows    []Row
	packed  *packedRows
	view    *layerView
}

// WriteGeoJSON writes l as an RFC 7946 FeatureCollection, atomically, one
// feature per line, properties in column order, coordinates in the shortest
// form that reads back exactly. A nil geometry is written as null. The
// layer's Name becomes the foreign member "name". The same layer gives the
// same bytes.
func WriteGeoJSON(path string, l *Layer) error {
	return WriteFileAtomic(path, func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		buf := make([]byte, 0, 4096)
		buf = append(buf, `{"type":"FeatureCollection"`...)
		if l.Name != "" {
			buf = append(buf, `,"name":`...)
			buf = appendJSONString(buf, l.Name)
		}
		buf = append(buf, ",\"features\":[\n"...)
		keys := make([][]byte, len(l.Columns))
		for j, c := range l.Columns {
			keys[j] = appendJSONString(nil, c.Name)
		}
		rd, n := l.Reader(), l.Len()
		for i := range n {
			if w := rd.width(i); w != len(l.Columns) {
				return fmt.Errorf("gis: layer %q row %d: %d values for %d columns", l.Name, i+1, w, len(l.Columns))
			}
			buf = append(buf, `{"type":"Feature","properties":{`...)
			for j, c := range l.Columns {
				if j > 0 {
					buf = append(buf, ',')
				}
				buf = append(buf, keys[j]...)
				buf = append(buf, ':')
				if out, null, ok := rd.appendNumber(buf, i, j, c); ok {
					if buf = out; null {
						buf = append(buf, "null"...)
					}
					continue
				}
				if s, ok := rd.text(i, j); ok {
					buf = appendJSONString(buf, s)
					continue
				}
				var err error
				if buf, err = appendJSONValue(buf, c, rd.Value(i, j)); err != nil {
					return fmt.Errorf("gis: layer %q row %d column %q: %w", l.Name, i+1, c.Name, err)
				}
			}
			buf = append(buf, `},"geometry":`...)
			var err error
			if buf, err = appendGeometry(buf, rd.Geometry(i)); err != nil {
				return fmt.Errorf("gis: layer %q row %d: %w", l.Name, i+1, err)
			}
			buf = append(buf, '}')
			if i < n-1 {
				buf = append(buf, ',')
			}
			buf = append(buf, '\n')
			if _, err := bw.Write(buf); err != nil {
				return err
			}
			buf = buf[:0]
		}
		buf = append(buf, "]}\n"...)
		if _, err := bw.Write(buf); err != nil {
			return err
		}
		return bw.Flush()
	})
}

// WriteCSV writes l as CSV (RFC 4180 quoting), atomically: a header of
// column names, then one record per row; no geometry. Null values are
// empty fields.
//
// Text is made safe to open in a spreadsheet (CSV or formula injection,
// CWE-1236): a header name or a string value that starts with '=', '+',
// '-', '@', a tab or a carriage return is written with a single quote '
// in front of it, so that a spreadsheet shows it as text instead of
// evaluating it as a formula; this is the OWASP "CSV Injection" advice.
// Numbers stay numbers: integer and float values are never changed, whatever
// the column kind, and neither is a string that is entirely a plain decimal
// number (an optional sign, digits, at most one '.', as "-12.5" or "+3"),
// since a spreadsheet reads that as the number it is, not as a formula.
// Exponent forms ("-1e3") are not plain decimals and get the quote. A
// reader of the CSV sees the quote as part of the text: an id "=A1" comes
// back as "'=A1". GeoJSON, GeoPackage and shapefile outputs are data, not
// spreadsheets, and keep the text as it is.
func WriteCSV(path string, l *Layer) error {
	return WriteFileAtomic(path, func(w io.Writer) error { return writeCSV(w, l) })
}

// writeCSV writes the records of WriteCSV to w, in the bytes
// encoding/csv's Writer writes (see appendCSVField), one line at a time.
func writeCSV(w io.Writer, l *Layer) error {
	bw := bufio.NewWriterSize(w, 1<<20)
	line := make([]byte, 0, 4096)
	for j, c := range l.Columns {
		if j > 0 {
			line = append(line, ',')
		}
		line = appendCSVField(line, formulaSafe(c.Name))
	}
	line = append(line, '\n')
	if _, err := bw.Write(line); err != nil {
		return err
	}
	rd := l.Reader()
	for i := range l.Len() {
		if w := rd.width(i); w != len(l.Columns) {
			return fmt.Errorf("gis: layer %q row %d: %d values for %d columns", l.Name, i+1, w, len(l.Columns))
		}
		line = line[:0]
		for j, c := range l.Columns {
			if j > 0 {
				line = append(line, ',')
			}
			if out, _, ok := rd.appendNumber(line, i, j, c); ok { // a null is an empty field
				line = out
				continue
			}
			if s, ok := rd.text(i, j); ok {
				line = appendCSVField(line, formulaSafe(s))
				continue
			}
			v := rd.Value(i, j)
			if s, ok := v.(string); ok {
				line = appendCSVField(line, formulaSafe(s))
				continue
			}
			// Numbers and bools never need quotes; a null is an empty field.
			var err error
			if line, _, err = formatValue(line, c, v); err != nil {
				return fmt.Errorf("gis: layer %q row %d column %q: %w", l.Name, i+1, c.Name, err)
			}
		}
		line = append(line, '\n')
		if _, err := bw.Write(line); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// appendCSVField appends field as encoding/csv's Writer writes it (comma
// delimiter, \n line ends): inside double quotes, each '"' doubled, when it
// holds a comma, a quote, \r or \n, starts with a space (unicode.IsSpace)
// or is exactly \. (which a PostgreSQL COPY reads as the end of data);
// as it is otherwise.
func appendCSVField(buf []byte, field string) []byte {
	if !csvNeedsQuotes(field) {
		return append(buf, field...)
	}
	buf = append(buf, '"')
	for i := 0; i < len(field); i++ {
		if field[i] == '"' {
			buf = append(buf, '"')
		}
		buf = append(buf, field[i])
	}
	return append(buf, '"')
}

// csvNeedsQuotes is encoding/csv's fieldNeedsQuotes for a comma delimiter.
func csvNeedsQuotes(field string) bool {
	if field == "" {
		return false
	}
	if field == `\.` || strings.ContainsAny(field, ",\"\r\n") {
		return true
	}
	r1, _ := utf8.DecodeRuneInString(field)
	return unicode.IsSpace(r1)
}

// formulaSafe returns text for a spreadsheet cell: s with a single quote in
// front when its first byte is one that starts a formula ('=', '+', '-',
// '@', tab, carriage return; OWASP "CSV Injection") and s is not a plain
// decimal number; s unchanged otherwise.
func formulaSafe(s string) string {
	if s == "" || !strings.ContainsRune("=+-@\t\r", rune(s[0])) || isPlainDecimal(s) {
		return s
	}
	return "'" + s
}

// isPlainDecimal reports whether s is an optional sign followed by digits
// with at most one decimal point and at least one digit ("-12.5", "+3",
// "-.5", "7."). Exponents, thousands separators and spaces are not plain.
func isPlainDecimal(s string) bool {
	if s != "" && (s[0] == '+' || s[0] == '-') {
		s = s[1:]
	}
	digits, points := 0, 0
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c >= '0' && c <= '9':
			digits++
		case c == '.':
			points++
		default:
			return false
		}
	}
	return digits > 0 && points <= 1
}

// formatValue appends the text of v to buf. isNull reports a value written
// as null (nil, NaN, ±Inf). Strings are appended raw (not quoted).
func formatValue(buf []byte, c Column, v any) (out []byte, isNull bool, err error) {
	switch x := v.(type) {
	case nil:
		return buf, true, nil
	case string:
		return append(buf, x...), false, nil
	case bool:
		return strconv.AppendBool(buf, x), false, nil
	case int:
		return strconv.AppendInt(buf, int64(x), 10), false, nil
	case int8:
		return strconv.AppendInt(buf, int64(x), 10), false, nil
	case int16:
		return strconv.AppendInt(buf, int64(x), 10), false, nil
	case int32:
		return strconv.AppendInt(buf, int64(x), 10), false, nil
	case int64:
		return strconv.AppendInt(buf, x, 10), false, nil
	case uint:
		return strconv.AppendUint(buf, uint64(x), 10), false, nil
	case uint32:
		return strconv.AppendUint(buf, uint64(x), 10), false, nil
	case uint64:
		return strconv.AppendUint(buf, x, 10), false, nil
	case float32:
		return formatFloat(buf, c, float64(x))
	case float64:
		return formatFloat(buf, c, x)
	}
	return buf, false, fmt.Errorf("unsupported value type %T", v)
}

func formatFloat(buf []byte, c Column, x float64) ([]byte, bool, error) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return buf, true, nil
	}
	switch {
	case c.Kind == Integer:
		x = math.Round(x)
		if x == 0 {
			x = 0 // no "-0"
		}
		return strconv.AppendFloat(buf, x, 'f', 0, 64), false, nil
	case c.Decimals < 0:
		return strconv.AppendFloat(buf, x, 'g', -1, 64), false, nil
	}
	if out, ok := appendFixed(buf, x, c.Decimals); ok {
		return out, false, nil
	}
	return appendFixedStrconv(buf, x, c.Decimals), false, nil
}

// appendFixedStrconv appends x with d decimals, rounded as
// strconv.AppendFloat rounds x's exact binary value (half to even), except
// that a value that rounds to zero is written without a minus sign.
func appendFixedStrconv(buf []byte, x float64, d int) []byte {
	// Round first so that a tiny negative value does not print as "-0.00".
	p := math.Pow(10, float64(d))
	if r := math.Round(x*p) / p; r == 0 && !math.IsInf(x*p, 0) {
		x = 0
	}
	return strconv.AppendFloat(buf, x, 'f', d, 64)
}

// exactPow10 are the powers of ten that float64 holds exactly, as far as
// appendFixed uses them.
var exactPow10 = [...]float64{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15}

// appendFixed is appendFixedStrconv's fast path, about twice as quick: it
// rounds y = x·10^d to an integer n and writes n's digits with a decimal
// point d from the right. y is x·10^d rounded once, so it is within
// |y|·2⁻⁵³ of the exact product; rounding the exact product to the nearest
// integer gives n too unless a half-integer lies within that distance of y.
// Then, and for |y| ≥ 2⁵², ok is false and the caller takes the slow path,
// so the text is always appendFixedStrconv's.
func appendFixed(buf []byte, x float64, d int) (_ []byte, ok bool) {
	if d < 0 || d >= len(exactPow10) {
		return buf, false
	}
	y := x * exactPow10[d]
	a := math.Abs(y)
	if !(a < 1<<52) { // also NaN
		return buf, false
	}
	whole := math.Floor(a)
	frac := a - whole // exact below 2⁵²
	if math.Abs(frac-0.5) <= a*0x1p-52 {
		return buf, false
	}
	n := uint64(whole)
	if frac > 0.5 {
		n++
	}
	if n != 0 && y < 0 {
		buf = append(buf, '-')
	}
	var digits [24]byte
	text := strconv.AppendUint(digits[:0], n, 10)
	if len(text) <= d { // 0.00ddd: pad with zeros after the point
		buf = append(buf, '0', '.')
		for range d - len(text) {
			buf = append(buf, '0')
		}
		return append(buf, text...), true
	}
	buf = append(buf, text[:len(text)-d]...)
	if d > 0 {
		buf = append(buf, '.')
		buf = append(buf, text[len(text)-d:]...)
	}
	return buf, true
}

func appendJSONValue(buf []byte, c Column, v any) ([]byte, error) {
	if s, ok := v.(string); ok {
		return appendJSONString(buf, s), nil
	}
	out, isNull, err := formatValue(buf, c, v)
	if err != nil {
		return buf, err
	}
	if isNull {
		return append(buf, "null"...), nil
	}
	return out, nil
}

// appendJSONString appends s as a JSON string, byte for byte as
// json.Marshal writes it: '"' and '\\' escaped with a backslash, \b \f \n
// \r \t by name, other control characters and the HTML-sensitive '<', '>',
// '&' as \u00XX, U+2028 and U+2029 as \u2028 and \u2029, and each byte of
// invalid UTF-8 as \ufffd. json.Marshal itself costs an allocation and a
// reflection per string, ten million of them in a 1M-pipe layer.
func appendJSONString(buf []byte, s string) []byte {
	const hex = "0123456789abcdef"
	buf = append(buf, '"')
	start := 0 // s[start:i] is yet to be appended, needing no escape
	for i := 0; i < len(s); {
		if b := s[i]; b < utf8.RuneSelf {
			if b >= 0x20 && b != '"' && b != '\\' && b != '<' && b != '>' && b != '&' {
				i++
				continue
			}
			buf = append(buf, s[start:i]...)
			switch b {
			case '"', '\\':
				buf = append(buf, '\\', b)
			case '\b':
				buf = append(buf, '\\', 'b')
			case '\f':
				buf = append(buf, '\\', 'f')
			case '\n':
				buf = append(buf, '\\', 'n')
			case '\r':
				buf = append(buf, '\\', 'r')
			case '\t':
				buf = append(buf, '\\', 't')
			default:
				buf = append(buf, '\\', 'u', '0', '0', hex[b>>4], hex[b&0xf])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 {
			buf = append(buf, s[start:i]...)
			buf = append(buf, `\ufffd`...)
			i += size
			start = i
			continue
		}
		if r == '\u2028' || r == '\u2029' {
			buf = append(buf, s[start:i]...)
			buf = append(buf, '\\', 'u', '2', '0', '2', hex[r&0xf])
			i += size
			start = i
			continue
		}
		i += size
	}
	buf = append(buf, s[start:]...)
	return append(buf, '"')
}

// appendGeometry appends g as a GeoJSON geometry object, or null.
func appendGeometry(buf []byte, g orb.Geometry) ([]byte, error) {
	var err error
	switch x := g.(type) {
	case nil:
		return append(buf, "null"...), nil
	case orb.Point:
		buf = append(buf, `{"type":"Point","coordinates":`...)
		buf, err = appendPoint(buf, x)
	case orb.MultiPoint:
		buf = append(buf, `{"type":"MultiPoint","coordinates":`...)
		buf, err = appendPoints(buf, x)
	case orb.LineString:
		buf = append(buf, `{"type":"LineString","coordinates":`...)
		buf, err = appendPoints(buf, x)
	case orb.MultiLineString:
		buf = append(buf, `{"type":"MultiLineString","coordinates":[`...)
		for i, ls := range x {
			if i > 0 {
				buf = append(buf, ',')
			}
			if buf, err = appendPoints(buf, ls); err != nil {
				return buf, err
			}
		}
		buf = append(buf, ']')
	case orb.Ring:
		return appendGeometry(buf, orb.Polygon{x})
	case orb.Bound:
		return appendGeometry(buf, x.ToPolygon())
	case orb.Polygon:
		buf = append(buf, `{"type":"Polygon","coordinates":`...)
		buf, err = appendPolygon(buf, x)
	case orb.MultiPolygon:
		buf = append(buf, `{"type":"MultiPolygon","coordinates":[`...)
		for i, p := range x {
			if i > 0 {
				buf = append(buf, ',')
			}
			if buf, err = appendPolygon(buf, p); err != nil {
				return buf, err
			}
		}
		buf = append(buf, ']')
	case orb.Collection:
		buf = append(buf, `{"type":"GeometryCollection","geometries":[`...)
		for i, m := range x {
			if i > 0 {
				buf = append(buf, ',')
			}
			if buf, err = appendGeometry(buf, m); err != nil {
				return buf, err
			}
		}
		buf = append(buf, ']')
	default:
		return buf, fmt.Errorf("unsupported geometry %T", g)
	}
	if err != nil {
		return buf, err
	}
	return append(buf, '}'), nil
}

func appendPolygon(buf []byte, p orb.Polygon) ([]byte, error) {
	buf = append(buf, '[')
	for i, r := range p {
		if i > 0 {
			buf = append(buf, ',')
		}
		var err error
		if buf, err = appendPoints(buf, r); err != nil {
			return buf, err
		}
	}
	return append(buf, ']'), nil
}

func appendPoints[S ~[]orb.Point](buf []byte, pts S) ([]byte, error) {
	buf = append(buf, '[')
	for i, q := range pts {
		if i > 0 {
			buf = append(buf, ',')
		}
		var err error
		if buf, err = appendPoint(buf, q); err != nil {
			return buf, err
		}
	}
	return append(buf, ']'), nil
}

var errBadCoordinate = errors.New("coordinate is NaN or infinite")

func appendPoint(buf []byte, q orb.Point) ([]byte, error) {
	for _, x := range q {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return buf, errBadCoordinate
		}
	}
	buf = append(buf, '[')
	buf = strconv.AppendFloat(buf, q[0], 'g', -1, 64)
	buf = append(buf, ',')
	buf = strconv.AppendFloat(buf, q[1], 'g', -1, 64)
	return append(buf, ']'), nil
}

// WriteCollection writes an orb FeatureCollection (input layers for the
// demo), atomically, one feature per line. Coordinates and json.Number
// property values round-trip exactly; foreign members of the collection are
// written in sorted key order, so the bytes are deterministic.
func WriteCollection(path string, fc *geojson.FeatureCollection) error {
	return WriteFileAtomic(path, func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		bw.WriteString(`{"type":"FeatureCollection"`)
		for _, k := range sortedKeys(fc.ExtraMembers) {
			if k == "type" || k == "features" {
				continue
			}
			v, err := json.Marshal(fc.ExtraMembers[k])
			if err != nil {
				return fmt.Errorf("gis: member %q: %w", k, err)
			}
			bw.WriteByte(',')
			bw.Write(appendJSONString(nil, k))
			bw.WriteByte(':')
			bw.Write(v)
		}
		bw.WriteString(",\"features\":[\n")
		for i, f := range fc.Features {
			b, err := f.MarshalJSON()
			if err != nil {
				return fmt.Errorf("gis: feature %d: %w", i+1, err)
			}
			bw.Write(b)
			if i < len(fc.Features)-1 {
				bw.WriteByte(',')
			}
			bw.WriteByte('\n')
		}
		bw.WriteString("]}\n")
		return bw.Flush()
	})
}

// WriteFileAtomic writes a file through write into a temporary file in the
// same directory, syncs it and renames it over path, so that readers see
// either the old file or the complete new one. On any error the temporary
// file is removed and path is left as it was. The file gets mode 0644.
func WriteFileAtomic(path string, write func(io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	sink := newFileSink(tmp, true)
	werr := write(sink)
	size, sum, err := sink.finish() // waits for the write in flight even when write failed
	if werr != nil {
		err = werr
	}
	if err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = tmp.Chmod(0o644); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	fi, err := os.Stat(tmp.Name())
	if err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	if err = os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("gis: writing %s: %w", path, err)
	}
	digests.Store(filepath.Clean(path), Digest{Bytes: size, SHA256: sum, ModTime: fi.ModTime()})
	if d, derr := os.Open(dir); derr == nil { // make the rename durable; best effort
		d.Sync()
		d.Close()
	}
	return nil
}
