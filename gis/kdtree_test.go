package gis

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"
	"github.com/tidwall/rtree"

	"headroom/demotown"
	"headroom/hydraulics"
)

// The reference searches below are the R-tree code that the k-d tree
// replaced on the joining stage's hot paths (commit 1c44cf6, gis/join.go),
// kept word for word apart from their names. What they effectively do:
//
//   - refAllocateDemands takes, for each demand, the first node that is not
//     fixed in the order of Topology.nearest: ascending squared planar
//     distance as rtree.BoxDist computes it, ties in ascending node index
//     (nearest sorts each run of equal distances). That is the order
//     (d², index), which the k-d tree answers in.
//   - refInterpolateElevations takes the first k points that
//     rtree.Nearby yields, in ascending squared planar distance, summing
//     them in that order. Among points at exactly equal distance Nearby's
//     order is that of its binary heap, which depends on the tree's shape
//     and no rule; the k-d tree puts them in ascending point index. The
//     two agree wherever no two of a node's candidates tie, which the
//     demo-town tests check holds for every node there, and the results
//     are then equal to the bit.

// refAllocateDemands is AllocateDemands as it was, on the node R-tree.
func refAllocateDemands(t *Topology, demands []Point, fixed []bool, warnDistance hydraulics.Length) ([]hydraulics.Flow, []Problem) {
	q := make([]hydraulics.Flow, len(t.Nodes))
	var probs []Problem
	isFixed := func(k int) bool { return k < len(fixed) && fixed[k] }
	t.ensureIndex()
	node := make([]int, len(demands))
	forChunks(len(demands), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			node[i] = -1
			if !demands[i].Usable {
				continue
			}
			t.nearest(demands[i].At, func(n int) bool {
				if isFixed(n) {
					return true
				}
				node[i] = n
				return false
			})
		}
	})
	for i, p := range demands {
		if !p.Usable {
			continue
		}
		k := node[i]
		if k < 0 {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: "there is no junction node to take the demand", Action: "demand left out; check the pipe layer"})
			continue
		}
		q[k] += hydraulics.Flow(p.Value)
		if d := hydraulics.Length(segmentMetres(p.At, t.Nodes[k].At)); warnDistance > 0 && d > warnDistance {
			probs = append(probs, Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: "geometry",
				What: fmt.Sprintf("demand point is %s from its nearest node %s, beyond %s",
					formatDistance(d), t.Nodes[k].ID, formatDistance(warnDistance)),
				Action: "demand allocated to that node anyway; check the point's position or the pipe layer there"})
		}
	}
	return q, probs
}

// refElevationTree is the R-tree of usable elevation points that
// InterpolateElevations built.
func refElevationTree(t *Topology, points []Point) (*rtree.RTreeG[int], int) {
	t.ensureIndex()
	tr := &rtree.RTreeG[int]{}
	n := 0
	for i, p := range points {
		if p.Usable {
			xy := t.proj.xy(p.At)
			tr.Insert(xy, xy, i)
			n++
		}
	}
	return tr, n
}

// refInterpolateElevations is InterpolateElevations as it was, on an
// R-tree of the points.
func refInterpolateElevations(t *Topology, points []Point, k int, power float64) ([]hydraulics.Length, error) {
	if k <= 0 {
		k = DefaultIDWNeighbours
	}
	if power <= 0 || math.IsNaN(power) {
		power = DefaultIDWPower
	}
	tr, n := refElevationTree(t, points)
	if n == 0 {
		return nil, errors.New("gis: no usable elevation point to interpolate node elevations from")
	}
	z := make([]hydraulics.Length, len(t.Nodes))
	forChunks(len(t.Nodes), func(lo, hi int) {
		for j := lo; j < hi; j++ {
			z[j] = refIDWAt(tr, t.Nodes[j].At, t.proj.xy(t.Nodes[j].At), points, k, power)
		}
	})
	return z, nil
}

// refIDWAt is idwAt as it was.
func refIDWAt(tr *rtree.RTreeG[int], at orb.Point, xy [2]float64, points []Point, k int, power float64) hydraulics.Length {
	var sw, swz, hitSum float64
	hits, seen := 0, 0
	tr.Nearby(rtree.BoxDist[float64, int](xy, xy, nil), func(_, _ [2]float64, i int, _ float64) bool {
		p := points[i]
		d := segmentMetres(at, p.At)
		if d <= exactHit {
			hitSum += p.Value
			hits++
		} else {
			w := math.Pow(d, -power)
			sw += w
			swz += w * p.Value
		}
		seen++
		return seen < k
	})
	if hits > 0 {
		return hydraulics.Length(hitSum / float64(hits))
	}
	return hydraulics.Length(swz / sw)
}

// refNeighbours returns the first k+1 hits rtree.Nearby yields at xy (one
// more than used, to see a tie at the k-th), with Nearby's own distances.
func refNeighbours(tr *rtree.RTreeG[int], xy [2]float64, k int) []kdHit {
	var out []kdHit
	tr.Nearby(rtree.BoxDist[float64, int](xy, xy, nil), func(_, _ [2]float64, i int, d float64) bool {
		out = append(out, kdHit{id: i, d2: d})
		return len(out) <= k
	})
	return out
}

// kdBrute is the definition the k-d tree answers to: every point's d² by
// kdDist2, sorted by (d², id), the first k.
func kdBrute(pts []kdPoint, q [2]float64, k int) []kdHit {
	all := make([]kdHit, len(pts))
	for i, p := range pts {
		all[i] = kdHit{id: p.id, d2: kdDist2(q, p.xy)}
	}
	slices.SortFunc(all, func(a, b kdHit) int {
		if c := cmp.Compare(a.d2, b.d2); c != 0 {
			return c
		}
		return cmp.Compare(a.id, b.id)
	})
	return all[:min(k, len(all))]
}

// kdCheckTree checks the layout invariant: in every inner node's range the
// points before the median lie at or below it along its axis and those
// after at or above.
func kdCheckTree(t *testing.T, tr *kdTree, lo, hi int) {
	t.Helper()
	if hi-lo <= kdLeaf {
		return
	}
	m := (lo + hi) / 2
	ax := tr.axis[m]
	v := tr.pts[m].xy[ax]
	for i := lo; i < hi; i++ {
		if c := tr.pts[i].xy[ax]; (i < m && c > v) || (i > m && c < v) {
			t.Fatalf("node [%d,%d) split %d on axis %d at %g: point %d at %g on the wrong side", lo, hi, m, ax, v, i, c)
		}
	}
	kdCheckTree(t, tr, lo, m)
	kdCheckTree(t, tr, m+1, hi)
}

// TestKDTreeMatchesBruteForce: on random point sets built to tie (integer
// coordinates, many duplicates, whole clusters on one spot), with a far
// outlier, and on the empty and one-point sets, every k-nearest answer is
// the brute-force one over all points: the same ids in the same order.
func TestKDTreeMatchesBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	grid := func(n, side int) []kdPoint { // integer lattice: distances tie often
		p := make([]kdPoint, n)
		for i := range p {
			p[i] = kdPoint{xy: [2]float64{float64(rng.IntN(side)), float64(rng.IntN(side))}, id: i}
		}
		return p
	}
	uniform := func(n int, size float64) []kdPoint {
		p := make([]kdPoint, n)
		for i := range p {
			p[i] = kdPoint{xy: [2]float64{size * rng.Float64(), size * rng.Float64()}, id: i}
		}
		return p
	}
	cases := []struct {
		name string
		pts  []kdPoint
		span float64 // queries fall in [-span, 2·span]²
	}{
		{"empty", nil, 10},
		{"one point", []kdPoint{{xy: [2]float64{5, 5}, id: 7}}, 10},
		{"two on one spot", []kdPoint{{xy: [2]float64{1, 1}, id: 4}, {xy: [2]float64{1, 1}, id: 2}}, 3},
		{"lattice 5×5, 2000 points", grid(2000, 5), 5},
		{"lattice 40×40, 3000 points", grid(3000, 40), 40},
		{"all on one spot", func() []kdPoint {
			p := make([]kdPoint, 500)
			for i := range p {
				p[i] = kdPoint{xy: [2]float64{3, -2}, id: 499 - i}
			}
			return p
		}(), 5},
		{"uniform with a far outlier", append(uniform(3000, 1000), kdPoint{xy: [2]float64{5e6, -3e6}, id: 3000}), 1000},
		{"sorted along a line", func() []kdPoint {
			p := make([]kdPoint, 1000)
			for i := range p {
				p[i] = kdPoint{xy: [2]float64{float64(i / 3), 0}, id: i}
			}
			return p
		}(), 400},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			orig := slices.Clone(tc.pts)
			tr := newKDTree(slices.Clone(tc.pts))
			kdCheckTree(t, tr, 0, len(tr.pts))
			queries := [][2]float64{{5e6, -3e6}, {-1e7, 1e7}}
			for _, p := range orig[:min(len(orig), 50)] {
				queries = append(queries, p.xy) // exactly on points
			}
			for range 300 {
				queries = append(queries, [2]float64{tc.span * (3*rng.Float64() - 1), tc.span * (3*rng.Float64() - 1)})
			}
			var hits []kdHit
			for _, q := range queries {
				for _, k := range []int{1, 2, 4, 7, 12} {
					hits = tr.nearest(q, k, hits)
					want := kdBrute(orig, q, k)
					if !slices.Equal(hits, want) {
						t.Fatalf("q %v k %d: got %v, want %v", q, k, hits, want)
					}
				}
			}
			if got := tr.nearest([2]float64{0, 0}, 0, nil); len(got) != 0 {
				t.Errorf("k 0: got %v", got)
			}
		})
	}
}

// TestKDDistanceIsRTrees: kdDist2 gives, to the bit, the distance that
// rtree.Nearby ranks points by (its BoxDist on degenerate boxes), on
// coordinates of the size the local projection gives.
func TestKDDistanceIsRTrees(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	tr := &rtree.RTreeG[int]{}
	pts := make([][2]float64, 2000)
	for i := range pts {
		pts[i] = [2]float64{4e4 * (rng.Float64() - 0.5), 4e4 * (rng.Float64() - 0.5)}
		tr.Insert(pts[i], pts[i], i)
	}
	for range 50 {
		q := [2]float64{4e4 * (rng.Float64() - 0.5), 4e4 * (rng.Float64() - 0.5)}
		tr.Nearby(rtree.BoxDist[float64, int](q, q, nil), func(_, _ [2]float64, i int, d float64) bool {
			if got := kdDist2(q, pts[i]); got != d {
				t.Fatalf("q %v point %v: kdDist2 %v, R-tree %v", q, pts[i], got, d)
			}
			return true
		})
	}
}

// TestJoinsMatchBruteForceWithTies: on a lattice of nodes with demand and
// elevation points on lattice positions too (so distances tie and points
// coincide), AllocateDemands puts each demand on the first junction in
// (d², index) order and InterpolateElevations gives, to the bit, the mean
// over the first k points in (d², index) order, summed in that order.
func TestJoinsMatchBruteForceWithTies(t *testing.T) {
	topo, _ := Snap(gridPipes(12), halfFoot) // 169 junctions 100 m apart
	topo.ensureIndex()
	rng := rand.New(rand.NewPCG(11, 2))
	pts := make([]Point, 1500)
	for i := range pts {
		pts[i] = testPoint(i+1, "", 50*float64(rng.IntN(26)), 50*float64(rng.IntN(26)), 1e-4*rng.Float64())
		pts[i].Usable = i%17 != 0
	}
	fixed := make([]bool, len(topo.Nodes))
	for k := range fixed {
		fixed[k] = k%5 == 0
	}
	var nodes, elev []kdPoint
	for k, n := range topo.Nodes {
		if !fixed[k] {
			nodes = append(nodes, kdPoint{xy: topo.proj.xy(n.At), id: k})
		}
	}
	for i, p := range pts {
		if p.Usable {
			elev = append(elev, kdPoint{xy: topo.proj.xy(p.At), id: i})
		}
	}
	q, _ := AllocateDemands(topo, pts, fixed, 0)
	want := make([]hydraulics.Flow, len(topo.Nodes))
	for _, p := range pts {
		if p.Usable {
			want[kdBrute(nodes, topo.proj.xy(p.At), 1)[0].id] += hydraulics.Flow(p.Value)
		}
	}
	if !slices.Equal(q, want) {
		t.Errorf("demands: got %v, want %v", q, want)
	}
	for _, k := range []int{1, 3, 4, 9} {
		z, err := InterpolateElevations(topo, pts, k, 2)
		if err != nil {
			t.Fatal(err)
		}
		for j, n := range topo.Nodes {
			w := idwAt(n.At, kdBrute(elev, topo.proj.xy(n.At), k), pts, 2)
			if z[j] != w {
				t.Fatalf("k %d node %d: elevation %v, brute force %v", k, j, z[j], w)
			}
		}
	}
}

// joinDemoTown is an n-pipe demo town as `headroom demo` writes it, read
// back from its files and joined up to the stage the searches serve: the
// topology, its fixed (source) nodes, the demand and elevation points.
func joinDemoTown(t *testing.T, n int) (*Topology, []bool, []Point, []Point) {
	t.Helper()
	tw, err := demotown.Generate(demotown.Options{Pipes: n, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	layer := func(name string, fc *geojson.FeatureCollection) *geojson.FeatureCollection {
		path := filepath.Join(dir, name)
		if err := WriteCollection(path, fc); err != nil {
			t.Fatal(err)
		}
		back, err := ReadCollection(path, name)
		if err != nil {
			t.Fatal(err)
		}
		return back
	}
	pipes, _, err := PipesFromCollection("pipes.geojson", layer("pipes.geojson", tw.Pipes), PipeSchema{ID: demotown.PipeID,
		Diameter: demotown.PipeDiameter, DiameterUnit: "in", Material: demotown.PipeMaterial, InstallYear: demotown.PipeYear,
		Status: demotown.PipeStatus, ClosedValues: []string{"closed"}, LengthUnit: "ft"}, tw.AnalysisYear)
	if err != nil {
		t.Fatal(err)
	}
	topo, _ := Snap(pipes, halfFoot)
	srcs, _, err := SourcesFromCollection("sources.geojson", layer("sources.geojson", tw.Sources),
		SourceSchema{ID: demotown.SourceID, Grade: demotown.SourceGrade, GradeUnit: "ft"})
	if err != nil {
		t.Fatal(err)
	}
	sup, _ := AttachSources(topo, srcs, 50*hydraulics.Foot)
	fixed := make([]bool, len(topo.Nodes))
	for _, s := range sup {
		fixed[s.Node] = true
	}
	dem, _, err := DemandsFromCollection("demands.geojson", layer("demands.geojson", tw.Demands),
		DemandSchema{ID: demotown.DemandID, Demand: demotown.DemandADD, DemandUnit: "gpm"})
	if err != nil {
		t.Fatal(err)
	}
	elev, _, err := ElevationsFromCollection("elevations.geojson", layer("elevations.geojson", tw.Elevations),
		ElevationSchema{Elevation: demotown.ElevationValue, ElevationUnit: "ft"})
	if err != nil {
		t.Fatal(err)
	}
	return topo, fixed, dem, elev
}

// TestJoinsMatchRTreeOnDemoTowns: on the demo towns of 20,000 and 100,000
// pipes, AllocateDemands and InterpolateElevations give exactly what the
// R-tree code gave (refAllocateDemands, refInterpolateElevations): the
// same flows and problems, the same elevations to the bit. It also checks
// that every node's first k+1 elevation points from the R-tree are the
// k-d tree's, in the same order, and counts the nodes whose candidates tie
// (where the two could disagree on the order of a sum).
func TestJoinsMatchRTreeOnDemoTowns(t *testing.T) {
	for _, n := range []int{20_000, 100_000} {
		t.Run(fmt.Sprint(n), func(t *testing.T) {
			if testing.Short() && n > 20_000 {
				t.Skip("a 100,000-pipe town")
			}
			topo, fixed, dem, elev := joinDemoTown(t, n)
			warn := 300 * hydraulics.Foot
			q, probs := AllocateDemands(topo, dem, fixed, warn)
			wq, wprobs := refAllocateDemands(topo, dem, fixed, warn)
			if !reflect.DeepEqual(q, wq) || !reflect.DeepEqual(probs, wprobs) {
				t.Errorf("AllocateDemands differs from the R-tree's (%d problems, want %d)", len(probs), len(wprobs))
			}
			for _, k := range []int{DefaultIDWNeighbours, 1, 7} {
				z, err := InterpolateElevations(topo, elev, k, DefaultIDWPower)
				if err != nil {
					t.Fatal(err)
				}
				wz, err := refInterpolateElevations(topo, elev, k, DefaultIDWPower)
				if err != nil {
					t.Fatal(err)
				}
				if !reflect.DeepEqual(z, wz) {
					t.Errorf("k %d: InterpolateElevations differs from the R-tree's", k)
				}
			}
			rt, _ := refElevationTree(topo, elev)
			var pts []kdPoint
			for i, p := range elev {
				if p.Usable {
					pts = append(pts, kdPoint{xy: topo.proj.xy(p.At), id: i})
				}
			}
			kd := newKDTree(pts)
			k, ties := DefaultIDWNeighbours, 0
			var hits []kdHit
			for j, nd := range topo.Nodes {
				xy := topo.proj.xy(nd.At)
				want := refNeighbours(rt, xy, k)
				hits = kd.nearest(xy, k+1, hits)
				for i := 1; i < len(want); i++ {
					if want[i].d2 == want[i-1].d2 {
						ties++
						break
					}
				}
				if !slices.Equal(hits, want) {
					t.Fatalf("node %d: k-d tree %v, R-tree %v", j, hits, want)
				}
			}
			t.Logf("%d nodes, %d elevation points, %d demands; %d nodes with tied candidates", len(topo.Nodes), len(pts), len(dem), ties)
		})
	}
}
