package gis

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// TestAppendFixedIsStrconv: the fast fixed-decimal path writes exactly what
// strconv.AppendFloat(x, 'f', d, 64) writes (the reference, with the
// package's "no -0" rule), or declines; checked on a million random values
// across magnitudes and decimals, on exact half-way values (k+½)/10^d,
// which strconv rounds half to even and the fast path must hand over, and
// on their float neighbours.
func TestAppendFixedIsStrconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	check := func(x float64, d int) {
		t.Helper()
		want := string(appendFixedStrconv(nil, x, d))
		got, ok := appendFixed(nil, x, d)
		if ok && string(got) != want {
			t.Fatalf("appendFixed(%v, %d) = %q, strconv gives %q", x, d, got, want)
		}
		if s, _, _ := formatFloat(nil, Column{Kind: Real, Decimals: d}, x); string(s) != want {
			t.Fatalf("formatFloat(%v, %d) = %q, want %q", x, d, s, want)
		}
	}
	fast := 0
	for range 1_000_000 {
		d := rng.IntN(8)
		x := (rng.Float64()*2 - 1) * math.Pow(10, float64(rng.IntN(20)-8))
		check(x, d)
		if _, ok := appendFixed(nil, x, d); ok {
			fast++
		}
	}
	if fast < 900_000 {
		t.Errorf("fast path took %d of a million values; it should take nearly all", fast)
	}
	for d := range 7 {
		for k := -2000; k <= 2000; k++ {
			x := (float64(k) + 0.5) / math.Pow(10, float64(d))
			check(x, d)
			check(math.Nextafter(x, math.Inf(1)), d)
			check(math.Nextafter(x, math.Inf(-1)), d)
		}
	}
	for _, x := range []float64{0, math.Copysign(0, -1), 1e-300, -1e-300, 4.5e15, -4.5e15, 1 << 52, 0.125, -0.125, 2.675, 1.005} {
		for d := range 16 {
			check(x, d)
		}
	}
	if got := strconv.FormatFloat(2.675, 'f', 2, 64); got != "2.67" { // 2.675 is 2.67499999… in binary
		t.Fatalf("strconv gives %s for 2.675", got)
	}
}

// BenchmarkFormatFixed writes a million three-decimal values through the
// fast path and through strconv, in values/s.
func BenchmarkFormatFixed(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	xs := make([]float64, 1<<20)
	for i := range xs {
		xs[i] = (rng.Float64()*2 - 1) * 3000
	}
	for _, c := range []struct {
		name string
		f    func([]byte, float64) []byte
	}{
		{"fast", func(b []byte, x float64) []byte {
			out, _, _ := formatFloat(b, Column{Kind: Real, Decimals: 3}, x)
			return out
		}},
		{"strconv", func(b []byte, x float64) []byte { return appendFixedStrconv(b, x, 3) }},
	} {
		b.Run(c.name, func(b *testing.B) {
			buf := make([]byte, 0, 64)
			n := 0
			for b.Loop() {
				for _, x := range xs {
					buf = c.f(buf[:0], x)
				}
				n += len(xs)
			}
			b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "values/s")
		})
	}
}

// jsonStringCases are texts whose JSON escaping differs by rule: quotes,
// backslashes, every control character, HTML-sensitive bytes, DEL, U+2028
// and U+2029, multi-byte UTF-8 and invalid UTF-8.
var jsonStringCases = []string{
	"", "QM-00001", `a"b\c`, "<b>&amp;</b>", "\x7f", "line\u2028para\u2029end", "Straße 💧 ñ",
	"\xff", "ok\xc3", "\xe2\x80", "\xed\xa0\x80", // invalid: lone byte, cut sequences, a surrogate
	string([]byte{0, 1, 7, 8, 9, 10, 11, 12, 13, 27, 31, 32}),
}

// TestAppendJSONStringIsMarshal: appendJSONString writes what json.Marshal
// writes for a string (the reference), on the cases above and on every
// single byte and every two-byte pair.
func TestAppendJSONStringIsMarshal(t *testing.T) {
	check := func(s string) {
		t.Helper()
		want, _ := json.Marshal(s)
		if got := appendJSONString([]byte("x"), s); string(got) != "x"+string(want) {
			t.Fatalf("appendJSONString(%q) = %s, json.Marshal gives %s", s, got[1:], want)
		}
	}
	for _, s := range jsonStringCases {
		check(s)
	}
	for a := range 256 {
		check(string([]byte{byte(a)}))
		for b := range 256 {
			check(string([]byte{byte(a), byte(b)}))
		}
	}
}

// FuzzAppendJSONString holds appendJSONString to json.Marshal on any text.
func FuzzAppendJSONString(f *testing.F) {
	for _, s := range jsonStringCases {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		want, _ := json.Marshal(s)
		if got := appendJSONString(nil, s); string(got) != string(want) {
			t.Fatalf("appendJSONString(%q) = %s, json.Marshal gives %s", s, got, want)
		}
	})
}

// csvFieldCases are texts on each side of encoding/csv's quoting rules.
var csvFieldCases = []string{
	"", "plain", "a,b", `say "hi"`, "two\nlines", "cr\rhere", "crlf\r\n", " lead", "\tlead", "\u00a0nbsp",
	"\u3000ideographic", "trail ", `\.`, `\.x`, "=A1", "-12.5", "'", "Straße 💧", "\xff\xfe",
}

// TestAppendCSVFieldIsEncodingCSV: appendCSVField writes each field as
// encoding/csv's Writer (the reference) writes a record of that one field.
func TestAppendCSVFieldIsEncodingCSV(t *testing.T) {
	for _, s := range csvFieldCases {
		if got, want := string(appendCSVField(nil, s))+"\n", csvRecord(s); got != want {
			t.Errorf("appendCSVField(%q) = %q, encoding/csv writes %q", s, got, want)
		}
	}
}

// FuzzAppendCSVField holds appendCSVField to encoding/csv on any text.
func FuzzAppendCSVField(f *testing.F) {
	for _, s := range csvFieldCases {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if got, want := string(appendCSVField(nil, s))+"\n", csvRecord(s); got != want {
			t.Fatalf("appendCSVField(%q) = %q, encoding/csv writes %q", s, got, want)
		}
	})
}

// csvRecord is encoding/csv's text of a one-field record.
func csvRecord(s string) string {
	var b strings.Builder
	w := csv.NewWriter(&b)
	w.Write([]string{s})
	w.Flush()
	return b.String()
}
