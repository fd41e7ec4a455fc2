package main

import (
	"math"
	"slices"
	"strings"
	"testing"

	"headroom/hydraulics"
)

// TestScenariosShareOneSolver: the scenarios, solved on one Solver with
// each scenario's grades and factored demands, each after the first started
// from the ones before it (solveScenarios, warmStart), agree with a
// separate cold hydraulics.Solve of each scenario's network with its
// DemandFactor to within what the solver's convergence test allows: heads
// to 1e-6 m and flows to 1e-6 of the largest flow (the test stops at a
// relative flow change of 1e-8; common practice for comparing two converged
// Newton solves, the figures ours). The first scenario, solved cold both
// ways, agrees to the bit; a warm start takes no more iterations.
func TestScenariosShareOneSolver(t *testing.T) {
	r := demoResult(t)
	cfg := r.cfg
	for k, sc := range r.scenarios {
		want, err := hydraulics.Solve(r.ctlNetwork(sc.name), &hydraulics.Options{
			DemandFactor:  sc.factor,
			Tolerance:     cfg.Solver.Tolerance,
			MaxIterations: cfg.Solver.MaxIterations,
		})
		if err != nil {
			t.Fatalf("%s: %v", sc.name, err)
		}
		got := sc.sol
		if (k == 0 && got.Iterations != want.Iterations) || got.Iterations > want.Iterations {
			t.Errorf("%s: %d iterations, separate cold solve %d", sc.name, got.Iterations, want.Iterations)
		}
		headTol, flowTol := 1e-6, 1e-6*maxAbsFlow(want.Flow)
		if k == 0 {
			headTol, flowTol = 0, 0
		}
		for i := range want.Head {
			if d := math.Abs(float64(got.Head[i] - want.Head[i])); d > headTol {
				t.Fatalf("%s: node %d head %v, separate solve %v", sc.name, i, got.Head[i], want.Head[i])
			}
		}
		for j := range want.Flow {
			if d := math.Abs(float64(got.Flow[j] - want.Flow[j])); d > flowTol {
				t.Fatalf("%s: pipe %d flow %v, separate solve %v", sc.name, j, got.Flow[j], want.Flow[j])
			}
		}
		if math.Abs(float64(got.Demand-want.Demand)) > 1e-9*math.Abs(float64(want.Demand)) ||
			math.Abs(float64(got.Supply-want.Supply)) > flowTol+1e-9*math.Abs(float64(want.Supply)) {
			t.Errorf("%s: demand, supply %v %v, separate solve %v %v", sc.name, got.Demand, got.Supply, want.Demand, want.Supply)
		}
		t.Logf("%s: %d iterations, cold %d", sc.name, got.Iterations, want.Iterations)
	}
}

func maxAbsFlow(q []hydraulics.Flow) float64 {
	m := 0.0
	for _, x := range q {
		m = max(m, math.Abs(float64(x)))
	}
	return m
}

// TestPeakHourOnly: with solver.scenarios = ["peak_hour"] the run solves
// peak hour alone, from a cold start, and its heads and flows agree with
// the peak hour of the run that solves all three to what the convergence
// test allows (as in TestScenariosShareOneSolver); the pipe layer keeps
// every other column and drops only the avg_day_ and max_day_ ones, and
// the summary says what was not solved. Fire flow and upsizing are off in
// both runs (the sweep needs max day).
func TestPeakHourOnly(t *testing.T) {
	run := func(scenarios []string) *result {
		in, err := builtInDemo()
		if err != nil {
			t.Fatal(err)
		}
		off := false
		in.cfg.FireFlow.Enabled, in.cfg.Upsizing.Enabled = &off, &off
		in.cfg.Solver.Scenarios = scenarios
		if err := in.cfg.validate(); err != nil {
			t.Fatal(err)
		}
		r, err := analyse(in)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	all, peak := run(nil), run([]string{scenarioPeakHour})
	if len(all.scenarios) != 3 || len(peak.scenarios) != 1 || peak.scenarios[0].name != "peak hour" {
		t.Fatalf("scenarios solved: %d and %d, want 3 and 1 (peak hour)", len(all.scenarios), len(peak.scenarios))
	}
	want, got := all.sol, peak.sol
	flowTol := 1e-6 * maxAbsFlow(want.Flow)
	for i := range want.Head {
		if d := math.Abs(float64(got.Head[i] - want.Head[i])); d > 1e-6 {
			t.Fatalf("node %d: head %v alone, %v after the other scenarios", i, got.Head[i], want.Head[i])
		}
	}
	for j := range want.Flow {
		if d := math.Abs(float64(got.Flow[j] - want.Flow[j])); d > flowTol {
			t.Fatalf("pipe %d: flow %v alone, %v after the other scenarios", j, got.Flow[j], want.Flow[j])
		}
	}
	var dropped []string
	kept := map[string]bool{}
	for _, c := range peak.pipeColumns() {
		kept[c.Name] = true
	}
	for _, c := range all.pipeColumns() {
		if !kept[c.Name] {
			dropped = append(dropped, c.Name)
		}
	}
	wantDropped := []string{"avg_day_flow_gpm", "avg_day_headloss_ft_per_kft", "max_day_flow_gpm", "max_day_headloss_ft_per_kft"}
	if !slices.Equal(dropped, wantDropped) || len(kept) != len(all.pipeColumns())-len(wantDropped) {
		t.Errorf("pipe columns dropped: %v (%d kept), want %v", dropped, len(kept), wantDropped)
	}
	var summary strings.Builder
	if err := writeSummary(&summary, peak, nil); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(summary.String(), "not solved (solver.scenarios): average day, max day") {
		t.Errorf("the summary does not say which scenarios were not solved:\n%s", summary.String())
	}
}

// TestScenarioChoiceRejected: solver.scenarios must name known scenarios
// once each and hold peak hour, and max day while fire flow is on; each
// message names the key and what to do.
func TestScenarioChoiceRejected(t *testing.T) {
	for _, tc := range []struct {
		list []string
		fire bool
		want string
	}{
		{[]string{"max_day"}, false, `must include "peak_hour"`},
		{[]string{"peak_hour", "peak_hour"}, false, `"peak_hour" is listed twice`},
		{[]string{"peak_hour", "minimum_hour"}, false, `"minimum_hour" is not one of`},
		{[]string{"peak_hour"}, true, `must include "max_day" while the fire-flow sweep is on`},
	} {
		in, err := builtInDemo()
		if err != nil {
			t.Fatal(err)
		}
		on := tc.fire
		in.cfg.FireFlow.Enabled = &on
		in.cfg.Solver.Scenarios = tc.list
		err = in.cfg.validate()
		if err == nil || !strings.Contains(err.Error(), "solver.scenarios") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%v (fire flow %v): %v, want an error with %q", tc.list, tc.fire, err, tc.want)
		}
	}
}
