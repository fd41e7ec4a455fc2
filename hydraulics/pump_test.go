package hydraulics

import (
	"math"
	"strings"
	"testing"
)

// TestFitPumpCurvePassesThroughPoints checks the fit against its own three
// points (the defining property of an interpolating fit) and, for a curve
// made from known coefficients, that the coefficients come back.
func TestFitPumpCurvePassesThroughPoints(t *testing.T) {
	gpm, ft := USGallonPerMinute, Head(Foot)
	tests := []struct {
		name string
		q    [3]Flow
		h    [3]Head
		want *PumpCurve // known coefficients, or nil
	}{
		{"catalogue-style points, US", [3]Flow{0, 500 * gpm, 800 * gpm}, [3]Head{200 * ft, 180 * ft, 140 * ft}, nil},
		{"steep curve, SI", [3]Flow{0, 0.02, 0.05}, [3]Head{45, 44, 20}, nil},
		// Points computed here from A = 50 m, B = 4000, C = 2: 50 − 4000·0.05² = 40, 50 − 4000·0.1² = 10.
		{"known quadratic", [3]Flow{0, 0.05, 0.1}, [3]Head{50, 40, 10}, &PumpCurve{A: 50, B: 4000, C: 2}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := FitPumpCurve(tc.q, tc.h)
			if err != nil {
				t.Fatal(err)
			}
			for k := range 3 {
				if got := c.Head(tc.q[k]); math.Abs(float64(got-tc.h[k])) > 1e-9 {
					t.Errorf("point %d: curve gives %.12g m, want %.12g m", k, float64(got), float64(tc.h[k]))
				}
			}
			if w := tc.want; w != nil {
				if relDiff(c.A, w.A, 0) > 1e-12 || relDiff(c.B, w.B, 0) > 1e-9 || relDiff(c.C, w.C, 0) > 1e-9 {
					t.Errorf("coefficients %+v, want %+v", c, *w)
				}
			}
		})
	}
}

func TestFitPumpCurveErrors(t *testing.T) {
	tests := []struct {
		name string
		q    [3]Flow
		h    [3]Head
		want string
	}{
		{"rising", [3]Flow{0, 0.02, 0.05}, [3]Head{40, 42, 30}, "fall"},
		{"flat", [3]Flow{0, 0.02, 0.05}, [3]Head{40, 40, 40}, "fall"},
		{"no shutoff point", [3]Flow{0.01, 0.02, 0.05}, [3]Head{40, 35, 30}, "shutoff"},
		{"flows out of order", [3]Flow{0, 0.05, 0.02}, [3]Head{40, 35, 30}, "increasing"},
		{"NaN", [3]Flow{0, Flow(math.NaN()), 0.05}, [3]Head{40, 35, 30}, "not finite"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FitPumpCurve(tc.q, tc.h)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one containing %q", err, tc.want)
			}
		})
	}
}

// TestPumpMeetsSystemCurve puts a pump between a low reservoir and a tank
// through one pipe. The operating point is where the pump curve meets the
// system curve, A − B·Q^C = ΔZ + r·Q^1.852 (the textbook construction;
// Walski et al. 2003, ch. 2), solved here by bisection with r from the HW
// velocity form (hwLossFt, DOMAIN.md §1.1).
func TestPumpMeetsSystemCurve(t *testing.T) {
	gpm, ft := USGallonPerMinute, Head(Foot)
	curve, err := FitPumpCurve([3]Flow{0, 600 * gpm, 1000 * gpm}, [3]Head{180 * ft, 160 * ft, 120 * ft})
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name     string
		liftFt   float64 // tank grade above the reservoir
		pumpLast bool    // pump on the tank side of the pipe
	}{
		{"lift 80 ft, pump at the reservoir", 80, false},
		{"lift 140 ft, pump at the reservoir", 140, false},
		{"lift 80 ft, pump at the tank", 80, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			const lengthFt, dIn, c = 3000, 12, 120
			net := &Network{Nodes: []Node{reservoir("R", 100), junction("J", 0), reservoir("T", 100+tc.liftFt)}}
			pump := Pipe{ID: "pump", From: 0, To: 1, Pump: &curve}
			main := usPipe("main", 1, 2, lengthFt, dIn, c)
			if tc.pumpLast {
				pump.From, pump.To, main.From, main.To = 1, 2, 0, 1
			}
			net.Pipes = []Pipe{pump, main}
			sol, err := Solve(net, nil)
			if err != nil {
				t.Fatal(err)
			}
			// Bisection on g(Q) = A − B·Q^C − ΔZ − h_f(Q), decreasing in Q (gpm).
			g := func(qGPM float64) float64 {
				return curve.Head(Flow(qGPM)*gpm).Feet() - tc.liftFt - hwLossFt(qGPM, dIn, c, lengthFt)
			}
			lo, hi := 0.0, 5000.0
			for range 200 {
				if mid := (lo + hi) / 2; g(mid) > 0 {
					lo = mid
				} else {
					hi = mid
				}
			}
			want := (lo + hi) / 2
			for j := range 2 {
				if got := sol.Flow[j].GPM(); math.Abs(got-want) > 1e-3 {
					t.Errorf("%s flow %.4f gpm, want %.4f gpm", net.Pipes[j].ID, got, want)
				}
			}
			wantJ := 100 + curve.Head(Flow(want)*gpm).Feet() // downstream of a pump at the reservoir
			if tc.pumpLast {
				wantJ = 100 - hwLossFt(want, dIn, c, lengthFt)
			}
			if got := sol.Head[1].Feet(); math.Abs(got-wantJ) > 1e-3 {
				t.Errorf("junction head %.4f ft, want %.4f ft", got, wantJ)
			}
		})
	}
}

// TestPumpAgainstTooHighGrade: a pump whose shutoff head is below the lift
// cannot deliver and must not run backwards (it closes: zero flow); the
// junction between it and the tank then stands at the tank's grade
// (no flow, no loss; physical reasoning, no source needed).
func TestPumpAgainstTooHighGrade(t *testing.T) {
	curve := PumpCurve{A: 30, B: 2000, C: 2} // 30 m shutoff
	net := &Network{
		Nodes: []Node{reservoir("R", 100), junction("J", 0), reservoir("T", 100+50/Foot.Metres())},
		Pipes: []Pipe{{ID: "pump", From: 0, To: 1, Pump: &curve}, usPipe("main", 1, 2, 1000, 8, 120)},
	}
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	// The main carries only the closed pump's leak (see shutResistance).
	if sol.Flow[0] != 0 || math.Abs(sol.Flow[1].GPM()) > 1e-4 {
		t.Errorf("flows %v gpm, want 0 in a pump that cannot lift 50 m", []float64{sol.Flow[0].GPM(), sol.Flow[1].GPM()})
	}
	if d := sol.Head[1] - net.Nodes[2].Grade; math.Abs(float64(d)) > 1e-4 {
		t.Errorf("junction head %.5f m, want the tank's %.5f m", float64(sol.Head[1]), float64(net.Nodes[2].Grade))
	}
}

// TestCheckValve checks one-way flow. A valve facing a higher grade carries
// zero flow and the junction is fed by the other main alone, so its head is
// H_high − h(Q_demand) by the HW velocity form (DOMAIN.md §1.1, hwLossFt).
// A valve with the grades the right way round carries what a plain pipe
// carries.
func TestCheckValve(t *testing.T) {
	build := func(lowFt float64, valve bool) *Network {
		cv := usPipe("cv", 0, 1, 1000, 8, 120) // From the first reservoir to J
		cv.CheckValve = valve
		return &Network{
			Nodes: []Node{reservoir("R1", lowFt), junction("J", 300), reservoir("R2", 150)},
			Pipes: []Pipe{cv, usPipe("feed", 2, 1, 1500, 8, 120)},
		}
	}
	t.Run("facing a higher grade", func(t *testing.T) {
		sol, err := Solve(build(100, true), nil)
		if err != nil {
			t.Fatal(err)
		}
		if sol.Flow[0] != 0 {
			t.Errorf("check valve flow %.6f gpm, want 0", sol.Flow[0].GPM())
		}
		if got := sol.Flow[1].GPM(); math.Abs(got-300) > 1e-3 {
			t.Errorf("feed flow %.4f gpm, want the 300 gpm demand", got)
		}
		want := 150 - hwLossFt(300, 8, 120, 1500)
		if got := sol.Head[1].Feet(); math.Abs(got-want) > 1e-3 {
			t.Errorf("junction head %.4f ft, want %.4f ft", got, want)
		}
	})
	t.Run("flowing forward", func(t *testing.T) {
		withValve, err := Solve(build(170, true), nil)
		if err != nil {
			t.Fatal(err)
		}
		plain, err := Solve(build(170, false), nil)
		if err != nil {
			t.Fatal(err)
		}
		if !(plain.Flow[0] > 0) {
			t.Fatalf("test set-up: plain pipe flow %.3f gpm should be forward", plain.Flow[0].GPM())
		}
		for j := range 2 {
			if d := math.Abs((withValve.Flow[j] - plain.Flow[j]).GPM()); d > 1e-6 {
				t.Errorf("pipe %d: %.6f gpm with the valve, %.6f without", j, withValve.Flow[j].GPM(), plain.Flow[j].GPM())
			}
		}
	})
}

// TestCheckValvesNeverReverse puts check valves on many mains of a street
// grid with several supplies at different grades and checks that none
// carries reverse flow and that each closed valve has the grades that keep
// it closed (H_from ≤ H_to within the head tolerance). The property is the
// definition of a check valve.
func TestCheckValvesNeverReverse(t *testing.T) {
	net := streetGrid(20, 4, 11)
	grade := []Head{70, 90, 110, 80}
	k := 0
	for i := range net.Nodes {
		if net.Nodes[i].Fixed {
			net.Nodes[i].Grade = grade[k%len(grade)]
			k++
		}
	}
	valves := 0
	for j := range net.Pipes {
		if j%7 == 0 {
			net.Pipes[j].CheckValve = true
			valves++
		}
	}
	sol, err := Solve(net, &Options{DemandFactor: 3})
	if err != nil {
		t.Fatal(err)
	}
	closed := 0
	for j, p := range net.Pipes {
		if !p.CheckValve {
			continue
		}
		if sol.Flow[j] < 0 {
			t.Errorf("valve %s carries %.4f gpm backwards", p.ID, sol.Flow[j].GPM())
		}
		if sol.Flow[j] == 0 {
			closed++
			if up, down := sol.Head[p.From], sol.Head[p.To]; up > down+defaultHeadTolerance {
				t.Errorf("closed valve %s has %.5f m upstream above %.5f m downstream", p.ID, float64(up), float64(down))
			}
		}
	}
	if closed == 0 {
		t.Errorf("none of %d valves closed: the test does not exercise reverse flow", valves)
	}
	checkBalance(t, sol, 1e-6)
}

// TestPumpValidation: a pump needs a curve with A, B, C > 0 (a falling
// curve); its length, diameter and C are not used and not checked.
func TestPumpValidation(t *testing.T) {
	tests := []struct {
		name  string
		curve PumpCurve
		ok    bool
	}{
		{"valid", PumpCurve{A: 40, B: 3000, C: 2}, true},
		{"zero B (flat curve)", PumpCurve{A: 40, B: 0, C: 2}, false},
		{"negative shutoff", PumpCurve{A: -1, B: 3000, C: 2}, false},
		{"NaN exponent", PumpCurve{A: 40, B: 3000, C: math.NaN()}, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			net := &Network{
				Nodes: []Node{reservoir("R", 100), junction("J", 100)},
				Pipes: []Pipe{{ID: "pump", From: 0, To: 1, Pump: &tc.curve}},
			}
			err := net.Validate()
			if tc.ok != (err == nil) {
				t.Errorf("Validate: %v, want ok=%v", err, tc.ok)
			}
			if err != nil && !strings.Contains(err.Error(), `"pump"`) {
				t.Errorf("error %q does not name the pump", err)
			}
		})
	}
}
