package hydraulics

import (
	"math"
	"testing"
)

func TestStandardSizes(t *testing.T) {
	sizes := StandardSizes()
	// DOMAIN.md §5.1: 4 … 64 in.
	wantNominal := []float64{4, 6, 8, 10, 12, 14, 16, 18, 20, 24, 30, 36, 42, 48, 54, 60, 64}
	if len(sizes) != len(wantNominal) {
		t.Fatalf("%d sizes, want %d", len(sizes), len(wantNominal))
	}
	for k, s := range sizes {
		if math.Abs(s.Nominal.Inches()-wantNominal[k]) > 1e-9 {
			t.Errorf("size %d nominal %.3f in, want %v", k, s.Nominal.Inches(), wantNominal[k])
		}
		if k > 0 && !(s.Inside > sizes[k-1].Inside) {
			t.Errorf("inside diameters not ascending at %v in", wantNominal[k])
		}
	}
	// DOMAIN.md §5.3: DR18 IDs at minimum wall, 4–12 in.
	wantID := map[float64]float64{4: 4.267, 6: 6.133, 8: 8.044, 10: 9.867, 12: 11.733}
	for _, s := range sizes {
		if w, ok := wantID[s.Nominal.Inches()]; ok {
			if got := s.Inside.Inches(); math.Abs(got-w) > 0.0005 {
				t.Errorf("%v-in ID %.4f in, want %.3f", s.Nominal.Inches(), got, w)
			}
		}
	}
}

func TestCureSizing(t *testing.T) {
	// DOMAIN.md §9 item 12 and §5.5: 1,000 gpm, C 130, 10 ft/kft.
	q := 1000 * USGallonPerMinute
	dSlope := RequiredInside(q, 130, 0.010, 0)
	if got := dSlope.Inches(); math.Abs(got-9.05) > 0.01 {
		t.Errorf("slope-limited d_req %.4f in, want 9.05 ± 0.01", got)
	}
	// DOMAIN.md §5.5: V_max = 5 ft/s alone needs 9.04 in; the larger governs.
	dVel := RequiredInside(q, 130, 0, 5*FootPerSecond)
	if got := dVel.Inches(); math.Abs(got-9.04) > 0.01 {
		t.Errorf("velocity-limited d_req %.4f in, want 9.04 ± 0.01", got)
	}
	if both := RequiredInside(q, 130, 0.010, 5*FootPerSecond); both != max(dSlope, dVel) {
		t.Errorf("combined d_req %.4f in, want the larger %.4f", both.Inches(), max(dSlope, dVel).Inches())
	}
	// DOMAIN.md §5.5 formula written out: d = [10.456·Q^1.852/(C^1.852·S)]^(1/4.8704).
	if got, w := dSlope.Inches(), math.Pow(10.456*math.Pow(1000, 1/0.54)/(math.Pow(130, 1/0.54)*0.010), 0.54/2.63); math.Abs(got-w) > 0.001 {
		t.Errorf("d_req %.4f in, §5.5 formula %.4f in", got, w)
	}
	size, ok := SmallestSize(StandardSizes(), dSlope)
	if !ok || math.Abs(size.Nominal.Inches()-10) > 1e-9 {
		t.Fatalf("chosen %v in (%v), want 10-in nominal", size.Nominal.Inches(), ok)
	}
	if got := size.Inside.Inches(); math.Abs(got-9.867) > 0.001 {
		t.Errorf("10-in DR18 ID %.4f in, want 9.867", got)
	}
	if got := 1000 * FrictionSlope(q, size.Inside, 130); math.Abs(got-6.58) > 0.01 {
		t.Errorf("unit head loss %.4f ft/kft, want 6.58 ± 0.01", got)
	}
	if got := MeanVelocity(q, size.Inside).FPS(); math.Abs(got-4.20) > 0.005 {
		t.Errorf("velocity %.4f ft/s, want 4.20 ± 0.005", got)
	}
	// The capacity of the exact required diameter is the flow itself.
	if got := CarryingFlow(dSlope, 130, 0.010).GPM(); math.Abs(got-1000) > 1e-6 {
		t.Errorf("capacity at d_req %.6f gpm, want 1000", got)
	}
	// DOMAIN.md §5.5: 10-in CL-DI, ID 10.455 in, loses 4.96 ft/kft.
	if got := 1000 * FrictionSlope(q, 10.455*Inch, 130); math.Abs(got-4.96) > 0.01 {
		t.Errorf("10-in CL-DI %.4f ft/kft, want 4.96", got)
	}
	if _, ok := SmallestSize(StandardSizes(), 70*Inch); ok {
		t.Error("a 70-in requirement must find no standard size")
	}
	if RequiredInside(0, 130, 0.01, 0) != 0 || RequiredInside(q, 130, 0, 0) != 0 {
		t.Error("zero flow or no limits must require nothing")
	}
}

func TestCapacityForm(t *testing.T) {
	// DESIGN.md "Methods": Q = C·d^2.63·S^0.54/148 (gpm, in, ft per 1,000 ft).
	// The rounded 148 differs from the exact 148.07 by 0.05 %.
	tests := []struct {
		name    string
		dIn, c  float64
		sPerKft float64
	}{
		{"10-in DR18 at C 130, 10 ft/kft", 9.867, 130, 10},
		{"8 in at C 100, 29.705 ft/kft", 8, 100, 29.705},
		{"12 in at C 120, 6.233 ft/kft", 12, 120, 6.233},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			want := tc.c * math.Pow(tc.dIn, 2.63) * math.Pow(tc.sPerKft, 0.54) / 148
			got := CarryingFlow(Length(tc.dIn)*Inch, tc.c, tc.sPerKft/1000).GPM()
			if rel := math.Abs(got-want) / want; rel > 0.001 {
				t.Errorf("capacity %.3f gpm, 148-form %.3f gpm (%.3f %%)", got, want, 100*rel)
			}
		})
	}
	// DOMAIN.md §9 items 1 and 3 read backwards: at 29.705 ft/kft an 8-in
	// C 100 main carries 1,000 gpm; at 6.233 ft/kft a 12-in C 120 carries 1,500.
	if got := CarryingFlow(8*Inch, 100, 0.029705).GPM(); math.Abs(got-1000) > 1 {
		t.Errorf("8-in capacity %.2f gpm, want 1000 ± 1", got)
	}
	if got := CarryingFlow(12*Inch, 120, 0.006233).GPM(); math.Abs(got-1500) > 1.5 {
		t.Errorf("12-in capacity %.2f gpm, want 1500 ± 1.5", got)
	}
}

func TestLiningCapacityRatio(t *testing.T) {
	// DOMAIN.md §9 item 8: (130/60)·(7.75/8)^2.63 = 1.993 ± 0.001.
	const s = 0.005
	ratio := float64(CarryingFlow(7.75*Inch, 130, s) / CarryingFlow(8*Inch, 60, s))
	if math.Abs(ratio-1.993) > 0.001 {
		t.Errorf("capacity ratio %.4f, want 1.993 ± 0.001", ratio)
	}
}

func TestCheckPipes(t *testing.T) {
	// One 8-in C 100 main carrying 1,000 gpm (DOMAIN.md §9 item 1: 29.705
	// ft/kft, 6.383 ft/s), a parallel closed main, and the item 12 limits.
	net := &Network{
		Nodes: []Node{reservoir("R", 150), junction("J", 1000)},
		Pipes: []Pipe{usPipe("A", 0, 1, 1000, 8, 100), usPipe("B", 0, 1, 1000, 6, 100)},
	}
	net.Pipes[1].Closed = true
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	lim := Limits{MaxSlope: 0.010, MaxVelocity: 5 * FootPerSecond, MinPressure: 20 * PoundPerSquareInch, DesignC: 130, Sizes: StandardSizes()}
	checks := CheckPipes(net, sol, lim)
	if len(checks) != 2 {
		t.Fatalf("%d checks, want 2", len(checks))
	}
	a := checks[0]
	if got := 1000 * a.Slope; math.Abs(got-29.705) > 0.02 {
		t.Errorf("slope %.4f ft/kft, want 29.705", got)
	}
	if got := a.Velocity.FPS(); math.Abs(got-6.383) > 0.001 {
		t.Errorf("velocity %.4f ft/s, want 6.383", got)
	}
	// Capacity by the 148 form (DESIGN.md "Methods"), to its 0.05 %.
	capWant := 100 * math.Pow(8, 2.63) * math.Pow(10, 0.54) / 148
	if got := a.Capacity.GPM(); math.Abs(got-capWant)/capWant > 0.001 {
		t.Errorf("capacity %.2f gpm, want %.2f", got, capWant)
	}
	if got, w := a.Deficit.GPM(), 1000-a.Capacity.GPM(); math.Abs(got-w) > 1e-9 {
		t.Errorf("deficit %.4f gpm, want %.4f", got, w)
	}
	if !a.OverSlope || !a.OverVelocity {
		t.Errorf("over slope %v, over velocity %v; want both", a.OverSlope, a.OverVelocity)
	}
	// DOMAIN.md §9 item 12: 9.05 in required, 10-in nominal.
	if got := a.RequiredInside.Inches(); math.Abs(got-9.05) > 0.01 {
		t.Errorf("required inside %.4f in, want 9.05", got)
	}
	if got := a.Required.Nominal.Inches(); got != 10 {
		t.Errorf("required %v in, want 10", got)
	}
	b := checks[1]
	if b.Flow != 0 || b.Deficit != 0 || b.OverSlope || b.OverVelocity {
		t.Errorf("closed pipe check %+v, want zero flow and no failure", b)
	}
	if CheckPipes(net, &Solution{}, lim) != nil {
		t.Error("a solution of another network must give nil")
	}
}

func TestLowPressureAndNodePressure(t *testing.T) {
	// DOMAIN.md §3.7: 1 ft of head = 0.43333 psi at γ = 62.4 lbf/ft³.
	n := Node{Elevation: 50 * Foot}
	if got := NodePressure(n, Head(150*Foot.Metres())).PSI(); math.Abs(got-43.333) > 0.001 {
		t.Errorf("100 ft above ground: %.4f psi, want 43.333", got)
	}
	// Reference network (DOMAIN.md §6.7, elevations 0): H2 = 140.457 →
	// 60.865 psi, H3 = 140.130 → 60.723 psi, H4 = 138.665 → 60.088 psi.
	net := referenceNetwork()
	net.Nodes = append(net.Nodes, junction("island", 5))
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		psi  float64
		want []int
	}{
		{"60.8 psi", 60.8, []int{3, 4}},
		{"60.5 psi", 60.5, []int{4}},
		{"61 psi", 61, []int{2, 3, 4}},
		{"20 psi", 20, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := LowPressure(net, sol, Limits{MinPressure: Pressure(tc.psi) * PoundPerSquareInch})
			if !equalInts(got, tc.want) {
				t.Errorf("low-pressure nodes %v, want %v (unsupplied and fixed nodes excluded)", got, tc.want)
			}
		})
	}
}

// The utility's minimum main size bounds the cure from below: a main that
// a new 4-in would cure hydraulically still gets the minimum size, while a
// larger hydraulic need is unaffected (DOMAIN.md §3.4: 6 in for mains that
// supply hydrants, Ten States Standards; §9 item 12 for the 10-in case).
func TestCheckPipesMinimumSize(t *testing.T) {
	net := &Network{
		Nodes: []Node{{ID: "R", Fixed: true, Grade: 100}, {ID: "J"}},
		Pipes: []Pipe{{ID: "P", From: 0, To: 1, Length: 1000 * Foot, Diameter: 4 * Inch, C: 74}},
	}
	cases := []struct {
		name       string
		flowGPM    float64
		minNominal Length
		want       Length
	}{
		{"small flow, no minimum", 50, 0, 4 * Inch},
		{"small flow, 6-in minimum", 50, 6 * Inch, 6 * Inch},
		{"large flow, 6-in minimum", 1000, 6 * Inch, 10 * Inch},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sol := &Solution{Head: []Head{100, 90}, Flow: []Flow{Flow(c.flowGPM) * USGallonPerMinute}}
			lim := Limits{MaxSlope: 0.010, MaxVelocity: 5 * FootPerSecond, DesignC: 130, Sizes: StandardSizes(), MinNominal: c.minNominal}
			got := CheckPipes(net, sol, lim)[0].Required.Nominal
			if math.Abs(float64(got-c.want)) > 1e-9 {
				t.Errorf("required %.2f in, want %.2f in", got.Inches(), c.want.Inches())
			}
		})
	}
}

// On a network large enough to be checked on several goroutines, every
// pipe gets its own check: its flow, velocity and slope are those of its
// own flow and size (MeanVelocity, FrictionSlope), at the index it has.
func TestCheckPipesChunked(t *testing.T) {
	net := streetGrid(150, 6, 3) // about 29,000 pipes
	sol, err := Solve(net, nil)
	if err != nil {
		t.Fatal(err)
	}
	lim := Limits{MaxSlope: 10.0 / 1000, MaxVelocity: 5 * FootPerSecond}
	checks := CheckPipes(net, sol, lim)
	if len(checks) != len(net.Pipes) || len(net.Pipes) < 2*8192 {
		t.Fatalf("%d checks for %d pipes", len(checks), len(net.Pipes))
	}
	for j, p := range net.Pipes {
		q := sol.Flow[j]
		c := checks[j]
		if c.Flow != q || c.Velocity != MeanVelocity(q, p.Diameter) || c.Slope != FrictionSlope(q, p.Diameter, p.C) ||
			c.OverSlope != (c.Slope > lim.MaxSlope) || c.OverVelocity != (c.Velocity > lim.MaxVelocity) {
			t.Fatalf("pipe %d: check %+v for flow %v", j, c, q)
		}
	}
}
