package main

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/paulmach/orb"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/report"
)

// earthRadius is the mean Earth radius in metres (IUGG), for the report
// map's local projection.
const earthRadius = 6371008.8

// mapProjection draws lon/lat on a plane in metres: the equirectangular
// projection about the network's mean latitude, x = R·λ·cos φ₀, y = R·φ.
// Over a town-sized extent its scale error is a fraction of a percent,
// ample for a picture with a scale bar.
type mapProjection struct{ cosLat float64 }

func (m mapProjection) point(p orb.Point) [2]float64 {
	return [2]float64{earthRadius * p[0] * math.Pi / 180 * m.cosLat, earthRadius * p[1] * math.Pi / 180}
}

// newMapProjection centres the projection on the pipes' bounds.
func newMapProjection(l *gis.Layer) mapProjection {
	var b orb.Bound
	first := true
	rd := l.Reader()
	for i := range l.Len() {
		g := rd.Geometry(i)
		if g == nil {
			continue
		}
		if first {
			b, first = g.Bound(), false
		} else {
			b = b.Union(g.Bound())
		}
	}
	return mapProjection{cosLat: math.Cos(b.Center()[1] * math.Pi / 180)}
}

// layerColumns maps a layer's column names to their positions.
func layerColumns(l *gis.Layer) map[string]int {
	m := make(map[string]int, len(l.Columns))
	for k, c := range l.Columns {
		m[c.Name] = k
	}
	return m
}

// cell is row's value of column name, nil when absent.
func cell(cols map[string]int, row gis.Row, name string) any {
	if k, ok := cols[name]; ok {
		return row.Values[k]
	}
	return nil
}

// columnValue is row i's value in column name, nil when absent, read
// without the rest of the row (a pass over a million rows).
func columnValue(rd *gis.RowReader, cols map[string]int, i int, name string) any {
	if k, ok := cols[name]; ok {
		return rd.Value(i, k)
	}
	return nil
}

// cellText formats a cell as its CSV would, with the column's decimals.
func cellText(l *gis.Layer, cols map[string]int, row gis.Row, name string) string {
	k, ok := cols[name]
	if !ok || row.Values[k] == nil {
		return ""
	}
	switch x := row.Values[k].(type) {
	case float64:
		return thousands(x, max(l.Columns[k].Decimals, 0))
	case string:
		return x
	default:
		return fmt.Sprint(x)
	}
}

// reportMap draws every main coloured by priority (or by score without a
// program) and every tested hydrant by NFPA 291 class. A main of a project
// whose ID is in sheets links to that evidence sheet.
func (r *result) reportMap(pipes, hydrants *gis.Layer, sheets map[string]bool) report.Map {
	s := r.cfg.system()
	proj := newMapProjection(pipes)
	cols := layerColumns(pipes)
	valueCol, label := "score", "hydraulic score (0–100)"
	if r.prog != nil {
		valueCol, label = "priority", "priority (0–100)"
	}
	m := report.Map{
		Caption:    fmt.Sprintf("Mains coloured by %s; hydrants by NFPA 291 class of available fire flow at %.0f %s residual. Click a main in a project with an evidence sheet to open the sheet.", label, s.Pressure(hydraulics.Pressure(r.cfg.si(r.cfg.fireResidual()))), s.PressureLabel()),
		ScaleLabel: label, ScaleMin: 0, ScaleMax: 100,
		UnitsPerLength: 1 / s.Length(1), LengthName: s.LengthLabel(), // map metres per ft (or per m)
	}
	tips := r.reportTipColumns()
	drawn := r.mapMainsDrawn(pipes, cols, valueCol, maxMapMains)
	if len(drawn) < pipes.Len() {
		m.Caption += fmt.Sprintf(" The map draws %s of the %s mains: those in projects, then the highest %s; every main is in the pipe layers and ranked.csv.",
			thousands(float64(len(drawn)), 0), thousands(float64(pipes.Len()), 0), valueCol)
	}
	rd := pipes.Reader()
	for _, i := range drawn {
		row := rd.Row(i)
		mm := report.MapMain{ID: r.pipes[i].ID, Lines: mapLines(row.Geometry, proj)}
		if len(mm.Lines) == 0 {
			continue
		}
		if v, ok := cell(cols, row, valueCol).(float64); ok && r.scores[i].Scored {
			mm.Value, mm.HasValue = v, true
		}
		if r.prog != nil && r.prog.projectOf[i] >= 0 {
			if id := r.prog.projects[r.prog.projectOf[i]].id; sheets[id] {
				mm.Sheet = id
			}
		}
		mm.Tip = []report.Figure{{Label: "main", Value: r.pipes[i].ID}}
		if st := r.pipes[i].Street; st != "" {
			mm.Tip = append(mm.Tip, report.Figure{Label: "street", Value: st})
		}
		for _, t := range tips {
			v := cellText(pipes, cols, row, t.column)
			x, isNumber := cell(cols, row, t.column).(float64)
			switch {
			case isNumber && strings.HasPrefix(t.column, "flow_"):
				v = thousands(math.Abs(x), 1) // the layer's sign is the digitised direction
			case isNumber && x == 0 && strings.HasPrefix(t.column, "recommended_"):
				v = "" // keeps its size
			}
			if v != "" {
				mm.Tip = append(mm.Tip, report.Figure{Label: t.label, Value: v})
			}
		}
		if !r.scores[i].Scored {
			mm.Tip = append(mm.Tip, report.Figure{Label: "not scored", Value: r.scores[i].Reasons})
		}
		m.Mains = append(m.Mains, mm)
	}
	if hydrants != nil && r.cfg.fireFlowOn() {
		m.Classes = nfpaLegend(s)
		m.Hydrants = mapHydrants(hydrants, proj, s)
		if n := len(m.Hydrants); n > maxMapHydrants {
			m.Hydrants = lowestHydrants(m.Hydrants, hydrants, "available_fire_flow_"+s.FlowSuffix(), maxMapHydrants)
			m.Caption += fmt.Sprintf(" It draws the %s hydrants of lowest available flow of %s; all are in the hydrant layers.", thousands(maxMapHydrants, 0), thousands(float64(n), 0))
		}
	}
	return m
}

// maxMapMains and maxMapHydrants bound what the report's map draws: a
// browser stays responsive with some tens of thousands of SVG paths, not
// with a million (common practice for interactive SVG; the figure is ours).
// A larger network is drawn in part, and the caption says which part.
const (
	maxMapMains    = 25_000
	maxMapHydrants = 10_000
)

// mapMainsDrawn returns the pipe rows the map draws, in layer order: all of
// them up to limit, else the mains in projects first, then the scored ones
// from the highest valueCol (priority or score) down.
func (r *result) mapMainsDrawn(pipes *gis.Layer, cols map[string]int, valueCol string, limit int) []int {
	rows := make([]int, pipes.Len())
	for i := range rows {
		rows[i] = i
	}
	if len(rows) <= limit {
		return rows
	}
	key := make([]float64, len(rows))
	rd := pipes.Reader()
	for i := range pipes.Len() {
		key[i] = -1
		if v, ok := columnValue(rd, cols, i, valueCol).(float64); ok && r.scores[i].Scored {
			key[i] = v
		}
		if r.prog != nil && r.prog.projectOf[i] >= 0 {
			key[i] += 1000 // above every 0–100 value
		}
	}
	slices.SortStableFunc(rows, func(a, b int) int { return cmp.Compare(key[b], key[a]) })
	rows = rows[:limit]
	slices.Sort(rows)
	return rows
}

// lowestHydrants keeps the n hydrants of hs (one per point row of l, in
// order) with the lowest available fire flow (column availCol; untested
// ones last), in layer order.
func lowestHydrants(hs []report.MapHydrant, l *gis.Layer, availCol string, n int) []report.MapHydrant {
	cols := layerColumns(l)
	var avail []float64
	rd := l.Reader()
	for i := range l.Len() {
		row := rd.Row(i)
		if _, ok := row.Geometry.(orb.Point); !ok {
			continue
		}
		v := math.Inf(1)
		if x, ok := cell(cols, row, availCol).(float64); ok {
			v = x
		}
		avail = append(avail, v)
	}
	order := make([]int, len(hs))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(avail[a], avail[b]) })
	order = order[:n]
	slices.Sort(order)
	out := make([]report.MapHydrant, n)
	for k, i := range order {
		out[k] = hs[i]
	}
	return out
}

// reportTip is one tooltip line: its label and the pipe layer column.
type reportTip struct{ label, column string }

// reportTipColumns are the figures a main's tooltip shows.
func (r *result) reportTipColumns() []reportTip {
	s := r.cfg.system()
	d, l, q := s.DiameterSuffix(), s.LengthSuffix(), s.FlowSuffix()
	return []reportTip{
		{"material", "material"}, {"installed", "install_year"},
		{"diameter (" + s.DiameterLabel() + ")", "diameter_" + d}, {"length (" + s.LengthLabel() + ")", "length_" + l},
		{"C-factor", "c_factor"}, {"peak flow (" + s.FlowLabel() + ")", "flow_" + q},
		{"head loss (" + s.UnitHeadLossLabel() + ")", "headloss_" + s.UnitHeadLossSuffix()},
		{"deficit (" + s.FlowLabel() + ")", "deficit_" + q}, {"recommended (" + s.DiameterLabel() + ")", "recommended_diameter_" + d},
		{"score", "score"}, {"risk", "risk"}, {"priority", "priority"}, {"priority rank", "priority_rank"},
		{"project", "project_id"}, {"plan year", "plan_year"},
	}
}

// mapLines projects a line geometry's parts; other geometries give none.
func mapLines(g orb.Geometry, proj mapProjection) [][][2]float64 {
	var parts []orb.LineString
	switch x := g.(type) {
	case orb.LineString:
		parts = []orb.LineString{x}
	case orb.MultiLineString:
		parts = x
	}
	var out [][][2]float64
	for _, ls := range parts {
		if len(ls) < 2 {
			continue
		}
		line := make([][2]float64, len(ls))
		for k, p := range ls {
			line[k] = proj.point(p)
		}
		out = append(out, line)
	}
	return out
}

// nfpaLegend names the NFPA 291 classes of nfpaClass.
func nfpaLegend(s hydraulics.System) []report.HydrantClass {
	f := func(gpm float64) string {
		return thousands(s.Flow(hydraulics.Flow(gpm)*hydraulics.USGallonPerMinute), 0)
	}
	u := s.FlowLabel()
	return []report.HydrantClass{
		{Name: "AA", Label: "AA: " + f(1500) + " " + u + " or more"},
		{Name: "A", Label: "A: " + f(1000) + "–" + f(1499) + " " + u},
		{Name: "B", Label: "B: " + f(500) + "–" + f(999) + " " + u},
		{Name: "C", Label: "C: below " + f(500) + " " + u},
	}
}

// mapHydrants are the hydrant layer's points with their class and figures.
func mapHydrants(l *gis.Layer, proj mapProjection, s hydraulics.System) []report.MapHydrant {
	cols := layerColumns(l)
	q := s.FlowSuffix()
	var out []report.MapHydrant
	rd := l.Reader()
	for i := range l.Len() {
		row := rd.Row(i)
		p, ok := row.Geometry.(orb.Point)
		if !ok {
			continue
		}
		xy := proj.point(p)
		h := report.MapHydrant{ID: cellText(l, cols, row, "hydrant_id"), X: xy[0], Y: xy[1], Class: cellText(l, cols, row, "nfpa_class")}
		h.Tip = []report.Figure{{Label: "hydrant", Value: h.ID}}
		for _, t := range []reportTip{{"NFPA 291 class", "nfpa_class"}, {"available (" + s.FlowLabel() + ")", "available_fire_flow_" + q},
			{"needed (" + s.FlowLabel() + ")", "needed_fire_flow_" + q}, {"deficit (" + s.FlowLabel() + ")", "fire_flow_deficit_" + q},
			{"after upsizing (" + s.FlowLabel() + ")", "available_after_" + q}, {"note", "note"}} {
			if v := cellText(l, cols, row, t.column); v != "" {
				h.Tip = append(h.Tip, report.Figure{Label: t.label, Value: v})
			}
		}
		out = append(out, h)
	}
	return out
}

// reportCharts are the report's four charts.
func (r *result) reportCharts(pipes *gis.Layer) []report.Chart {
	charts := []report.Chart{r.chartScores(pipes), r.chartLengthByMaterial()}
	if c, ok := r.chartCostRisk(); ok {
		charts = append(charts, c)
	}
	if r.cfg.fireFlowOn() {
		charts = append(charts, r.chartFireFlow())
	}
	return charts
}

// chartScores is the distribution of priority (or score) in tens.
func (r *result) chartScores(pipes *gis.Layer) report.Chart {
	cols := layerColumns(pipes)
	name, what := "score", "Hydraulic score"
	if r.prog != nil {
		name, what = "priority", "Priority"
	}
	c := report.Chart{ID: "chart-scores", Title: what + " of the scored mains", Kind: report.Bars,
		XLabel: what + " (0–100)", YLabel: "mains", Caption: "How many mains fall in each band of ten points; the higher bands come first in the plan."}
	counts := make([]float64, 10)
	rd := pipes.Reader()
	for i := range pipes.Len() {
		if v, ok := columnValue(rd, cols, i, name).(float64); ok && r.scores[i].Scored {
			counts[min(int(v/10), 9)]++
		}
	}
	for k := range 10 {
		c.Categories = append(c.Categories, fmt.Sprintf("%d–%d", 10*k, 10*k+10))
	}
	c.Series = []report.Series{{Name: "mains", Values: counts}}
	return c
}

// chartLengthByMaterial is the length of main by material and decade of
// installation, stacked.
func (r *result) chartLengthByMaterial() report.Chart {
	s := r.cfg.system()
	unit := progMileOrKmLabel(s)
	c := report.Chart{ID: "chart-inventory", Title: "Length of main by material and decade installed", Kind: report.Bars, Stacked: true,
		XLabel: "decade installed", YLabel: "length (" + unit + ")", Caption: "The network's age and material profile; mains with no install year are under \"unknown\"."}
	byMat := map[string]map[string]float64{}
	decades := map[string]bool{}
	for _, p := range r.pipes {
		dec := "unknown"
		if p.InstallYear > 0 {
			dec = strconv.Itoa(p.InstallYear/10*10) + "s"
		}
		mat := p.Material
		if mat == "" {
			mat = "unknown"
		}
		if byMat[mat] == nil {
			byMat[mat] = map[string]float64{}
		}
		byMat[mat][dec] += s.Length(p.Length) / progMileOrKm(s)
		decades[dec] = true
	}
	c.Categories = sortedKeys(decades) // "1920s" … "2020s", then "unknown"
	mats := sortedKeys(byMat)
	for _, m := range mats {
		v := make([]float64, len(c.Categories))
		for k, dec := range c.Categories {
			v[k] = byMat[m][dec]
		}
		c.Series = append(c.Series, report.Series{Name: m, Values: v})
	}
	return c
}

// chartCostRisk is the cumulative cost of the projects, in the plan's
// order (funded years first, then unfunded by benefit per dollar), against
// the cumulative share of the network's risk they remove: replacing a main
// is taken to bring its risk to the minimum of 1, so a project removes
// Σ (risk − 1) × length over its mains.
func (r *result) chartCostRisk() (report.Chart, bool) {
	pr := r.prog
	if pr == nil || len(pr.projects) == 0 {
		return report.Chart{}, false
	}
	var total float64
	for i, p := range r.pipes {
		if r.scores[i].Scored {
			total += (pr.risk[i].Value - 1) * float64(p.Length)
		}
	}
	pts := [][2]float64{{0, 0}}
	var cost, removed float64
	for _, k := range r.planOrder() {
		p := pr.projects[k]
		cost += p.cost
		for _, i := range p.segments {
			if r.scores[i].Scored {
				removed += (pr.risk[i].Value - 1) * float64(r.pipes[i].Length)
			}
		}
		share := 0.0
		if total > 0 {
			share = 100 * removed / total
		}
		pts = append(pts, [2]float64{cost / 1e6, share})
	}
	return report.Chart{ID: "chart-cost-risk", Title: "Cumulative cost against cumulative risk removed", Kind: report.Lines,
		XLabel: "cumulative cost (US$ million, " + strconv.Itoa(r.progFirstYear()) + " money)", YLabel: "share of the network's risk × length removed (%)",
		Caption: "Projects in the plan's order; each point adds one project. A steep start means the first dollars buy the most risk reduction.",
		Series:  []report.Series{{Name: "projects in plan order", Points: pts}}}, true
}

// planOrder is the projects in the order the plan takes them: each year's
// projects in turn, then the unfunded ones by benefit per dollar (all of
// them so, without a budget).
func (r *result) planOrder() []int {
	pr := r.prog
	var order, rest []int
	if pr.plan == nil { // no budget: every project, by benefit per dollar
		for k := range pr.projects {
			rest = append(rest, k)
		}
	} else {
		for _, y := range pr.plan.Years {
			order = append(order, y.Projects...)
		}
		rest = slices.Clone(pr.plan.Unfunded)
	}
	slices.SortStableFunc(rest, func(a, b int) int {
		pa, pb := pr.projects[a], pr.projects[b]
		return cmp.Compare(pb.benefit/max(pb.cost, 1), pa.benefit/max(pa.cost, 1))
	})
	return append(order, rest...)
}

// chartFireFlow is available against needed fire flow per tested hydrant,
// before and (with the upsizing loop) after.
func (r *result) chartFireFlow() report.Chart {
	s := r.cfg.system()
	u := s.FlowLabel()
	c := report.Chart{ID: "chart-fire-flow", Title: "Available against needed fire flow", Kind: report.Points, Diagonal: true,
		XLabel: "needed fire flow (" + u + ")", YLabel: "available fire flow (" + u + ")",
		Caption: "One point per tested hydrant at max day; points below the dashed line are short of their needed flow."}
	var meets, short, after [][2]float64
	for k, h := range r.hydrants {
		if h.res == nil {
			continue
		}
		pt := [2]float64{s.Flow(h.needed), s.Flow(h.res.Available)}
		if h.res.Available < h.needed {
			short = append(short, pt)
			if r.cure != nil {
				if a := r.cureAfter(k); a != nil {
					after = append(after, [2]float64{pt[0], s.Flow(a.Available)})
				}
			}
		} else {
			meets = append(meets, pt)
		}
	}
	c.Series = []report.Series{{Name: "meets needed", Points: meets}, {Name: "short", Points: short}}
	if r.cure != nil {
		c.Series = append(c.Series, report.Series{Name: "short hydrants after upsizing", Points: after})
	}
	return c
}
