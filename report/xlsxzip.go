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
	"runtime"
	"slices"
	"strings"
	"sync"
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
}

// zipPart is one compressed part of the archive.
type zipPart struct {
	name    string
	crc     hash.Hash32 // of the uncompressed bytes (IEEE, as zip requires)
	size    uint64      // uncompressed bytes
	pending []byte      // uncompressed bytes not yet handed to a chunk
	chunks  []*deflatedChunk
	// compressed is the whole deflate stream once finished: the chunks'
	// outputs end to end.
	compressed bytes.Buffer
	finished   bool
}

// deflateChunk is the length of the runs of uncompressed bytes a part is
// cut into, each deflated on a goroutine of its own (at most GOMAXPROCS at
// once). Every chunk but the last ends with a sync flush (an empty stored
// block), the last with the final block, so the chunks' outputs end to end
// are one deflate stream (RFC 1951 §3.2.3–4), as the parallel gzip tools
// make it. A chunk starts without the previous chunk's window, which costs
// well under 1 % of the compressed size at this length. A part of one
// chunk is deflated exactly as by a single flate.Writer.
const deflateChunk = 1 << 20

// deflatedChunk is one chunk's compressed bytes, ready once done is closed.
type deflatedChunk struct {
	out  bytes.Buffer
	err  error
	done chan struct{}
}

// deflateSlots bounds the chunks deflated at once.
var deflateSlots = make(chan struct{}, runtime.GOMAXPROCS(0))

// deflateWriters reuses flate writers between chunks.
var deflateWriters = sync.Pool{New: func() any {
	fw, err := flate.NewWriter(io.Discard, xlsxCompression)
	if err != nil {
		panic(err) // only for a level out of range
	}
	return fw
}}

// chunkBuffers reuses the uncompressed chunk buffers.
var chunkBuffers = sync.Pool{New: func() any { return new([deflateChunk]byte) }}

// startChunk deflates data on a goroutine; final chunks are closed, others
// flushed. A full chunk's buffer goes back to chunkBuffers once deflated.
func (p *zipPart) startChunk(data []byte, final bool) {
	c := &deflatedChunk{done: make(chan struct{})}
	p.chunks = append(p.chunks, c)
	deflateSlots <- struct{}{}
	go func() {
		defer func() { <-deflateSlots; close(c.done) }()
		if cap(data) == deflateChunk {
			defer chunkBuffers.Put((*[deflateChunk]byte)(data[:deflateChunk]))
		}
		fw := deflateWriters.Get().(*flate.Writer)
		defer deflateWriters.Put(fw)
		fw.Reset(&c.out)
		if _, err := fw.Write(data); err != nil {
			c.err = err
			return
		}
		if final {
			c.err = fw.Close()
		} else {
			c.err = fw.Flush()
		}
	}()
}

func (p *zipPart) Write(b []byte) (int, error) {
	p.crc.Write(b) // a hash.Hash never returns an error
	p.size += uint64(len(b))
	n := len(b)
	for len(b) > 0 {
		if p.pending == nil {
			p.pending = chunkBuffers.Get().(*[deflateChunk]byte)[:0]
		}
		take := min(len(b), deflateChunk-len(p.pending))
		p.pending = append(p.pending, b[:take]...)
		b = b[take:]
		if len(p.pending) == deflateChunk {
			p.startChunk(p.pending, false)
			p.pending = nil
		}
	}
	return n, nil
}

// finish deflates the last chunk (the final block, empty if need be),
// waits for every chunk and joins their outputs.
func (p *zipPart) finish() error {
	if p.finished {
		return nil
	}
	p.finished = true
	p.startChunk(p.pending, true)
	p.pending = nil
	var err error
	for _, c := range p.chunks {
		<-c.done
		if c.err != nil && err == nil {
			err = c.err
		}
		p.compressed.Write(c.out.Bytes())
	}
	p.chunks = nil
	if err != nil {
		return fmt.Errorf("compressing %s: %w", p.name, err)
	}
	return nil
}

// Create starts the part name, finishing the one before it.
func (z *sortedZip) Create(name string) (io.Writer, error) {
	if err := z.finish(); err != nil {
		return nil, err
	}
	p := &zipPart{name: name, crc: crc32.NewIEEE()}
	z.parts = append(z.parts, p)
	return p, nil
}

// finish finishes the last part's deflate stream.
func (z *sortedZip) finish() error {
	if len(z.parts) == 0 {
		return nil
	}
	return z.parts[len(z.parts)-1].finish()
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
