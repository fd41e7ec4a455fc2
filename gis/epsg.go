package gis

import (
	"fmt"
	"sort"
)

// crsUnitCode is a linear unit in the built-in table.
type crsUnitCode uint8

const (
	crsMetre  crsUnitCode = iota
	crsFoot               // international foot, 0.3048 m
	crsUSFoot             // US survey foot, 1200/3937 m
)

// crsUnitOf returns metres per unit and the unit's name.
func crsUnitOf(u crsUnitCode) (float64, string) {
	switch u {
	case crsFoot:
		return MetresPerFoot, "foot"
	case crsUSFoot:
		return MetresPerUSSurveyFoot, "US survey foot"
	}
	return 1, "metre"
}

// crsEntry is one projected CRS of the built-in table (epsg_table.go).
// Angles are degrees; FE and FN are in the CRS's own unit, as EPSG gives them.
type crsEntry struct {
	Code                               int
	Name                               string
	Base                               int // EPSG code of the geographic CRS it is based on
	Method                             Method
	Lat0, Lon0, Lat1, Lat2, K0, FE, FN float64
	Unit                               crsUnitCode
	// Area of use (degrees), from EPSG.
	South, North, West, East float64
}

// crsGeog describes a geographic CRS headroom knows: its names in the GDAL
// (EPSG) and ESRI dialects.
type crsGeog struct {
	Code        int
	Name        string // EPSG name
	Datum       string // GDAL WKT1 datum name
	DatumCode   int
	ESRIName    string
	ESRIDatum   string
	Realization string
	Ellipsoid   Ellipsoid
	EllCode     int
}

// crsGeogTable lists the geographic CRSs (names as printed by PROJ 9.1.1
// `projinfo -o WKT1_GDAL` and `-o WKT1_ESRI`).
var crsGeogTable = []crsGeog{
	{4152, "NAD83(HARN)", "NAD83_High_Accuracy_Reference_Network", 6152, "GCS_North_American_1983_HARN", "D_North_American_1983_HARN", "NAD83(HARN)", EllipsoidGRS80, 7019},
	{4269, "NAD83", "North_American_Datum_1983", 6269, "GCS_North_American_1983", "D_North_American_1983", "NAD83", EllipsoidGRS80, 7019},
	{4326, "WGS 84", "WGS_1984", 6326, "GCS_WGS_1984", "D_WGS_1984", "WGS84", EllipsoidWGS84, 7030},
	{4617, "NAD83(CSRS)", "NAD83_Canadian_Spatial_Reference_System", 6140, "GCS_North_American_1983_CSRS", "D_North_American_1983_CSRS", "NAD83(CSRS)", EllipsoidGRS80, 7019},
	{4759, "NAD83(NSRS2007)", "NAD83_National_Spatial_Reference_System_2007", 6759, "GCS_NAD_1983_NSRS2007", "D_NAD_1983_NSRS2007", "NAD83(NSRS2007)", EllipsoidGRS80, 7019},
	{6318, "NAD83(2011)", "NAD83_National_Spatial_Reference_System_2011", 1116, "GCS_NAD_1983_2011", "D_NAD_1983_2011", "NAD83(2011)", EllipsoidGRS80, 7019},
}

func crsGeogByCode(code int) (crsGeog, bool) {
	for _, g := range crsGeogTable {
		if g.Code == code {
			return g, true
		}
	}
	return crsGeog{}, false
}

func crsGeogByRealization(r string) (crsGeog, bool) {
	for _, g := range crsGeogTable {
		if g.Realization == r {
			return g, true
		}
	}
	return crsGeog{}, false
}

func crsDatumOf(realization string) string {
	if realization == "WGS84" {
		return "WGS84"
	}
	return "NAD83"
}

// crsGeographicCRS builds the geographic CRS of a crsGeogTable code; it
// panics on a code not in that table (a programming error).
func crsGeographicCRS(code int) *CRS {
	g, ok := crsGeogByCode(code)
	if !ok {
		panic(fmt.Sprintf("gis: no geographic CRS %d", code))
	}
	c := &CRS{Name: g.Name, EPSG: g.Code, Method: Geographic, Datum: crsDatumOf(g.Realization),
		Ellipsoid: g.Ellipsoid, UnitName: "degree", realization: g.Realization}
	c.proj = c.crsPrepare()
	return c
}

// crsFromEntry turns a table row into a CRS ready to project.
func crsFromEntry(e *crsEntry) *CRS {
	c := crsEntryCRS(e)
	c.proj = c.crsPrepare()
	return c
}

// crsEntryCRS turns a table row into a CRS without preparing the projection.
func crsEntryCRS(e *crsEntry) *CRS {
	g, _ := crsGeogByCode(e.Base)
	u, uname := crsUnitOf(e.Unit)
	c := &CRS{Name: e.Name, EPSG: e.Code, Method: e.Method, Datum: crsDatumOf(g.Realization), Ellipsoid: g.Ellipsoid,
		LatOrigin: e.Lat0, LonOrigin: e.Lon0, StdParallel1: e.Lat1, StdParallel2: e.Lat2, ScaleFactor: e.K0,
		FalseEasting: e.FE * u, FalseNorthing: e.FN * u, Unit: u, UnitName: uname, realization: g.Realization}
	return c
}

func crsLookup(code int) *crsEntry {
	i := sort.Search(len(crsTable), func(i int) bool { return crsTable[i].Code >= code })
	if i < len(crsTable) && crsTable[i].Code == code {
		return &crsTable[i]
	}
	return nil
}

// EPSG returns the CRS with the given EPSG code from headroom's built-in table:
// the geographic CRSs 4326 (WGS 84), 4269 (NAD83), 4152 (NAD83(HARN)),
// 4759 (NAD83(NSRS2007)), 6318 (NAD83(2011)) and 4617 (NAD83(CSRS)), and every
// EPSG projected CRS on NAD83, NAD83(HARN), NAD83(NSRS2007) or NAD83(2011)
// by Transverse Mercator or Lambert Conformal Conic (the State Plane zones in
// metres, US survey feet and feet, UTM zones, state and county systems),
// plus WGS 84 / UTM zones 1N–60N and 1S–60S.
func EPSG(code int) (*CRS, error) {
	if _, ok := crsGeogByCode(code); ok {
		return crsGeographicCRS(code), nil
	}
	if e := crsLookup(code); e != nil {
		return crsFromEntry(e), nil
	}
	return nil, fmt.Errorf("gis: EPSG:%d is not in headroom's table of coordinate systems "+
		"(NAD83 State Plane and UTM zones, WGS 84 UTM, lon/lat); give the layer's .prj or reproject it", code)
}

// crsIdentify finds the table entry on the same datum realisation that is
// Equal to c, and returns it when exactly one matches.
func crsIdentify(c *CRS) *crsEntry {
	var found *crsEntry
	for i := range crsTable {
		e := &crsTable[i]
		if e.Method != c.Method || !crsClose(e.Lon0, c.LonOrigin) || !crsClose(e.Lat0, c.LatOrigin) {
			continue
		}
		if g, _ := crsGeogByCode(e.Base); g.Realization != c.realization {
			continue
		}
		if crsEntryCRS(e).Equal(c) {
			if found != nil {
				return nil
			}
			found = e
		}
	}
	return found
}

// crsAreaOfUse returns the area of use of a table CRS (south, north, west, east in degrees).
func crsAreaOfUse(code int) (s, n, w, e float64, ok bool) {
	if t := crsLookup(code); t != nil {
		return t.South, t.North, t.West, t.East, true
	}
	return 0, 0, 0, 0, false
}
