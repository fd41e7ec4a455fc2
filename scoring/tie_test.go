package scoring

import (
	"testing"

	"headroom/hydraulics"
)

// TestRankTiesIgnoreRoundOff: two mains in series with no demand between
// them carry one flow, so their scores are equal; a solve reproduces that
// only to round-off. Here the second main's flow, slope and velocity are
// 1e-12 larger, as round-off leaves them. The tie must go to the ID, not
// to the round-off (common practice for a stable ranking: the data cannot
// tell the two apart). A real difference (0.1 %) still orders them.
func TestRankTiesIgnoreRoundOff(t *testing.T) {
	lim := usLimits()
	cases := []struct {
		name      string
		rel       float64
		wantFirst string
	}{
		{"round-off", 1e-12, "B-1"},
		{"real difference", 1e-3, "B-2"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			a := sixInch("B-1")
			b := sixInch("B-2")
			f := 1 + tc.rel
			b.Check = checkOf(500*hydraulics.USGallonPerMinute*hydraulics.Flow(f), 0.03341*f, 5.674*hydraulics.FootPerSecond*hydraulics.Velocity(f), lim)
			b.Index = 1
			res, err := Rank([]Pipe{a, b}, DefaultConfig(), lim)
			if err != nil {
				t.Fatal(err)
			}
			first := res[0].ID
			if res[1].Rank == 1 {
				first = res[1].ID
			}
			if first != tc.wantFirst {
				t.Errorf("first is %s (scores %.15g, %.15g), want %s", first, res[0].Score, res[1].Score, tc.wantFirst)
			}
		})
	}
}
