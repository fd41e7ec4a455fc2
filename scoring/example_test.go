package scoring_test

import (
	"fmt"
	"math"

	"headroom/hydraulics"
	"headroom/scoring"
)

// checkOf builds the hydraulic check of a main carrying gpm at a friction
// slope of ftPerKft and a velocity of fps, with the capacity at 10 ft/kft
// from Hazen-Williams at fixed C and D (Q ∝ S^0.54).
func checkOf(gpm, ftPerKft, fps float64) hydraulics.PipeCheck {
	q := hydraulics.Flow(gpm) * hydraulics.USGallonPerMinute
	capacity := q * hydraulics.Flow(math.Pow(10/ftPerKft, 0.54))
	return hydraulics.PipeCheck{
		Flow:         q,
		Velocity:     hydraulics.Velocity(fps) * hydraulics.FootPerSecond,
		Slope:        ftPerKft / 1000,
		Capacity:     capacity,
		Deficit:      max(q-capacity, 0),
		OverSlope:    ftPerKft > 10,
		OverVelocity: fps > 5,
	}
}

func ExampleRank() {
	// Three mains on Larkspur Avenue in the town of Wrenfield, and one closed
	// by a valve. The 6 in main carries 500 gpm at C 100 (33.41 ft/kft, 5.674 ft/s).
	larkspur6 := checkOf(500, 33.41, 5.674)
	larkspur6.Required = hydraulics.Size{Nominal: 8 * hydraulics.Inch, Inside: 8 * hydraulics.Inch}
	pipes := []scoring.Pipe{
		{Index: 0, ID: "LA-01", Scorable: true, C: 128, Diameter: 12 * hydraulics.Inch, Check: checkOf(1200, 4.1, 3.4)},
		{Index: 1, ID: "LA-02", Scorable: true, C: 100, Diameter: 6 * hydraulics.Inch, Check: larkspur6},
		{Index: 2, ID: "LA-03", Scorable: false, Reason: "closed"},
		{Index: 3, ID: "LA-04", Scorable: true, C: 64, Diameter: 8 * hydraulics.Inch, Check: checkOf(300, 6.8, 1.9)},
	}
	lim := hydraulics.Limits{
		MaxSlope:    0.010,
		MaxVelocity: 5 * hydraulics.FootPerSecond,
		MinPressure: 40 * hydraulics.PoundPerSquareInch,
		DesignC:     130,
	}
	results, err := scoring.Rank(pipes, scoring.DefaultConfig(), lim)
	if err != nil {
		fmt.Println(err)
		return
	}
	// By hand, default weights: LA-01 scores only on velocity, 0.15·(3.4 − 3)/(8 − 3)·100 = 1.2;
	// LA-04 scores 0.35·(6.8 − 5)/15·100 + 0.20·(64 − 120)/(60 − 120)·100 = 4.2 + 18.67 = 22.9.
	for _, r := range results {
		fmt.Printf("%s rank %d score %.1f: %s\n", r.ID, r.Rank, r.Score, r.Reasons)
	}
	// Output:
	// LA-01 rank 3 score 1.2: meets the criteria
	// LA-02 rank 1 score 77.2: head loss 33.4 ft/kft exceeds 10.0 ft/kft; carries 1.92× its capacity at 10.0 ft/kft (deficit 239 gpm); velocity 5.7 ft/s exceeds 5.0 ft/s; upsize to 8 in (now 6 in)
	// LA-03 rank 0 score 0.0: closed
	// LA-04 rank 2 score 22.9: aged C 64; meets the criteria
}
