package hydraulics

import (
	"math"
	"slices"
	"strings"
)

// AgePoint is one point of an aging curve: Hazen-Williams C at an age.
type AgePoint struct {
	Age float64 // years since installation (or since lining or rehabilitation)
	C   float64 // Hazen-Williams C, dimensionless
}

// AgingCurve is C against age for one pipe material, read by linear
// interpolation between Points (ascending in Age) and held constant beyond
// the first and last points.
type AgingCurve struct {
	Material string   // code, such as "CI"
	Aliases  []string // other spellings matched by AgingTable.Lookup
	Source   string   // where the values come from
	Points   []AgePoint
}

// C returns the curve's C at ageYears: linear interpolation between the
// neighbouring points, the first point's C below its age (including
// negative ages) and the last point's C beyond its age. It returns NaN for
// a curve without points or a NaN age.
func (a AgingCurve) C(ageYears float64) float64 {
	p := a.Points
	if len(p) == 0 || math.IsNaN(ageYears) {
		return math.NaN()
	}
	if ageYears <= p[0].Age {
		return p[0].C
	}
	for k := 1; k < len(p); k++ {
		if ageYears <= p[k].Age {
			lo, hi := p[k-1], p[k]
			if hi.Age == lo.Age {
				return hi.C
			}
			f := (ageYears - lo.Age) / (hi.Age - lo.Age)
			return lo.C + f*(hi.C-lo.C)
		}
	}
	return p[len(p)-1].C
}

// AgingTable holds aging curves by material.
type AgingTable struct {
	Curves []AgingCurve
}

// Lookup returns the curve whose Material or one of whose Aliases equals
// material, ignoring case, leading and trailing spaces and runs of inner
// spaces. The first matching curve wins.
func (t AgingTable) Lookup(material string) (AgingCurve, bool) {
	key := normaliseMaterial(material)
	if key == "" {
		return AgingCurve{}, false
	}
	for _, c := range t.Curves {
		if strings.EqualFold(normaliseMaterial(c.Material), key) {
			return c, true
		}
		for _, alias := range c.Aliases {
			if strings.EqualFold(normaliseMaterial(alias), key) {
				return c, true
			}
		}
	}
	return AgingCurve{}, false
}

func normaliseMaterial(s string) string { return strings.Join(strings.Fields(s), " ") }

// unlinedCastIronMedium is C against age for unlined cast iron, medium
// sizes (8–24 in), in the Williams & Hazen tradition (DOMAIN.md §2.2,
// medium-pipe column; 5- and 10-year rows confirmed in a reproduced table,
// 20 years and older from memory, commonly attributed to Lamont 1981 /
// Williams & Hazen 1920).
var unlinedCastIronMedium = []AgePoint{
	{0, 130}, {5, 119}, {10, 111}, {20, 96}, {30, 87}, {40, 80}, {50, 74},
}

// DefaultAgingTable returns the planning defaults for C by material and
// age. Sources, per curve:
//
//   - CI, unlined cast iron: DOMAIN.md §2.2 medium-pipe column, 130 new to
//     74 at 50 years, held beyond.
//   - STL, welded steel: "welded steel = cast iron five years older"
//     (DOMAIN.md §2.2, confirmed), so 119 new, matching the 120 of §2.1.
//   - GALV, galvanised iron: 110 new (DOMAIN.md §2.1, confirmed), declining
//     in proportion to the cast-iron column (common practice, no source).
//   - DI, cement-lined ductile iron: 140 new (§2.1), −0.2 per year to a
//     floor of 130 at 50 years (§2.6 step 3, common practice; a 1922
//     cement-lined main still tested at 130 in 1999, §2.1).
//   - AC, asbestos cement: 140 new (§2.1), the same slow decline to 130
//     (§2.6 step 3, common practice).
//   - PVC and HDPE: 150 new (§2.1), −0.1 per year to a floor of 140 at
//     100 years (§2.6 step 3, common practice).
//   - CML (LinedCurve), a main lined with cement mortar in place, counted
//     from the lining year: 140 new (§2.1, cement-lined iron; §2.5: lining
//     gives C 120–140 that lasts), the DI decline to 130 at 50 years.
//
// CI and STL are shadowed by growth models in DefaultAgingModels; their
// curves stay here for a config that chooses the table for them.
//
// The returned table is a fresh copy; callers may change it.
func DefaultAgingTable() AgingTable {
	shifted := func(years float64) []AgePoint { // cast iron `years` older
		var out []AgePoint
		for _, p := range unlinedCastIronMedium {
			if p.Age >= years {
				out = append(out, AgePoint{p.Age - years, p.C})
			}
		}
		return out
	}
	scaled := func(cNew float64) []AgePoint { // cast-iron shape from cNew
		out := make([]AgePoint, len(unlinedCastIronMedium))
		for k, p := range unlinedCastIronMedium {
			out[k] = AgePoint{p.Age, p.C * cNew / unlinedCastIronMedium[0].C}
		}
		return out
	}
	const commonPractice = "common practice, no source"
	return AgingTable{Curves: []AgingCurve{
		{Material: "CI", Aliases: []string{"cast iron", "CIP", "unlined cast iron"},
			Source: "Williams & Hazen (1920) C by age, unlined cast iron, medium sizes, as commonly reproduced; rows past 10 yr not checked against the original",
			Points: append([]AgePoint(nil), unlinedCastIronMedium...)},
		{Material: "DI", Aliases: []string{"DIP", "ductile iron", "CLDI"},
			Source: "new C 140 for cement-lined iron (published C tables); decline to 130 at 50 yr: " + commonPractice,
			Points: []AgePoint{{0, 140}, {50, 130}}},
		{Material: "AC", Aliases: []string{"ACP", "asbestos cement"},
			Source: "new C 140 (published C tables); decline to 130 at 50 yr: " + commonPractice,
			Points: []AgePoint{{0, 140}, {50, 130}}},
		{Material: "PVC", Aliases: []string{"C900", "C905"},
			Source: "new C 150 (published C tables); decline to 140 at 100 yr: " + commonPractice,
			Points: []AgePoint{{0, 150}, {100, 140}}},
		{Material: "HDPE", Aliases: []string{"PE"},
			Source: "new C 150 (published C tables; AWWA M55, from memory); decline to 140 at 100 yr: " + commonPractice,
			Points: []AgePoint{{0, 150}, {100, 140}}},
		{Material: "STL", Aliases: []string{"steel", "welded steel"},
			Source: "welded steel ages as cast iron five years older (note to a published reproduction of the Williams & Hazen table)",
			Points: shifted(5)},
		{Material: "GALV", Aliases: []string{"galvanized", "galvanised", "galvanized iron"},
			Source: "new C 110 (published C tables); the cast-iron decline scaled to it: " + commonPractice,
			Points: scaled(110)},
		{Material: LinedCurve, Aliases: []string{"cement-mortar lined", "cement lined", "relined"},
			Source: "cement-mortar lining restores a C near new: 140 for cement-lined iron (published C tables; AWWA M28, C602, from memory); decline to 130 at 50 yr: " + commonPractice,
			Points: []AgePoint{{0, 140}, {50, 130}}},
	}}
}

// SharpWalskiC returns Hazen-Williams C from the roughness-growth model of
// Sharp & Walski (1988) for unlined metal pipe:
//
//	C = 18.0 − 37.2 · log10(X),   X = (e0 + a·t) / D
//
// with e0 the initial roughness height, a = growthPerYear the roughness
// growth per year, t = ageYears and D the inside diameter (X is
// dimensionless, so any length unit works). It returns NaN when e0 + a·t
// or D is not positive. The raw value is returned; callers clamp it to a
// floor (about 40) and to the material's new C (DOMAIN.md §2.3, §2.6).
//
// Reference: W.W. Sharp & T.M. Walski, "Predicting internal roughness in
// water mains", J. AWWA 80(11):34–40, 1988.
func SharpWalskiC(e0 Length, growthPerYear Length, ageYears float64, d Length) float64 {
	e := float64(e0) + float64(growthPerYear)*ageYears
	if !(e > 0) || !(d > 0) {
		return math.NaN()
	}
	return 18.0 - 37.2*math.Log10(e/float64(d))
}

// SharpWalskiGrowth returns the roughness growth per year that makes the
// Sharp & Walski model give cObserved at ageYears (a field C-test):
//
//	X = 10^((18 − C_obs)/37.2),   a = (X·D − e0) / t
//
// (DOMAIN.md §2.3, algebra). It returns NaN when ageYears or d is not
// positive; a negative result means the observed C is above the model's C
// for a new pipe of roughness e0.
func SharpWalskiGrowth(cObserved, ageYears float64, e0, d Length) Length {
	if !(ageYears > 0) || !(d > 0) {
		return Length(math.NaN())
	}
	x := math.Pow(10, (18-cObserved)/37.2)
	return Length((x*float64(d) - float64(e0)) / ageYears)
}

// LinedCurve is the material code of the built-in curve for mains lined with
// cement mortar in place; a lining year counts the age on it.
const LinedCurve = "CML"

// DefaultFloorC is the lowest C the roughness-growth model returns: about
// 40, badly tuberculated old iron (DOMAIN.md §2.1 gives 40–80 for it; §2.3
// and §2.6 clamp the model there).
const DefaultFloorC = 40

// CastIronInitialRoughness is e0 of new cast iron for the Sharp & Walski
// model: 0.00085 ft (0.26 mm), Moody's cast-iron roughness (DOMAIN.md §2.3
// and §2.6 step 2, from memory); it gives C_new 132 at 12 in and 121 at
// 6 in, the size effect of the Williams & Hazen table.
const CastIronInitialRoughness = 0.00085 * Foot

// AttackClass is one of Lamont's (1981) four classes of how aggressive a
// water is to unlined iron, with its typical roughness growth per year.
type AttackClass struct {
	Name    string // "slight", "moderate", "appreciable", "severe"
	PerYear Length // roughness growth per year
}

// AttackClasses returns Lamont's classes, mildest first: 0.001, 0.003,
// 0.01 and 0.03 in/yr (≈ 0.025, 0.076, 0.25, 0.76 mm/yr).
//
// Reference: P.A. Lamont, "Common pipe flow formulas compared with the
// theory of roughness", J. AWWA 73(5):274–280, 1981 (rates from memory, in
// the 1:3:10:30 pattern; DOMAIN.md §2.4, §10).
func AttackClasses() []AttackClass {
	return []AttackClass{
		{"slight", 0.001 * Inch},
		{"moderate", 0.003 * Inch},
		{"appreciable", 0.01 * Inch},
		{"severe", 0.03 * Inch},
	}
}

// AttackGrowth returns the roughness growth per year of the Lamont class
// named name (ignoring case and surrounding spaces).
func AttackGrowth(name string) (Length, bool) {
	for _, c := range AttackClasses() {
		if strings.EqualFold(strings.TrimSpace(name), c.Name) {
			return c.PerYear, true
		}
	}
	return 0, false
}

// GrowthModel is the roughness-growth model of Sharp & Walski (1988) for one
// material of unlined metal pipe:
//
//	e(t) = e0 + a·t
//	C(t) = clamp(18.0 − 37.2 · log10(e(t)/D), FloorC, NewC)
//
// with t the age in years and D the inside diameter. The clamp keeps the
// fit inside its use: above the material's new-pipe C it would claim a
// rough pipe is smoother than new (and for smooth pipe it gives absurd
// values, C ≈ 209 for PVC), below about 40 it extrapolates past the data
// (DOMAIN.md §2.3, §2.6).
type GrowthModel struct {
	Material string   // code, such as "CI"
	Aliases  []string // other spellings matched by AgingModels.Lookup
	Source   string   // where the values come from
	Initial  Length   // e0, the roughness height of new pipe; > 0
	PerYear  Length   // a, the roughness growth per year; ≥ 0
	NewC     float64  // the material's new-pipe C, the upper clamp
	FloorC   float64  // the lower clamp; 0 means DefaultFloorC
}

// C returns the model's C at ageYears (negative ages count as 0) for a
// pipe of inside diameter d. It returns NaN for a diameter that is not
// positive, a NaN age or a model without a positive e0.
func (g GrowthModel) C(ageYears float64, d Length) float64 {
	if math.IsNaN(ageYears) || !(g.Initial > 0) || g.PerYear < 0 {
		return math.NaN()
	}
	c := SharpWalskiC(g.Initial, g.PerYear, math.Max(ageYears, 0), d)
	if math.IsNaN(c) {
		return c
	}
	floor := g.FloorC
	if floor == 0 {
		floor = DefaultFloorC
	}
	return math.Max(floor, math.Min(c, g.NewC))
}

// CSource says where a pipe's C came from, as the outputs spell it.
type CSource string

// The sources of a pipe's C.
const (
	CMeasured CSource = "measured"     // a field test or calibration on the pipe
	CTable    CSource = "table"        // the material's C-by-age curve
	CGrowth   CSource = "growth model" // Sharp & Walski roughness growth
	CLined    CSource = "lined"        // the lined curve, aged from the lining year
)

// AgingModel is one material's way of aging: a curve, or a growth model
// when Growth is not nil.
type AgingModel struct {
	Curve  AgingCurve
	Growth *GrowthModel
}

// Material is the model's material code.
func (m AgingModel) Material() string {
	if m.Growth != nil {
		return m.Growth.Material
	}
	return m.Curve.Material
}

// Source is CGrowth for a growth model and CTable for a curve.
func (m AgingModel) Source() CSource {
	if m.Growth != nil {
		return CGrowth
	}
	return CTable
}

// C returns the model's C at ageYears for a pipe of inside diameter d (a
// curve does not read d).
func (m AgingModel) C(ageYears float64, d Length) float64 {
	if m.Growth != nil {
		return m.Growth.C(ageYears, d)
	}
	return m.Curve.C(ageYears)
}

// AgingModels holds each material's aging: growth models first, then the
// table's curves. A material with a growth model ages by it even if the
// table has a curve for it too.
type AgingModels struct {
	Growth []GrowthModel
	Table  AgingTable
}

// Lookup returns the growth model, else the curve, whose material or one of
// whose aliases equals material (see AgingTable.Lookup for the matching).
func (ms AgingModels) Lookup(material string) (AgingModel, bool) {
	key := normaliseMaterial(material)
	if key == "" {
		return AgingModel{}, false
	}
	for k := range ms.Growth {
		g := &ms.Growth[k]
		if sameMaterial(key, g.Material, g.Aliases) {
			return AgingModel{Growth: g}, true
		}
	}
	if c, ok := ms.Table.Lookup(material); ok {
		return AgingModel{Curve: c}, true
	}
	return AgingModel{}, false
}

// sameMaterial reports whether the normalised key names code or an alias.
func sameMaterial(key, code string, aliases []string) bool {
	if strings.EqualFold(normaliseMaterial(code), key) {
		return true
	}
	for _, a := range aliases {
		if strings.EqualFold(normaliseMaterial(a), key) {
			return true
		}
	}
	return false
}

// DefaultAgingModels returns the planning defaults (DOMAIN.md §2.6): unlined
// cast iron and unlined steel age by the Sharp & Walski model with
// e0 = 0.00085 ft and Lamont's "moderate" growth of 0.003 in/yr, clamped to
// [40, C_new] with C_new 130 for cast iron and 120 for welded steel
// (DOMAIN.md §2.1); lined and plastic pipe keep the curves of
// DefaultAgingTable. The moderate class puts the 50-yr C of an 8-in cast-iron
// main at 81 and of a 6-in at 77 (the Williams & Hazen medium-pipe table
// gives 74), and a 12-in main at 88.
//
// This replaces the table's hold of unlined cast iron at C 74 beyond 50
// years: roughness keeps growing, and C keeps falling, with age.
// The returned models are a fresh copy; callers may change them.
func DefaultAgingModels() AgingModels {
	moderate, _ := AttackGrowth("moderate")
	const swSource = "Sharp & Walski (1988) roughness growth, e0 0.00085 ft (Moody's cast iron), Lamont (1981) moderate attack 0.003 in/yr"
	return AgingModels{
		Growth: []GrowthModel{
			{Material: "CI", Aliases: []string{"cast iron", "CIP", "unlined cast iron"},
				Source:  swSource + "; new C 130 (Williams & Hazen)",
				Initial: CastIronInitialRoughness, PerYear: moderate, NewC: 130, FloorC: DefaultFloorC},
			{Material: "STL", Aliases: []string{"steel", "welded steel"},
				Source:  swSource + "; new C 120 for welded steel (published C tables)",
				Initial: CastIronInitialRoughness, PerYear: moderate, NewC: 120, FloorC: DefaultFloorC},
		},
		Table: DefaultAgingTable(),
	}
}

// SharpWalskiBand is the 95 % confidence band of the Sharp & Walski fit, in
// C: ±15 (r² = 0.87 over 319 points; DTIC abstract ADA194321, DOMAIN.md
// §2.3).
const SharpWalskiBand = 15.0

// CPair is one pipe with both a model C and a measured C.
type CPair struct {
	Material string  // the model's material code
	Model    float64 // the model's C (with any calibration factor)
	Measured float64 // the field-tested C
}

// CFit compares model C with measured C over one material's pipes.
type CFit struct {
	Material string
	Count    int
	// MeanDifference is the mean of model − measured, in C.
	MeanDifference float64
	// SDDifference is the sample standard deviation of model − measured,
	// sqrt(Σ(d − mean)² / (n − 1)), in C; NaN for a single pipe.
	SDDifference float64
	// WithinBand counts the pipes with |model − measured| ≤ SharpWalskiBand.
	WithinBand int
}

// Fits reports whether the model fits these pipes within the Sharp &
// Walski band: the mean difference is inside ±15 and at least 95 % of the
// differences are, as a 95 % band implies.
func (f CFit) Fits() bool {
	return f.Count > 0 && math.Abs(f.MeanDifference) <= SharpWalskiBand &&
		float64(f.WithinBand) >= 0.95*float64(f.Count)
}

// CompareC groups pairs by material (ordered by material code) and gives
// each group's count, mean and sample standard deviation of model −
// measured, and how many differences lie inside the Sharp & Walski band.
// Pairs with a NaN value are skipped.
func CompareC(pairs []CPair) []CFit {
	byMaterial := map[string][]float64{}
	var names []string
	for _, p := range pairs {
		d := p.Model - p.Measured
		if math.IsNaN(d) || math.IsInf(d, 0) {
			continue
		}
		if _, ok := byMaterial[p.Material]; !ok {
			names = append(names, p.Material)
		}
		byMaterial[p.Material] = append(byMaterial[p.Material], d)
	}
	slices.Sort(names)
	fits := make([]CFit, 0, len(names))
	for _, name := range names {
		fits = append(fits, fitOf(name, byMaterial[name]))
	}
	return fits
}

// fitOf computes one material's statistics by two passes (mean, then
// squared deviations), which is exact enough for a few thousand C values.
func fitOf(material string, diffs []float64) CFit {
	f := CFit{Material: material, Count: len(diffs), SDDifference: math.NaN()}
	var sum float64
	for _, d := range diffs {
		sum += d
		if math.Abs(d) <= SharpWalskiBand {
			f.WithinBand++
		}
	}
	f.MeanDifference = sum / float64(len(diffs))
	if len(diffs) > 1 {
		var ss float64
		for _, d := range diffs {
			ss += (d - f.MeanDifference) * (d - f.MeanDifference)
		}
		f.SDDifference = math.Sqrt(ss / float64(len(diffs)-1))
	}
	return f
}
