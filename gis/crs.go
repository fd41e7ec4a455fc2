package gis

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Ellipsoid is a reference ellipsoid: semi-major axis A in metres and inverse
// flattening InvF (0 for a sphere).
type Ellipsoid struct {
	Name string
	A    float64 // semi-major axis, m
	InvF float64 // inverse flattening 1/f; 0 means a sphere
}

// The two ellipsoids of NAD83 and WGS 84. They differ only in f (by 1.6e-11
// relative); each CRS uses the one it names.
var (
	EllipsoidGRS80 = Ellipsoid{Name: "GRS 1980", A: 6378137, InvF: 298.257222101}
	EllipsoidWGS84 = Ellipsoid{Name: "WGS 84", A: 6378137, InvF: 298.257223563}
)

// Method is a coordinate operation method of a CRS.
type Method int

// The methods headroom computes. Together they cover the NAD83 State Plane and
// the UTM zones.
const (
	Geographic         Method = iota // lon/lat in degrees, no projection
	TransverseMercator               // EPSG method 9807, Krüger series
	LambertConic1SP                  // EPSG method 9801
	LambertConic2SP                  // EPSG method 9802
)

// String names the method as EPSG does.
func (m Method) String() string {
	switch m {
	case Geographic:
		return "Geographic"
	case TransverseMercator:
		return "Transverse Mercator"
	case LambertConic1SP:
		return "Lambert Conic Conformal (1SP)"
	case LambertConic2SP:
		return "Lambert Conic Conformal (2SP)"
	}
	return "Method(" + strconv.Itoa(int(m)) + ")"
}

// Exact lengths of the feet, in metres.
const (
	MetresPerFoot         = 0.3048        // international foot
	MetresPerUSSurveyFoot = 1200.0 / 3937 // US survey foot
)

// CRS is a coordinate reference system: geographic lon/lat, or projected by
// one of the methods above on NAD83 or WGS 84. NAD83 is taken equal to WGS 84
// (a null datum transform, as GDAL and PROJ do by default; the two differ by
// about 1–1.5 m, which does not matter for hydraulics).
//
// Angles are degrees; FalseEasting and FalseNorthing are metres whatever the
// linear unit. For a geographic CRS Unit is 0 and UnitName "degree".
// For Transverse Mercator and LCC 1SP, LatOrigin/LonOrigin are the natural
// origin and ScaleFactor k₀; for LCC 2SP they are the false origin and
// ScaleFactor is 1.
type CRS struct {
	Name      string // e.g. "NAD83 / California zone 5 (ftUS)"
	EPSG      int    // 0 when unknown
	Method    Method
	Datum     string // "NAD83" or "WGS84" (normalised)
	Ellipsoid Ellipsoid

	LatOrigin, LonOrigin, StdParallel1, StdParallel2, ScaleFactor, FalseEasting, FalseNorthing float64

	Unit     float64 // metres per linear unit: 1, 0.3048 or 1200/3937 exactly
	UnitName string  // "metre", "foot", "US survey foot"

	realization string   // "NAD83", "NAD83(HARN)", "NAD83(NSRS2007)", "NAD83(2011)", "NAD83(CSRS)", "WGS84"
	proj        *crsProj // set by the constructors; rebuilt on the fly if the fields change
}

// crsProj is a prepared projection together with the parameters it was built from.
type crsProj struct {
	key [12]float64
	tm  *crsTM
	lcc *crsLCC
}

// CRS84 is WGS 84 longitude/latitude in degrees, the CRS of RFC 7946 GeoJSON.
var CRS84 = crsGeographicCRS(4326)

// Geographic reports whether c is lon/lat (no projection).
func (c *CRS) Geographic() bool { return c.Method == Geographic }

// String gives "EPSG:2229 (NAD83 / California zone 5 (ftUS))", or the name alone when the code is unknown.
func (c *CRS) String() string {
	if c == nil {
		return "<nil CRS>"
	}
	if c.EPSG != 0 {
		return fmt.Sprintf("EPSG:%d (%s)", c.EPSG, c.Name)
	}
	if c.Name == "" {
		return "unnamed " + c.Method.String() + " CRS"
	}
	return c.Name
}

func (c *CRS) crsKey() [12]float64 {
	return [12]float64{float64(c.Method), c.Ellipsoid.A, c.Ellipsoid.InvF, c.LatOrigin, c.LonOrigin,
		c.StdParallel1, c.StdParallel2, c.ScaleFactor, c.FalseEasting, c.FalseNorthing, c.Unit, 0}
}

// crsPrepare builds the projection constants for the current parameters.
func (c *CRS) crsPrepare() *crsProj {
	p := &crsProj{key: c.crsKey()}
	switch c.Method {
	case TransverseMercator:
		p.tm = newCRSTM(c.Ellipsoid, c.LatOrigin, c.LonOrigin, c.ScaleFactor, c.FalseEasting, c.FalseNorthing)
	case LambertConic1SP, LambertConic2SP:
		p.lcc = newCRSLCC(c.Ellipsoid, c.Method, c.LatOrigin, c.LonOrigin, c.StdParallel1, c.StdParallel2,
			c.ScaleFactor, c.FalseEasting, c.FalseNorthing)
	}
	return p
}

// crsProjection returns the prepared projection, building a temporary one
// (never stored, so concurrent use stays safe) when the fields were changed
// after construction.
func (c *CRS) crsProjection() *crsProj {
	if p := c.proj; p != nil && p.key == c.crsKey() {
		return p
	}
	return c.crsPrepare()
}

func (c *CRS) crsUnit() float64 {
	if c.Unit == 0 {
		return 1
	}
	return c.Unit
}

// Forward projects lon/lat in degrees (NAD83 ≡ WGS 84) to x/y in the CRS's
// linear unit. It is the identity for a geographic CRS.
func (c *CRS) Forward(lon, lat float64) (x, y float64) {
	const d = math.Pi / 180
	p := c.crsProjection()
	switch {
	case p.tm != nil:
		x, y = p.tm.forward(lon*d, lat*d)
	case p.lcc != nil:
		x, y = p.lcc.forward(lon*d, lat*d)
	default:
		return lon, lat
	}
	u := c.crsUnit()
	return x / u, y / u
}

// Inverse turns x/y in the CRS's linear unit back into lon/lat in degrees.
// It is the identity for a geographic CRS.
func (c *CRS) Inverse(x, y float64) (lon, lat float64) {
	const d = 180 / math.Pi
	p := c.crsProjection()
	u := c.crsUnit()
	switch {
	case p.tm != nil:
		lon, lat = p.tm.inverse(x*u, y*u)
	case p.lcc != nil:
		lon, lat = p.lcc.inverse(x*u, y*u)
	default:
		return x, y
	}
	return lon * d, lat * d
}

// crsClose reports |a − b| ≤ 1e-12·max(1, |a|, |b|).
func crsClose(a, b float64) bool {
	return math.Abs(a-b) <= 1e-12*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// Equal reports whether c and o define the same coordinates: same method,
// ellipsoid (A and InvF), projection parameters and unit, each within 1e-12
// relative. Two exceptions, both harmless: the standard parallels of a 2SP cone
// may come in either order, and false easting/northing also match within
// 1 mm, because EPSG stores US-foot false origins rounded to 0.001 ft while
// ESRI software derives them from the metre values. Names, EPSG codes and the
// datum realisation are not compared.
func (c *CRS) Equal(o *CRS) bool {
	if c == nil || o == nil {
		return c == o
	}
	if c.Method != o.Method || !crsClose(c.Ellipsoid.A, o.Ellipsoid.A) || !crsClose(c.Ellipsoid.InvF, o.Ellipsoid.InvF) {
		return false
	}
	if c.Method == Geographic {
		return true
	}
	origin := func(a, b float64) bool { return crsClose(a, b) || math.Abs(a-b) <= 1e-3 }
	if !crsClose(c.Unit, o.Unit) || !origin(c.FalseEasting, o.FalseEasting) || !origin(c.FalseNorthing, o.FalseNorthing) ||
		!crsClose(c.LatOrigin, o.LatOrigin) || !crsClose(c.LonOrigin, o.LonOrigin) {
		return false
	}
	switch c.Method {
	case LambertConic2SP:
		same := crsClose(c.StdParallel1, o.StdParallel1) && crsClose(c.StdParallel2, o.StdParallel2)
		swapped := crsClose(c.StdParallel1, o.StdParallel2) && crsClose(c.StdParallel2, o.StdParallel1)
		return same || swapped
	default:
		return crsClose(c.ScaleFactor, o.ScaleFactor)
	}
}

// ParseCRS reads a CRS given by the user or a file: "EPSG:2229" (any case,
// also "urn:ogc:def:crs:EPSG::2229"), "CRS84" or "OGC:CRS84", or WKT text
// (see [ParseWKT]).
func ParseCRS(s string) (*CRS, error) {
	t := strings.TrimSpace(strings.TrimPrefix(s, "\ufeff"))
	if t == "" {
		return nil, fmt.Errorf("gis: empty coordinate reference system; give e.g. \"EPSG:2229\" or WKT text")
	}
	u := strings.ToUpper(t)
	switch u {
	case "CRS84", "OGC:CRS84", "URN:OGC:DEF:CRS:OGC:1.3:CRS84", "URN:OGC:DEF:CRS:OGC::CRS84", "WGS84":
		c := *CRS84
		return &c, nil
	}
	for _, prefix := range []string{"EPSG:", "URN:OGC:DEF:CRS:EPSG::", "URN:OGC:DEF:CRS:EPSG:"} {
		if strings.HasPrefix(u, prefix) {
			rest := strings.TrimSpace(t[len(prefix):])
			if i := strings.LastIndexByte(rest, ':'); i >= 0 { // a version such as "EPSG:9.8.6:2229"
				rest = rest[i+1:]
			}
			code, err := strconv.Atoi(rest)
			if err != nil || code <= 0 {
				return nil, fmt.Errorf("gis: %q is not an EPSG code; write it as \"EPSG:2229\"", s)
			}
			return EPSG(code)
		}
	}
	if i := strings.IndexAny(t, "[("); i > 0 && crsIsKeyword(t[:i]) {
		return ParseWKT(t)
	}
	return nil, fmt.Errorf("gis: cannot read coordinate reference system %q; give \"EPSG:NNNN\", \"CRS84\" or WKT text", crsShorten(t))
}

func crsIsKeyword(s string) bool {
	s = strings.TrimSpace(s)
	if s == "" {
		return false
	}
	for _, r := range s {
		if !(r >= 'A' && r <= 'Z' || r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '_') {
			return false
		}
	}
	return true
}

// crsShorten cuts long text for an error message.
func crsShorten(s string) string {
	const max = 60
	if len(s) <= max {
		return s
	}
	r := []rune(s)
	if len(r) <= max {
		return s
	}
	return string(r[:max]) + "…"
}
