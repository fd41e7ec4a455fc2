package demotown

import (
	"math"
)

// Edge kinds: what a pipe segment is in the town's plan.
const (
	kNone      uint8 = iota // no street here
	kStreet                 // distribution main under a grid street
	kLoop                   // arterial loop
	kBridge                 // main carried across the river
	kTransTank              // transmission main from the tank, in a street
	kTransRes               // transmission main from the reservoir, in a street
	kLinkTank               // transmission main from the tank across open ground
	kLinkRes                // transmission main from the reservoir across open ground
	kCurve                  // curving collector road cutting across blocks
	kCul                    // cul-de-sac
	kSpur                   // old 4-in spur into a block (school, apartments)
	kRiverRoad              // long 6-in dead end along the river corridor
)

// edge is one pipe segment between two nodes, with its attributes.
type edge struct {
	a, b   int32
	via    []vec   // interior vertices, a to b
	kind   uint8   // one of the k* kinds
	fi, fj float32 // lattice coordinates of its middle, for land-use bands
	diam   float64 // nominal, inches
	mat    uint8   // one of the m* materials
	year   int16
	cTest  float64 // measured C; 0 when untested
	closed bool
}

// stub is a short main from the middle of a street into a block.
type stub struct {
	hi, hj int   // the street: lattice edge (hi, hj)–(hi+1, hj)
	side   int   // +1 into the block north of the street, −1 south
	kind   uint8 // kCul or kSpur
	use    string
	gpm    float64
}

// bigUser is a large service account: at the end node of a special main,
// or beside the middle of an edge.
type bigUser struct {
	edge int32 // pipe it sits on
	node int32 // -1: beside the middle of edge; else at this node
	use  string
	gpm  float64
}

// site is a supply: the far end node of its transmission main.
type site struct {
	node int32
	zone int
	tank bool
}

// net is the pipe network under construction.
type net struct {
	edges        []edge
	sites        []site
	big          []bigUser
	hKind, vKind []uint8
	hStub        []int32 // stub index + 1, per horizontal lattice edge
	cellUsed     []bool
	stubs        []stub
	hEdge, vEdge []int32 // created edge per lattice edge, or -1
}

func (g *generator) hIdx(i, j int) int    { return j*(g.nx-1) + i }
func (g *generator) vIdx(i, j int) int    { return j*g.nx + i }
func (g *generator) cellIdx(i, j int) int { return j*(g.nx-1) + i }

// band returns the land-use band of lattice coordinates (fi, fj): 0 the old
// core (cast iron), 1 the 1950s–70s ring (asbestos cement), 2 the 1980s–2000s
// ring (ductile iron), 3 the newest edge (PVC); and r, the scaled distance
// from the district's downtown.
func (g *generator) band(fi, fj float64) (band int, r float64) {
	u, v, z := g.local(fi, fj)
	du, dv := u-0.5, v-0.58
	r = math.Hypot(du, dv) * (1 + 0.12*math.Sin(3*math.Atan2(dv, du)+g.edgePhase[3]+float64(z.index)))
	switch {
	case r < 0.16:
		return 0, r
	case r < 0.29:
		return 1, r
	case r < 0.41:
		return 2, r
	}
	return 3, r
}

// build lays out every pipe: street kinds, special mains, then the edges.
func (g *generator) build() {
	g.planKinds()
	g.planStubs()
	diags := g.planCurves()
	g.makeStreets()
	g.makeDiagonals(diags)
	g.makeRiverRoads()
	g.makeSupplies()
	g.placeBigUsers()
}

// planKinds marks each lattice edge as street, loop, bridge or transmission,
// removes river crossings that have no bridge, and drops a few outer
// streets to leave dead ends.
func (g *generator) planKinds() {
	g.hKind = make([]uint8, (g.nx-1)*g.ny)
	g.vKind = make([]uint8, g.nx*(g.ny-1))
	for k := range g.hKind {
		g.hKind[k] = kStreet
	}
	for k := range g.vKind {
		g.vKind[k] = kStreet
	}
	for zy := range g.nzy {
		jr := g.zones[zy*g.nzx].jr
		for i := range g.nx {
			g.vKind[g.vIdx(i, jr)] = kNone
			if i%bridgeSpacing == bridgeColumnMod {
				g.vKind[g.vIdx(i, jr)] = kBridge
			}
		}
	}
	for _, z := range g.zones {
		for i := z.iA; i < z.iB; i++ {
			g.hKind[g.hIdx(i, z.jA)], g.hKind[g.hIdx(i, z.jB)] = kLoop, kLoop
		}
		for j := z.jA; j < z.jB; j++ {
			g.vKind[g.vIdx(z.iA, j)], g.vKind[g.vIdx(z.iB, j)] = kLoop, kLoop
		}
	}
	for _, z := range g.zones {
		ie := z.iTank + 1
		for !g.exists[g.id(ie, z.jB)] {
			ie++
		}
		for i := ie; i < z.iA; i++ {
			g.exists[g.id(i+1, z.jB)] = true
			g.hKind[g.hIdx(i, z.jB)] = kTransTank
		}
		ie = z.iRes - 1
		for !g.exists[g.id(ie, z.jRes)] {
			ie--
		}
		for i := ie - 1; i >= z.iB; i-- {
			g.exists[g.id(i, z.jRes)] = true
			g.hKind[g.hIdx(i, z.jRes)] = kTransRes
		}
	}
	const dropShare = 0.035
	for j := range g.ny {
		for i := range g.nx {
			if i < g.nx-1 && g.hKind[g.hIdx(i, j)] == kStreet {
				if b, _ := g.band(float64(i)+0.5, float64(j)); b >= 2 && g.rng.Float64() < dropShare {
					g.hKind[g.hIdx(i, j)] = kNone
				}
			}
			if j < g.ny-1 && g.vKind[g.vIdx(i, j)] == kStreet {
				if b, _ := g.band(float64(i), float64(j)+0.5); b >= 2 && g.rng.Float64() < dropShare {
					g.vKind[g.vIdx(i, j)] = kNone
				}
			}
		}
	}
}

// stubEdgeFree reports whether a stub may leave street (i, j)–(i+1, j)
// into the block on side.
func (g *generator) stubEdgeFree(i, j, side int) bool {
	if i < 0 || i >= g.nx-1 || j < 0 || j >= g.ny {
		return false
	}
	cj := j
	if side < 0 {
		cj = j - 1
	}
	if cj < 0 || cj >= g.ny-1 {
		return false
	}
	return g.hKind[g.hIdx(i, j)] == kStreet && g.hStub[g.hIdx(i, j)] == 0 &&
		g.exists[g.id(i, j)] && g.exists[g.id(i+1, j)] && !g.cellUsed[g.cellIdx(i, cj)]
}

func (g *generator) addStub(s stub) {
	g.stubs = append(g.stubs, s)
	g.hStub[g.hIdx(s.hi, s.hj)] = int32(len(g.stubs))
	cj := s.hj
	if s.side < 0 {
		cj--
	}
	g.cellUsed[g.cellIdx(s.hi, cj)] = true
}

// planStubs places, in each district, a school and an apartment block on
// old 4-in spurs in the core, then cul-de-sacs in the newer rings.
func (g *generator) planStubs() {
	g.hStub = make([]int32, (g.nx-1)*g.ny)
	g.cellUsed = make([]bool, (g.nx-1)*(g.ny-1))
	for _, z := range g.zones {
		for i := range g.nx - 1 {
			g.cellUsed[g.cellIdx(i, z.jr)] = true // the river corridor is no block
		}
	}
	specials := []struct {
		u, v float64
		use  string
		gpm  float64
	}{
		{0.56, 0.64, "school", 28},
		{0.43, 0.52, "apartments", 42},
	}
	for _, z := range g.zones {
		for _, sp := range specials {
			ti, tj := z.x0+sp.u*g.zw, z.y0+sp.v*g.zh
			bi, bj, best := -1, -1, math.Inf(1)
			for j := int(tj) - 4; j <= int(tj)+4; j++ {
				for i := int(ti) - 4; i <= int(ti)+4; i++ {
					d := math.Hypot(float64(i)+0.5-ti, float64(j)-tj)
					if d < best && g.stubEdgeFree(i, j, 1) {
						if b, _ := g.band(float64(i)+0.5, float64(j)); b == 0 {
							bi, bj, best = i, j, d
						}
					}
				}
			}
			if bi >= 0 {
				g.addStub(stub{hi: bi, hj: bj, side: 1, kind: kSpur, use: sp.use, gpm: sp.gpm})
			}
		}
	}
	for j := 1; j < g.ny-1; j++ {
		for i := range g.nx - 1 {
			b, _ := g.band(float64(i)+0.5, float64(j))
			p := [4]float64{0, 0, 0.07, 0.2}[b]
			if p == 0 || g.rng.Float64() >= p {
				continue
			}
			side := 1
			if g.rng.IntN(2) == 0 {
				side = -1
			}
			if g.stubEdgeFree(i, j, side) {
				g.addStub(stub{hi: i, hj: j, side: side, kind: kCul})
			}
		}
	}
}

// diagonal is one block-crossing piece of a curving road.
type diagonal struct {
	a, b   int32
	centre vec // centre of the road's arc, for the bulge direction
	fi, fj float32
}

// arc is a curving road: part of a circle around a district's downtown,
// in district fractions and degrees.
type arc struct{ radius, from, to float64 }

var roadArcs = []arc{{0.36, 12, 78}, {0.40, 108, 162}}

// planCurves traces, in each district, two curving collector roads on arcs
// around downtown as lattice walks: each step goes forward along the arc,
// diagonally across a block when that stays within half a cell of the arc
// (the block gets a curved main), else along an existing street.
func (g *generator) planCurves() []diagonal {
	var out []diagonal
	for _, z := range g.zones {
		ci, cj := z.x0+0.5*g.zw, z.y0+0.58*g.zh
		centre := g.latticeXY(ci, cj)
		for _, a := range roadArcs {
			r := a.radius * g.zw
			th := a.from * math.Pi / 180
			i, j := int(math.Round(ci+r*math.Cos(th))), int(math.Round(cj+r*math.Sin(th)))
			for steps := 0; steps < 8*int(r) && th < a.to*math.Pi/180; steps++ {
				dx, dy := sign(-math.Sin(th)), sign(math.Cos(th))
				radial := func(di, dj int) float64 {
					return math.Abs(math.Hypot(float64(i+di)-ci, float64(j+dj)-cj) - r)
				}
				di, dj := dx, dy
				if dx == 0 || dy == 0 || radial(dx, dy) > 0.5 {
					di, dj = dx, 0
					if dx == 0 || (dy != 0 && radial(0, dy) < radial(dx, 0)) {
						di, dj = 0, dy
					}
				}
				ni, nj := i+di, j+dj
				if ni < 0 || ni >= g.nx || nj < 0 || nj >= g.ny {
					break
				}
				if di != 0 && dj != 0 {
					c := g.cellIdx(min(i, ni), min(j, nj))
					if !g.cellUsed[c] && g.exists[g.id(i, j)] && g.exists[g.id(ni, nj)] {
						g.cellUsed[c] = true
						out = append(out, diagonal{a: g.id(i, j), b: g.id(ni, nj), centre: centre,
							fi: float32(i+ni) / 2, fj: float32(j+nj) / 2})
					}
				}
				i, j = ni, nj
				th = math.Atan2(float64(j)-cj, float64(i)-ci)
				if th < 0 {
					th += 2 * math.Pi
				}
			}
		}
	}
	return out
}

func sign(v float64) int {
	switch {
	case v > 1e-9:
		return 1
	case v < -1e-9:
		return -1
	}
	return 0
}

func (g *generator) addNode(p vec) int32 {
	g.pos = append(g.pos, p)
	return int32(len(g.pos) - 1)
}

func (g *generator) addEdge(e edge) int32 {
	g.edges = append(g.edges, e)
	return int32(len(g.edges) - 1)
}

// makeStreets creates the lattice edges, splitting a street where a stub
// leaves it.
func (g *generator) makeStreets() {
	g.hEdge = make([]int32, len(g.hKind))
	g.vEdge = make([]int32, len(g.vKind))
	g.edges = make([]edge, 0, g.target+g.target/8)
	for j := range g.ny {
		for i := range g.nx {
			if i < g.nx-1 {
				g.hEdge[g.hIdx(i, j)] = g.makeStreet(i, j, i+1, j, g.hKind[g.hIdx(i, j)], g.hStub[g.hIdx(i, j)])
			}
			if j < g.ny-1 {
				g.vEdge[g.vIdx(i, j)] = g.makeStreet(i, j, i, j+1, g.vKind[g.vIdx(i, j)], 0)
			}
		}
	}
}

// makeStreet creates the edge (i, j)–(k, l) of the given kind, and the stub
// numbered stubNo (1-based, 0 for none) from its middle. It returns the
// first edge made, or -1.
func (g *generator) makeStreet(i, j, k, l int, kind uint8, stubNo int32) int32 {
	a, b := g.id(i, j), g.id(k, l)
	if kind == kNone || !g.exists[a] || !g.exists[b] {
		return -1
	}
	fi, fj := float32(i+k)/2, float32(j+l)/2
	if stubNo == 0 {
		return g.addEdge(edge{a: a, b: b, kind: kind, fi: fi, fj: fj})
	}
	s := g.stubs[stubNo-1]
	m := g.addNode(g.pos[a].lerp(g.pos[b], 0.5))
	first := g.addEdge(edge{a: a, b: m, kind: kind, fi: float32(i) + 0.25, fj: fj})
	g.addEdge(edge{a: m, b: b, kind: kind, fi: float32(i) + 0.75, fj: fj})
	far := g.pos[g.id(i, j+s.side)].lerp(g.pos[g.id(k, l+s.side)], 0.5)
	dir := far.sub(g.pos[m])
	sfi, sfj := fi, fj+float32(s.side)*0.25
	if s.kind == kCul {
		bendTo := vec{-dir.y, dir.x}.scale(0.06)
		end := g.addNode(g.pos[m].add(dir.scale(0.42)))
		g.addEdge(edge{a: m, b: end, kind: kCul, fi: sfi, fj: sfj,
			via: []vec{g.pos[m].add(dir.scale(0.24)).add(bendTo)}})
		return first
	}
	knee := g.addNode(g.pos[m].add(dir.scale(0.22)))
	end := g.addNode(g.pos[m].add(dir.scale(0.45)))
	g.addEdge(edge{a: m, b: knee, kind: kSpur, fi: sfi, fj: sfj})
	e := g.addEdge(edge{a: knee, b: end, kind: kSpur, fi: sfi, fj: sfj})
	g.big = append(g.big, bigUser{edge: e, node: end, use: s.use, gpm: s.gpm})
	return first
}

// makeDiagonals creates the curving road's block-crossing mains, each bowed
// away from the arc's centre by 6 % of its length.
func (g *generator) makeDiagonals(ds []diagonal) {
	for _, d := range ds {
		pa, pb := g.pos[d.a], g.pos[d.b]
		mid := pa.lerp(pb, 0.5)
		out := mid.sub(d.centre)
		out = out.scale(0.06 * pb.sub(pa).norm() / out.norm())
		via := []vec{pa.lerp(pb, 1.0/3).add(out.scale(8.0 / 9)), pa.lerp(pb, 2.0/3).add(out.scale(8.0 / 9))}
		g.addEdge(edge{a: d.a, b: d.b, kind: kCurve, via: via, fi: d.fi, fj: d.fj})
	}
}

// makeRiverRoads lays, in each district, a long 6-in dead end down the
// middle of the river corridor from a south-bank street, with a mobile-home
// park at its end.
func (g *generator) makeRiverRoads() {
	const segments = 6
	for _, z := range g.zones {
		for s := int(z.x0 + 0.3*g.zw); s <= int(z.x0+0.75*g.zw) && s+segments-1 < g.nx; s++ {
			ok := g.exists[g.id(s, z.jr)] && g.exists[g.id(s, z.jr+1)]
			for c := s; c < s+segments && ok; c++ {
				ok = g.vKind[g.vIdx(c, z.jr)] == kNone
			}
			if !ok {
				continue
			}
			prev := g.id(s, z.jr)
			var last int32
			for c := s; c < s+segments; c++ {
				gp := g.addNode(g.pos[g.id(c, z.jr)].lerp(g.pos[g.id(c, z.jr+1)], 0.5))
				last = g.addEdge(edge{a: prev, b: gp, kind: kRiverRoad, fi: float32(c) - 0.5, fj: float32(z.jr) + 0.5})
				prev = gp
			}
			g.big = append(g.big, bigUser{edge: last, node: prev, use: "mobile_home_park", gpm: 80})
			break
		}
	}
}

// makeSupplies creates each district's tank and reservoir and the
// transmission main from each across open ground to the first street.
func (g *generator) makeSupplies() {
	for _, z := range g.zones {
		src := g.id(z.iTank, z.jB)
		ie := z.iTank + 1
		var via []vec
		for !g.exists[g.id(ie, z.jB)] {
			via = append(via, g.pos[g.id(ie, z.jB)])
			ie++
		}
		g.addEdge(edge{a: src, b: g.id(ie, z.jB), kind: kLinkTank, via: via,
			fi: float32(z.iTank+ie) / 2, fj: float32(z.jB)})
		g.sites = append(g.sites, site{node: src, zone: z.index, tank: true})

		src = g.id(z.iRes, z.jRes)
		ie = z.iRes - 1
		via = nil
		for !g.exists[g.id(ie, z.jRes)] {
			via = append(via, g.pos[g.id(ie, z.jRes)])
			ie--
		}
		g.addEdge(edge{a: src, b: g.id(ie, z.jRes), kind: kLinkRes, via: via,
			fi: float32(z.iRes+ie) / 2, fj: float32(z.jRes)})
		g.sites = append(g.sites, site{node: src, zone: z.index, tank: false})
	}
}

// placeBigUsers puts each district's other large accounts beside streets
// near where the plan wants them.
func (g *generator) placeBigUsers() {
	users := []struct {
		u, v float64
		use  string
		gpm  float64
	}{
		{0.64, 0.46, "hospital", 34},
		{0.70, 0.27, "creamery", 85},
		{0.30, 0.68, "school", 24},
		{0.52, 0.60, "laundry", 16},
	}
	for _, z := range g.zones {
		for _, us := range users {
			ti, tj := int(math.Round(z.x0+us.u*g.zw)), int(math.Round(z.y0+us.v*g.zh))
			if e := g.nearestStreet(ti, tj); e >= 0 {
				g.big = append(g.big, bigUser{edge: e, node: -1, use: us.use, gpm: us.gpm})
			}
		}
	}
}

// nearestStreet returns a street edge at or near lattice edge (i, j), or -1.
func (g *generator) nearestStreet(i, j int) int32 {
	for r := 0; r <= 3; r++ {
		for dj := -r; dj <= r; dj++ {
			for di := -r; di <= r; di++ {
				ii, jj := i+di, j+dj
				if ii < 0 || ii >= g.nx-1 || jj < 0 || jj >= g.ny {
					continue
				}
				if e := g.hEdge[g.hIdx(ii, jj)]; e >= 0 && g.edges[e].kind == kStreet {
					return e
				}
			}
		}
	}
	return -1
}
