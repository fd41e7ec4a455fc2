package hydraulics

import (
	"fmt"
	"math"
)

// PumpCurve is a pump's head–flow curve in SI (head in m, flow in m³/s):
//
//	h(Q) = A − B·Q^C,   Q ≥ 0
//
// A is the shutoff head (at Q = 0), B > 0 and C > 0 shape the fall of head
// with flow. The three-coefficient power form is the usual fit of a
// manufacturer's curve through a shutoff, a design and a maximum point
// (Walski et al., Advanced Water Distribution Modeling and Management,
// 2003, ch. 2; common practice).
type PumpCurve struct {
	A, B, C float64
}

// Head returns the head the pump adds at flow q ≥ 0: A − B·q^C.
func (c PumpCurve) Head(q Flow) Head {
	return Head(c.A - c.B*math.Pow(math.Max(float64(q), 0), c.C))
}

// FitPumpCurve returns the curve h = A − B·Q^C through three points
// (q[k], h[k]): the shutoff point q[0] = 0, which gives A = h[0], and two
// points 0 < q[1] < q[2] with h[0] > h[1] > h[2]. From
// A − h_k = B·q_k^C (k = 1, 2):
//
//	C = ln((A − h₁)/(A − h₂)) / ln(q₁/q₂),   B = (A − h₁) / q₁^C
//
// It returns an error for a point that is not finite, a first point away
// from zero flow, flows not increasing, or heads not falling (a rising or
// flat curve has no such fit).
func FitPumpCurve(q [3]Flow, h [3]Head) (PumpCurve, error) {
	for k := range 3 {
		if !isFinite(float64(q[k])) || !isFinite(float64(h[k])) {
			return PumpCurve{}, fmt.Errorf("hydraulics: pump curve point %d (%g m³/s, %g m) is not finite", k, float64(q[k]), float64(h[k]))
		}
	}
	switch {
	case q[0] != 0:
		return PumpCurve{}, fmt.Errorf("hydraulics: pump curve: first point must be the shutoff head at zero flow, got flow %g m³/s", float64(q[0]))
	case !(0 < q[1] && q[1] < q[2]):
		return PumpCurve{}, fmt.Errorf("hydraulics: pump curve: flows %g, %g m³/s must be positive and increasing", float64(q[1]), float64(q[2]))
	case !(h[0] > h[1] && h[1] > h[2]):
		return PumpCurve{}, fmt.Errorf("hydraulics: pump curve: heads %g, %g, %g m must fall with flow", float64(h[0]), float64(h[1]), float64(h[2]))
	case !(h[0] > 0):
		return PumpCurve{}, fmt.Errorf("hydraulics: pump curve: shutoff head %g m is not positive", float64(h[0]))
	}
	a := float64(h[0])
	d1, d2 := a-float64(h[1]), a-float64(h[2])
	c := math.Log(d1/d2) / math.Log(float64(q[1])/float64(q[2]))
	b := d1 / math.Pow(float64(q[1]), c)
	curve := PumpCurve{A: a, B: b, C: c}
	if err := curve.validate(); err != nil {
		return PumpCurve{}, err
	}
	return curve, nil
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// validate checks A, B, C > 0 and finite.
func (c *PumpCurve) validate() error {
	if !(c.A > 0) || !(c.B > 0) || !(c.C > 0) || !isFinite(c.A) || !isFinite(c.B) || !isFinite(c.C) {
		return fmt.Errorf("pump curve A=%g m, B=%g, C=%g: each must be > 0 and finite", c.A, c.B, c.C)
	}
	return nil
}

// runout returns the flow at which the curve reaches zero head, (A/B)^(1/C).
func (c *PumpCurve) runout() float64 { return math.Pow(c.A/c.B, 1/c.C) }

// startFlow is the cold-start flow of a pump: the flow at half the shutoff
// head, (A/(2B))^(1/C), in mid-curve.
func (c *PumpCurve) startFlow() float64 { return math.Pow(c.A/(2*c.B), 1/c.C) }

// pumpLinearFraction sets the pump's low-flow switch q0 as a fraction of
// its runout flow. Below q0 the curve is replaced by its secant through
// (0, A) and (q0, h(q0)), so the derivative stays finite at Q = 0 (where
// B·C·Q^(C−1) vanishes for C > 1) and the curve continues, monotone, to
// Q < 0, where the status rules then close the pump.
const pumpLinearFraction = 1e-3

// shutResistance is the resistance, m per m³/s, of a check valve or pump
// that the status rules have closed: a leak of 1e-10 m³/s (1.6e-6 gpm) per
// metre of head across it, which the neighbouring pipes carry. It keeps the
// head matrix positive definite while the link is out; Solution.Flow
// reports the link itself as zero. A junction fed only through closed
// links has no real supply: its head is then meaningless (the leak sets
// it), as it would be for an unsupplied junction.
const shutResistance = 1e10

// pumpLoss returns the head loss h(Q) = −(A − B·Q^C) along an open pump
// (its head gain with the sign of a friction loss) and p = 1/h'(Q),
// h'(Q) = B·C·Q^(C−1), with the secant branch below q0.
func pumpLoss(c *PumpCurve, q0, q float64) (h, p float64) {
	if q < q0 {
		slope := c.B * math.Pow(q0, c.C-1)
		return slope*q - c.A, 1 / slope
	}
	pw := c.B * math.Pow(q, c.C-1)
	return pw*q - c.A, 1 / (c.C * pw)
}

// updateStatus applies the status rules to every check valve and pump
// after a converged solve and reports whether any changed:
//
//   - an open link whose flow runs To→From (Q < 0) closes;
//   - a closed check valve opens when H_from > H_to + HeadTolerance;
//   - a closed pump opens when H_to − H_from < A − HeadTolerance, A being
//     the head it can add at zero flow.
//
// A link that opens restarts from its cold-start flow, one that closes
// from zero. The rules are those of the usual status check of a gradient
// solver (Todini & Pilati 1988 treat pumps and valves as links with their
// own head curves; the open/closed test is common practice).
func (s *gga) updateStatus() bool {
	changed := false
	for j, ok := range s.check {
		if !ok || !s.solved[j] {
			continue
		}
		dh := s.h[s.from[j]] - s.h[s.to[j]]
		margin := float64(s.opt.HeadTolerance) // hysteresis against flip-flopping at equal grades
		switch {
		case !s.shut[j] && s.q[j] < 0:
			s.shut[j], s.q[j], changed = true, 0, true
		case s.shut[j] && s.pump != nil && s.pump[j].B > 0 && -dh < s.pump[j].A-margin:
			s.shut[j], s.q[j], changed = false, s.qStart[j], true
		case s.shut[j] && (s.pump == nil || s.pump[j].B == 0) && dh > margin:
			s.shut[j], s.q[j], changed = false, s.qStart[j], true
		}
	}
	return changed
}
