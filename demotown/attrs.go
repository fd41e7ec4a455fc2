package demotown

import (
	"errors"
	"math"
	"math/rand/v2"
)

// Materials.
const (
	mCI  uint8 = iota // unlined cast iron
	mAC               // asbestos cement
	mDI               // ductile iron
	mPVC              // polyvinyl chloride
	mSTL              // welded steel
)

var materialCode = [...]string{mCI: "CI", mAC: "AC", mDI: "DI", mPVC: "PVC", mSTL: "STL"}

// Shares of the network given a measured C and a closed valve.
const (
	testedShare = 0.0075 // about 18 hydrant flow tests in the default town
	minTested   = 10
	closedShare = 0.002 // about 5 closed valves in the default town
	minClosed   = 3
)

// connect keeps only the mains reachable from a supply through shared
// nodes (the outline can cut off a corner of the lattice), and counts each
// node's mains.
func (g *generator) connect() error {
	reached := g.reach(func(int32) bool { return true })
	keep := make([]int32, len(g.edges))
	n := 0
	for k, e := range g.edges {
		keep[k] = -1
		if reached[e.a] {
			keep[k] = int32(n)
			g.edges[n] = e
			n++
		}
	}
	g.edges = g.edges[:n]
	big := g.big[:0]
	for _, b := range g.big {
		if keep[b.edge] >= 0 {
			b.edge = keep[b.edge]
			big = append(big, b)
		}
	}
	g.big = big
	if n == 0 {
		return errors.New("no main is connected to a supply")
	}
	return nil
}

// reach returns which nodes are reachable from a supply over the edges
// for which use returns true (breadth-first search, O(nodes + edges)).
func (g *generator) reach(use func(int32) bool) []bool {
	start, nbr := g.adjacency(use)
	seen := make([]bool, len(g.pos))
	queue := make([]int32, 0, 1024)
	for _, s := range g.sites {
		if !seen[s.node] {
			seen[s.node] = true
			queue = append(queue, s.node)
		}
	}
	for len(queue) > 0 {
		v := queue[0]
		queue = queue[1:]
		for _, w := range nbr[start[v]:start[v+1]] {
			if !seen[w] {
				seen[w] = true
				queue = append(queue, w)
			}
		}
	}
	return seen
}

// adjacency returns the node-to-neighbour lists of the edges use accepts,
// in compressed-row form.
func (g *generator) adjacency(use func(int32) bool) (start, nbr []int32) {
	start = make([]int32, len(g.pos)+1)
	for k, e := range g.edges {
		if use(int32(k)) {
			start[e.a+1]++
			start[e.b+1]++
		}
	}
	for v := range len(g.pos) {
		start[v+1] += start[v]
	}
	fill := make([]int32, len(g.pos))
	copy(fill, start[:len(g.pos)])
	nbr = make([]int32, start[len(g.pos)])
	for k, e := range g.edges {
		if use(int32(k)) {
			nbr[fill[e.a]] = e.b
			fill[e.a]++
			nbr[fill[e.b]] = e.a
			fill[e.b]++
		}
	}
	return start, nbr
}

// assign gives every main its material, diameter and year from its land-use
// band and kind, then picks the mains that were flow-tested.
func (g *generator) assign() {
	rng := rand.New(rand.NewPCG(g.seed, 0x4d41494e53)) // "MAINS"
	for k := range g.edges {
		g.assignOne(&g.edges[k], rng)
	}
	count := max(minTested, int(math.Round(float64(len(g.edges))*testedShare)))
	count = min(count, len(g.edges))
	for picked := 0; picked < count; {
		e := &g.edges[rng.IntN(len(g.edges))]
		if e.cTest != 0 {
			continue
		}
		e.cTest = measuredC(e, rng)
		picked++
	}
}

// bandYear returns a year laid that grows with the distance r from
// downtown across the band's decades, with a little scatter.
func bandYear(rng *rand.Rand, r, r0, r1 float64, y0, y1 int) int16 {
	t := min(1, max(0, (r-r0)/(r1-r0)))
	y := y0 + int(math.Round(t*float64(y1-y0))) + rng.IntN(5) - 2
	return int16(min(y1, max(y0, y)))
}

// pick returns sizes[k] for the first cumulative share above a uniform draw.
func pick(rng *rand.Rand, sizes []float64, shares []float64) float64 {
	x := rng.Float64()
	for k, s := range shares {
		if x < s {
			return sizes[k]
		}
		x -= s
	}
	return sizes[len(sizes)-1]
}

// eraMain sets the material, year and diameter a distribution main of the
// given band would have: the old core 1900–1939 unlined cast iron of 4–8 in,
// then 1950–77 asbestos cement of 6–8 in, 1980–2006 ductile iron of 8–12 in,
// and 2000–25 PVC of 6–8 in.
func eraMain(e *edge, band int, r float64, rng *rand.Rand) {
	switch band {
	case 0:
		e.mat, e.year = mCI, bandYear(rng, r, 0, 0.16, 1900, 1939)
		e.diam = pick(rng, []float64{4, 6, 8}, []float64{0.25, 0.65, 0.10})
	case 1:
		e.mat, e.year = mAC, bandYear(rng, r, 0.16, 0.29, 1950, 1977)
		e.diam = pick(rng, []float64{6, 8}, []float64{0.55, 0.45})
	case 2:
		e.mat, e.year = mDI, bandYear(rng, r, 0.29, 0.41, 1980, 2006)
		e.diam = pick(rng, []float64{8, 10, 12}, []float64{0.75, 0.12, 0.13})
	default:
		e.mat, e.year = mPVC, bandYear(rng, r, 0.41, 0.6, 2000, 2025)
		e.diam = pick(rng, []float64{8, 6}, []float64{0.9, 0.1})
	}
}

func (g *generator) assignOne(e *edge, rng *rand.Rand) {
	band, r := g.band(float64(e.fi), float64(e.fj))
	switch e.kind {
	case kStreet:
		eraMain(e, band, r, rng)
	case kCul:
		eraMain(e, band, r, rng)
		e.diam = pick(rng, []float64{6, 8}, []float64{0.55, 0.45})
	case kCurve:
		eraMain(e, band, r, rng)
		e.diam = max(e.diam, 10)
	case kBridge:
		eraMain(e, band, r, rng)
		e.diam = max(e.diam, 10)
	case kLoop:
		e.mat, e.year, e.diam = mDI, int16(1976+rng.IntN(19)), loopInches
		if band == 3 {
			e.mat, e.year = mPVC, int16(2004+rng.IntN(17))
		}
		z := g.zoneAt(float64(e.fi), float64(e.fj))
		horizontal := e.fj == float32(math.Trunc(float64(e.fj)))
		if (horizontal && int(e.fj) == z.jB) || (!horizontal && int(e.fi) == z.iB) {
			e.diam = loopFeedInches
		}
	case kTransTank:
		e.mat, e.year, e.diam = mDI, 1984, tankMainInches
	case kLinkTank:
		e.mat, e.year, e.diam = mSTL, 1961, tankMainInches
	case kTransRes, kLinkRes:
		e.mat, e.year, e.diam = mDI, 1991, resMainInches
	case kSpur:
		e.mat, e.year, e.diam = mCI, int16(1905+rng.IntN(21)), 4
	case kRiverRoad:
		e.mat, e.year, e.diam = mCI, int16(1938+rng.IntN(11)), 6
	}
}

// measuredC invents the Hazen-Williams C a hydrant flow test would have
// found on e in the analysis year. Unlined iron and steel follow the
// roughness growth of Sharp & Walski (1988), DOMAIN.md §2.3:
//
//	C = 18.0 − 37.2·log10((e0 + a·t)/D),  e0 = 0.00085 ft,
//
// with a growth rate a scattered around 0.00025 ft/yr (Lamont's moderate
// attack, DOMAIN.md §2.4), t the age in years and D the diameter in feet,
// clamped to [40, 130]. Lined and plastic pipe lose a little per year from
// its new C (DOMAIN.md §2.1, §2.6). A test scatter of a few units is added.
func measuredC(e *edge, rng *rand.Rand) float64 {
	age := float64(analysisYear - int(e.year))
	var c float64
	switch e.mat {
	case mCI, mSTL:
		a := 0.00025 * math.Exp(0.4*rng.NormFloat64())
		c = 18.0 - 37.2*math.Log10((0.00085+a*age)/(e.diam/12))
		c = min(130, max(40, c)) + 3*rng.NormFloat64()
	case mAC:
		c = 140 - 0.2*age + 4*rng.NormFloat64()
	case mDI:
		c = 140 - 0.15*age + 4*rng.NormFloat64()
	default:
		c = 148 - 0.1*age + 2*rng.NormFloat64()
	}
	return math.Round(min(150, max(40, c)))
}

// placeValves closes a few valves on grid streets whose both ends are
// four-way junctions, reopening any whose closing would cut a node off.
func (g *generator) placeValves() error {
	rng := rand.New(rand.NewPCG(g.seed, 0x56414c5645)) // "VALVE"
	deg := make([]int32, len(g.pos))
	for _, e := range g.edges {
		deg[e.a]++
		deg[e.b]++
	}
	var cand []int32
	for k, e := range g.edges {
		if e.kind == kStreet && deg[e.a] == 4 && deg[e.b] == 4 {
			cand = append(cand, int32(k))
		}
	}
	count := min(len(cand), max(minClosed, int(math.Round(float64(len(g.edges))*closedShare))))
	for picked := 0; picked < count; {
		e := &g.edges[cand[rng.IntN(len(cand))]]
		if !e.closed {
			e.closed = true
			picked++
		}
	}
	for range 10 {
		seen := g.reach(func(k int32) bool { return !g.edges[k].closed })
		reopened := false
		for k := range g.edges {
			e := &g.edges[k]
			if e.closed && (!seen[e.a] || !seen[e.b]) {
				e.closed = false
				reopened = true
			}
		}
		if !reopened {
			return nil
		}
	}
	return errors.New("closed valves cut the network")
}
