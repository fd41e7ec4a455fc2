package gis

import (
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/paulmach/orb"
)

// benchWritePipeLayer is a pipe layer shaped like pipes.geojson: n mains of five
// vertices in lon/lat with text, integer and real columns (fixed decimals
// and the shortest form) and some nulls.
func benchWritePipeLayer(n int) *Layer {
	l := &Layer{Name: "pipes", Columns: []Column{
		{Name: "pipe_id", Kind: String}, {Name: "feature", Kind: Integer}, {Name: "rank", Kind: Integer},
		{Name: "score", Kind: Real, Decimals: 1}, {Name: "material", Kind: String}, {Name: "install_year", Kind: Integer},
	}}
	for k := range 24 {
		l.Columns = append(l.Columns, Column{Name: "figure_" + strconv.Itoa(k), Kind: Real, Decimals: 1 + k%3})
	}
	l.Columns = append(l.Columns, Column{Name: "c_model", Kind: Real, Decimals: -1}, Column{Name: "reasons", Kind: String})
	materials := []string{"CI", "DI", "PVC", "AC", "steel"}
	for i := range n {
		x, y := -118.25+float64(i%400)*1e-3, 34.05+float64(i/400)*1e-3
		row := []any{"P-" + strconv.Itoa(i), i + 1, nil, nil, materials[i%len(materials)], 1950 + i%70}
		if i%3 > 0 {
			row[2], row[3] = i/3+1, float64(i%1000)/9.7
		}
		for k := range 24 {
			row = append(row, float64((i*(k+7))%100_000)/97.3)
		}
		row = append(row, 130-float64(i%70)*0.7321, "headloss above the criterion; velocity above the criterion")
		l.Rows = append(l.Rows, Row{
			Geometry: orb.LineString{{x, y}, {x + 3e-4, y + 1e-5}, {x + 6e-4, y - 7e-6}, {x + 8e-4, y + 1.3e-4}, {x + 1e-3, y}},
			Values:   row,
		})
	}
	return l
}

// BenchmarkWriteGeoJSON100k and BenchmarkWriteCSV100k write the layer as
// a list of rows and packed column by column (PackLayer, as a run's pipe
// layer is), in rows/s and MB/s.
func BenchmarkWriteGeoJSON100k(b *testing.B) { benchWriteLayer(b, "pipes.geojson", WriteGeoJSON) }

func BenchmarkWriteCSV100k(b *testing.B) { benchWriteLayer(b, "ranked.csv", WriteCSV) }

// benchWriteLayers is benchWritePipeLayer(n) as a list of rows and packed
// column by column (PackLayer, as a run's pipe layer is), named so.
func benchWriteLayers(n int) []struct {
	name string
	l    *Layer
} {
	rows := benchWritePipeLayer(n)
	packed := PackLayer(rows.Name, rows.Columns, n, func(i int, v []any) orb.Geometry {
		copy(v, rows.Rows[i].Values)
		return rows.Rows[i].Geometry
	})
	return []struct {
		name string
		l    *Layer
	}{{"rows", rows}, {"packed", packed}}
}

func benchWriteLayer(b *testing.B, file string, write func(string, *Layer) error) {
	const n = 100_000
	for _, c := range benchWriteLayers(n) {
		b.Run(c.name, func(b *testing.B) {
			path := filepath.Join(b.TempDir(), file)
			b.ReportAllocs()
			cpu0 := processCPU()
			for b.Loop() {
				if err := write(path, c.l); err != nil {
					b.Fatal(err)
				}
			}
			st, err := os.Stat(path)
			if err != nil {
				b.Fatal(err)
			}
			s := b.Elapsed().Seconds()
			b.ReportMetric(float64(n)*float64(b.N)/s, "rows/s")
			b.ReportMetric(float64(st.Size())*float64(b.N)/s/1e6, "MB/s")
			gpkgReportCPU(b, processCPU()-cpu0, n)
		})
	}
}
