package scoring

import (
	"math"
	"testing"

	"headroom/hydraulics"
)

func TestReasons(t *testing.T) {
	us := DefaultConfig()
	si := DefaultConfig()
	si.Units = hydraulics.SI

	// DOMAIN.md §1.6 SI check point: 50 L/s in a 200 mm main at C 130 over
	// 500 m loses 6.420 m, a slope of 0.01284 (12.84 m/km), at 1.592 m/s.
	// Capacity at 10 m/km: 50/(1.284^0.54) = 43.686 L/s, so it carries
	// 1.1445× and is short 6.314 L/s. Points by hand (default weights):
	// head loss 0.35·52.27 = 18.29, velocity 0.15·44.46 = 6.67,
	// deficit 0.30·14.45 = 4.34, so velocity comes before capacity.
	siPipe := func() Pipe {
		lim := siLimits()
		ck := checkOf(50*hydraulics.LitrePerSecond, 0.01284, 1.592*hydraulics.MetrePerSecond, lim)
		ck.Required = hydraulics.Size{Nominal: 250 * hydraulics.Millimetre, Inside: 240 * hydraulics.Millimetre}
		return Pipe{ID: "S-1", Scorable: true, C: 130, Diameter: 200 * hydraulics.Millimetre, Check: ck, LowPressure: true}
	}
	tooBig := sixInch("M-2")
	tooBig.Check.Required = hydraulics.Size{}
	tooBig.Check.RequiredInside = 25.31 * hydraulics.Inch
	// An aged 6-in main whose cure is a new main of the same size: the
	// new main's C, not a larger bore, restores the capacity.
	inKind := sixInch("M-5")
	inKind.Check.Required = hydraulics.Size{Nominal: 6 * hydraulics.Inch, Inside: 6.133 * hydraulics.Inch}
	lowOnly := passing("M-4", 130)
	lowOnly.LowPressure = true

	cases := []struct {
		name string
		pipe Pipe
		cfg  Config
		lim  hydraulics.Limits
		want string
	}{
		{
			// §1.6 US check point: 33.41 ft/kft; (33.41/10)^0.54 = 1.918× capacity,
			// 500 − 500/1.918 = 239.3 gpm short; 5.674 ft/s. C 100 scores 33 < 50, not named.
			name: "US: head loss, capacity, velocity, cure",
			pipe: sixInch("M-1"), cfg: us, lim: usLimits(),
			want: "head loss 33.4 ft/kft exceeds 10.0 ft/kft; " +
				"carries 1.92× its capacity at 10.0 ft/kft (deficit 239 gpm); " +
				"velocity 5.7 ft/s exceeds 5.0 ft/s; upsize to 8 in (now 6 in)",
		},
		{
			name: "SI: ordered by points, low pressure last",
			pipe: siPipe(), cfg: si, lim: siLimits(),
			want: "head loss 12.8 m/km exceeds 10.0 m/km; velocity 1.59 m/s exceeds 1.50 m/s; " +
				"carries 1.14× its capacity at 10.0 m/km (deficit 6.3 L/s); " +
				"upsize to 250 mm (now 200 mm); an end is below 280 kPa",
		},
		{
			// The same pipe read in US units: 6.314 L/s = 100.1 gpm, 1.592 m/s =
			// 5.22 ft/s, 1.5 m/s = 4.92 ft/s, 250 mm = 9.84 in, 280 kPa = 40.6 psi.
			name: "SI pipe in US units",
			pipe: siPipe(), cfg: us, lim: siLimits(),
			want: "head loss 12.8 ft/kft exceeds 10.0 ft/kft; velocity 5.2 ft/s exceeds 4.9 ft/s; " +
				"carries 1.14× its capacity at 10.0 ft/kft (deficit 100 gpm); " +
				"upsize to 9.8 in (now 7.9 in); an end is below 41 psi",
		},
		{
			name: "no listed size is large enough",
			pipe: tooBig, cfg: us, lim: usLimits(),
			want: "head loss 33.4 ft/kft exceeds 10.0 ft/kft; " +
				"carries 1.92× its capacity at 10.0 ft/kft (deficit 239 gpm); " +
				"velocity 5.7 ft/s exceeds 5.0 ft/s; needs 25.3 in inside, larger than any listed size",
		},
		{
			name: "cured by a new main of the same size",
			pipe: inKind, cfg: us, lim: usLimits(),
			want: "head loss 33.4 ft/kft exceeds 10.0 ft/kft; " +
				"carries 1.92× its capacity at 10.0 ft/kft (deficit 239 gpm); " +
				"velocity 5.7 ft/s exceeds 5.0 ft/s; a new 6 in main cures it",
		},
		{
			name: "passes",
			pipe: passing("M-3", 130), cfg: us, lim: usLimits(),
			want: "meets the criteria",
		},
		{
			// C 62 scores (62 − 120)/(60 − 120) = 96.7 ≥ 50; C 95 scores 41.7 < 50.
			name: "passes with an aged C",
			pipe: passing("M-3", 62), cfg: us, lim: usLimits(),
			want: "aged C 62; meets the criteria",
		},
		{
			name: "C 95 is not named",
			pipe: passing("M-3", 95), cfg: us, lim: usLimits(),
			want: "meets the criteria",
		},
		{
			// 40 psi = 275.8 kPa.
			name: "low pressure only, SI",
			pipe: lowOnly, cfg: si, lim: usLimits(),
			want: "an end is below 276 kPa",
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Rank([]Pipe{tc.pipe}, tc.cfg, tc.lim)
			if err != nil {
				t.Fatal(err)
			}
			if got := res[0].Reasons; got != tc.want {
				t.Errorf("reasons\n got %q\nwant %q", got, tc.want)
			}
		})
	}
}

// A main charged with a hydrant's fire-flow shortfall: 640 of 1,000 gpm
// available is 36 % short, which the deficit breakpoints (0 → 0, 1.0 →
// 100) score 36.0, weighted 0.30 × 36.0 = 10.8 of the score; the reason
// names the hydrant, and no peak-hour cure size is claimed for it.
func TestFireFlowShortfall(t *testing.T) {
	p := passing("M-9", 130)
	p.FireFlow = &FireFlowShortfall{Hydrant: "H-12", Available: 640 * hydraulics.USGallonPerMinute, Needed: 1000 * hydraulics.USGallonPerMinute}
	res, err := Rank([]Pipe{p}, DefaultConfig(), usLimits())
	if err != nil {
		t.Fatal(err)
	}
	if got := res[0].Deficit; math.Abs(got-36) > 1e-9 {
		t.Errorf("deficit sub-score %.4f, want 36", got)
	}
	if want := "limits fire flow at hydrant H-12 (640 gpm of 1000 gpm needed)"; res[0].Reasons != want {
		t.Errorf("reasons %q, want %q", res[0].Reasons, want)
	}
	var none *FireFlowShortfall
	if none.Fraction() != 0 || (&FireFlowShortfall{Available: 2, Needed: 1}).Fraction() != 0 {
		t.Error("a nil or met fire flow must have no shortfall")
	}
}
