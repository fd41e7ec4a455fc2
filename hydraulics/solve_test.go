package hydraulics

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// Builders in US units for the test networks.

func reservoir(id string, gradeFt float64) Node {
	return Node{ID: id, Fixed: true, Grade: Head(gradeFt * Foot.Metres())}
}

func junction(id string, demandGPM float64) Node {
	return Node{ID: id, Demand: Flow(demandGPM) * USGallonPerMinute}
}

func usPipe(id string, from, to int, lengthFt, dIn, c float64) Pipe {
	return Pipe{ID: id, From: from, To: to, Length: Length(lengthFt) * Foot, Diameter: Length(dIn) * Inch, C: c}
}

// gpmPerCFS is 1728/231·60 gallons per minute in one ft³/s (DOMAIN.md §3.7).
const gpmPerCFS = 1728.0 / 231 * 60

// hwLossFt is the head loss in ft written out independently from the
// velocity form V = 1.318·C·R^0.63·S^0.54, R = D/4 (DOMAIN.md §1.1), with Q
// in gpm, d in inches and L in ft. The closed forms below are built on it.
func hwLossFt(qGPM, dIn, c, lFt float64) float64 {
	q := math.Abs(qGPM) / gpmPerCFS
	d := dIn / 12
	v := q / (math.Pi / 4 * d * d)
	s := math.Pow(v/(1.318*c*math.Pow(d/4, 0.63)), 1/0.54)
	return math.Copysign(s*lFt, qGPM)
}

// hwRGPM returns r in h = r·Q^(1/0.54), h ft, Q gpm, from hwLossFt.
func hwRGPM(dIn, c, lFt float64) float64 { return hwLossFt(1, dIn, c, lFt) }

// closedFormCase is a network with a closed-form solution.
type closedFormCase struct {
	name      string
	net       *Network
	headsFt   map[int]float64 // node → expected head, ft
	flowsGPM  []float64       // per pipe, expected flow, gpm
	tolHeadFt float64
	tolGPM    float64
}

func closedFormCases() []closedFormCase {
	var cases []closedFormCase

	// One pipe from a reservoir: H_J = H_R − h(Q) (DOMAIN.md §9 item 1:
	// 1,000 gpm in 8 in, C 100, 1,000 ft loses 29.705 ft).
	cases = append(cases, closedFormCase{
		name: "single pipe",
		net: &Network{
			Nodes: []Node{reservoir("R", 150), junction("J", 1000)},
			Pipes: []Pipe{usPipe("P1", 0, 1, 1000, 8, 100)},
		},
		headsFt:   map[int]float64{0: 150, 1: 150 - hwLossFt(1000, 8, 100, 1000)},
		flowsGPM:  []float64{1000},
		tolHeadFt: 1e-6, tolGPM: 1e-5,
	})
	// The same against the handbook number of DOMAIN.md §9 item 1.
	cases = append(cases, closedFormCase{
		name: "single pipe, DOMAIN §9 item 1",
		net: &Network{
			Nodes: []Node{reservoir("R", 150), junction("J", 1000)},
			Pipes: []Pipe{usPipe("P1", 0, 1, 1000, 8, 100)},
		},
		headsFt:   map[int]float64{1: 150 - 29.705},
		flowsGPM:  []float64{1000},
		tolHeadFt: 0.02, tolGPM: 1e-5,
	})

	// Pipes in series: flows by continuity from the far end, heads by
	// summing the losses (closed form from the HW law). Pipe 2 is laid
	// To→From so its flow is negative.
	{
		h1 := 200 - hwLossFt(900, 12, 120, 1500)
		h2 := h1 - hwLossFt(600, 10, 110, 800)
		h3 := h2 - hwLossFt(250, 6, 90, 1200)
		cases = append(cases, closedFormCase{
			name: "three pipes in series",
			net: &Network{
				Nodes: []Node{reservoir("R", 200), junction("J1", 300), junction("J2", 350), junction("J3", 250)},
				Pipes: []Pipe{
					usPipe("S1", 0, 1, 1500, 12, 120),
					usPipe("S2", 2, 1, 800, 10, 110),
					usPipe("S3", 2, 3, 1200, 6, 90),
				},
			},
			headsFt:   map[int]float64{1: h1, 2: h2, 3: h3},
			flowsGPM:  []float64{900, -600, 250},
			tolHeadFt: 1e-6, tolGPM: 1e-5,
		})
	}

	// Two pipes in parallel: equal head loss h, Q_i = (h/r_i)^0.54 and
	// ΣQ_i = Q, so h = (Q/Σ r_i^−0.54)^(1/0.54) (closed form from HW).
	{
		ra, rb := hwRGPM(8, 100, 1000), hwRGPM(6, 120, 1500)
		sum := math.Pow(ra, -0.54) + math.Pow(rb, -0.54)
		h := math.Pow(800/sum, 1/0.54)
		qa, qb := math.Pow(h/ra, 0.54), math.Pow(h/rb, 0.54)
		net := &Network{
			Nodes: []Node{reservoir("R", 100), junction("J", 800)},
			Pipes: []Pipe{usPipe("A", 0, 1, 1000, 8, 100), usPipe("B", 0, 1, 1500, 6, 120)},
		}
		cases = append(cases, closedFormCase{
			name: "two pipes in parallel", net: net,
			headsFt: map[int]float64{1: 100 - h}, flowsGPM: []float64{qa, qb},
			tolHeadFt: 1e-6, tolGPM: 1e-5,
		})
		// DOMAIN.md §6.7 parallel pair: 550.807 / 249.193 gpm, 9.838 ft. Those
		// figures reproduce with the flow exponent rounded to 1.852; with the
		// exact 1/0.54 the split is 550.820 / 249.180 gpm and 9.845 ft, so the
		// check is to 0.1 % of the loss (0.01 ft) and 0.02 gpm.
		cases = append(cases, closedFormCase{
			name: "two pipes in parallel, DOMAIN §6.7", net: net,
			headsFt: map[int]float64{1: 100 - 9.838}, flowsGPM: []float64{550.807, 249.193},
			tolHeadFt: 0.01, tolGPM: 0.02,
		})
	}

	// Two reservoirs at different grades joined through a junction with no
	// demand, plus a direct pipe between them: Q = (ΔH/Σr)^0.54 for each
	// path (closed form from HW).
	{
		r1, r2, r3 := hwRGPM(10, 120, 2000), hwRGPM(8, 100, 1000), hwRGPM(6, 110, 2500)
		q := math.Pow(30/(r1+r2), 0.54)
		qDirect := math.Pow(30/r3, 0.54)
		cases = append(cases, closedFormCase{
			name: "two reservoirs",
			net: &Network{
				Nodes: []Node{reservoir("high", 230), junction("J", 0), reservoir("low", 200)},
				Pipes: []Pipe{usPipe("T1", 0, 1, 2000, 10, 120), usPipe("T2", 1, 2, 1000, 8, 100), usPipe("T3", 2, 0, 2500, 6, 110)},
			},
			headsFt:   map[int]float64{0: 230, 1: 230 - r1*math.Pow(q, 1/0.54), 2: 200},
			flowsGPM:  []float64{q, q, -qDirect},
			tolHeadFt: 1e-6, tolGPM: 1e-5,
		})
	}
	return cases
}

func TestSolveClosedForms(t *testing.T) {
	for _, tc := range closedFormCases() {
		t.Run(tc.name, func(t *testing.T) {
			sol, err := Solve(tc.net, nil)
			if err != nil {
				t.Fatal(err)
			}
			for i := range tc.net.Nodes {
				want, ok := tc.headsFt[i]
				if !ok {
					continue
				}
				if got := sol.Head[i].Feet(); math.Abs(got-want) > tc.tolHeadFt {
					t.Errorf("head at %s: got %.6f ft, want %.6f ± %g", tc.net.Nodes[i].ID, got, want, tc.tolHeadFt)
				}
			}
			for j, want := range tc.flowsGPM {
				if got := sol.Flow[j].GPM(); math.Abs(got-want) > tc.tolGPM {
					t.Errorf("flow in %s: got %.6f gpm, want %.6f ± %g", tc.net.Pipes[j].ID, got, want, tc.tolGPM)
				}
			}
			checkBalance(t, sol, 1e-9)
		})
	}
}

// checkBalance asserts mass balance (Supply = Demand to rel of the larger
// of the demand and the largest pipe flow) and small residuals.
func checkBalance(t *testing.T, sol *Solution, rel float64) {
	t.Helper()
	scale := math.Abs(float64(sol.Demand))
	for _, q := range sol.Flow {
		scale = math.Max(scale, math.Abs(float64(q)))
	}
	if d := math.Abs(float64(sol.Supply - sol.Demand)); d > rel*scale {
		t.Errorf("supply %.12g m³/s, demand %.12g m³/s: relative difference %.2g > %g", float64(sol.Supply), float64(sol.Demand), d/scale, rel)
	}
	if sol.MaxHeadResidual > 1e-4 {
		t.Errorf("head residual %g m", float64(sol.MaxHeadResidual))
	}
	if sol.MaxContinuityResidual > Flow(rel*scale) {
		t.Errorf("continuity residual %g m³/s", float64(sol.MaxContinuityResidual))
	}
}

// referenceNetwork is the looped network of DOMAIN.md §6.7: reservoir R at
// 150 ft, nodes 1–4, all pipes 1,000 ft.
func referenceNetwork() *Network {
	return &Network{
		Nodes: []Node{
			reservoir("R", 150),
			junction("1", 100), junction("2", 300), junction("3", 300), junction("4", 300),
		},
		Pipes: []Pipe{
			usPipe("R-1", 0, 1, 1000, 12, 120),
			usPipe("1-2", 1, 2, 1000, 8, 100),
			usPipe("1-3", 1, 3, 1000, 8, 100),
			usPipe("2-4", 2, 4, 1000, 6, 100),
			usPipe("3-4", 3, 4, 1000, 8, 100),
			usPipe("2-3", 2, 3, 1000, 6, 100),
		},
	}
}

// DOMAIN.md §6.7 / §9 item 13 [computed there; GGA and Hardy Cross agree].
var (
	referenceHeadsFt = map[int]float64{1: 147.060, 2: 140.457, 3: 140.130, 4: 138.665}
	referenceFlowGPM = []float64{1000.000, 444.137, 455.863, 103.039, 196.961, 41.098}
)

func TestSolveReferenceNetwork(t *testing.T) {
	net := referenceNetwork()
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkReference(t, net, sol)
	checkBalance(t, sol, 1e-9)
	if math.Abs(sol.Demand.GPM()-1000) > 1e-9 {
		t.Errorf("demand %.9f gpm, want 1000", sol.Demand.GPM())
	}
	t.Logf("reference network: %d iterations to 1e-8, relative change %.2g, head residual %.2g m",
		sol.Iterations, sol.RelativeFlowChange, float64(sol.MaxHeadResidual))

	// DOMAIN.md §9 item 13: ≤ 10 iterations at 1e-3 relative flow change.
	loose, err := Solve(net, &Options{Tolerance: 1e-3, HeadTolerance: 1})
	if err != nil {
		t.Fatal(err)
	}
	if loose.Iterations > 10 {
		t.Errorf("%d iterations at 1e-3, want ≤ 10", loose.Iterations)
	}
	t.Logf("reference network: %d iterations to 1e-3", loose.Iterations)
}

// hardyCross solves the reference network by the loop method of Cross
// (1936), DOMAIN.md §6.5, independently of the solver: start from flows
// that balance continuity, correct each loop by
// ΔQ = −Σ s·r·Q|Q|^(n−1) / Σ n·r·|Q|^(n−1), repeat. Resistances use the
// DOMAIN.md §6.7 form r = 4.727328·L/(C^1.852·(d/12)^4.87037), Q in cfs.
// It returns the flows in gpm and the number of sweeps.
func hardyCross(t *testing.T) ([]float64, int) {
	t.Helper()
	const n = 1 / 0.54
	type pipe struct{ l, d, c float64 }
	pipes := []pipe{{1000, 12, 120}, {1000, 8, 100}, {1000, 8, 100}, {1000, 6, 100}, {1000, 8, 100}, {1000, 6, 100}}
	r := make([]float64, len(pipes))
	for j, p := range pipes {
		r[j] = 4.727328 * p.l / (math.Pow(p.c, n) * math.Pow(p.d/12, 4.87037))
	}
	// Balanced start (gpm → cfs): R-1 1000, 1-2 500, 1-3 400, 2-4 100, 3-4 200, 2-3 100.
	q := []float64{1000, 500, 400, 100, 200, 100}
	for j := range q {
		q[j] /= gpmPerCFS
	}
	type member struct {
		pipe int
		sign float64
	}
	loops := [][]member{
		{{1, +1}, {5, +1}, {2, -1}}, // 1→2→3→1
		{{3, +1}, {4, -1}, {5, -1}}, // 2→4→3→2
	}
	for sweep := 1; sweep <= 1000; sweep++ {
		largest := 0.0
		for _, loop := range loops {
			var num, den float64
			for _, m := range loop {
				qa := math.Abs(q[m.pipe])
				num += m.sign * r[m.pipe] * q[m.pipe] * math.Pow(qa, n-1)
				den += n * r[m.pipe] * math.Pow(qa, n-1)
			}
			dq := -num / den
			for _, m := range loop {
				q[m.pipe] += m.sign * dq
			}
			largest = math.Max(largest, math.Abs(dq))
		}
		if largest < 1e-13 {
			for j := range q {
				q[j] *= gpmPerCFS
			}
			return q, sweep
		}
	}
	t.Fatal("Hardy Cross did not converge in 1000 sweeps")
	return nil, 0
}

func TestSolveAgreesWithHardyCross(t *testing.T) {
	want, sweeps := hardyCross(t)
	sol, err := Solve(referenceNetwork(), nil)
	if err != nil {
		t.Fatal(err)
	}
	// DOMAIN.md §6.5: Hardy Cross reproduced the GGA flows to 0.001 gpm.
	for j, w := range want {
		if got := sol.Flow[j].GPM(); math.Abs(got-w) > 0.001 {
			t.Errorf("pipe %d: GGA %.5f gpm, Hardy Cross %.5f gpm", j, got, w)
		}
	}
	// Heads from the Hardy Cross flows by walking out from R.
	r := func(dIn, c float64) float64 { return hwRGPM(dIn, c, 1000) }
	h1 := 150 - r(12, 120)*math.Pow(want[0], 1/0.54)
	h2 := h1 - r(8, 100)*math.Pow(want[1], 1/0.54)
	h3 := h1 - r(8, 100)*math.Pow(want[2], 1/0.54)
	h4 := h2 - r(6, 100)*math.Pow(want[3], 1/0.54)
	for i, w := range map[int]float64{1: h1, 2: h2, 3: h3, 4: h4} {
		if got := sol.Head[i].Feet(); math.Abs(got-w) > 0.001 {
			t.Errorf("H%d: GGA %.5f ft, Hardy Cross %.5f ft", i, got, w)
		}
	}
	t.Logf("Hardy Cross: %d sweeps", sweeps)
}

func TestSolveZeroFlowSymmetric(t *testing.T) {
	// DOMAIN.md §6.7 zero-flow case / §9 item 14.
	net := &Network{
		Nodes: []Node{reservoir("R", 150), junction("1", 0), junction("2", 400), junction("3", 400)},
		Pipes: []Pipe{
			usPipe("R-1", 0, 1, 1000, 12, 120),
			usPipe("1-2", 1, 2, 1000, 8, 100),
			usPipe("1-3", 1, 3, 1000, 8, 100),
			usPipe("2-3", 2, 3, 1000, 6, 100),
		},
	}
	sol, err := Solve(net, &Options{Tolerance: 1e-8})
	if err != nil {
		t.Fatal(err)
	}
	for i, h := range sol.Head {
		if math.IsNaN(float64(h)) || math.IsInf(float64(h), 0) {
			t.Errorf("head %d is %v", i, h)
		}
	}
	for j, q := range sol.Flow {
		if math.IsNaN(float64(q)) || math.IsInf(float64(q), 0) {
			t.Errorf("flow %d is %v", j, q)
		}
	}
	if q := sol.Flow[3].GPM(); math.Abs(q) > 1e-6 {
		t.Errorf("Q23 = %g gpm, want 0 ± 1e-6", q)
	}
	for i, want := range map[int]float64{1: 148.055, 2: 142.615, 3: 142.615} {
		if got := sol.Head[i].Feet(); math.Abs(got-want) > 0.01 {
			t.Errorf("H%d = %.4f ft, want %.3f ± 0.01", i, got, want)
		}
	}
	checkBalance(t, sol, 1e-9)
	t.Logf("zero-flow case: %d iterations", sol.Iterations)

	// DOMAIN.md §6.4: a 1e-10 tolerance never stopped in 199 iterations in
	// this case because of round-off; the solver must stop at the round-off
	// floor instead of failing, with the same answer.
	tight, err := Solve(net, &Options{Tolerance: 1e-12})
	if err != nil {
		t.Fatalf("tolerance 1e-12: %v", err)
	}
	if tight.Iterations >= 20 {
		t.Errorf("tolerance 1e-12 took %d iterations, want < 20", tight.Iterations)
	}
	for i := range sol.Head {
		if d := math.Abs(float64(tight.Head[i] - sol.Head[i])); d > 1e-9 {
			t.Errorf("head %d moved by %g m at the tighter tolerance", i, d)
		}
	}
	t.Logf("zero-flow case at 1e-12: %d iterations, relative change %.2g", tight.Iterations, tight.RelativeFlowChange)
}

func TestSolveUnsuppliedComponent(t *testing.T) {
	net := referenceNetwork()
	// An island of two junctions (7, 8) and a junction (5) joined only by a
	// closed pipe, plus a junction (6) with no pipe at all.
	net.Nodes = append(net.Nodes, junction("5", 50), junction("6", 10), junction("7", 20), junction("8", 30))
	closed := usPipe("4-5", 4, 5, 500, 6, 100)
	closed.Closed = true
	net.Pipes = append(net.Pipes, closed, usPipe("7-8", 7, 8, 400, 6, 100))
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := sol.Unsupplied, []int{5, 6, 7, 8}; !equalInts(got, want) {
		t.Errorf("unsupplied %v, want %v", got, want)
	}
	for _, i := range []int{5, 6, 7, 8} {
		if !math.IsNaN(float64(sol.Head[i])) {
			t.Errorf("head of unsupplied node %d is %v, want NaN", i, sol.Head[i])
		}
	}
	for _, j := range []int{6, 7} {
		if sol.Flow[j] != 0 {
			t.Errorf("flow in %s is %v, want 0", net.Pipes[j].ID, sol.Flow[j])
		}
	}
	// The supplied part is the reference network.
	checkReference(t, net, sol)
	// Unsupplied demand is not counted.
	if math.Abs(sol.Demand.GPM()-1000) > 1e-9 {
		t.Errorf("demand %.6f gpm, want 1000 (unsupplied excluded)", sol.Demand.GPM())
	}
	checkBalance(t, sol, 1e-9)
}

func TestSolveClosedPipes(t *testing.T) {
	t.Run("parallel pair with one closed is a single pipe", func(t *testing.T) {
		net := &Network{
			Nodes: []Node{reservoir("R", 100), junction("J", 800)},
			Pipes: []Pipe{usPipe("A", 0, 1, 1000, 8, 100), usPipe("B", 0, 1, 1500, 6, 120)},
		}
		net.Pipes[1].Closed = true
		sol, err := Solve(net, nil)
		if err != nil {
			t.Fatal(err)
		}
		// Closed form: H_J = 100 − h(800 gpm in A) (HW velocity form).
		if got, want := sol.Head[1].Feet(), 100-hwLossFt(800, 8, 100, 1000); math.Abs(got-want) > 1e-6 {
			t.Errorf("H_J %.6f ft, want %.6f", got, want)
		}
		if sol.Flow[1] != 0 {
			t.Errorf("closed pipe carries %v", sol.Flow[1])
		}
	})
	t.Run("closed pipe equals removed pipe", func(t *testing.T) {
		closed := referenceNetwork()
		closed.Pipes[5].Closed = true // 2-3
		removed := referenceNetwork()
		removed.Pipes = removed.Pipes[:5]
		a, err := Solve(closed, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Solve(removed, nil)
		if err != nil {
			t.Fatal(err)
		}
		for i := range b.Head {
			if d := math.Abs(float64(a.Head[i] - b.Head[i])); d > 1e-9 {
				t.Errorf("head %d differs by %g m", i, d)
			}
		}
		for j := range b.Flow {
			if d := math.Abs(float64(a.Flow[j] - b.Flow[j])); d > 1e-12 {
				t.Errorf("flow %d differs by %g m³/s", j, d)
			}
		}
		if a.Flow[5] != 0 {
			t.Errorf("closed pipe carries %v", a.Flow[5])
		}
		checkBalance(t, a, 1e-9)
	})
}

func TestSolveDemandFactor(t *testing.T) {
	// Single pipe, closed form: with a factor of 1.5 the flow is 1,500 gpm
	// and H_J = H_R − h(1,500 gpm) (HW velocity form).
	net := &Network{
		Nodes: []Node{reservoir("R", 150), junction("J", 1000)},
		Pipes: []Pipe{usPipe("P1", 0, 1, 1000, 12, 120)},
	}
	sol, err := Solve(net, &Options{DemandFactor: 1.5})
	if err != nil {
		t.Fatal(err)
	}
	if got := sol.Flow[0].GPM(); math.Abs(got-1500) > 1e-6 {
		t.Errorf("flow %.6f gpm, want 1500", got)
	}
	// DOMAIN.md §9 item 3: 1,500 gpm in 12 in, C 120 loses 6.233 ft/kft.
	if got := 150 - sol.Head[1].Feet(); math.Abs(got-6.233) > 0.01 {
		t.Errorf("loss %.4f ft, want 6.233 ± 0.01", got)
	}
	if got := sol.Demand.GPM(); math.Abs(got-1500) > 1e-9 {
		t.Errorf("demand %.9f gpm, want 1500", got)
	}
	checkBalance(t, sol, 1e-9)
}

func TestSolveNotConverged(t *testing.T) {
	sol, err := Solve(referenceNetwork(), &Options{MaxIterations: 1})
	var nc *NotConvergedError
	if !errors.As(err, &nc) {
		t.Fatalf("error %v, want *NotConvergedError", err)
	}
	if nc.Iterations != 1 || sol == nil || sol.Iterations != 1 {
		t.Errorf("iterations %d (solution %v), want 1 with the last iterate", nc.Iterations, sol != nil)
	}
	if !(nc.RelativeFlowChange > 1e-8) || nc.Pipe < 0 || nc.Pipe >= 6 {
		t.Errorf("error data %+v: want a relative change above tolerance and a worst pipe index", nc)
	}
	if !strings.Contains(err.Error(), "1 iterations") {
		t.Errorf("message %q does not say the iteration count", err)
	}
}

func TestSolveErrors(t *testing.T) {
	noFixed := &Network{Nodes: []Node{junction("A", 1), junction("B", 1)}, Pipes: []Pipe{usPipe("AB", 0, 1, 100, 6, 100)}}
	island := &Network{Nodes: []Node{reservoir("R", 100), junction("A", 1), junction("B", 1)}, Pipes: []Pipe{usPipe("AB", 1, 2, 100, 6, 100)}}
	bad := func(edit func(*Network)) *Network {
		n := referenceNetwork()
		edit(n)
		return n
	}
	tests := []struct {
		name string
		net  *Network
		want string // substring of the error
	}{
		{"no fixed node", noFixed, "no fixed-grade node"},
		{"no supplied junction", island, "no junction is connected"},
		{"index out of range", bad(func(n *Network) { n.Pipes[2].To = 9 }), `"1-3"`},
		{"self loop", bad(func(n *Network) { n.Pipes[3].To = 2 }), `"2-4"`},
		{"zero length", bad(func(n *Network) { n.Pipes[1].Length = 0 }), `(id "1-2"): length`},
		{"negative diameter", bad(func(n *Network) { n.Pipes[4].Diameter = -1 }), `(id "3-4"): diameter`},
		{"zero C", bad(func(n *Network) { n.Pipes[5].C = 0 }), `(id "2-3"): C`},
		{"NaN demand", bad(func(n *Network) { n.Nodes[3].Demand = Flow(math.NaN()) }), `(id "3"): demand`},
		{"infinite grade", bad(func(n *Network) { n.Nodes[0].Grade = Head(math.Inf(1)) }), `(id "R"): grade`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Solve(tc.net, nil)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one containing %s", err, tc.want)
			}
		})
	}
	if _, err := Solve(island, nil); !errors.Is(err, ErrNoSupply) {
		t.Errorf("island: %v, want ErrNoSupply", err)
	}
	if _, err := Solve(referenceNetwork(), &Options{DemandFactor: -1}); err == nil {
		t.Error("negative demand factor accepted")
	}
}

func TestSolveGridMassBalanceAndDeterminism(t *testing.T) {
	// A synthetic street grid (see bench_test.go): continuity and energy
	// must hold at every node and pipe, and two runs must be identical.
	net := streetGrid(40, 3, 7)
	a, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkBalance(t, a, 1e-9)
	// Energy: recompute every head residual from the public HeadLoss.
	for j, p := range net.Pipes {
		if p.Closed {
			continue
		}
		res := float64(a.Head[p.From] - a.Head[p.To] - HeadLoss(a.Flow[j], p.Diameter, p.Length, p.C))
		if math.Abs(res) > 1e-6 {
			t.Fatalf("pipe %s: head residual %g m", p.ID, res)
		}
	}
	b, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.Head {
		if a.Head[i] != b.Head[i] {
			t.Fatalf("head %d differs between runs", i)
		}
	}
	if a.Iterations != b.Iterations {
		t.Errorf("iterations %d vs %d", a.Iterations, b.Iterations)
	}
	t.Logf("grid %d nodes, %d pipes: %d iterations, nnz(L) %d", len(net.Nodes), len(net.Pipes), a.Iterations, a.FactorNonzeros)
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestSolveStiffShortPipes(t *testing.T) {
	// Short, wide connectors (1 m of 24 in) at near-zero flow have tiny
	// resistance; DOMAIN.md §6.4 warns that round-off from their huge
	// conductance stalls convergence. The solve must still converge at the
	// default tolerance, keep mass balance and satisfy energy in every
	// ordinary pipe.
	net := streetGrid(30, 2, 11)
	for j := range net.Pipes {
		if j%15 == 0 {
			net.Pipes[j].Length = 1
			net.Pipes[j].Diameter = 24 * Inch
		}
	}
	// Zero-demand dead-end stubs of 1 m of 36 in.
	for k := 0; k < 20; k++ {
		at := 37 * k
		net.Nodes = append(net.Nodes, Node{ID: "stub", Elevation: 15})
		net.Pipes = append(net.Pipes, Pipe{ID: "S", From: at, To: len(net.Nodes) - 1, Length: 1, Diameter: 36 * Inch, C: 130})
	}
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	// The flow update Q = … + p·(H_a − H_b) rounds to about p·ε·H per pipe:
	// with p up to 1e4 m²/s and H ≈ 30 m that is 1e-10 m³/s, so mass balance
	// holds here to 1e-8 of the largest flow rather than 1e-9.
	checkBalance(t, sol, 1e-8)
	for j, p := range net.Pipes {
		res := math.Abs(float64(sol.Head[p.From] - sol.Head[p.To] - HeadLoss(sol.Flow[j], p.Diameter, p.Length, p.C)))
		if res > 1e-6 {
			t.Errorf("pipe %d (%.0f m of %.0f in): head residual %g m against Hazen-Williams", j, p.Length.Metres(), p.Diameter.Inches(), res)
		}
	}
	t.Logf("stiff grid: %d iterations", sol.Iterations)
}

// checkReference compares the first nodes and pipes of sol with the
// reference network's heads and flows: DOMAIN.md §6.7 and §9 item 13 assert
// ±0.02 ft and ±0.05 gpm.
func checkReference(t *testing.T, net *Network, sol *Solution) {
	t.Helper()
	for i, want := range referenceHeadsFt {
		if got := sol.Head[i].Feet(); math.Abs(got-want) > 0.02 {
			t.Errorf("H%s = %.4f ft, want %.3f ± 0.02", net.Nodes[i].ID, got, want)
		}
	}
	for j, want := range referenceFlowGPM {
		if got := sol.Flow[j].GPM(); math.Abs(got-want) > 0.05 {
			t.Errorf("Q(%s) = %.4f gpm, want %.3f ± 0.05", net.Pipes[j].ID, got, want)
		}
	}
}
