package report

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"testing"
)

// Parts longer than one deflate chunk are deflated chunk by chunk on
// several goroutines; Go's own archive/zip reader (an independent inflater)
// must read every part back byte for byte, for lengths on and around the
// chunk boundaries, and the archive must not depend on the scheduling.
func TestSortedZipChunkedParts(t *testing.T) {
	lengths := []int{0, 1, deflateChunk - 1, deflateChunk, deflateChunk + 1, 3*deflateChunk + 12345}
	build := func() ([]byte, map[string][]byte) {
		z := &sortedZip{}
		want := map[string][]byte{}
		for k, n := range lengths {
			name := fmt.Sprintf("xl/worksheets/sheet%d.xml", len(lengths)-k) // not in name order
			var data bytes.Buffer
			for r := 0; data.Len() < n; r++ {
				fmt.Fprintf(&data, `<row r="%d"><c r="A%d"><v>%d.%03d</v></c></row>`, r+1, r+1, r*7919%100003, r%997)
			}
			part := data.Bytes()[:n]
			want[name] = part
			w, err := z.Create(name)
			if err != nil {
				t.Fatal(err)
			}
			for len(part) > 0 { // in uneven writes, as io.Copy and excelize make them
				m := min(len(part), 4096+len(part)%7919)
				if _, err := w.Write(part[:m]); err != nil {
					t.Fatal(err)
				}
				part = part[m:]
			}
		}
		var out bytes.Buffer
		if err := z.writeTo(&out); err != nil {
			t.Fatal(err)
		}
		return out.Bytes(), want
	}
	archive, want := build()
	zr, err := zip.NewReader(bytes.NewReader(archive), int64(len(archive)))
	if err != nil {
		t.Fatal(err)
	}
	if len(zr.File) != len(want) {
		t.Fatalf("%d parts, want %d", len(zr.File), len(want))
	}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		got, err := io.ReadAll(rc) // checks the CRC-32 at the end
		rc.Close()
		if err != nil {
			t.Fatalf("%s: %v", f.Name, err)
		}
		if !bytes.Equal(got, want[f.Name]) {
			t.Errorf("%s: %d bytes read back, want %d, or different bytes", f.Name, len(got), len(want[f.Name]))
		}
	}
	if again, _ := build(); !bytes.Equal(again, archive) {
		t.Error("the same parts gave a different archive")
	}
}
