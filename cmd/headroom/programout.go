package main

import (
	"fmt"
	"math"
	"strings"

	"github.com/paulmach/orb"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// progPipeColumns are the program's columns of the pipe layer and
// ranked.csv.
func (r *result) progPipeColumns() []gis.Column {
	if r.prog == nil {
		return nil
	}
	var cols []gis.Column
	if r.prog.pipeBreaks != nil {
		cols = append(cols, gis.Column{Name: "breaks", Kind: gis.Integer},
			gis.Column{Name: "breaks_per_" + r.progRateSuffix(), Kind: gis.Real, Decimals: 3},
			gis.Column{Name: "replacement_year", Kind: gis.Integer},
			gis.Column{Name: "replacement_economics", Kind: gis.String})
	}
	return append(cols,
		gis.Column{Name: "likelihood", Kind: gis.Real, Decimals: 2},
		gis.Column{Name: "consequence", Kind: gis.Real, Decimals: 2},
		gis.Column{Name: "risk", Kind: gis.Real, Decimals: 2},
		gis.Column{Name: "priority", Kind: gis.Real, Decimals: 1},
		gis.Column{Name: "priority_rank", Kind: gis.Integer},
		gis.Column{Name: "project_id", Kind: gis.String},
		gis.Column{Name: "plan_year", Kind: gis.Integer},
	)
}

// progRateSuffix names the break-rate unit: per mile per year (US) or per
// 100 km per year (SI), as the surveys of DOMAIN.md §7.3 give them.
func (r *result) progRateSuffix() string {
	if r.cfg.system() == hydraulics.SI {
		return "100km_yr"
	}
	return "mi_yr"
}

// progRate converts breaks per metre per year to the output unit.
func (r *result) progRate(perMetreYear float64) float64 {
	if r.cfg.system() == hydraulics.SI {
		return scoring.PerHundredKmYear(perMetreYear)
	}
	return scoring.PerMileYear(perMetreYear)
}

// progPipeValues adds input pipe i's program values to v.
func (r *result) progPipeValues(i int, v rowValues) {
	p := r.prog
	if p == nil || !r.scores[i].Scored {
		return
	}
	if p.pipeBreaks != nil {
		v.set("breaks", p.pipeBreaks[i].Count)
		v.set("breaks_per_"+r.progRateSuffix(), r.progRate(p.pipeBreaks[i].PerLengthYear))
		if y := p.replaceYear[i]; !math.IsNaN(y) && !math.IsInf(y, 0) {
			v.set("replacement_year", int(math.Ceil(y)))
		}
		if st := p.replaceState[i]; st != scoring.ReplacementInvalid {
			v.set("replacement_economics", st.String()) // due, future or never (Shamir & Howard)
		}
	}
	k := p.risk[i]
	v.set("likelihood", k.Likelihood)
	v.set("consequence", k.Consequence)
	v.set("risk", k.Value)
	v.set("priority", p.priority[i])
	v.set("priority_rank", p.priorityRank[i])
	if j := p.projectOf[i]; j >= 0 {
		v.set("project_id", p.projects[j].id)
		if y := p.projects[j].year; y > 0 {
			v.set("plan_year", y)
		}
	}
}

// progProjectLayer is one row per project: its figures and its mains'
// lines.
func (r *result) progProjectLayer() *gis.Layer {
	if r.prog == nil {
		return nil
	}
	s := r.cfg.system()
	l := s.LengthSuffix()
	layer := &gis.Layer{Name: "projects", Columns: []gis.Column{
		{Name: "project_id", Kind: gis.String},
		{Name: "plan_year", Kind: gis.Integer},
		{Name: "must_do", Kind: gis.String},
		{Name: "street", Kind: gis.String},
		{Name: "mains", Kind: gis.Integer},
		{Name: "pipe_ids", Kind: gis.String},
		{Name: "gap_pipe_ids", Kind: gis.String},
		{Name: "length_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "gap_length_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "upsized_length_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "cost_usd", Kind: gis.Real, Decimals: 0},
		{Name: "cost_in_plan_year_usd", Kind: gis.Real, Decimals: 0},
		{Name: "benefit_priority_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "benefit_per_kusd", Kind: gis.Real, Decimals: 3},
		{Name: "worst_priority", Kind: gis.Real, Decimals: 1},
		{Name: "mean_priority", Kind: gis.Real, Decimals: 1},
		{Name: "max_risk", Kind: gis.Real, Decimals: 2},
		{Name: "mean_performance", Kind: gis.Real, Decimals: 1},
		{Name: "fire_flow_hydrants", Kind: gis.String},
		{Name: "economically_due", Kind: gis.Integer},
		{Name: "reasons", Kind: gis.String},
	}}
	first, _ := r.cfg.progPlanYears()
	esc := orDefaultPtr(r.cfg.Plan.Escalation, progDefaultEscalation)
	for _, pr := range r.prog.projects {
		var ids, gaps []string
		var lines orb.MultiLineString
		for k, i := range pr.segments {
			if pr.gap[k] {
				gaps = append(gaps, r.pipes[i].ID)
			} else {
				ids = append(ids, r.pipes[i].ID)
			}
			if line := r.pipes[i].Line; line != nil {
				lines = append(lines, line)
			}
		}
		var year, inYear any
		if pr.year > 0 {
			year = pr.year
			inYear = pr.cost * math.Pow(1+esc, float64(pr.year-first))
		}
		var g orb.Geometry
		if len(lines) > 0 {
			g = lines
		}
		must := "no"
		if pr.mustDo {
			must = "yes"
		}
		layer.Rows = append(layer.Rows, gis.Row{Geometry: g, Values: []any{
			pr.id, year, must, pr.street, len(ids), strings.Join(ids, " "), strings.Join(gaps, " "),
			s.Length(pr.length), s.Length(pr.gapLength), s.Length(pr.upsizedLength),
			pr.cost, inYear, pr.benefit, pr.benefit / (pr.cost / 1000),
			pr.worstPriority, pr.meanPriority, pr.maxRisk, pr.meanPerformance,
			strings.Join(pr.hydrants, " "), pr.due, r.progReasons(pr),
		}})
	}
	return layer
}

// progOutputs are the program's files: projects.csv, plan.csv (written
// even without a budget, so an old plan never outlives its run) and the
// projects layer in the GeoJSON and GeoPackage
// formats asked for.
func (r *result) progOutputs() ([]output, error) {
	projects, plan := r.progProjectLayer(), r.progPlanLayer()
	if projects == nil {
		return nil, nil
	}
	if err := checkFinite(projects, plan); err != nil {
		return nil, err
	}
	csv := &gis.Layer{Name: projects.Name, Columns: projects.Columns}
	for _, row := range projects.Rows {
		csv.Rows = append(csv.Rows, gis.Row{Values: row.Values})
	}
	outs := []output{{"projects.csv", func(p string) error { return gis.WriteCSV(p, csv) }},
		{"plan.csv", func(p string) error { return gis.WriteCSV(p, plan) }}}
	if r.cfg.wants(formatGeoJSON) {
		outs = append(outs, output{"projects.geojson", func(p string) error { return gis.WriteGeoJSON(p, projects) }})
	}
	if r.cfg.wants(formatGeoPackage) {
		srs := spatialRef(r.pipeLayerCRS)
		outs = append(outs, output{"projects.gpkg", func(p string) error { return gis.WriteGeoPackage(p, srs, r.projected(projects)) }})
	}
	return outs, nil
}

// progReasons says why a project is in the program.
func (r *result) progReasons(pr progProject) string {
	s := r.cfg.system()
	var parts []string
	parts = append(parts, fmt.Sprintf("worst priority %.1f", pr.worstPriority))
	if pr.upsizedLength > 0 {
		parts = append(parts, fmt.Sprintf("%.0f %s upsized to cure the criteria", s.Length(pr.upsizedLength), s.LengthLabel()))
	}
	if len(pr.hydrants) > 0 {
		parts = append(parts, "carries the fire flow of short hydrant"+plural(len(pr.hydrants))+" "+strings.Join(pr.hydrants, ", "))
	}
	if pr.due > 0 {
		parts = append(parts, fmt.Sprintf("%d main%s economically due for replacement (Shamir & Howard)", pr.due, plural(pr.due)))
	}
	if pr.gapLength > 0 {
		parts = append(parts, fmt.Sprintf("%.0f %s of gap taken in", s.Length(pr.gapLength), s.LengthLabel()))
	}
	if pr.mustDo {
		parts = append(parts, "must do (plan.must_do_pipes)")
	}
	return strings.Join(parts, "; ")
}

// progPlanLayer is one row per plan year and one for what is left;
// without a budget, only that last row, with every project.
func (r *result) progPlanLayer() *gis.Layer {
	p := r.prog
	if p == nil {
		return nil
	}
	plan := p.plan
	unfundedWhy := "not scheduled within the plan"
	if plan == nil {
		plan = &scoring.PlanResult{}
		for k := range p.projects {
			plan.Unfunded = append(plan.Unfunded, k)
		}
		unfundedWhy = "no plan: set plan.annual_budget"
	}
	s := r.cfg.system()
	l := s.LengthSuffix()
	layer := &gis.Layer{Name: "plan", Columns: []gis.Column{
		{Name: "year", Kind: gis.String},
		{Name: "budget_usd", Kind: gis.Real, Decimals: 0},
		{Name: "spent_usd", Kind: gis.Real, Decimals: 0},
		{Name: "left_usd", Kind: gis.Real, Decimals: 0},
		{Name: "projects", Kind: gis.Integer},
		{Name: "project_ids", Kind: gis.String},
		{Name: "length_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "benefit_priority_" + l, Kind: gis.Real, Decimals: 1},
		{Name: "method", Kind: gis.String},
	}}
	for _, y := range plan.Years {
		var ids []string
		var length hydraulics.Length
		for _, k := range y.Projects {
			ids = append(ids, p.projects[k].id)
			length += p.projects[k].length
		}
		method := "exact 0/1 knapsack"
		if !y.Exact {
			method = "benefit-per-dollar heuristic"
		}
		layer.Rows = append(layer.Rows, gis.Row{Values: []any{
			fmt.Sprint(y.Year), p.budget, y.Spent, y.Left, len(y.Projects), strings.Join(ids, " "), s.Length(length), y.Benefit, method,
		}})
	}
	var ids []string
	var cost, benefit float64
	var length hydraulics.Length
	for _, k := range plan.Unfunded {
		ids = append(ids, p.projects[k].id)
		cost += p.projects[k].cost
		benefit += p.projects[k].benefit
		length += p.projects[k].length
	}
	layer.Rows = append(layer.Rows, gis.Row{Values: []any{
		"unfunded", nil, cost, nil, len(ids), strings.Join(ids, " "), s.Length(length), benefit, unfundedWhy,
	}})
	return layer
}

// progSummarise writes the program section of the run summary.
func (r *result) progSummarise(p func(string, ...any)) {
	g := r.prog
	if g == nil {
		return
	}
	s := r.cfg.system()
	if g.breaks != nil {
		var byID, byDistance, none int
		for k, m := range g.breakMatch {
			switch {
			case !g.breaks[k].Usable:
				none++
			case m.By == "id":
				byID++
			case m.By == "distance":
				byDistance++
			default:
				none++
			}
		}
		p("\nBreak history (%d to %d)\n", g.window.From, g.window.To)
		p("  %d breaks: %d joined by pipe id, %d to the nearest main, %d matched no main (problems.csv)\n", len(g.breaks), byID, byDistance, none)
		if n := g.tally.OutsideWindow; n > 0 {
			p("  %d joined break%s fall outside %d–%d and are not counted in the rates\n", n, plural(n), g.window.From, g.window.To)
		}
		for _, c := range g.cohorts {
			if c.Breaks == 0 {
				continue
			}
			fit := "default growth"
			if c.Fitted {
				fit = "fitted growth"
			}
			decade := "unknown decade"
			if c.Decade > 0 {
				decade = fmt.Sprintf("%ds", c.Decade)
			}
			p("  %-5s %-14s %3d break%s on %6.1f %s: %.2f per %s, %s %+.3f/yr\n", c.Material, decade, c.Breaks, plural(c.Breaks),
				s.Length(c.Length)/progMileOrKm(s), progMileOrKmLabel(s), r.progRate(c.PerLengthYear), progRateLabel(s), fit, c.Growth)
		}
	}
	p("\nReplacement program (risk = likelihood × consequence, 1–25; priority %.0f %% risk, %.0f %% performance)\n",
		100*g.riskCfg.RiskWeight/(g.riskCfg.RiskWeight+g.riskCfg.PerformanceWeight), 100*g.riskCfg.PerformanceWeight/(g.riskCfg.RiskWeight+g.riskCfg.PerformanceWeight))
	q := 0
	for _, ok := range g.qualifies {
		if ok {
			q++
		}
	}
	var cost float64
	var length hydraulics.Length
	for _, pr := range g.projects {
		cost += pr.cost
		length += pr.length
	}
	p("  %d mains qualify; %d projects, %.0f %s, $%s in %d money\n", q, len(g.projects), s.Length(length), s.LengthLabel(), progDollars(cost), r.progFirstYear())
	if g.plan == nil {
		p("  no budget plan: set plan.annual_budget\n")
		return
	}
	p("  plan at $%s a year, escalating %.1f %% a year:\n", progDollars(g.budget), 100*orDefaultPtr(r.cfg.Plan.Escalation, progDefaultEscalation))
	for _, y := range g.plan.Years {
		p("    %d: %d project%s, $%s spent, $%s left\n", y.Year, len(y.Projects), plural(len(y.Projects)), progDollars(y.Spent), progDollars(y.Left))
	}
	var left float64
	for _, k := range g.plan.Unfunded {
		left += g.projects[k].cost
	}
	p("    not funded within the plan: %d project%s, $%s\n", len(g.plan.Unfunded), plural(len(g.plan.Unfunded)), progDollars(left))
	for _, k := range g.plan.MustDoUnfunded {
		p("    must-do project %s ($%s) does not fit a year's budget\n", g.projects[k].id, progDollars(g.projects[k].cost))
	}
}

func (r *result) progFirstYear() int {
	first, _ := r.cfg.progPlanYears()
	return first
}

// progMileOrKm is a mile (US) or a kilometre (SI) in the system's length unit.
func progMileOrKm(s hydraulics.System) float64 {
	if s == hydraulics.SI {
		return 1000
	}
	return 5280
}

func progMileOrKmLabel(s hydraulics.System) string {
	if s == hydraulics.SI {
		return "km"
	}
	return "mi"
}

// progDollars writes whole dollars with thousands separators.
func progDollars(x float64) string { return thousands(math.Round(x), 0) }

// progRateLabel is the break-rate unit in words.
func progRateLabel(s hydraulics.System) string {
	if s == hydraulics.SI {
		return "100 km per yr"
	}
	return "mi per yr"
}
