package main

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// UpsizingConfig is the [upsizing] section: the loop that proves a cure
// (hydraulics.Upsize) after scoring.
type UpsizingConfig struct {
	// Enabled turns the loop off when false; unset means on. On the demo
	// town (2,551 mains, 684 hydrants) the loop adds about 4 s to the run.
	Enabled *bool `toml:"enabled"`
	// MaxIterations caps the rounds that add upsizes; 0 means the default.
	MaxIterations int `toml:"max_iterations"`
	// MaxLengthFt / MaxLengthM cap the total length upsized; 0 or unset
	// means no cap.
	MaxLengthFt *float64 `toml:"max_length_ft"`
	MaxLengthM  *float64 `toml:"max_length_m"`
}

// cureDefaultIterations is the default of upsizing.max_iterations (common
// practice, no source: a planning model settles in a few rounds).
const cureDefaultIterations = 20

// cureMaxIterationsLimit keeps a mistyped max_iterations from running for hours.
const cureMaxIterationsLimit = 1000

func (c *Config) cureEnabled() bool {
	return (c.Upsizing.Enabled == nil || *c.Upsizing.Enabled) && !c.layerFlowsOn()
}

func (c *Config) cureMaxLength() quantity {
	u := c.Upsizing
	return quantity{"upsizing.max_length_ft", "upsizing.max_length_m", u.MaxLengthFt, u.MaxLengthM, [2]float64{ft, 1}, 0, false}
}

func (c *Config) cureIterations() int {
	if c.Upsizing.MaxIterations == 0 {
		return cureDefaultIterations
	}
	return c.Upsizing.MaxIterations
}

// cureValidate checks the [upsizing] keys.
func (c *Config) cureValidate() []error {
	var errs []error
	if n := c.Upsizing.MaxIterations; n < 0 || n > cureMaxIterationsLimit {
		errs = append(errs, fmt.Errorf("upsizing.max_iterations = %d: use 1 to %d (0 or unset: %d)", n, cureMaxIterationsLimit, cureDefaultIterations))
	}
	if _, err := c.cureMaxLength().value(c.system()); err != nil {
		errs = append(errs, err)
	}
	return errs
}

// cureTemplate is the [upsizing] section of the commented config template.
func cureTemplate(c *Config) string {
	var b strings.Builder
	s := c.system()
	fmt.Fprintf(&b, "[upsizing]  # after scoring: upsize failing mains, re-solve every scenario and fire flow, drop what is not needed\n")
	fmt.Fprintf(&b, "enabled = %t  # the loop re-solves trial networks and a last fire-flow sweep: seconds for a town of ~700 hydrants; false skips it\n", c.cureEnabled())
	fmt.Fprintf(&b, "max_iterations = %d  # rounds that add upsizes before the loop stops and says so\n", c.cureIterations())
	fmt.Fprintf(&b, "max_length_%s = %s  # cap on the total length upsized; 0 = no cap\n\n", s.LengthSuffix(),
		strconv.FormatFloat(s.Length(hydraulics.Length(c.si(c.cureMaxLength()))), 'g', -1, 64))
	return b.String()
}

// cureRun runs the upsizing loop on the scored network: the three
// scenarios (peak hour checked), the solved hydrants at their needed
// flows on max day at the fire-flow grades, the parts of one input pipe
// sized together.
func (r *result) cureRun() error {
	cfg := r.cfg
	if !cfg.cureEnabled() || r.flowCheck != nil {
		return nil
	}
	in := hydraulics.UpsizeInput{
		Network: r.net, Limits: r.limits, FireBackground: 1,
		Solve:         hydraulics.Options{Tolerance: cfg.Solver.Tolerance, MaxIterations: cfg.Solver.MaxIterations},
		MaxIterations: cfg.cureIterations(),
		MaxLength:     hydraulics.Length(cfg.si(cfg.cureMaxLength())),
		Group:         make([]int, len(r.net.Pipes)),
	}
	for _, sc := range r.scenarios {
		in.Scenarios = append(in.Scenarios, hydraulics.UpsizeScenario{Name: sc.name, DemandFactor: sc.factor,
			Grades: r.ctlGrades(sc.name), Check: sc.prefix == ""})
	}
	for j := range in.Group {
		in.Group[j] = ctlInputPipe(r.topo, j) // -1 for a pump
	}
	r.cureHydrant = nil
	if cfg.fireFlowOn() {
		in.Fire = hydraulics.FireFlowOptions{Residual: hydraulics.Pressure(cfg.si(cfg.fireResidual())), Zone: r.nodeZones()}
		in.FireGrades = r.ctlGrades("fire")
		if in.FireGrades == nil {
			in.FireGrades = make([]hydraulics.Head, len(r.net.Nodes))
			for i, n := range r.net.Nodes {
				in.FireGrades[i] = n.Grade
			}
		}
		for k, h := range r.hydrants {
			if h.res != nil {
				in.Hydrants = append(in.Hydrants, hydraulics.UpsizeHydrant{Node: h.Node, Needed: h.needed})
				in.FireBefore = append(in.FireBefore, *h.res) // the run's own sweep: no second one
				r.cureHydrant = append(r.cureHydrant, k)
			}
		}
	}
	res, err := hydraulics.Upsize(in)
	if err != nil {
		var nc *hydraulics.NotConvergedError
		if errors.As(err, &nc) {
			return solverError{fmt.Errorf("upsizing: a trial network did not converge (%v); set upsizing.enabled = false to skip the loop, or raise solver.max_iterations", err)}
		}
		return solverError{fmt.Errorf("upsizing: %w", err)}
	}
	r.cure = res
	r.cureReasons()
	return nil
}

// cureReasons ends the reasons of each pipe the loop upsized, or that
// fails a criterion and keeps its size, with what the re-solve found: the
// scoring's own size is sized for the peak-hour flow of that main alone,
// the loop's for every scenario and fire flow with its neighbours'
// upsizes in place.
func (r *result) cureReasons() {
	s := r.cfg.system()
	unmet := map[int]bool{} // lookup only: input pipes the loop left failing
	for _, u := range r.cure.Unmet {
		if u.Pipe >= 0 {
			unmet[ctlInputPipe(r.topo, u.Pipe)] = true
		}
	}
	for k := range r.scores {
		sc := &r.scores[k]
		var note string
		switch rec := r.cureRecommended(sc.Index); {
		case rec > 0:
			note = "recommended after re-solving every scenario and fire flow: " + scoring.DiameterText(s, rec)
		case unmet[sc.Index]:
			note = "after re-solving every scenario and fire flow with the recommended mains: still fails (see the summary)"
		case sc.Reasons != "" && !strings.HasSuffix(sc.Reasons, scoring.MeetsCriteria):
			note = "after re-solving every scenario and fire flow with the recommended mains: keeps its size, its criteria met"
		default:
			continue
		}
		if sc.Reasons == "" {
			sc.Reasons = note
		} else {
			sc.Reasons += "; " + note
		}
	}
}

// cureRecommended is input pipe i's recommended nominal size, 0 for none.
func (r *result) cureRecommended(i int) hydraulics.Length {
	var d hydraulics.Length
	for _, j := range r.parts[i] {
		d = max(d, r.cure.Recommended[j].Nominal)
	}
	return d
}

// curePipeColumns are the pipe layer's upsizing columns (none when the
// loop is off).
func (r *result) curePipeColumns() []gis.Column {
	if r.cure == nil {
		return nil
	}
	return []gis.Column{{Name: "recommended_diameter_" + r.cfg.system().DiameterSuffix(), Kind: gis.Real, Decimals: 1}}
}

// curePipeValues adds input pipe i's recommended size to v: 0 when it
// keeps its main, empty when it is not in the network.
func (r *result) curePipeValues(i int, v rowValues) {
	if r.cure == nil || len(r.parts[i]) == 0 {
		return
	}
	s := r.cfg.system()
	v.set("recommended_diameter_"+s.DiameterSuffix(), s.Diameter(r.cureRecommended(i)))
}

// cureNodeColumns are the node layer's after-upsizing pressures: peak hour
// plain, the other scenarios with their prefix.
func (r *result) cureNodeColumns() []gis.Column {
	if r.cure == nil {
		return nil
	}
	p := r.cfg.system().PressureSuffix()
	cols := []gis.Column{{Name: "pressure_after_" + p, Kind: gis.Real, Decimals: 2}}
	for _, sc := range r.otherScenarios() {
		cols = append(cols, gis.Column{Name: sc.prefix + "pressure_after_" + p, Kind: gis.Real, Decimals: 2})
	}
	return cols
}

// cureNodeValues are node i's values of cureNodeColumns.
func (r *result) cureNodeValues(i int) []any {
	if r.cure == nil {
		return nil
	}
	n := len(r.scenarios)
	order := append([]int{n - 1}, make([]int, 0, n-1)...)
	for k := range n - 1 {
		order = append(order, k)
	}
	var vals []any
	for _, k := range order {
		vals = append(vals, r.curePressure(r.cure.After[k], i))
	}
	return vals
}

// curePressure is node i's pressure in sol in the run's units, nil for a
// source or an unsupplied node.
func (r *result) curePressure(sol *hydraulics.Solution, i int) any {
	n := r.net.Nodes[i]
	h := sol.Head[i]
	if math.IsNaN(float64(h)) {
		return nil
	}
	return r.cfg.system().Pressure(hydraulics.NodePressure(n, h))
}

// cureHydrantColumns are the hydrant layer's after-upsizing columns.
func (r *result) cureHydrantColumns() []gis.Column {
	if r.cure == nil {
		return nil
	}
	q := r.cfg.system().FlowSuffix()
	return []gis.Column{{Name: "available_after_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "fire_flow_deficit_after_" + q, Kind: gis.Real, Decimals: 1}}
}

// cureHydrantValues are hydrant k's values of cureHydrantColumns (nulls
// for a hydrant with no result).
func (r *result) cureHydrantValues(k int) []any {
	if r.cure == nil {
		return nil
	}
	res := r.cureAfter(k)
	if res == nil {
		return []any{nil, nil}
	}
	s := r.cfg.system()
	return []any{s.Flow(res.Available), s.Flow(max(0, r.hydrants[k].needed-res.Available))}
}

// cureAfter is hydrant k's fire flow after upsizing, nil when it has none.
func (r *result) cureAfter(k int) *hydraulics.FireFlowResult {
	i := slices.Index(r.cureHydrant, k)
	if i < 0 || i >= len(r.cure.FireAfter) || r.cure.FireAfter[i].Err != nil {
		return nil
	}
	return &r.cure.FireAfter[i]
}

// cureSummarise prints the loop's outcome: why it stopped, the length by
// recommended size, fire-flow deficits and low junctions before and after,
// and each criterion still unmet with its reason.
func (r *result) cureSummarise(p func(string, ...any)) {
	if r.cure == nil {
		return
	}
	s := r.cfg.system()
	c := r.cure
	p("Upsizing (every scenario and each hydrant's needed fire flow re-solved with the new mains, design C %.0f)\n", r.limits.DesignC)
	p("  %s after %d round%s (%d trial networks)\n", c.Stop, c.Rounds, plural(c.Rounds), c.Trials)
	type bySize struct {
		nominal hydraulics.Length
		length  hydraulics.Length
		mains   int
	}
	var sizes []bySize
	for i, pipe := range r.pipes {
		if len(r.parts[i]) == 0 {
			continue
		}
		d := r.cureRecommended(i)
		if d == 0 {
			continue
		}
		k := slices.IndexFunc(sizes, func(b bySize) bool { return b.nominal == d })
		if k < 0 {
			sizes = append(sizes, bySize{nominal: d})
			k = len(sizes) - 1
		}
		sizes[k].length += pipe.Length
		sizes[k].mains++
	}
	slices.SortFunc(sizes, func(a, b bySize) int { return int(math.Copysign(1, float64(a.nominal-b.nominal))) })
	if len(sizes) == 0 {
		p("  no main needs upsizing\n")
	}
	var total hydraulics.Length
	for _, b := range sizes {
		total += b.length
		p("  %.0f %s: %d main%s, %.0f %s\n", s.Diameter(b.nominal), s.DiameterLabel(), b.mains, plural(b.mains), s.Length(b.length), s.LengthLabel())
	}
	if len(sizes) > 0 {
		p("  total %.0f %s of main to upsize\n", s.Length(total), s.LengthLabel())
	}
	r.cureSummariseFire(p)
	lowAfter := len(hydraulics.LowPressure(c.Network, c.After[len(c.After)-1], r.limits))
	p("  peak-hour junctions below %.1f %s: %d before, %d after\n", s.Pressure(r.limits.MinPressure), s.PressureLabel(), len(r.lowNodes), lowAfter)
	lines := r.cureUnmetLines()
	if len(lines) == 0 {
		p("  every criterion is met after upsizing\n\n")
		return
	}
	p("  still unmet: %d\n", len(lines))
	for k, l := range lines {
		if k == cureUnmetShown {
			p("    ... and %d more\n", len(lines)-k)
			break
		}
		p("    - %s\n", l)
	}
	p("\n")
}

// cureUnmetShown is how many unmet criteria the summary lists.
const cureUnmetShown = 10

// cureSummariseFire prints the fire-flow deficits before and after.
func (r *result) cureSummariseFire(p func(string, ...any)) {
	if len(r.cureHydrant) == 0 {
		return
	}
	s := r.cfg.system()
	var before, cured, left int
	var leftFlow hydraulics.Flow
	for _, k := range r.cureHydrant {
		h := r.hydrants[k]
		if h.res.Available >= h.needed {
			continue
		}
		before++
		if a := r.cureAfter(k); a != nil && a.Available >= h.needed {
			cured++
		} else {
			left++
			if a != nil {
				leftFlow += h.needed - a.Available
			}
		}
	}
	p("  fire-flow deficits: %d before, %d cured, %d left", before, cured, left)
	if left > 0 {
		p(" (%.0f %s short in all)", s.Flow(leftFlow), s.FlowLabel())
	}
	p("\n")
}

// cureUnmetLines describes each unmet criterion once, in the run's units.
func (r *result) cureUnmetLines() []string {
	s := r.cfg.system()
	var lines []string
	for _, u := range r.cure.Unmet {
		var what string
		switch u.Criterion {
		case hydraulics.CriterionHeadLoss, hydraulics.CriterionVelocity:
			id := r.net.Pipes[u.Pipe].ID
			if i := ctlInputPipe(r.topo, u.Pipe); i >= 0 {
				id = r.pipes[i].ID
			}
			what = fmt.Sprintf("%s on pipe %s at %s", u.Criterion, id, r.scenarios[u.Scenario].name)
		case hydraulics.CriterionPressure:
			what = fmt.Sprintf("low pressure at %s at %s", r.net.Nodes[u.Node].ID, r.scenarios[u.Scenario].name)
		case hydraulics.CriterionFireFlow:
			h := r.hydrants[r.cureHydrant[u.Hydrant]]
			what = fmt.Sprintf("fire flow at hydrant %s (%.0f %s needed)", h.ID, s.Flow(h.needed), s.FlowLabel())
			if u.Limiting >= 0 && u.Limiting != u.Node {
				what += ", limited by " + r.net.Nodes[u.Limiting].ID + ","
			}
		}
		why := u.Cause.String()
		if u.Cause == hydraulics.CauseElevation {
			n := r.net.Nodes[u.Limiting]
			why += fmt.Sprintf(" (%s: ground %.1f %s, highest grade that reaches it %.1f %s, so %.1f %s at best)", n.ID,
				s.Length(n.Elevation), s.LengthLabel(), s.Head(u.BestGrade), s.LengthLabel(), s.Pressure(u.BestPressure), s.PressureLabel())
		}
		l := what + " is " + why
		if u.Cause != hydraulics.CauseElevation {
			l = what + ": " + why
		}
		if !slices.Contains(lines, l) {
			lines = append(lines, l)
		}
	}
	return lines
}
