package scoring

import (
	"fmt"
	"math"
)

// ReplacementEconomics are the inputs of the Shamir & Howard optimal
// replacement year of one main (or one cohort). Rates and costs per
// length must use the same length; the metre is the package's.
type ReplacementEconomics struct {
	BaseYear float64 // t₀, the year of BaseRate and the present of the present values
	// BaseRate is N(t₀), breaks per metre per year at BaseYear (≥ 0), as
	// Cohort.BaseRate gives it.
	BaseRate        float64
	Growth          float64 // A, 1/yr: N(t) = N(t₀)·e^(A·(t − t₀))
	RepairCost      float64 // C_b, $ per break (≥ 0)
	ReplacementCost float64 // C_r, $ per metre (≥ 0)
	// DiscountRate is R, per year (0.03 for 3 %); it must exceed −1.
	DiscountRate float64
}

// ReplacementState says what OptimalReplacementYear found.
type ReplacementState int

const (
	// ReplacementInvalid: the inputs fail Validate; the year is NaN.
	ReplacementInvalid ReplacementState = iota
	// ReplacementDue: replacement is already economic; the year is BaseYear.
	ReplacementDue
	// ReplacementFuture: replacement becomes economic at t* > BaseYear.
	ReplacementFuture
	// ReplacementNever: repairs stay cheaper than replacement for ever;
	// the year is +Inf.
	ReplacementNever
)

// String returns "invalid", "due", "future" or "never".
func (s ReplacementState) String() string {
	switch s {
	case ReplacementInvalid:
		return "invalid"
	case ReplacementDue:
		return "due"
	case ReplacementFuture:
		return "future"
	case ReplacementNever:
		return "never"
	}
	return fmt.Sprintf("ReplacementState(%d)", int(s))
}

// Validate reports the first input that OptimalReplacementYear cannot use:
// a non-finite value, a negative break rate or cost, or a discount rate of
// −1 or less.
func (in ReplacementEconomics) Validate() error {
	fields := []struct {
		name  string
		value float64
		floor float64 // the least valid value (inclusive); NaN for any
	}{
		{"base year", in.BaseYear, math.NaN()},
		{"base break rate (breaks per metre per year)", in.BaseRate, 0},
		{"break growth (1/yr)", in.Growth, math.NaN()},
		{"repair cost ($ per break)", in.RepairCost, 0},
		{"replacement cost ($ per metre)", in.ReplacementCost, 0},
		{"discount rate", in.DiscountRate, math.NaN()},
	}
	for _, f := range fields {
		if math.IsNaN(f.value) || math.IsInf(f.value, 0) {
			return fmt.Errorf("scoring: replacement economics: %s is %g, want a finite number", f.name, f.value)
		}
		if f.value < f.floor {
			return fmt.Errorf("scoring: replacement economics: %s is %g, want ≥ 0", f.name, f.value)
		}
	}
	if !(in.DiscountRate > -1) {
		return fmt.Errorf("scoring: replacement economics: discount rate is %g, want more than −1 (0.03 for 3 %%)", in.DiscountRate)
	}
	return nil
}

// OptimalReplacementYear returns the year at which replacing the main
// costs least, after Shamir & Howard (1979), DOMAIN.md §7.2. Breaks grow as
//
//	N(t) = N(t₀) · e^(A·(t − t₀))                 breaks per metre per year
//
// and replacing at t_r costs, in present value at t₀ (continuous form of
// the paper's yearly sum, with r = ln(1 + R)):
//
//	PV(t_r) = ∫_{t₀}^{t_r} C_b·N(t)·e^(−r(t − t₀)) dt + C_r·e^(−r(t_r − t₀))
//
// dPV/dt_r = e^(−r(t_r − t₀))·[C_b·N(t_r) − r·C_r] vanishes when the
// yearly cost of breaks reaches the "interest" on the replacement cost:
//
//	t* = t₀ + (1/A) · ln[ ln(1+R) · C_r / (C_b · N(t₀)) ]
//
// with C_b in $ per break, C_r in $ per metre, N(t₀) in breaks per metre
// per year, A in 1/yr and t in years; the argument of ln is dimensionless.
// Like the widely quoted form of the result, it ignores the breaks of the
// new pipe (the full paper counts their discounted stream against
// replacing), so t* comes somewhat earlier than the full model's.
//
// The state says which case holds:
//   - due (year = BaseYear): breaks already cost at least the interest,
//     C_b·N(t₀) ≥ r·C_r, and they do not fall (A ≥ 0), so the argument of
//     ln is ≤ 1 and t* ≤ t₀;
//   - future (year = t*): A > 0 and breaks cost less than the interest now;
//   - never (year = +Inf): breaks never reach the interest, because A ≤ 0
//     or N(t₀) = 0 or C_b = 0, with the argument > 1;
//   - with A < 0 and breaks above the interest now, PV first rises and
//     then falls, so the choice is between now and never: due when C_r is
//     at most the present value of all future repairs,
//     C_b·N(t₀)/(r − A), never otherwise (with r ≤ 0, C_b·N(t) − r·C_r
//     stays positive, PV only rises, and replacement is due);
//   - invalid (year = NaN): in fails Validate, which says why.
//
// Reference: U. Shamir & C.D.D. Howard, "An analytic approach to
// scheduling pipe replacement", J. AWWA 71(5):248–258, 1979.
func OptimalReplacementYear(in ReplacementEconomics) (year float64, state ReplacementState) {
	if in.Validate() != nil {
		return math.NaN(), ReplacementInvalid
	}
	r := math.Log1p(in.DiscountRate)
	breakCost := in.RepairCost * in.BaseRate // C_b·N(t₀), $ per metre per year
	interest := r * in.ReplacementCost       // r·C_r, $ per metre per year
	switch {
	case breakCost >= interest && in.Growth >= 0:
		return in.BaseYear, ReplacementDue
	case breakCost >= interest: // A < 0: now or never
		if r <= 0 || in.ReplacementCost <= breakCost/(r-in.Growth) {
			return in.BaseYear, ReplacementDue
		}
		return math.Inf(1), ReplacementNever
	case in.Growth <= 0 || breakCost == 0:
		return math.Inf(1), ReplacementNever
	}
	t := in.BaseYear + math.Log(interest/breakCost)/in.Growth
	if math.IsInf(t, 1) {
		return t, ReplacementNever
	}
	return t, ReplacementFuture
}
