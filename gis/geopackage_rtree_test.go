package gis

import (
	"cmp"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"github.com/paulmach/orb"
)

// The packed spatial index is a valid SQLite R*Tree and finds what a scan
// finds. Two checks from outside our code: SQLite's own rtreecheck()
// (ext/rtree/rtree.c, "rtreecheck": node sizes and depths, every cell's box
// inside its parent's, the _parent and _rowid tables against the nodes),
// and window queries answered by SQLite from the index, compared with a
// brute-force scan of the boxes. The layers are large enough for trees two
// and three levels deep (51 cells a node: 2,000 rows make 40 leaves, 20,000
// make 393), and some rows have no geometry. Coordinates are whole feet
// below 2^24, which float32 holds exactly, so the index's boxes equal the
// features' and the comparison is exact.
func TestGeoPackageRtreePacked(t *testing.T) {
	for _, n := range []int{1, 51, 52, 2_000, 20_000} {
		t.Run(strconv.Itoa(n), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(7, uint64(n)))
			l := &Layer{Name: "mains", Columns: []Column{{Name: "k", Kind: Integer}}}
			var boxes []orb.Bound
			for i := range n {
				var g orb.Geometry
				if i%17 != 5 {
					x, y := float64(1_000_000+rng.IntN(100_000)), float64(2_000_000+rng.IntN(100_000))
					ls := orb.LineString{{x, y}, {x + float64(rng.IntN(400)), y + float64(rng.IntN(400)-200)}}
					g = ls
				}
				l.Rows = append(l.Rows, Row{Geometry: g, Values: []any{i}})
				if g != nil {
					boxes = append(boxes, g.Bound())
				} else {
					boxes = append(boxes, orb.Bound{Min: orb.Point{1, 1}, Max: orb.Point{-1, -1}}) // no box
				}
			}
			path := filepath.Join(t.TempDir(), "packed.gpkg")
			if err := WriteGeoPackage(path, gpkgSRS2229(t), l); err != nil {
				t.Fatal(err)
			}
			db := sqliteOpenChecked(t, path, "SELECT rtreecheck('rtree_mains_geom')")
			for q := range 40 {
				// windows from a point to a tenth of the area, edges at a quarter foot
				w := float64(1 + rng.IntN(30_000))
				x0, y0 := float64(1_000_000+rng.IntN(100_000))+0.25, float64(2_000_000+rng.IntN(100_000))+0.25
				if q == 0 {
					x0, y0, w = 0.25, 0.25, 1e7 // everything
				}
				var want []int64
				for i, b := range boxes {
					if b.Min[0] <= b.Max[0] && b.Max[0] >= x0 && b.Min[0] <= x0+w && b.Max[1] >= y0 && b.Min[1] <= y0+w {
						want = append(want, int64(i+1))
					}
				}
				rows, err := db.Query("SELECT id FROM rtree_mains_geom WHERE maxx >= ? AND minx <= ? AND maxy >= ? AND miny <= ? ORDER BY id", x0, x0+w, y0, y0+w)
				if err != nil {
					t.Fatal(err)
				}
				var got []int64
				for rows.Next() {
					var id int64
					if err := rows.Scan(&id); err != nil {
						t.Fatal(err)
					}
					got = append(got, id)
				}
				rows.Close()
				if !slices.Equal(got, want) {
					t.Fatalf("window %d (%g, %g, side %g): the index gives %d features, a scan %d", q, x0, y0, w, len(got), len(want))
				}
			}
		})
	}
}

// A layer none of whose rows has a geometry gets the empty R*Tree SQLite
// itself would hold: node 1 alone, with no cells, which rtreecheck()
// accepts and a window query answers with nothing, and to which SQLite's
// R*Tree code adds a box.
func TestGeoPackageRtreeEmpty(t *testing.T) {
	l := &Layer{Name: "mains", Columns: []Column{{Name: "k", Kind: Integer}}}
	for i := range 3 {
		l.Rows = append(l.Rows, Row{Values: []any{i}})
	}
	path := filepath.Join(t.TempDir(), "empty.gpkg")
	if err := WriteGeoPackage(path, gpkgSRS2229(t), l); err != nil {
		t.Fatal(err)
	}
	db := sqliteOpenChecked(t, path, "SELECT rtreecheck('rtree_mains_geom')")
	var check string
	var nodes, cells int
	if err := db.QueryRow("SELECT count(*) FROM rtree_mains_geom_node").Scan(&nodes); err != nil || nodes != 1 {
		t.Fatalf("%d nodes (%v), want the root alone", nodes, err)
	}
	if err := db.QueryRow("SELECT count(*) FROM rtree_mains_geom").Scan(&cells); err != nil || cells != 0 {
		t.Fatalf("%d index rows (%v), want 0", cells, err)
	}
	// SQLite's R*Tree code adds to the tree it finds (the triggers that do
	// so on an edit call ST_ functions only GeoPackage readers provide).
	if _, err := db.Exec(`INSERT INTO rtree_mains_geom VALUES (4, 6599999, 6600001, 1839999, 1840001)`); err != nil {
		t.Fatal(err)
	}
	var id int64
	if err := db.QueryRow("SELECT id FROM rtree_mains_geom WHERE minx <= 6600000 AND maxx >= 6600000").Scan(&id); err != nil || id != 4 {
		t.Fatalf("the inserted box: id %d, %v; want 4", id, err)
	}
	if err := db.QueryRow("SELECT rtreecheck('rtree_mains_geom')").Scan(&check); err != nil || check != "ok" {
		t.Fatalf("rtreecheck after the insert: %q, %v", check, err)
	}
}

// The index's boxes hold their features': each bound is rounded outwards to
// the nearest float32 (SQLite's rtreeValueDown and rtreeValueUp), and the
// float32 on the other side of it would no longer hold the value.
func TestFloat32Outward(t *testing.T) {
	for _, x := range []float64{0, 1, -1, 0.1, -0.1, 6_600_000.123, -1_840_000.987, 1e30, 3.4e38, 16_777_217} {
		down, up := float32Down(x), float32Up(x)
		if float64(down) > x || float64(up) < x {
			t.Errorf("%g: down %g, up %g do not hold it", x, down, up)
		}
		if next := math.Nextafter32(down, float32(math.Inf(1))); float64(next) <= x && float64(down) != x {
			t.Errorf("%g: down %g is not the largest float32 below it (%g is)", x, down, next)
		}
		if prev := math.Nextafter32(up, float32(math.Inf(-1))); float64(prev) >= x && float64(up) != x {
			t.Errorf("%g: up %g is not the smallest float32 above it (%g is)", x, up, prev)
		}
	}
}

// rtreeOrderKey orders as the floats do (cmp.Compare, the order the
// packing sorted by before; −0 and +0 equal): over random values of all
// magnitudes and signs, and the infinities, zeros and subnormals.
func TestRtreeOrderKey(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 13))
	xs := []float64{0, math.Copysign(0, -1), math.Inf(1), math.Inf(-1), 5e-324, -5e-324, math.MaxFloat64, -math.MaxFloat64, 1, -1}
	for range 20_000 {
		xs = append(xs, math.Float64frombits(rng.Uint64()&^(0x7ff<<52)|uint64(rng.IntN(0x7ff))<<52)) // any finite double
	}
	for i, a := range xs {
		b := xs[(i*7919+1)%len(xs)]
		if got, want := cmp.Compare(rtreeOrderKey(a), rtreeOrderKey(b)), cmp.Compare(a, b); got != want {
			t.Fatalf("keys of %v and %v compare %d, the values %d", a, b, got, want)
		}
	}
}

// rtreeByKey is the order rtreeTile sorts by: the key, ties by id.
func rtreeByKey(a, b rtreeKeyed) int {
	switch {
	case a.key < b.key:
		return -1
	case a.key > b.key:
		return 1
	}
	return cmp.Compare(a.cell.id, b.cell.id)
}

// rtreeSortKeyed, given cells in id order, sorts them as the comparison
// sort with rtreeByKey does (slices.SortFunc; its order is total, as the ids
// differ): keys from a few values (ties everywhere), keys that share their
// high bytes (the passes skipped), full 64-bit keys, and the lengths 0–2.
func TestRtreeSortKeyedAsComparator(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 19))
	keys := map[string]func() uint64{
		"few":    func() uint64 { return uint64(rng.IntN(7)) << 40 },
		"narrow": func() uint64 { return 0xbff0_0000_0000_0000 | uint64(rng.IntN(1<<20)) },
		"any":    rng.Uint64,
	}
	for name, key := range keys {
		for _, n := range []int{0, 1, 2, 1000, 50_000} {
			cells := make([]rtreeKeyed, n)
			for i := range cells {
				cells[i] = rtreeKeyed{key: key(), cell: rtreeCell{id: int64(3*i + 1)}}
			}
			want := slices.Clone(cells)
			slices.SortFunc(want, rtreeByKey)
			rtreeSortKeyed(cells, make([]rtreeKeyed, n))
			if !slices.Equal(cells, want) {
				t.Errorf("%s keys, %d cells: order differs from the comparison sort", name, n)
			}
		}
	}
}

// rtreeTile's nodes follow Sort-Tile-Recursive to the letter: cut into
// vertical slices of ⌈√P⌉·fanout cells in (x, id) order, each slice in
// (y, id) order and cut into runs of fanout. Boxes on a coarse grid make
// ties in x and y common.
func TestRtreeTileOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 29))
	const fanout = 51
	for _, n := range []int{1, 51, 52, 5000, 30_000} {
		cells := make([]rtreeCell, n)
		for i := range cells {
			x, y := float32(rng.IntN(40)), float32(rng.IntN(40))
			cells[i] = rtreeCell{id: int64(i + 1), minX: x, maxX: x + float32(rng.IntN(3)), minY: y, maxY: y + float32(rng.IntN(3))}
		}
		nodes := rtreeTile(cells, fanout)
		var got []rtreeCell
		for k, nd := range nodes {
			if len(nd.cells) == 0 || len(nd.cells) > fanout {
				t.Fatalf("%d cells: node %d holds %d", n, k, len(nd.cells))
			}
			got = append(got, nd.cells...)
		}
		xKey := func(c rtreeCell) rtreeKeyed {
			return rtreeKeyed{key: rtreeOrderKey(float64(c.minX) + float64(c.maxX)), cell: c}
		}
		yKey := func(c rtreeCell) rtreeKeyed {
			return rtreeKeyed{key: rtreeOrderKey(float64(c.minY) + float64(c.maxY)), cell: c}
		}
		byX := slices.Clone(cells)
		slices.SortFunc(byX, func(a, b rtreeCell) int { return rtreeByKey(xKey(a), xKey(b)) })
		per := int(math.Ceil(math.Sqrt(float64((n+fanout-1)/fanout)))) * fanout
		var want []rtreeCell
		for s := 0; s < n; s += per {
			slice := slices.Clone(byX[s:min(s+per, n)])
			slices.SortFunc(slice, func(a, b rtreeCell) int { return rtreeByKey(yKey(a), yKey(b)) })
			want = append(want, slice...)
		}
		if !slices.Equal(got, want) {
			t.Errorf("%d cells: the nodes' cells are not in Sort-Tile-Recursive order", n)
		}
	}
}
