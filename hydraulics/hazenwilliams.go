package hydraulics

import (
	"fmt"
	"math"
)

// The Hazen-Williams law in its original velocity form, for a full pipe:
//
//	V = k · C · R^0.63 · S^0.54,   R = D/4
//
// with V the mean velocity, R the hydraulic radius, S the friction slope
// (head loss per length) and C the dimensionless roughness coefficient.
// Every flow and head-loss form below is derived from it in code, so no
// rounded handbook constant is typed in.
//
// Reference: G.S. Williams & A. Hazen, Hydraulic Tables (1905, 3rd ed. 1920);
// DOMAIN.md §1.1–§1.3.
const (
	// HWSlopeExponent is the exponent 0.54 on S in the velocity form.
	HWSlopeExponent = 0.54
	// HWRadiusExponent is the exponent 0.63 on R in the velocity form.
	HWRadiusExponent = 0.63
	// HWExponentFlow is the exponent on Q in the head-loss form, 1/0.54 ≈ 1.852.
	HWExponentFlow = 1 / HWSlopeExponent
	// HWExponentDiameter is the exponent on D in the head-loss form,
	// 2.63/0.54 ≈ 4.870.
	HWExponentDiameter = (2 + HWRadiusExponent) / HWSlopeExponent

	// HWVelocityCoefficientUS is k for V in ft/s and R in ft. It is the
	// coefficient Williams and Hazen defined (1000^0.04 ≈ 1.318, so that C
	// matches a Chézy coefficient at S = 0.001, R = 1 ft). It is the
	// canonical coefficient of this package: FrictionSlope, HeadLoss,
	// Resistance and CarryingFlow use it, converted exactly to SI.
	HWVelocityCoefficientUS = 1.318
	// HWVelocityCoefficientSI is k for V in m/s and R in m as handbooks
	// print it; it is 1.318 · 0.3048^0.37 = 0.84918 rounded. Only
	// HWHeadLossConstantSI uses it, to reproduce the published SI form.
	HWVelocityCoefficientSI = 0.849
)

// hwFlowCoefficient returns a in Q = a · C · D^2.63 · S^0.54 for a full
// circular pipe, given k of the velocity form in the same length unit:
// Q = V·πD²/4 and R = D/4 give a = k · (π/4) · 4^−0.63.
func hwFlowCoefficient(k float64) float64 {
	return k * math.Pi / 4 * math.Pow(4, -HWRadiusExponent)
}

// hwCoefficientSIExact is k of the velocity form in m/s and m, converted
// exactly from the US coefficient: V_m = 0.3048·V_ft and R_ft = R_m/0.3048,
// so k_SI = 1.318 · 0.3048^(1−0.63).
var hwCoefficientSIExact = HWVelocityCoefficientUS * math.Pow(Foot.Metres(), 1-HWRadiusExponent)

// hwFlowCoefficientSI is a in Q = a·C·D^2.63·S^0.54 with Q in m³/s and D in
// m, from the canonical (US) coefficient: about 0.27848.
var hwFlowCoefficientSI = hwFlowCoefficient(hwCoefficientSIExact)

// HWFlowConstantCFSFeet returns K in
//
//	S = (K · Q / (C · D^2.63))^(1/0.54)
//
// with Q in ft³/s and D in ft: K = 1/a, a = 1.318·(π/4)·4^−0.63. It comes
// out as 2.3136, the handbook 2.31 (DOMAIN.md §1.2).
func HWFlowConstantCFSFeet() float64 {
	return 1 / hwFlowCoefficient(HWVelocityCoefficientUS)
}

// HWFlowConstantGPMInches returns K in
//
//	S = (K · Q / (C · d^2.63))^(1/0.54)
//
// with Q in US gpm, d in inches and S in ft/ft. It is the cfs/ft constant
// rescaled by gpm per cfs and 12^2.63: about 3.552, the handbook 3.55
// (DOMAIN.md §1.2).
func HWFlowConstantGPMInches() float64 {
	gpmPerCFS := CubicFootPerSecond.GPM()
	inchesPerFoot := Foot.Inches()
	return HWFlowConstantCFSFeet() * math.Pow(inchesPerFoot, 2+HWRadiusExponent) / gpmPerCFS
}

// HWFlowConstantPerKft returns K in the per-1,000-ft form
//
//	h₁₀₀₀ = (K · Q / (C · d^2.63))^(1/0.54)
//
// with h₁₀₀₀ in ft of head per 1,000 ft of pipe, Q in gpm and d in inches:
// K = 1000^0.54 · HWFlowConstantGPMInches() ≈ 148.07, the handbook 148
// (DOMAIN.md §1.3).
func HWFlowConstantPerKft() float64 {
	return math.Pow(1000, HWSlopeExponent) * HWFlowConstantGPMInches()
}

// HWHeadLossConstantSI returns K in the SI head-loss form
//
//	h = K · L · Q^1.852 / (C^1.852 · D^4.87)
//
// with h, L and D in metres and Q in m³/s: K = a^(−1/0.54) with
// a = 0.849·(π/4)·4^−0.63. It comes out as 10.674, the handbook 10.67
// (DOMAIN.md §1.3). The package's own SI functions use the exact
// conversion of the US coefficient instead (K ≈ 10.670; see
// HWVelocityCoefficientUS).
func HWHeadLossConstantSI() float64 {
	return math.Pow(hwFlowCoefficient(HWVelocityCoefficientSI), -HWExponentFlow)
}

// FrictionSlope returns the Hazen-Williams friction slope S (head loss per
// length, dimensionless) for flow |q| in a full pipe of inside diameter d
// and roughness c:
//
//	S = (|Q| / (a · C · D^2.63))^(1/0.54),  a = k·(π/4)·4^−0.63
//
// in SI (Q m³/s, D m), with k converted exactly from 1.318 (ft units).
// It returns NaN when d or c is not positive.
func FrictionSlope(q Flow, d Length, c float64) float64 {
	if !(d > 0) || !(c > 0) {
		return math.NaN()
	}
	x := math.Abs(float64(q)) / (hwFlowCoefficientSI * c * math.Pow(float64(d), 2+HWRadiusExponent))
	return math.Pow(x, HWExponentFlow)
}

// HeadLoss returns the friction head loss over length l, signed with q
// (positive in the direction of flow):
//
//	h = sign(Q) · L · S(|Q|, D, C)
//
// See FrictionSlope for the formula and units.
func HeadLoss(q Flow, d Length, l Length, c float64) Head {
	h := float64(l) * FrictionSlope(q, d, c)
	if q < 0 {
		h = -h
	}
	return Head(h)
}

// Resistance returns r in the solver's head-loss law h = r · Q · |Q|^0.852
// (exponent 1/0.54 − 1), in SI with h in m and Q in m³/s:
//
//	r = L / (a · C · D^2.63)^(1/0.54)
//
// which equals K·L/(C^1.852·D^4.87) with K = a^(−1/0.54) ≈ 10.670.
// It returns NaN when d or c is not positive.
func Resistance(l, d Length, c float64) float64 {
	if !(d > 0) || !(c > 0) {
		return math.NaN()
	}
	return float64(l) * math.Pow(hwFlowCoefficientSI*c*math.Pow(float64(d), 2+HWRadiusExponent), -HWExponentFlow)
}

// CarryingFlow returns the flow a full pipe carries at friction slope
// slope (head per length, dimensionless), the capacity form of
// Hazen-Williams:
//
//	Q = a · C · D^2.63 · S^0.54
//
// in SI; in US units this is Q = C·d^2.63·S₁₀₀₀^0.54/148 (gpm, in,
// ft per 1,000 ft; DESIGN.md "Methods"). A non-positive slope gives zero.
func CarryingFlow(d Length, c, slope float64) Flow {
	if !(slope > 0) || !(d > 0) || !(c > 0) {
		return 0
	}
	return Flow(hwFlowCoefficientSI * c * math.Pow(float64(d), 2+HWRadiusExponent) * math.Pow(slope, HWSlopeExponent))
}

// MeanVelocity returns the mean velocity of |q| in a full pipe of inside
// diameter d: V = |Q| / (π D² / 4). It returns zero when d is not positive.
func MeanVelocity(q Flow, d Length) Velocity {
	if !(d > 0) {
		return 0
	}
	return Velocity(math.Abs(float64(q)) / (math.Pi / 4 * float64(d) * float64(d)))
}

// Validity envelope of Hazen-Williams for water at ordinary temperatures
// (DOMAIN.md §1.4): diameters of about 2 to 90 in, velocities up to about
// 10 ft/s.
const (
	HWMinDiameter = 2 * Inch
	HWMaxDiameter = 90 * Inch
	HWMaxVelocity = 10 * FootPerSecond
)

// HWValid reports whether a pipe of inside diameter d at mean velocity v
// lies inside the envelope where Hazen-Williams is usually trusted
// (HWMinDiameter..HWMaxDiameter, v ≤ HWMaxVelocity; DOMAIN.md §1.4). When
// it does not, why says which limit is passed, in US units. Outside the
// envelope the result is a warning, not an error: the formula still gives
// a number, only with larger error.
func HWValid(d Length, v Velocity) (ok bool, why string) {
	switch {
	case d < HWMinDiameter:
		return false, fmt.Sprintf("diameter %.2f in is below the %.0f-in lower limit of Hazen-Williams", d.Inches(), HWMinDiameter.Inches())
	case d > HWMaxDiameter:
		return false, fmt.Sprintf("diameter %.1f in is above the %.0f-in upper limit of Hazen-Williams", d.Inches(), HWMaxDiameter.Inches())
	case math.Abs(float64(v)) > float64(HWMaxVelocity):
		return false, fmt.Sprintf("velocity %.2f ft/s is above the %.0f ft/s limit of Hazen-Williams", math.Abs(v.FPS()), HWMaxVelocity.FPS())
	}
	return true, ""
}
