package scoring

import (
	"cmp"
	"math"
	"slices"
	"strconv"
	"strings"

	"headroom/hydraulics"
)

// agedCSubScore is the C-factor sub-score from which a low C is named in the
// reasons: half-way from the Good to the Poor breakpoint (C 90 with the
// defaults). Common practice, no source: below it the C-factor adds too
// little to the score to be worth a word.
const agedCSubScore = 50

// MeetsCriteria is the whole of the reasons of a pipe that fails no
// criterion.
const MeetsCriteria = "meets the criteria"

// reason is one clause of a pipe's reasons and the score points behind it.
type reason struct {
	points float64 // weight × sub-score; larger comes first
	text   string
}

// reasons writes what fails and by how much, in cfg.Units. The scored
// clauses (head loss, capacity, velocity, aged C) come first, largest
// weighted sub-score first and in that order on ties; then the size that
// cures the pipe, then low pressure. A pipe that fails no criterion says
// "meets the criteria".
func reasons(p Pipe, r Result, cfg Config, lim hydraulics.Limits) string {
	u := cfg.Units
	w := cfg.Weights
	ck := p.Check
	var scored []reason
	if ck.OverSlope {
		scored = append(scored, reason{w.HeadLoss * r.HeadLoss,
			"head loss " + headLossText(u, math.Abs(ck.Slope)) + " exceeds " + headLossText(u, lim.MaxSlope)})
	}
	if ck.Deficit > 0 {
		times := 1 + deficitFraction(ck)
		scored = append(scored, reason{w.Deficit * r.Deficit,
			"carries " + strconv.FormatFloat(times, 'f', 2, 64) + "× its capacity at " + headLossText(u, lim.MaxSlope) +
				" (deficit " + flowText(u, ck.Deficit) + ")"})
	}
	if f := p.FireFlow; f.Fraction() > 0 {
		scored = append(scored, reason{w.Deficit * cfg.Deficit.Score(f.Fraction()),
			"limits fire flow at hydrant " + f.Hydrant + " (" + flowText(u, f.Available) + " of " + flowText(u, f.Needed) + " needed)"})
	}
	if ck.OverVelocity {
		v := hydraulics.Velocity(math.Abs(float64(ck.Velocity)))
		scored = append(scored, reason{w.Velocity * r.Velocity,
			"velocity " + velocityText(u, v) + " exceeds " + velocityText(u, lim.MaxVelocity)})
	}
	if r.CFactor >= agedCSubScore {
		scored = append(scored, reason{w.CFactor * r.CFactor, "aged C " + strconv.FormatFloat(p.C, 'f', 0, 64)})
	}
	// Stable sort keeps the order above for equal points.
	slices.SortStableFunc(scored, func(a, b reason) int { return cmp.Compare(b.points, a.points) })

	parts := make([]string, 0, len(scored)+2)
	for _, s := range scored {
		parts = append(parts, s.text)
	}
	peakFails := ck.OverSlope || ck.OverVelocity || ck.Deficit > 0
	fails := peakFails || p.FireFlow.Fraction() > 0
	// The cure size is sized for the peak-hour flow, so it is named only
	// when a peak-hour criterion fails; a fire-flow cure is sized by
	// re-solving with the fire flow (not done here).
	if peakFails {
		if t := cureText(u, p); t != "" {
			parts = append(parts, t)
		}
	}
	if p.LowPressure {
		parts = append(parts, "an end is below "+strconv.FormatFloat(u.Pressure(lim.MinPressure), 'f', 0, 64)+" "+u.PressureLabel())
	}
	if !fails && !p.LowPressure {
		parts = append(parts, MeetsCriteria)
	}
	return strings.Join(parts, "; ")
}

// cureText names the standard size that cures the pipe: an upsizing when
// it is larger than the pipe's size now, a new main of the same size when
// that cures it (a new main's C restores the capacity age took away), or
// that none in the size list is large enough. It is empty when the check
// has no size.
func cureText(u hydraulics.System, p Pipe) string {
	req := p.Check.Required
	switch {
	case req.Nominal > p.Diameter+1e-6:
		return "upsize to " + DiameterText(u, req.Nominal) + " (now " + DiameterText(u, p.Diameter) + ")"
	case req.Nominal > 0:
		return "a new " + DiameterText(u, req.Nominal) + " main cures it"
	case p.Check.RequiredInside > 0:
		return "needs " + DiameterText(u, p.Check.RequiredInside) + " inside, larger than any listed size"
	}
	return ""
}

// headLossText writes a friction slope as ft/kft or m/km, one decimal.
func headLossText(u hydraulics.System, slope float64) string {
	return strconv.FormatFloat(u.UnitHeadLoss(slope), 'f', 1, 64) + " " + u.UnitHeadLossLabel()
}

// velocityText writes ft/s with one decimal, m/s with two.
func velocityText(u hydraulics.System, v hydraulics.Velocity) string {
	return strconv.FormatFloat(u.Velocity(v), 'f', digits(u, 1, 2), 64) + " " + u.VelocityLabel()
}

// flowText writes gpm with no decimals, L/s with one.
func flowText(u hydraulics.System, q hydraulics.Flow) string {
	return strconv.FormatFloat(u.Flow(q), 'f', digits(u, 0, 1), 64) + " " + u.FlowLabel()
}

// DiameterText writes inches with one decimal, dropping a trailing ".0"
// (8 in, 5.9 in), or whole millimetres.
func DiameterText(u hydraulics.System, d hydraulics.Length) string {
	s := strconv.FormatFloat(u.Diameter(d), 'f', digits(u, 1, 0), 64)
	return strings.TrimSuffix(s, ".0") + " " + u.DiameterLabel()
}

// digits picks a precision by unit system.
func digits(u hydraulics.System, us, si int) int {
	if u == hydraulics.SI {
		return si
	}
	return us
}
