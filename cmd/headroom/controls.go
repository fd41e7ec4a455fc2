package main

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// SourceControlFields are the optional source-layer fields of the
// per-scenario grades and of a pump (see gis.SourceControls). Each names a
// property of the source layer; "" means not in the layer.
type SourceControlFields struct {
	GradeMaxDay     string `toml:"grade_max_day"`     // grade held at max day; empty: the grade field's value
	GradePeakHour   string `toml:"grade_peak_hour"`   // grade held at peak hour; empty: the grade field's value
	GradeFire       string `toml:"grade_fire"`        // grade during the fire-flow sweep (a tank at its low level); empty: the grade
	PumpShutoffHead string `toml:"pump_shutoff_head"` // pump head at zero flow, grade unit
	PumpDesignFlow  string `toml:"pump_design_flow"`  // pump design point flow, pump_flow_unit
	PumpDesignHead  string `toml:"pump_design_head"`  // pump design point head, grade unit
	PumpMaxFlow     string `toml:"pump_max_flow"`     // largest flow on the pump curve, pump_flow_unit
	PumpMaxHead     string `toml:"pump_max_head"`     // head at the largest flow, grade unit
	PumpFlowUnit    string `toml:"pump_flow_unit"`    // "gpm" (default), "lps", "mgd" or "cfs"
}

// ctlSchema adds the control fields of f to the source schema s.
func (f SourceFields) ctlSchema(s gis.SourceSchema) gis.SourceSchema {
	c := f.SourceControlFields
	s.GradeMaxDay, s.GradePeakHour, s.GradeFire = c.GradeMaxDay, c.GradePeakHour, c.GradeFire
	s.PumpShutoffHead, s.PumpDesignFlow, s.PumpDesignHead = c.PumpShutoffHead, c.PumpDesignFlow, c.PumpDesignHead
	s.PumpMaxFlow, s.PumpMaxHead, s.PumpFlowUnit = c.PumpMaxFlow, c.PumpMaxHead, c.PumpFlowUnit
	return s
}

// ctlTemplate writes the control keys of [sources.fields] into the
// commented config template.
func ctlTemplate(p func(string, ...any), sf SourceFields) {
	c := sf.SourceControlFields
	for _, k := range []struct{ key, val, comment string }{
		{"grade_max_day", c.GradeMaxDay, "optional: grade held at max day; empty = the grade field's value"},
		{"grade_peak_hour", c.GradePeakHour, "optional: grade held at peak hour; empty = the grade field's value"},
		{"grade_fire", c.GradeFire, "optional: grade during the fire-flow sweep (tank at low level, fire storage drawn); empty = the grade"},
		{"pump_shutoff_head", c.PumpShutoffHead, "optional pump (all five or none): head at zero flow, grade unit; the source is then the wet well"},
		{"pump_design_flow", c.PumpDesignFlow, "pump design-point flow, in pump_flow_unit"},
		{"pump_design_head", c.PumpDesignHead, "pump design-point head, grade unit"},
		{"pump_max_flow", c.PumpMaxFlow, "largest flow on the pump curve, in pump_flow_unit"},
		{"pump_max_head", c.PumpMaxHead, "head at that largest flow, grade unit"},
	} {
		p("%s = %q  # %s\n", k.key, k.val, k.comment)
	}
	unit := c.PumpFlowUnit
	if unit == "" {
		unit = "gpm"
	}
	p("pump_flow_unit = %q  # \"gpm\", \"lps\", \"mgd\" or \"cfs\"\n", unit)
}

// ctlScenarioGrade returns what a source's controls hold in the scenario
// named name ("average day", "max day", "peak hour" or "fire"), or nil for
// average day, whose grade is the network's own.
func ctlScenarioGrade(name string) func(*gis.SourceControls) hydraulics.Head {
	switch name {
	case "max day":
		return func(c *gis.SourceControls) hydraulics.Head { return c.GradeMaxDay }
	case "peak hour":
		return func(c *gis.SourceControls) hydraulics.Head { return c.GradePeakHour }
	case "fire":
		return func(c *gis.SourceControls) hydraulics.Head { return c.GradeFire }
	}
	return nil
}

// ctlGrades returns one grade per network node (read at fixed nodes) for
// the scenario, or nil when every source holds its own grade field's value
// there, so the network is solved as built.
func (r *result) ctlGrades(name string) []hydraulics.Head {
	pick := ctlScenarioGrade(name)
	if pick == nil {
		return nil
	}
	grades := make([]hydraulics.Head, len(r.net.Nodes))
	for i, n := range r.net.Nodes {
		grades[i] = n.Grade
	}
	changed := false
	for _, sp := range r.supplies {
		c := r.sources[sp.Source].Controls
		if c == nil || !r.net.Nodes[sp.Node].Fixed {
			continue
		}
		if h := pick(c); h != grades[sp.Node] {
			grades[sp.Node], changed = h, true
		}
	}
	if !changed {
		return nil
	}
	return grades
}

// ctlNetwork returns the network with each source at its grade for the
// scenario: r.net itself when no source changes, else a copy with its own
// nodes (the pipes are shared and read-only).
func (r *result) ctlNetwork(name string) *hydraulics.Network {
	grades := r.ctlGrades(name)
	if grades == nil {
		return r.net
	}
	net := &hydraulics.Network{Nodes: slices.Clone(r.net.Nodes), Pipes: r.net.Pipes}
	for i := range net.Nodes {
		if net.Nodes[i].Fixed {
			net.Nodes[i].Grade = grades[i]
		}
	}
	return net
}

// ctlSetFireGrades sets the fire-flow grades (sources.fields.grade_fire)
// on the fire-flow solver and, when any differs from max day's, solves the
// max-day background at them: the base the sweep starts every hydrant's
// search from (see ctlFireBase).
func (r *result) ctlSetFireGrades(solver *hydraulics.Solver) error {
	r.ctlFire = nil
	grades := r.ctlGrades("fire")
	maxDay := r.ctlGrades("max day")
	if grades == nil && maxDay == nil {
		return nil
	}
	if grades == nil {
		grades = make([]hydraulics.Head, len(r.net.Nodes))
		for i, n := range r.net.Nodes {
			grades[i] = n.Grade
		}
	}
	if maxDay != nil && slices.Equal(grades, maxDay) {
		// the max-day solution already holds these grades
		return solver.SetGrades(grades)
	}
	if err := solver.SetGrades(grades); err != nil {
		return fmt.Errorf("fire-flow grades: %w", err)
	}
	base, err := solver.Solve(nil, r.maxDay())
	if err != nil {
		return fmt.Errorf("max day at the fire-flow grades: %w", err)
	}
	r.ctlFire = base
	return nil
}

// ctlFireBase is the background of the fire-flow sweep: max day at the
// fire-flow grades (the max-day solution when they are the same).
func (r *result) ctlFireBase() *hydraulics.Solution {
	if r.ctlFire != nil {
		return r.ctlFire
	}
	return r.maxDay()
}

// ctlPumpState describes pump station st in solution sol: the flow it
// delivers and the head it adds, H_discharge − H_suction, in the run's
// units, or "off" when the grades downstream hold it shut.
func (r *result) ctlPumpState(st gis.PumpStation, sol *hydraulics.Solution) string {
	s := r.cfg.system()
	q := sol.Flow[st.Link]
	hd, hs := sol.Head[st.Discharge], sol.Head[st.Suction]
	if math.IsNaN(float64(hd)) {
		return "not solved"
	}
	if q <= 0 {
		return fmt.Sprintf("off (the grade downstream, %.1f %s, holds it shut)", s.Head(hd), s.LengthLabel())
	}
	return fmt.Sprintf("%.1f %s at %.1f %s head", s.Flow(q), s.FlowLabel(), s.Head(hd-hs), s.LengthLabel())
}

// ctlSummarisePumps prints one line per pump station: its source, curve
// points and, per scenario, the flow and head at its operating point.
func (r *result) ctlSummarisePumps(p func(string, ...any)) {
	if len(r.ctlPumps) == 0 {
		return
	}
	s := r.cfg.system()
	p("Pumps (curve h = A − B·Q^C through shutoff, design and maximum points; operating point per scenario)\n")
	for _, st := range r.ctlPumps {
		src := r.sources[st.Source]
		pump := src.Controls.Pump
		var ops []string
		for _, sc := range r.scenarios {
			ops = append(ops, sc.name+" "+r.ctlPumpState(st, sc.sol))
		}
		if r.ctlFire != nil {
			ops = append(ops, "fire-flow background "+r.ctlPumpState(st, r.ctlFire))
		}
		p("  %s from source %s (wet well at %.1f %s) into node %s; curve %.0f %s shutoff, %.0f %s at %.0f %s, %.0f %s at %.0f %s: %s\n",
			r.net.Pipes[st.Link].ID, src.ID, s.Head(r.net.Nodes[st.Suction].Grade), s.LengthLabel(), r.net.Nodes[st.Discharge].ID,
			s.Head(pump.Head[0]), s.LengthLabel(), s.Flow(pump.Flow[1]), s.FlowLabel(), s.Head(pump.Head[1]), s.LengthLabel(),
			s.Flow(pump.Flow[2]), s.FlowLabel(), s.Head(pump.Head[2]), s.LengthLabel(), strings.Join(ops, "; "))
	}
}

// ctlInputPipe returns the input pipe of network link j, or -1 for a link
// that is no input pipe's (a pump added by gis.AddPumps).
func ctlInputPipe(t *gis.Topology, j int) int {
	if j < 0 || j >= len(t.Links) {
		return -1
	}
	return t.Links[j].Pipe
}
