package demotown

import (
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
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

// Street names. Each pipe lies under one named street: a grid street keeps
// its name along the whole lattice line it runs on (across bridges, the
// arterial loop and the open ground to a supply site), a curving collector
// keeps one name along its arc, each cul-de-sac and each spur lane has its
// own, and the road down the river corridor carries on the name of the grid
// street it leaves. Names are invented: a base word and a suffix of the
// street's kind, shuffled by a random stream of their own so that the other
// layers are the same with or without them.
var streetBases = []string{
	"Tansy", "Ostler", "Bramble", "Larkspur", "Thimble", "Cobbler", "Wicket", "Fennel",
	"Tinder", "Sorrel", "Pewter", "Mallow", "Cinder", "Juniper", "Teasel", "Saddler",
	"Yarrow", "Bellwether", "Dovecote", "Marram", "Chandler", "Spindle", "Furrow", "Kestrel",
	"Lantern", "Millrace", "Rookery", "Tallow", "Sexton", "Wheelwright", "Haywain", "Lintel",
	"Peddler", "Sickle", "Thresher", "Cooper", "Loomis", "Gimlet", "Hearthstone", "Quoit",
}

// Kinds of street name, each with suffixes no other kind uses, so names of
// different kinds never collide.
const (
	poolGrid  uint8 = iota // grid streets
	poolCurve              // curving collectors
	poolCourt              // cul-de-sacs
	poolLane               // spur lanes into a block
	poolCount
)

var (
	streetSuffixes = [poolCount][]string{
		poolGrid:  {"Street", "Avenue", "Lane", "Row", "Road", "Way"},
		poolCurve: {"Crescent", "Parkway", "Bend"},
		poolCourt: {"Court", "Circle", "Place", "Close"},
		poolLane:  {"Walk", "Mews", "Yard"},
	}
	// streetPrefixes tell apart later rounds of the same base and suffix in
	// large towns; after them a round number is appended.
	streetPrefixes = []string{"North", "South", "East", "West", "Upper", "Lower", "Old", "New"}
)

// streetKey identifies one named street: its pool and two numbers whose
// meaning depends on the pool (grid: 0 row or 1 column, and its index;
// curve: district and arc; court: edge; lane: the spur's lattice
// coordinates ×4).
type streetKey struct {
	pool uint8
	a, b int32
}

// streetNamer hands out names, injectively within each pool: the k-th
// street of a pool takes combination perm[k mod n] of base and suffix,
// prefixed from round 2 on, and numbered after the prefixes run out.
type streetNamer struct {
	perm [poolCount][]int
	used [poolCount]int
	seen map[streetKey]string
}

func newStreetNamer(seed uint64) *streetNamer {
	rng := rand.New(rand.NewPCG(seed, 0x535452454554)) // "STREET"
	s := &streetNamer{seen: map[streetKey]string{}}
	for p := range poolCount {
		s.perm[p] = rng.Perm(len(streetBases) * len(streetSuffixes[p]))
	}
	return s
}

// name returns the street of key, naming it on first use.
func (s *streetNamer) name(key streetKey) string {
	if n, ok := s.seen[key]; ok {
		return n
	}
	k := s.used[key.pool]
	s.used[key.pool]++
	n := streetName(key.pool, s.perm[key.pool], k)
	s.seen[key] = n
	return n
}

// streetName is the k-th (0-based) name of pool p under permutation perm.
func streetName(p uint8, perm []int, k int) string {
	suffixes := streetSuffixes[p]
	c := perm[k%len(perm)]
	name := streetBases[c/len(suffixes)] + " " + suffixes[c%len(suffixes)]
	round := k / len(perm)
	if round == 0 {
		return name
	}
	name = streetPrefixes[(round-1)%len(streetPrefixes)] + " " + name
	if again := (round - 1) / len(streetPrefixes); again > 0 {
		name += " " + strconv.Itoa(again+1)
	}
	return name
}

// streets returns the street name of every edge, in edge order.
func (g *generator) streets() []string {
	namer := newStreetNamer(g.seed)
	out := make([]string, len(g.edges))
	riverColumn := map[int32]int32{} // river-road node → grid column it continues
	for k := range g.edges {
		e := &g.edges[k]
		var key streetKey
		switch e.kind {
		case kCurve:
			key = g.curveStreet(e)
		case kCul:
			key = streetKey{pool: poolCourt, a: int32(k)}
		case kSpur:
			key = streetKey{pool: poolLane, a: int32(math.Round(4 * float64(e.fi))), b: int32(math.Round(4 * float64(e.fj)))}
		case kRiverRoad:
			col, ok := riverColumn[e.a]
			if !ok {
				col = e.a % int32(g.nx) // the first segment leaves the south-bank street at a lattice node
			}
			riverColumn[e.b] = col
			key = streetKey{pool: poolGrid, a: 1, b: col}
		default:
			key = gridStreet(e)
		}
		out[k] = namer.name(key)
	}
	return out
}

// gridStreet is the lattice line of a grid edge: a row where the edge's
// middle has a whole-number row coordinate, else a column.
func gridStreet(e *edge) streetKey {
	if e.fj == float32(math.Trunc(float64(e.fj))) {
		return streetKey{pool: poolGrid, a: 0, b: int32(e.fj)}
	}
	return streetKey{pool: poolGrid, a: 1, b: int32(math.Round(float64(e.fi)))}
}

// curveStreet is the curving road a block-crossing main belongs to: its
// district and which of the district's two arcs (north-east of downtown,
// below 90°, or north-west) it lies on.
func (g *generator) curveStreet(e *edge) streetKey {
	z := g.zoneAt(float64(e.fi), float64(e.fj))
	arc := int32(0)
	if float64(e.fi) < z.x0+0.5*g.zw { // downtown's column
		arc = 1
	}
	return streetKey{pool: poolCurve, a: int32(z.index), b: arc}
}

// surfaces returns every edge's road class (a PipeSurface value) from the
// kind of street it lies under, which also sets its size: the arterial
// loop (12–16 in) and the transmission mains in streets (18–20 in) lie
// under arterials, and the grid streets that carry the loop are collectors
// beyond it; the curving roads and the bridges (10 in and up) are
// collectors; the links across open ground to the supply sites and the
// river-corridor road are unpaved; every other street is local. (Common
// practice for a plains town's road hierarchy, no source.)
func (g *generator) surfaces() []string {
	rows, cols := map[int]bool{}, map[int]bool{}
	for _, z := range g.zones {
		rows[z.jA], rows[z.jB], cols[z.iA], cols[z.iB] = true, true, true, true
	}
	out := make([]string, len(g.edges))
	for k := range g.edges {
		e := &g.edges[k]
		switch e.kind {
		case kLoop, kTransTank, kTransRes:
			out[k] = SurfaceArterial
		case kCurve, kBridge:
			out[k] = SurfaceCollector
		case kLinkTank, kLinkRes, kRiverRoad:
			out[k] = SurfaceUnpaved
		case kStreet:
			out[k] = SurfaceLocal
			if s := gridStreet(e); (s.a == 0 && rows[int(s.b)]) || (s.a == 1 && cols[int(s.b)]) {
				out[k] = SurfaceCollector
			}
		default:
			out[k] = SurfaceLocal
		}
	}
	return out
}
