package scoring

import (
	"math"
	"strings"
	"testing"
)

// Lengths of DOMAIN.md's per-mile and per-1,000-ft figures, in metres
// (exact, DOMAIN.md §3.7).
const (
	metresInMile = 1609.344
	metresInKft  = 304.8
)

// domainCheckA is DOMAIN.md §9 item 15, first case (§7.2 check (a)), in
// the package's per-metre units: N0 = 0.2 breaks/mi/yr, C_r = $1,584,000/mi.
func domainCheckA() ReplacementEconomics {
	return ReplacementEconomics{
		BaseYear:        2025,
		BaseRate:        0.2 / metresInMile,
		Growth:          0.05,
		RepairCost:      10_000,
		ReplacementCost: 1_584_000 / metresInMile,
		DiscountRate:    0.03,
	}
}

// domainCheckB is DOMAIN.md §9 item 15, second case (§7.2 check (b)):
// N0 = 0.5 breaks/kft/yr, C_r = $250,000/kft.
func domainCheckB() ReplacementEconomics {
	return ReplacementEconomics{
		BaseYear:        2025,
		BaseRate:        0.5 / metresInKft,
		Growth:          0.08,
		RepairCost:      8_000,
		ReplacementCost: 250_000 / metresInKft,
		DiscountRate:    0.04,
	}
}

func TestOptimalReplacementYearDomainChecks(t *testing.T) {
	// Hand working of t* = t₀ + (1/A)·ln[ln(1+R)·C_r/(C_b·N₀)] (per-length
	// units cancel in the ratio):
	//   (a) ln(1.03) = 0.0295588; 0.0295588 · 1,584,000 / (10,000 · 0.2)
	//       = 0.0295588 · 792 = 23.4106; ln 23.4106 = 3.15319;
	//       3.15319 / 0.05 = 63.064 → t* = 2025 + 63.06 = 2088.06
	//   (b) ln(1.04) = 0.0392207; 0.0392207 · 250,000 / (8,000 · 0.5)
	//       = 0.0392207 · 62.5 = 2.45129; ln 2.45129 = 0.896616;
	//       0.896616 / 0.08 = 11.2077 → t* = t₀ + 11.21
	cases := []struct {
		name string
		in   ReplacementEconomics
		want float64 // year, ± 0.01 (DOMAIN.md §9 item 15)
	}{
		{"(a) 0.2 /mi/yr, A 0.05, R 3 %", domainCheckA(), 2088.06},
		{"(b) 0.5 /kft/yr, A 0.08, R 4 %", domainCheckB(), 2025 + 11.21},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			year, state := OptimalReplacementYear(tc.in)
			if state != ReplacementFuture {
				t.Fatalf("state %v, want future", state)
			}
			if math.Abs(year-tc.want) > 0.01 {
				t.Errorf("t* = %.4f, want %.2f ± 0.01", year, tc.want)
			}
		})
	}
}

func TestOptimalReplacementYearStates(t *testing.T) {
	withRate := func(perMile, growth float64) ReplacementEconomics {
		in := domainCheckA()
		in.BaseRate = perMile / metresInMile
		in.Growth = growth
		return in
	}
	cases := []struct {
		name      string
		in        ReplacementEconomics
		wantState ReplacementState
		wantYear  float64
	}{
		// 5 /mi/yr: argument 0.0295588 · 1,584,000 / (10,000 · 5) = 0.9364 < 1,
		// so t* = 2025 + ln(0.9364)/0.05 = 2023.7 < t₀: due now.
		{"breaks above the interest", withRate(5, 0.05), ReplacementDue, 2025},
		// The interest is ln(1.03) · $1,584,000/mi = $46,821 per mile-year,
		// what 4.6821 breaks/mi/yr at $10,000 each cost. Above it: due;
		// just below: t* = 2025 + ln(4.682114/4.6)/0.05 = 2025.3539.
		{"breaks just above the interest", withRate(4.7, 0.05), ReplacementDue, 2025},
		{"breaks just below the interest", withRate(4.6, 0.05), ReplacementFuture, 2025.3539},
		{"no growth, below the interest", withRate(0.2, 0), ReplacementNever, math.Inf(1)},
		{"falling breaks, below the interest", withRate(0.2, -0.02), ReplacementNever, math.Inf(1)},
		{"no breaks", withRate(0, 0.05), ReplacementNever, math.Inf(1)},
		{"no growth, above the interest", withRate(5, 0), ReplacementDue, 2025},
		// A < 0, breaks above the interest (C_b·N₀ = $50,000 per mile-year):
		// never-replace costs C_b·N₀/(r − A) against C_r = $1,584,000/mi now.
		//   A = −0.01:  50,000 / 0.0395588 = $1,263,941 < C_r → never
		//   A = −0.001: 50,000 / 0.0305588 = $1,636,190 > C_r → due
		{"falling fast from above the interest", withRate(5, -0.01), ReplacementNever, math.Inf(1)},
		{"falling slowly from above the interest", withRate(5, -0.001), ReplacementDue, 2025},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			year, state := OptimalReplacementYear(tc.in)
			if state != tc.wantState || !(year == tc.wantYear || math.Abs(year-tc.wantYear) <= 1e-4) {
				t.Errorf("got %v %.4f, want %v %.4f", state, year, tc.wantState, tc.wantYear)
			}
		})
	}
	t.Run("no repair cost", func(t *testing.T) {
		in := domainCheckA()
		in.RepairCost = 0
		if year, state := OptimalReplacementYear(in); state != ReplacementNever || !math.IsInf(year, 1) {
			t.Errorf("got %v %g, want never +Inf", state, year)
		}
	})
	t.Run("zero discount rate", func(t *testing.T) {
		// R = 0: the replacement earns no interest, so every break is a
		// loss and replacement is due at once.
		in := domainCheckA()
		in.DiscountRate = 0
		if year, state := OptimalReplacementYear(in); state != ReplacementDue || year != 2025 {
			t.Errorf("got %v %g, want due 2025", state, year)
		}
	})
}

func TestOptimalReplacementYearInvalid(t *testing.T) {
	cases := []struct {
		name string
		edit func(*ReplacementEconomics)
		want string
	}{
		{"negative repair cost", func(in *ReplacementEconomics) { in.RepairCost = -1 }, "repair cost"},
		{"negative replacement cost", func(in *ReplacementEconomics) { in.ReplacementCost = -5 }, "replacement cost"},
		{"negative break rate", func(in *ReplacementEconomics) { in.BaseRate = -1e-4 }, "base break rate"},
		{"discount rate −100 %", func(in *ReplacementEconomics) { in.DiscountRate = -1 }, "more than −1"},
		{"NaN growth", func(in *ReplacementEconomics) { in.Growth = math.NaN() }, "break growth"},
		{"infinite base year", func(in *ReplacementEconomics) { in.BaseYear = math.Inf(1) }, "base year"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			in := domainCheckA()
			tc.edit(&in)
			err := in.Validate()
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Validate: %v, want an error naming %q", err, tc.want)
			}
			year, state := OptimalReplacementYear(in)
			if state != ReplacementInvalid || !math.IsNaN(year) {
				t.Errorf("got %v %g, want invalid NaN", state, year)
			}
		})
	}
	if err := domainCheckA().Validate(); err != nil {
		t.Errorf("valid inputs: %v", err)
	}
	if s := ReplacementFuture.String(); s != "future" {
		t.Errorf("String() = %q, want future", s)
	}
}

// continuousPV returns, on a grid of step h years from t₀ to t₀ + span,
// the present value at t₀ of replacing at each grid year (DOMAIN.md §7.2
// in continuous form): the break repairs up to t_r, integrated by the
// trapezoidal rule, plus the discounted replacement cost.
func continuousPV(in ReplacementEconomics, span, h float64) []float64 {
	r := math.Log1p(in.DiscountRate)
	repairs := func(s float64) float64 {
		return in.RepairCost * in.BaseRate * math.Exp(in.Growth*s) * math.Exp(-r*s)
	}
	n := int(math.Round(span / h))
	pv := make([]float64, n+1)
	var integral float64
	for k := 0; k <= n; k++ {
		s := float64(k) * h
		if k > 0 {
			integral += h / 2 * (repairs(s-h) + repairs(s))
		}
		pv[k] = integral + in.ReplacementCost*math.Exp(-r*s)
	}
	return pv
}

func TestOptimalReplacementYearMinimisesPresentValue(t *testing.T) {
	// Brute force: scan PV(t_r) on a 0.001-yr grid and take the smallest;
	// t* must sit within a grid step or two of it.
	const h, span = 0.001, 150.0
	slower := domainCheckB()
	slower.Growth, slower.DiscountRate = 0.02, 0.06
	cases := []struct {
		name string
		in   ReplacementEconomics
	}{
		{"DOMAIN (a)", domainCheckA()},
		{"DOMAIN (b)", domainCheckB()},
		{"slow growth, high discount", slower},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			year, state := OptimalReplacementYear(tc.in)
			if state != ReplacementFuture {
				t.Fatalf("state %v, want future", state)
			}
			pv := continuousPV(tc.in, span, h)
			best := 0
			for k := range pv {
				if pv[k] < pv[best] {
					best = k
				}
			}
			scanned := tc.in.BaseYear + float64(best)*h
			if math.Abs(year-scanned) > 2*h {
				t.Errorf("t* = %.4f, brute-force minimum of PV at %.4f", year, scanned)
			}
		})
	}
	t.Run("now or never", func(t *testing.T) {
		// A < 0 from above the interest: PV(t₀) = C_r must be the minimum
		// when due, and the far end lower than C_r when never.
		for _, growth := range []float64{-0.01, -0.001} {
			in := domainCheckA()
			in.BaseRate, in.Growth = 5/metresInMile, growth
			_, state := OptimalReplacementYear(in)
			pv := continuousPV(in, 2000, 0.01)
			lowest := pv[0]
			for _, v := range pv {
				lowest = min(lowest, v)
			}
			switch state {
			case ReplacementDue:
				if lowest < pv[0] {
					t.Errorf("A %g: due, but PV falls to %g below PV(t₀) = %g", growth, lowest, pv[0])
				}
			case ReplacementNever:
				if !(pv[len(pv)-1] < pv[0]) {
					t.Errorf("A %g: never, but PV after 2,000 yr %g is not below PV(t₀) = %g", growth, pv[len(pv)-1], pv[0])
				}
			default:
				t.Errorf("A %g: state %v, want due or never", growth, state)
			}
		}
	})
}

func TestOptimalReplacementYearNearYearlySum(t *testing.T) {
	// DOMAIN.md §7.2's own PV is a yearly sum:
	//   PV(t_r) = Σ_{t=t_p}^{t_r} C_b N₀ e^(A(t−t₀)) / (1+R)^(t−t_p) + C_r / (1+R)^(t_r−t_p)
	// over whole years t_r, with t_p = t₀. Its best whole year must lie
	// within a year of the continuous t* (the two forms differ by how a
	// year's breaks are discounted).
	for _, in := range []ReplacementEconomics{domainCheckA(), domainCheckB()} {
		year, _ := OptimalReplacementYear(in)
		bestYear, bestPV := 0, math.Inf(1)
		var repairs float64
		for k := 0; k <= 200; k++ {
			d := math.Pow(1+in.DiscountRate, float64(k))
			repairs += in.RepairCost * in.BaseRate * math.Exp(in.Growth*float64(k)) / d
			if pv := repairs + in.ReplacementCost/d; pv < bestPV {
				bestYear, bestPV = k, pv
			}
		}
		scanned := in.BaseYear + float64(bestYear)
		if math.Abs(scanned-year) > 1 {
			t.Errorf("t* = %.3f, best whole year of the yearly sum %.0f: want within 1 year", year, scanned)
		}
	}
}
