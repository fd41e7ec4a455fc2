package report

import (
	"archive/zip"
	"bytes"
	"compress/flate"
	"errors"
	"fmt"
	"hash"
	"hash/crc32"
	"io"
	"io/fs"
	"slices"
	"strings"
)

// xlsxCompression is the deflate level of the workbook's parts. Level 1
// (flate.BestSpeed) deflates the sheet XML about four times as fast as the
// default level 6 for a file some 25 % larger; the sheets of a large run
// are tens of megabytes of repetitive XML, where the time matters more
// than the bytes.
const xlsxCompression = flate.BestSpeed

// sortedZip is the excelize.ZipWriter WriteXLSX hands excelize. It deflates
// each part as excelize writes it and keeps only the compressed bytes, with
// each part's CRC-32 and sizes; writeTo then writes the parts to an archive
// in name order, raw (zip.Writer.CreateRaw), so nothing is compressed twice.
// excelize writes streamed sheets in map order, which changes from run to
// run; the name order makes the file repeat byte for byte.
//
// Parts are written one at a time: Create finishes the part before it.
type sortedZip struct {
	parts []*zipPart
	fw    *flate.Writer // deflates the last part; reset for each new one
}

// zipPart is one compressed part of the archive.
type zipPart struct {
	name       string
	crc        hash.Hash32 // of the uncompressed bytes (IEEE, as zip requires)
	size       uint64      // uncompressed bytes
	compressed bytes.Buffer
	fw         *flate.Writer
}

func (p *zipPart) Write(b []byte) (int, error) {
	p.crc.Write(b) // a hash.Hash never returns an error
	p.size += uint64(len(b))
	return p.fw.Write(b)
}

// Create starts the part name, finishing the one before it.
func (z *sortedZip) Create(name string) (io.Writer, error) {
	if err := z.finish(); err != nil {
		return nil, err
	}
	p := &zipPart{name: name, crc: crc32.NewIEEE()}
	if z.fw == nil {
		fw, err := flate.NewWriter(&p.compressed, xlsxCompression)
		if err != nil {
			return nil, err
		}
		z.fw = fw
	} else {
		z.fw.Reset(&p.compressed)
	}
	p.fw = z.fw
	z.parts = append(z.parts, p)
	return p, nil
}

// finish flushes the last part's deflate stream.
func (z *sortedZip) finish() error {
	if len(z.parts) == 0 {
		return nil
	}
	p := z.parts[len(z.parts)-1]
	if p.fw == nil {
		return nil
	}
	err := p.fw.Close()
	p.fw = nil
	if err != nil {
		return fmt.Errorf("compressing %s: %w", p.name, err)
	}
	return nil
}

// AddFS is part of excelize.ZipWriter; excelize v2.11.1 never calls it
// when it saves a workbook.
func (z *sortedZip) AddFS(fs.FS) error {
	return errors.New("report: adding a file system to a workbook is not supported")
}

// Close finishes the last part. The archive is written by writeTo.
func (z *sortedZip) Close() error { return z.finish() }

// writeTo writes the parts to w as a zip archive in name order;
// "[Content_Types].xml" sorts first. Each part is stored deflated with no
// modification time, so the same parts give the same bytes.
func (z *sortedZip) writeTo(w io.Writer) error {
	if err := z.finish(); err != nil {
		return err
	}
	parts := slices.Clone(z.parts)
	slices.SortStableFunc(parts, func(a, b *zipPart) int { return strings.Compare(a.name, b.name) })
	zw := zip.NewWriter(w)
	for _, p := range parts {
		hw, err := zw.CreateRaw(&zip.FileHeader{
			Name:               p.name,
			Method:             zip.Deflate,
			CRC32:              p.crc.Sum32(),
			CompressedSize64:   uint64(p.compressed.Len()),
			UncompressedSize64: p.size,
		})
		if err != nil {
			return fmt.Errorf("report: writing workbook part %s: %w", p.name, err)
		}
		if _, err := hw.Write(p.compressed.Bytes()); err != nil {
			return fmt.Errorf("report: writing workbook part %s: %w", p.name, err)
		}
	}
	if err := zw.Close(); err != nil {
		return fmt.Errorf("report: finishing workbook: %w", err)
	}
	return nil
}
