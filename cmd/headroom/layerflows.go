package main

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// Flows taken from the pipe layer (solver.flows = "from_layer"): a calibrated
// model elsewhere produced each main's flow, positive in the digitised
// direction (first vertex to last), and headroom evaluates every criterion
// on those flows instead of solving. Head losses are Hazen-Williams at the
// pipe's own C; heads are carried from the sources outward along a
// breadth-first spanning tree of the network (hydraulics.GivenFlows); the
// pipes outside the tree and the node balances then check the given flows.
//
// A main split at tees (gis.Topology.Parts) carries its one given flow on
// every part, since the model's flow is per main; the continuity check
// then shows each tee's branch flow as an imbalance, reported like any other.
// A pump link (controls.go) takes its flow from continuity at its discharge.
// The flows are the peak-hour state: the other scenarios and the fire-flow
// sweep need a solve and are skipped.

// Values of solver.flows.
const (
	flowsSolve     = "solve"      // solve the network (the default)
	flowsFromLayer = "from_layer" // take each pipe's flow from pipes.fields.flow
)

// Tolerances of the check on given flows (common practice, no source):
// half a foot of head, about 0.2 psi, is below the resolution planners read
// pressures to and above what a model exported with rounded flows or a
// slightly different Hazen-Williams constant (≤ 0.5 %, DOMAIN.md §1.6) shows;
// 1 gpm is less than one household's peak use and above the rounding of
// flows written to 0.01 gpm.
const (
	layerFlowHeadTolerance = hydraulics.Head(0.5 * hydraulics.Foot)
	layerFlowTolerance     = 1 * hydraulics.USGallonPerMinute
)

// layerFlowsOn reports whether the run takes its flows from the pipe layer.
func (c *Config) layerFlowsOn() bool { return c.Solver.Flows == flowsFromLayer }

// layerFlowValidate checks solver.flows and the flow field's keys, setting
// the default "solve".
func (c *Config) layerFlowValidate() []error {
	var errs []error
	switch c.Solver.Flows {
	case "":
		c.Solver.Flows = flowsSolve
	case flowsSolve, flowsFromLayer:
	default:
		errs = append(errs, fmt.Errorf("solver.flows = %q: use %q or %q (each pipe's flow read from pipes.fields.flow)", c.Solver.Flows, flowsSolve, flowsFromLayer))
	}
	if c.layerFlowsOn() && strings.TrimSpace(c.Pipes.Fields.Flow) == "" {
		errs = append(errs, errors.New(`solver.flows = "from_layer" needs pipes.fields.flow, the pipe attribute that holds each pipe's flow`))
	}
	if _, err := layerFlowUnit(c.Pipes.Fields.FlowUnit); err != nil {
		errs = append(errs, err)
	}
	return errs
}

// layerFlowUnit is the unit of pipes.fields.flow, spelt as the demand
// field's unit is (gis.FlowUnit); "" is gpm.
func layerFlowUnit(u string) (hydraulics.Flow, error) {
	q, err := gis.FlowUnit(u, "pipes.fields.flow_unit")
	if err != nil {
		return 0, fmt.Errorf("pipes.fields.flow_unit = %q: use \"gpm\", \"lps\", \"mgd\", \"cfs\" or \"m3s\"", u)
	}
	return q, nil
}

// layerFlowRead reads each input pipe's flow (m³/s) from the pipe layer's
// flow attribute. A pipe that takes part in the network and is open must
// have a finite number there; otherwise the run stops, listing each such
// feature (up to maxListed) with its file, index, id and field. A closed
// pipe carries no flow: a nonzero value there is a problem row, and zero is
// used.
func (r *result) layerFlowRead(c *gis.Collection) ([]hydraulics.Flow, error) {
	cfg := r.cfg
	unit, err := layerFlowUnit(cfg.Pipes.Fields.FlowUnit)
	if err != nil {
		return nil, err
	}
	field := cfg.Pipes.Fields.Flow
	flows := make([]hydraulics.Flow, len(r.pipes))
	var errs []error
	bad := 0
	for i, p := range r.pipes {
		if !p.Usable || i >= len(c.Features.Features) {
			continue
		}
		v, name := layerFlowLookup(c.Attrs(i), field)
		x, why := layerFlowNumber(v)
		if why != "" && !p.Closed {
			bad++
			if bad <= maxListed {
				errs = append(errs, &gis.FieldError{File: c.File, Feature: p.Index, ID: p.ID, Field: name,
					Err: fmt.Errorf("flow %s; solver.flows = \"from_layer\" needs a number (%s, positive in the digitised direction) on every open pipe", why, layerFlowUnitName(cfg))})
			}
			continue
		}
		if p.Closed {
			if why == "" && x != 0 {
				r.problems = append(r.problems, gis.Problem{File: c.File, Feature: p.Index, ID: p.ID, Field: name,
					What:   fmt.Sprintf("closed pipe has a given flow of %s %s", strconv.FormatFloat(x, 'f', -1, 64), layerFlowUnitName(cfg)),
					Action: "flow taken as zero; check the pipe's status or its flow"})
			}
			continue
		}
		flows[i] = hydraulics.Flow(x) * unit
	}
	if bad > maxListed {
		errs = append(errs, fmt.Errorf("... and %d more pipes without a usable flow", bad-maxListed))
	}
	return flows, errors.Join(errs...)
}

// layerFlowUnitName is the flow unit as the config spells it, for messages.
func layerFlowUnitName(cfg *Config) string {
	if u := strings.TrimSpace(cfg.Pipes.Fields.FlowUnit); u != "" {
		return u
	}
	return "gpm"
}

// layerFlowLookup returns the property named name, or the one property
// whose name matches it ignoring case, and the name it was found under
// (name itself when there is none).
func layerFlowLookup(a gis.Attrs, name string) (any, string) {
	if v, found, ok := a.Lookup(name); ok {
		return v, found
	}
	return nil, name
}

// layerFlowNumber reads a property as a finite number (gis.Number), or says
// why it is not one ("is missing", "\"n/a\" is not a number").
func layerFlowNumber(v any) (float64, string) {
	x, err := gis.Number(v)
	switch {
	case errors.Is(err, gis.ErrMissing):
		return 0, "is missing"
	case err != nil:
		return 0, err.Error()
	}
	return x, ""
}

// scenariosOrLayerFlows solves the scenarios, or, with solver.flows =
// "from_layer", builds the one peak-hour state from the given flows.
func (r *result) scenariosOrLayerFlows() error {
	if !r.cfg.layerFlowsOn() {
		return r.solveScenarios()
	}
	return r.layerFlowScenario()
}

// layerFlowScenario gives every link of each main the main's flow, builds
// the Solution from it (hydraulics.GivenFlows at the peak-hour factor) and
// lists in problems.csv the pipes and junctions where the check exceeds its
// tolerance.
func (r *result) layerFlowScenario() error {
	cfg := r.cfg
	flow := make([]hydraulics.Flow, len(r.net.Pipes))
	for i, parts := range r.parts {
		for _, j := range parts {
			flow[j] = r.layerFlows[i]
		}
	}
	r.layerFlowPumps(flow)
	// The sources at their peak-hour grades (controls.go), as a solve would use.
	sol, chk, err := hydraulics.GivenFlows(r.ctlNetwork("peak hour"), flow, cfg.Demands.PeakHourFactor)
	if err != nil {
		return solverError{fmt.Errorf("flows from the pipe layer: %w", err)}
	}
	junctions := 0
	for _, n := range r.net.Nodes {
		if !n.Fixed {
			junctions++
		}
	}
	if len(sol.Unsupplied) == junctions {
		return solverError{r.noSupply()}
	}
	r.sol, r.flowCheck = sol, chk
	r.scenarios = []scenario{{name: "peak hour", factor: cfg.Demands.PeakHourFactor, sol: sol}}
	r.layerFlowProblems()
	return nil
}

// layerFlowPumps sets the flow of each pump link (added after the
// topology's links by gis.AddPumps), which no pipe feature holds, from
// continuity at its discharge node: the given flows out of it less those
// into it, plus its peak-hour demand. The pump then lifts the head by its
// curve at that flow on the way into the network.
func (r *result) layerFlowPumps(flow []hydraulics.Flow) {
	var at [][]int // per node, its links
	for j := len(r.topo.Links); j < len(r.net.Pipes); j++ {
		pump := r.net.Pipes[j]
		if pump.Pump == nil {
			continue
		}
		if at == nil {
			at = make([][]int, len(r.net.Nodes))
			for k, p := range r.net.Pipes {
				at[p.From], at[p.To] = append(at[p.From], k), append(at[p.To], k)
			}
		}
		d := pump.To
		q := r.net.Nodes[d].Demand * hydraulics.Flow(r.cfg.Demands.PeakHourFactor)
		for _, k := range at[d] {
			switch p := r.net.Pipes[k]; {
			case k == j || p.Closed:
			case p.From == d:
				q += flow[k]
			default:
				q -= flow[k]
			}
		}
		flow[j] = q
	}
}

// layerFlowProblems lists each loop pipe whose mismatch and each junction
// whose imbalance is above its tolerance.
func (r *result) layerFlowProblems() {
	s := r.cfg.system()
	chk := r.flowCheck
	file := filepath.Base(r.cfg.Pipes.Path)
	field := r.cfg.Pipes.Fields.Flow
	for j, m := range chk.LoopMismatch {
		if m <= layerFlowHeadTolerance {
			continue
		}
		np := r.net.Pipes[j]
		var p gis.Pipe // a pump link is no pipe feature's: then only its id is named
		if i := ctlInputPipe(r.topo, j); i >= 0 {
			p = r.pipes[i]
		} else {
			p.ID = np.ID
		}
		r.problems = append(r.problems, gis.Problem{File: file, Feature: p.Index, ID: p.ID, Field: field,
			What: fmt.Sprintf("the given flows do not close the loop through %s: the heads carried to its ends differ from its Hazen-Williams loss at %.2f %s by %.2f %s (tolerance %.2f %s)",
				np.ID, s.Flow(r.sol.Flow[j]), s.FlowLabel(), s.Head(m), s.LengthLabel(), s.Head(layerFlowHeadTolerance), s.LengthLabel()),
			Action: "pipe scored with its given flow; check the flows and C-factors of this loop against the model they came from (pipes.fields.measured_c can carry that model's C)"})
	}
	var at [][]string
	for k, e := range chk.Imbalance {
		if math.Abs(float64(e)) <= float64(layerFlowTolerance) {
			continue
		}
		if at == nil {
			at = r.layerFlowPipesAt()
		}
		n := r.net.Nodes[k]
		r.problems = append(r.problems, gis.Problem{File: file, ID: n.ID, Field: field,
			What: fmt.Sprintf("at junction %s the given flows leave %.2f %s unbalanced (inflow − outflow − %.2f × average-day demand of %.2f %s; tolerance %.2f %s); pipes there: %s",
				n.ID, s.Flow(e), s.FlowLabel(), r.cfg.Demands.PeakHourFactor, s.Flow(n.Demand), s.FlowLabel(),
				s.Flow(layerFlowTolerance), s.FlowLabel(), strings.Join(at[k], ", ")),
			Action: "heads and criteria use the given flows anyway; at a tee a main split into parts carries its one flow on each, so the branch flow shows here; otherwise check the flows and the demands"})
	}
}

// layerFlowPipesAt lists, per node, the ids of the network pipes that end there.
func (r *result) layerFlowPipesAt() [][]string {
	at := make([][]string, len(r.net.Nodes))
	for _, p := range r.net.Pipes {
		at[p.From] = append(at[p.From], p.ID)
		at[p.To] = append(at[p.To], p.ID)
	}
	return at
}

// layerFlowSummarise prints the check on the given flows where a solved
// run prints its scenarios.
func (r *result) layerFlowSummarise(p func(string, ...any)) {
	s := r.cfg.system()
	sol, chk := r.sol, r.flowCheck
	p("Flows from the pipe layer (field %q; no network solve; the criteria and scores read them as peak hour)\n", r.cfg.Pipes.Fields.Flow)
	worstPipe, worstNode := "", ""
	if chk.WorstPipe >= 0 {
		worstPipe = " at pipe " + r.net.Pipes[chk.WorstPipe].ID
	}
	if chk.WorstNode >= 0 {
		worstNode = " at junction " + r.net.Nodes[chk.WorstNode].ID
	}
	var loops, nodes int
	for _, m := range chk.LoopMismatch {
		if m > layerFlowHeadTolerance {
			loops++
		}
	}
	for _, e := range chk.Imbalance {
		if math.Abs(float64(e)) > float64(layerFlowTolerance) {
			nodes++
		}
	}
	lo, hi := r.pressureRange(sol)
	p("  heads carried from the sources along a breadth-first tree; pipes closing loops: %d, largest loop mismatch %.2f %s%s (tolerance %.2f %s; %d above it)\n",
		chk.Loops, s.Head(sol.MaxHeadResidual), s.LengthLabel(), worstPipe, s.Head(layerFlowHeadTolerance), s.LengthLabel(), loops)
	p("  largest node imbalance %.2f %s%s (inflow − outflow − %.2f × average-day demand; tolerance %.2f %s; %d above it, see problems.csv)\n",
		s.Flow(sol.MaxContinuityResidual), s.FlowLabel(), worstNode, r.cfg.Demands.PeakHourFactor, s.Flow(layerFlowTolerance), s.FlowLabel(), nodes)
	p("  supply %.2f %s, demand %.2f %s; pressure %.1f to %.1f %s\n",
		s.Flow(sol.Supply), s.FlowLabel(), s.Flow(sol.Demand), s.FlowLabel(), lo, hi, s.PressureLabel())
	p("  average day, max day and the fire-flow sweep need a network solve: skipped (solver.flows = %q)\n", flowsFromLayer)
}
