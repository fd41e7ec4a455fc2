package gis

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding"
	"golang.org/x/text/encoding/charmap"
)

// DBFField is one column of a shapefile's .dbf table (dBASE III):
// Type is 'C' (character), 'N' (numeric), 'F' (float), 'D' (date, YYYYMMDD)
// or 'L' (logical); other dBASE types are read as their trimmed text.
// Length is the width in bytes and Decimals the digits after the point.
type DBFField struct {
	Name     string
	Type     byte
	Length   int
	Decimals int
}

// dBASE III layout (dBASE III Plus file structure; the shapefile technical
// description, ESRI 1998, names it as the attribute format):
//
//	header: 0 version, 1–3 date YY MM DD (YY from 1900), 4–7 record count
//	        (uint32 LE), 8–9 header length, 10–11 record length (uint16 LE),
//	        29 language driver id (LDID); 32-byte field descriptors follow,
//	        ended by 0x0D
//	field descriptor: 0–10 name (NUL padded), 11 type, 16 length, 17 decimals
//	record: one deletion flag byte (' ' or '*'), then the fields side by side
const (
	dbfHeaderSize     = 32
	dbfDescriptorSize = 32
	dbfTerminator     = 0x0D
	dbfEOF            = 0x1A
	dbfMaxWidth       = 254 // the widest C field dBASE III defines
)

// dbfTable is a decoded .dbf: fields, one property row per record, and the
// 1-based numbers of records flagged deleted.
type dbfTable struct {
	fields   []DBFField
	rows     [][]any
	deleted  []int
	encoding string
}

// dbfHeader is the fixed part of a .dbf header.
type dbfHeader struct {
	records   int
	headerLen int
	recordLen int
	ldid      byte
}

// dbfCodePages maps the .cpg text (upper case, spaces and dashes removed)
// to the name reported and the decoder; a nil decoder means UTF-8. The
// names follow GDAL's shapefile driver, which reads "UTF-8", bare Windows
// code page numbers ("1252") and "8859-n" forms.
var dbfCodePages = map[string]string{
	"UTF8": "UTF-8", "65001": "UTF-8",
	"1252": "windows-1252", "CP1252": "windows-1252", "WINDOWS1252": "windows-1252", "ANSI1252": "windows-1252",
	"88591": "ISO-8859-1", "ISO88591": "ISO-8859-1", "LATIN1": "ISO-8859-1",
	"885915": "ISO-8859-15", "ISO885915": "ISO-8859-15",
	"1250": "windows-1250", "CP1250": "windows-1250", "WINDOWS1250": "windows-1250", "ANSI1250": "windows-1250",
	"1251": "windows-1251", "CP1251": "windows-1251", "WINDOWS1251": "windows-1251", "ANSI1251": "windows-1251",
	"437": "IBM437", "CP437": "IBM437", "OEM437": "IBM437",
	"850": "IBM850", "CP850": "IBM850", "OEM850": "IBM850",
}

// dbfDecoders gives the x/text decoder of each reported name.
var dbfDecoders = map[string]encoding.Encoding{
	"UTF-8":        nil,
	"windows-1252": charmap.Windows1252,
	"ISO-8859-1":   charmap.ISO8859_1,
	"ISO-8859-15":  charmap.ISO8859_15,
	"windows-1250": charmap.Windows1250,
	"windows-1251": charmap.Windows1251,
	"IBM437":       charmap.CodePage437,
	"IBM850":       charmap.CodePage850,
	"IBM865":       charmap.CodePage865,
	"IBM866":       charmap.CodePage866,
	"IBM852":       charmap.CodePage852,
	"macintosh":    charmap.Macintosh,
}

// dbfLDIDs maps the language driver id at offset 29 to a code page, as
// GDAL's shapefile driver reads it (ogrshapelayer.cpp, after the dBASE/
// FoxPro LDID table): 0x57 is GDAL's own default on writing and is read as
// ISO-8859-1; 0x03, 0x58 and 0x59 are Windows ANSI 1252.
var dbfLDIDs = map[byte]string{
	0x01: "IBM437", 0x02: "IBM850", 0x03: "windows-1252", 0x04: "macintosh",
	0x08: "IBM865", 0x09: "IBM437", 0x0A: "IBM850", 0x0B: "IBM437", 0x0D: "IBM437",
	0x0E: "IBM850", 0x0F: "IBM437", 0x10: "IBM850", 0x11: "IBM437", 0x12: "IBM850",
	0x14: "IBM850", 0x15: "IBM437", 0x16: "IBM850", 0x17: "IBM865", 0x18: "IBM437",
	0x19: "IBM437", 0x1A: "IBM850", 0x1B: "IBM437", 0x1D: "IBM850", 0x1F: "IBM852",
	0x22: "IBM852", 0x23: "IBM852", 0x25: "IBM850", 0x26: "IBM866", 0x37: "IBM850",
	0x40: "IBM852", 0x4D: "windows-1252", 0x57: "ISO-8859-1", 0x58: "windows-1252",
	0x59: "windows-1252", 0x64: "IBM852", 0x65: "IBM866", 0x66: "IBM865", 0x67: "IBM865",
	0x6B: "IBM857", 0x96: "macintosh", 0xC8: "windows-1250", 0xC9: "windows-1251",
}

// dbfEncoding chooses the code page of a .dbf: the .cpg text when there is
// one (cpg != ""), else the LDID byte, else (LDID 0 and no .cpg) UTF-8 is
// assumed, as GDAL does when a file says nothing. A code page headroom does
// not know is an error that says to write a .cpg.
func dbfEncoding(cpg string, hasCPG bool, ldid byte) (string, error) {
	if hasCPG {
		key := strings.ToUpper(strings.TrimSpace(strings.TrimPrefix(cpg, "\ufeff")))
		key = strings.NewReplacer(" ", "", "-", "", "_", "").Replace(key)
		if name, ok := dbfCodePages[key]; ok {
			return name, nil
		}
		return "", fmt.Errorf("the .cpg names code page %q, which headroom cannot decode: "+
			"re-save the layer as UTF-8, or put UTF-8, 1252 or 8859-1 in the .cpg if that is what the text is", strings.TrimSpace(cpg))
	}
	if ldid == 0 {
		return "UTF-8", nil
	}
	name, ok := dbfLDIDs[ldid]
	if !ok {
		return "", fmt.Errorf("the .dbf's language driver byte 0x%02X names a code page headroom does not know: "+
			"write a .cpg file beside the .dbf naming the code page (e.g. UTF-8 or 1252)", ldid)
	}
	if _, ok := dbfDecoders[name]; !ok {
		return "", fmt.Errorf("the .dbf's language driver byte 0x%02X names code page %s, which headroom cannot decode: "+
			"re-save the layer as UTF-8", ldid, name)
	}
	return name, nil
}

// dbfReadHeader reads and checks the header and field descriptors. size is
// the file length in bytes, so that a header that claims more than the file
// holds is an error before anything is allocated from it.
func dbfReadHeader(r io.Reader, size int64) (dbfHeader, [][]byte, []DBFField, error) {
	var h dbfHeader
	var fixed [dbfHeaderSize]byte
	if _, err := io.ReadFull(r, fixed[:]); err != nil {
		return h, nil, nil, errors.New("the .dbf is shorter than its 32-byte header: copy it again from its source")
	}
	h.records = int(binary.LittleEndian.Uint32(fixed[4:8]))
	h.headerLen = int(binary.LittleEndian.Uint16(fixed[8:10]))
	h.recordLen = int(binary.LittleEndian.Uint16(fixed[10:12]))
	h.ldid = fixed[29]
	if h.headerLen < dbfHeaderSize+1 || int64(h.headerLen) > size {
		return h, nil, nil, fmt.Errorf("the .dbf header length %d is impossible for a %d-byte file: the .dbf is damaged", h.headerLen, size)
	}
	if h.recordLen < 1 {
		return h, nil, nil, errors.New("the .dbf record length is 0: the .dbf is damaged")
	}
	if need := int64(h.headerLen) + int64(h.records)*int64(h.recordLen); need > size {
		return h, nil, nil, fmt.Errorf("the .dbf is truncated: its header promises %d records of %d bytes (%d bytes in all), the file has %d: copy it again from its source",
			h.records, h.recordLen, need, size)
	}
	rest := make([]byte, h.headerLen-dbfHeaderSize)
	if _, err := io.ReadFull(r, rest); err != nil {
		return h, nil, nil, fmt.Errorf("reading the .dbf header: %w", err)
	}
	var rawNames [][]byte
	var fields []DBFField
	offset := 1 // the deletion flag
	for p := 0; p+dbfDescriptorSize <= len(rest) && rest[p] != dbfTerminator; p += dbfDescriptorSize {
		d := rest[p : p+dbfDescriptorSize]
		name := d[:11]
		if i := bytes.IndexByte(name, 0); i >= 0 {
			name = name[:i]
		}
		f := DBFField{Type: d[11], Length: int(d[16]), Decimals: int(d[17])}
		if f.Type == 'C' { // dBASE: a C field's width may use the decimal byte as its high byte
			f.Length += int(d[17]) << 8
			f.Decimals = 0
		}
		if f.Length < 1 {
			return h, nil, nil, fmt.Errorf("field %d of the .dbf has width 0: the .dbf is damaged", len(fields)+1)
		}
		offset += f.Length
		rawNames = append(rawNames, bytes.TrimSpace(name))
		fields = append(fields, f)
	}
	if offset > h.recordLen {
		return h, nil, nil, fmt.Errorf("the .dbf fields add up to %d bytes but its records are %d bytes: the .dbf is damaged", offset, h.recordLen)
	}
	return h, rawNames, fields, nil
}

// dbfDecoder turns raw bytes into text in the file's code page.
type dbfDecoder struct {
	dec       *encoding.Decoder
	assumeUTF bool // no .cpg and LDID 0: bytes that are not UTF-8 are read as windows-1252
}

func newDBFDecoder(name string, assumed bool) dbfDecoder {
	if e := dbfDecoders[name]; e != nil {
		return dbfDecoder{dec: e.NewDecoder()}
	}
	return dbfDecoder{assumeUTF: assumed}
}

func (d dbfDecoder) text(b []byte) string {
	if d.dec == nil {
		if d.assumeUTF && !utf8.Valid(b) {
			s, err := charmap.Windows1252.NewDecoder().Bytes(b)
			if err == nil {
				return string(s)
			}
		}
		return string(b)
	}
	s, err := d.dec.Bytes(b)
	if err != nil { // charmap decoders do not fail; keep the bytes if one ever does
		return string(b)
	}
	return string(s)
}

// readDBF decodes a whole .dbf. name is the file's base name, used in
// errors. The values follow GDAL's null conventions (see dbfValue).
func readDBF(r io.Reader, size int64, name, cpg string, hasCPG bool) (*dbfTable, error) {
	fail := func(rec int, field string, err error) error {
		return &FieldError{File: name, Feature: rec, Field: field, Err: err}
	}
	br := bufio.NewReaderSize(r, 1<<20)
	h, rawNames, fields, err := dbfReadHeader(br, size)
	if err != nil {
		return nil, fail(0, "", err)
	}
	enc, err := dbfEncoding(cpg, hasCPG, h.ldid)
	if err != nil {
		return nil, fail(0, "", err)
	}
	dec := newDBFDecoder(enc, !hasCPG && h.ldid == 0)
	for i := range fields {
		fields[i].Name = dec.text(rawNames[i])
	}
	t := &dbfTable{fields: fields, encoding: enc, rows: make([][]any, 0, min(h.records, 1<<16))}
	buf := make([]byte, h.recordLen)
	for rec := 1; rec <= h.records; rec++ {
		if _, err := io.ReadFull(br, buf); err != nil {
			return nil, fail(rec, "", fmt.Errorf("the .dbf ends inside record %d: copy it again from its source", rec))
		}
		if buf[0] == '*' {
			t.deleted = append(t.deleted, rec)
		}
		row := make([]any, len(fields))
		off := 1
		for j, f := range fields {
			v, err := dbfValue(f, buf[off:off+f.Length], dec)
			if err != nil {
				return nil, fail(rec, f.Name, err)
			}
			row[j] = v
			off += f.Length
		}
		t.rows = append(t.rows, row)
	}
	return t, nil
}

// dbfValue decodes one field of one record. GDAL's null conventions
// (LIBRARIES.md §3, and GDAL's shapefile driver documentation): a numeric
// field that is blank or all '*' is null; a date that is blank or
// "00000000" is null; a character field of only spaces is null (so "" and
// null cannot be told apart); a logical '?' or blank is null.
//
// Numbers follow GDAL's typing of N fields: an N field with no decimals
// and a width of at most 18 gives int64 (float64 for a value that is not
// an integer); any other N field, and F, give float64.
// Dates give "YYYY-MM-DD". Logical T/t/Y/y is true and F/f/N/n false.
// Character text has its leading and trailing spaces (and NUL padding)
// removed, as GDAL 3.6.2 does (it reads a value written as "  lead" as
// "lead"), and is decoded from the file's code page.
func dbfValue(f DBFField, raw []byte, dec dbfDecoder) (any, error) {
	trimmed := bytes.Trim(raw, " \x00")
	switch f.Type {
	case 'N', 'F':
		if len(trimmed) == 0 || len(bytes.Trim(trimmed, "*")) == 0 {
			return nil, nil
		}
		s := string(trimmed)
		if f.Type == 'N' && f.Decimals == 0 && f.Length <= 18 {
			if n, err := strconv.ParseInt(s, 10, 64); err == nil {
				return n, nil
			}
		}
		x, err := strconv.ParseFloat(s, 64)
		if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
			return nil, fmt.Errorf("%q is not a number: correct it in the .dbf (or blank it to make it null)", s)
		}
		return x, nil
	case 'D':
		if len(trimmed) == 0 || string(trimmed) == "00000000" {
			return nil, nil
		}
		s := string(trimmed)
		if len(s) != 8 {
			return nil, fmt.Errorf("date %q is not YYYYMMDD: correct it in the .dbf", s)
		}
		y, errY := strconv.Atoi(s[:4])
		m, errM := strconv.Atoi(s[4:6])
		d, errD := strconv.Atoi(s[6:])
		if errY != nil || errM != nil || errD != nil || y < 0 || m < 1 || m > 12 || d < 1 || d > 31 {
			return nil, fmt.Errorf("date %q is not YYYYMMDD: correct it in the .dbf", s)
		}
		return fmt.Sprintf("%04d-%02d-%02d", y, m, d), nil
	case 'L':
		if len(trimmed) == 0 {
			return nil, nil
		}
		switch trimmed[0] {
		case 'T', 't', 'Y', 'y':
			return true, nil
		case 'F', 'f', 'N', 'n':
			return false, nil
		case '?':
			return nil, nil
		}
		return nil, fmt.Errorf("logical value %q is not T, F, Y, N or ?: correct it in the .dbf", trimmed)
	}
	if len(trimmed) == 0 {
		return nil, nil
	}
	return dec.text(trimmed), nil
}
