package main

import (
	"cmp"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"
	"text/tabwriter"

	"headroom/hydraulics"
	"headroom/scoring"
)

// cautions are printed after every run and repeated in the README.
var cautions = []string{
	"Planning-level screening, not a calibrated hydraulic model: results rest on assumed C-factors, demand allocation, the peaking factor, source grades and elevations, none checked against field tests unless you supplied measured C values.",
	"Aged C-factors are estimates (the Sharp & Walski fit has a 95 % band of about ±15 in C); treat deficits near a criterion as possible, not certain.",
	"Steady state only: no pumps or controls over time, no tank drain-down, no transients.",
	"Costs are order-of-magnitude unit prices (the built-in ones are invented demonstration figures): replace them with local bid tabulations; risk scores and economic replacement years follow from the configured factors, weights and break records and support, not replace, the planner's judgement.",
	"Fire-flow figures are model estimates, not hydrant flow tests; pressure and fire-flow decisions follow the locally adopted codes and the fire authority having jurisdiction; designs and submittals need the review and seal of a licensed professional engineer.",
}

// writeSummary prints the run summary: counts, the scenario's statistics,
// the top ten, the criteria used and the cautions.
func writeSummary(w io.Writer, r *result, written []string) error {
	var b strings.Builder
	s := r.cfg.system()
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }

	p("headroom: %s, analysis year %d, units %s\n\n", r.title, r.cfg.AnalysisYear, s)
	r.summariseInputs(p)
	r.summariseSolve(p)
	r.ctlSummarisePumps(p)
	r.summariseFireFlow(p)
	r.cureSummarise(p)
	r.progSummarise(p)
	r.ageSummarise(p)
	r.summariseTop(&b)
	p("\nCriteria (peak hour): unit head loss %.1f %s, velocity %.1f %s, pressure %.1f %s; design C %.0f for sizing\n",
		s.UnitHeadLoss(r.limits.MaxSlope), s.UnitHeadLossLabel(), s.Velocity(r.limits.MaxVelocity), s.VelocityLabel(),
		s.Pressure(r.limits.MinPressure), s.PressureLabel(), r.limits.DesignC)
	p("Problems found in the input: %d (see problems.csv)\n", len(r.problems))
	p("\nWrote\n%s", writtenTable(written))
	p("\nCautions\n")
	for _, c := range cautions {
		p("  - %s\n", c)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// summariseInputs prints each layer's features in and out (see accounts)
// and the network built from the pipes.
func (r *result) summariseInputs(p func(string, ...any)) {
	p("Inputs\n")
	var t strings.Builder
	tw := tabwriter.NewWriter(&t, 0, 0, 2, ' ', 0)
	for _, a := range r.accounts() {
		fmt.Fprintf(tw, "  %s\n", a)
	}
	inNet := 0
	for _, parts := range r.parts {
		if len(parts) > 0 {
			inNet++
		}
	}
	links := ""
	if r.topo.Splits > 0 {
		links = fmt.Sprintf(" as %d links (%d tees split a pipe)", len(r.net.Pipes), r.topo.Splits)
	}
	fmt.Fprintf(tw, "  %s\t%d nodes, %d pipes%s, %d dangling ends\n", "network", len(r.net.Nodes), inNet, links, r.topo.Dangles)
	tw.Flush()
	p("%s\n", t.String())
}

// pressureRange returns the lowest and highest junction pressure of a
// solution, in the run's units.
func (r *result) pressureRange(sol *hydraulics.Solution) (lo, hi float64) {
	s := r.cfg.system()
	lo, hi = math.Inf(1), math.Inf(-1)
	for i, n := range r.net.Nodes {
		if n.Fixed || math.IsNaN(float64(sol.Head[i])) {
			continue
		}
		v := s.Pressure(hydraulics.NodePressure(n, sol.Head[i]))
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return lo, hi
}

func (r *result) summariseSolve(p func(string, ...any)) {
	s := r.cfg.system()
	sol := r.sol
	scenarios := r.scenarios
	if r.flowCheck != nil {
		r.layerFlowSummarise(p)
		scenarios = nil // not solved
	} else {
		p("Scenarios (Global Gradient Algorithm; the criteria and scores read peak hour)\n")
	}
	if len(scenarios) > 0 {
		var t strings.Builder
		tw := tabwriter.NewWriter(&t, 0, 0, 2, ' ', 0)
		q, h := s.FlowLabel(), s.LengthLabel()
		fmt.Fprintf(tw, "  scenario\t× average day\titerations\trelative flow change\thead residual %s\tsupply %s\t= demand %s\tnode imbalance %s\tpressure %s\n",
			h, q, q, q, s.PressureLabel())
		for _, sc := range scenarios {
			o := sc.sol
			lo, hi := r.pressureRange(o)
			fmt.Fprintf(tw, "  %s\t%.2f\t%d\t%.1e\t%.1e\t%.2f\t%.2f\t%.1e\t%.1f to %.1f\n", sc.name, sc.factor, o.Iterations,
				o.RelativeFlowChange, s.Head(o.MaxHeadResidual), s.Flow(o.Supply), s.Flow(o.Demand), s.Flow(o.MaxContinuityResidual), lo, hi)
		}
		tw.Flush()
		p("%s", t.String())
		if left := r.cfg.scenariosLeftOut(); len(left) > 0 {
			p("  not solved (solver.scenarios): %s; their columns are left out of the outputs\n", strings.Join(left, ", "))
		}
	}
	if len(sol.Unsupplied) > 0 {
		p("  %d nodes are in parts of the network no source reaches (see problems.csv)\n", len(sol.Unsupplied))
	}
	p("  peak hour: %d junctions below %.1f %s\n", len(r.lowNodes), s.Pressure(r.limits.MinPressure), s.PressureLabel())
	var slope, vel, def int
	var deficit hydraulics.Flow
	for i, sc := range r.scores {
		if !sc.Scored {
			continue
		}
		c := r.checks[r.governing(i)]
		if c.OverSlope {
			slope++
		}
		if c.OverVelocity {
			vel++
		}
		if c.Deficit > 0 {
			def++
			deficit += c.Deficit
		}
	}
	p("  %d pipes exceed %.1f %s, %d exceed %.1f %s; %d carry more than their capacity (deficits total %.0f %s)\n\n",
		slope, s.UnitHeadLoss(r.limits.MaxSlope), s.UnitHeadLossLabel(), vel, s.Velocity(r.limits.MaxVelocity), s.VelocityLabel(),
		def, s.Flow(deficit), s.FlowLabel())
}

// summariseTop prints the ten highest-ranked pipes.
func (r *result) summariseTop(b *strings.Builder) {
	s := r.cfg.system()
	var top []scoring.Result
	for _, sc := range r.scores {
		if sc.Scored && sc.Rank <= 10 {
			top = append(top, sc)
		}
	}
	slices.SortFunc(top, func(a, b scoring.Result) int { return a.Rank - b.Rank })
	fmt.Fprintf(b, "Top ten\n")
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "  rank\tpipe\tdiameter %s\tC\thead loss %s\tdeficit %s\tscore\treasons\n",
		s.DiameterLabel(), s.UnitHeadLossLabel(), s.FlowLabel())
	flowDigits := 0 // whole gpm; L/s to one decimal
	if s == hydraulics.SI {
		flowDigits = 1
	}
	for _, sc := range top {
		p := r.pipes[sc.Index]
		c := r.checks[r.governing(sc.Index)]
		fmt.Fprintf(tw, "  %d\t%s\t%.0f\t%.0f\t%.1f\t%.*f\t%.1f\t%s\n", sc.Rank, p.ID, s.Diameter(p.Diameter),
			r.cFactor[sc.Index], s.UnitHeadLoss(c.Slope), flowDigits, s.Flow(c.Deficit), sc.Score, sc.Reasons)
	}
	tw.Flush()
}

// summariseFireFlow prints the fire-flow sweep: classes, shortfalls and the
// worst hydrants.
func (r *result) summariseFireFlow(p func(string, ...any)) {
	if !r.cfg.fireFlowOn() {
		return
	}
	s := r.cfg.system()
	classes := map[string]int{}
	var short []fireHydrant
	var solved int
	for _, h := range r.hydrants {
		if h.res == nil {
			continue
		}
		solved++
		classes[nfpaClass(h.res.Available)]++
		if h.res.Available < h.needed {
			short = append(short, h)
		}
	}
	what := "hydrants"
	if !r.hydrantLayer {
		what = "junctions (no hydrant layer: every junction is a hydrant)"
	}
	p("Fire flow (max day + fire at one hydrant at a time, %.0f %s residual at the hydrant and in its zone)\n",
		s.Pressure(hydraulics.Pressure(r.cfg.si(r.cfg.fireResidual()))), s.PressureLabel())
	p("  %d %s, %d solved; NFPA 291 classes: AA %d, A %d, B %d, C %d\n", len(r.hydrants), what, solved,
		classes["AA"], classes["A"], classes["B"], classes["C"])
	p("%s", r.needSummary())
	p("  %d short of their needed fire flow", len(short))
	slices.SortStableFunc(short, func(a, b fireHydrant) int {
		return cmp.Compare(float64(a.res.Available-a.needed), float64(b.res.Available-b.needed))
	})
	for k, h := range short {
		if k == 3 {
			break
		}
		sep := "; worst: "
		if k > 0 {
			sep = ", "
		}
		p("%s%s %.0f of %.0f %s", sep, h.ID, s.Flow(h.res.Available), s.Flow(h.needed), s.FlowLabel())
	}
	p("\n\n")
}

// writtenTable lists the files written with their sizes, one per line.
func writtenTable(written []string) string {
	var b strings.Builder
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	for _, path := range written {
		size := "—"
		if st, err := os.Stat(path); err == nil {
			size = thousands(float64(st.Size()), 0) + " B"
			if st.Size() >= 1024 {
				size = thousands(float64(st.Size())/1024, 0) + " KiB"
			}
		}
		fmt.Fprintf(tw, "  %s\t%10s\n", path, size)
	}
	tw.Flush()
	return b.String()
}
