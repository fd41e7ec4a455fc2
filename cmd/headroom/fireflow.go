package main

import (
	"cmp"
	"fmt"
	"math"
	"path/filepath"
	"slices"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// fireHydrant is one hydrant of the fire-flow sweep and its result.
type fireHydrant struct {
	gis.Hydrant
	needed hydraulics.Flow // from the layer, else fire_flow.needed
	res    *hydraulics.FireFlowResult
	note   string // why it has no result, when it has none

	// land-use class and the property it was read from (needed.go), and
	// where needed came from (needBasisField, ...).
	landUse, landUseField string
	basis                 string
}

// Fire-flow attribution (common practice, no single source): the mains a
// shortfall is charged to are those that carry at least chargeShare of the
// needed fire flow in the max-day-plus-fire solve, and of those the
// chargeCount with the highest unit head loss.
const (
	// fireTolerance is the relative flow change at which a fire-flow
	// re-solve stops (DOMAIN.md §6.4: 1e-3 is the common default; 1e-6
	// keeps heads to well under 0.01 psi here).
	fireTolerance = 1e-6
	chargeShare   = 0.25
	chargeCount   = 3
)

// readHydrants reads the optional hydrant layer and joins each hydrant to
// its nearest junction; without a layer every supplied junction is a
// hydrant (set once the network is solved).
func readHydrants(in *inputs, r *result) error {
	cfg := in.cfg
	if !cfg.fireFlowOn() || (cfg.Hydrants.Path == "" && in.hydrants == nil) {
		return nil
	}
	c, err := openLayer(in, cfg.hydrantLayer(), in.hydrants)
	if err != nil {
		return err
	}
	hs, probs, err := gis.HydrantsFromLayer(c, cfg.hydrantSchema())
	r.problems = append(r.problems, probs...)
	if err != nil {
		return err
	}
	r.hydrantLayer = true
	fixed := make([]bool, len(r.topo.Nodes))
	for _, s := range r.supplies {
		fixed[s.Node] = true
	}
	r.problems = append(r.problems, gis.AttachHydrants(r.topo, hs, fixed, hydraulics.Length(cfg.si(cfg.hydrantSearch())))...)
	classes, fields, probs := needLandUse(c, cfg.Hydrants.Fields.LandUse)
	r.problems = append(r.problems, probs...)
	for k, h := range hs {
		fh := fireHydrant{Hydrant: h}
		if k < len(classes) {
			fh.landUse, fh.landUseField = classes[k], fields[k]
		}
		r.hydrants = append(r.hydrants, fh)
	}
	r.problems = append(r.problems, cfg.needAssign(r.hydrants)...)
	return nil
}

// fireFlow runs the max-day-plus-fire sweep over the hydrants (every
// supplied junction when there is no hydrant layer), then charges each
// shortfall to the mains that limit it.
func (r *result) fireFlow() error {
	cfg := r.cfg
	if !cfg.fireFlowOn() {
		return nil
	}
	if !r.hydrantLayer {
		for i, n := range r.net.Nodes {
			if !n.Fixed && !math.IsNaN(float64(r.maxDay().Head[i])) {
				r.hydrants = append(r.hydrants, fireHydrant{Hydrant: gis.Hydrant{Index: 0, ID: n.ID, At: r.topo.Nodes[i].At, Node: i, Usable: true}})
			}
		}
	}
	solver, err := r.fireSolver()
	if err != nil {
		return err
	}
	var nodes []int
	var which []int // index into r.hydrants of each searched node
	defaultNeeded := hydraulics.Flow(cfg.si(cfg.fireNeeded()))
	for k := range r.hydrants {
		h := &r.hydrants[k]
		if h.basis == "" { // a junction (no hydrant layer): needed.go sets the layer's
			h.needed, h.basis = defaultNeeded, needBasisDefault
		}
		switch {
		case !h.Usable:
			h.note = h.Reason
		case math.IsNaN(float64(r.maxDay().Head[h.Node])):
			h.note = "its node is in a part of the network no source reaches"
		default:
			nodes, which = append(nodes, h.Node), append(which, k)
		}
	}
	sweep := r.progress.begin("fire-flow sweep", "hydrants", len(nodes))
	opt := r.fireOptions()
	opt.Searched = func() { sweep.add(1) }
	results := hydraulics.FireFlow(solver, nil, r.ctlFireBase(), nodes, opt)
	sweep.end("")
	for k, res := range results {
		h := &r.hydrants[which[k]]
		if res.Err != nil {
			h.note = res.Err.Error()
			continue
		}
		h.res = &results[k]
	}
	r.chargeShortfalls(solver)
	return nil
}

// fireSolver is the Solver of the sweep: max-day demands, the fire grades
// (controls.go). The search brackets the available flow to 1 gpm, so each
// re-solve stops at a relative flow change of fireTolerance rather than
// the scenarios' tighter one.
func (r *result) fireSolver() (*hydraulics.Solver, error) {
	cfg := r.cfg
	solver, err := hydraulics.NewSolver(r.net, &hydraulics.Options{
		DemandFactor: cfg.Demands.MaxDayFactor, Tolerance: fireTolerance, MaxIterations: cfg.Solver.MaxIterations,
	})
	if err != nil {
		return nil, solverError{fmt.Errorf("fire flow: %w", err)}
	}
	if err := r.ctlSetFireGrades(solver); err != nil {
		return nil, solverError{fmt.Errorf("fire flow: %w", err)}
	}
	return solver, nil
}

// fireOptions are the sweep's options: the configured residual, the zones
// and the default method (hydraulics.FireFlowAuto).
func (r *result) fireOptions() hydraulics.FireFlowOptions {
	return hydraulics.FireFlowOptions{Residual: hydraulics.Pressure(r.cfg.si(r.cfg.fireResidual())), Zone: r.nodeZones()}
}

// maxDay is the max-day solution, the background of fire flow.
// solver.scenarios cannot leave it out while the sweep is on; nil when the
// run did not solve it.
func (r *result) maxDay() *hydraulics.Solution {
	for _, sc := range r.scenarios {
		if sc.name == "max day" {
			return sc.sol
		}
	}
	return nil
}

// nodeZones numbers each node by the zone of the first pipe that reaches it
// (pipes' zone field); nil when no pipe has a zone, so every junction is
// checked.
func (r *result) nodeZones() []int {
	names := map[string]int{}
	zone := make([]int, len(r.net.Nodes))
	any := false
	for _, l := range r.topo.Links {
		z := r.pipes[l.Pipe].Zone
		if z == "" {
			continue
		}
		any = true
		if _, ok := names[z]; !ok {
			names[z] = len(names) + 1
		}
		for _, n := range []int{l.From, l.To} {
			if zone[n] == 0 {
				zone[n] = names[z]
			}
		}
	}
	if !any {
		return nil
	}
	return zone
}

// chargeShortfalls solves max day plus the needed fire flow at each short
// hydrant and charges the shortfall to the mains that carry that fire flow
// at the highest unit head loss; a main charged by several hydrants keeps
// the largest shortfall.
func (r *result) chargeShortfalls(solver *hydraulics.Solver) {
	base := r.ctlFireBase()
	r.fireCharge = make([]*scoring.FireFlowShortfall, len(r.pipes))
	for _, h := range r.hydrants {
		if h.res == nil || h.res.Available >= h.needed {
			continue
		}
		demand := make([]hydraulics.Flow, len(r.net.Nodes))
		for i, n := range r.net.Nodes {
			if !n.Fixed {
				demand[i] = n.Demand * hydraulics.Flow(r.cfg.Demands.MaxDayFactor)
			}
		}
		demand[h.Node] += h.needed
		sol, err := solver.Solve(demand, base)
		if err != nil {
			continue // the hydrant's result stands; nothing is charged
		}
		type carrier struct {
			link  int
			slope float64
		}
		var cs []carrier
		for j, p := range r.net.Pipes {
			if p.Pump != nil {
				continue // a pump (controls.go) is no main to charge
			}
			if math.Abs(float64(sol.Flow[j]-base.Flow[j])) >= chargeShare*float64(h.needed) {
				cs = append(cs, carrier{j, hydraulics.FrictionSlope(sol.Flow[j], p.Diameter, p.C)})
			}
		}
		slices.SortStableFunc(cs, func(a, b carrier) int { return cmp.Compare(b.slope, a.slope) })
		short := &scoring.FireFlowShortfall{Hydrant: h.ID, Available: h.res.Available, Needed: h.needed}
		for _, c := range cs[:min(chargeCount, len(cs))] {
			i := r.topo.Links[c.link].Pipe
			if r.fireCharge[i].Fraction() < short.Fraction() {
				r.fireCharge[i] = short
			}
		}
	}
}

// nfpaClass is the NFPA 291 hydrant class by rated flow at 20 psi: AA at
// 1,500 gpm and above, A 1,000–1,499, B 500–999, C below 500 (DOMAIN.md
// §4.3, §9 item 10).
func nfpaClass(q hydraulics.Flow) string {
	switch gpm := q.GPM(); {
	case gpm >= 1500:
		return "AA"
	case gpm >= 1000:
		return "A"
	case gpm >= 500:
		return "B"
	}
	return "C"
}

// hydrantOutput is the hydrants layer: one row per hydrant of the layer (or
// per junction), with its needed and available fire flow and class.
func (r *result) hydrantOutput() *gis.Layer {
	s := r.cfg.system()
	q, p := s.FlowSuffix(), s.PressureSuffix()
	l := &gis.Layer{Name: "hydrants", Columns: []gis.Column{
		{Name: "hydrant_id", Kind: gis.String},
		{Name: "feature", Kind: gis.Integer},
		{Name: "node_id", Kind: gis.String},
		{Name: "needed_fire_flow_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "available_fire_flow_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "fire_flow_deficit_" + q, Kind: gis.Real, Decimals: 1},
		{Name: "nfpa_class", Kind: gis.String},
		{Name: "limiting_node", Kind: gis.String},
		{Name: "residual_pressure_" + p, Kind: gis.Real, Decimals: 1},
		{Name: "max_day_pressure_" + p, Kind: gis.Real, Decimals: 1},
		{Name: "note", Kind: gis.String},
		{Name: "needed_basis", Kind: gis.String}, // last, so the columns before keep their order
	}}
	l.Columns = append(l.Columns, r.cureHydrantColumns()...) // available_after_gpm (upsize.go)
	for k, h := range r.hydrants {
		var feature, node, avail, deficit, class, limit, resid, static any
		if h.Index > 0 {
			feature = h.Index
		}
		if h.Node >= 0 {
			node = r.net.Nodes[h.Node].ID
			if hd := r.maxDay().Head[h.Node]; !math.IsNaN(float64(hd)) {
				static = s.Pressure(hydraulics.NodePressure(r.net.Nodes[h.Node], hd))
			}
		}
		note := h.note
		if res := h.res; res != nil {
			avail, class = s.Flow(res.Available), nfpaClass(res.Available)
			deficit = s.Flow(max(0, h.needed-res.Available))
			limit, resid = r.net.Nodes[res.Limiting].ID, s.Pressure(res.Residual)
			if res.AtCeiling {
				note = "at the search ceiling; more may be available"
			}
		}
		var g orb.Geometry
		if h.At != (orb.Point{}) {
			g = h.At
		}
		l.Rows = append(l.Rows, gis.Row{Geometry: g,
			Values: append([]any{h.ID, feature, node, s.Flow(h.needed), avail, deficit, class, limit, resid, static, note, h.basis}, r.cureHydrantValues(k)...)})
	}
	return l
}

// hydrantFile is the base name of the hydrant layer, for messages.
func (r *result) hydrantFile() string { return filepath.Base(r.cfg.Hydrants.Path) }

var _ = geojson.NewFeatureCollection
