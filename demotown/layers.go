package demotown

import (
	"math"
	"math/rand/v2"
	"strconv"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
)

// WGS84 ellipsoid (semi-major axis in metres, first eccentricity squared).
const (
	wgs84A  = 6378137.0
	wgs84E2 = 0.00669437999014
	metre   = 1 / 0.3048 // feet per metre
)

// Spot heights: a grid every elevationStepFt plus a tenth as many
// scattered points, both over the town's bounding box.
const (
	elevationStepFt = 650.0
	elevationMargin = 300.0
	scatterShare    = 0.1
)

// frame turns unrotated town feet into lon/lat. Degrees per metre use the
// meridional radius M and prime-vertical radius N at the town's latitude:
//
//	M = a(1−e²)/(1−e²sin²φ)^1.5,  N = a/√(1−e²sin²φ)
//
// so one degree is M·π/180 m of latitude and N·cosφ·π/180 m of longitude.
type frame struct {
	centre     vec
	cos, sin   float64
	mLat, mLon float64 // metres per degree
}

func (g *generator) frame() frame {
	phi := centreLat * math.Pi / 180
	w := 1 - wgs84E2*math.Sin(phi)*math.Sin(phi)
	m := wgs84A * (1 - wgs84E2) / math.Pow(w, 1.5)
	n := wgs84A / math.Sqrt(w)
	th := rotationDeg * math.Pi / 180
	return frame{
		centre: vec{float64(g.nx-1) * blockXFt / 2, g.rowY[g.ny-1] / 2},
		cos:    math.Cos(th), sin: math.Sin(th),
		mLat: m * math.Pi / 180, mLon: n * math.Cos(phi) * math.Pi / 180,
	}
}

// rotate turns town-frame feet into feet east and north of the centre.
func (f frame) rotate(p vec) vec {
	d := p.sub(f.centre)
	return vec{f.cos*d.x - f.sin*d.y, f.sin*d.x + f.cos*d.y}
}

// unrotate is the inverse of rotate.
func (f frame) unrotate(q vec) vec {
	return vec{f.cos*q.x + f.sin*q.y, -f.sin*q.x + f.cos*q.y}.add(f.centre)
}

// lonLat returns the rotated position q (feet east and north of the centre)
// in degrees, rounded to 1e-7°.
func (f frame) lonLat(q vec) orb.Point {
	return orb.Point{
		round(centreLon+q.x/metre/f.mLon, 7),
		round(centreLat+q.y/metre/f.mLat, 7),
	}
}

func (f frame) point(p vec) orb.Point { return f.lonLat(f.rotate(p)) }

func round(v float64, decimals int) float64 {
	s := math.Pow10(decimals)
	return math.Round(v*s) / s
}

// code returns prefix followed by n zero-padded to width digits.
func code(prefix string, n, width int) string {
	s := strconv.Itoa(n)
	for len(s) < width {
		s = "0" + s
	}
	return prefix + s
}

func (g *generator) zoneName(k int) string { return code("Z", k+1, 2) }

// nodePoints returns every node's lon/lat, computed once so that mains
// meeting at a node share the same rounded coordinates.
func (g *generator) nodePoints(f frame) []orb.Point {
	pts := make([]orb.Point, len(g.pos))
	used := make([]bool, len(g.pos))
	for _, e := range g.edges {
		used[e.a], used[e.b] = true, true
	}
	for k, p := range g.pos {
		if used[k] {
			pts[k] = f.point(p)
		}
	}
	return pts
}

func (g *generator) pipeLayer() *geojson.FeatureCollection {
	f := g.frame()
	pts := g.nodePoints(f)
	streets, surfaces := g.streets(), g.surfaces()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, len(g.edges))}
	for k, e := range g.edges {
		ls := make(orb.LineString, 0, 2+len(e.via))
		ls = append(ls, pts[e.a])
		for _, v := range e.via {
			ls = append(ls, f.point(v))
		}
		ls = append(ls, pts[e.b])
		var c any
		if e.cTest != 0 {
			c = e.cTest
		}
		status := StatusOpen
		if e.closed {
			status = StatusClosed
		}
		fc.Features[k] = &geojson.Feature{Type: "Feature", Geometry: ls, Properties: geojson.Properties{
			PipeID:        code("QM-", k+1, 5),
			PipeDiameter:  e.diam,
			PipeMaterial:  materialCode[e.mat],
			PipeYear:      float64(e.year),
			PipeMeasuredC: c,
			PipeStatus:    status,
			PipeZone:      g.zoneName(g.zoneAt(float64(e.fi), float64(e.fj)).index),
			PipeStreet:    streets[k],
			PipeSurface:   surfaces[k],
		}}
	}
	return fc
}

var (
	tankNames      = []string{"Harrow Hill", "Tansy Knob", "Brindle Rise", "Coldwater Bluff", "Merrow Heights", "Gorse Ridge"}
	reservoirNames = []string{"Linden Ford", "Sedge Flats", "Cobble Springs", "Ashby Bottoms", "Wren Hollow", "Morrow Creek"}
)

// siteName names the k-th tank or reservoir (0-based among its kind).
func siteName(pool []string, k int, kind string) string {
	name := pool[k%len(pool)]
	if k >= len(pool) {
		name += " " + strconv.Itoa(k/len(pool)+1)
	}
	return name + " " + kind
}

func (g *generator) sourceLayer() *geojson.FeatureCollection {
	f := g.frame()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, 0, len(g.sites))}
	tanks, reservoirs := 0, 0
	for k, s := range g.sites {
		name, kind, hgl := "", "tank", defaultTankHGL
		if s.tank {
			name = siteName(tankNames, tanks, "Tank")
			tanks++
		} else {
			name, kind, hgl = siteName(reservoirNames, reservoirs, "Reservoir"), "reservoir", defaultResHGL
			reservoirs++
		}
		fc.Features = append(fc.Features, &geojson.Feature{Type: "Feature", Geometry: f.point(g.pos[s.node]),
			Properties: geojson.Properties{
				SourceID:    code("QS-", k+1, 2),
				SourceName:  name,
				SourceGrade: hgl,
				SourceKind:  kind,
				SourceZone:  g.zoneName(s.zone),
			}})
	}
	return fc
}

// Average-day demand per service point, gpm, by land-use band: downtown
// points are mixed commercial, the rings residential parcels of a few homes
// each (about 350–450 gal/day per home; common practice, no source).
var (
	bandDemandGPM = [4]float64{0.64, 0.8, 0.72, 0.62}
	bandPoints    = [4]int{2, 1, 1, 1}
	bandShare     = [4]float64{1, 1, 0.92, 0.88} // chance a segment has a point
)

type demandPoint struct {
	at  vec
	gpm float64
	use string
}

func (g *generator) demandLayer() *geojson.FeatureCollection {
	rng := rand.New(rand.NewPCG(g.seed, 0x44454d414e44)) // "DEMAND"
	var pts []demandPoint
	pts = make([]demandPoint, 0, len(g.edges)+len(g.edges)/8)
	for _, e := range g.edges {
		pts = g.edgeDemands(pts, &e, rng)
	}
	for _, b := range g.big {
		e := &g.edges[b.edge]
		pa, pb := g.pos[e.a], g.pos[e.b]
		d := pb.sub(pa)
		d = d.scale(1 / d.norm())
		var at vec
		if b.node >= 0 {
			at = g.pos[b.node].add(d.scale(30))
		} else {
			at = pa.lerp(pb, 0.5).add(vec{-d.y, d.x}.scale(70))
		}
		pts = append(pts, demandPoint{at: at, gpm: b.gpm, use: b.use})
	}
	f := g.frame()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, len(pts))}
	for k, p := range pts {
		fc.Features[k] = &geojson.Feature{Type: "Feature", Geometry: f.point(p.at), Properties: geojson.Properties{
			DemandID:  code("QA-", k+1, 6),
			DemandADD: p.gpm,
			DemandUse: p.use,
		}}
	}
	return fc
}

// edgeDemands appends the service points along e, set back 45–70 ft from
// its chord (35 ft on short stubs) into the block.
func (g *generator) edgeDemands(pts []demandPoint, e *edge, rng *rand.Rand) []demandPoint {
	band, _ := g.band(float64(e.fi), float64(e.fj))
	n, share, base := bandPoints[band], bandShare[band], bandDemandGPM[band]
	use := "residential"
	switch e.kind {
	case kLinkTank, kLinkRes, kSpur:
		return pts
	case kBridge:
		return pts
	case kTransTank, kTransRes:
		share = 0.5
	case kRiverRoad:
		n, share, base = 1, 1, 0.5
	case kCul:
		n, share, base = 1, 1, 0.9
	}
	if band == 0 && rng.Float64() < 0.4 {
		use = "commercial"
	}
	if rng.Float64() >= share {
		return pts
	}
	pa, pb := g.pos[e.a], g.pos[e.b]
	d := pb.sub(pa)
	length := d.norm()
	normal := vec{-d.y, d.x}.scale(1 / length)
	setback := 45 + 25*rng.Float64()
	if length < 200 {
		setback = 35
	}
	mid := pa.lerp(pb, 0.5)
	density := 1 + 0.25*math.Sin(2*math.Pi*mid.x/3700+g.terrPhase[4])*math.Cos(2*math.Pi*mid.y/2900)
	for k := range n {
		t := 0.5
		if n == 2 {
			t = 0.3 + 0.4*float64(k)
		}
		side := 1.0
		if rng.IntN(2) == 0 {
			side = -1
		}
		gpm := round(max(0.05, base*density*math.Exp(0.35*rng.NormFloat64())), 2)
		pts = append(pts, demandPoint{at: pa.lerp(pb, t).add(normal.scale(side * setback)), gpm: gpm, use: use})
	}
	return pts
}

func (g *generator) elevationLayer() *geojson.FeatureCollection {
	rng := rand.New(rand.NewPCG(g.seed, 0x454c4556)) // "ELEV"
	f := g.frame()
	lo, hi := vec{math.Inf(1), math.Inf(1)}, vec{math.Inf(-1), math.Inf(-1)}
	for _, p := range g.pos {
		q := f.rotate(p)
		lo = vec{min(lo.x, q.x), min(lo.y, q.y)}
		hi = vec{max(hi.x, q.x), max(hi.y, q.y)}
	}
	lo = lo.sub(vec{elevationMargin, elevationMargin})
	hi = hi.add(vec{elevationMargin, elevationMargin})
	nx := int((hi.x-lo.x)/elevationStepFt) + 1
	ny := int((hi.y-lo.y)/elevationStepFt) + 1
	scatter := int(float64(nx*ny) * scatterShare)
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, 0, nx*ny+scatter)}
	add := func(q vec) {
		fc.Features = append(fc.Features, &geojson.Feature{Type: "Feature", Geometry: f.lonLat(q),
			Properties: geojson.Properties{ElevationValue: round(g.elevation(f.unrotate(q)), 1)}})
	}
	for j := range ny {
		for i := range nx {
			add(vec{lo.x + float64(i)*elevationStepFt, lo.y + float64(j)*elevationStepFt})
		}
	}
	for range scatter {
		add(vec{lo.x + rng.Float64()*(hi.x-lo.x), lo.y + rng.Float64()*(hi.y-lo.y)})
	}
	return fc
}
