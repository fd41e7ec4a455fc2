package gis

import (
	"math"

	"github.com/paulmach/orb"

	"headroom/hydraulics"
)

// WGS84 ellipsoid (NIMA TR8350.2): semi-major axis a in metres and flattening f.
const (
	wgs84A  = 6378137.0
	wgs84F  = 1 / 298.257223563
	wgs84E2 = wgs84F * (2 - wgs84F) // first eccentricity squared, e² = f(2 − f)
)

const degree = math.Pi / 180

// radii returns the meridional radius of curvature M and the prime-vertical
// radius N, in metres, at geodetic latitude phi (radians):
//
//	W = √(1 − e²·sin²φ),  M = a(1 − e²)/W³,  N = a/W
//
// Reference: any geodesy text, e.g. Snyder, Map Projections – A Working Manual
// (USGS PP 1395, 1987), eqs. 4-18 and 4-20.
func radii(phi float64) (m, n float64) {
	s := math.Sin(phi)
	w2 := 1 - wgs84E2*s*s
	w := math.Sqrt(w2)
	return wgs84A * (1 - wgs84E2) / (w2 * w), wgs84A / w
}

// segmentMetres returns the length in metres of the short segment p→q
// (lon/lat degrees) on the WGS84 ellipsoid, with the local radii at the
// segment's mid-latitude φm:
//
//	d = √((M(φm)·Δφ)² + (N(φm)·cos φm·Δλ)²)
//
// Δλ is taken the short way round the antimeridian. For pipe segments (up to
// a few km) this agrees with the geodesic of PROJ's geod to well under 1 mm
// per km (see length_test.go).
func segmentMetres(p, q orb.Point) float64 {
	phi1, phi2 := p[1]*degree, q[1]*degree
	dphi := phi2 - phi1
	dlam := (q[0] - p[0]) * degree
	if dlam > math.Pi {
		dlam -= 2 * math.Pi
	} else if dlam < -math.Pi {
		dlam += 2 * math.Pi
	}
	phim := (phi1 + phi2) / 2
	m, n := radii(phim)
	return math.Hypot(m*dphi, n*math.Cos(phim)*dlam)
}

// GeodesicLength returns the length of a lon/lat line string on the WGS84
// ellipsoid (a = 6378137 m, f = 1/298.257223563): the sum over its segments of
// the local-radii length of [segmentMetres]. Repeated vertices add nothing.
// orb's geo package is not used: it is spherical and off by up to 0.34 %.
func GeodesicLength(ls orb.LineString) hydraulics.Length {
	var sum float64
	for i := 1; i < len(ls); i++ {
		sum += segmentMetres(ls[i-1], ls[i])
	}
	return hydraulics.Length(sum)
}
