package gis

import (
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
)

// Tolerances: 0.01 ft forward and 1e-9° inverse (LIBRARIES.md §4: a 6th-order
// Krüger TM and an exact LCC agree with PROJ far more closely than this).
const (
	crsTolForwardM   = 0.01 * MetresPerFoot
	crsTolInverseDeg = 1e-9
)

// crsCheckRef checks forward and inverse of c against cs2cs reference points
// and returns the largest forward error (m) and inverse error (degrees).
func crsCheckRef(t *testing.T, c *CRS, pts []crsRefPoint) (maxFwdM, maxInvDeg float64) {
	t.Helper()
	for _, p := range pts {
		x, y := c.Forward(p.Lon, p.Lat)
		d := math.Hypot(x-p.X, y-p.Y) * c.Unit
		maxFwdM = math.Max(maxFwdM, d)
		if !(d <= crsTolForwardM) {
			t.Errorf("%s: Forward(%v, %v) = (%.6f, %.6f), cs2cs (%.6f, %.6f): off %.6f m", c, p.Lon, p.Lat, x, y, p.X, p.Y, d)
		}
		lon, lat := c.Inverse(p.X, p.Y)
		di := math.Max(math.Abs(lon-p.Lon), math.Abs(lat-p.Lat))
		maxInvDeg = math.Max(maxInvDeg, di)
		if !(di <= crsTolInverseDeg) {
			t.Errorf("%s: Inverse(%.6f, %.6f) = (%.12f, %.12f), want (%v, %v): off %.3g°", c, p.X, p.Y, lon, lat, p.Lon, p.Lat, di)
		}
	}
	return maxFwdM, maxInvDeg
}

func TestCRSProjectAgainstCS2CS(t *testing.T) {
	for _, rc := range crsRefCases {
		t.Run(fmt.Sprint(rc.Code), func(t *testing.T) {
			// Reference: rc.Command (PROJ 9.1.1), points in crs_ref_test.go.
			c, err := EPSG(rc.Code)
			if err != nil {
				t.Fatal(err)
			}
			if len(rc.Points) < 20 {
				t.Fatalf("only %d reference points", len(rc.Points))
			}
			f, i := crsCheckRef(t, c, rc.Points)
			t.Logf("%s (%s): max forward error %.2g ft, max inverse error %.2g°", c, c.Method, f/MetresPerFoot, i)
		})
	}
}

// TestCRSTableMethods checks the table holds the methods the brief names
// (each from the EPSG dataset via projinfo).
func TestCRSTableMethods(t *testing.T) {
	cases := []struct {
		code   int
		method Method
		unit   float64
		datum  string
	}{
		{2229, LambertConic2SP, MetresPerUSSurveyFoot, "NAD83"}, // EPSG: CA zone 5 (ftUS)
		{2236, TransverseMercator, MetresPerUSSurveyFoot, "NAD83"},
		{26911, TransverseMercator, 1, "NAD83"},
		{26923, TransverseMercator, 1, "NAD83"},
		{32618, TransverseMercator, 1, "WGS84"},
		{32760, TransverseMercator, 1, "WGS84"},
		{6794, LambertConic1SP, 1, "NAD83"},
		{6795, LambertConic1SP, MetresPerFoot, "NAD83"},
		{6420, LambertConic2SP, MetresPerUSSurveyFoot, "NAD83"},
		{26929, TransverseMercator, 1, "NAD83"}, // Alabama East
	}
	for _, tc := range cases {
		t.Run(fmt.Sprint(tc.code), func(t *testing.T) {
			c, err := EPSG(tc.code)
			if err != nil {
				t.Fatal(err)
			}
			if c.Method != tc.method || c.Unit != tc.unit || c.Datum != tc.datum || c.EPSG != tc.code {
				t.Errorf("%s: method %s unit %v datum %s", c, c.Method, c.Unit, c.Datum)
			}
		})
	}
	if c, _ := EPSG(32618); c.Ellipsoid != EllipsoidWGS84 {
		t.Errorf("WGS 84 UTM on %v", c.Ellipsoid)
	}
	if c, _ := EPSG(26911); c.Ellipsoid != EllipsoidGRS80 {
		t.Errorf("NAD83 UTM on %v", c.Ellipsoid)
	}
	if _, err := EPSG(27700); err == nil || !strings.Contains(err.Error(), "EPSG:27700") {
		t.Errorf("EPSG(27700) (British National Grid, not in table): err %v", err)
	}
}

// crsFixture reads a file of gis/testdata/crs. The files were made with PROJ
// 9.1.1 / GDAL 3.6.2:
//
//	ogr2ogr_N.prj:   ogr2ogr -f "ESRI Shapefile" -t_srs EPSG:N out pt.geojson (the .prj written)
//	wkt1gdal_N.wkt:  projinfo -q -o WKT1_GDAL EPSG:N
//	wkt1esri_N.wkt:  projinfo -q -o WKT1_ESRI EPSG:N
//	wkt2_2229.wkt:   projinfo -q -o WKT2_2019 EPSG:2229
func crsFixture(t testing.TB, name string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", "crs", name))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func crsRefFor(code int) []crsRefPoint {
	for _, rc := range crsRefCases {
		if rc.Code == code {
			return rc.Points
		}
	}
	return nil
}

func TestCRSParseFixtures(t *testing.T) {
	cases := []struct {
		file string
		code int
	}{
		{"ogr2ogr_2229.prj", 2229}, {"ogr2ogr_26911.prj", 26911},
		{"wkt1gdal_2229.wkt", 2229}, {"wkt1gdal_26911.wkt", 26911}, {"wkt1gdal_2236.wkt", 2236},
		{"wkt1esri_2229.wkt", 2229}, {"wkt1esri_26911.wkt", 26911}, {"wkt1esri_2236.wkt", 2236},
		{"wkt2_2229.wkt", 2229},
	}
	for _, tc := range cases {
		text := crsFixture(t, tc.file)
		variants := map[string]string{
			"as written": text,
			"BOM+CRLF":   "\ufeff" + strings.ReplaceAll(text, "\n", "\r\n") + "\r\n",
			"indented":   "  \n\t" + strings.ReplaceAll(text, ",", " ,\n  ") + "\n\n",
		}
		for _, v := range []string{"as written", "BOM+CRLF", "indented"} {
			t.Run(tc.file+"/"+v, func(t *testing.T) {
				c, err := ParseWKT(variants[v])
				if err != nil {
					t.Fatal(err)
				}
				want, _ := EPSG(tc.code)
				if !c.Equal(want) {
					t.Errorf("parsed %+v\nwant %+v", *c, *want)
				}
				// ESRI text has no authority; the table identifies it.
				if c.EPSG != tc.code {
					t.Errorf("EPSG = %d, want %d", c.EPSG, tc.code)
				}
				pts := crsRefFor(tc.code)
				if len(pts) == 0 {
					t.Fatal("no reference points")
				}
				crsCheckRef(t, c, pts) // cs2cs, see crs_ref_test.go
			})
		}
	}
}

func TestCRSUnitSnap(t *testing.T) {
	// The .prj says 0.304800609601219 (GDAL 3.6.2); the US survey foot is 1200/3937 m exactly (NIST).
	c, err := ParseWKT(crsFixture(t, "ogr2ogr_2229.prj"))
	if err != nil {
		t.Fatal(err)
	}
	if c.Unit != 1200.0/3937 || c.UnitName != "US survey foot" {
		t.Errorf("unit %.17g %q, want 1200/3937", c.Unit, c.UnitName)
	}
	for _, tc := range []struct {
		in   float64
		want float64
	}{{0.304800609601219, 1200.0 / 3937}, {0.3048006096012192, 1200.0 / 3937}, {0.3048, 0.3048}, {1.0, 1}, {0.201168, 0.201168}} {
		if got, _ := wktSnapUnit(tc.in, ""); got != tc.want {
			t.Errorf("wktSnapUnit(%v) = %.17g, want %.17g", tc.in, got, tc.want)
		}
	}
}

// crsESRI2229 is the GDAL-written ESRI .prj for EPSG:2229 with one part
// replaced, for the error cases below.
func crsESRI2229(t *testing.T, old, new string) string {
	s := crsFixture(t, "ogr2ogr_2229.prj")
	if !strings.Contains(s, old) {
		t.Fatalf("fixture lacks %q", old)
	}
	return strings.Replace(s, old, new, 1)
}

func TestCRSBrokenWKT(t *testing.T) {
	full := crsFixture(t, "ogr2ogr_2229.prj")
	nad27 := crsESRI2229(t, `DATUM["D_North_American_1983",SPHEROID["GRS_1980",6378137.0,298.257222101]]`,
		`DATUM["D_North_American_1927",SPHEROID["Clarke_1866",6378206.4,294.9786982]]`)
	cases := []struct {
		name, text, want string
		unsupported      bool
	}{
		{"empty", "", "empty", false},
		{"blank", " \r\n\t", "empty", false},
		{"BOM only", "\ufeff", "empty", false},
		{"truncated", full[:strings.Index(full, "PROJECTION")], "text ends", false},
		{"truncated in a string", full[:len(full)/2], "unterminated", false},
		{"missing last bracket", full[:len(full)-1], "unbalanced", false},
		{"extra bracket", full + "]", "after the closing bracket", false},
		{"unbalanced inner", strings.Replace(full, `UNIT["Degree",0.0174532925199433]]`, `UNIT["Degree",0.0174532925199433]`, 1), "", false},
		{"not WKT", "this is not a projection file", "expected '['", false},
		{"binary", "\x00\x01\x02PROJCS", "keyword", false},
		{"JSON", `{"type": "name"}`, "keyword", false},
		{"unterminated string", `PROJCS["NAD83`, "unterminated", false},
		{"number missing", strings.Replace(full, "6378137.0", `"x"`, 1), "needs a number", false},
		{"unknown projection", crsESRI2229(t, `PROJECTION["Lambert_Conformal_Conic"]`, `PROJECTION["Albers_Conic_Equal_Area"]`),
			`projection "Albers_Conic_Equal_Area" is not supported`, true},
		{"NAD27", nad27, `datum "D_North_American_1927" is not supported`, true},
		{"Paris meridian", crsESRI2229(t, `PRIMEM["Greenwich",0.0]`, `PRIMEM["Paris",2.33722917]`), `prime meridian "Paris"`, true},
		{"grads", crsESRI2229(t, `UNIT["Degree",0.0174532925199433]`, `UNIT["Grad",0.015707963267949]`), `angular unit "Grad"`, true},
		{"odd parameter", crsESRI2229(t, `PARAMETER["Latitude_Of_Origin",33.5]`, `PARAMETER["Azimuth",33.5]`), `parameter "Azimuth"`, true},
		{"no parallels", crsESRI2229(t, `PARAMETER["Standard_Parallel_2",34.0333333333333],`, ``), "variant B", true},
		{"geocentric", `GEOCCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563]],PRIMEM["Greenwich",0],UNIT["metre",1]]`, "GEOCCS", true},
		{"deep nesting", strings.Repeat("A[", 100) + strings.Repeat("]", 100), "nested", false},
		{"WKT2 without ID, bad method", `PROJCRS["x",BASEGEOGCRS["NAD83",DATUM["North American Datum 1983",ELLIPSOID["GRS 1980",6378137,298.257222101]]],CONVERSION["c",METHOD["Albers Equal Area"]]]`,
			`projection "Albers Equal Area"`, true},
		{"NaN", strings.Replace(full, "6378137.0", "NaN", 1), "not finite", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c, err := ParseWKT(tc.text)
			if err == nil {
				t.Fatalf("no error; got %v", c)
			}
			if !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "gis: ") {
				t.Errorf("error %q, want it to contain %q", err, tc.want)
			}
			var u *UnsupportedCRSError
			if errors.As(err, &u) != tc.unsupported {
				t.Errorf("UnsupportedCRSError = %v, want %v (%v)", !tc.unsupported, tc.unsupported, err)
			}
		})
	}
}

func TestCRSParseCRS(t *testing.T) {
	cases := []struct {
		in   string
		code int
		geo  bool
	}{
		{"EPSG:2229", 2229, false}, {"epsg:26911", 26911, false}, {" EPSG:32618 ", 32618, false},
		{"urn:ogc:def:crs:EPSG::2236", 2236, false},
		{"CRS84", 4326, true}, {"OGC:CRS84", 4326, true}, {"urn:ogc:def:crs:OGC:1.3:CRS84", 4326, true},
		{"EPSG:4326", 4326, true}, {"EPSG:4269", 4269, true}, {"EPSG:4152", 4152, true},
		{crsFixture(t, "wkt1gdal_2236.wkt"), 2236, false},
	}
	for _, tc := range cases {
		t.Run(crsShorten(tc.in), func(t *testing.T) {
			c, err := ParseCRS(tc.in)
			if err != nil {
				t.Fatal(err)
			}
			if c.EPSG != tc.code || c.Geographic() != tc.geo {
				t.Errorf("got %s geographic=%v", c, c.Geographic())
			}
		})
	}
	for _, bad := range []string{"", "EPSG:", "EPSG:abc", "EPSG:99999", "NAD83 State Plane"} {
		if c, err := ParseCRS(bad); err == nil {
			t.Errorf("ParseCRS(%q) = %v, want an error", bad, c)
		}
	}
	// Identity for geographic CRSs (RFC 7946 lon/lat).
	if x, y := CRS84.Forward(-118.25, 34.05); x != -118.25 || y != 34.05 {
		t.Errorf("CRS84 forward (%v, %v)", x, y)
	}
	if c, _ := EPSG(2229); c.String() != "EPSG:2229 (NAD83 / California zone 5 (ftUS))" {
		t.Errorf("String() = %q", c.String())
	}
}

// TestCRSWriteRoundTrip writes every table CRS (and the geographic ones) as
// WKT1 and ESRI WKT and parses the text back.
func TestCRSWriteRoundTrip(t *testing.T) {
	codes := []int{4326, 4269, 4152, 4759, 6318}
	for _, e := range crsTable {
		codes = append(codes, e.Code)
	}
	for _, code := range codes {
		c, err := EPSG(code)
		if err != nil {
			t.Fatal(err)
		}
		for _, form := range []struct {
			name string
			text string
		}{{"WKT1", c.WKT1()}, {"ESRI", c.ESRIWKT()}} {
			back, err := ParseWKT(form.text)
			if err != nil {
				t.Errorf("EPSG:%d %s: %v\n%s", code, form.name, err, form.text)
				continue
			}
			if !back.Equal(c) || back.realization != c.realization {
				t.Errorf("EPSG:%d %s: parsed %+v, want %+v", code, form.name, *back, *c)
			}
			if form.name == "WKT1" && back.EPSG != code {
				t.Errorf("EPSG:%d WKT1 came back as %d", code, back.EPSG)
			}
		}
	}
}

// TestCRSLiveWholeTable projects five points inside each table CRS's area of
// use with our code and with `cs2cs -f %.6f EPSG:<base> EPSG:<code>` (the
// installed PROJ), forward within 0.01 ft and inverse within 1e-9°.
func TestCRSLiveWholeTable(t *testing.T) {
	cs2cs := requireTool(t, "cs2cs")
	if testing.Short() {
		t.Skip("-short")
	}
	var mu sync.Mutex
	var worstF, worstI float64
	var worstFCode, worstICode int
	jobs := make(chan *crsEntry)
	var wg sync.WaitGroup
	for k := 0; k < 4; k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for e := range jobs {
				f, i, err := crsLiveCheck(cs2cs, e)
				mu.Lock()
				if err != nil {
					t.Errorf("EPSG:%d: %v", e.Code, err)
				}
				if f > worstF {
					worstF, worstFCode = f, e.Code
				}
				if i > worstI {
					worstI, worstICode = i, e.Code
				}
				mu.Unlock()
			}
		}()
	}
	for i := range crsTable {
		jobs <- &crsTable[i]
	}
	close(jobs)
	wg.Wait()
	t.Logf("%d CRSs: worst forward %.2g ft (EPSG:%d), worst inverse %.2g° (EPSG:%d)",
		len(crsTable), worstF/MetresPerFoot, worstFCode, worstI, worstICode)
}

func crsLiveCheck(cs2cs string, e *crsEntry) (maxF, maxI float64, err error) {
	c := crsFromEntry(e)
	var pts [][2]float64 // lon, lat
	for _, f := range [][2]float64{{0.5, 0.5}, {0.1, 0.1}, {0.9, 0.1}, {0.1, 0.9}, {0.9, 0.9}} {
		pts = append(pts, [2]float64{e.West + f[0]*(e.East-e.West), e.South + f[1]*(e.North-e.South)})
	}
	var in strings.Builder
	for _, p := range pts {
		fmt.Fprintf(&in, "%.9f %.9f\n", p[1], p[0])
	}
	cmd := exec.Command(cs2cs, "-f", "%.6f", fmt.Sprintf("EPSG:%d", e.Base), fmt.Sprintf("EPSG:%d", e.Code))
	cmd.Stdin = strings.NewReader(in.String())
	out, err := cmd.Output()
	if err != nil {
		return 0, 0, err
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != len(pts) {
		return 0, 0, fmt.Errorf("cs2cs gave %d lines for %d points", len(lines), len(pts))
	}
	for i, line := range lines {
		var x, y float64
		if _, err := fmt.Sscan(line, &x, &y); err != nil {
			return 0, 0, fmt.Errorf("cs2cs line %q: %v", line, err)
		}
		gx, gy := c.Forward(pts[i][0], pts[i][1])
		d := math.Hypot(gx-x, gy-y) * c.Unit
		maxF = math.Max(maxF, d)
		lon, lat := c.Inverse(x, y)
		di := math.Max(math.Abs(lon-pts[i][0]), math.Abs(lat-pts[i][1]))
		maxI = math.Max(maxI, di)
		if !(d <= crsTolForwardM) || !(di <= crsTolInverseDeg) {
			return maxF, maxI, fmt.Errorf("point %v: ours (%.6f, %.6f), cs2cs (%.6f, %.6f); inverse off %.3g°", pts[i], gx, gy, x, y, di)
		}
	}
	return maxF, maxI, nil
}

// TestCRSLiveGDALIdentifies gives our WKT1 and ESRI output to GDAL's
// `gdalsrsinfo -e` (GDAL 3.6.2), which must name the same EPSG code.
func TestCRSLiveGDALIdentifies(t *testing.T) {
	gdalsrsinfo := requireTool(t, "gdalsrsinfo")
	for _, code := range []int{2229, 2227, 2236, 2263, 26911, 32618, 32760, 6420, 6794, 4326, 4269} {
		c, err := EPSG(code)
		if err != nil {
			t.Fatal(err)
		}
		for _, form := range []struct{ name, text string }{{"WKT1", c.WKT1()}, {"ESRI", c.ESRIWKT()}} {
			t.Run(fmt.Sprintf("%d/%s", code, form.name), func(t *testing.T) {
				out, err := exec.Command(gdalsrsinfo, "-e", form.text).CombinedOutput()
				if err != nil {
					t.Fatalf("gdalsrsinfo: %v\n%s", err, out)
				}
				want := fmt.Sprintf("EPSG:%d", code)
				if !strings.Contains(string(out), want+"\n") {
					t.Errorf("gdalsrsinfo -e did not identify %s:\n%s\ninput: %s", want, out, form.text)
				}
			})
		}
	}
}

func FuzzParseWKT(f *testing.F) {
	for _, name := range []string{"ogr2ogr_2229.prj", "ogr2ogr_26911.prj", "wkt1gdal_2229.wkt", "wkt1gdal_26911.wkt",
		"wkt1gdal_2236.wkt", "wkt1esri_2229.wkt", "wkt1esri_26911.wkt", "wkt1esri_2236.wkt", "wkt2_2229.wkt"} {
		f.Add(crsFixture(f, name))
	}
	f.Add("")
	f.Add(`PROJCS["x",GEOGCS[]]`)
	f.Fuzz(func(t *testing.T, text string) {
		c, err := ParseWKT(text)
		if err != nil {
			if c != nil {
				t.Fatal("CRS returned with an error")
			}
			return
		}
		// Whatever parses must project without panicking and write text that parses again.
		x, y := c.Forward(-100, 40)
		c.Inverse(x, y)
		if _, err := ParseWKT(c.WKT1()); err != nil {
			t.Fatalf("WKT1 of a parsed CRS does not parse: %v\n%s", err, c.WKT1())
		}
		if _, err := ParseWKT(c.ESRIWKT()); err != nil {
			t.Fatalf("ESRIWKT of a parsed CRS does not parse: %v\n%s", err, c.ESRIWKT())
		}
	})
}

func BenchmarkTMForward(b *testing.B) {
	c, _ := EPSG(26911)
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		lon := -119.5 + float64(n%1000)*0.005
		c.Forward(lon, 34.2)
		n++
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
}

func BenchmarkTMInverse(b *testing.B) {
	c, _ := EPSG(26911)
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		x := 300000 + float64(n%1000)*400
		c.Inverse(x, 3780000)
		n++
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
}

func BenchmarkLCCForward(b *testing.B) {
	c, _ := EPSG(2229)
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		c.Forward(-118.5+float64(n%1000)*0.001, 34.2)
		n++
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
}
