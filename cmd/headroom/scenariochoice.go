package main

import (
	"fmt"
	"slices"
	"strings"
)

// The scenarios a run may solve (solver.scenarios). Peak hour is the one
// the pipe criteria and the scores read; average day and max day are
// reported beside it, and max day is the background of the fire-flow sweep
// (DOMAIN.md §3.5).
const (
	scenarioAverageDay = "average_day"
	scenarioMaxDay     = "max_day"
	scenarioPeakHour   = "peak_hour"
)

// allScenarios is every scenario in the order they are solved: each starts
// from the ones before it (warmStart), and peak hour, the last, is r.sol.
var allScenarios = []string{scenarioAverageDay, scenarioMaxDay, scenarioPeakHour}

// scenarioValidate checks solver.scenarios and fills the default (all
// three). Peak hour cannot be left out, and neither can max day while the
// fire-flow sweep is on. With solver.flows = "from_layer" only peak hour is
// built whatever the list says (layerflows.go).
func (c *Config) scenarioValidate() []error {
	if len(c.Solver.Scenarios) == 0 {
		c.Solver.Scenarios = slices.Clone(allScenarios)
		return nil
	}
	var errs []error
	for i, s := range c.Solver.Scenarios {
		switch {
		case !slices.Contains(allScenarios, s):
			errs = append(errs, fmt.Errorf("solver.scenarios: %q is not one of %q, %q, %q", s, scenarioAverageDay, scenarioMaxDay, scenarioPeakHour))
		case slices.Contains(c.Solver.Scenarios[:i], s):
			errs = append(errs, fmt.Errorf("solver.scenarios: %q is listed twice", s))
		}
	}
	if !c.solves(scenarioPeakHour) {
		errs = append(errs, fmt.Errorf("solver.scenarios must include %q: the pipe criteria, the scores and the plan read peak hour", scenarioPeakHour))
	}
	if c.fireFlowOn() && !c.solves(scenarioMaxDay) {
		errs = append(errs, fmt.Errorf("solver.scenarios must include %q while the fire-flow sweep is on (fire flow is drawn at max day); add it, or set fire_flow.enabled = false", scenarioMaxDay))
	}
	return errs
}

// solves reports whether solver.scenarios lists a scenario.
func (c *Config) solves(name string) bool { return slices.Contains(c.Solver.Scenarios, name) }

// chosenScenarios is the scenarios the run solves, in solving order, each
// with its output column prefix and demand factor.
func (c *Config) chosenScenarios() []scenario {
	all := []scenario{
		{name: "average day", prefix: "avg_day_", factor: 1},
		{name: "max day", prefix: "max_day_", factor: c.Demands.MaxDayFactor},
		{name: "peak hour", prefix: "", factor: c.Demands.PeakHourFactor},
	}
	var out []scenario
	for i, key := range allScenarios {
		if c.solves(key) {
			out = append(out, all[i])
		}
	}
	return out
}

// scenariosLeftOut names the scenarios solver.scenarios leaves out, as the
// summary and the report write them ("average day").
func (c *Config) scenariosLeftOut() []string {
	var left []string
	for _, key := range allScenarios {
		if !c.solves(key) {
			left = append(left, strings.ReplaceAll(key, "_", " "))
		}
	}
	return left
}
