package demotown

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"time"

	"github.com/paulmach/orb/geojson"
)

// The break record: every main break repaired from 2012 to 2025, as a
// utility's work-order system would export it.
const (
	breakFirstYear = 2012
	breakLastYear  = 2025
	breakMidYear   = 2018.5 // the year the rates of breakRates are given for
	breakOffsetFt  = 5.0    // largest distance of a recorded break from its main
	breakIDShare   = 0.70   // share of records that name the broken main
	feetPerMile    = 5280.0

	// Deliberate faults, the same number in every town.
	breakBadIDs  = 3     // records naming a main that does not exist, lying on a real one
	breakFar     = 2     // records placed far from every main, naming none
	breakFarFt   = 600.0 // smallest distance of those from every main
	breakNoDate  = 1     // records whose date is lost
	breakLostDay = "unknown"
)

// breakRate is a material's break rate N(t) = per100miYr·e^(growth·(t − 2018.5)),
// in breaks per 100 mi of main per year (the exponential growth of Shamir &
// Howard 1979, DOMAIN.md §7.2).
type breakRate struct{ per100miYr, growth float64 }

// breakRates are the priors of DOMAIN.md §7.3 (the Utah State University
// surveys of North American utilities): cast iron 24.4 per 100 mi/yr in
// the 2012 survey and about 34 in 2018, which is growth of
// ln(34/24.4)/6 ≈ 0.055/yr; Quillmere's cast iron runs 30 at mid-record
// growing at 0.05/yr (21.7 in 2012, 41.5 in 2025, about 30 over the
// record). Asbestos cement 7.1, ductile iron 4.9, PVC 2.6 and steel 19.8
// per 100 mi/yr (2012 survey) are taken as steady.
var breakRates = [...]breakRate{
	mCI:  {30, 0.05},
	mAC:  {7.1, 0},
	mDI:  {4.9, 0},
	mPVC: {2.6, 0},
	mSTL: {19.8, 0},
}

// ciDiameterFactor and ciVintageFactor spread cast iron's rate over its
// mains: small mains break more (beam breaks), and so do older castings
// (DOMAIN.md §7.1 lists diameter and vintage among the likelihood-of-failure
// inputs; the factors themselves are common practice, no source). Their
// product is normalised over the town's cast iron, so the rates of
// breakRates hold for it as a whole.
func ciDiameterFactor(inches float64) float64 {
	switch {
	case inches <= 4:
		return 1.8
	case inches <= 6:
		return 1
	case inches <= 8:
		return 0.6
	}
	return 0.4
}

// ciVintageFactor is e^(0.02·(1925 − year laid)): 1.65 for 1900, 0.62 for 1949.
func ciVintageFactor(year int16) float64 { return math.Exp(0.02 * (1925 - float64(year))) }

// monthWeights make winter breaks commoner (frost load and cold water on
// iron and cement; common practice, no source). Index 0 is January.
var monthWeights = [12]float64{1.8, 1.6, 1.1, 0.8, 0.7, 0.7, 0.8, 0.9, 0.8, 0.9, 1.1, 1.6}

// mainBreak is one record before it is written.
type mainBreak struct {
	at          vec
	edge        int32 // broken main, or −1 for a record placed off the network
	named       bool  // the record names its main
	pipeID      string
	year, month int // month 1–12
	day         int
	date        string // set when the record's date is lost
}

func (b *mainBreak) dateText() string {
	if b.date != "" {
		return b.date
	}
	return time.Date(b.year, time.Month(b.month), b.day, 0, 0, 0, 0, time.UTC).Format(time.DateOnly)
}

// breakLayer writes the break record. For every main, breaks are a Poisson
// process in time whose yearly mean is
//
//	μ(t) = N_m(t)/100 · L · f,  for t after the year laid,
//
// with N_m the material's rate (breakRates, per 100 mi/yr), L the main's
// length in miles and f its cast-iron factor (1 for other materials). The
// count over the record is Poisson with mean Σμ(t), each break's year is
// drawn in proportion to μ(t), its month by monthWeights, its place
// uniformly along the main and up to breakOffsetFt to either side. Records
// are numbered in date order. The faults are then added: breakFar records
// far off the network, breakBadIDs naming a main that does not exist,
// breakNoDate with the date "unknown". The layer draws from its own random
// stream, so the other layers do not depend on it.
func (g *generator) breakLayer() *geojson.FeatureCollection {
	rng := rand.New(rand.NewPCG(g.seed, 0x425245414b53)) // "BREAKS"
	factor := g.ciFactors()
	var bs []mainBreak
	for k := range g.edges {
		bs = g.mainBreaks(bs, int32(k), factor[k], rng)
	}
	bs = append(bs, g.farBreaks(rng)...)
	slices.SortStableFunc(bs, func(a, b mainBreak) int {
		return cmp.Or(cmp.Compare(a.year, b.year), cmp.Compare(a.month, b.month), cmp.Compare(a.day, b.day))
	})
	spoilBreaks(bs, len(g.edges), rng)
	f := g.frame()
	fc := &geojson.FeatureCollection{Type: "FeatureCollection", Features: make([]*geojson.Feature, len(bs))}
	for k := range bs {
		b := &bs[k]
		fc.Features[k] = &geojson.Feature{Type: "Feature", Geometry: f.point(b.at), Properties: geojson.Properties{
			BreakID:     code("QB-", k+1, 5),
			BreakDate:   b.dateText(),
			BreakPipeID: b.pipeID,
		}}
	}
	return fc
}

// ciFactors returns each edge's rate factor: for cast iron the product of
// ciDiameterFactor and ciVintageFactor divided by its length-weighted mean
// over the town's cast iron, and 1 for every other material.
func (g *generator) ciFactors() []float64 {
	out := make([]float64, len(g.edges))
	var sum, length float64
	for k := range g.edges {
		e := &g.edges[k]
		out[k] = 1
		if e.mat == mCI {
			out[k] = ciDiameterFactor(e.diam) * ciVintageFactor(e.year)
			l := polylineFt(g.edgePoints(e))
			sum += out[k] * l
			length += l
		}
	}
	if length == 0 {
		return out
	}
	for k := range g.edges {
		if g.edges[k].mat == mCI {
			out[k] *= length / sum
		}
	}
	return out
}

// edgePoints returns e's vertices in the town frame, feet: a, via, b.
func (g *generator) edgePoints(e *edge) []vec {
	pts := make([]vec, 0, 2+len(e.via))
	pts = append(pts, g.pos[e.a])
	pts = append(pts, e.via...)
	return append(pts, g.pos[e.b])
}

// polylineFt is the length of pts in feet.
func polylineFt(pts []vec) float64 {
	var s float64
	for k := 1; k < len(pts); k++ {
		s += pts[k].sub(pts[k-1]).norm()
	}
	return s
}

// along returns the point at distance s (feet) along pts and the unit
// direction of the leg it lies on.
func along(pts []vec, s float64) (vec, vec) {
	for k := 1; k < len(pts); k++ {
		d := pts[k].sub(pts[k-1])
		l := d.norm()
		if s <= l || k == len(pts)-1 {
			return pts[k-1].add(d.scale(min(s, l) / l)), d.scale(1 / l)
		}
		s -= l
	}
	return pts[0], vec{1, 0}
}

// mainBreaks appends the breaks of edge k over the record.
func (g *generator) mainBreaks(bs []mainBreak, k int32, factor float64, rng *rand.Rand) []mainBreak {
	e := &g.edges[k]
	pts := g.edgePoints(e)
	length := polylineFt(pts)
	rate := breakRates[e.mat]
	var mean [breakLastYear - breakFirstYear + 1]float64
	var total float64
	for y := max(breakFirstYear, int(e.year)+1); y <= breakLastYear; y++ {
		n := rate.per100miYr * math.Exp(rate.growth*(float64(y)-breakMidYear))
		mean[y-breakFirstYear] = n / 100 * length / feetPerMile * factor
		total += mean[y-breakFirstYear]
	}
	for range poisson(rng, total) {
		year := breakFirstYear + weighted(rng, mean[:])
		month := 1 + weighted(rng, monthWeights[:])
		days := time.Date(year, time.Month(month)+1, 0, 0, 0, 0, 0, time.UTC).Day()
		at, dir := along(pts, rng.Float64()*length)
		off := (2*rng.Float64() - 1) * breakOffsetFt
		b := mainBreak{at: at.add(vec{-dir.y, dir.x}.scale(off)), edge: k, year: year, month: month, day: 1 + rng.IntN(days)}
		if rng.Float64() < breakIDShare {
			b.named, b.pipeID = true, pipeCode(int(k))
		}
		bs = append(bs, b)
	}
	return bs
}

// pipeCode is the PipeID of edge k, as pipeLayer writes it.
func pipeCode(k int) string { return code("QM-", k+1, 5) }

// poisson draws from the Poisson distribution of the given mean by Knuth's
// product of uniforms (O(mean) draws; the per-main means here are below 5).
func poisson(rng *rand.Rand, mean float64) int {
	limit, n := math.Exp(-mean), 0
	for p := rng.Float64(); p > limit; p *= rng.Float64() {
		n++
	}
	return n
}

// weighted returns index k with probability w[k]/Σw.
func weighted(rng *rand.Rand, w []float64) int {
	var total float64
	for _, v := range w {
		total += v
	}
	x := rng.Float64() * total
	for k, v := range w {
		if x < v {
			return k
		}
		x -= v
	}
	return len(w) - 1
}

// farBreaks returns breakFar records placed off the network, as a work
// order geocoded to the wrong place would be: out in the fields beyond a
// corner of the town, at least breakFarFt from every main (checked against
// every main, O(mains) per record), dated within the record and naming no
// main.
func (g *generator) farBreaks(rng *rand.Rand) []mainBreak {
	corners := []vec{g.pos[g.id(0, 0)], g.pos[g.id(g.nx-1, 0)], g.pos[g.id(0, g.ny-1)], g.pos[g.id(g.nx-1, g.ny-1)]}
	centre := g.pos[g.id(0, 0)].lerp(g.pos[g.id(g.nx-1, g.ny-1)], 0.5)
	out := make([]mainBreak, 0, breakFar)
	for _, c := range rng.Perm(len(corners))[:breakFar] {
		outward := corners[c].sub(centre)
		outward = outward.scale(1 / outward.norm())
		at := corners[c]
		for step := 0; g.nearestMainFt(at) < breakFarFt && step < 100; step++ {
			at = at.add(outward.scale(breakFarFt))
		}
		year := breakFirstYear + rng.IntN(breakLastYear-breakFirstYear+1)
		month := 1 + weighted(rng, monthWeights[:])
		out = append(out, mainBreak{at: at, edge: -1, year: year, month: month, day: 1 + rng.IntN(28)})
	}
	return out
}

// nearestMainFt is the distance in feet from p to the nearest main.
func (g *generator) nearestMainFt(p vec) float64 {
	best := math.Inf(1)
	for k := range g.edges {
		pts := g.edgePoints(&g.edges[k])
		for j := 1; j < len(pts); j++ {
			best = min(best, segmentDistFt(p, pts[j-1], pts[j]))
		}
	}
	return best
}

// segmentDistFt is the distance from p to segment a–b.
func segmentDistFt(p, a, b vec) float64 {
	d := b.sub(a)
	t := 0.0
	if l2 := d.x*d.x + d.y*d.y; l2 > 0 {
		t = min(1, max(0, ((p.x-a.x)*d.x+(p.y-a.y)*d.y)/l2))
	}
	return p.sub(a.add(d.scale(t))).norm()
}

// spoilBreaks adds the deliberate faults to records on the network: a
// breakBadIDs of those that name their main name one that does not exist
// instead (a number past the last main, a mistyped prefix, a letter O for
// a zero), and breakNoDate others lose their date. Fewer are spoiled when
// a tiny town has fewer records.
func spoilBreaks(bs []mainBreak, mains int, rng *rand.Rand) {
	var named, other []int
	for k := range bs {
		switch {
		case bs[k].named:
			named = append(named, k)
		case bs[k].edge >= 0:
			other = append(other, k)
		}
	}
	bad := pickSome(rng, named, breakBadIDs)
	for n, k := range bad {
		bs[k].pipeID = missingPipeID(bs[k].pipeID, n, mains, rng)
	}
	rest := slices.DeleteFunc(append(other, named...), func(k int) bool { return slices.Contains(bad, k) })
	slices.Sort(rest)
	for _, k := range pickSome(rng, rest, breakNoDate) {
		bs[k].date = breakLostDay
	}
}

// pickSome returns n distinct members of from (fewer if it is shorter).
func pickSome(rng *rand.Rand, from []int, n int) []int {
	n = min(n, len(from))
	idx := rng.Perm(len(from))[:n]
	out := make([]int, n)
	for k, i := range idx {
		out[k] = from[i]
	}
	return out
}

// missingPipeID turns the real PipeID id into one that names no main, in
// the n-th of three ways.
func missingPipeID(id string, n, mains int, rng *rand.Rand) string {
	digits := strings.TrimPrefix(id, "QM-")
	switch n % 3 {
	case 1:
		return "QN-" + digits
	case 2:
		if strings.HasPrefix(digits, "0") {
			return "QM-O" + digits[1:]
		}
	}
	return code("QM-", mains+1+rng.IntN(900), 5)
}
