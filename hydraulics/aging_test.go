package hydraulics

import (
	"math"
	"testing"
)

func TestDefaultTableReproducesCastIronColumn(t *testing.T) {
	// DOMAIN.md §2.2, medium-pipe column of unlined cast iron.
	want := map[float64]float64{0: 130, 5: 119, 10: 111, 20: 96, 30: 87, 40: 80, 50: 74}
	ci, ok := DefaultAgingTable().Lookup("CI")
	if !ok {
		t.Fatal("no CI curve")
	}
	for _, age := range []float64{0, 5, 10, 20, 30, 40, 50} {
		if got := ci.C(age); math.Abs(got-want[age]) > 1e-12 {
			t.Errorf("C at %v yr = %v, want %v", age, got, want[age])
		}
	}
	// DOMAIN.md §2.2: welded steel = cast iron five years older.
	stl, _ := DefaultAgingTable().Lookup("steel")
	for _, age := range []float64{0, 5, 15, 25, 45} {
		if got, w := stl.C(age), ci.C(age+5); math.Abs(got-w) > 1e-12 {
			t.Errorf("steel at %v yr = %v, want cast iron at %v yr = %v", age, got, age+5, w)
		}
	}
}

func TestAgingCurveInterpolation(t *testing.T) {
	ci, _ := DefaultAgingTable().Lookup("cast iron")
	tests := []struct {
		name string
		age  float64
		want float64
	}{
		// Linear between the §2.2 points (arithmetic).
		{"midway 5–10", 7.5, (119 + 111) / 2.0},
		{"a quarter 20–30", 22.5, 96 + 0.25*(87-96)},
		// Held beyond the ends.
		{"negative age", -3, 130},
		{"past the table", 120, 74},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := ci.C(tc.age); math.Abs(got-tc.want) > 1e-12 {
				t.Errorf("C(%v) = %v, want %v", tc.age, got, tc.want)
			}
		})
	}
	if !math.IsNaN((AgingCurve{}).C(10)) {
		t.Error("empty curve must give NaN")
	}
	// DOMAIN.md §2.6 step 3: lined and plastic pipe decline slowly to a floor.
	pvc, _ := DefaultAgingTable().Lookup("PVC")
	if got := pvc.C(0); got != 150 {
		t.Errorf("PVC new %v, want 150 (DOMAIN.md §2.1)", got)
	}
	if got := pvc.C(200); got != 140 {
		t.Errorf("PVC floor %v, want 140 (DOMAIN.md §2.6)", got)
	}
	di, _ := DefaultAgingTable().Lookup("DIP")
	if got := di.C(25); math.Abs(got-135) > 1e-12 {
		t.Errorf("DI at 25 yr %v, want 140 − 0.2·25 = 135", got)
	}
}

func TestAgingTableLookup(t *testing.T) {
	table := DefaultAgingTable()
	tests := []struct {
		spelling string
		want     string // Material code, "" for no match
	}{
		{"CI", "CI"}, {"cast iron", "CI"}, {" CIP ", "CI"}, {"Cast  Iron", "CI"},
		{"DI", "DI"}, {"dip", "DI"}, {"Ductile Iron", "DI"},
		{"AC", "AC"}, {"ACP", "AC"}, {"asbestos cement", "AC"},
		{"PVC", "PVC"}, {"c900", "PVC"},
		{"HDPE", "HDPE"}, {"PE", "HDPE"},
		{"STL", "STL"}, {"Steel", "STL"},
		{"GALV", "GALV"},
		{"wood stave", ""}, {"", ""}, {"  ", ""},
	}
	for _, tc := range tests {
		t.Run(tc.spelling, func(t *testing.T) {
			c, ok := table.Lookup(tc.spelling)
			if ok != (tc.want != "") || c.Material != tc.want {
				t.Errorf("Lookup(%q) = %q, %v; want %q", tc.spelling, c.Material, ok, tc.want)
			}
		})
	}
	for _, c := range table.Curves {
		if c.Source == "" || len(c.Points) == 0 {
			t.Errorf("curve %s lacks a source or points", c.Material)
		}
		for k := 1; k < len(c.Points); k++ {
			if c.Points[k].Age <= c.Points[k-1].Age {
				t.Errorf("curve %s: ages not ascending at %d", c.Material, k)
			}
		}
	}
	// A fresh copy each call: editing one must not change the next.
	table.Curves[0].Points[0].C = 1
	if c, _ := DefaultAgingTable().Lookup("CI"); c.C(0) != 130 {
		t.Error("DefaultAgingTable shares its points between calls")
	}
}

func TestSharpWalski(t *testing.T) {
	tests := []struct {
		name   string
		e0, a  Length
		age    float64
		d      Length
		want   float64
		tol    float64
		source string
	}{
		{"60 yr, 0.5 ft", 0.00085 * Foot, 0.0003 * Foot, 60, 0.5 * Foot, 70.96, 0.05, "DOMAIN.md §9 item 6"},
		{"60 yr, 1 ft", 0.00085 * Foot, 0.0003 * Foot, 60, 1 * Foot, 82.16, 0.05, "DOMAIN.md §9 item 6"},
		{"new, 1 ft", 0.00085 * Foot, 0.0003 * Foot, 0, 1 * Foot, 132.23, 0.05, "DOMAIN.md §9 item 6"},
		// DOMAIN.md §2.3: e0 = 0.00085 ft gives C_new 132 at 12 in and 121 at 6 in.
		{"new, 6 in", 0.00085 * Foot, 0, 0, 6 * Inch, 121, 0.5, "DOMAIN.md §2.3"},
		// DOMAIN.md §2.4 check table: 150 mm, 50 yr, k0 = 0.25 mm.
		{"slight attack", 0.25 * Millimetre, 0.025 * Millimetre, 50, 150 * Millimetre, 92.4, 0.05, "DOMAIN.md §2.4"},
		{"moderate attack", 0.25 * Millimetre, 0.076 * Millimetre, 50, 150 * Millimetre, 76.4, 0.05, "DOMAIN.md §2.4"},
		{"appreciable attack", 0.25 * Millimetre, 0.25 * Millimetre, 50, 150 * Millimetre, 57.8, 0.05, "DOMAIN.md §2.4"},
		{"severe attack", 0.25 * Millimetre, 0.76 * Millimetre, 50, 150 * Millimetre, 40.1, 0.05, "DOMAIN.md §2.4"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := SharpWalskiC(tc.e0, tc.a, tc.age, tc.d); math.Abs(got-tc.want) > tc.tol {
				t.Errorf("C = %.3f, want %.2f ± %g (%s)", got, tc.want, tc.tol, tc.source)
			}
		})
	}
	if !math.IsNaN(SharpWalskiC(0, 0, 10, 1)) || !math.IsNaN(SharpWalskiC(1e-3, 0, 0, 0)) {
		t.Error("zero roughness or diameter must give NaN")
	}
}

func TestSharpWalskiFromFieldTest(t *testing.T) {
	// DOMAIN.md §9 item 7: C_obs = 80 at 50 yr, D = 8 in, e0 = 0.00085 ft →
	// a = 2.703e-4 ft/yr (0.0824 mm/yr) ± 0.5 %; at 70 yr C = 74.84 ± 0.05.
	e0, d := 0.00085*Foot, 8*Inch
	a := SharpWalskiGrowth(80, 50, e0, d)
	if rel := math.Abs(a.Feet()-2.703e-4) / 2.703e-4; rel > 0.005 {
		t.Errorf("a = %.4g ft/yr, want 2.703e-4 ± 0.5 %%", a.Feet())
	}
	if rel := math.Abs(a.Millimetres()-0.0824) / 0.0824; rel > 0.005 {
		t.Errorf("a = %.4g mm/yr, want 0.0824 ± 0.5 %%", a.Millimetres())
	}
	if back := SharpWalskiC(e0, a, 50, d); math.Abs(back-80) > 1e-9 {
		t.Errorf("model at the test age gives %.6f, want the observed 80", back)
	}
	if got := SharpWalskiC(e0, a, 70, d); math.Abs(got-74.84) > 0.05 {
		t.Errorf("C at 70 yr = %.3f, want 74.84 ± 0.05", got)
	}
	if !math.IsNaN(float64(SharpWalskiGrowth(80, 0, e0, d))) {
		t.Error("zero age must give NaN")
	}
}
