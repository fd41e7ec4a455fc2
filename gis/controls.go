package gis

import (
	"fmt"
	"strconv"
	"strings"

	"headroom/hydraulics"
)

// SourceControls are what a source holds besides its average-day grade:
// the grade it holds in the other scenarios and the pump it may feed the
// network through.
type SourceControls struct {
	// GradeMaxDay, GradePeakHour and GradeFire are the hydraulic grades held
	// at max day, at peak hour and during the fire-flow sweep (a tank at its
	// low level with the fire storage drawn, say), metres above the datum.
	// Each equals the source's grade (Point.Value) where its field is not
	// mapped or is empty.
	GradeMaxDay, GradePeakHour, GradeFire hydraulics.Head
	// Pump, when non-nil, makes the source a wet well (a reservoir at its
	// grade) that feeds its network node through the pump (see AddPumps).
	Pump *SourcePump
}

// SourcePump is a source's pump: the three curve points read from the
// layer, in SI, and the curve h = A − B·Q^C fitted through them by
// hydraulics.FitPumpCurve.
type SourcePump struct {
	Flow  [3]hydraulics.Flow // 0, design flow, maximum flow
	Head  [3]hydraulics.Head // shutoff head, design head, head at maximum flow
	Curve hydraulics.PumpCurve
}

// ctlGradeField is one optional per-scenario grade field of the source layer.
type ctlGradeField struct {
	key, prop string
	set       func(c *SourceControls, h hydraulics.Head)
}

// readSourceControls reads the per-scenario grades and pump curve points of
// the usable sources pts (from SourcesFromCollection, in feature order) and
// sets their Controls. An empty or unmapped scenario grade is the grade; a
// scenario grade that is not a number or not a plausible elevation is
// reported and the grade used instead. A pump is given by all five pump
// fields or by none; a source with only some of them, with a value that is
// not a positive number, or with points that no falling curve fits is left
// out (treating it as a plain reservoir at its wet-well level would starve
// the network). It returns the ErrNoUsable error when that leaves no usable
// source.
func readSourceControls(c *Collection, s SourceSchema, pts []Point) ([]Problem, error) {
	file, fc := c.File, c.Features
	gUnit, err := lengthUnit(s.GradeUnit, "sources.fields.grade_unit")
	if err != nil {
		return nil, &FieldError{File: file, Err: err}
	}
	qUnit, err := flowUnit(s.PumpFlowUnit, "sources.fields.pump_flow_unit")
	if err != nil {
		return nil, &FieldError{File: file, Err: err}
	}
	grades := []ctlGradeField{
		{"sources.fields.grade_max_day", s.GradeMaxDay, func(c *SourceControls, h hydraulics.Head) { c.GradeMaxDay = h }},
		{"sources.fields.grade_peak_hour", s.GradePeakHour, func(c *SourceControls, h hydraulics.Head) { c.GradePeakHour = h }},
		{"sources.fields.grade_fire", s.GradeFire, func(c *SourceControls, h hydraulics.Head) { c.GradeFire = h }},
	}
	pump := []fieldSpec{
		{key: "sources.fields.pump_shutoff_head", prop: s.PumpShutoffHead},
		{key: "sources.fields.pump_design_flow", prop: s.PumpDesignFlow},
		{key: "sources.fields.pump_design_head", prop: s.PumpDesignHead},
		{key: "sources.fields.pump_max_flow", prop: s.PumpMaxFlow},
		{key: "sources.fields.pump_max_head", prop: s.PumpMaxHead},
	}
	specs := append([]fieldSpec(nil), pump...)
	for _, g := range grades {
		specs = append(specs, fieldSpec{key: g.key, prop: g.prop})
	}
	probs, err := checkFields(c, specs)
	if err != nil {
		return nil, err
	}
	if err := ctlPumpMapping(file, pump); err != nil {
		return nil, err
	}
	gLabel := unitLabel(s.GradeUnit, "ft")
	usable := 0
	for i := range pts {
		p := &pts[i]
		if !p.Usable || i >= len(fc.Features) {
			continue
		}
		props := c.Attrs(i)
		ctl := &SourceControls{GradeMaxDay: hydraulics.Head(p.Value), GradePeakHour: hydraulics.Head(p.Value), GradeFire: hydraulics.Head(p.Value)}
		for _, g := range grades {
			h, prob, ok := ctlScenarioGrade(p, props, g, gUnit, gLabel)
			if prob != nil {
				probs = append(probs, *prob)
			}
			if ok {
				g.set(ctl, h)
			}
		}
		sp, prob := ctlReadPump(p, props, pump, gUnit, qUnit, gLabel, unitLabel(s.PumpFlowUnit, "gpm"))
		if prob != nil {
			probs = append(probs, *prob)
			p.Usable, p.Reason = false, prob.What
			continue
		}
		ctl.Pump = sp
		p.Controls = ctl
		usable++
	}
	if usable == 0 {
		return probs, &FieldError{File: file,
			Err: fmt.Errorf("%w: none of %d sources can be used; see the problems list", ErrNoUsable, len(pts))}
	}
	return probs, nil
}

// ctlPumpMapping refuses a config that maps some of the five pump fields
// but not all: no source could then have a pump.
func ctlPumpMapping(file string, pump []fieldSpec) error {
	var missing []string
	mapped := 0
	for _, f := range pump {
		if f.prop == "" {
			missing = append(missing, f.key)
		} else {
			mapped++
		}
	}
	if mapped > 0 && len(missing) > 0 {
		return &FieldError{File: file, Err: fmt.Errorf("a pump needs all five curve fields; set the config key%s %s too, or map none of them",
			ctlPlural(len(missing)), strings.Join(missing, ", "))}
	}
	return nil
}

func ctlPlural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// ctlScenarioGrade reads one per-scenario grade of source p. ok is false
// when the grade field's value stands (field unmapped, value empty, or
// reported as bad in prob).
func ctlScenarioGrade(p *Point, props Attrs, g ctlGradeField, unit hydraulics.Length, label string) (h hydraulics.Head, prob *Problem, ok bool) {
	v, name, found := lookup(props, g.prop)
	if !found {
		return 0, nil, false
	}
	key := strings.TrimPrefix(g.key, "sources.fields.")
	x, err := number(v)
	what := ""
	switch {
	case err == errMissing:
		return 0, nil, false
	case err != nil:
		what = key + " " + err.Error()
	default:
		if bad := elevationCheck(unit)(x); bad != "" {
			what = fmt.Sprintf("%s %s %s %s", key, fmtNum(x), label, bad)
		}
	}
	if what != "" {
		return 0, &Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: name, What: what,
			Action: "source kept at its grade field's value in that scenario; correct the value or leave it empty"}, false
	}
	return hydraulics.Head(x * float64(unit)), nil, true
}

// ctlReadPump reads the five pump fields of source p: nil, nil when all are
// empty; a Problem (the source to be left out) when some are missing or bad
// or the curve cannot be fitted. Heads are in the grade unit, flows in the
// pump flow unit; the points are (0, shutoff), (design flow, design head),
// (max flow, max head).
func ctlReadPump(p *Point, props Attrs, specs []fieldSpec, hUnit hydraulics.Length, qUnit hydraulics.Flow, hLabel, qLabel string) (*SourcePump, *Problem) {
	if specs[0].prop == "" {
		return nil, nil
	}
	var vals [5]float64
	var names [5]string
	var empty []string
	problem := func(field, what string) *Problem {
		return &Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: field, What: what,
			Action: "source left out; give all five pump curve values (shutoff head, design flow and head, maximum flow and head) or none"}
	}
	for k, f := range specs {
		v, name, _ := lookup(props, f.prop)
		if name == "" {
			name = f.prop
		}
		names[k] = name
		x, err := number(v)
		switch {
		case err == errMissing:
			empty = append(empty, name)
		case err != nil:
			return nil, problem(name, "pump curve value "+err.Error())
		case x <= 0:
			return nil, problem(name, fmt.Sprintf("pump curve value %s is not positive", fmtNum(x)))
		default:
			vals[k] = x
		}
	}
	switch len(empty) {
	case len(specs):
		return nil, nil
	case 0:
	default:
		return nil, problem(empty[0], "pump curve incomplete: "+strings.Join(empty, ", ")+" empty")
	}
	sp := &SourcePump{
		Flow: [3]hydraulics.Flow{0, hydraulics.Flow(vals[1]) * qUnit, hydraulics.Flow(vals[3]) * qUnit},
		Head: [3]hydraulics.Head{hydraulics.Head(vals[0] * float64(hUnit)), hydraulics.Head(vals[2] * float64(hUnit)), hydraulics.Head(vals[4] * float64(hUnit))},
	}
	curve, err := hydraulics.FitPumpCurve(sp.Flow, sp.Head)
	if err != nil {
		what := fmt.Sprintf("pump curve through (0 %s, %s %s), (%s %s, %s %s), (%s %s, %s %s) cannot be fitted: "+
			"flows must rise and heads fall from shutoff through design to maximum",
			qLabel, fmtNum(vals[0]), hLabel, fmtNum(vals[1]), qLabel, fmtNum(vals[2]), hLabel, fmtNum(vals[3]), qLabel, fmtNum(vals[4]), hLabel)
		return nil, &Problem{File: p.File, Feature: p.Index, ID: p.ID, Field: names[ctlOffending(vals)], What: what,
			Action: "source left out; check the pump's curve points against its data sheet"}
	}
	sp.Curve = curve
	return sp, nil
}

// ctlOffending returns which of the five pump values (shutoff head, design
// flow, design head, max flow, max head) breaks a falling curve first: the
// max flow when it is not above the design flow, else the first head that
// does not fall.
func ctlOffending(v [5]float64) int {
	switch {
	case v[3] <= v[1]:
		return 3
	case v[2] >= v[0]:
		return 2
	case v[4] >= v[2]:
		return 4
	}
	return 0
}

// checkValve marks p as having a check valve when its status st is one of
// the configured check values (case-insensitive) and reports whether it was.
func (r *pipeReader) checkValve(p *Pipe, st string) bool {
	for _, c := range r.s.CheckValues {
		if strings.EqualFold(st, strings.TrimSpace(c)) && st != "" {
			p.CheckValve = true
			return true
		}
	}
	return false
}

// PumpStation is a pumped source as AddPumps put it into a network.
type PumpStation struct {
	Source    int // index into the sources
	Suction   int // the new fixed node at the wet-well grade (net.Nodes and Topology.Nodes)
	Discharge int // the network node the pump feeds: the source's attached node
	Link      int // index of the pump in net.Pipes
}

// AddPumps turns each supply whose source has a pump (Controls.Pump) into
// a pump station: its attached node becomes a junction, a new fixed node
// at the source's position and grade (the wet well or suction level) is
// appended to net.Nodes and t.Nodes (so Topology.Nodes stays parallel to
// net.Nodes, but the node is not in the snapping index: nothing else joins
// it), and a pump link from it to the attached node, with the fitted
// curve, is appended to net.Pipes. supplies[k].Node is moved to the new
// node. The suction node takes the elevation of the attached node. IDs are
// "<source id>.suction" and "<source id>.pump" ("#<feature>" for a source
// without an id). Stations come in supply order.
//
// A supply out of range of sources or net.Nodes is a caller bug and panics.
func AddPumps(net *hydraulics.Network, t *Topology, sources []Point, supplies []Supply) []PumpStation {
	if len(t.Nodes) != len(net.Nodes) {
		panic(fmt.Sprintf("gis: AddPumps: %d topology nodes, %d network nodes", len(t.Nodes), len(net.Nodes)))
	}
	t.ensureIndex() // sets the projection of a Topology made by hand
	var out []PumpStation
	for k := range supplies {
		sp := &supplies[k]
		src := sources[sp.Source]
		if src.Controls == nil || src.Controls.Pump == nil {
			continue
		}
		name := src.ID
		if name == "" {
			name = "#" + strconv.Itoa(src.Index)
		}
		at := sp.Node
		net.Nodes[at].Fixed, net.Nodes[at].Grade = false, 0
		xy := t.proj.xy(src.At)
		suction := len(net.Nodes)
		net.Nodes = append(net.Nodes, hydraulics.Node{ID: name + ".suction", Elevation: net.Nodes[at].Elevation,
			Fixed: true, Grade: sp.Grade, X: xy[0], Y: xy[1]})
		t.Nodes = append(t.Nodes, TopoNode{ID: name + ".suction", At: src.At, X: xy[0], Y: xy[1]})
		curve := src.Controls.Pump.Curve
		net.Pipes = append(net.Pipes, hydraulics.Pipe{ID: name + ".pump", From: suction, To: at, Pump: &curve})
		out = append(out, PumpStation{Source: sp.Source, Suction: suction, Discharge: at, Link: len(net.Pipes) - 1})
		sp.Node = suction
	}
	return out
}
