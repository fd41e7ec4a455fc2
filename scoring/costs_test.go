package scoring

import (
	"math"
	"testing"
)

// TestCostTable: the default (invented, DOMAIN.md §7.4 range) table prices
// an 8-in main under an arterial at $300/ft × 1.4 and a 42-in main, past the
// last row, at $1,600/ft × 42/36; an unknown surface takes factor 1.
func TestCostTable(t *testing.T) {
	c := DefaultCostTable()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	perFoot := func(d float64, surface string) float64 { return c.PerMetre(d*0.0254, surface) * metresPerFoot }
	for _, tc := range []struct {
		in      float64
		surface string
		want    float64
	}{
		{8, "Arterial", 420}, {8, "", 300}, {7, "local", 300}, {4, "gravel", 260}, {42, "local", 1600 * 42.0 / 36}, {30, "unpaved", 1040},
	} {
		if got := perFoot(tc.in, tc.surface); math.Abs(got-tc.want) > 1e-9 {
			t.Errorf("%g in under %q: $%.4f/ft, want $%.4f/ft", tc.in, tc.surface, got, tc.want)
		}
	}
	bad := DefaultCostTable()
	bad.Rows[3].UpTo = bad.Rows[2].UpTo
	if bad.Validate() == nil {
		t.Error("rows that do not rise were accepted")
	}
	bad = DefaultCostTable()
	bad.SurfaceFactor["local"] = 0
	if bad.Validate() == nil {
		t.Error("a zero surface factor was accepted")
	}
}
