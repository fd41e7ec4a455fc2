package main

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/paulmach/orb"

	"headroom/hydraulics"
	"headroom/report"
)

// reportSheets are the evidence sheets: one per project in the plan's
// order, or, without a program, one per top-ranked scored segment.
func (r *result) reportSheets() ([]report.Sheet, string) {
	return r.reportSheetsUpTo(reportMaxSheets)
}

// reportMaxSheets caps the evidence sheets of a run with projects (see
// reportSheetsUpTo). At a million mains the demo town groups 15,251
// projects, of which the plan funds 40; a sheet for each made a 68 MB
// report of some 15,000 printed pages, and projects.csv holds the same
// figures for every project.
const reportMaxSheets = 500

// reportSheetsUpTo is the evidence sheets in the plan's order (planOrder):
// one per project, every project the plan funds and then the unfunded
// ones until there are limit sheets in all; with no projects, one per
// segment for the top reportTopSegments. The note, when not "", says how
// many projects have no sheet and where they are listed.
func (r *result) reportSheetsUpTo(limit int) ([]report.Sheet, string) {
	if r.prog != nil && len(r.prog.projects) > 0 {
		order := r.planOrder()
		funded := 0
		if r.prog.plan != nil {
			for _, y := range r.prog.plan.Years {
				funded += len(y.Projects)
			}
		}
		keep := min(len(order), max(funded, limit))
		out := make([]report.Sheet, 0, keep)
		for _, k := range order[:keep] {
			out = append(out, r.projectSheet(r.prog.projects[k]))
		}
		note := ""
		if keep < len(order) {
			note = fmt.Sprintf("Sheets are given for the first %s of the %s projects in the plan's order (the %s it funds, then the unfunded ones by benefit per dollar); projects.csv and ranked.xlsx list every project with its figures.",
				thousands(float64(keep), 0), thousands(float64(len(order)), 0), thousands(float64(funded), 0))
		}
		return out, note
	}
	order := make([]int, 0, len(r.pipes))
	for i := range r.pipes {
		if r.scores[i].Scored {
			order = append(order, i)
		}
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(r.scores[a].Rank, r.scores[b].Rank) })
	var out []report.Sheet
	for _, i := range order[:min(len(order), reportTopSegments)] {
		out = append(out, r.segmentSheet(i))
	}
	return out, ""
}

// projectSheet is one project's evidence.
func (r *result) projectSheet(p progProject) report.Sheet {
	s := r.cfg.system()
	l := s.LengthLabel()
	title := p.id
	if p.street != "" {
		title += " · " + p.street
	}
	title += fmt.Sprintf(" · %s %s", thousands(s.Length(p.length), 0), l)
	year := "unfunded within the plan's budget"
	if p.year > 0 {
		year = strconv.Itoa(p.year)
	}
	sh := report.Sheet{ID: p.id, Title: title, Location: r.sheetLocation(p.street, p.segments)}
	sh.Figures = []report.Figure{
		{Label: "Plan year", Value: year},
		{Label: "Cost", Value: "$" + progDollars(p.cost), Note: strconv.Itoa(r.progFirstYear()) + " money; order-of-magnitude unit prices"},
		{Label: "Length", Value: thousands(s.Length(p.length), 0) + " " + l,
			Note: fmt.Sprintf("%d mains; %s %s taken in to join runs; %s %s upsized", len(p.segments), thousands(s.Length(p.gapLength), 0), l, thousands(s.Length(p.upsizedLength), 0), l)},
		{Label: "Worst priority", Value: fmt.Sprintf("%.1f", p.worstPriority), Note: fmt.Sprintf("length-weighted mean %.1f", p.meanPriority)},
		{Label: "Largest risk", Value: fmt.Sprintf("%.1f", p.maxRisk), Note: "likelihood × consequence, 1–25"},
		{Label: "Benefit per $1,000", Value: fmt.Sprintf("%.3f", p.benefit/max(p.cost/1000, 1e-9)), Note: "priority × " + l + " per $1,000"},
	}
	if p.mustDo {
		sh.Figures = append(sh.Figures, report.Figure{Label: "Must do", Value: "yes", Note: "named in plan.must_do_pipes"})
	}
	if len(p.hydrants) > 0 {
		sh.Figures = append(sh.Figures, report.Figure{Label: "Fire flow", Value: strings.Join(p.hydrants, ", "), Note: "hydrants short of needed flow whose shortfall these mains carry"})
	}
	sh.Reasons = strings.Split(r.progReasons(p), "; ")
	r.fillSheet(&sh, p.segments, p.gap, p.hydrants)
	return sh
}

// segmentSheet is one segment's evidence, for runs with no program.
func (r *result) segmentSheet(i int) report.Sheet {
	s := r.cfg.system()
	p := r.pipes[i]
	sc := r.scores[i]
	sh := report.Sheet{ID: "segment-" + p.ID, Title: fmt.Sprintf("Rank %d · main %s · %s %s", sc.Rank, p.ID, thousands(s.Length(p.Length), 0), s.LengthLabel()),
		Location: r.sheetLocation(p.Street, []int{i})}
	sh.Figures = []report.Figure{{Label: "Hydraulic score", Value: fmt.Sprintf("%.1f", sc.Score), Note: "0–100, higher is worse"}}
	sh.Reasons = strings.Split(sc.Reasons, "; ")
	r.fillSheet(&sh, []int{i}, nil, nil)
	return sh
}

// fillSheet adds the criteria failed, the segment table, the governing
// segment's Hazen-Williams figures and the before/after table.
func (r *result) fillSheet(sh *report.Sheet, segments []int, gap []bool, hydrants []string) {
	sh.Failed = r.sheetFailed(segments)
	sh.Segments = r.sheetSegments(segments, gap)
	if j, i, ok := r.sheetGoverning(segments); ok {
		sh.Equations = r.sheetEquations(i, j)
	}
	sh.BeforeAfter = r.sheetBeforeAfter(segments, hydrants)
}

// sheetLocation says where the mains are: street, the nodes at the ends,
// the centre in lon/lat.
func (r *result) sheetLocation(street string, segments []int) string {
	var b orb.Bound
	first := true
	for _, i := range segments {
		if g := r.pipes[i].Geometry; g != nil {
			if first {
				b, first = g.Bound(), false
			} else {
				b = b.Union(g.Bound())
			}
		}
	}
	var parts []string
	if street != "" {
		parts = append(parts, street)
	}
	if !first {
		c := b.Center()
		parts = append(parts, fmt.Sprintf("centred at %s, %s (WGS 84)", latText(c[1]), lonText(c[0])))
	}
	ids := make([]string, len(segments))
	for k, i := range segments {
		ids[k] = r.pipes[i].ID
	}
	parts = append(parts, "mains "+strings.Join(ids, ", "))
	return strings.Join(parts, "; ")
}

func latText(lat float64) string {
	if lat < 0 {
		return fmt.Sprintf("%.5f° S", -lat)
	}
	return fmt.Sprintf("%.5f° N", lat)
}

func lonText(lon float64) string {
	if lon < 0 {
		return fmt.Sprintf("%.5f° W", -lon)
	}
	return fmt.Sprintf("%.5f° E", lon)
}

// sheetFailed lists each criterion a segment fails, with the value and the
// limit.
func (r *result) sheetFailed(segments []int) []string {
	s := r.cfg.system()
	var out []string
	for _, i := range segments {
		if !r.scores[i].Scored {
			continue
		}
		id := r.pipes[i].ID
		c := r.checks[r.governing(i)]
		if c.OverSlope {
			out = append(out, fmt.Sprintf("%s: unit head loss %.1f %s above the %.1f limit", id, s.UnitHeadLoss(c.Slope), s.UnitHeadLossLabel(), s.UnitHeadLoss(r.limits.MaxSlope)))
		}
		if c.OverVelocity {
			out = append(out, fmt.Sprintf("%s: velocity %.2f %s above the %.1f limit", id, s.Velocity(c.Velocity), s.VelocityLabel(), s.Velocity(r.limits.MaxVelocity)))
		}
		if c.Deficit > 0 {
			out = append(out, fmt.Sprintf("%s: peak flow %s %s exceeds its capacity of %s by %s", id, thousands(s.Flow(hydraulics.Flow(math.Abs(float64(c.Flow)))), 1), s.FlowLabel(), thousands(s.Flow(c.Capacity), 1), thousands(s.Flow(c.Deficit), 1)))
		}
		if r.pipeLowPressure(i) {
			out = append(out, fmt.Sprintf("%s: feeds a junction below %.1f %s at peak hour", id, s.Pressure(r.limits.MinPressure), s.PressureLabel()))
		}
		if i < len(r.fireCharge) && r.fireCharge[i] != nil {
			f := r.fireCharge[i]
			out = append(out, fmt.Sprintf("%s: carries the fire flow of hydrant %s, short by %s %s", id, f.Hydrant, thousands(s.Flow(f.Needed-f.Available), 0), s.FlowLabel()))
		}
	}
	return out
}

// sheetSegments is the table of a sheet's mains.
func (r *result) sheetSegments(segments []int, gap []bool) report.Table {
	s := r.cfg.system()
	d, l, q := s.DiameterLabel(), s.LengthLabel(), s.FlowLabel()
	t := report.Table{Caption: "Mains (peak hour)", Columns: []string{"main", "material", "installed", "size (" + d + ")",
		"C", "length (" + l + ")", "flow (" + q + ")", "head loss (" + s.UnitHeadLossLabel() + ")", "capacity (" + q + ")",
		"priority", "risk", "economic year", "new size (" + d + ")"}}
	for k, i := range segments {
		p := r.pipes[i]
		id := p.ID
		if gap != nil && gap[k] {
			id += " (joins runs)"
		}
		row := []string{id, p.Material, yearText(p.InstallYear), thousands(s.Diameter(p.Diameter), 0),
			fmt.Sprintf("%.1f", r.cFactor[i]), thousands(s.Length(p.Length), 0), "", "", "", "", "", "", ""}
		if r.scores[i].Scored {
			c := r.checks[r.governing(i)]
			row[6], row[7], row[8] = thousands(math.Abs(s.Flow(c.Flow)), 1), fmt.Sprintf("%.2f", s.UnitHeadLoss(c.Slope)), thousands(s.Flow(c.Capacity), 1)
		}
		if pr := r.prog; pr != nil && r.scores[i].Scored {
			row[9], row[10] = fmt.Sprintf("%.1f", pr.priority[i]), fmt.Sprintf("%.1f", pr.risk[i].Value)
			if y := pr.replaceYear[i]; !math.IsNaN(y) {
				row[11] = fmt.Sprintf("%.0f", y)
			}
		}
		if r.cure != nil && len(r.parts[i]) > 0 {
			if rec := r.cureRecommended(i); rec > 0 {
				row[12] = thousands(s.Diameter(rec), 0)
			} else {
				row[12] = "keeps size"
			}
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

func yearText(y int) string {
	if y <= 0 {
		return "unknown"
	}
	return strconv.Itoa(y)
}

// sheetGoverning is the scored segment with the steepest friction slope:
// its network link j and input pipe i.
func (r *result) sheetGoverning(segments []int) (j, i int, ok bool) {
	best := -1.0
	for _, k := range segments {
		if !r.scores[k].Scored {
			continue
		}
		g := r.governing(k)
		if sl := r.checks[g].Slope; sl > best {
			best, j, i, ok = sl, g, k, true
		}
	}
	return j, i, ok
}

// sheetEquations are the Hazen-Williams figures of link j (input pipe i)
// at peak hour with the numbers in: unit head loss, capacity at the
// criterion, deficit and the inside diameter the criterion needs.
func (r *result) sheetEquations(i, j int) []report.Equation {
	if r.cfg.system() == hydraulics.SI {
		return r.sheetEquationsSI(i, j)
	}
	np := r.net.Pipes[j]
	c := r.checks[j]
	k := hydraulics.HWFlowConstantPerKft() // 148.07 (DOMAIN.md §1.3)
	n, a := hydraulics.HWExponentFlow, 2+hydraulics.HWRadiusExponent
	q := math.Abs(float64(c.Flow)) / float64(hydraulics.USGallonPerMinute)
	d := float64(np.Diameter) / 0.0254
	sLim := 1000 * r.limits.MaxSlope
	h := math.Pow(k*q/(np.C*math.Pow(d, a)), n)
	capQ := np.C * math.Pow(d, a) * math.Pow(sLim, hydraulics.HWSlopeExponent) / k
	dReq := math.Pow(k*q/(r.limits.DesignC*math.Pow(sLim, hydraulics.HWSlopeExponent)), 1/a)
	id := r.pipes[i].ID
	return []report.Equation{
		{Label: "Unit head loss of " + id + " at peak hour (Hazen-Williams, Q gpm, d in)",
			Formula:     "h₁₀₀₀ = (148.07 · Q / (C · d^2.63))^1.852",
			Substituted: fmt.Sprintf("h₁₀₀₀ = (148.07 × %.1f / (%.1f × %.3f^2.63))^1.852", q, np.C, d),
			Result:      fmt.Sprintf("%.2f ft per 1,000 ft (criterion %.1f)", h, sLim)},
		{Label: "Capacity at the head-loss criterion",
			Formula:     "Q_cap = C · d^2.63 · S₁₀₀₀^0.54 / 148.07",
			Substituted: fmt.Sprintf("Q_cap = %.1f × %.3f^2.63 × %.1f^0.54 / 148.07", np.C, d, sLim),
			Result:      fmt.Sprintf("%s gpm; deficit %s − %s = %s gpm", thousands(capQ, 1), thousands(q, 1), thousands(capQ, 1), thousands(max(0, q-capQ), 1))},
		{Label: fmt.Sprintf("Inside diameter that meets the criterion with the design C of %.0f", r.limits.DesignC),
			Formula:     "d_req = (148.07 · Q / (C_design · S₁₀₀₀^0.54))^(1/2.63)",
			Substituted: fmt.Sprintf("d_req = (148.07 × %.1f / (%.0f × %.1f^0.54))^(1/2.63)", q, r.limits.DesignC, sLim),
			Result:      fmt.Sprintf("%.2f in inside diameter%s", dReq, r.requiredText(c))},
	}
}

// sheetEquationsSI is sheetEquations in SI (Q m³/s, D m, h m per km).
func (r *result) sheetEquationsSI(i, j int) []report.Equation {
	np := r.net.Pipes[j]
	c := r.checks[j]
	k := hydraulics.HWHeadLossConstantSI() // 10.674 (DOMAIN.md §1.3)
	n, m := hydraulics.HWExponentFlow, (2+hydraulics.HWRadiusExponent)*hydraulics.HWExponentFlow
	q := math.Abs(float64(c.Flow))
	d := float64(np.Diameter)
	sLim := r.limits.MaxSlope
	h := 1000 * k * math.Pow(q, n) / (math.Pow(np.C, n) * math.Pow(d, m))
	capQ := math.Pow(sLim*math.Pow(np.C, n)*math.Pow(d, m)/k, 1/n)
	dReq := math.Pow(k*math.Pow(q, n)/(math.Pow(r.limits.DesignC, n)*sLim), 1/m)
	id := r.pipes[i].ID
	return []report.Equation{
		{Label: "Unit head loss of " + id + " at peak hour (Hazen-Williams, Q m³/s, D m)",
			Formula:     "h_km = 1000 · 10.674 · Q^1.852 / (C^1.852 · D^4.870)",
			Substituted: fmt.Sprintf("h_km = 1000 × 10.674 × %.5f^1.852 / (%.1f^1.852 × %.4f^4.870)", q, np.C, d),
			Result:      fmt.Sprintf("%.2f m per km (criterion %.1f)", h, 1000*sLim)},
		{Label: "Capacity at the head-loss criterion",
			Formula:     "Q_cap = (S · C^1.852 · D^4.870 / 10.674)^0.54",
			Substituted: fmt.Sprintf("Q_cap = (%.4f × %.1f^1.852 × %.4f^4.870 / 10.674)^0.54", sLim, np.C, d),
			Result:      fmt.Sprintf("%.1f L/s; deficit %.1f − %.1f = %.1f L/s", 1000*capQ, 1000*q, 1000*capQ, 1000*max(0, q-capQ))},
		{Label: fmt.Sprintf("Inside diameter that meets the criterion with the design C of %.0f", r.limits.DesignC),
			Formula:     "D_req = (10.674 · Q^1.852 / (C_design^1.852 · S))^(1/4.870)",
			Substituted: fmt.Sprintf("D_req = (10.674 × %.5f^1.852 / (%.0f^1.852 × %.4f))^(1/4.870)", q, r.limits.DesignC, sLim),
			Result:      fmt.Sprintf("%.0f mm inside diameter%s", 1000*dReq, r.requiredText(c))},
	}
}

// requiredText names the standard size the criteria need (head loss and
// velocity together), when there is one.
func (r *result) requiredText(c hydraulics.PipeCheck) string {
	s := r.cfg.system()
	if c.Required.Nominal <= 0 {
		return ""
	}
	return fmt.Sprintf("; with the velocity criterion too, the smallest standard size is %s %s", thousands(s.Diameter(c.Required.Nominal), 0), s.DiameterLabel())
}

// sheetBeforeAfter compares each main and hydrant before and after the
// upsizing loop's recommended network, at peak hour (mains) and max day
// plus fire (hydrants). Empty without the loop.
func (r *result) sheetBeforeAfter(segments []int, hydrants []string) report.Table {
	if r.cure == nil {
		return report.Table{}
	}
	s := r.cfg.system()
	d, q := s.DiameterLabel(), s.FlowLabel()
	t := report.Table{Caption: "Before and after the upsizing loop (every scenario and fire flow re-solved with the recommended sizes)",
		Columns: []string{"item", "diameter (" + d + ")", "C", "peak flow (" + q + ")", "head loss (" + s.UnitHeadLossLabel() + ")", "available fire flow (" + q + ")"}}
	peak := len(r.scenarios) - 1
	before, after := r.cure.Before[peak], r.cure.After[peak]
	for _, i := range segments {
		if len(r.parts[i]) == 0 || !r.scores[i].Scored {
			continue
		}
		j := r.governing(i)
		b, a := r.net.Pipes[j], r.cure.Network.Pipes[j]
		dAfter := thousands(s.Diameter(r.pipes[i].Diameter), 0)
		if rec := r.cureRecommended(i); rec > 0 {
			dAfter = thousands(s.Diameter(rec), 0)
		}
		t.Rows = append(t.Rows, []string{r.pipes[i].ID,
			thousands(s.Diameter(r.pipes[i].Diameter), 0) + " → " + dAfter,
			fmt.Sprintf("%.1f → %.1f", b.C, a.C),
			thousands(math.Abs(s.Flow(before.Flow[j])), 1) + " → " + thousands(math.Abs(s.Flow(after.Flow[j])), 1),
			fmt.Sprintf("%.2f → %.2f", s.UnitHeadLoss(hydraulics.FrictionSlope(before.Flow[j], b.Diameter, b.C)), s.UnitHeadLoss(hydraulics.FrictionSlope(after.Flow[j], a.Diameter, a.C))),
			""})
	}
	for k, h := range r.hydrants {
		if !slices.Contains(hydrants, h.ID) || h.res == nil {
			continue
		}
		avail := thousands(s.Flow(h.res.Available), 0)
		if a := r.cureAfter(k); a != nil {
			avail += " → " + thousands(s.Flow(a.Available), 0)
		}
		t.Rows = append(t.Rows, []string{"hydrant " + h.ID + " (needs " + thousands(s.Flow(h.needed), 0) + ")", "", "", "", "", avail})
	}
	return t
}
