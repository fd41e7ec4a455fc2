package hydraulics

import (
	"math"
	"sync/atomic"
	"testing"
)

// psiFt is the head of 1 psi of water, 144/62.4 ft (DOMAIN.md §3.7).
const psiFt = 144 / 62.4

// singleMain is a reservoir at gradeFt feeding a hydrant junction at
// elevation 0 through one main with no other demand.
func singleMain(gradeFt, lengthFt, dIn, c float64) *Network {
	return &Network{
		Nodes: []Node{reservoir("R", gradeFt), junction("H", 0)},
		Pipes: []Pipe{usPipe("main", 0, 1, lengthFt, dIn, c)},
	}
}

// TestFireFlowNFPA291 compares the available flow with the hydrant
// flow-test relation of NFPA 291, Q_R = Q_F·(H_R/H_F)^0.54 (DOMAIN.md §4.3,
// §9 item 9), applied to a static and a test-flow solve, and with the
// closed form of the single main, Q = ((H_static − 20 psi)/r)^0.54, r from
// the HW velocity form (hwRGPM, DOMAIN.md §1.1).
func TestFireFlowNFPA291(t *testing.T) {
	tests := []struct {
		name                string
		gradeFt, lengthFt   float64
		dIn, c, testFlowGPM float64
	}{
		{"8-in, 3000 ft, C 110", 250, 3000, 8, 110, 1000},
		{"6-in, 1500 ft, C 90", 200, 1500, 6, 90, 600},
		{"12-in, 5000 ft, C 130", 180, 5000, 12, 130, 1500},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			net := singleMain(tc.gradeFt, tc.lengthFt, tc.dIn, tc.c)
			s, err := NewSolver(net, nil)
			if err != nil {
				t.Fatal(err)
			}
			static, err := s.Solve(nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			test, err := s.Solve([]Flow{0, Flow(tc.testFlowGPM) * USGallonPerMinute}, nil)
			if err != nil {
				t.Fatal(err)
			}
			pStatic := pressureAt(net, static, 1).PSI()
			pTest := pressureAt(net, test, 1).PSI()
			nfpa := tc.testFlowGPM * math.Pow((pStatic-20)/(pStatic-pTest), 0.54)

			res := FireFlow(s, nil, static, []int{1}, FireFlowOptions{})[0]
			if res.Err != nil {
				t.Fatal(res.Err)
			}
			got := res.Available.GPM()
			if math.Abs(got-nfpa) > 0.01*nfpa {
				t.Errorf("available %.2f gpm, NFPA 291 relation %.2f gpm: more than 1 %% apart", got, nfpa)
			}
			closed := math.Pow((tc.gradeFt-20*psiFt)/hwRGPM(tc.dIn, tc.c, tc.lengthFt), 0.54)
			if !(got <= closed+1e-3 && got >= closed-1.001) { // Tolerance 1 gpm below the root
				t.Errorf("available %.3f gpm, closed form %.3f gpm (want within 1 gpm below)", got, closed)
			}
			if p := res.Residual.PSI(); math.Abs(p-20) > 0.1 {
				t.Errorf("residual at the hydrant %.3f psi, want 20 psi", p)
			}
			if res.Limiting != 1 || res.AtCeiling {
				t.Errorf("limiting node %d, at ceiling %v: want the hydrant (1), false", res.Limiting, res.AtCeiling)
			}
			// DOMAIN.md §4.4: 3–6 solves with a good first guess; the power
			// law holds exactly here, so allow that many.
			if res.Solves > 6 {
				t.Errorf("%d solves, want ≤ 6", res.Solves)
			}
		})
	}
}

// TestFireFlowDeadEndBelowLooped: a hydrant at the dead end of a 6-in main
// gets less fire flow than one on a looped 8-in main of the same length
// (common practice, no source: looping and the larger main both cut the
// head loss).
func TestFireFlowDeadEndBelowLooped(t *testing.T) {
	build := func(looped bool) *Network {
		net := &Network{
			Nodes: []Node{reservoir("R", 250), junction("N1", 100), junction("N2", 100), junction("H", 0)},
			Pipes: []Pipe{usPipe("feed", 0, 1, 2000, 12, 120), usPipe("N1-N2", 1, 2, 1000, 12, 120)},
		}
		if looped {
			net.Pipes = append(net.Pipes, usPipe("N1-H", 1, 3, 1000, 8, 120), usPipe("H-N2", 3, 2, 1000, 8, 120))
		} else {
			net.Pipes = append(net.Pipes, usPipe("N1-H", 1, 3, 1000, 6, 120))
		}
		return net
	}
	available := func(net *Network) float64 {
		s, err := NewSolver(net, nil)
		if err != nil {
			t.Fatal(err)
		}
		r := FireFlow(s, nil, nil, []int{3}, FireFlowOptions{})[0]
		if r.Err != nil {
			t.Fatal(r.Err)
		}
		return r.Available.GPM()
	}
	dead, loop := available(build(false)), available(build(true))
	if !(dead < loop) {
		t.Errorf("dead-end 6-in %.1f gpm, looped 8-in %.1f gpm: want the dead end lower", dead, loop)
	}
}

// TestFireFlowLimitingNode: a high junction K beside the hydrant H (joined
// by a short pipe with no flow, so H_K = H_H) reaches 20 psi first. The
// available flow is then the closed form of the main with the grade held
// at z_K + 20 psi, Q = ((H_R − z_K − 20 psi)/r)^0.54 (hwRGPM, DOMAIN.md
// §1.1). With K in another zone, the hydrant itself limits.
func TestFireFlowLimitingNode(t *testing.T) {
	const gradeFt, zKFt, lengthFt, dIn, c = 250, 150, 2000, 8, 120
	net := &Network{
		Nodes: []Node{reservoir("R", gradeFt), junction("H", 0), {ID: "K", Elevation: zKFt * Foot}},
		Pipes: []Pipe{usPipe("main", 0, 1, lengthFt, dIn, c), usPipe("H-K", 1, 2, 200, 6, 120)},
	}
	s, err := NewSolver(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	r := hwRGPM(dIn, c, lengthFt)
	tests := []struct {
		name         string
		zone         []int
		wantLimiting int
		wantGPM      float64
	}{
		{"whole network checked", nil, 2, math.Pow((gradeFt-zKFt-20*psiFt)/r, 0.54)},
		{"high node in another zone", []int{1, 1, 2}, 1, math.Pow((gradeFt-20*psiFt)/r, 0.54)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res := FireFlow(s, nil, nil, []int{1}, FireFlowOptions{Zone: tc.zone})[0]
			if res.Err != nil {
				t.Fatal(res.Err)
			}
			if res.Limiting != tc.wantLimiting {
				t.Errorf("limiting node %d, want %d", res.Limiting, tc.wantLimiting)
			}
			if got := res.Available.GPM(); !(got <= tc.wantGPM+1e-3 && got >= tc.wantGPM-1.001) {
				t.Errorf("available %.3f gpm, closed form %.3f gpm", got, tc.wantGPM)
			}
			// Pressure at H at that flow: its grade H_R − r·Q^1.852 above z = 0.
			wantPSI := (gradeFt - r*math.Pow(res.Available.GPM(), HWExponentFlow)) / psiFt
			if p := res.Residual.PSI(); math.Abs(p-wantPSI) > 0.01 {
				t.Errorf("residual at the hydrant %.3f psi, want %.3f psi", p, wantPSI)
			}
		})
	}
}

// TestFireFlowEdgeCases covers the ends of the search: static pressure
// already below the residual (available 0), a ceiling reached, and a
// hydrant that is not a junction (an error for it alone).
func TestFireFlowEdgeCases(t *testing.T) {
	t.Run("static below residual", func(t *testing.T) {
		s, err := NewSolver(singleMain(40, 1000, 8, 120), nil) // 40 ft = 17.3 psi static
		if err != nil {
			t.Fatal(err)
		}
		res := FireFlow(s, nil, nil, []int{1}, FireFlowOptions{})[0]
		if res.Err != nil || res.Available != 0 || res.Limiting != 1 || res.Solves != 0 {
			t.Errorf("got %+v, want 0 available, limited by the hydrant, no solves", res)
		}
	})
	t.Run("ceiling", func(t *testing.T) {
		s, err := NewSolver(singleMain(250, 500, 16, 130), nil)
		if err != nil {
			t.Fatal(err)
		}
		ceiling := 800 * USGallonPerMinute
		res := FireFlow(s, nil, nil, []int{1}, FireFlowOptions{Ceiling: ceiling})[0]
		if res.Err != nil || !res.AtCeiling || res.Available != ceiling {
			t.Errorf("got %+v, want the 800 gpm ceiling", res)
		}
	})
	t.Run("fixed node as hydrant", func(t *testing.T) {
		s, err := NewSolver(singleMain(250, 1000, 8, 120), nil)
		if err != nil {
			t.Fatal(err)
		}
		var searched atomic.Int64
		res := FireFlow(s, nil, nil, []int{0, 1}, FireFlowOptions{Workers: 2, Searched: func() { searched.Add(1) }})
		if res[0].Err == nil || res[1].Err != nil || !(res[1].Available > 0) {
			t.Errorf("got %+v, want an error for node 0 and a result for node 1", res)
		}
		// Searched reports each hydrant once, failed ones included (it
		// drives the command's progress count).
		if n := searched.Load(); n != 2 {
			t.Errorf("Searched called %d times for 2 hydrants", n)
		}
	})
}

// TestFireFlowDeterministicAndWarm checks that the results do not depend on
// the number of workers (each hydrant's search depends only on the base
// solution) and that warm starts change the available flow by no more than
// the search tolerance (both searches bracket the same root).
func TestFireFlowDeterministicAndWarm(t *testing.T) {
	net := streetGrid(20, 2, 5)
	s, err := NewSolver(net, &Options{DemandFactor: 1.5})
	if err != nil {
		t.Fatal(err)
	}
	base, err := s.Solve(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var hydrants []int
	for i, nd := range net.Nodes {
		if !nd.Fixed && i%10 == 3 {
			hydrants = append(hydrants, i)
		}
	}
	opt := FireFlowOptions{Workers: 1}
	one := FireFlow(s, nil, base, hydrants, opt)
	opt.Workers = 2
	two := FireFlow(s, nil, base, hydrants, opt)
	cold := FireFlow(s, nil, nil, hydrants, opt)
	tol := defaultFireTolerance.GPM()
	for k := range hydrants {
		a, b, c := one[k], two[k], cold[k]
		if a.Err != nil || b.Err != nil || c.Err != nil {
			t.Fatalf("hydrant %d: errors %v, %v, %v", hydrants[k], a.Err, b.Err, c.Err)
		}
		if a != b {
			t.Errorf("hydrant %d: 1 worker %+v, 2 workers %+v", hydrants[k], a, b)
		}
		if d := math.Abs((a.Available - c.Available).GPM()); d > tol {
			t.Errorf("hydrant %d: warm %.3f gpm, cold %.3f gpm", hydrants[k], a.Available.GPM(), c.Available.GPM())
		}
		if !(a.Available > 0) {
			t.Errorf("hydrant %d: no fire flow at all (%+v): the test does not exercise the search", hydrants[k], a)
		}
	}
}
