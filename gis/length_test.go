package gis

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
)

// Reference distances from PROJ's geod 9.1.1 on the WGS84 ellipsoid. The end
// points came from the forward problem
//
//	echo "lat -97.5 az dist" | geod +ellps=WGS84 -f %.9f
//
// and the distance from the inverse problem on the rounded end points
//
//	echo "lat1 lon1 lat2 lon2" | geod +ellps=WGS84 -I +units=m -f %.6f -F %.4f
//
// (-F sets the distance format; -f alone leaves it at 3 decimals).
var geodCases = []struct {
	name                   string
	lat1, lon1, lat2, lon2 float64
	metres                 float64
}{
	{"lat35 N-S 100m", 35, -97.5, 35.000901383, -97.500000000, 100.0000},
	{"lat35 N-S 1km", 35, -97.5, 35.009013828, -97.500000000, 1000.0000},
	{"lat35 N-S 10km", 35, -97.5, 35.090137676, -97.500000000, 10000.0000},
	{"lat35 E-W 100m", 35, -97.5, 34.999999995, -97.498904568, 100.0000},
	{"lat35 E-W 1km", 35, -97.5, 34.999999506, -97.489045678, 1000.0000},
	{"lat35 E-W 10km", 35, -97.5, 34.999950576, -97.390456824, 10000.0000},
	{"lat35 diagonal 100m", 35, -97.5, 35.000637372, -97.499225406, 100.0000},
	{"lat35 diagonal 1km", 35, -97.5, 35.006373493, -97.492253524, 1000.0000},
	{"lat35 diagonal 10km", 35, -97.5, 35.063712357, -97.422481120, 10000.0000},
	{"lat60 N-S 100m", 60, -97.5, 60.000897567, -97.500000000, 100.0000},
	{"lat60 N-S 1km", 60, -97.5, 60.008975665, -97.500000000, 1000.0001},
	{"lat60 N-S 10km", 60, -97.5, 60.089756093, -97.500000000, 10000.0001},
	{"lat60 E-W 100m", 60, -97.5, 59.999999988, -97.498207885, 100.0000},
	{"lat60 E-W 1km", 60, -97.5, 59.999998784, -97.482078854, 1000.0000},
	{"lat60 E-W 10km", 60, -97.5, 59.999878435, -97.320788974, 10000.0000},
	{"lat60 diagonal 100m", 60, -97.5, 60.000634670, -97.498732759, 100.0000},
	{"lat60 diagonal 1km", 60, -97.5, 60.006346147, -97.487325408, 1000.0000},
	{"lat60 diagonal 10km", 60, -97.5, 60.063406357, -97.373035274, 10000.0000},
}

// tolerancePerKm is the accuracy asked of pipe lengths: 1 mm per km
// (geod prints 0.1 mm, so allow that rounding too).
func geodTolerance(metres float64) float64 { return 1e-3*metres/1000 + 1e-4 }

func TestGeodesicLengthAgainstGeod(t *testing.T) {
	for _, tc := range geodCases {
		t.Run(tc.name, func(t *testing.T) {
			got := GeodesicLength(orb.LineString{{tc.lon1, tc.lat1}, {tc.lon2, tc.lat2}}).Metres()
			if d := math.Abs(got - tc.metres); d > geodTolerance(tc.metres) {
				t.Errorf("got %.4f m, want %.4f m (PROJ geod), off by %.2f mm", got, tc.metres, d*1000)
			}
		})
	}
}

// A polyline's length is the sum of its segments (definition), and repeated
// vertices add nothing. The reference is the sum of two PROJ geod cases.
func TestGeodesicLengthPolyline(t *testing.T) {
	a, b := geodCases[1], geodCases[4] // both start at (35, -97.5)
	ls := orb.LineString{{a.lon2, a.lat2}, {a.lon1, a.lat1}, {a.lon1, a.lat1}, {b.lon2, b.lat2}}
	want := a.metres + b.metres
	if got := GeodesicLength(ls).Metres(); math.Abs(got-want) > geodTolerance(want) {
		t.Errorf("got %.4f m, want %.4f m", got, want)
	}
	if got := GeodesicLength(orb.LineString{{1, 2}}); got != 0 {
		t.Errorf("one vertex: got %v, want 0", got)
	}
}

// TestGeodesicLengthLiveGeod compares ~50 seeded random segments of 10 m to
// 5 km with PROJ's geod when it is installed.
func TestGeodesicLengthLiveGeod(t *testing.T) {
	path := requireTool(t, "geod")
	rng := rand.New(rand.NewPCG(7, 35))
	type seg struct{ p, q orb.Point }
	var segs []seg
	var in strings.Builder
	for range 50 {
		lat := -70 + 140*rng.Float64()
		lon := -180 + 360*rng.Float64()
		d := 10 + 4990*rng.Float64()
		az := 2 * math.Pi * rng.Float64()
		m, n := radii(lat * degree)
		q := orb.Point{lon + d*math.Sin(az)/(n*math.Cos(lat*degree))/degree, lat + d*math.Cos(az)/m/degree}
		segs = append(segs, seg{orb.Point{lon, lat}, q})
		fmt.Fprintf(&in, "%.10f %.10f %.10f %.10f\n", lat, lon, q[1], q[0])
	}
	cmd := exec.Command(path, "+ellps=WGS84", "-I", "+units=m", "-f", "%.6f", "-F", "%.5f")
	cmd.Stdin = strings.NewReader(in.String())
	var out bytes.Buffer
	cmd.Stdout = &out
	if err := cmd.Run(); err != nil {
		t.Fatalf("geod: %v", err)
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	if len(lines) != len(segs) {
		t.Fatalf("geod gave %d lines for %d segments", len(lines), len(segs))
	}
	for i, line := range lines {
		f := strings.Fields(line)
		want, err := strconv.ParseFloat(f[len(f)-1], 64)
		if err != nil {
			t.Fatalf("geod line %q: %v", line, err)
		}
		got := GeodesicLength(orb.LineString{segs[i].p, segs[i].q}).Metres()
		if d := math.Abs(got - want); d > geodTolerance(want) {
			t.Errorf("segment %d %v→%v: got %.5f m, want %.5f m (geod), off by %.3f mm", i, segs[i].p, segs[i].q, got, want, d*1000)
		}
	}
}
