package main

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// The replacement program (issue 7): break history, risk, priority,
// Shamir & Howard economics, projects, costs and the budget plan. The
// config sections are [breaks], [facilities], [risk], [economics],
// [projects], [costs] and [plan].

// BreakLayer names the main-break layer and its fields.
type BreakLayer struct {
	LayerFile
	Fields BreakFields `toml:"fields"`
	// MaxDistanceFt / MaxDistanceM: a break without a pipe id (or with one
	// that names no pipe) joins the nearest main within this distance.
	MaxDistanceFt *float64 `toml:"max_distance_ft"`
	MaxDistanceM  *float64 `toml:"max_distance_m"`
	// FirstYear and LastYear bound the record, inclusive; 0 means the
	// year of the earliest and of the latest break.
	FirstYear int `toml:"first_year"`
	LastYear  int `toml:"last_year"`
}

// BreakFields maps the break attributes: the date (required), the break's
// id and the id of the pipe it happened on (optional).
type BreakFields struct {
	ID     string `toml:"id"`
	Date   string `toml:"date"`
	PipeID string `toml:"pipe_id"`
}

// FacilityLayer names the critical-facility layer (hospitals, schools...).
type FacilityLayer struct {
	LayerFile
	Fields FacilityFields `toml:"fields"`
}

// FacilityFields maps the facility attributes (both optional).
type FacilityFields struct {
	ID   string `toml:"id"`
	Kind string `toml:"kind"`
}

// RiskConfig is the [risk] section: weights, edges and class scores of
// scoring.RiskConfig, each key overriding its default.
type RiskConfig struct {
	RiskWeight        *float64             `toml:"risk_weight"`
	PerformanceWeight *float64             `toml:"performance_weight"`
	Weights           map[string]float64   `toml:"weights"`
	Edges             map[string][]float64 `toml:"edges"`
	MaterialScores    map[string]float64   `toml:"material_scores"`
	RoadScores        map[string]float64   `toml:"road_scores"`
	ExpectedLife      map[string]float64   `toml:"expected_life_years"`
}

// EconomicsConfig is the [economics] section (Shamir & Howard 1979).
type EconomicsConfig struct {
	RepairCost      *float64 `toml:"repair_cost_per_break"`
	DiscountRate    *float64 `toml:"discount_rate"`
	DefaultGrowth   *float64 `toml:"default_growth"`
	MinCohortBreaks int      `toml:"min_cohort_breaks"`
}

// ProjectsConfig is the [projects] section.
type ProjectsConfig struct {
	// MinPriority: a main qualifies at or above this priority (0–100), or
	// when the upsizing loop recommends it, or when its economic
	// replacement year falls within the plan.
	MinPriority *float64 `toml:"min_priority"`
	MaxLengthFt *float64 `toml:"max_length_ft"`
	MaxLengthM  *float64 `toml:"max_length_m"`
	MaxGapFt    *float64 `toml:"max_gap_ft"`
	MaxGapM     *float64 `toml:"max_gap_m"`
	// ByStreet joins mains only along one street name; unset means on when
	// pipes.fields.street is mapped.
	ByStreet *bool `toml:"by_street"`
}

// CostsConfig is the [costs] section: rows of [diameter, cost per length]
// (US: inches and dollars per foot; SI: millimetres and dollars per
// metre), a factor per surface class and a fixed cost per project.
type CostsConfig struct {
	PerFtByDiameterIn [][]float64        `toml:"per_ft_by_diameter_in"`
	PerMByDiameterMm  [][]float64        `toml:"per_m_by_diameter_mm"`
	SurfaceFactor     map[string]float64 `toml:"surface_factor"`
	PerProject        *float64           `toml:"per_project"`
}

// PlanConfig is the [plan] section.
type PlanConfig struct {
	Years        int      `toml:"years"`
	FirstYear    int      `toml:"first_year"`
	AnnualBudget *float64 `toml:"annual_budget"`
	Escalation   *float64 `toml:"escalation"`
	// MustDoPipes are pipe ids whose projects are funded first.
	MustDoPipes []string `toml:"must_do_pipes"`
}

// Program defaults (common practice, no single source; the README says so).
const (
	progDefaultBreakDistanceFt = 50   // a break record is usually placed at the service or the curb, well within 50 ft of its main
	progDefaultRepairCost      = 10e3 // dollars per break: the order of DOMAIN.md §7.2's worked examples ($8,000–10,000)
	progDefaultDiscountRate    = 0.03
	progDefaultGrowth          = 0.03 // per year, for a cohort with too few breaks to fit (within §7.2's examples, 0.05–0.08 for old iron)
	progDefaultMinPriority     = 20   // a main failing a hydraulic criterion scores 40–85 in performance, so 20 or more in priority; so does a risk of about 11 of 25
	progDefaultMaxLengthFt     = 5000 // §7.5: projects of about 1,000–5,000 ft
	progDefaultMaxGapFt        = 400  // §7.5: gaps under 300–500 ft are taken in
	progDefaultYears           = 5
	progDefaultCohortBreaks    = 25  // with fewer, a 10–15-year record fits the growth rate to no better than about ±0.1/yr (Poisson standard error ≈ 1/√(N·var t))
	progHorizonYears           = 200 // an economic replacement year further off than this is shown as never
	progDefaultEscalation      = 0.03
)

func (c *Config) progBreakDistance() quantity {
	b := c.Breaks
	return quantity{"breaks.max_distance_ft", "breaks.max_distance_m", b.MaxDistanceFt, b.MaxDistanceM, [2]float64{ft, 1}, progDefaultBreakDistanceFt * ft, true}
}

func (c *Config) progMaxLength() quantity {
	p := c.Projects
	return quantity{"projects.max_length_ft", "projects.max_length_m", p.MaxLengthFt, p.MaxLengthM, [2]float64{ft, 1}, progDefaultMaxLengthFt * ft, false}
}

func (c *Config) progMaxGap() quantity {
	p := c.Projects
	return quantity{"projects.max_gap_ft", "projects.max_gap_m", p.MaxGapFt, p.MaxGapM, [2]float64{ft, 1}, progDefaultMaxGapFt * ft, false}
}

// orDefaultPtr is *p, or def when p is nil.
func orDefaultPtr(p *float64, def float64) float64 {
	if p == nil {
		return def
	}
	return *p
}

// progPlanYears are the plan's first year and number of years.
func (c *Config) progPlanYears() (first, years int) {
	first, years = c.Plan.FirstYear, c.Plan.Years
	if first == 0 {
		first = c.AnalysisYear + 1
	}
	if years == 0 {
		years = progDefaultYears
	}
	return first, years
}

// progRisk builds scoring.RiskConfig from the defaults and the [risk] keys.
func (c *Config) progRisk() (scoring.RiskConfig, error) {
	rc := scoring.DefaultRiskConfig()
	k := c.Risk
	rc.RiskWeight = orDefaultPtr(k.RiskWeight, rc.RiskWeight)
	rc.PerformanceWeight = orDefaultPtr(k.PerformanceWeight, rc.PerformanceWeight)
	weights := map[string]*float64{
		"age": &rc.AgeShare.Weight, "material": &rc.Material.Weight, "breaks": &rc.BreakRate.Weight, "c_factor": &rc.CFactor.Weight,
		"diameter": &rc.Diameter.Weight, "flow": &rc.Flow.Weight, "facility": &rc.Facility.Weight, "road": &rc.Road.Weight,
	}
	for _, name := range sortedKeys(k.Weights) {
		w, ok := weights[name]
		if !ok {
			return rc, fmt.Errorf("risk.weights.%s: not a factor; use %s", name, strings.Join(sortedKeys(weights), ", "))
		}
		*w = k.Weights[name]
	}
	// Either spelling of a unit-bearing edge list is read in any run; both
	// spellings of one factor are an error.
	edges := map[string]struct {
		scale *scoring.Scale
		toSI  float64
		other string
	}{
		"age_share": {&rc.AgeShare.Scale, 1, ""}, "c_factor": {&rc.CFactor.Scale, 1, ""},
		"breaks_per_100mi_yr": {&rc.BreakRate.Scale, 1 / (100 * float64(hydraulics.Mile)), "breaks_per_100km_yr"},
		"breaks_per_100km_yr": {&rc.BreakRate.Scale, 1 / 100e3, "breaks_per_100mi_yr"},
		"diameter_in":         {&rc.Diameter.Scale, in, "diameter_mm"}, "diameter_mm": {&rc.Diameter.Scale, mm, "diameter_in"},
		"flow_gpm": {&rc.Flow.Scale, gpm, "flow_lps"}, "flow_lps": {&rc.Flow.Scale, lps, "flow_gpm"},
		"facility_ft": {&rc.Facility.Scale, ft, "facility_m"}, "facility_m": {&rc.Facility.Scale, 1, "facility_ft"},
	}
	for _, name := range sortedKeys(k.Edges) {
		e, ok := edges[name]
		if !ok {
			return rc, fmt.Errorf("risk.edges.%s: not a factor; use %s", name, strings.Join(sortedKeys(edges), ", "))
		}
		if _, both := k.Edges[e.other]; both && e.other != "" {
			return rc, fmt.Errorf("both risk.edges.%s and risk.edges.%s are given: keep one", name, e.other)
		}
		v := k.Edges[name]
		if len(v) != 4 {
			return rc, fmt.Errorf("risk.edges.%s: give four edges (the values at which the score steps from 1 to 2, 2 to 3, 3 to 4 and 4 to 5), not %d", name, len(v))
		}
		for j := range v {
			e.scale.Edges[j] = v[j] * e.toSI
		}
	}
	for _, table := range []struct {
		key     string
		in, out map[string]float64
	}{{"risk.material_scores", k.MaterialScores, rc.Material.Scores}, {"risk.road_scores", k.RoadScores, rc.Road.Scores},
		{"risk.expected_life_years", k.ExpectedLife, rc.ExpectedLife}} {
		if err := caseTwins(table.key, table.in); err != nil {
			return rc, err
		}
		for key, v := range table.in {
			for old := range table.out {
				if strings.EqualFold(old, key) {
					delete(table.out, old)
				}
			}
			table.out[key] = v
		}
	}
	if err := rc.Validate(); err != nil {
		return rc, fmt.Errorf("[risk]: %w", err)
	}
	return rc, nil
}

// caseTwins returns an error naming table key when two of m's class names
// differ only in case: classes are matched without regard to case (scoring
// ClassFactor, AssessRisk, CostTable), so which of the two a main would get
// would otherwise depend on map order.
func caseTwins(key string, m map[string]float64) error {
	names := sortedKeys(m) // a few classes: every pair is compared
	for i, a := range names {
		for _, b := range names[i+1:] {
			if strings.EqualFold(a, b) {
				return fmt.Errorf("[%s]: classes %q and %q differ only in case, and classes are matched without regard to case; keep one",
					key, a, b)
			}
		}
	}
	return nil
}

// sortedKeys returns m's keys in order.
func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// progCosts builds the cost table from the defaults and the [costs] keys.
func (c *Config) progCosts() (scoring.CostTable, error) {
	t := scoring.DefaultCostTable()
	k := c.Costs
	rows, key, dTo, costTo := k.PerFtByDiameterIn, "costs.per_ft_by_diameter_in", in, 1/ft
	if k.PerMByDiameterMm != nil {
		if k.PerFtByDiameterIn != nil {
			return t, fmt.Errorf("both costs.per_ft_by_diameter_in and costs.per_m_by_diameter_mm are given: keep one")
		}
		rows, key, dTo, costTo = k.PerMByDiameterMm, "costs.per_m_by_diameter_mm", mm, 1
	}
	if rows != nil {
		t.Rows = nil
		for n, row := range rows {
			if len(row) != 2 {
				return t, fmt.Errorf("%s row %d: give [diameter, cost], not %d numbers", key, n+1, len(row))
			}
			t.Rows = append(t.Rows, scoring.UnitCost{UpTo: row[0] * dTo, PerMetre: row[1] * costTo})
		}
	}
	if k.SurfaceFactor != nil {
		if err := caseTwins("costs.surface_factor", k.SurfaceFactor); err != nil {
			return t, err
		}
		t.SurfaceFactor = k.SurfaceFactor
	}
	t.PerProject = orDefaultPtr(k.PerProject, t.PerProject)
	if err := t.Validate(); err != nil {
		return t, fmt.Errorf("[costs]: %w", err)
	}
	return t, nil
}

// progValidate checks the program sections.
func (c *Config) progValidate() []error {
	var errs []error
	for _, q := range []quantity{c.progBreakDistance(), c.progMaxLength(), c.progMaxGap()} {
		if _, err := q.value(c.system()); err != nil {
			errs = append(errs, err)
		}
	}
	if _, err := c.progRisk(); err != nil {
		errs = append(errs, err)
	}
	if _, err := c.progCosts(); err != nil {
		errs = append(errs, err)
	}
	b := c.Breaks
	if b.Path != "" && b.Fields.Date == "" {
		errs = append(errs, fmt.Errorf("breaks.fields.date is not set: name the field holding each break's date"))
	}
	if b.FirstYear != 0 && b.LastYear != 0 && b.FirstYear > b.LastYear {
		errs = append(errs, fmt.Errorf("breaks.first_year = %d is after breaks.last_year = %d", b.FirstYear, b.LastYear))
	}
	e := c.Economics
	if r := orDefaultPtr(e.DiscountRate, progDefaultDiscountRate); !(r > 0 && r < 1) {
		errs = append(errs, fmt.Errorf("economics.discount_rate = %g: give a yearly rate between 0 and 1 (0.03 for 3 %%)", r))
	}
	if v := orDefaultPtr(e.RepairCost, progDefaultRepairCost); !(v > 0) || math.IsInf(v, 0) {
		errs = append(errs, fmt.Errorf("economics.repair_cost_per_break = %g: must be a positive number of dollars", v))
	}
	if g := orDefaultPtr(e.DefaultGrowth, progDefaultGrowth); !(g > -1 && g < 1) {
		errs = append(errs, fmt.Errorf("economics.default_growth = %g: give a yearly rate such as 0.03", g))
	}
	if e.MinCohortBreaks < 0 {
		errs = append(errs, fmt.Errorf("economics.min_cohort_breaks = %d: must not be negative", e.MinCohortBreaks))
	}
	if p := orDefaultPtr(c.Projects.MinPriority, progDefaultMinPriority); !(p >= 0 && p <= 100) {
		errs = append(errs, fmt.Errorf("projects.min_priority = %g: give a priority from 0 to 100", p))
	}
	pl := c.Plan
	if pl.Years < 0 || pl.Years > 50 {
		errs = append(errs, fmt.Errorf("plan.years = %d: give 1 to 50 (0 or unset: %d)", pl.Years, progDefaultYears))
	}
	if v := orDefaultPtr(pl.AnnualBudget, 0); !(v >= 0) || math.IsInf(v, 0) {
		errs = append(errs, fmt.Errorf("plan.annual_budget = %g: give dollars per year (0 or unset: no plan)", v))
	}
	if v := orDefaultPtr(pl.Escalation, progDefaultEscalation); !(v > -0.5 && v < 1) {
		errs = append(errs, fmt.Errorf("plan.escalation = %g: give a yearly rate such as 0.03", v))
	}
	return errs
}

// progProject is one project of the program.
type progProject struct {
	id                                                    string
	segments                                              []int  // input pipe indices
	gap                                                   []bool // per segment: taken in only to join two qualifying runs
	street                                                string
	length, gapLength, upsizedLength                      hydraulics.Length
	cost                                                  float64 // dollars, in the first plan year's money
	benefit                                               float64 // Σ priority/100 × length in feet (metres in an SI run)
	worstPriority, meanPriority, maxRisk, meanPerformance float64
	mustDo                                                bool
	year                                                  int      // plan year, 0 when not funded
	hydrants                                              []string // hydrants whose fire-flow shortfall its mains carry
	due                                                   int      // mains whose economic replacement year falls in the plan
}

// progResult is the program's state on result.
type progResult struct {
	breaks       []gis.Break
	breakMatch   []gis.BreakMatch
	window       scoring.BreakWindow
	tally        scoring.BreakTally   // the usable breaks: counted, unmatched, outside the window
	pipeBreaks   []scoring.PipeBreaks // per input pipe
	cohorts      []scoring.Cohort
	facilities   []gis.Facility
	facilityNear []gis.FacilityNear // per input pipe; nil without a layer
	riskCfg      scoring.RiskConfig
	costs        scoring.CostTable
	risk         []scoring.Risk // per input pipe (zero when not scored)
	priority     []float64
	priorityRank []int
	replaceYear  []float64 // Shamir & Howard year per input pipe; NaN when not assessed
	replaceState []scoring.ReplacementState
	qualifies    []bool
	projects     []progProject
	projectOf    []int // per input pipe: index into projects, −1 none
	plan         *scoring.PlanResult
	budget       float64
}

// progTemplate writes the program sections of the commented config.
func progTemplate(c *Config) string {
	var b strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	s := c.system()
	str := strconv.Quote
	num := func(v float64) string { return strconv.FormatFloat(roundConfig(v), 'g', -1, 64) }
	lengthKey := func(q quantity) string {
		key, f := q.usKey, q.toSI[0]
		if s == hydraulics.SI {
			key, f = q.siKey, q.toSI[1]
		}
		return key[strings.IndexByte(key, '.')+1:] + " = " + num(c.si(q)/f)
	}
	bf := c.Breaks.Fields
	p("\n[breaks]  # optional Point layer of main breaks: risk, break rates and the economic replacement year\n")
	p("path = %s\n", str(c.Breaks.Path))
	p("%s  # a break without a usable pipe id joins the nearest main within this distance\n", lengthKey(c.progBreakDistance()))
	p("first_year = %d  # the record's first year; 0 = the earliest break's\n", c.Breaks.FirstYear)
	p("last_year = %d  # the record's last year; 0 = the latest break's\n", c.Breaks.LastYear)
	p("[breaks.fields]\nid = %s\ndate = %s  # required: YYYY-MM-DD, YYYY-MM or YYYY\npipe_id = %s  # optional: the id of the main that broke\n\n", str(bf.ID), str(bf.Date), str(bf.PipeID))

	ff := c.Facilities.Fields
	p("[facilities]  # optional Point layer of critical facilities (hospitals, schools, ...): consequence of failure\n")
	p("path = %s\n[facilities.fields]\nid = %s\nkind = %s\n\n", str(c.Facilities.Path), str(ff.ID), str(ff.Kind))

	rc, _ := c.progRisk()
	p("[risk]  # risk = likelihood × consequence (each a weighted mean of 1–5 factor scores); priority combines risk and performance\n")
	p("risk_weight = %s\nperformance_weight = %s\n", num(rc.RiskWeight), num(rc.PerformanceWeight))
	p("[risk.weights]  # likelihood: age, material, breaks, c_factor; consequence: diameter, flow, facility, road\n")
	p("age = %s\nmaterial = %s\nbreaks = %s\nc_factor = %s\ndiameter = %s\nflow = %s\nfacility = %s\nroad = %s\n",
		num(rc.AgeShare.Weight), num(rc.Material.Weight), num(rc.BreakRate.Weight), num(rc.CFactor.Weight),
		num(rc.Diameter.Weight), num(rc.Flow.Weight), num(rc.Facility.Weight), num(rc.Road.Weight))
	edges := func(key string, sc scoring.Scale, toSI float64, comment string) {
		v := make([]string, 4)
		for k, e := range sc.Edges {
			v[k] = num(e / toSI)
		}
		p("%s = [%s]  # %s\n", key, strings.Join(v, ", "), comment)
	}
	p("[risk.edges]  # the values at which a factor's score steps from 1 to 2, 2 to 3, 3 to 4 and 4 to 5\n")
	edges("age_share", rc.AgeShare.Scale, 1, "age ÷ expected life")
	edges("c_factor", rc.CFactor.Scale, 1, "falling: a lower C scores more")
	if s == hydraulics.SI {
		edges("breaks_per_100km_yr", rc.BreakRate.Scale, 1/100e3, "breaks per 100 km per year in the record")
		edges("diameter_mm", rc.Diameter.Scale, mm, "nominal diameter")
		edges("flow_lps", rc.Flow.Scale, lps, "flow carried at peak hour")
		edges("facility_m", rc.Facility.Scale, 1, "falling: distance to the nearest critical facility")
	} else {
		edges("breaks_per_100mi_yr", rc.BreakRate.Scale, 1/(100*float64(hydraulics.Mile)), "breaks per 100 miles per year in the record")
		edges("diameter_in", rc.Diameter.Scale, in, "nominal diameter")
		edges("flow_gpm", rc.Flow.Scale, gpm, "flow carried at peak hour")
		edges("facility_ft", rc.Facility.Scale, ft, "falling: distance to the nearest critical facility")
	}
	table := func(name string, m map[string]float64, comment string) {
		p("[risk.%s]  # %s\n", name, comment)
		for _, k := range sortedKeys(m) {
			p("%s = %s\n", str(k), num(m[k]))
		}
	}
	table("material_scores", rc.Material.Scores, fmt.Sprintf("1–5 by material; others score %s", num(rc.Material.Default)))
	table("road_scores", rc.Road.Scores, fmt.Sprintf("1–5 by pipes.fields.surface; others score %s", num(rc.Road.Default)))
	table("expected_life_years", rc.ExpectedLife, fmt.Sprintf("years of service by material; others %s", num(rc.DefaultLife)))

	e := c.Economics
	p("\n[economics]  # Shamir & Howard (1979): replace when the yearly break cost reaches ln(1+R) × the replacement cost\n")
	p("repair_cost_per_break = %s  # dollars\n", num(orDefaultPtr(e.RepairCost, progDefaultRepairCost)))
	p("discount_rate = %s\n", num(orDefaultPtr(e.DiscountRate, progDefaultDiscountRate)))
	p("default_growth = %s  # yearly break growth for a cohort with too few breaks to fit\n", num(orDefaultPtr(e.DefaultGrowth, progDefaultGrowth)))
	p("min_cohort_breaks = %d  # fewest breaks for a cohort (material × decade) to fit its own growth\n\n", orDefaultInt(e.MinCohortBreaks, progDefaultCohortBreaks))

	p("[projects]  # mains that qualify (priority, an upsizing, or economically due within the plan) grouped along the network\n")
	p("min_priority = %s\n", num(orDefaultPtr(c.Projects.MinPriority, progDefaultMinPriority)))
	p("%s  # longest project\n", lengthKey(c.progMaxLength()))
	p("%s  # longest run of other mains taken in to join two qualifying runs\n", lengthKey(c.progMaxGap()))
	byStreet := c.Pipes.Fields.Street != ""
	if c.Projects.ByStreet != nil {
		byStreet = *c.Projects.ByStreet
	}
	p("by_street = %t  # join mains only along one street name (pipes.fields.street)\n\n", byStreet)

	t, _ := c.progCosts()
	p("[costs]  # INVENTED demonstration unit prices unless you change them: use local bid tabulations\n")
	rows := make([]string, len(t.Rows))
	for k, r := range t.Rows {
		if s == hydraulics.SI {
			rows[k] = fmt.Sprintf("[%s, %s]", num(r.UpTo/mm), num(r.PerMetre))
		} else {
			rows[k] = fmt.Sprintf("[%s, %s]", num(r.UpTo/in), num(r.PerMetre*ft))
		}
	}
	if s == hydraulics.SI {
		p("per_m_by_diameter_mm = [%s]  # [up to diameter, dollars per metre]\n", strings.Join(rows, ", "))
	} else {
		p("per_ft_by_diameter_in = [%s]  # [up to diameter, dollars per foot]\n", strings.Join(rows, ", "))
	}
	p("per_project = %s  # dollars added once per project\n", num(t.PerProject))
	p("[costs.surface_factor]  # multiplies the unit cost by pipes.fields.surface; others 1\n")
	for _, k := range sortedKeys(t.SurfaceFactor) {
		p("%s = %s\n", str(k), num(t.SurfaceFactor[k]))
	}
	first, years := c.progPlanYears()
	pl := c.Plan
	p("\n[plan]  # projects scheduled within an annual budget\n")
	p("first_year = %d\nyears = %d\n", first, years)
	p("annual_budget = %s  # dollars a year in each year's money; 0 = no plan\n", num(orDefaultPtr(pl.AnnualBudget, 0)))
	p("escalation = %s  # yearly cost escalation\n", num(orDefaultPtr(pl.Escalation, progDefaultEscalation)))
	ids := make([]string, len(pl.MustDoPipes))
	for k, id := range pl.MustDoPipes {
		ids[k] = str(id)
	}
	p("must_do_pipes = [%s]  # pipe ids whose projects are funded first\n", strings.Join(ids, ", "))
	return b.String()
}
