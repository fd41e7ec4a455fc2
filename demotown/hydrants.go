package demotown

import (
	"math"
	"math/rand/v2"

	"github.com/paulmach/orb/geojson"
)

// Hydrant placement. Hydrants stand at pipe end vertices (street corners,
// mid-block tees, dead ends) on mains of 6 in and larger, and on some of the
// old 4-in mains of the core, chosen greedily so that no two are closer than
// hydrantSpacingFt: every candidate corner then lies within that distance of
// a hydrant, which puts one every 400–500 ft along the streets (a usual
// spacing in residential areas; common practice, no source). A share of
// them sit a few feet off the vertex, on their lateral.
const (
	hydrantSpacingFt = 340.0
	hydrantLateralFt = 4.0  // largest offset from the vertex
	hydrantOffShare  = 0.5  // share of hydrants set off the vertex
	hydrant4inShare  = 0.45 // share of 4-in core street mains that carry hydrants
	hydrantNearFt    = 600.0
)

// Needed fire flows, gpm (invented for Quillmere, in line with the
// International Fire Code appendix: 1,000 gpm for one- and two-family
// dwellings up to 3,600 ft², and 1,500–8,000 gpm for other buildings by
// construction type and area; DOMAIN.md §4.1). Values are multiples of
// 250 gpm, as the ISO method rounds (DOMAIN.md §4.2).
const (
	neededResidentialGPM = 1000.0
	neededCoreGPM        = 2000.0 // the downtown business blocks
	neededInnerCoreGPM   = 2500.0 // the oldest, densest blocks
	innerCoreRadius      = 0.08   // district fraction from downtown's centre
)

// neededNearGPM is the needed fire flow of hydrants within hydrantNearFt of
// a large user, by its use class.
var neededNearGPM = map[string]float64{
	"hospital":         2500,
	"creamery":         2500,
	"school":           2000,
	"laundry":          1500,
	"apartments":       1500,
	"mobile_home_park": 1000,
}

// hydrant is a chosen hydrant: the node it stands at and its needed flow.
type hydrant struct {
	node   int32
	edge   int32 // an eligible main at the node, for its district and band
	offset vec
	gpm    float64
}

// hydrantLayer places the hydrants. It draws from its own random stream, so
// the other layers do not depend on it.
func (g *generator) hydrantLayer() *geojson.FeatureCollection {
	rng := rand.New(rand.NewPCG(g.seed, 0x4859445241)) // "HYDRA"
	hs := g.placeHydrants(rng)
	g.neededFlows(hs)
	f := g.frame()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, len(hs))}
	for k, h := range hs {
		e := &g.edges[h.edge]
		fc.Features[k] = &geojson.Feature{Type: "Feature", Geometry: f.point(g.pos[h.node].add(h.offset)),
			Properties: geojson.Properties{
				HydrantID:     code("QH-", k+1, 5),
				HydrantNeeded: h.gpm,
				HydrantZone:   g.zoneName(g.zoneAt(float64(e.fi), float64(e.fj)).index),
			}}
	}
	return fc
}

// hydrantMain reports whether a hydrant may stand on e: a main in a street
// (not a transmission main across open ground, nor the river crossing) of
// 6 in or more, or a 4-in spur, or, with probability hydrant4inShare, a
// 4-in street main.
func hydrantMain(e *edge, rng *rand.Rand) bool {
	draw := rng.Float64() // one draw per edge, so the stream does not depend on the kinds
	switch e.kind {
	case kLinkTank, kLinkRes, kBridge, kNone:
		return false
	case kSpur:
		return true
	}
	return e.diam >= 6 || draw < hydrant4inShare
}

// placeHydrants chooses hydrant nodes: dead ends first, then the other
// candidate nodes, each in node order, kept if no hydrant already chosen
// lies within hydrantSpacingFt. A grid of cells hydrantSpacingFt wide finds
// the neighbours, so the cost is linear in the number of nodes.
func (g *generator) placeHydrants(rng *rand.Rand) []hydrant {
	deg := make([]int32, len(g.pos))
	on := make([]int32, len(g.pos)) // eligible edge + 1 at each node
	for k := range g.edges {
		e := &g.edges[k]
		deg[e.a]++
		deg[e.b]++
		if hydrantMain(e, rng) {
			for _, n := range [2]int32{e.a, e.b} {
				if on[n] == 0 {
					on[n] = int32(k) + 1
				}
			}
		}
	}
	for _, s := range g.sites {
		on[s.node] = 0
	}
	grid := map[[2]int32][]int32{}
	cell := func(p vec) [2]int32 {
		return [2]int32{int32(math.Floor(p.x / hydrantSpacingFt)), int32(math.Floor(p.y / hydrantSpacingFt))}
	}
	free := func(p vec) bool {
		c := cell(p)
		for dy := int32(-1); dy <= 1; dy++ {
			for dx := int32(-1); dx <= 1; dx++ {
				for _, n := range grid[[2]int32{c[0] + dx, c[1] + dy}] {
					if g.pos[n].sub(p).norm() < hydrantSpacingFt {
						return false
					}
				}
			}
		}
		return true
	}
	var hs []hydrant
	for pass := range 2 {
		for n := range g.pos {
			if on[n] == 0 || (pass == 0) != (deg[n] == 1) || !free(g.pos[n]) {
				continue
			}
			c := cell(g.pos[n])
			grid[c] = append(grid[c], int32(n))
			hs = append(hs, hydrant{node: int32(n), edge: on[n] - 1})
		}
	}
	for k := range hs {
		if rng.Float64() < hydrantOffShare {
			r, th := hydrantLateralFt*(0.25+0.75*rng.Float64()), 2*math.Pi*rng.Float64()
			hs[k].offset = vec{r * math.Cos(th), r * math.Sin(th)}
		}
	}
	return hs
}

// neededFlows sets each hydrant's needed fire flow: the residential value,
// raised in the downtown core and near large users (the largest applies).
func (g *generator) neededFlows(hs []hydrant) {
	for k := range hs {
		e := &g.edges[hs[k].edge]
		band, r := g.band(float64(e.fi), float64(e.fj))
		hs[k].gpm = neededResidentialGPM
		if band == 0 {
			hs[k].gpm = neededCoreGPM
			if r < innerCoreRadius {
				hs[k].gpm = neededInnerCoreGPM
			}
		}
	}
	// large users: raise the hydrants near each (a grid on the hydrants)
	grid := map[[2]int32][]int32{}
	cell := func(p vec) [2]int32 {
		return [2]int32{int32(math.Floor(p.x / hydrantNearFt)), int32(math.Floor(p.y / hydrantNearFt))}
	}
	for k, h := range hs {
		c := cell(g.pos[h.node])
		grid[c] = append(grid[c], int32(k))
	}
	for _, b := range g.big {
		q := neededNearGPM[b.use]
		e := &g.edges[b.edge]
		at := g.pos[e.a].lerp(g.pos[e.b], 0.5)
		if b.node >= 0 {
			at = g.pos[b.node]
		}
		c := cell(at)
		for dy := int32(-1); dy <= 1; dy++ {
			for dx := int32(-1); dx <= 1; dx++ {
				for _, k := range grid[[2]int32{c[0] + dx, c[1] + dy}] {
					if g.pos[hs[k].node].sub(at).norm() <= hydrantNearFt {
						hs[k].gpm = max(hs[k].gpm, q)
					}
				}
			}
		}
	}
}
