package demotown

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/paulmach/orb/geojson"
)

// Critical facilities: the customers a consequence-of-failure score weighs
// most (hospitals, dialysis, schools, fire-flow-critical sites; DOMAIN.md
// §7.1). Each district has the same set. Where the demand layer already
// holds the facility as a large account (the hospital, the two schools on
// the plan, the creamery), the facility stands at that account's service
// point; the others stand beside the grid street (the fire station: the
// arterial loop) nearest their planned site, facilitySetbackFt from it.
type facilitySpec struct {
	kind   string
	name   string  // %s is the district's name, %d the station's number
	use    string  // DemandUse of the large account it is, or "" for a new site
	nth    int     // which account of that use in its district, 0-based
	u, v   float64 // planned site, fractions of the district (used if the account is missing)
	onLoop bool    // beside the arterial loop rather than a grid street
}

var facilitySpecs = []facilitySpec{
	{kind: FacilityHospital, name: "%s General Hospital", use: "hospital", u: 0.64, v: 0.46},
	{kind: FacilityDialysis, name: "%s Kidney Care Center", u: 0.58, v: 0.40},
	{kind: FacilitySchool, name: "%s Elementary School", use: "school", u: 0.56, v: 0.64},
	{kind: FacilitySchool, name: "%s Middle School", use: "school", nth: 1, u: 0.30, v: 0.68},
	{kind: FacilitySchool, name: "%s High School", u: 0.38, v: 0.36},
	{kind: FacilityCareHome, name: "%s Manor Care Home", u: 0.47, v: 0.74},
	{kind: FacilityFireStation, name: "Fire Station No. %d", u: 0.5, v: 0.2, onLoop: true},
	{kind: FacilityFactory, name: "%s Creamery", use: "creamery", u: 0.70, v: 0.27},
}

// Setback of a new facility's point from the street main, feet (a
// building's service connection; the whole facility lies within about
// 150 ft of a main).
const (
	facilitySetbackMinFt = 50.0
	facilitySetbackMaxFt = 110.0
	facilityCellFt       = 1000.0 // cell of the index that finds the nearest street
)

// facilityLayer places every district's facilities. It draws from its own
// random stream, so the other layers do not depend on it.
func (g *generator) facilityLayer() *geojson.FeatureCollection {
	rng := rand.New(rand.NewPCG(g.seed, 0x464143494c)) // "FACIL"
	accounts := g.accountsByZone()
	streets := g.streetIndex()
	f := g.frame()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, 0, len(g.zones)*len(facilitySpecs))}
	stations := 0
	for _, z := range g.zones {
		for _, sp := range facilitySpecs {
			at, ok := vec{}, false
			if sp.use != "" {
				if list := accounts[accountKey{z.index, sp.use}]; sp.nth < len(list) {
					at, ok = g.accountSite(list[sp.nth]), true
				}
			}
			if !ok {
				at, ok = g.besideStreet(streets, g.latticeXY(z.x0+sp.u*g.zw, z.y0+sp.v*g.zh), sp.onLoop, rng)
			}
			if !ok {
				continue // a town with no street near the site (not met in any size built)
			}
			name := fmt.Sprintf(sp.name, districtName(z.index))
			if sp.kind == FacilityFireStation {
				stations++
				name = fmt.Sprintf(sp.name, stations)
			}
			fc.Features = append(fc.Features, &geojson.Feature{Type: "Feature", Geometry: f.point(at),
				Properties: geojson.Properties{
					FacilityID:   code("QF-", len(fc.Features)+1, 2),
					FacilityName: name,
					FacilityKind: sp.kind,
				}})
		}
	}
	return fc
}

// districtName names district k for its facilities: the town's name for
// the first, then the street bases in order, with the street names'
// prefixes and round numbers once those run out.
func districtName(k int) string {
	if k == 0 {
		return townName
	}
	k--
	name := streetBases[k%len(streetBases)]
	if round := k / len(streetBases); round > 0 {
		name = streetPrefixes[(round-1)%len(streetPrefixes)] + " " + name
		if again := (round - 1) / len(streetPrefixes); again > 0 {
			name += fmt.Sprint(" ", again+1)
		}
	}
	return name
}

type accountKey struct {
	zone int
	use  string
}

// accountsByZone lists the large accounts of each district and use, in the
// order the demand layer writes them.
func (g *generator) accountsByZone() map[accountKey][]bigUser {
	out := map[accountKey][]bigUser{}
	for _, b := range g.big {
		e := &g.edges[b.edge]
		k := accountKey{g.zoneAt(float64(e.fi), float64(e.fj)).index, b.use}
		out[k] = append(out[k], b)
	}
	return out
}

// accountSite is where demandLayer puts a large account's service point:
// 30 ft past the end node of its main, or 70 ft beside the middle of it.
func (g *generator) accountSite(b bigUser) vec {
	e := &g.edges[b.edge]
	pa, pb := g.pos[e.a], g.pos[e.b]
	d := pb.sub(pa)
	d = d.scale(1 / d.norm())
	if b.node >= 0 {
		return g.pos[b.node].add(d.scale(30))
	}
	return pa.lerp(pb, 0.5).add(vec{-d.y, d.x}.scale(70))
}

// streetIndex buckets the straight street mains (grid streets and the
// arterial loop) by the facilityCellFt cell of their middle.
func (g *generator) streetIndex() map[[2]int32][]int32 {
	idx := map[[2]int32][]int32{}
	for k := range g.edges {
		e := &g.edges[k]
		if e.kind == kStreet || e.kind == kLoop {
			c := facilityCell(g.pos[e.a].lerp(g.pos[e.b], 0.5))
			idx[c] = append(idx[c], int32(k))
		}
	}
	return idx
}

func facilityCell(p vec) [2]int32 {
	return [2]int32{int32(math.Floor(p.x / facilityCellFt)), int32(math.Floor(p.y / facilityCellFt))}
}

// besideStreet returns a point set back from the middle part of the street
// main (the loop if onLoop) whose middle lies nearest p, searching rings of
// cells outward until one ring beyond the first find.
func (g *generator) besideStreet(idx map[[2]int32][]int32, p vec, onLoop bool, rng *rand.Rand) (vec, bool) {
	c := facilityCell(p)
	best, bestD := int32(-1), math.Inf(1)
	for r := int32(0); r <= 20; r++ {
		for dy := -r; dy <= r; dy++ {
			for dx := -r; dx <= r; dx++ {
				if max(abs32(dx), abs32(dy)) != r {
					continue
				}
				for _, k := range idx[[2]int32{c[0] + dx, c[1] + dy}] {
					e := &g.edges[k]
					if (e.kind == kLoop) != onLoop {
						continue
					}
					if d := g.pos[e.a].lerp(g.pos[e.b], 0.5).sub(p).norm(); d < bestD {
						best, bestD = k, d
					}
				}
			}
		}
		if best >= 0 && bestD < float64(r)*facilityCellFt {
			break
		}
	}
	if best < 0 {
		return vec{}, false
	}
	e := &g.edges[best]
	pa, pb := g.pos[e.a], g.pos[e.b]
	d := pb.sub(pa)
	d = d.scale(1 / d.norm())
	side := 1.0
	if rng.IntN(2) == 0 {
		side = -1
	}
	setback := facilitySetbackMinFt + (facilitySetbackMaxFt-facilitySetbackMinFt)*rng.Float64()
	return pa.lerp(pb, 0.3+0.4*rng.Float64()).add(vec{-d.y, d.x}.scale(side * setback)), true
}

func abs32(v int32) int32 {
	if v < 0 {
		return -v
	}
	return v
}
