package gis

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// UnsupportedCRSError reports a well-formed CRS that headroom cannot compute:
// an unsupported projection, datum, prime meridian, unit or kind of CRS.
type UnsupportedCRSError struct {
	What  string // "projection", "datum", "prime meridian", "angular unit", "CRS type", "parameter"
	Found string // the name as written in the definition
	Note  string // optional extra detail
}

// Error names what was found and what the user can do.
func (e *UnsupportedCRSError) Error() string {
	msg := fmt.Sprintf("gis: %s %q is not supported", e.What, e.Found)
	if e.Note != "" {
		msg += " (" + e.Note + ")"
	}
	return msg + "; reproject the layer to NAD83 or WGS 84 (State Plane, UTM or lon/lat), " +
		`or give the layer's coordinate system as crs = "EPSG:..."`
}

// wktMaxDepth and wktMaxLen bound the input so hostile text cannot exhaust memory or stack.
const (
	wktMaxDepth = 32
	wktMaxLen   = 1 << 20
)

// wktNode is one KEYWORD[...] element; its arguments are quoted strings,
// numbers, bare words or nested nodes.
type wktNode struct {
	Key  string // upper case
	Args []wktArg
}

type wktArg struct {
	Node  *wktNode
	Str   string // quoted string or bare word
	Num   float64
	IsNum bool
	Quote bool
}

type wktParser struct {
	s   string
	pos int
}

func (p *wktParser) errf(format string, a ...any) error {
	return fmt.Errorf("gis: WKT: "+format+" (at byte %d)", append(a, p.pos)...)
}

func (p *wktParser) skipSpace() {
	for p.pos < len(p.s) {
		switch p.s[p.pos] {
		case ' ', '\t', '\r', '\n', '\f', '\v':
			p.pos++
		default:
			return
		}
	}
}

func wktIsWordByte(b byte) bool {
	return b >= 'A' && b <= 'Z' || b >= 'a' && b <= 'z' || b >= '0' && b <= '9' || b == '_' || b == '.' || b == '-' || b == '+'
}

func (p *wktParser) word() string {
	start := p.pos
	for p.pos < len(p.s) && wktIsWordByte(p.s[p.pos]) {
		p.pos++
	}
	return p.s[start:p.pos]
}

// node parses KEYWORD[ arg, arg, ... ] (round brackets are also allowed).
func (p *wktParser) node(depth int) (*wktNode, error) {
	if depth > wktMaxDepth {
		return nil, p.errf("nested more than %d levels deep", wktMaxDepth)
	}
	p.skipSpace()
	key := p.word()
	if key == "" || !crsIsKeyword(key) {
		return nil, p.errf("expected a keyword such as PROJCS or GEOGCS")
	}
	p.skipSpace()
	if p.pos >= len(p.s) {
		return nil, p.errf("text ends after %s; missing '['", key)
	}
	open := p.s[p.pos]
	if open != '[' && open != '(' {
		return nil, p.errf("expected '[' after %s, found %q", key, open)
	}
	closeB := byte(']')
	if open == '(' {
		closeB = ')'
	}
	p.pos++
	n := &wktNode{Key: strings.ToUpper(key)}
	for {
		p.skipSpace()
		if p.pos >= len(p.s) {
			return nil, p.errf("text ends inside %s; unbalanced brackets (missing %q)", n.Key, closeB)
		}
		if p.s[p.pos] == closeB && len(n.Args) == 0 {
			p.pos++
			return n, nil
		}
		a, err := p.arg(depth)
		if err != nil {
			return nil, err
		}
		n.Args = append(n.Args, a)
		p.skipSpace()
		if p.pos >= len(p.s) {
			return nil, p.errf("text ends inside %s; unbalanced brackets (missing %q)", n.Key, closeB)
		}
		switch c := p.s[p.pos]; {
		case c == ',':
			p.pos++
		case c == closeB:
			p.pos++
			return n, nil
		default:
			return nil, p.errf("expected ',' or %q in %s, found %q", closeB, n.Key, c)
		}
	}
}

func (p *wktParser) arg(depth int) (wktArg, error) {
	c := p.s[p.pos]
	if c == '"' {
		p.pos++
		var b strings.Builder
		for {
			i := strings.IndexByte(p.s[p.pos:], '"')
			if i < 0 {
				return wktArg{}, p.errf("unterminated quoted string")
			}
			b.WriteString(p.s[p.pos : p.pos+i])
			p.pos += i + 1
			if p.pos < len(p.s) && p.s[p.pos] == '"' { // "" is an escaped quote in WKT2
				b.WriteByte('"')
				p.pos++
				continue
			}
			return wktArg{Str: b.String(), Quote: true}, nil
		}
	}
	start := p.pos
	w := p.word()
	if w == "" {
		return wktArg{}, p.errf("unexpected %q", c)
	}
	save := p.pos
	p.skipSpace()
	if p.pos < len(p.s) && (p.s[p.pos] == '[' || p.s[p.pos] == '(') {
		p.pos = start
		n, err := p.node(depth + 1)
		if err != nil {
			return wktArg{}, err
		}
		return wktArg{Node: n}, nil
	}
	p.pos = save
	if v, err := strconv.ParseFloat(w, 64); err == nil {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return wktArg{}, p.errf("number %q is not finite", w)
		}
		return wktArg{Num: v, IsNum: true, Str: w}, nil
	}
	return wktArg{Str: w}, nil
}

// wktParseTree parses the whole text into one node.
func wktParseTree(text string) (*wktNode, error) {
	if len(text) > wktMaxLen {
		return nil, fmt.Errorf("gis: WKT: text is %d bytes, longer than any coordinate system definition", len(text))
	}
	p := &wktParser{s: text}
	n, err := p.node(0)
	if err != nil {
		return nil, err
	}
	p.skipSpace()
	if p.pos != len(p.s) {
		return nil, p.errf("unexpected text after the closing bracket")
	}
	return n, nil
}

// child returns the first child node with one of the keys.
func (n *wktNode) child(keys ...string) *wktNode {
	for _, a := range n.Args {
		if a.Node == nil {
			continue
		}
		for _, k := range keys {
			if a.Node.Key == k {
				return a.Node
			}
		}
	}
	return nil
}

func (n *wktNode) children(key string) []*wktNode {
	var out []*wktNode
	for _, a := range n.Args {
		if a.Node != nil && a.Node.Key == key {
			out = append(out, a.Node)
		}
	}
	return out
}

// name returns the first argument as a string ("" if it is not one).
func (n *wktNode) name() string {
	if len(n.Args) > 0 && n.Args[0].Node == nil && !n.Args[0].IsNum {
		return n.Args[0].Str
	}
	return ""
}

// num returns argument i as a number.
func (n *wktNode) num(i int) (float64, error) {
	if i >= len(n.Args) || !n.Args[i].IsNum {
		return 0, fmt.Errorf("gis: WKT: %s[%q] needs a number as argument %d", n.Key, n.name(), i+1)
	}
	return n.Args[i].Num, nil
}

// epsgID returns the EPSG code of an AUTHORITY["EPSG","2229"] or ID["EPSG",2229] child, or 0.
func (n *wktNode) epsgID() int {
	for _, k := range []string{"AUTHORITY", "ID"} {
		for _, a := range n.children(k) {
			if len(a.Args) < 2 || !strings.EqualFold(a.name(), "EPSG") {
				continue
			}
			if code, err := strconv.Atoi(strings.TrimSpace(a.Args[1].Str)); err == nil && code > 0 {
				return code
			}
		}
	}
	return 0
}

// wktKey lower-cases s and keeps only letters and digits: "Latitude_Of_Origin" → "latitudeoforigin".
func wktKey(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		}
	}
	return b.String()
}

// ParseWKT reads a coordinate reference system from WKT text: WKT1 in the
// OGC/GDAL dialect (PROJCS/GEOGCS with AUTHORITY, as `projinfo -o WKT1_GDAL`
// prints), the ESRI dialect of .prj files, or WKT2 (PROJCRS/GEOGCRS). A byte
// order mark, CRLF line ends and any white space are accepted; names of
// projections and parameters are matched case-insensitively with their usual
// aliases. A unit within 1e-9 of the US survey foot or the international foot
// is snapped to the exact value. An ESRI definition without an authority code
// gets the EPSG code of the one table entry on its datum that it equals.
//
// Unsupported projections, datums, prime meridians or units give an
// [*UnsupportedCRSError]; malformed text gives an error saying where.
func ParseWKT(text string) (*CRS, error) {
	t := strings.TrimSpace(strings.TrimPrefix(text, "\ufeff"))
	if t == "" {
		return nil, errors.New("gis: WKT: the coordinate system definition is empty")
	}
	root, err := wktParseTree(t)
	if err != nil {
		return nil, err
	}
	c, err := wktInterpret(root)
	if err != nil {
		return nil, err
	}
	if c.EPSG == 0 && c.Method != Geographic {
		if e := crsIdentify(c); e != nil {
			c.EPSG, c.Name = e.Code, e.Name
		}
	}
	c.proj = c.crsPrepare()
	return c, nil
}

func wktInterpret(n *wktNode) (*CRS, error) {
	switch n.Key {
	case "PROJCS":
		return wkt1Projected(n)
	case "GEOGCS":
		g, err := wkt1Geog(n)
		if err != nil {
			return nil, err
		}
		return g.crs(n.epsgID()), nil
	case "PROJCRS", "PROJECTEDCRS":
		return wkt2WithFallback(n, wkt2Projected)
	case "GEOGCRS", "GEODCRS", "GEOGRAPHICCRS", "GEODETICCRS":
		return wkt2WithFallback(n, wkt2Geographic)
	case "COMPD_CS", "COMPOUNDCRS":
		for _, a := range n.Args {
			if a.Node != nil {
				switch a.Node.Key {
				case "PROJCS", "GEOGCS", "PROJCRS", "PROJECTEDCRS", "GEOGCRS", "GEODCRS", "GEOGRAPHICCRS":
					return wktInterpret(a.Node)
				}
			}
		}
		return nil, errors.New("gis: WKT: compound CRS has no horizontal part")
	case "BOUNDCRS":
		if s := n.child("SOURCECRS"); s != nil && len(s.Args) > 0 && s.Args[0].Node != nil {
			return wktInterpret(s.Args[0].Node)
		}
		return nil, errors.New("gis: WKT: BOUNDCRS without a SOURCECRS")
	case "GEOCCS":
		return nil, &UnsupportedCRSError{What: "CRS type", Found: "GEOCCS", Note: "geocentric X/Y/Z"}
	case "LOCAL_CS", "ENGCRS", "ENGINEERINGCRS":
		return nil, &UnsupportedCRSError{What: "CRS type", Found: n.Key, Note: "a local grid with no link to the earth"}
	case "VERT_CS", "VERTCRS", "VERTICALCRS":
		return nil, &UnsupportedCRSError{What: "CRS type", Found: n.Key, Note: "vertical only"}
	}
	return nil, fmt.Errorf("gis: WKT: %s is not a coordinate reference system keyword (expected PROJCS, GEOGCS, PROJCRS or GEOGCRS)", n.Key)
}

// wkt2WithFallback parses WKT2 in full and, if that fails, falls back on the
// table entry of the definition's EPSG ID.
func wkt2WithFallback(n *wktNode, parse func(*wktNode) (*CRS, error)) (*CRS, error) {
	c, err := parse(n)
	if err == nil {
		return c, nil
	}
	if code := n.epsgID(); code != 0 {
		if t, terr := EPSG(code); terr == nil {
			return t, nil
		}
	}
	return nil, err
}

// wktGeog is the geographic part of a definition.
type wktGeog struct {
	name        string
	realization string
	ellipsoid   Ellipsoid
}

func (g wktGeog) crs(code int) *CRS {
	if code != 0 {
		if known, ok := crsGeogByCode(code); !ok || known.Realization != g.realization {
			code = 0
		}
	}
	name := g.name
	if code != 0 {
		known, _ := crsGeogByCode(code)
		name = known.Name
	}
	return &CRS{Name: name, EPSG: code, Method: Geographic, Datum: crsDatumOf(g.realization), Ellipsoid: g.ellipsoid,
		UnitName: "degree", realization: g.realization}
}

// wktRealization recognises the datum by its name or EPSG code.
func wktRealization(name string, code int) (string, error) {
	switch code {
	case 6269:
		return "NAD83", nil
	case 6152:
		return "NAD83(HARN)", nil
	case 6759:
		return "NAD83(NSRS2007)", nil
	case 1116:
		return "NAD83(2011)", nil
	case 6140:
		return "NAD83(CSRS)", nil
	case 6326:
		return "WGS84", nil
	}
	k := wktKey(name)
	switch {
	case strings.Contains(k, "northamerican1983") || strings.Contains(k, "nad83") || strings.Contains(k, "nad1983") ||
		strings.Contains(k, "northamericandatum1983"):
		switch {
		case strings.Contains(k, "harn") || strings.Contains(k, "highaccuracy"):
			return "NAD83(HARN)", nil
		case strings.Contains(k, "2011"):
			return "NAD83(2011)", nil
		case strings.Contains(k, "2007"):
			return "NAD83(NSRS2007)", nil
		case strings.Contains(k, "csrs") || strings.Contains(k, "canadian"):
			return "NAD83(CSRS)", nil
		}
		return "NAD83", nil
	case strings.Contains(k, "wgs1984") || strings.Contains(k, "wgs84") || strings.Contains(k, "worldgeodeticsystem1984"):
		return "WGS84", nil
	}
	return "", &UnsupportedCRSError{What: "datum", Found: name, Note: "headroom computes NAD83 and WGS 84 only"}
}

// wktEllipsoid reads SPHEROID/ELLIPSOID[name, a, 1/f, ...].
func wktEllipsoid(n *wktNode) (Ellipsoid, error) {
	a, err := n.num(1)
	if err != nil {
		return Ellipsoid{}, err
	}
	invf, err := n.num(2)
	if err != nil {
		return Ellipsoid{}, err
	}
	if u := n.child("LENGTHUNIT", "UNIT"); u != nil {
		if f, err := u.num(1); err == nil && f > 0 {
			a *= f
		}
	}
	if !(a > 1e6 && a < 1e7) || invf < 0 || (invf != 0 && invf < 1) {
		return Ellipsoid{}, fmt.Errorf("gis: WKT: ellipsoid %q has implausible axis %g m or inverse flattening %g", n.name(), a, invf)
	}
	name := n.name()
	switch wktKey(name) {
	case "grs1980", "grs80":
		name = EllipsoidGRS80.Name
	case "wgs84", "wgs1984":
		name = EllipsoidWGS84.Name
	}
	return Ellipsoid{Name: name, A: a, InvF: invf}, nil
}

// wktCheckDegree checks an angular unit factor (radians per unit) is the degree.
func wktCheckDegree(u *wktNode) error {
	if u == nil {
		return nil
	}
	f, err := u.num(1)
	if err != nil {
		return err
	}
	if math.Abs(f-math.Pi/180) > 1e-12 {
		return &UnsupportedCRSError{What: "angular unit", Found: u.name(), Note: "only degrees are"}
	}
	return nil
}

// wktCheckPrimem requires the Greenwich meridian.
func wktCheckPrimem(p *wktNode) error {
	if p == nil {
		return nil
	}
	v, err := p.num(1)
	if err != nil {
		return err
	}
	if v != 0 {
		return &UnsupportedCRSError{What: "prime meridian", Found: p.name(), Note: "only Greenwich is"}
	}
	return nil
}

// wkt1Geog reads GEOGCS[name, DATUM[name, SPHEROID[...]], PRIMEM, UNIT, AUTHORITY].
func wkt1Geog(n *wktNode) (wktGeog, error) {
	d := n.child("DATUM")
	if d == nil {
		return wktGeog{}, fmt.Errorf("gis: WKT: GEOGCS[%q] has no DATUM", n.name())
	}
	real, err := wktRealization(d.name(), d.epsgID())
	if err != nil {
		return wktGeog{}, err
	}
	s := d.child("SPHEROID", "ELLIPSOID")
	if s == nil {
		return wktGeog{}, fmt.Errorf("gis: WKT: DATUM[%q] has no SPHEROID", d.name())
	}
	el, err := wktEllipsoid(s)
	if err != nil {
		return wktGeog{}, err
	}
	if err := wktCheckPrimem(n.child("PRIMEM")); err != nil {
		return wktGeog{}, err
	}
	if err := wktCheckDegree(n.child("UNIT")); err != nil {
		return wktGeog{}, err
	}
	return wktGeog{name: n.name(), realization: real, ellipsoid: el}, nil
}

// wktSnapUnit snaps a linear unit factor (metres per unit) to the exact metre,
// foot or US survey foot when within 1e-9 relative.
func wktSnapUnit(f float64, name string) (float64, string) {
	for _, u := range []struct {
		f    float64
		name string
	}{{1, "metre"}, {MetresPerFoot, "foot"}, {MetresPerUSSurveyFoot, "US survey foot"}} {
		if math.Abs(f-u.f) <= 1e-9*u.f {
			return u.f, u.name
		}
	}
	return f, name
}

// wktParam is the canonical parameter a name stands for.
type wktParam int

const (
	wktNone wktParam = iota
	wktLat0
	wktLon0
	wktK0
	wktFE
	wktFN
	wktSP1
	wktSP2
)

func (p wktParam) angular() bool { return p == wktLat0 || p == wktLon0 || p == wktSP1 || p == wktSP2 }
func (p wktParam) linear() bool  { return p == wktFE || p == wktFN }

// wktParamNames maps normalised parameter names (GDAL, ESRI, EPSG/WKT2) and
// EPSG parameter codes to parameters.
var wktParamNames = map[string]wktParam{
	"latitudeoforigin": wktLat0, "latitudeofcenter": wktLat0, "latitudeofnaturalorigin": wktLat0,
	"latitudeoffalseorigin": wktLat0, "latitudeofprojectioncentre": wktLat0,
	"centralmeridian": wktLon0, "longitudeoforigin": wktLon0, "longitudeofcenter": wktLon0,
	"longitudeofnaturalorigin": wktLon0, "longitudeoffalseorigin": wktLon0, "longitudeofcentralmeridian": wktLon0,
	"scalefactor": wktK0, "scalefactoratnaturalorigin": wktK0, "scalefactoratcentralmeridian": wktK0,
	"falseeasting": wktFE, "eastingatfalseorigin": wktFE,
	"falsenorthing": wktFN, "northingatfalseorigin": wktFN,
	"standardparallel1": wktSP1, "latitudeof1ststandardparallel": wktSP1, "latitudeoffirststandardparallel": wktSP1,
	"standardparallel2": wktSP2, "latitudeof2ndstandardparallel": wktSP2, "latitudeofsecondstandardparallel": wktSP2,
}

var wktParamCodes = map[int]wktParam{
	8801: wktLat0, 8802: wktLon0, 8805: wktK0, 8806: wktFE, 8807: wktFN,
	8821: wktLat0, 8822: wktLon0, 8823: wktSP1, 8824: wktSP2, 8826: wktFE, 8827: wktFN,
}

// wktMethodOf maps a projection name (or EPSG method code) to a method.
// ESRI's "Lambert_Conformal_Conic" is 1SP or 2SP by its parameters, so it
// comes back as LambertConic2SP with esriLCC set.
func wktMethodOf(name string, code int) (m Method, esriLCC bool, ok bool) {
	switch code {
	case 9807:
		return TransverseMercator, false, true
	case 9801:
		return LambertConic1SP, false, true
	case 9802:
		return LambertConic2SP, false, true
	}
	switch wktKey(name) {
	case "transversemercator", "gausskruger", "transversemercatorgausskruger":
		return TransverseMercator, false, true
	case "lambertconformalconic2sp", "lambertconicconformal2sp":
		return LambertConic2SP, false, true
	case "lambertconformalconic1sp", "lambertconicconformal1sp":
		return LambertConic1SP, false, true
	case "lambertconformalconic", "lambertconicconformal":
		return LambertConic2SP, true, true
	}
	return 0, false, false
}

// wktProjection collects the parameters of a projected definition.
type wktProjection struct {
	projName string
	method   Method
	esriLCC  bool
	values   map[wktParam]float64 // angles in degrees, lengths in metres
}

func (w *wktProjection) set(name string, code int, v float64) error {
	p, ok := wktParamCodes[code]
	if !ok {
		p, ok = wktParamNames[wktKey(name)]
	}
	if !ok {
		return &UnsupportedCRSError{What: "parameter", Found: name, Note: "in projection " + strconv.Quote(w.projName)}
	}
	if _, dup := w.values[p]; dup {
		return fmt.Errorf("gis: WKT: parameter %q is given twice", name)
	}
	w.values[p] = v
	return nil
}

// build checks the parameters against the method and fills c.
func (w *wktProjection) build(c *CRS) error {
	get := func(p wktParam, def float64) float64 {
		if v, ok := w.values[p]; ok {
			return v
		}
		return def
	}
	_, has2 := w.values[wktSP2]
	m := w.method
	if w.esriLCC && !has2 {
		m = LambertConic1SP
	}
	allowed := map[Method][]wktParam{
		TransverseMercator: {wktLat0, wktLon0, wktK0, wktFE, wktFN},
		LambertConic1SP:    {wktLat0, wktLon0, wktK0, wktFE, wktFN, wktSP1},
		LambertConic2SP:    {wktLat0, wktLon0, wktK0, wktFE, wktFN, wktSP1, wktSP2},
	}[m]
	for p := wktLat0; p <= wktSP2; p++ {
		if _, ok := w.values[p]; !ok {
			continue
		}
		found := false
		for _, a := range allowed {
			found = found || a == p
		}
		if !found {
			return &UnsupportedCRSError{What: "projection", Found: w.projName, Note: "with a standard parallel parameter it does not take"}
		}
	}
	c.Method = m
	c.LatOrigin, c.LonOrigin = get(wktLat0, 0), get(wktLon0, 0)
	c.FalseEasting, c.FalseNorthing = get(wktFE, 0), get(wktFN, 0)
	c.ScaleFactor = get(wktK0, 1)
	switch m {
	case LambertConic2SP:
		sp1, ok1 := w.values[wktSP1]
		sp2, ok2 := w.values[wktSP2]
		if !ok1 || !ok2 {
			return fmt.Errorf("gis: WKT: projection %q needs standard_parallel_1 and standard_parallel_2", w.projName)
		}
		if math.Abs(c.ScaleFactor-1) > 1e-12 {
			return &UnsupportedCRSError{What: "projection", Found: w.projName, Note: "two standard parallels and a scale factor other than 1"}
		}
		c.StdParallel1, c.StdParallel2, c.ScaleFactor = sp1, sp2, 1
		if math.Abs(sp1+sp2) < 1e-9 {
			return fmt.Errorf("gis: WKT: standard parallels %g and %g are symmetric about the equator; the cone is undefined", sp1, sp2)
		}
	case LambertConic1SP:
		if sp1, ok := w.values[wktSP1]; ok {
			if _, hasLat0 := w.values[wktLat0]; !hasLat0 {
				c.LatOrigin = sp1
			} else if math.Abs(sp1-c.LatOrigin) > 1e-9 {
				return &UnsupportedCRSError{What: "projection", Found: w.projName,
					Note: "one standard parallel different from the latitude of origin (LCC 1SP variant B)"}
			}
		}
		c.StdParallel1 = c.LatOrigin
		if math.Abs(c.LatOrigin) < 1e-9 {
			return fmt.Errorf("gis: WKT: Lambert conic with latitude of origin 0 is undefined")
		}
	}
	for _, v := range []float64{c.LatOrigin, c.StdParallel1, c.StdParallel2} {
		if math.Abs(v) > 90 {
			return fmt.Errorf("gis: WKT: latitude %g is outside ±90°", v)
		}
	}
	if !(c.ScaleFactor > 0 && c.ScaleFactor < 10) {
		return fmt.Errorf("gis: WKT: scale factor %g is not plausible", c.ScaleFactor)
	}
	return nil
}

// wkt1Projected reads PROJCS[name, GEOGCS, PROJECTION, PARAMETER..., UNIT, AXIS..., AUTHORITY].
func wkt1Projected(n *wktNode) (*CRS, error) {
	gn := n.child("GEOGCS")
	if gn == nil {
		return nil, fmt.Errorf("gis: WKT: PROJCS[%q] has no GEOGCS", n.name())
	}
	g, err := wkt1Geog(gn)
	if err != nil {
		return nil, err
	}
	pn := n.child("PROJECTION")
	if pn == nil {
		return nil, fmt.Errorf("gis: WKT: PROJCS[%q] has no PROJECTION", n.name())
	}
	m, esri, ok := wktMethodOf(pn.name(), pn.epsgID())
	if !ok {
		return nil, &UnsupportedCRSError{What: "projection", Found: pn.name()}
	}
	unit, uname := 1.0, "metre"
	if u := n.child("UNIT"); u != nil {
		f, err := u.num(1)
		if err != nil {
			return nil, err
		}
		if !(f > 0) {
			return nil, fmt.Errorf("gis: WKT: linear unit %q has factor %g", u.name(), f)
		}
		unit, uname = wktSnapUnit(f, u.name())
	}
	w := &wktProjection{projName: pn.name(), method: m, esriLCC: esri, values: map[wktParam]float64{}}
	for _, p := range n.children("PARAMETER") {
		v, err := p.num(1)
		if err != nil {
			return nil, err
		}
		if pp, ok := wktParamNames[wktKey(p.name())]; ok && pp.linear() {
			v *= unit
		}
		if err := w.set(p.name(), 0, v); err != nil {
			return nil, err
		}
	}
	c := &CRS{Name: n.name(), Datum: crsDatumOf(g.realization), Ellipsoid: g.ellipsoid, Unit: unit, UnitName: uname,
		realization: g.realization}
	if err := w.build(c); err != nil {
		return nil, err
	}
	c.EPSG = n.epsgID()
	return c, nil
}

// wktUnitFactor returns the factor of a LENGTHUNIT/ANGLEUNIT/SCALEUNIT/UNIT child, or def.
func wktUnitFactor(n *wktNode, def float64, keys ...string) (float64, string, error) {
	u := n.child(keys...)
	if u == nil {
		return def, "", nil
	}
	f, err := u.num(1)
	if err != nil {
		return 0, "", err
	}
	if !(f > 0) {
		return 0, "", fmt.Errorf("gis: WKT: unit %q has factor %g", u.name(), f)
	}
	return f, u.name(), nil
}

// wkt2Geog reads the geodetic part of WKT2: DATUM or ENSEMBLE with ELLIPSOID, PRIMEM.
func wkt2Geog(n *wktNode) (wktGeog, float64, error) {
	d := n.child("DATUM", "GEODETICDATUM", "TRF", "ENSEMBLE")
	if d == nil {
		return wktGeog{}, 0, fmt.Errorf("gis: WKT: %s[%q] has no DATUM", n.Key, n.name())
	}
	real, err := wktRealization(d.name(), d.epsgID())
	if err != nil {
		return wktGeog{}, 0, err
	}
	s := d.child("ELLIPSOID", "SPHEROID")
	if s == nil {
		return wktGeog{}, 0, fmt.Errorf("gis: WKT: DATUM[%q] has no ELLIPSOID", d.name())
	}
	el, err := wktEllipsoid(s)
	if err != nil {
		return wktGeog{}, 0, err
	}
	pm := n.child("PRIMEM", "PRIMEMERIDIAN")
	if err := wktCheckPrimem(pm); err != nil {
		return wktGeog{}, 0, err
	}
	angle := math.Pi / 180
	if f, _, err := wktUnitFactor(n, 0, "ANGLEUNIT", "UNIT"); err != nil {
		return wktGeog{}, 0, err
	} else if f != 0 {
		angle = f
	} else if pm != nil {
		if f, _, err := wktUnitFactor(pm, 0, "ANGLEUNIT", "UNIT"); err == nil && f != 0 {
			angle = f
		}
	}
	return wktGeog{name: n.name(), realization: real, ellipsoid: el}, angle, nil
}

func wkt2Geographic(n *wktNode) (*CRS, error) {
	g, _, err := wkt2Geog(n)
	if err != nil {
		return nil, err
	}
	for _, ax := range n.children("AXIS") {
		if err := wktCheckDegree(ax.child("ANGLEUNIT", "UNIT")); err != nil {
			return nil, err
		}
	}
	if err := wktCheckDegree(n.child("ANGLEUNIT", "UNIT")); err != nil {
		return nil, err
	}
	return g.crs(n.epsgID()), nil
}

// wkt2Projected reads PROJCRS[name, BASEGEOGCRS, CONVERSION[METHOD, PARAMETER...], CS, AXIS..., ID].
func wkt2Projected(n *wktNode) (*CRS, error) {
	base := n.child("BASEGEOGCRS", "BASEGEODCRS", "BASEGEOGRAPHICCRS", "BASEGEODETICCRS")
	if base == nil {
		return nil, fmt.Errorf("gis: WKT: PROJCRS[%q] has no BASEGEOGCRS", n.name())
	}
	g, baseAngle, err := wkt2Geog(base)
	if err != nil {
		return nil, err
	}
	conv := n.child("CONVERSION", "DERIVINGCONVERSION")
	if conv == nil {
		return nil, fmt.Errorf("gis: WKT: PROJCRS[%q] has no CONVERSION", n.name())
	}
	mn := conv.child("METHOD", "PROJECTION")
	if mn == nil {
		return nil, fmt.Errorf("gis: WKT: CONVERSION[%q] has no METHOD", conv.name())
	}
	m, esri, ok := wktMethodOf(mn.name(), mn.epsgID())
	if !ok {
		return nil, &UnsupportedCRSError{What: "projection", Found: mn.name()}
	}
	// The CRS's linear unit: from the axes, else a unit at the top level.
	csUnit, csName := 1.0, "metre"
	var axisUnit *wktNode
	for _, ax := range n.children("AXIS") {
		if u := ax.child("LENGTHUNIT", "UNIT"); u != nil {
			axisUnit = u
			break
		}
	}
	if axisUnit == nil {
		axisUnit = n.child("LENGTHUNIT", "UNIT")
	}
	if axisUnit != nil {
		f, err := axisUnit.num(1)
		if err != nil {
			return nil, err
		}
		if !(f > 0) {
			return nil, fmt.Errorf("gis: WKT: linear unit %q has factor %g", axisUnit.name(), f)
		}
		csUnit, csName = wktSnapUnit(f, axisUnit.name())
	}
	w := &wktProjection{projName: mn.name(), method: m, esriLCC: esri, values: map[wktParam]float64{}}
	for _, p := range conv.children("PARAMETER") {
		v, err := p.num(1)
		if err != nil {
			return nil, err
		}
		code := p.epsgID()
		kind, ok := wktParamCodes[code]
		if !ok {
			kind = wktParamNames[wktKey(p.name())]
		}
		switch {
		case kind.angular():
			f, _, err := wktUnitFactor(p, baseAngle, "ANGLEUNIT", "UNIT")
			if err != nil {
				return nil, err
			}
			if math.Abs(f-math.Pi/180) > 1e-15 {
				v = v * f * 180 / math.Pi
			}
		case kind.linear():
			f, _, err := wktUnitFactor(p, csUnit, "LENGTHUNIT", "UNIT")
			if err != nil {
				return nil, err
			}
			f, _ = wktSnapUnit(f, "")
			v *= f
		}
		if err := w.set(p.name(), code, v); err != nil {
			return nil, err
		}
	}
	c := &CRS{Name: n.name(), Datum: crsDatumOf(g.realization), Ellipsoid: g.ellipsoid, Unit: csUnit, UnitName: csName,
		realization: g.realization}
	if err := w.build(c); err != nil {
		return nil, err
	}
	c.EPSG = n.epsgID()
	return c, nil
}

// wktNum formats a number as GDAL does (15 significant digits).
func wktNum(v float64) string {
	if v == 0 {
		return "0"
	}
	return strconv.FormatFloat(v, 'g', 15, 64)
}

// wktESRINum formats a number as ESRI software does: 15 significant digits and always a decimal point.
func wktESRINum(v float64) string {
	s := wktNum(v)
	if !strings.ContainsAny(s, ".e") {
		s += ".0"
	}
	return s
}

func wktQuote(s string) string { return `"` + strings.ReplaceAll(s, `"`, `""`) + `"` }

// crsGeogInfo returns the geographic base of c for writing.
func (c *CRS) crsGeogInfo() crsGeog {
	if c.Method == Geographic && c.EPSG != 0 {
		if g, ok := crsGeogByCode(c.EPSG); ok {
			return g
		}
	}
	if e := crsLookup(c.EPSG); e != nil && c.Method != Geographic {
		if g, ok := crsGeogByCode(e.Base); ok {
			return g
		}
	}
	r := c.realization
	if r == "" {
		r = "WGS84"
		if c.Datum == "NAD83" {
			r = "NAD83"
		}
	}
	g, _ := crsGeogByRealization(r)
	return g
}

func wktAuth(code int) string {
	return `,AUTHORITY["EPSG","` + strconv.Itoa(code) + `"]]`
}

// WKT1 writes c as OGC WKT1 in GDAL's style (as `projinfo -o WKT1_GDAL
// --single-line` prints it), with AUTHORITY["EPSG",...] when the code is
// known. This is the text a GeoPackage's gpkg_spatial_ref_sys expects.
func (c *CRS) WKT1() string {
	g := c.crsGeogInfo()
	var b strings.Builder
	geog := func(axes bool) {
		el := c.Ellipsoid
		b.WriteString(`GEOGCS[` + wktQuote(g.Name) + `,DATUM[` + wktQuote(g.Datum) + `,SPHEROID[` + wktQuote(el.Name) + `,` +
			wktNum(el.A) + `,` + wktNum(el.InvF))
		if el == g.Ellipsoid {
			b.WriteString(wktAuth(g.EllCode))
		} else {
			b.WriteString("]")
		}
		b.WriteString(wktAuth(g.DatumCode))
		b.WriteString(`,PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]]`)
		if axes {
			b.WriteString(`,AXIS["Latitude",NORTH],AXIS["Longitude",EAST]`)
		}
		if el == g.Ellipsoid {
			b.WriteString(wktAuth(g.Code))
		} else {
			b.WriteString("]")
		}
	}
	if c.Method == Geographic {
		geog(true)
		return b.String()
	}
	u := c.crsUnit()
	b.WriteString(`PROJCS[` + wktQuote(c.Name) + `,`)
	geog(false)
	param := func(name string, v float64) { b.WriteString(`,PARAMETER["` + name + `",` + wktNum(v) + `]`) }
	switch c.Method {
	case TransverseMercator:
		b.WriteString(`,PROJECTION["Transverse_Mercator"]`)
		param("latitude_of_origin", c.LatOrigin)
		param("central_meridian", c.LonOrigin)
		param("scale_factor", c.ScaleFactor)
	case LambertConic1SP:
		b.WriteString(`,PROJECTION["Lambert_Conformal_Conic_1SP"]`)
		param("latitude_of_origin", c.LatOrigin)
		param("central_meridian", c.LonOrigin)
		param("scale_factor", c.ScaleFactor)
	case LambertConic2SP:
		b.WriteString(`,PROJECTION["Lambert_Conformal_Conic_2SP"]`)
		param("latitude_of_origin", c.LatOrigin)
		param("central_meridian", c.LonOrigin)
		param("standard_parallel_1", c.StdParallel1)
		param("standard_parallel_2", c.StdParallel2)
	}
	param("false_easting", c.FalseEasting/u)
	param("false_northing", c.FalseNorthing/u)
	b.WriteString(`,UNIT[` + wktQuote(c.UnitName) + `,` + wktNum(u))
	switch u {
	case 1:
		b.WriteString(wktAuth(9001))
	case MetresPerFoot:
		b.WriteString(wktAuth(9002))
	case MetresPerUSSurveyFoot:
		b.WriteString(wktAuth(9003))
	default:
		b.WriteString("]")
	}
	b.WriteString(`,AXIS["Easting",EAST],AXIS["Northing",NORTH]`)
	if c.EPSG != 0 {
		b.WriteString(wktAuth(c.EPSG))
	} else {
		b.WriteString("]")
	}
	return b.String()
}

// ESRIWKT writes c in the ESRI dialect of WKT1, the text of a shapefile's .prj.
func (c *CRS) ESRIWKT() string {
	g := c.crsGeogInfo()
	var b strings.Builder
	el := c.Ellipsoid
	ellName := strings.ReplaceAll(el.Name, " ", "_")
	if el == EllipsoidWGS84 {
		ellName = "WGS_1984"
	}
	geog := `GEOGCS[` + wktQuote(g.ESRIName) + `,DATUM[` + wktQuote(g.ESRIDatum) + `,SPHEROID[` + wktQuote(ellName) + `,` +
		wktESRINum(el.A) + `,` + wktESRINum(el.InvF) + `]],PRIMEM["Greenwich",0.0],UNIT["Degree",0.0174532925199433]]`
	if c.Method == Geographic {
		return geog
	}
	u := c.crsUnit()
	b.WriteString(`PROJCS[` + wktQuote(wktESRIName(c.Name)) + `,` + geog)
	param := func(name string, v float64) { b.WriteString(`,PARAMETER["` + name + `",` + wktESRINum(v) + `]`) }
	switch c.Method {
	case TransverseMercator:
		b.WriteString(`,PROJECTION["Transverse_Mercator"]`)
	default:
		b.WriteString(`,PROJECTION["Lambert_Conformal_Conic"]`)
	}
	param("False_Easting", c.FalseEasting/u)
	param("False_Northing", c.FalseNorthing/u)
	param("Central_Meridian", c.LonOrigin)
	switch c.Method {
	case TransverseMercator:
		param("Scale_Factor", c.ScaleFactor)
	case LambertConic1SP:
		param("Standard_Parallel_1", c.LatOrigin)
		param("Scale_Factor", c.ScaleFactor)
	case LambertConic2SP:
		param("Standard_Parallel_1", c.StdParallel1)
		param("Standard_Parallel_2", c.StdParallel2)
	}
	param("Latitude_Of_Origin", c.LatOrigin)
	uname := c.UnitName
	switch u {
	case 1:
		uname = "Meter"
	case MetresPerFoot:
		uname = "Foot"
	case MetresPerUSSurveyFoot:
		uname = "Foot_US"
	}
	b.WriteString(`,UNIT[` + wktQuote(uname) + `,` + wktESRINum(u) + `]]`)
	return b.String()
}

// wktESRIName turns a CRS name into ESRI's style: letters, digits and underscores.
func wktESRIName(name string) string {
	var b strings.Builder
	under := false
	for _, r := range name {
		if r >= 'A' && r <= 'Z' || r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			if under && b.Len() > 0 {
				b.WriteByte('_')
			}
			b.WriteRune(r)
			under = false
		} else {
			under = true
		}
	}
	if b.Len() == 0 {
		return "unnamed"
	}
	return b.String()
}
