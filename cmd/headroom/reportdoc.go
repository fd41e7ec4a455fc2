package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/report"
)

// Evidence report (report.html): the command gathers the run's figures,
// formatted in the run's units, and package report lays them out. The
// figures come from the same layers the CSV and GIS files are written from,
// so the report and the files agree.

// reportTopSegments is how many segments get an evidence sheet when the
// run has no projects (no replacement program).
const reportTopSegments = 20

// reportDocument builds the report from the run and its output layers.
func (r *result) reportDocument(pipes, hydrants *gis.Layer) *report.Document {
	s := r.cfg.system()
	sheets, sheetNote := r.reportSheets()
	d := &report.Document{
		Title:     r.title + " — water main capital plan screening",
		Subtitle:  fmt.Sprintf("headroom %s · analysis year %d · %s units · peak hour governs the criteria and scores", version, r.cfg.AnalysisYear, strings.ToUpper(s.String())),
		Cautions:  cautions,
		Summary:   r.reportSummary(),
		Map:       r.reportMap(pipes, hydrants, sheetIDs(sheets)),
		Charts:    r.reportCharts(pipes),
		Sheets:    sheets,
		SheetNote: sheetNote,
		Method:    r.reportMethod(),
		Sources:   reportSources,
	}
	d.Tables = append(d.Tables, r.reportInputTable(), r.reportScenarioTable(), r.reportCriteriaTable())
	if t := r.reportPlanTable(); t != nil {
		d.Tables = append(d.Tables, *t)
	}
	return d
}

// sheetIDs is the set of the sheets' IDs.
func sheetIDs(sheets []report.Sheet) map[string]bool {
	ids := make(map[string]bool, len(sheets))
	for _, sh := range sheets {
		ids[sh.ID] = true
	}
	return ids
}

// reportSummary is the headline figures.
func (r *result) reportSummary() []report.Figure {
	s := r.cfg.system()
	var length hydraulics.Length
	scored := 0
	for i, p := range r.pipes {
		length += p.Length
		if r.scores[i].Scored {
			scored++
		}
	}
	f := []report.Figure{
		{Label: "Mains", Value: thousands(float64(len(r.pipes)), 0), Note: thousands(float64(scored), 0) + " scored"},
		{Label: "Length of main", Value: fmt.Sprintf("%s %s", thousands(s.Length(length)/progMileOrKm(s), 1), progMileOrKmLabel(s))},
		{Label: "Network", Value: fmt.Sprintf("%s nodes, %s links", thousands(float64(len(r.net.Nodes)), 0), thousands(float64(len(r.net.Pipes)), 0))},
		{Label: "Sources", Value: strconv.Itoa(len(r.supplies))},
		{Label: "Junctions below the pressure criterion (peak hour)", Value: strconv.Itoa(len(r.lowNodes))},
	}
	if r.cfg.fireFlowOn() {
		short, solved := 0, 0
		for _, h := range r.hydrants {
			if h.res != nil {
				solved++
				if h.res.Available < h.needed {
					short++
				}
			}
		}
		f = append(f, report.Figure{Label: "Hydrants short of their needed fire flow", Value: strconv.Itoa(short), Note: fmt.Sprintf("of %d tested", solved)})
	}
	if r.cure != nil {
		up := 0
		for i := range r.pipes {
			if len(r.parts[i]) > 0 && r.cureRecommended(i) > 0 {
				up++
			}
		}
		f = append(f, report.Figure{Label: "Mains the upsizing loop enlarges", Value: strconv.Itoa(up),
			Note: fmt.Sprintf("%s %s, proven by re-solving every scenario and hydrant", thousands(s.Length(r.cure.UpsizedLength), 0), s.LengthLabel())})
	}
	if pr := r.prog; pr != nil {
		var total, funded float64
		for _, p := range pr.projects {
			total += p.cost
			if p.year > 0 {
				funded += p.cost
			}
		}
		f = append(f, report.Figure{Label: "Projects", Value: strconv.Itoa(len(pr.projects)), Note: "$" + progDollars(total) + " in " + strconv.Itoa(r.progFirstYear()) + " money"})
		if pr.plan != nil {
			f = append(f, report.Figure{Label: "Funded by the plan", Value: "$" + progDollars(funded), Note: fmt.Sprintf("%d years at $%s a year", len(pr.plan.Years), progDollars(pr.budget))})
		}
	}
	return f
}

// reportInputTable is every input layer's features in and out.
func (r *result) reportInputTable() report.Table {
	t := report.Table{Caption: "Inputs: every feature read is used or accounted for", Columns: []string{"layer", "features", "used", "how", "left out", "why"}}
	for _, a := range r.accounts() {
		why := a.detail
		if a.leftOut > 0 {
			why = strings.TrimPrefix(strings.Join([]string{a.detail, a.where}, "; "), "; ")
		}
		t.Rows = append(t.Rows, []string{a.path, strconv.Itoa(a.in), strconv.Itoa(a.used), a.verb, strconv.Itoa(a.leftOut), why})
	}
	return t
}

// reportScenarioTable is each scenario's convergence and mass balance.
func (r *result) reportScenarioTable() report.Table {
	s := r.cfg.system()
	q, h := s.FlowLabel(), s.LengthLabel()
	t := report.Table{Caption: "Scenarios solved by the Global Gradient Algorithm (Todini & Pilati): flow change is the last iteration's relative change Σ|ΔQ|/Σ|Q|",
		Columns: []string{"scenario", "× avg day", "iterations", "flow change", "head residual (" + h + ")",
			"supply (" + q + ")", "demand (" + q + ")", "node imbalance (" + q + ")", "pressure (" + s.PressureLabel() + ")"}}
	if left := r.cfg.scenariosLeftOut(); len(left) > 0 && r.flowCheck == nil {
		t.Caption += "; not solved (solver.scenarios): " + strings.Join(left, ", ")
	}
	for _, st := range r.scenarioStats() {
		sc := r.scenarioNamed(st.Name)
		lo, hi := r.pressureRange(sc.sol)
		t.Rows = append(t.Rows, []string{st.Name, fmt.Sprintf("%.2f", st.DemandFactor), strconv.Itoa(st.Iterations),
			fmt.Sprintf("%.1e", st.RelativeFlowChange), fmt.Sprintf("%.1e", st.MaxHeadResidual),
			thousands(st.Supply, 1), thousands(st.Demand, 1), fmt.Sprintf("%.1e", st.MaxNodeImbalance),
			fmt.Sprintf("%.1f to %.1f", lo, hi)})
	}
	return t
}

// scenarioNamed is the solved scenario of that name.
func (r *result) scenarioNamed(name string) scenario {
	for _, sc := range r.scenarios {
		if sc.name == name {
			return sc
		}
	}
	return r.scenarios[len(r.scenarios)-1]
}

// reportCriteriaTable is each criterion and how many mains or junctions
// fail it at peak hour.
func (r *result) reportCriteriaTable() report.Table {
	s := r.cfg.system()
	var slope, vel, def int
	for i, sc := range r.scores {
		if !sc.Scored {
			continue
		}
		c := r.checks[r.governing(i)]
		slope += b2i(c.OverSlope)
		vel += b2i(c.OverVelocity)
		def += b2i(c.Deficit > 0)
	}
	t := report.Table{Caption: "Planning criteria (peak hour) and what fails them", Columns: []string{"criterion", "limit", "failing"}}
	t.Rows = [][]string{
		{"unit head loss", fmt.Sprintf("%.1f %s", s.UnitHeadLoss(r.limits.MaxSlope), s.UnitHeadLossLabel()), count(slope, "main")},
		{"velocity", fmt.Sprintf("%.1f %s", s.Velocity(r.limits.MaxVelocity), s.VelocityLabel()), count(vel, "main")},
		{"capacity at the head-loss limit", "flow ≤ capacity", count(def, "main")},
		{"minimum pressure", fmt.Sprintf("%.1f %s", s.Pressure(r.limits.MinPressure), s.PressureLabel()), count(len(r.lowNodes), "junction")},
	}
	if r.cfg.fireFlowOn() {
		short := 0
		for _, h := range r.hydrants {
			if h.res != nil && h.res.Available < h.needed {
				short++
			}
		}
		t.Rows = append(t.Rows, []string{"needed fire flow at max day",
			fmt.Sprintf("at %.0f %s residual", s.Pressure(hydraulics.Pressure(r.cfg.si(r.cfg.fireResidual()))), s.PressureLabel()), count(short, "hydrant")})
	}
	return t
}

// reportPlanTable is the plan year by year, nil without a program.
func (r *result) reportPlanTable() *report.Table {
	pr := r.prog
	if pr == nil || pr.plan == nil {
		return nil
	}
	t := report.Table{Caption: "Budget plan, year by year (costs escalated to each year's money)",
		Columns: []string{"year", "budget (US$)", "spent (US$)", "projects", "project ids"}}
	for _, y := range pr.plan.Years {
		ids := make([]string, len(y.Projects))
		for k, p := range y.Projects {
			ids[k] = pr.projects[p].id
		}
		t.Rows = append(t.Rows, []string{strconv.Itoa(y.Year), progDollars(pr.budget), progDollars(y.Spent), strconv.Itoa(len(ids)), strings.Join(ids, " ")})
	}
	if len(pr.plan.Unfunded) > 0 {
		ids := make([]string, len(pr.plan.Unfunded))
		var cost float64
		for k, p := range pr.plan.Unfunded {
			ids[k] = pr.projects[p].id
			cost += pr.projects[p].cost
		}
		t.Rows = append(t.Rows, []string{"unfunded", "", progDollars(cost), strconv.Itoa(len(ids)), strings.Join(ids, " ")})
	}
	return &t
}

// count is "1 main", "3 mains".
func count(n int, noun string) string { return fmt.Sprintf("%d %s%s", n, noun, plural(n)) }

// b2i is 1 for true.
func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// thousands formats x with the given decimals and a comma between groups
// of three digits: 12345.678, 1 → "12,345.7".
func thousands(x float64, decimals int) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "—"
	}
	s := strconv.FormatFloat(math.Abs(x), 'f', decimals, 64)
	whole, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	if x < 0 && strings.Trim(s, "0.") != "" {
		b.WriteByte('-')
	}
	for k, c := range whole {
		if k > 0 && (len(whole)-k)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	if frac != "" {
		b.WriteString("." + frac)
	}
	return b.String()
}

// reportSources are the published methods and tables the run rests on
// (as cited in DOMAIN.md).
var reportSources = []string{
	"G.S. Williams & A. Hazen, Hydraulic Tables, 1905/1920: the Hazen-Williams formula and the C-factor table by age and size for cast iron.",
	"E. Todini & S. Pilati, \"A gradient algorithm for the analysis of pipe networks\", in Coulbeck & Orr (eds.), Computer Applications in Water Supply, vol. 1, 1988: the Global Gradient Algorithm.",
	"W.W. Sharp & T.M. Walski, \"Predicting internal roughness in water mains\", J. AWWA 80(11):34–40, 1988: C-factor as a function of age from the roughness growth rate.",
	"U. Shamir & C.D.D. Howard, \"An analytic approach to scheduling pipe replacement\", J. AWWA 71(5):248–258, 1979: exponential break growth and the economic replacement year.",
	"NFPA 291, Recommended Practice for Fire Flow Testing and Marking of Hydrants: hydrant classes AA, A, B and C at 20 psi residual.",
	"AWWA C151/A21.51 (ductile iron) and AWWA C900 (PVC): standard sizes and inside diameters.",
	"AWWA M31, Distribution System Requirements for Fire Protection: minimum main sizes.",
	"J. Liou, \"Limitations and proper use of the Hazen-Williams equation\", J. Hydraul. Eng. 124(9):951–954, 1998: where Hazen-Williams may be trusted.",
}

// reportMethod is how the figures were made, one section per stage.
func (r *result) reportMethod() []report.Section {
	s := r.cfg.system()
	out := []report.Section{
		{Heading: "Network and hydraulics", Paragraphs: []string{
			"Pipe ends within the snapping tolerance are joined into nodes; sources are attached to the nearest node and demands to junctions. Each scenario (average day, max day and peak hour, by the configured peaking factors) is solved for steady flow by the Global Gradient Algorithm with Hazen-Williams friction: h = 10.674 · L · Q^1.852 / (C^1.852 · D^4.870) in SI units (Q m³/s, D and L m).",
			"Each solve is checked: supply equals demand, every node balances and every pipe's head loss matches its flow, to the residuals in the scenario table.",
		}},
		{Heading: "C-factors", Paragraphs: []string{
			"Each main's C-factor is measured where the layer gives one, else from its material and age: cast iron and steel by the Sharp & Walski roughness growth model, other materials from tables of C by age. These are estimates; the Sharp & Walski fit has a 95 % band of about ±15 in C.",
		}},
		{Heading: "Criteria, capacity and size", Paragraphs: []string{
			fmt.Sprintf("At peak hour every main is checked against a unit head loss of %.1f %s and a velocity of %.1f %s, and every junction against %.1f %s. A main's capacity is the flow it carries at the head-loss criterion with its own C and inside diameter; its deficit is the flow above that. The required size is the smallest standard size whose inside diameter carries the flow within both criteria with the design C of %.0f.",
				s.UnitHeadLoss(r.limits.MaxSlope), s.UnitHeadLossLabel(), s.Velocity(r.limits.MaxVelocity), s.VelocityLabel(), s.Pressure(r.limits.MinPressure), s.PressureLabel(), r.limits.DesignC),
		}},
	}
	if r.cfg.fireFlowOn() {
		out = append(out, report.Section{Heading: "Fire flow", Paragraphs: []string{
			"At max day, extra demand is drawn at one hydrant at a time and raised until the hydrant or another junction in its zone falls to the residual pressure; that flow is the available fire flow, classed by NFPA 291. Shortfalls against the needed flow are charged to the mains that carry most of it with the steepest head loss.",
		}})
	}
	if r.cure != nil {
		out = append(out, report.Section{Heading: "Upsizing loop", Paragraphs: []string{
			"Failing mains get the smallest standard size that cures their own failure; pressure and fire-flow deficits are charged, by the first-order sensitivity of the junction's head to each main's diameter, to the mains that raise it most per unit length. The network with those sizes is re-solved in every scenario and at each hydrant's needed flow, and the step repeats until nothing curable fails. Every recommended size has been tried one size smaller.",
		}})
	}
	if r.prog != nil {
		out = append(out, report.Section{Heading: "Risk, projects, costs and the plan", Paragraphs: []string{
			"Likelihood of failure (age against expected life, material, break rate, C-factor) and consequence (diameter, flow carried, nearness to critical facilities, road class) are scored 1–5 each; risk is their product. Priority mixes risk with the hydraulic score. Break rates come from the break records joined to the mains; the economic replacement year follows Shamir & Howard.",
			"Qualifying mains are grouped into projects along streets and through short gaps, costed from the unit price table (per length by diameter, times a surface factor, plus a fixed cost per project), and funded year by year within the budget: must-do projects first, then the set with the most priority-weighted length the year's money buys (an exact 0/1 knapsack).",
		}})
	}
	return out
}
