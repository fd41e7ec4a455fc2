package gis

import (
	"bytes"
	"crypto/sha256"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// A fileSink writes exactly the bytes it is given, in the pieces a writer
// hands it, and its SHA-256 is crypto/sha256's of those bytes (FIPS 180-4
// through the standard library, not our code): sizes at and around the
// block and buffer edges, with O_DIRECT asked for and with it off (the
// path taken where a file system refuses it).
func TestFileSinkBytesAndDigest(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 37))
	sizes := []int{0, 1, sinkAlign - 1, sinkAlign, sinkAlign + 1, sinkFirst - 1, sinkFirst, sinkFirst + 1,
		3*sinkFirst + 17, sinkBuffer, 2*sinkBuffer + sinkFirst + 4097, 3*sinkBuffer + 1}
	for _, direct := range []bool{true, false} {
		for _, n := range sizes {
			data := make([]byte, n)
			for i := range data {
				data[i] = byte(rng.Uint32())
			}
			path := filepath.Join(t.TempDir(), "out.bin")
			f, err := os.Create(path)
			if err != nil {
				t.Fatal(err)
			}
			s := newFileSink(f, true)
			if !direct {
				s.direct = setDirectIO(f, false)
			}
			t.Logf("direct I/O asked for %v, on %v", direct, s.direct)
			for rest := data; len(rest) > 0; { // pieces of 1 byte to 200 kB
				k := min(len(rest), 1+rng.IntN(200_000))
				if _, err := s.Write(rest[:k]); err != nil {
					t.Fatal(err)
				}
				rest = rest[k:]
			}
			size, sum, err := s.finish()
			if err != nil {
				t.Fatal(err)
			}
			f.Close()
			got, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, data) || size != int64(n) || sum != sha256.Sum256(data) {
				t.Errorf("direct %v, %d bytes: file %d bytes (equal %v), size %d, digest right %v",
					direct, n, len(got), bytes.Equal(got, data), size, sum == sha256.Sum256(data))
			}
		}
	}
}

// A write that fails (the file is open read-only) reaches the caller,
// from Write once a buffer is handed off or from finish.
func TestFileSinkWriteError(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ro.bin")
	if err := os.WriteFile(path, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s := newFileSink(f, true)
	_, werr := s.Write(make([]byte, 3*sinkFirst))
	_, _, ferr := s.finish()
	if werr == nil && ferr == nil {
		t.Fatal("writing into a read-only file gave no error")
	}
}

// WriteFileAtomic records each file's size and SHA-256 as it writes it;
// WrittenDigest gives them while the file is as written, and not once it
// has changed (the caller then reads the file).
func TestWrittenDigest(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []int{0, 10, sinkBuffer + 5} {
		path := filepath.Join(dir, "f"+strconv.Itoa(n)+".txt")
		data := bytes.Repeat([]byte("head loss "), n/10+1)[:n]
		if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(data); return err }); err != nil {
			t.Fatal(err)
		}
		d, ok := WrittenDigest(path)
		if !ok || d.Bytes != int64(n) || d.SHA256 != sha256.Sum256(data) {
			t.Errorf("%d bytes: digest %v (%d bytes), want the file's", n, ok, d.Bytes)
		}
		f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
		if err != nil {
			t.Fatal(err)
		}
		f.WriteString("x")
		f.Close()
		if _, ok := WrittenDigest(path); ok {
			t.Errorf("%d bytes: digest still given after the file changed", n)
		}
	}
	if _, ok := WrittenDigest(filepath.Join(dir, "never.txt")); ok {
		t.Error("digest given for a file WriteFileAtomic did not write")
	}
}

// On /dev/shm (tmpfs), where Linux kernels before 6.6 refuse direct I/O and
// later ones accept it without bypassing anything, the sink writes every
// byte either way.
func TestFileSinkWithoutDirectIO(t *testing.T) {
	dir, err := os.MkdirTemp("/dev/shm", "headroom-sink-")
	if err != nil {
		t.Skipf("no /dev/shm here: %v", err)
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "out.bin")
	if f, err := os.Create(path + ".probe"); err == nil {
		t.Logf("direct I/O on %s: %v", dir, setDirectIO(f, true))
		f.Close()
	}
	data := bytes.Repeat([]byte{7, 1, 9}, sinkBuffer)
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(data); return err }); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil || !bytes.Equal(got, data) {
		t.Fatalf("read back %d bytes (%v), want %d", len(got), err, len(data))
	}
}

// A direct write the file system refuses (here: from a buffer off the
// block alignment, which ext4 and XFS answer with EINVAL) is written
// through the page cache instead, and the sink stays there.
func TestFileSinkRefusedDirectWrite(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.bin")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s := newFileSink(f, true)
	if !s.direct {
		t.Skip("no direct I/O on this file system")
	}
	buf := alignedBuffer(2*sinkAlign, sinkAlign)
	for i := range buf {
		buf[i] = byte(i)
	}
	if err := s.writeOut(buf[1:sinkAlign+1], true); err != nil {
		t.Fatal(err)
	}
	got, _ := os.ReadFile(path)
	if !bytes.Equal(got, buf[1:sinkAlign+1]) {
		t.Fatalf("read back %d bytes, want the %d written", len(got), sinkAlign)
	}
	t.Logf("direct I/O after the misaligned write: %v", s.direct)
}

// FileDigest reads any file's size and SHA-256 as crypto/sha256 gives them,
// past the page cache or through it, whatever the file's length.
func TestFileDigest(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []int{0, 1, sinkAlign, sinkBuffer - 1, sinkBuffer + sinkAlign + 3} {
		data := bytes.Repeat([]byte("fire flow "), n/10+1)[:n]
		path := filepath.Join(dir, "d"+strconv.Itoa(n))
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		d, err := FileDigest(path)
		if err != nil || d.Bytes != int64(n) || d.SHA256 != sha256.Sum256(data) {
			t.Errorf("%d bytes: digest of %d bytes (%v), want crypto/sha256's", n, d.Bytes, err)
		}
	}
}
