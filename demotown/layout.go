package demotown

import (
	"math"
	"math/rand/v2"
)

// Street lattice dimensions, feet (blocks of 300–450 ft are usual in towns
// of the US plains; common practice, no source).
const (
	blockXFt    = 400.0 // east–west block length
	blockYFt    = 330.0 // north–south block depth
	riverGapFt  = 260.0 // extra width of the river corridor between its bank streets
	riverBendFt = 180.0 // amplitude of the river's meanders
	jitterFt    = 12.0  // random offset of each intersection
	rotationDeg = 7.5   // the grid's rotation from true north

	// zoneCells is the target width of one district, in blocks.
	zoneCells = 34.0
	// The generator makes about segmentsPerCell·(1 − edgeCells/side)
	// pipe segments per lattice cell on a side×side lattice (measured: the
	// outline and the supply sites cost a share that shrinks as it grows).
	segmentsPerCell = 1.615
	edgeCells       = 4.2
)

// Location of the town centre (invented; open country in the central plains).
const (
	centreLon = -98.40
	centreLat = 38.665
)

// vec is a position in the unrotated town frame, feet east and north.
type vec struct{ x, y float64 }

func (a vec) add(b vec) vec             { return vec{a.x + b.x, a.y + b.y} }
func (a vec) sub(b vec) vec             { return vec{a.x - b.x, a.y - b.y} }
func (a vec) scale(s float64) vec       { return vec{a.x * s, a.y * s} }
func (a vec) lerp(b vec, t float64) vec { return a.add(b.sub(a).scale(t)) }
func (a vec) norm() float64             { return math.Hypot(a.x, a.y) }

// zone is one district: the pattern repeated across large towns. Columns and
// rows are lattice indices.
type zone struct {
	index      int     // 0-based, row-major
	x0, y0     float64 // lattice coordinates of the district's south-west corner
	iA, iB     int     // arterial loop columns (west, east)
	jA, jB     int     // arterial loop rows (south, north); jB is also the tank main's row
	jr         int     // river corridor lies between rows jr and jr+1
	iTank      int     // tank site column on row jB
	iRes, jRes int     // reservoir site
}

// generator holds every intermediate of one Generate call.
type generator struct {
	target int
	seed   uint64
	rng    *rand.Rand

	nx, ny     int     // lattice nodes per axis
	nzx, nzy   int     // districts per axis
	zw, zh     float64 // district size in cells
	wFt, hFt   float64 // district size in feet (hFt includes one river corridor)
	rowY       []float64
	zones      []zone
	riverPhase []float64 // per district row
	edgePhase  [4]float64
	terrPhase  [5]float64

	pos    []vec  // node positions: the lattice first, then added nodes
	exists []bool // lattice nodes that carry streets

	net
}

func newGenerator(target int, seed uint64) *generator {
	g := &generator{target: target, seed: seed}
	g.rng = rand.New(rand.NewPCG(seed, 0x5155494c4c4d5245)) // "QUILLMRE"
	side := 1.0 + math.Sqrt(float64(target)/segmentsPerCell)
	for range 8 {
		side = 1 + math.Sqrt(float64(target)/(segmentsPerCell*(1-edgeCells/side)))
	}
	g.nx = int(math.Round(side))
	g.ny = g.nx
	g.nzx = max(1, int(math.Round(float64(g.nx-1)/zoneCells)))
	g.nzy = max(1, int(math.Round(float64(g.ny-1)/zoneCells)))
	g.zw = float64(g.nx-1) / float64(g.nzx)
	g.zh = float64(g.ny-1) / float64(g.nzy)
	g.wFt = g.zw * blockXFt
	g.hFt = g.zh*blockYFt + riverGapFt
	return g
}

func (g *generator) id(i, j int) int32 { return int32(j*g.nx + i) }

// zoneAt returns the district holding lattice coordinates (fi, fj).
func (g *generator) zoneAt(fi, fj float64) *zone {
	zx := min(g.nzx-1, max(0, int(fi/g.zw)))
	zy := min(g.nzy-1, max(0, int(fj/g.zh)))
	return &g.zones[zy*g.nzx+zx]
}

// local returns (fi, fj) as fractions of its district, each in [0, 1).
func (g *generator) local(fi, fj float64) (u, v float64, z *zone) {
	z = g.zoneAt(fi, fj)
	return (fi - z.x0) / g.zw, (fj - z.y0) / g.zh, z
}

// layout sizes the lattice, places the districts and their rivers, and
// computes every lattice position and which lattice nodes carry streets.
func (g *generator) layout() {
	for k := range g.edgePhase {
		g.edgePhase[k] = g.rng.Float64() * 2 * math.Pi
	}
	for k := range g.terrPhase {
		g.terrPhase[k] = g.rng.Float64() * 2 * math.Pi
	}
	g.riverPhase = make([]float64, g.nzy)
	for k := range g.riverPhase {
		g.riverPhase[k] = g.rng.Float64() * 2 * math.Pi
	}
	for zy := range g.nzy {
		for zx := range g.nzx {
			x0, y0 := float64(zx)*g.zw, float64(zy)*g.zh
			z := zone{
				index: zy*g.nzx + zx, x0: x0, y0: y0,
				iA: int(math.Round(x0 + 0.2*g.zw)), iB: int(math.Round(x0 + 0.8*g.zw)),
				jA: int(math.Round(y0 + 0.2*g.zh)), jB: int(math.Round(y0 + 0.8*g.zh)),
				jr:    int(math.Floor(y0 + 0.34*g.zh)),
				iTank: int(math.Round(x0 + 0.06*g.zw)),
				iRes:  int(math.Round(x0 + 0.94*g.zw)), jRes: int(math.Round(y0 + 0.52*g.zh)),
			}
			g.zones = append(g.zones, z)
		}
	}
	g.placeRows()
	g.placeNodes()
	g.clip()
}

// placeRows sets the northing of each lattice row: block depths plus one
// river corridor per district row crossed.
func (g *generator) placeRows() {
	g.rowY = make([]float64, g.ny)
	gaps := 0
	for j := range g.ny {
		for gaps < g.nzy && j > g.zones[gaps*g.nzx].jr {
			gaps++
		}
		g.rowY[j] = float64(j)*blockYFt + float64(gaps)*riverGapFt
	}
}

// riverCentre returns the northing of district row zy's river at easting x.
func (g *generator) riverCentre(zy int, x float64) float64 {
	jr := g.zones[zy*g.nzx].jr
	return 0.5*(g.rowY[jr]+g.rowY[jr+1]) + riverBendFt*math.Sin(4*math.Pi*x/g.wFt+g.riverPhase[zy])
}

// placeNodes computes every lattice position: the regular grid, bent along
// the river of its district row and jittered.
func (g *generator) placeNodes() {
	g.pos = make([]vec, g.nx*g.ny, g.nx*g.ny+g.nx*g.ny/8)
	for j := range g.ny {
		zy := min(g.nzy-1, int(float64(j)/g.zh))
		dj := float64(j) - (float64(g.zones[zy*g.nzx].jr) + 0.5)
		bend := math.Exp(-(dj / 2.2) * (dj / 2.2))
		for i := range g.nx {
			x := float64(i) * blockXFt
			y := g.rowY[j] + bend*riverBendFt*math.Sin(4*math.Pi*x/g.wFt+g.riverPhase[zy])
			x += (g.rng.Float64()*2 - 1) * jitterFt
			y += (g.rng.Float64()*2 - 1) * jitterFt
			g.pos[g.id(i, j)] = vec{x, y}
		}
	}
}

// clip keeps the lattice nodes inside the town's irregular outline and
// outside the open ground around each supply site, then restores the nodes
// of each arterial loop and transmission route.
func (g *generator) clip() {
	g.exists = make([]bool, g.nx*g.ny)
	const p = 3.2 // superellipse exponent of the outline
	for j := range g.ny {
		b := 2*float64(j)/float64(g.ny-1) - 1
		for i := range g.nx {
			a := 2*float64(i)/float64(g.nx-1) - 1
			rho := math.Pow(math.Pow(math.Abs(a), p)+math.Pow(math.Abs(b), p), 1/p)
			th := math.Atan2(b, a)
			r := 0.92 + 0.05*math.Sin(3*th+g.edgePhase[0]) + 0.03*math.Sin(5*th+g.edgePhase[1]) +
				0.015*math.Sin(13*th+g.edgePhase[2])
			g.exists[g.id(i, j)] = rho <= r
		}
	}
	rOpen := max(1.6, 0.065*g.zw)
	for _, z := range g.zones {
		g.clear(float64(z.iTank), float64(z.jB), rOpen)
		g.clear(float64(z.iRes), float64(z.jRes), rOpen)
	}
	for _, z := range g.zones {
		for i := z.iA; i <= z.iB; i++ {
			g.exists[g.id(i, z.jA)], g.exists[g.id(i, z.jB)] = true, true
		}
		for j := z.jA; j <= z.jB; j++ {
			g.exists[g.id(z.iA, j)], g.exists[g.id(z.iB, j)] = true, true
		}
	}
}

// clear removes the lattice nodes within r cells of (ci, cj).
func (g *generator) clear(ci, cj, r float64) {
	for j := max(0, int(cj-r)-1); j <= min(g.ny-1, int(cj+r)+1); j++ {
		for i := max(0, int(ci-r)-1); i <= min(g.nx-1, int(ci+r)+1); i++ {
			if math.Hypot(float64(i)-ci, float64(j)-cj) <= r {
				g.exists[g.id(i, j)] = false
			}
		}
	}
}

// latticeXY returns the unjittered position of fractional lattice
// coordinates, used for directions and distances only.
func (g *generator) latticeXY(fi, fj float64) vec {
	j := min(g.ny-2, max(0, int(fj)))
	t := fj - float64(j)
	return vec{fi * blockXFt, g.rowY[j] + t*(g.rowY[j+1]-g.rowY[j])}
}

// Terrain: a ridge along each district's north side, a valley along its
// river and three waves of smaller relief, in feet above the datum.
const (
	terrainBaseFt   = 842.0
	ridgeFt         = 40.0 // half the ridge-to-valley swing
	ridgeRow        = 0.80 // crest, as a fraction of the district's depth
	valleyFt        = 20.0 // extra depth of the river valley
	valleyWidthFt   = 600.0
	undulationFt    = 7.0
	rollFt          = 4.0
	rippleFt        = 2.5
	undulationXFt   = 5300.0
	undulationYFt   = 4100.0
	rollLengthFt    = 2300.0
	rippleLengthFt  = 1300.0
	feetPerPSI      = 144.0 / 62.4 // 2.3077 ft of water per psi (DOMAIN.md §3.7)
	defaultTankHGL  = 1010.0
	defaultResHGL   = 990.0
	tankMainInches  = 20.0
	resMainInches   = 18.0
	loopInches      = 12.0
	loopFeedInches  = 16.0
	bridgeSpacing   = 8 // columns between river bridges
	bridgeColumnMod = 4
)

// elevation returns the ground elevation in feet at p (unrotated frame):
//
//	E = 842 + 40·cos(2π(v − 0.80)) − 20·exp(−(d/600)²) + waves
//
// where v is the northing as a fraction of the district depth and d the
// distance to the nearest river centre line, in feet.
func (g *generator) elevation(p vec) float64 {
	v := p.y / g.hFt
	e := terrainBaseFt + ridgeFt*math.Cos(2*math.Pi*(v-ridgeRow))
	zy := int(math.Floor(v))
	d := math.Inf(1)
	for k := zy - 1; k <= zy+1; k++ {
		if k >= 0 && k < g.nzy {
			d = min(d, math.Abs(p.y-g.riverCentre(k, p.x)))
		}
	}
	e -= valleyFt * math.Exp(-(d/valleyWidthFt)*(d/valleyWidthFt))
	ph := g.terrPhase
	e += undulationFt * math.Sin(2*math.Pi*p.x/undulationXFt+ph[0]) * math.Cos(2*math.Pi*p.y/undulationYFt+ph[1])
	e += rollFt * math.Sin(2*math.Pi*(p.x+p.y)/rollLengthFt+ph[2])
	e += rippleFt * math.Sin(2*math.Pi*(p.x-0.6*p.y)/rippleLengthFt+ph[3])
	return e
}
