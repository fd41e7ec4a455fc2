package scoring

import (
	"math"

	"headroom/hydraulics"
)

// usLimits are the usual US planning criteria: 10 ft/kft and 5 ft/s at peak
// hour, 40 psi at a junction, C 130 for a new main (DOMAIN.md §3.1–3.3, §2.1).
func usLimits() hydraulics.Limits {
	return hydraulics.Limits{
		MaxSlope:    0.010,
		MaxVelocity: 5 * hydraulics.FootPerSecond,
		MinPressure: 40 * hydraulics.PoundPerSquareInch,
		DesignC:     130,
	}
}

// siLimits are the same criteria in round SI values: 10 m/km, 1.5 m/s, 280 kPa.
func siLimits() hydraulics.Limits {
	return hydraulics.Limits{
		MaxSlope:    0.010,
		MaxVelocity: 1.5 * hydraulics.MetrePerSecond,
		MinPressure: 280 * hydraulics.Kilopascal,
		DesignC:     130,
	}
}

// checkOf builds a PipeCheck by hand for flow q at friction slope s and
// velocity v, against lim. The capacity at the criterion slope follows from
// Hazen-Williams at fixed C and D, Q ∝ S^0.54 (DOMAIN.md §1.2):
//
//	capacity = q · (MaxSlope / s)^0.54
func checkOf(q hydraulics.Flow, s float64, v hydraulics.Velocity, lim hydraulics.Limits) hydraulics.PipeCheck {
	capacity := q * hydraulics.Flow(math.Pow(lim.MaxSlope/s, 0.54))
	return hydraulics.PipeCheck{
		Flow:         q,
		Velocity:     v,
		Slope:        s,
		Capacity:     capacity,
		Deficit:      max(q-capacity, 0),
		OverSlope:    s > lim.MaxSlope,
		OverVelocity: v > lim.MaxVelocity,
	}
}

// sixInch is DOMAIN.md §1.6's US check point: 500 gpm in a 6.000 in main at
// C 100 runs at 33.41 ft/kft and 5.674 ft/s. An 8 in main cures it (at C 130
// and 10 ft/kft it needs 6.98 in inside: (148·500/(130·10^0.54))^(1/2.63)).
func sixInch(id string) Pipe {
	lim := usLimits()
	ck := checkOf(500*hydraulics.USGallonPerMinute, 0.03341, 5.674*hydraulics.FootPerSecond, lim)
	ck.RequiredInside = 6.98 * hydraulics.Inch
	ck.Required = hydraulics.Size{Nominal: 8 * hydraulics.Inch, Inside: 8.0 * hydraulics.Inch}
	return Pipe{ID: id, Scorable: true, C: 100, Diameter: 6 * hydraulics.Inch, Check: ck}
}

// passing returns a scorable pipe that meets every criterion: 300 gpm in an
// 8 in main at 2.0 ft/kft and 1.9 ft/s, with C c.
func passing(id string, c float64) Pipe {
	ck := checkOf(300*hydraulics.USGallonPerMinute, 0.002, 1.9*hydraulics.FootPerSecond, usLimits())
	return Pipe{ID: id, Scorable: true, C: c, Diameter: 8 * hydraulics.Inch, Check: ck}
}
