package main

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// C-factors from aging models (DESIGN.md, C aging; DOMAIN.md §2.6). Each
// material ages by a C-by-age curve ([[aging.curve]]) or by the roughness
// growth of Sharp & Walski (1988) ([[aging.growth]]); a lining year on the
// pipe restarts its age on the lined curve; a zone factor calibrates the
// model; a measured C on the pipe overrides all of it. The run compares
// model and measured C where a pipe has both (c_calibration.csv).

// GrowthConfig is one [[aging.growth]] entry: a material whose C follows the
// Sharp & Walski model from its inside diameter. Either spelling of e0 may
// be given, not both; of the growth rate, one of growth_ft_per_yr,
// growth_mm_per_yr and aggressiveness (a Lamont class). An entry without
// aliases takes those of the built-in model or curve of its material.
type GrowthConfig struct {
	Material       string   `toml:"material"`
	Aliases        []string `toml:"aliases"`
	Source         string   `toml:"source"`
	E0Ft           *float64 `toml:"e0_ft"`
	E0Mm           *float64 `toml:"e0_mm"`
	GrowthFtPerYr  *float64 `toml:"growth_ft_per_yr"`
	GrowthMmPerYr  *float64 `toml:"growth_mm_per_yr"`
	Aggressiveness string   `toml:"aggressiveness"`
	NewC           float64  `toml:"new_c"`
	FloorC         float64  `toml:"floor_c"`
}

// ageDefaultClass is the Lamont class of a growth entry that gives no rate:
// "moderate" (DOMAIN.md §2.6 step 2).
const ageDefaultClass = "moderate"

// ageMaxNewC bounds new_c: no pipe is smoother than about 150 (DOMAIN.md
// §2.1), and 160 leaves room for a utility's own figure.
const ageMaxNewC = 160

// ageFallbackNewC is the new C of a growth entry for a material with no
// built-in model or curve: 150, the smoothest new pipe of DOMAIN.md §2.1,
// so that the clamp still cuts the model's absurd values for smooth pipe.
const ageFallbackNewC = 150

// ageKey names a growth entry's key in messages: aging.growth[2].e0_ft.
func ageKey(k int, key string) string { return fmt.Sprintf("aging.growth[%d].%s", k+1, key) }

// ageE0 is the entry's e0 as a two-spelling quantity (default 0.00085 ft).
func (g GrowthConfig) ageE0(k int) quantity {
	return quantity{ageKey(k, "e0_ft"), ageKey(k, "e0_mm"), g.E0Ft, g.E0Mm, [2]float64{ft, mm},
		float64(hydraulics.CastIronInitialRoughness), true}
}

// ageRate returns the entry's roughness growth per year: the rate given in
// ft or mm per year, or the Lamont class's, or the moderate class's.
func (g GrowthConfig) ageRate(k int) (hydraulics.Length, error) {
	given := 0
	for _, set := range []bool{g.GrowthFtPerYr != nil, g.GrowthMmPerYr != nil, strings.TrimSpace(g.Aggressiveness) != ""} {
		if set {
			given++
		}
	}
	if given > 1 {
		return 0, fmt.Errorf("%s: give one of growth_ft_per_yr, growth_mm_per_yr and aggressiveness, not %d", ageKey(k, "*"), given)
	}
	if g.GrowthFtPerYr != nil || g.GrowthMmPerYr != nil {
		q := quantity{ageKey(k, "growth_ft_per_yr"), ageKey(k, "growth_mm_per_yr"), g.GrowthFtPerYr, g.GrowthMmPerYr, [2]float64{ft, mm}, 0, false}
		v, err := q.value(hydraulics.US)
		return hydraulics.Length(v), err
	}
	name := g.Aggressiveness
	if strings.TrimSpace(name) == "" {
		name = ageDefaultClass
	}
	a, ok := hydraulics.AttackGrowth(name)
	if !ok {
		var names []string
		for _, c := range hydraulics.AttackClasses() {
			names = append(names, strconv.Quote(c.Name))
		}
		return 0, fmt.Errorf("%s = %q is not a Lamont attack class; use %s, or give growth_ft_per_yr", ageKey(k, "aggressiveness"), g.Aggressiveness, strings.Join(names, ", "))
	}
	return a, nil
}

// ageNewC is the entry's new_c, or the new C of the built-in model or
// curve of its material, or ageFallbackNewC.
func (g GrowthConfig) ageNewC() float64 {
	if g.NewC != 0 {
		return g.NewC
	}
	if m, ok := hydraulics.DefaultAgingModels().Lookup(g.Material); ok {
		if m.Growth != nil {
			return m.Growth.NewC
		}
		return m.Curve.C(0)
	}
	return ageFallbackNewC
}

// ageModel is the entry as a hydraulics growth model; ageValidate has
// already rejected entries with errors.
func (g GrowthConfig) ageModel(k int) hydraulics.GrowthModel {
	e0, _ := g.ageE0(k).value(hydraulics.US)
	a, _ := g.ageRate(k)
	floor := g.FloorC
	if floor == 0 {
		floor = hydraulics.DefaultFloorC
	}
	src := g.Source
	if src == "" {
		src = "config: Sharp & Walski (1988) roughness growth"
	}
	aliases := g.Aliases
	if aliases == nil {
		if m, ok := hydraulics.DefaultAgingModels().Lookup(g.Material); ok && strings.EqualFold(m.Material(), g.Material) {
			aliases = m.Curve.Aliases
			if m.Growth != nil {
				aliases = m.Growth.Aliases
			}
		}
	}
	return hydraulics.GrowthModel{Material: g.Material, Aliases: aliases, Source: src,
		Initial: hydraulics.Length(e0), PerYear: a, NewC: g.ageNewC(), FloorC: floor}
}

// ageValidate checks the growth entries, the lined curve and the zone
// factors, and sets the lined curve's default.
func (c *Config) ageValidate() []error {
	var errs []error
	for k, g := range c.Aging.Growth {
		errs = append(errs, g.ageCheck(k)...)
	}
	if c.Aging.LinedCurve == "" {
		c.Aging.LinedCurve = hydraulics.LinedCurve
	}
	if _, ok := c.agingTable().Lookup(c.Aging.LinedCurve); !ok {
		errs = append(errs, fmt.Errorf("aging.lined_curve = %q is not a material of the aging curves; name an [[aging.curve]] (default %q)", c.Aging.LinedCurve, hydraulics.LinedCurve))
	}
	for _, zone := range ageZoneNames(c.Aging.ZoneFactor) {
		if f := c.Aging.ZoneFactor[zone]; !(f > 0) || math.IsInf(f, 0) {
			errs = append(errs, fmt.Errorf("aging.zone_factor.%s = %g: must be a number > 0 (a multiplier on the model C; 1 = as modelled)", strconv.Quote(zone), f))
		}
	}
	if len(c.Aging.ZoneFactor) > 0 && strings.TrimSpace(c.Pipes.Fields.Zone) == "" {
		errs = append(errs, errors.New("aging.zone_factor needs pipes.fields.zone, the pipe attribute that names each pipe's zone"))
	}
	return errs
}

// ageCheck checks one growth entry.
func (g GrowthConfig) ageCheck(k int) []error {
	var errs []error
	if strings.TrimSpace(g.Material) == "" {
		errs = append(errs, fmt.Errorf("%s is required", ageKey(k, "material")))
	}
	if _, err := g.ageE0(k).value(hydraulics.US); err != nil {
		errs = append(errs, err)
	}
	if _, err := g.ageRate(k); err != nil {
		errs = append(errs, err)
	}
	newC := g.ageNewC()
	if g.NewC != 0 && (!(g.NewC > 0) || g.NewC > ageMaxNewC) {
		errs = append(errs, fmt.Errorf("%s = %g: must be in 0–%d (the C of this material when new)", ageKey(k, "new_c"), g.NewC, ageMaxNewC))
	}
	if f := g.FloorC; f != 0 && (!(f > 0) || !(f < newC)) {
		errs = append(errs, fmt.Errorf("%s = %g: must be > 0 and below the new C %g", ageKey(k, "floor_c"), f, newC))
	}
	return errs
}

// ageZoneNames returns the zone factor's zones, sorted.
func ageZoneNames(m map[string]float64) []string {
	names := make([]string, 0, len(m))
	for z := range m {
		names = append(names, z)
	}
	slices.Sort(names)
	return names
}

// ageModels are the aging models of the run: the built-in growth models,
// less those of a material the config gives a curve for, with the config's
// growth entries replacing the built-in model of the same material or added
// after them; and the table of agingTable.
func (c *Config) ageModels() hydraulics.AgingModels {
	ms := hydraulics.DefaultAgingModels()
	ms.Table = c.agingTable()
	for _, cc := range c.Aging.Curves {
		ms.Growth = slices.DeleteFunc(ms.Growth, func(g hydraulics.GrowthModel) bool {
			_, shadowed := hydraulics.AgingModels{Growth: []hydraulics.GrowthModel{g}}.Lookup(cc.Material)
			return shadowed
		})
	}
	for k, gc := range c.Aging.Growth {
		g := gc.ageModel(k)
		i := slices.IndexFunc(ms.Growth, func(x hydraulics.GrowthModel) bool { return strings.EqualFold(x.Material, g.Material) })
		if i >= 0 {
			ms.Growth[i] = g
		} else {
			ms.Growth = append(ms.Growth, g)
		}
	}
	return ms
}

// ageResult is, per input pipe, what the aging models gave.
type ageResult struct {
	lined    []int                // lining year; 0 = none
	model    []float64            // the model's C (zone factor applied); NaN = none
	source   []hydraulics.CSource // where the pipe's C came from
	material []string             // the model's material code, for the calibration
	fits     []hydraulics.CFit    // model against measured C, per material
}

// ageInside is the diameter the growth model reads for pipe i: the inside
// diameter the network uses (sizes.go), else the recorded diameter.
func (r *result) ageInside(i int) hydraulics.Length {
	if i < len(r.inside) && r.inside[i] > 0 {
		return r.inside[i]
	}
	return r.pipes[i].Diameter
}

// ageReadLined reads each pipe's lining year from pipes.fields.lined_year
// (when mapped). An empty or zero value means not lined; a value that is not
// a whole year between the install year (or 1800) and the analysis year is
// a problem row and the lining is ignored.
func (r *result) ageReadLined(c *gis.Collection) []gis.Problem {
	cfg := r.cfg
	if r.age == nil {
		r.age = &ageResult{}
	}
	r.age.lined = make([]int, len(r.pipes))
	field := strings.TrimSpace(cfg.Pipes.Fields.LinedYear)
	if field == "" {
		return nil
	}
	var probs []gis.Problem
	for i, p := range r.pipes {
		if i >= len(c.Features.Features) {
			break
		}
		v, name := layerFlowLookup(c.Attrs(i), field)
		year, why := ageLiningYear(v, p.InstallYear, cfg.AnalysisYear)
		if why != "" {
			probs = append(probs, gis.Problem{File: c.File, Feature: p.Index, ID: p.ID, Field: name,
				What:   why,
				Action: "lining ignored: C from the material and install year; correct the lining year or leave it empty"})
			continue
		}
		r.age.lined[i] = year
	}
	return probs
}

// ageLiningYear reads one lining year; 0 with why "" means not lined.
func ageLiningYear(v any, installYear, analysisYear int) (int, string) {
	x, why := layerFlowNumber(v)
	switch {
	case why == "is missing" || why == "" && x == 0:
		return 0, ""
	case why != "":
		return 0, "lining year " + why
	case x != math.Trunc(x):
		return 0, fmt.Sprintf("lining year %s is not a whole year", strconv.FormatFloat(x, 'f', -1, 64))
	case x > float64(analysisYear):
		return 0, fmt.Sprintf("lining year %.0f is after the analysis year %d", x, analysisYear)
	case installYear > 0 && x < float64(installYear):
		return 0, fmt.Sprintf("lining year %.0f is before the install year %d", x, installYear)
	case x < gis.FirstInstallYear:
		return 0, fmt.Sprintf("lining year %.0f is before %d", x, gis.FirstInstallYear)
	}
	return int(x), ""
}

// ageDerate sets each pipe's Hazen-Williams C (r.cFactor), how it was found
// (r.cBasis) and the model's C and source (r.age): a measured C overrides
// the model; a lined pipe takes the lined curve at its age since lining;
// any other pipe its material's model at its age since installation, the
// growth model at its inside diameter; the zone factor multiplies the
// model's C (DESIGN.md, C aging; DOMAIN.md §2.6).
func (r *result) ageDerate() {
	cfg := r.cfg
	if r.age == nil || r.age.lined == nil {
		r.age = &ageResult{lined: make([]int, len(r.pipes))}
	}
	ms := cfg.ageModels()
	fallback, _ := ms.Lookup(cfg.Aging.UnknownMaterial)
	lined, _ := ms.Table.Lookup(cfg.Aging.LinedCurve)
	n := len(r.pipes)
	a := r.age
	a.model, a.source, a.material = make([]float64, n), make([]hydraulics.CSource, n), make([]string, n)
	r.cFactor, r.cBasis = make([]float64, n), make([]string, n)
	var pairs []hydraulics.CPair
	lookup := memoLookup(ms)
	for i, p := range r.pipes {
		m, age, basis := r.ageChoose(i, lookup, fallback, lined)
		c, src := m.C(age, r.ageInside(i)), m.Source()
		if math.IsNaN(c) { // no usable diameter: such a pipe is out of the network
			if curve, ok := ms.Table.Lookup(m.Material()); ok {
				c, src, basis = curve.C(age), hydraulics.CTable, basis+", no usable diameter"
			}
		}
		if a.lined[i] > 0 {
			src = hydraulics.CLined
		}
		if f, ok := cfg.Aging.ZoneFactor[strings.TrimSpace(p.Zone)]; ok && f != 1 {
			c *= f
			basis += fmt.Sprintf(" × %s zone %s", strconv.FormatFloat(f, 'g', -1, 64), strings.TrimSpace(p.Zone))
		}
		a.model[i], a.source[i], a.material[i] = c, src, m.Material()
		r.cFactor[i], r.cBasis[i] = c, basis
		if p.MeasuredC > 0 {
			r.cFactor[i], r.cBasis[i], a.source[i] = p.MeasuredC, "measured", hydraulics.CMeasured
			pairs = append(pairs, hydraulics.CPair{Material: m.Material(), Model: c, Measured: p.MeasuredC})
		}
	}
	a.fits = hydraulics.CompareC(pairs)
	r.problems = append(r.problems, r.ageUnusedZones()...)
}

// ageChoose returns pipe i's aging model, its age on that model in years
// and the c_basis text; a material not in the models takes the fallback,
// with a problem row.
func (r *result) ageChoose(i int, lookup func(string) (hydraulics.AgingModel, bool), fallback hydraulics.AgingModel, lined hydraulics.AgingCurve) (hydraulics.AgingModel, float64, string) {
	cfg := r.cfg
	p := r.pipes[i]
	if y := r.age.lined[i]; y > 0 {
		age := float64(cfg.AnalysisYear - y)
		return hydraulics.AgingModel{Curve: lined}, age, fmt.Sprintf("lined %d, %s %.0f yr", y, lined.Material, age)
	}
	m, ok := lookup(p.Material)
	if !ok {
		m = fallback
		if p.Usable {
			r.problems = append(r.problems, gis.Problem{
				File: filepath.Base(cfg.Pipes.Path), Feature: p.Index, ID: p.ID, Field: cfg.Pipes.Fields.Material,
				What:   fmt.Sprintf("material %q is not in the aging models", p.Material),
				Action: fmt.Sprintf("C taken from the %s model; add the material or an alias to [[aging.curve]] or [[aging.growth]]", m.Material()),
			})
		}
	}
	age, how := math.Max(float64(cfg.AnalysisYear-p.InstallYear), 0), "aged"
	if p.InstallYear == 0 {
		age, how = cfg.Aging.UnknownAgeYears, "assumed age"
	}
	return m, age, fmt.Sprintf("%s %s %.0f yr", how, m.Material(), age)
}

// memoLookup is ms.Lookup remembering each material's answer: a layer
// holds a handful of distinct materials, and Lookup normalises and
// compares the name against every model and alias (0.6 s of CPU for a
// million pipes, called once a pipe).
func memoLookup(ms hydraulics.AgingModels) func(string) (hydraulics.AgingModel, bool) {
	type answer struct {
		m  hydraulics.AgingModel
		ok bool
	}
	seen := map[string]answer{}
	return func(material string) (hydraulics.AgingModel, bool) {
		a, hit := seen[material]
		if !hit {
			a.m, a.ok = ms.Lookup(material)
			seen[material] = a
		}
		return a.m, a.ok
	}
}

// ageUnusedZones lists, as problem rows, the zone factors no pipe's zone
// matches: most often a misspelt zone name.
func (r *result) ageUnusedZones() []gis.Problem {
	used := map[string]bool{}
	for _, p := range r.pipes {
		used[strings.TrimSpace(p.Zone)] = true
	}
	var probs []gis.Problem
	for _, z := range ageZoneNames(r.cfg.Aging.ZoneFactor) {
		if !used[z] {
			probs = append(probs, gis.Problem{File: r.cfg.file, Field: "aging.zone_factor",
				What:   fmt.Sprintf("zone %q is no pipe's zone", z),
				Action: "factor unused; check the name against the zones in " + r.cfg.Pipes.Fields.Zone})
		}
	}
	return probs
}

// ageValues sets pipe i's c_model and c_source output values in v. A
// pipe left
// out of the network (unusable diameter, say) may have no C: it is written
// as a null; a usable pipe's C must be finite, and the writers' NaN check
// stops the run if it is not.
func (r *result) ageValues(i int, v rowValues) {
	v.set("c_model", nil)
	v.set("c_source", string(r.age.source[i]))
	if c := r.age.model[i]; !math.IsNaN(c) || r.pipes[i].Usable {
		v.set("c_model", c)
	}
	if math.IsNaN(r.cFactor[i]) && !r.pipes[i].Usable {
		v.set("c_factor", nil)
	}
}

// ageCalibrationLayer is c_calibration.csv: per material, the count, mean
// and sample standard deviation of model C − measured C, how many lie in
// the Sharp & Walski ±15 band and whether the model fits.
func (r *result) ageCalibrationLayer() *gis.Layer {
	l := &gis.Layer{Name: "c_calibration", Columns: []gis.Column{
		{Name: "material", Kind: gis.String},
		{Name: "pipes", Kind: gis.Integer},
		{Name: "mean_model_minus_measured", Kind: gis.Real, Decimals: 2},
		{Name: "sd_model_minus_measured", Kind: gis.Real, Decimals: 2},
		{Name: "within_band", Kind: gis.Integer},
		{Name: "band", Kind: gis.Real, Decimals: 0},
		{Name: "fits_band", Kind: gis.String},
	}}
	for _, f := range r.age.fits {
		var sd any
		if !math.IsNaN(f.SDDifference) {
			sd = f.SDDifference
		}
		l.Rows = append(l.Rows, gis.Row{Values: []any{f.Material, f.Count, f.MeanDifference, sd, f.WithinBand,
			hydraulics.SharpWalskiBand, ageYesNo(f.Fits())}})
	}
	return l
}

func ageYesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// ageSummarise prints where the C-factors came from and the calibration.
func (r *result) ageSummarise(p func(string, ...any)) {
	a := r.age
	counts := map[hydraulics.CSource]int{}
	for _, s := range a.source {
		counts[s]++
	}
	var parts []string
	for _, s := range []hydraulics.CSource{hydraulics.CGrowth, hydraulics.CTable, hydraulics.CLined, hydraulics.CMeasured} {
		if counts[s] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", counts[s], s))
		}
	}
	p("C-factors: %s\n", strings.Join(parts, ", "))
	if len(a.fits) == 0 {
		p("  calibration: no pipe has a measured C, so the aging models are not checked against field tests\n\n")
		return
	}
	p("  calibration, model C − measured C where a pipe has both (c_calibration.csv):\n")
	var fit, off []string
	for _, f := range a.fits {
		sd := "—"
		if !math.IsNaN(f.SDDifference) {
			sd = fmt.Sprintf("%.1f", f.SDDifference)
		}
		p("    %-6s %4d pipes, mean %+.1f, sd %s, %d within ±%.0f\n", f.Material, f.Count, f.MeanDifference, sd, f.WithinBand, hydraulics.SharpWalskiBand)
		if f.Fits() {
			fit = append(fit, f.Material)
		} else {
			off = append(off, f.Material)
		}
	}
	switch {
	case len(off) == 0:
		p("  the models fit the measured C within the Sharp & Walski ±15 band\n\n")
	case len(fit) == 0:
		p("  the models do not fit the measured C within the Sharp & Walski ±15 band: adjust [[aging.growth]] rates, the curves or [aging.zone_factor]\n\n")
	default:
		p("  within the Sharp & Walski ±15 band: %s; outside it: %s (adjust their rates, curves or [aging.zone_factor])\n\n",
			strings.Join(fit, ", "), strings.Join(off, ", "))
	}
}

// ageTemplate is the [aging] part of the config template, in c's units:
// its keys, the zone factors, the growth models and the curves no growth
// model shadows, so that the template loads back to the same models.
func ageTemplate(c *Config) string {
	var b strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	list := func(v []string) string {
		out := make([]string, len(v))
		for i, x := range v {
			out[i] = strconv.Quote(x)
		}
		return "[" + strings.Join(out, ", ") + "]"
	}
	p("[aging]  # C by material: a C-by-age curve ([[aging.curve]]) or Sharp & Walski roughness growth ([[aging.growth]]); a measured C overrides both\n")
	p("unknown_age_years = %s  # age used when the install year is missing or implausible\n", num(c.Aging.UnknownAgeYears))
	p("unknown_material = %s  # model used for a material not listed below\n", strconv.Quote(c.Aging.UnknownMaterial))
	p("lined_curve = %s  # curve a pipe with a lining year follows from that year (cement-mortar lining restores C near new: AWWA M28)\n",
		strconv.Quote(orDefault(c.Aging.LinedCurve, hydraulics.LinedCurve)))
	p("\n[aging.zone_factor]  # zone = multiplier on the model C, to calibrate it to field tests (e.g. \"Upper\" = 0.92); zones not listed: 1\n")
	for _, z := range ageZoneNames(c.Aging.ZoneFactor) {
		p("%s = %s\n", strconv.Quote(z), num(c.Aging.ZoneFactor[z]))
	}
	ms := c.ageModels()
	for _, g := range ms.Growth {
		ageTemplateGrowth(p, c.system(), g, num, list)
	}
	for _, cu := range ms.Table.Curves {
		if m, _ := ms.Lookup(cu.Material); m.Growth != nil {
			continue // this material ages by its growth model
		}
		p("\n[[aging.curve]]\n")
		p("material = %s\n", strconv.Quote(cu.Material))
		p("aliases = %s\n", list(cu.Aliases))
		p("source = %s\n", strconv.Quote(cu.Source))
		pts := make([]string, len(cu.Points))
		for i, pt := range cu.Points {
			pts[i] = "[" + num(pt.Age) + ", " + num(pt.C) + "]"
		}
		p("c_by_age = [%s]  # [age in years, C], interpolated linearly, held beyond the ends\n", strings.Join(pts, ", "))
	}
	return b.String()
}

// ageTemplateGrowth writes one [[aging.growth]] entry; a growth rate that is
// a Lamont class is written as the class.
func ageTemplateGrowth(p func(string, ...any), s hydraulics.System, g hydraulics.GrowthModel, num func(float64) string, list func([]string) string) {
	p("\n[[aging.growth]]  # Sharp & Walski (1988): C = 18 − 37.2·log10((e0 + growth·age) / inside diameter), clamped to [floor_c, new_c]\n")
	p("material = %s\n", strconv.Quote(g.Material))
	p("aliases = %s\n", list(g.Aliases))
	p("source = %s\n", strconv.Quote(g.Source))
	if s == hydraulics.SI {
		p("e0_mm = %s  # roughness height when new (default 0.25908 mm = 0.00085 ft, Moody's cast iron)\n", num(roundConfig(g.Initial.Millimetres())))
	} else {
		p("e0_ft = %s  # roughness height when new (default 0.00085 ft, Moody's cast iron)\n", num(roundConfig(g.Initial.Feet())))
	}
	class, rateUnit := "", "ft"
	if s == hydraulics.SI {
		rateUnit = "mm"
	}
	var names []string
	for _, a := range hydraulics.AttackClasses() {
		names = append(names, fmt.Sprintf("%q %g in/yr", a.Name, a.PerYear.Inches()))
		if a.PerYear == g.PerYear {
			class = a.Name
		}
	}
	switch {
	case class != "":
		p("aggressiveness = %s  # Lamont (1981) attack class: %s; or give growth_%s_per_yr\n", strconv.Quote(class), strings.Join(names, ", "), rateUnit)
	case s == hydraulics.SI:
		p("growth_mm_per_yr = %s  # roughness growth per year; or aggressiveness, a Lamont class\n", num(roundConfig(g.PerYear.Millimetres())))
	default:
		p("growth_ft_per_yr = %s  # roughness growth per year; or aggressiveness, a Lamont class\n", num(roundConfig(g.PerYear.Feet())))
	}
	p("new_c = %s  # upper clamp: the material's C when new\n", num(g.NewC))
	p("floor_c = %s  # lower clamp: badly tuberculated old iron\n", num(g.FloorC))
}
