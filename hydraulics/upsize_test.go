package hydraulics

import (
	"math"
	"testing"
)

// cureLimits are the planning criteria of the tests: 10 ft per 1,000 ft
// and 5 ft/s at peak hour, 40 psi minimum, design C 130 for new PVC
// (DOMAIN.md §3.4 and §2.1: common planning values), the C900 DR18 sizes
// from 6 in up.
func cureLimits() Limits {
	return Limits{
		MaxSlope: 0.010, MaxVelocity: 5 * FootPerSecond, MinPressure: 40 * PoundPerSquareInch,
		DesignC: 130, Sizes: StandardSizes(), MinNominal: 6 * Inch,
	}
}

// cureScenarios are average day (not checked), max day (the fire-flow
// background, 1.5×) and peak hour (checked, 2.5×).
func cureScenarios() []UpsizeScenario {
	return []UpsizeScenario{
		{Name: "average day", DemandFactor: 1},
		{Name: "max day", DemandFactor: 1.5},
		{Name: "peak hour", DemandFactor: 2.5, Check: true},
	}
}

// cureSixInchNet is a reservoir at 200 ft feeding J1 through 2,000 ft of
// 12-in main; from J1 a 1,200-ft 6-in main (C 100) runs to hydrant H and
// an 8-in loop J1–J2–J3–J1 serves the rest. At 1,500 gpm the 6-in main
// loses (148·1500/(100·6^2.63))^1.852 ≈ 255 ft/kft, 306 ft in all, more
// than the 200 ft grade holds; an 8-in DR18 main (8.044 in, C 130) loses
// about 38 ft/kft, 45 ft (DOMAIN.md §1.3, per-1,000-ft form).
func cureSixInchNet() *Network {
	return &Network{
		Nodes: []Node{reservoir("R", 200), junction("J1", 50), junction("H", 20), junction("J2", 60), junction("J3", 40)},
		Pipes: []Pipe{
			usPipe("trunk", 0, 1, 2000, 12, 120),
			usPipe("six", 1, 2, 1200, 6, 100),
			usPipe("loop-a", 1, 3, 1000, 8, 110),
			usPipe("loop-b", 3, 4, 800, 8, 110),
			usPipe("loop-c", 4, 1, 900, 8, 110),
		},
	}
}

func cureMustUpsize(t *testing.T, in UpsizeInput) *UpsizeResult {
	t.Helper()
	res, err := Upsize(in)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// cureFireAt runs FireFlow independently on net at max day (1.5×).
func cureFireAt(t *testing.T, net *Network, node int) FireFlowResult {
	t.Helper()
	s, err := NewSolver(net, &Options{DemandFactor: 1.5})
	if err != nil {
		t.Fatal(err)
	}
	r := FireFlow(s, nil, nil, []int{node}, FireFlowOptions{})[0]
	if r.Err != nil {
		t.Fatal(r.Err)
	}
	return r
}

// TestCureSixInchMain: the only main that limits the hydrant is the one
// upsized, to 8 in, and the available flow after is what an independent
// FireFlow on the upsized network gives.
func TestCureSixInchMain(t *testing.T) {
	net := cureSixInchNet()
	in := UpsizeInput{Network: net, Scenarios: cureScenarios(), FireBackground: 1,
		Hydrants: []UpsizeHydrant{{Node: 2, Needed: 1500 * USGallonPerMinute}, {Node: 3, Needed: 1000 * USGallonPerMinute}},
		Limits:   cureLimits()}
	res := cureMustUpsize(t, in)
	for j, s := range res.Recommended {
		want := 0.0
		if j == 1 {
			want = 8 // the hand calculation in cureSixInchNet's comment
		}
		if got := s.Nominal.Inches(); math.Abs(got-want) > 1e-9 {
			t.Errorf("pipe %s: recommended %.0f in, want %.0f in (0: none)", net.Pipes[j].ID, got, want)
		}
	}
	if res.Stop != UpsizeCured || len(res.Unmet) != 0 {
		t.Errorf("stop %v, unmet %v: want cured, none", res.Stop, res.Unmet)
	}
	if b := res.FireBefore[0].Available.GPM(); b >= 1500 {
		t.Fatalf("before: %.0f gpm available, the test needs a shortfall", b)
	}
	// Independent re-solve: the network rebuilt by hand with the 8-in DR18
	// inside diameter, 8.05·(1 − 2/18) = 8.044 in (DOMAIN.md §5.3), C 130.
	upsized := cureSixInchNet()
	upsized.Pipes[1] = usPipe("six", 1, 2, 1200, 9.05*(1-2.0/18), 130)
	indep := cureFireAt(t, upsized, 2)
	got := res.FireAfter[0].Available.GPM()
	// both searches bracket the root within 1 gpm (FireFlowOptions.Tolerance)
	if math.Abs(got-indep.Available.GPM()) > 1 {
		t.Errorf("available after %.2f gpm, independent re-solve %.2f gpm: more than 1 gpm apart", got, indep.Available.GPM())
	}
	if got < 1500 {
		t.Errorf("available after %.1f gpm, below the needed 1500 gpm", got)
	}
}

// cureChainNet is a reservoir at 230 ft feeding a chain of n 6-in mains
// (C 90, 1,000 ft each) with 150 gpm average day at every junction: at
// peak hour (×2.5) the upstream mains carry well over 10 ft/kft, the
// downstream ones less.
func cureChainNet(n int) *Network {
	net := &Network{Nodes: []Node{reservoir("R", 230)}}
	for k := 1; k <= n; k++ {
		net.Nodes = append(net.Nodes, junction("J"+string(rune('0'+k)), 150))
		net.Pipes = append(net.Pipes, usPipe("P"+string(rune('0'+k)), k-1, k, 1000, 6, 90))
	}
	return net
}

// cureCriteriaHold checks net independently (Solve, CheckPipes,
// LowPressure, FireFlow): the reasons it fails, empty when it passes.
func cureCriteriaHold(t *testing.T, net *Network, lim Limits, hydrants []UpsizeHydrant) []string {
	t.Helper()
	var why []string
	sol, err := Solve(net, &Options{DemandFactor: 2.5})
	if err != nil {
		t.Fatal(err)
	}
	for j, ch := range CheckPipes(net, sol, lim) {
		if ch.OverSlope || ch.OverVelocity {
			why = append(why, "pipe "+net.Pipes[j].ID)
		}
	}
	for _, i := range LowPressure(net, sol, lim) {
		why = append(why, "pressure at "+net.Nodes[i].ID)
	}
	for _, h := range hydrants {
		if r := cureFireAt(t, net, h.Node); r.Available < h.Needed {
			why = append(why, "fire flow at "+net.Nodes[h.Node].ID)
		}
	}
	return why
}

// TestCureNotOversized: every recommended main is needed at its size: the
// next smaller standard size (or the main as it is, below the first size
// that carries more) breaks a criterion in an independent solve, while
// the recommended network meets them all.
func TestCureNotOversized(t *testing.T) {
	tests := []struct {
		name     string
		net      *Network
		hydrants []UpsizeHydrant
	}{
		{"chain of six", cureChainNet(6), nil},
		{"chain of four with a hydrant", cureChainNet(4), []UpsizeHydrant{{Node: 4, Needed: 1000 * USGallonPerMinute}}},
		{"six-inch main", cureSixInchNet(), []UpsizeHydrant{{Node: 2, Needed: 1500 * USGallonPerMinute}}},
	}
	lim := cureLimits()
	sizes := StandardSizes()[1:] // from 6 in, the minimum main size
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res := cureMustUpsize(t, UpsizeInput{Network: tc.net, Scenarios: cureScenarios(), FireBackground: 1,
				Hydrants: tc.hydrants, Limits: lim})
			if why := cureCriteriaHold(t, res.Network, lim, tc.hydrants); len(why) > 0 {
				t.Fatalf("recommended network fails: %v", why)
			}
			upsized := 0
			for j, s := range res.Recommended {
				if s.Nominal == 0 {
					continue
				}
				upsized++
				smaller := *res.Network
				smaller.Pipes = append([]Pipe(nil), res.Network.Pipes...)
				orig := tc.net.Pipes[j]
				smaller.Pipes[j].Diameter, smaller.Pipes[j].C = orig.Diameter, orig.C
				for k := len(sizes) - 1; k > 0; k-- {
					if sizes[k].Nominal == s.Nominal && 130*math.Pow(sizes[k-1].Inside.Inches(), 2.63) > orig.C*math.Pow(orig.Diameter.Inches(), 2.63) {
						smaller.Pipes[j].Diameter, smaller.Pipes[j].C = sizes[k-1].Inside, 130
					}
				}
				if why := cureCriteriaHold(t, &smaller, lim, tc.hydrants); len(why) == 0 {
					t.Errorf("pipe %s at %.0f in: the next smaller choice (%.3f in inside) also meets every criterion",
						orig.ID, s.Nominal.Inches(), smaller.Pipes[j].Diameter.Inches())
				}
			}
			if upsized == 0 {
				t.Fatal("nothing upsized: the case does not exercise the guard")
			}
		})
	}
}

// TestCureElevation: a junction 150 ft above datum under a 200-ft grade
// has at most 50 ft, 21.7 psi, with lossless mains (γ = 62.4 lbf/ft³,
// DOMAIN.md §3.7): below 40 psi whatever the mains, so it is reported as
// from elevation and nothing is upsized for it.
func TestCureElevation(t *testing.T) {
	net := &Network{
		Nodes: []Node{reservoir("R", 200), junction("J1", 50), {ID: "HIGH", Elevation: 150 * Foot, Demand: 10 * USGallonPerMinute}},
		Pipes: []Pipe{usPipe("a", 0, 1, 1000, 8, 120), usPipe("b", 1, 2, 500, 6, 120)},
	}
	res := cureMustUpsize(t, UpsizeInput{Network: net, Scenarios: cureScenarios(), Limits: cureLimits()})
	for j, s := range res.Recommended {
		if s.Nominal != 0 {
			t.Errorf("pipe %s upsized to %.0f in; want none", net.Pipes[j].ID, s.Nominal.Inches())
		}
	}
	if len(res.Unmet) != 1 {
		t.Fatalf("unmet %+v, want one", res.Unmet)
	}
	u := res.Unmet[0]
	if u.Criterion != CriterionPressure || u.Node != 2 || u.Cause != CauseElevation {
		t.Errorf("unmet %+v: want low pressure at HIGH from elevation", u)
	}
	want := 50 * 62.4 / 144 // psi, 50 ft of water
	if got := u.BestPressure.PSI(); math.Abs(got-want) > 1e-6 {
		t.Errorf("best pressure %.6f psi, want %.6f psi", got, want)
	}
	if res.Stop != UpsizeCured {
		t.Errorf("stop %v, want %v (only an uncurable criterion left)", res.Stop, UpsizeCured)
	}
}

// cureTwoSourceNet: hydrant H between reservoirs at 200 ft and g2 ft, each
// through two 1,500-ft 6-in mains (C 100), needing 2,000 gpm.
func cureTwoSourceNet(g2 float64) UpsizeInput {
	net := &Network{
		Nodes: []Node{reservoir("R1", 200), reservoir("R2", g2), junction("A", 20), junction("B", 20), junction("H", 20)},
		Pipes: []Pipe{usPipe("a1", 0, 2, 1500, 6, 100), usPipe("a2", 2, 4, 1500, 6, 100),
			usPipe("b1", 1, 3, 1500, 6, 100), usPipe("b2", 3, 4, 1500, 6, 100)},
	}
	return UpsizeInput{Network: net, Scenarios: cureScenarios(), FireBackground: 1,
		Hydrants: []UpsizeHydrant{{Node: 4, Needed: 2000 * USGallonPerMinute}}, Limits: cureLimits()}
}

// TestCureCaps: a cap on length or on rounds stops the loop and says so,
// and the length cap is kept.
func TestCureCaps(t *testing.T) {
	chain := UpsizeInput{Network: cureChainNet(6), Scenarios: cureScenarios(), Limits: cureLimits()}
	// With R2 at 150 ft and 1,500 gpm asked, the hydrant draws mostly from
	// R1, and each round's first-order charge (HeadSensitivity) falls short
	// as flow shifts between the sources: several rounds are needed.
	two := cureTwoSourceNet(150)
	two.Hydrants[0].Needed = 1500 * USGallonPerMinute
	if free := cureMustUpsize(t, chain); free.UpsizedLength < 2000*Foot {
		t.Fatalf("uncapped chain: %.0f ft upsized; the case needs at least two mains", free.UpsizedLength.Feet())
	}
	if free := cureMustUpsize(t, two); free.Rounds < 2 || free.Stop != UpsizeCured {
		t.Fatalf("uncapped two-source case: %d rounds, %v; the case needs two rounds to cure", free.Rounds, free.Stop)
	}
	tests := []struct {
		name      string
		in        UpsizeInput
		maxLength Length
		maxIter   int
		want      UpsizeStop
	}{
		{"length", chain, 1500 * Foot, 0, UpsizeLengthCap},
		{"iterations", two, 0, 1, UpsizeIterationCap},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			in := tc.in
			in.MaxLength, in.MaxIterations = tc.maxLength, tc.maxIter
			res := cureMustUpsize(t, in)
			if res.Stop != tc.want {
				t.Errorf("stop %v, want %v", res.Stop, tc.want)
			}
			if in.MaxLength > 0 && res.UpsizedLength > in.MaxLength {
				t.Errorf("upsized %.0f ft, cap %.0f ft", res.UpsizedLength.Feet(), in.MaxLength.Feet())
			}
			stopped := 0
			for _, u := range res.Unmet {
				if u.Cause == CauseStopped {
					stopped++
				}
			}
			if stopped == 0 {
				t.Errorf("unmet %+v: want criteria left because the loop stopped", res.Unmet)
			}
		})
	}
}

// TestCureGradeDriven: a main between reservoirs 50 ft apart carries a
// flow set by their grades; upsizing it only raises its flow (at a fixed
// slope V grows as D^0.63, DOMAIN.md §1.1), so it is reported as
// grade-driven and the loop does not run to the largest size.
func TestCureGradeDriven(t *testing.T) {
	in := cureTwoSourceNet(150)
	res := cureMustUpsize(t, in)
	if res.Stop != UpsizeCured {
		t.Errorf("stop %v, want %v", res.Stop, UpsizeCured)
	}
	driven := 0
	for _, u := range res.Unmet {
		if u.Cause == CauseGradeDriven {
			driven++
		}
		if u.Criterion == CriterionFireFlow {
			t.Errorf("fire flow left unmet: %+v", u)
		}
	}
	if driven == 0 {
		t.Errorf("unmet %+v: want a grade-driven main", res.Unmet)
	}
	for j, s := range res.Recommended {
		if s.Nominal > 12*Inch {
			t.Errorf("pipe %s upsized to %.0f in: the loop ran away", in.Network.Pipes[j].ID, s.Nominal.Inches())
		}
	}
	if got := res.FireAfter[0].Available.GPM(); got < 2000 {
		t.Errorf("available after %.1f gpm, want at least the needed 2000 gpm", got)
	}
}

// TestCureVerifySolvesAfresh: verify must not trust a hydrant result kept
// from an earlier network (a screened evaluation): given an evaluation of
// the six-inch network in which the 1,500-gpm hydrant's stale result
// claims a pass, it solves that hydrant again, finds it short (the hand
// calculation in cureSixInchNet's comment: the 6-in main alone loses more
// than the grade holds) and lists the failure, with the margin of a full
// evaluation of the same network; the stale solutions are let go, and the
// hydrant is re-solved in every trial after.
func TestCureVerifySolvesAfresh(t *testing.T) {
	in := UpsizeInput{Network: cureSixInchNet(), Scenarios: cureScenarios(), FireBackground: 1,
		Hydrants: []UpsizeHydrant{{Node: 2, Needed: 1500 * USGallonPerMinute}, {Node: 3, Needed: 1000 * USGallonPerMinute}},
		Limits:   cureLimits()}
	c, err := newCure(in)
	if err != nil {
		t.Fatal(err)
	}
	none := make([]int, len(c.group))
	for g := range none {
		none[g] = -1
	}
	full, err := c.evaluate(none, nil, true)
	if err != nil {
		t.Fatal(err)
	}
	fireFails := func(e *cureEval) int {
		n := 0
		for _, it := range e.fails {
			if it.crit == CriterionFireFlow && it.index == 0 {
				n++
			}
		}
		return n
	}
	if full.fire[0].margin >= 0 || fireFails(full) != 1 {
		t.Fatalf("full evaluation: hydrant margin %.0f Pa, %d fire-flow failures: the test needs a short hydrant", full.fire[0].margin, fireFails(full))
	}
	stale := *full
	stale.fire = append([]cureFire(nil), full.fire...)
	stale.fire[0].margin = 1e5 // a pass carried over from another network
	stale.fails = nil
	c.listFails(&stale)
	stale.screened = true
	if fireFails(&stale) != 0 {
		t.Fatal("the forged evaluation still lists the hydrant")
	}
	v, err := c.verify(&stale)
	if err != nil {
		t.Fatal(err)
	}
	if v.screened || fireFails(v) != 1 {
		t.Errorf("verified: screened %v, %d fire-flow failures of the short hydrant; want false, 1", v.screened, fireFails(v))
	}
	// Both are solves of the same network to the same tolerance.
	if d := math.Abs(v.fire[0].margin - full.fire[0].margin); d > 0.01*float64(PoundPerSquareInch) {
		t.Errorf("verified margin %.1f Pa, full evaluation %.1f Pa", v.fire[0].margin, full.fire[0].margin)
	}
	for k, f := range stale.fire {
		if f.sol != nil {
			t.Errorf("hydrant %d: the stale solution is still held after verify", k)
		}
	}
	// The hydrant whose kept pass was wrong is re-solved in every later
	// trial; the other, which passed both times, may still be screened.
	if !c.unscreened[0] || c.unscreened[1] {
		t.Errorf("unscreened %v after verify: want [true false]", c.unscreened)
	}
	// A kept pass again (a failing result is re-solved anyway): the next
	// trial, which changes no main, must still solve it.
	v.fire[0].margin = 1e5
	next, err := c.evaluate(none, v, false)
	if err != nil {
		t.Fatal(err)
	}
	if next.fire[0].sol == v.fire[0].sol {
		t.Error("the unscreened hydrant kept its result in the next trial")
	}
}
