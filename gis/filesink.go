package gis

import (
	"crypto/sha256"
	"errors"
	"hash"
	"io"
	"os"
	"path/filepath"
	"sync"
	"syscall"
	"time"
	"unsafe"
)

// A fileSink is what WriteFileAtomic hands its write function: it gathers
// the bytes in two aligned buffers, and while one fills, a goroutine adds
// the other to the file's SHA-256 and writes it. The buffers start at
// sinkFirst bytes and double up to sinkBuffer, so a small file costs
// little.
// Where the file system allows (Linux, see directio_linux.go), the whole
// buffers bypass the page cache (O_DIRECT): on the 1M-segment demo town the
// 1.3 GB written this way cost 3 s of kernel CPU in the page cache, most of
// it in touching fresh memory. The last, partial block goes through the
// page cache, as does everything where O_DIRECT is refused.
type fileSink struct {
	f      *os.File
	bufs   [2][]byte
	cur, n int // the buffer being filled and its bytes
	direct bool
	sum    hash.Hash // nil: not hashed
	size   int64

	wg  sync.WaitGroup // the write in flight
	err error          // the first error; set by the writer goroutine only between wg.Go and wg.Wait
}

// sinkFirst and sinkBuffer are the least and the most a fileSink buffers:
// multiples of any block size O_DIRECT asks for (512 B to 4 KiB), the most
// large enough that the cost of a call vanishes (common practice).
const (
	sinkFirst  = 64 << 10
	sinkBuffer = 4 << 20
)

// sinkAlign is the alignment of the buffers' addresses and of the direct
// writes' lengths and offsets: the largest logical block size in use.
const sinkAlign = 4096

// newFileSink writes from f's offset on, adding the bytes to a SHA-256 when
// hashed is set.
func newFileSink(f *os.File, hashed bool) *fileSink {
	s := &fileSink{f: f}
	if hashed {
		s.sum = sha256.New()
	}
	s.bufs[0] = alignedBuffer(sinkFirst, sinkAlign)
	s.direct = setDirectIO(f, true)
	return s
}

// alignedBuffer is n bytes whose first byte's address is a multiple of align
// (a power of two).
func alignedBuffer(n, align int) []byte {
	raw := make([]byte, n+align)
	off := (align - int(uintptr(unsafe.Pointer(&raw[0]))&uintptr(align-1))) & (align - 1)
	return raw[off : off+n : off+n]
}

// Write copies p into the buffers, handing each full one to the writer.
func (s *fileSink) Write(p []byte) (int, error) {
	total := len(p)
	for len(p) > 0 {
		c := copy(s.bufs[s.cur][s.n:], p)
		s.n += c
		p = p[c:]
		if s.n == len(s.bufs[s.cur]) {
			if err := s.handOff(); err != nil {
				return total - len(p), err
			}
		}
	}
	return total, nil
}

// handOff waits for the write in flight, then starts writing the full
// buffer and switches to the other one, at twice the size up to
// sinkBuffer.
func (s *fileSink) handOff() error {
	s.wg.Wait()
	if s.err != nil {
		return s.err
	}
	b := s.bufs[s.cur]
	s.wg.Go(func() { s.err = s.writeOut(b, s.direct) })
	s.cur, s.n = 1-s.cur, 0
	if want := min(2*len(b), sinkBuffer); len(s.bufs[s.cur]) < want {
		s.bufs[s.cur] = alignedBuffer(want, sinkAlign)
	}
	return nil
}

// writeOut hashes b and writes it, directly when direct is set; a direct
// write the file system refuses (directRefused) is retried through the
// page cache, and the sink stays there.
func (s *fileSink) writeOut(b []byte, direct bool) error {
	if s.sum != nil {
		s.sum.Write(b)
	}
	s.size += int64(len(b))
	_, err := s.f.Write(b)
	if err != nil && direct && directRefused(err) {
		s.direct = setDirectIO(s.f, false) // a later handOff reads it after wg.Wait
		_, err = s.f.Write(b)
	}
	return err
}

// directRefused reports whether err is a file system's refusal of a direct
// read or write (EINVAL: alignment or no support; EOPNOTSUPP from some
// FUSE and network file systems), which the page cache then serves.
func directRefused(err error) bool {
	return errors.Is(err, syscall.EINVAL) || errors.Is(err, syscall.EOPNOTSUPP)
}

// finish writes what is left: its whole blocks directly, the rest through
// the page cache. It returns the file's size and SHA-256.
func (s *fileSink) finish() (int64, [sha256.Size]byte, error) {
	var sum [sha256.Size]byte
	s.wg.Wait()
	if s.err != nil {
		return 0, sum, s.err
	}
	b := s.bufs[s.cur][:s.n]
	whole := len(b) &^ (sinkAlign - 1)
	if err := s.writeOut(b[:whole], s.direct); err != nil {
		return 0, sum, err
	}
	if s.direct {
		s.direct = setDirectIO(s.f, false)
	}
	if err := s.writeOut(b[whole:], false); err != nil {
		return 0, sum, err
	}
	s.n = 0
	if s.sum != nil {
		s.sum.Sum(sum[:0])
	}
	return s.size, sum, nil
}

// wait waits for the write in flight, if any.
func (s *fileSink) wait() { s.wg.Wait() }

// Flush is finish for a sink that is not hashed: the bytes written, the
// file's page cache mode restored for what follows.
func (s *fileSink) Flush() error {
	_, _, err := s.finish()
	return err
}

// FileDigest reads the file at path for its size and SHA-256, past the
// page cache where the file system allows (the file, just written, need
// not be cached a second time).
func FileDigest(path string) (Digest, error) {
	f, err := os.Open(path)
	if err != nil {
		return Digest{}, err
	}
	defer f.Close()
	direct := setDirectIO(f, true)
	buf := alignedBuffer(sinkBuffer, sinkAlign)
	h := sha256.New()
	var d Digest
	for {
		n, err := f.Read(buf)
		if err != nil && direct && directRefused(err) {
			setDirectIO(f, false)
			direct = false // one retry: a second refusal is an error
			continue       // nothing was read: the same offset again
		}
		h.Write(buf[:n])
		d.Bytes += int64(n)
		if err == io.EOF {
			break
		}
		if err != nil {
			return Digest{}, err
		}
	}
	h.Sum(d.SHA256[:0])
	return d, nil
}

// Digest is a written file's size and SHA-256, and when it was recorded.
type Digest struct {
	Bytes   int64
	SHA256  [sha256.Size]byte
	ModTime time.Time // the file's modification time when written
}

// digests holds the Digest of every file WriteFileAtomic completed, by
// path, so that a manifest need not read them back.
var digests sync.Map // string → Digest

// WrittenDigest returns the size and SHA-256 of the file at path as
// WriteFileAtomic wrote it, if it did and the file still has the size and
// modification time it had then; otherwise ok is false and the caller
// reads the file.
func WrittenDigest(path string) (d Digest, ok bool) {
	v, found := digests.Load(filepath.Clean(path))
	if !found {
		return Digest{}, false
	}
	d = v.(Digest)
	fi, err := os.Stat(path)
	if err != nil || fi.Size() != d.Bytes || !fi.ModTime().Equal(d.ModTime) {
		return Digest{}, false
	}
	return d, true
}
