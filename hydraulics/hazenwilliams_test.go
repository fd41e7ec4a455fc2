package hydraulics

import (
	"math"
	"testing"
)

// roundTo rounds v to the given number of decimals.
func roundTo(v float64, decimals int) float64 {
	s := math.Pow(10, float64(decimals))
	return math.Round(v*s) / s
}

func TestHWConstantsMatchHandbookForms(t *testing.T) {
	tests := []struct {
		name     string
		got      float64
		printed  float64 // handbook form, DOMAIN.md §1.2/§1.3 and DESIGN.md "Methods"
		decimals int     // digits printed after the point
		exact    float64 // exact-derived value, DOMAIN.md §1.2/§1.3 [computed there]
		tol      float64 // on exact, in the constant's own units
	}{
		// DOMAIN.md §1.2: Q = 0.43222·C·D^2.63·S^0.54 (cfs, ft) → K = 1/0.43222.
		{"cfs-ft 2.31", HWFlowConstantCFSFeet(), 2.31, 2, 1 / 0.43222, 1e-4},
		// DOMAIN.md §1.2: Q = 0.28154·C·d^2.63·S^0.54 (gpm, in) → K = 1/0.28154.
		{"gpm-in 3.55", HWFlowConstantGPMInches(), 3.55, 2, 1 / 0.28154, 1e-4},
		// DOMAIN.md §1.3: per 1,000 ft, exact 148.07.
		{"per kft 148", HWFlowConstantPerKft(), 148, 0, 148.07, 0.01},
		// DOMAIN.md §1.3: SI, exact 10.674.
		{"SI 10.67", HWHeadLossConstantSI(), 10.67, 2, 10.674, 0.001},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if r := roundTo(tc.got, tc.decimals); r != tc.printed {
				t.Errorf("got %.6f (rounds to %v), want the printed %v", tc.got, r, tc.printed)
			}
			if math.Abs(tc.got-tc.exact) > tc.tol {
				t.Errorf("got %.6f, want %.6f ± %g", tc.got, tc.exact, tc.tol)
			}
		})
	}
}

func TestHWExponents(t *testing.T) {
	// DOMAIN.md §1.3: exactly 1/0.54 = 1.851852 and 2.63/0.54 = 4.870370.
	if math.Abs(HWExponentFlow-1.851852) > 1e-6 {
		t.Errorf("HWExponentFlow = %.7f, want 1.851852", HWExponentFlow)
	}
	if math.Abs(HWExponentDiameter-4.870370) > 1e-6 {
		t.Errorf("HWExponentDiameter = %.7f, want 4.870370", HWExponentDiameter)
	}
	// DOMAIN.md §1.3 table: the derived h-form constants 4.7273 (ft, cfs)
	// and 10.456 (ft, gpm, in) are the flow constants to the power 1/0.54.
	if got := math.Pow(HWFlowConstantCFSFeet(), HWExponentFlow); math.Abs(got-4.7273) > 1e-4 {
		t.Errorf("cfs-ft head-loss constant %.5f, want 4.7273", got)
	}
	if got := math.Pow(HWFlowConstantGPMInches(), HWExponentFlow); math.Abs(got-10.456) > 1e-3 {
		t.Errorf("gpm-in head-loss constant %.5f, want 10.456", got)
	}
}

// usHeadLossFt is the US per-length form written out with the gpm/in
// constant: h = L·(K·Q/(C·d^2.63))^(1/0.54), h and L in ft.
func usHeadLossFt(qGPM, dIn, c, lFt float64) float64 {
	return lFt * math.Pow(HWFlowConstantGPMInches()*qGPM/(c*math.Pow(dIn, 2.63)), HWExponentFlow)
}

// siHandbookHeadLossM is the SI handbook form h = K·L·Q^1.852/(C^1.852·D^4.87)
// with K from the SI coefficient 0.849.
func siHandbookHeadLossM(q, d, c, l float64) float64 {
	return HWHeadLossConstantSI() * l * math.Pow(q, HWExponentFlow) / (math.Pow(c, HWExponentFlow) * math.Pow(d, HWExponentDiameter))
}

func TestHeadLossWorkedExamples(t *testing.T) {
	tests := []struct {
		name  string
		q     Flow
		d     Length
		c     float64
		l     Length
		wantH float64 // in unit
		unit  Length  // unit of wantH
		tolH  float64 // in unit
		wantV float64
		vUnit Velocity
		tolV  float64
	}{
		// DOMAIN.md §9 item 1 (HW velocity form, US exact).
		{"item 1 US 1000 gpm 8 in", 1000 * USGallonPerMinute, 8 * Inch, 100, 1000 * Foot, 29.705, Foot, 0.02, 6.383, FootPerSecond, 0.001},
		// DOMAIN.md §9 item 2 (SI cross-check, 9.058 m ± 0.01); V is item 1's
		// 6.383 ft/s = 1.9455 m/s.
		{"item 2 SI 0.0630902 m3/s", 0.0630902, 0.2032, 100, 304.8, 9.058, Metre, 0.01, 1.9455, MetrePerSecond, 0.001},
		// DOMAIN.md §9 item 3: 6.233 ft/kft, V 4.255 ft/s.
		{"item 3 1500 gpm 12 in", 1500 * USGallonPerMinute, 12 * Inch, 120, 1000 * Foot, 6.233, Foot, 0.01, 4.255, FootPerSecond, 0.001},
		// DOMAIN.md §9 item 4: 6.42 m, V 1.592 m/s.
		{"item 4 SI 50 L/s 200 mm", 50 * LitrePerSecond, 200 * Millimetre, 130, 500, 6.42, Metre, 0.02, 1.592, MetrePerSecond, 0.001},
		// DOMAIN.md §1.6 further check point: 33.41 ft/kft, V 5.674 ft/s.
		{"1.6 500 gpm 6 in", 500 * USGallonPerMinute, 6 * Inch, 100, 1000 * Foot, 33.41, Foot, 0.02, 5.674, FootPerSecond, 0.001},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h := HeadLoss(tc.q, tc.d, tc.l, tc.c)
			if got := float64(Length(h) / tc.unit); math.Abs(got-tc.wantH) > tc.tolH {
				t.Errorf("head loss %.4f, want %.4f ± %g", got, tc.wantH, tc.tolH)
			}
			if got := float64(MeanVelocity(tc.q, tc.d) / tc.vUnit); math.Abs(got-tc.wantV) > tc.tolV {
				t.Errorf("velocity %.4f, want %.4f ± %g", got, tc.wantV, tc.tolV)
			}
			if h2 := HeadLoss(-tc.q, tc.d, tc.l, tc.c); h2 != -h {
				t.Errorf("HeadLoss(−q) = %g, want −HeadLoss(q) = %g", h2, -h)
			}
		})
	}
}

func TestHeadLossUSAgreesWithSI(t *testing.T) {
	// DOMAIN.md §1.5 / §9 items 1–2: the US exact form gives 29.705 ft, the SI
	// form with 0.849 gives 9.0577 m = 29.717 ft; they must agree within 0.2 %.
	us := usHeadLossFt(1000, 8, 100, 1000)
	si := siHandbookHeadLossM(0.0630902, 0.2032, 100, 304.8)
	if math.Abs(us-29.705) > 0.02 {
		t.Errorf("US form %.4f ft, want 29.705 ± 0.02", us)
	}
	if math.Abs(si-9.0577) > 0.001 {
		t.Errorf("SI form %.5f m, want 9.0577 ± 0.001", si)
	}
	siFt := si / Foot.Metres()
	if rel := math.Abs(siFt-us) / us; rel > 0.002 {
		t.Errorf("US %.4f ft and SI %.4f ft differ by %.3f %%, want ≤ 0.2 %%", us, siFt, 100*rel)
	}
	// The typed SI function (canonical US coefficient) must match the US form.
	typed := HeadLoss(1000*USGallonPerMinute, 8*Inch, 1000*Foot, 100).Feet()
	if math.Abs(typed-us) > 1e-9*us {
		t.Errorf("HeadLoss %.9f ft, US form %.9f ft", typed, us)
	}
	// DOMAIN.md §1.5: per-1,000-ft form with the rounded 148 gives 29.689 ft.
	per1000 := math.Pow(148*1000/(100*math.Pow(8, 2.63)), 1.852)
	if math.Abs(per1000-29.689) > 0.005 {
		t.Errorf("per-kft form with 148: %.4f ft, want 29.689", per1000)
	}
	// DOMAIN.md §9 item 3: 148 reproduces 6.233 ft/kft within 0.1 %.
	h148 := math.Pow(148*1500/(120*math.Pow(12, 2.63)), 1.852)
	if rel := math.Abs(h148-6.233) / 6.233; rel > 0.001 {
		t.Errorf("148 form %.4f ft/kft, want 6.233 within 0.1 %%", h148)
	}
}

func TestResistanceAndCarryingFlowAreConsistent(t *testing.T) {
	// Algebraic identities of the HW law (DOMAIN.md §1.3): h = r·Q·|Q|^0.852,
	// and CarryingFlow inverts FrictionSlope.
	d, l, c := 10*Inch, 800*Foot, 110.0
	r := Resistance(l, d, c)
	for _, q := range []Flow{1e-4, 0.01, 0.2} {
		h := float64(HeadLoss(q, d, l, c))
		if want := r * float64(q) * math.Pow(float64(q), HWExponentFlow-1); math.Abs(h-want) > 1e-12*want {
			t.Errorf("q=%g: HeadLoss %g, r·Q^1.852 %g", float64(q), h, want)
		}
		s := FrictionSlope(q, d, c)
		if back := CarryingFlow(d, c, s); math.Abs(float64(back-q)) > 1e-12*float64(q) {
			t.Errorf("CarryingFlow(FrictionSlope(%g)) = %g", float64(q), float64(back))
		}
	}
	// DOMAIN.md §1.3: K ≈ 10.67 in r = K·L/(C^1.852·D^4.87); the canonical
	// coefficient gives 10.6699 (0.849 rounded gives 10.674).
	k := r * math.Pow(c, HWExponentFlow) * math.Pow(float64(d), HWExponentDiameter) / float64(l)
	if math.Abs(k-10.6699) > 0.0001 {
		t.Errorf("SI constant of Resistance %.4f, want 10.6699", k)
	}
	if !math.IsNaN(Resistance(l, 0, c)) || !math.IsNaN(FrictionSlope(1, d, 0)) {
		t.Error("non-positive D or C must give NaN")
	}
	if CarryingFlow(d, c, 0) != 0 {
		t.Error("zero slope must carry zero flow")
	}
}

func TestUnitConversions(t *testing.T) {
	// DOMAIN.md §9 item 5 (computed from exact definitions).
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"1 cfs in gpm", CubicFootPerSecond.GPM(), 448.831, 0.001},
		{"1 MGD in gpm", MillionGallonsPerDay.GPM(), 694.444, 0.001},
		{"1 L/s in gpm", LitrePerSecond.GPM(), 15.8503, 0.0001},
		{"1 psi in ft at 62.4", HeadOf(PoundPerSquareInch).Feet(), 2.3077, 0.001},
		// DOMAIN.md §3.7: 1 m³/s = 35.31467 cfs, 1 psi = 6.894757 kPa.
		{"1 m3/s in cfs", CubicMetrePerSecond.CFS(), 35.31467, 1e-5},
		{"1 psi in kPa", PoundPerSquareInch.KPa(), 6.894757, 1e-6},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if math.Abs(tc.got-tc.want) > tc.tol {
				t.Errorf("got %.7f, want %.7f ± %g", tc.got, tc.want, tc.tol)
			}
		})
	}
}

func TestHWValid(t *testing.T) {
	// DOMAIN.md §1.4: envelope D ≳ 2 in, ≲ 90 in, V ≲ 10 ft/s.
	tests := []struct {
		name string
		d    Length
		v    Velocity
		ok   bool
	}{
		{"8 in at 3 ft/s", 8 * Inch, 3 * FootPerSecond, true},
		{"2 in at 10 ft/s (on the limits)", 2 * Inch, 10 * FootPerSecond, true},
		{"1 in", 1 * Inch, 2 * FootPerSecond, false},
		{"96 in", 96 * Inch, 2 * FootPerSecond, false},
		{"12 in at 12 ft/s", 12 * Inch, 12 * FootPerSecond, false},
		{"12 in at −12 ft/s", 12 * Inch, -12 * FootPerSecond, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ok, why := HWValid(tc.d, tc.v)
			if ok != tc.ok {
				t.Errorf("ok = %v (%q), want %v", ok, why, tc.ok)
			}
			if ok == (why != "") {
				t.Errorf("why = %q must be empty exactly when ok", why)
			}
		})
	}
}
