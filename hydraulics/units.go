package hydraulics

// Quantities are held in SI as named float64 types, in the way time.Duration
// holds nanoseconds. Multiply a number by a unit constant to make a quantity
// (6 * Inch) and call a method or divide by the constant to read it back.

// Length is a length in metres.
type Length float64

// Head is a hydraulic head or grade in metres of water above the datum.
type Head float64

// Flow is a volumetric flow rate in cubic metres per second.
type Flow float64

// Velocity is a mean velocity in metres per second.
type Velocity float64

// Pressure is a gauge pressure in pascals.
type Pressure float64

// Length units (exact by definition).
const (
	Metre      Length = 1
	Millimetre Length = 1e-3
	Foot       Length = 0.3048
	Inch       Length = 0.0254
	Mile       Length = 5280 * Foot // the international mile, 1,609.344 m
	// USSurveyFoot is 1200/3937 m, the unit of many State Plane layers.
	USSurveyFoot Length = 1200.0 / 3937.0
)

// Flow units. One US gallon is 231 in³ = 3.785411784 L exactly.
const (
	CubicMetrePerSecond  Flow = 1
	LitrePerSecond       Flow = 1e-3
	CubicFootPerSecond   Flow = 0.028316846592               // 0.3048³
	USGallonPerMinute    Flow = 3.785411784e-3 / 60          // 6.30901964e-5 m³/s
	MillionGallonsPerDay Flow = 3.785411784e-3 * 1e6 / 86400 // 0.0438126364 m³/s
)

// Velocity units.
const (
	MetrePerSecond Velocity = 1
	FootPerSecond  Velocity = 0.3048
)

// Pressure units.
const (
	Pascal             Pressure = 1
	Kilopascal         Pressure = 1e3
	PoundPerSquareInch Pressure = 4.4482216152605 / (0.0254 * 0.0254) // 6894.757 Pa
)

// SpecificWeightOfWater is the unit weight γ used to turn head into pressure:
// 62.4 lbf/ft³ (about 9802 N/m³), so 1 psi = 144/62.4 = 2.3077 ft of water.
// The value is the one used in US practice for water near 50–60 °F
// (common practice; DOMAIN.md §3.7).
const SpecificWeightOfWater = 62.4 * 4.4482216152605 / 0.028316846592 // N/m³

// Metres returns l in metres.
func (l Length) Metres() float64 { return float64(l) }

// Feet returns l in international feet.
func (l Length) Feet() float64 { return float64(l / Foot) }

// Inches returns l in inches.
func (l Length) Inches() float64 { return float64(l / Inch) }

// Millimetres returns l in millimetres.
func (l Length) Millimetres() float64 { return float64(l / Millimetre) }

// Metres returns h in metres of water.
func (h Head) Metres() float64 { return float64(h) }

// Feet returns h in feet of water.
func (h Head) Feet() float64 { return float64(h) / float64(Foot) }

// GPM returns q in US gallons per minute.
func (q Flow) GPM() float64 { return float64(q / USGallonPerMinute) }

// LPS returns q in litres per second.
func (q Flow) LPS() float64 { return float64(q / LitrePerSecond) }

// CFS returns q in cubic feet per second.
func (q Flow) CFS() float64 { return float64(q / CubicFootPerSecond) }

// FPS returns v in feet per second.
func (v Velocity) FPS() float64 { return float64(v / FootPerSecond) }

// MPS returns v in metres per second.
func (v Velocity) MPS() float64 { return float64(v) }

// PSI returns p in pounds per square inch.
func (p Pressure) PSI() float64 { return float64(p / PoundPerSquareInch) }

// KPa returns p in kilopascals.
func (p Pressure) KPa() float64 { return float64(p / Kilopascal) }

// PressureOf returns the gauge pressure of a column of water of height h:
//
//	p = γ · h,  γ = SpecificWeightOfWater
func PressureOf(h Head) Pressure { return Pressure(SpecificWeightOfWater * float64(h)) }

// HeadOf returns the height of water whose weight makes gauge pressure p: h = p / γ.
func HeadOf(p Pressure) Head { return Head(float64(p) / SpecificWeightOfWater) }

// System is the unit system users read and write: US customary or SI.
// Inside the package every quantity is SI; a System converts at the edges.
type System int

const (
	US System = iota // feet, inches, gpm, psi, ft/s, ft per 1,000 ft
	SI               // metres, millimetres, L/s, kPa, m/s, m per km
)

// String returns "us" or "si", the spelling of the config key `units`.
func (s System) String() string {
	if s == SI {
		return "si"
	}
	return "us"
}

// Length returns l in feet (US) or metres (SI).
func (s System) Length(l Length) float64 {
	if s == SI {
		return l.Metres()
	}
	return l.Feet()
}

// Elevation returns a head or elevation in feet (US) or metres (SI).
func (s System) Head(h Head) float64 {
	if s == SI {
		return h.Metres()
	}
	return h.Feet()
}

// Diameter returns d in inches (US) or millimetres (SI).
func (s System) Diameter(d Length) float64 {
	if s == SI {
		return d.Millimetres()
	}
	return d.Inches()
}

// Flow returns q in gpm (US) or L/s (SI).
func (s System) Flow(q Flow) float64 {
	if s == SI {
		return q.LPS()
	}
	return q.GPM()
}

// Velocity returns v in ft/s (US) or m/s (SI).
func (s System) Velocity(v Velocity) float64 {
	if s == SI {
		return v.MPS()
	}
	return v.FPS()
}

// Pressure returns p in psi (US) or kPa (SI).
func (s System) Pressure(p Pressure) float64 {
	if s == SI {
		return p.KPa()
	}
	return p.PSI()
}

// UnitHeadLoss returns a friction slope (head per length, dimensionless) as
// feet per 1,000 ft (US) or metres per km (SI); both are slope × 1000.
func (s System) UnitHeadLoss(slope float64) float64 { return slope * 1000 }

// Suffixes used in column and config key names, such as flow_gpm or flow_lps.
func (s System) LengthSuffix() string   { return s.pick("ft", "m") }
func (s System) DiameterSuffix() string { return s.pick("in", "mm") }
func (s System) FlowSuffix() string     { return s.pick("gpm", "lps") }
func (s System) VelocitySuffix() string { return s.pick("fps", "mps") }
func (s System) PressureSuffix() string { return s.pick("psi", "kpa") }
func (s System) UnitHeadLossSuffix() string {
	return s.pick("ft_per_kft", "m_per_km")
}

// Unit labels for text meant to be read (summaries, reasons).
func (s System) LengthLabel() string       { return s.pick("ft", "m") }
func (s System) DiameterLabel() string     { return s.pick("in", "mm") }
func (s System) FlowLabel() string         { return s.pick("gpm", "L/s") }
func (s System) VelocityLabel() string     { return s.pick("ft/s", "m/s") }
func (s System) PressureLabel() string     { return s.pick("psi", "kPa") }
func (s System) UnitHeadLossLabel() string { return s.pick("ft/kft", "m/km") }

func (s System) pick(us, si string) string {
	if s == SI {
		return si
	}
	return us
}
