package hydraulics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestHWPowMatchesLibrary: hwPow agrees with the standard library's
// math.Pow(x, 1/0.54 − 1) to 1e-14 relative (the once-rounded e·ln 2 of
// its reduction leaves up to about 5e-15 at the smallest flows) over flows
// from 1e-12 to 1e8 m³/s, at powers of two and their
// neighbours (the table boundaries), and leaves zero, subnormals and
// infinities to math.Pow.
func TestHWPowMatchesLibrary(t *testing.T) {
	const a = HWExponentFlow - 1
	rng := rand.New(rand.NewPCG(3, 5))
	var xs []float64
	for range 200000 {
		xs = append(xs, math.Pow(10, -12+20*rng.Float64()))
	}
	for e := -40; e <= 27; e++ {
		p := math.Ldexp(1, e)
		xs = append(xs, p, math.Nextafter(p, 0), math.Nextafter(p, math.Inf(1)), p*(1+1.0/128), p*(2-1e-16))
	}
	worst, at := 0.0, 0.0
	for _, x := range xs {
		got, want := hwPow(x), math.Pow(x, a)
		if e := math.Abs(got-want) / want; e > worst {
			worst, at = e, x
		}
	}
	if worst > 1e-14 {
		t.Errorf("largest relative difference from math.Pow %.3g at x = %g", worst, at)
	}
	t.Logf("largest relative difference from math.Pow: %.3g", worst)
	for _, x := range []float64{0, 5e-324, math.Inf(1)} {
		if got, want := hwPow(x), math.Pow(x, a); got != want {
			t.Errorf("hwPow(%g) = %g, math.Pow gives %g", x, got, want)
		}
	}
}

// BenchmarkHWPow compares hwPow with the library form it replaces.
func BenchmarkHWPow(b *testing.B) {
	xs := make([]float64, 4096)
	for i := range xs {
		xs[i] = 1e-4 * float64(i+1)
	}
	var sink float64
	b.Run("hwPow", func(b *testing.B) {
		for b.Loop() {
			for _, x := range xs {
				sink += hwPow(x)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(xs)), "ns/call")
	})
	b.Run("exp-log", func(b *testing.B) {
		for b.Loop() {
			for _, x := range xs {
				sink += math.Exp((HWExponentFlow - 1) * math.Log(x))
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(xs)), "ns/call")
	})
	_ = sink
}
