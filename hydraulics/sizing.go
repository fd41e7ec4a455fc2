package hydraulics

import (
	"math"
	"runtime"
	"sync"
)

// cast-iron outside-diameter series, inches, by nominal size (AWWA C151
// ductile iron, shared by AWWA C900 PVC; DOMAIN.md §5.2, confirmed).
var castIronOD = []struct{ nominal, od float64 }{
	{4, 4.80}, {6, 6.90}, {8, 9.05}, {10, 11.10}, {12, 13.20}, {14, 15.30},
	{16, 17.40}, {18, 19.50}, {20, 21.60}, {24, 25.80}, {30, 32.00}, {36, 38.30},
	{42, 44.50}, {48, 50.80}, {54, 57.56}, {60, 61.61}, {64, 65.67},
}

// dr18 is the dimension ratio OD / minimum wall of AWWA C900 DR18 PVC
// (Pressure Class 235; DOMAIN.md §5.3).
const dr18 = 18

// StandardSizes returns the standard nominal sizes of a replacement main,
// 4 to 64 in (DOMAIN.md §5.1), ascending, each with the inside diameter of
// AWWA C900 DR18 PVC at minimum wall on the cast-iron OD series:
//
//	ID = OD · (1 − 2/DR),  DR = 18
//
// (DOMAIN.md §5.3: 4.267, 6.133, 8.044, 9.867, 11.733 in for 4–12 in).
// C900 covers 4–60 in; the 64-in entry applies the same ratio to the
// 64-in ductile-iron OD as a planning figure. Average-wall IDs are about
// 0.5–1 % smaller. A fresh slice is returned on every call.
func StandardSizes() []Size {
	sizes := make([]Size, len(castIronOD))
	for k, s := range castIronOD {
		sizes[k] = Size{
			Nominal: Length(s.nominal) * Inch,
			Inside:  Length(s.od*(1-2.0/dr18)) * Inch,
		}
	}
	return sizes
}

// RequiredInside returns the smallest inside diameter that carries |q|
// within both limits, the larger of (DOMAIN.md §5.5):
//
//	from the slope limit:     D = (|Q| / (a · C · S_max^0.54))^(1/2.63)
//	from the velocity limit:  D = √(4|Q| / (π · V_max))
//
// with a the SI flow coefficient of CarryingFlow (Q m³/s, D m). A zero
// maxSlope or maxVelocity leaves that limit out; with both zero, with
// zero flow or a non-positive c the result is zero.
func RequiredInside(q Flow, c, maxSlope float64, maxVelocity Velocity) Length {
	aq := math.Abs(float64(q))
	if aq == 0 || !(c > 0) {
		return 0
	}
	var d float64
	if maxSlope > 0 {
		d = math.Pow(aq/(hwFlowCoefficientSI*c*math.Pow(maxSlope, HWSlopeExponent)), 1/(2+HWRadiusExponent))
	}
	if maxVelocity > 0 {
		d = max(d, math.Sqrt(4*aq/(math.Pi*float64(maxVelocity))))
	}
	return Length(d)
}

// SmallestSize returns the size with the smallest inside diameter that is
// at least inside, and false when no size is large enough. sizes need not
// be sorted; ties keep the first.
func SmallestSize(sizes []Size, inside Length) (Size, bool) {
	best, found := Size{}, false
	for _, s := range sizes {
		if s.Inside >= inside && (!found || s.Inside < best.Inside) {
			best, found = s, true
		}
	}
	return best, found
}

// sizesFrom returns the sizes whose nominal size is at least minNominal
// (a small tolerance absorbs unit conversion).
func sizesFrom(sizes []Size, minNominal Length) []Size {
	for i, s := range sizes {
		if s.Nominal >= minNominal-1e-6 {
			return sizes[i:]
		}
	}
	return nil
}

// CheckPipes checks every pipe of net at the flows of sol against lim,
// one PipeCheck per pipe in pipe order. Closed pipes and pipes in
// unsupplied parts have zero flow in sol and are checked as such.
//
//   - Slope = FrictionSlope(Q, D, C); Velocity = MeanVelocity(Q, D).
//   - Capacity = CarryingFlow(D, C, MaxSlope), the flow at the criterion
//     slope (Q = C·d^2.63·S₁₀₀₀^0.54/148 in gpm, in, ft/kft); Deficit =
//     max(0, |Q| − Capacity). With MaxSlope zero both are zero.
//   - RequiredInside = RequiredInside(Q, DesignC, MaxSlope, MaxVelocity);
//     Required = SmallestSize(Sizes, RequiredInside), the zero Size when
//     none is large enough or DesignC is zero. At zero flow it is the
//     smallest standard size.
//   - OverSlope and OverVelocity compare with the non-zero limits.
//
// It returns nil when sol does not belong to net (lengths differ).
func CheckPipes(net *Network, sol *Solution, lim Limits) []PipeCheck {
	if net == nil || sol == nil || len(sol.Flow) != len(net.Pipes) {
		return nil
	}
	checks := make([]PipeCheck, len(net.Pipes))
	sizes := sizesFrom(lim.Sizes, lim.MinNominal)
	ForPipeRanges(len(net.Pipes), func(lo, hi int) {
		for j := lo; j < hi; j++ {
			checks[j] = checkPipe(net.Pipes[j], sol.Flow[j], lim, sizes)
		}
	})
	return checks
}

// checkPipe is CheckPipes for one pipe carrying q.
func checkPipe(p Pipe, q Flow, lim Limits, sizes []Size) PipeCheck {
	ch := PipeCheck{
		Flow:     q,
		Velocity: MeanVelocity(q, p.Diameter),
		Slope:    FrictionSlope(q, p.Diameter, p.C),
	}
	if lim.MaxSlope > 0 {
		ch.Capacity = CarryingFlow(p.Diameter, p.C, lim.MaxSlope)
		ch.Deficit = max(0, Flow(math.Abs(float64(q)))-ch.Capacity)
		ch.OverSlope = ch.Slope > lim.MaxSlope
	}
	if lim.MaxVelocity > 0 {
		ch.OverVelocity = ch.Velocity > lim.MaxVelocity
	}
	if lim.DesignC > 0 {
		ch.RequiredInside = RequiredInside(q, lim.DesignC, lim.MaxSlope, lim.MaxVelocity)
		ch.Required, _ = SmallestSize(sizes, ch.RequiredInside)
	}
	return ch
}

// ForPipeRanges calls body on GOMAXPROCS consecutive ranges covering
// [0, n) at once, or once for fewer than 2 × 8,192 pipes; body must write
// only its own range's results. It is for loops over the pipes (or nodes)
// of a network whose items are worked out each on its own.
func ForPipeRanges(n int, body func(lo, hi int)) {
	workers := min(runtime.GOMAXPROCS(0), n/8192)
	if workers <= 1 {
		body(0, n)
		return
	}
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() { body(n*w/workers, n*(w+1)/workers) })
	}
	wg.Wait()
}

// LowPressure returns, ascending, the solved junctions whose pressure
// NodePressure is below lim.MinPressure. Fixed nodes and unsupplied
// junctions (NaN head) are left out. With MinPressure zero it lists the
// junctions with negative pressure. It returns nil when sol does not
// belong to net.
func LowPressure(net *Network, sol *Solution, lim Limits) []int {
	if net == nil || sol == nil || len(sol.Head) != len(net.Nodes) {
		return nil
	}
	var low []int
	for i, n := range net.Nodes {
		h := sol.Head[i]
		if n.Fixed || math.IsNaN(float64(h)) {
			continue
		}
		if NodePressure(n, h) < lim.MinPressure {
			low = append(low, i)
		}
	}
	return low
}

// NodePressure returns the gauge pressure at node n when its hydraulic
// grade is h: p = γ · (H − z), with z the node's Elevation and γ
// SpecificWeightOfWater (62.4 lbf/ft³, so 1 ft of head = 0.4333 psi).
func NodePressure(n Node, h Head) Pressure {
	return PressureOf(h - Head(n.Elevation))
}
