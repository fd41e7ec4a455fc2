package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"

	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// runCommand is `headroom run [--config FILE] [--out DIR]`.
func runCommand(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(stderr)
	configPath := fs.String("config", "", "TOML config file (default: the built-in demo town)")
	outDir := fs.String("out", "headroom-out", "folder the results are written to")
	crsName := fs.String("crs", "", "coordinate system of layers that declare none and have no crs key, e.g. EPSG:2229")
	shareFolder := fs.Bool("allow-input-folder", false, "allow --out to be a folder that holds an input layer or the config")
	quiet := fs.Bool("quiet", false, "print no progress on stderr (errors and the summary still print)")
	if err := fs.Parse(args); err != nil {
		return usageError{err.Error()}
	}
	if fs.NArg() > 0 {
		return usageError{fmt.Sprintf("unexpected argument %q", fs.Arg(0))}
	}
	crs, err := flagCRS(*crsName)
	if err != nil {
		return err
	}
	in, err := openInputs(*configPath)
	if err != nil {
		return err
	}
	in.crs = crs
	in.progress = newProgress(stderr, *quiet)
	res, err := analyse(in)
	if err != nil {
		return err
	}
	written, err := writeOutputs(*outDir, res, writeOptions{allowInputFolder: *shareFolder})
	if err != nil {
		return err
	}
	return writeSummary(stdout, res, written)
}

// inputs are the config and the four layers, from files or from the
// built-in demo town (already decoded).
type inputs struct {
	cfg   *Config
	title string
	// collections, when not nil, replace reading the layer files; names
	// are the layer file names used in messages either way.
	pipes, sources, demands, elevations *geojson.FeatureCollection
	hydrants                            *geojson.FeatureCollection // optional
	breaks, facilities                  *geojson.FeatureCollection // optional (program.go)
	// crs is --crs: the coordinate system of a layer that declares none
	// and has no crs key of its own.
	crs *gis.CRS
	// progress reports the long stages on stderr; nil with --quiet.
	progress *progress
}

// flagCRS parses a --crs value; "" means none.
func flagCRS(name string) (*gis.CRS, error) {
	if name == "" {
		return nil, nil
	}
	crs, err := gis.ParseCRS(name)
	if err != nil {
		return nil, usageError{fmt.Sprintf("--crs %s: %v", name, err)}
	}
	return crs, nil
}

func openInputs(configPath string) (*inputs, error) {
	if configPath == "" {
		return builtInDemo()
	}
	cfg, err := loadConfig(configPath)
	if err != nil {
		return nil, err
	}
	return &inputs{cfg: cfg, title: cfg.file}, nil
}

// result is everything the writers and the summary need.
type result struct {
	cfg        *Config
	title      string
	pipes      []gis.Pipe
	sources    []gis.Point
	demands    []gis.Point
	areas      []gis.AreaDemand      // demand polygons, with demands.allocation = "areas" (then demands is nil)
	layerFlows []hydraulics.Flow     // per input pipe, its flow from the layer (solver.flows = "from_layer")
	flowCheck  *hydraulics.FlowCheck // the check on those flows; nil when the network was solved
	elevations []gis.Point
	// demandCount and elevationCount are the points read and usable; the
	// points themselves are let go once they are joined to the network.
	demandCount, elevationCount pointCount
	topo                        *gis.Topology
	supplies                    []gis.Supply
	net                         *hydraulics.Network
	parts                       [][]int // per input pipe, its links' indices in net.Pipes along it (t.Parts); nil if not in the network
	cFactor                     []float64
	cBasis                      []string
	inside                      []hydraulics.Length          // per input pipe: the inside diameter the hydraulics use (sizes.go)
	sizeClass                   []string                     // per input pipe: the size table it came from (sizes.go)
	age                         *ageResult                   // the aging models' C, source and calibration (aging.go)
	hydrants                    []fireHydrant                // the fire-flow sweep's hydrants and results
	hydrantLayer                bool                         // hydrants came from a layer (else every junction)
	fireCharge                  []*scoring.FireFlowShortfall // per input pipe: the shortfall it is charged with
	sol                         *hydraulics.Solution         // peak hour, the scenario the criteria read
	scenarios                   []scenario                   // average day, max day, peak hour
	checks                      []hydraulics.PipeCheck
	lowNodes                    []int  // junctions below the pressure criterion, ascending
	belowMin                    []bool // per node: in lowNodes
	scores                      []scoring.Result
	problems                    []gis.Problem
	limits                      hydraulics.Limits
	inputPaths                  []string // layer and config files read, never to be overwritten
	// pipeLayerCRS is the pipe layer's coordinate system, which the
	// GeoPackage and shapefile outputs keep.
	pipeLayerCRS *gis.CRS
	ctlPumps     []gis.PumpStation    // pumped sources (controls.go)
	ctlFire      *hydraulics.Solution // max day at the fire-flow grades, when they differ (controls.go)

	// the upsizing loop (upsize.go): its result, nil when off, and the
	// index into hydrants of each hydrant it checks
	cure        *hydraulics.UpsizeResult
	cureHydrant []int

	prog            *progResult     // the replacement program (program.go)
	breaksAhead     *ahead[joined]  // the break layer read and joined while the network is solved (progStartBreaks)
	facilitiesAhead *ahead[nearest] // the facility layer read, each main's nearest found, meanwhile (progStartFacilities)

	progress *progress // the stages on stderr; nil reports nothing
	in       *inputs   // what was read, for the manifest
}

// analyse runs the pipeline: read, build, allocate, age, solve, check, score.
func analyse(in *inputs) (*result, error) {
	cfg := in.cfg
	r := &result{cfg: cfg, title: in.title, limits: cfg.limits(), progress: in.progress, in: in}
	if in.pipes == nil {
		r.inputPaths = []string{cfg.path(cfg.Pipes.Path), cfg.path(cfg.Sources.Path),
			cfg.path(cfg.Demands.Path), cfg.path(cfg.Elevations.Path), filepath.Join(cfg.dir, cfg.file)}
		for _, optional := range []string{cfg.Hydrants.Path, cfg.Breaks.Path, cfg.Facilities.Path} {
			if optional != "" {
				r.inputPaths = append(r.inputPaths, cfg.path(optional))
			}
		}
	}
	reading := r.progress.begin("reading", "features", 0)
	if err := readLayers(in, r); err != nil {
		if errors.Is(err, gis.ErrNoUsable) {
			return nil, withProblems(err, r.problems, "")
		}
		return nil, err
	}
	reading.add(len(r.pipes) + len(r.sources) + len(r.demands) + len(r.areas) + len(r.elevations))
	reading.end(fmt.Sprintf("%d pipes", len(r.pipes)))
	snapping := r.progress.begin("snapping", "pipes", 0)
	topo, probs := gis.Snap(r.pipes, hydraulics.Length(cfg.si(cfg.snapTolerance())))
	r.topo = topo
	snapping.add(len(r.pipes))
	snapping.end(fmt.Sprintf("%d nodes", len(topo.Nodes)))
	r.problems = append(r.problems, probs...)
	r.breaksAhead = r.progStartBreaks(in) // Snap was the last to change the pipes
	r.facilitiesAhead = r.progStartFacilities(in)

	joining := r.progress.begin("joining", "", 0)
	supplies, probs := gis.AttachSources(topo, r.sources, hydraulics.Length(cfg.si(cfg.sourceSearch())))
	r.problems = append(r.problems, probs...)
	if len(supplies) == 0 {
		return nil, withProblems(fmt.Errorf("%s: no source lies within %s of a pipe end; check the source locations and network.source_search",
			cfg.Sources.Path, formatLength(cfg, cfg.si(cfg.sourceSearch()))), r.problems, filepath.Base(cfg.Sources.Path))
	}
	r.supplies = supplies
	fixed := make([]bool, len(topo.Nodes))
	for _, s := range supplies {
		fixed[s.Node] = true
	}
	r.noteDeadEnds(fixed)
	warn := hydraulics.Length(cfg.si(cfg.warnDistance()))
	allocate := gis.AllocateDemands
	if cfg.Demands.Allocation == allocateAlongPipe {
		allocate = func(t *gis.Topology, d []gis.Point, f []bool, w hydraulics.Length) ([]hydraulics.Flow, []gis.Problem) {
			return gis.AllocateDemandsToPipes(t, r.pipes, d, f, w)
		}
	}
	if cfg.Demands.Allocation == allocateAreas {
		allocate = r.areaAllocate
	}
	demand, probs := allocate(topo, r.demands, fixed, warn)
	r.problems = append(r.problems, probs...)
	elev, err := gis.InterpolateElevations(topo, r.elevations, cfg.Elevations.Neighbours, cfg.Elevations.Power)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", cfg.Elevations.Path, err)
	}

	r.demandCount, r.elevationCount = countPoints(r.demands), countPoints(r.elevations)
	r.demands, r.elevations = nil, nil // a million points are 140 MB the rest of the run need not hold
	r.ageDerate()
	r.net = gis.NewNetwork(r.pipes, topo, supplies, demand, elev, r.inside, r.cFactor)
	r.ctlPumps = gis.AddPumps(r.net, topo, r.sources, r.supplies)
	r.parts = topo.Parts
	joining.end("sources, demands, elevations and C-factors onto the network")

	if err := readHydrants(in, r); err != nil {
		return nil, err
	}
	solving := r.progress.begin("solving", "scenarios", 0)
	if err := r.scenariosOrLayerFlows(); err != nil {
		return nil, err
	}
	solving.add(len(r.scenarios))
	solving.end(fmt.Sprintf("%d nodes, %d pipes", len(r.net.Nodes), len(r.net.Pipes)))
	if err := r.fireFlow(); err != nil {
		return nil, err
	}
	sol := r.sol
	r.noteUnsupplied()
	r.checks = hydraulics.CheckPipes(r.net, sol, r.limits)
	r.lowNodes = hydraulics.LowPressure(r.net, sol, r.limits)
	r.belowMin = make([]bool, len(r.net.Nodes))
	for _, n := range r.lowNodes {
		r.belowMin[n] = true
	}
	r.noteFormulaRange()
	negative := r.noteNegativePressure()

	scores, err := scoring.Rank(r.scoringInput(), cfg.scoringConfig(), r.limits)
	if err != nil {
		return nil, err
	}
	r.scores = scores
	r.flagNegativePressure(negative)
	upsizing := r.progress.begin("upsizing", "", 0)
	if err := r.cureRun(); err != nil {
		return nil, err
	}
	if r.cure != nil {
		upsizing.end(fmt.Sprintf("%d trial networks", r.cure.Trials))
	}
	program := r.progress.begin("program", "", 0)
	if err := r.progRun(in); err != nil {
		return nil, err
	}
	program.end("risk, projects, costs and the plan")
	return r, nil
}

// readLayers reads the four layers, from files (GeoJSON, shapefile or
// GeoPackage, in any supported coordinate system) or, for the built-in
// demo, from the collections already in memory; either way the same code
// maps their fields. Point layers are joined in lon/lat; pipe lengths come
// from the pipe layer's own coordinates. Each layer is let go once it is
// mapped, and at most two are held at a time: the pipe layer, and the point
// layer being read beside it.
func readLayers(in *inputs, r *result) error {
	cfg := in.cfg
	mem := []*geojson.FeatureCollection{in.pipes, in.sources, in.demands, in.elevations}
	read := []func(*gis.Collection) ([]gis.Problem, error){1: r.readSources, 2: r.readDemands, 3: r.readElevations} // 0, the pipes: readPipeLayer
	layers := cfg.layers()
	// The point layers are read on another goroutine while the pipes are
	// (their readers touch only their own fields of r, and not r.problems,
	// which the pipe reader adds to); their problems go into problems.csv
	// after the pipes', in layer order, as when the layers were read one
	// after the other, and a failed layer stops the ones after it.
	points := make([]layerRead, len(layers))
	pointsDone := make(chan struct{})
	go func() {
		defer close(pointsDone)
		for k := 1; k < len(layers); k++ {
			if points[k] = readLayer(in, layers[k], mem[k], read[k]); points[k].err != nil {
				return
			}
		}
	}()
	err := r.readPipeLayer(in, layers[0], mem[0])
	<-pointsDone
	if err != nil {
		return err
	}
	for _, l := range points[1:] {
		r.problems = append(r.problems, l.probs...)
		if l.err != nil {
			return l.err
		}
	}
	return nil
}

// readPipeLayer opens and maps the pipe layer, adding its problems to
// r.problems as it goes: the note on its coordinate system, then those of
// the sizes (sizeRead adds them itself), then the rest.
func (r *result) readPipeLayer(in *inputs, l layerConfig, mem *geojson.FeatureCollection) error {
	c, err := openLayer(in, l, mem)
	if err != nil {
		return err
	}
	r.problems = append(r.problems, crsNote(c, l.key)...)
	probs, err := r.readPipes(c)
	r.problems = append(r.problems, probs...)
	return err
}

// layerRead is what reading one layer gave: its problems (the note on its
// coordinate system first) and the error that stopped it.
type layerRead struct {
	probs []gis.Problem
	err   error
}

// readLayer opens layer l and maps it with read.
func readLayer(in *inputs, l layerConfig, mem *geojson.FeatureCollection, read func(*gis.Collection) ([]gis.Problem, error)) layerRead {
	c, err := openLayer(in, l, mem)
	if err != nil {
		return layerRead{err: err}
	}
	probs := crsNote(c, l.key)
	more, err := read(c)
	return layerRead{probs: append(probs, more...), err: err}
}

// crsNote is the problem that says layer key (opened as c) declares no
// coordinate system and which one was assumed; none when it declares one.
func crsNote(c *gis.Collection, key string) []gis.Problem {
	if c.Note == "" {
		return nil
	}
	return []gis.Problem{{File: c.File, Field: "crs", What: c.Note,
		Action: fmt.Sprintf("set %s.crs to say which coordinate system the layer is in", key)}}
}

// readPipes maps the pipe layer: the pipes, their sizes, lining years and,
// with solver.flows = "from_layer", their flows.
func (r *result) readPipes(c *gis.Collection) ([]gis.Problem, error) {
	cfg := r.cfg
	r.pipeLayerCRS = c.CRS
	var probs []gis.Problem
	var err error
	r.pipes, probs, err = gis.PipesFromLayer(c, cfg.pipeSchema(), cfg.AnalysisYear)
	if err != nil {
		return probs, err
	}
	r.sizeRead(c)
	probs = append(probs, r.ageReadLined(c)...)
	if cfg.layerFlowsOn() {
		if r.layerFlows, err = r.layerFlowRead(c); err != nil {
			return probs, err
		}
	}
	return probs, nil
}

func (r *result) readSources(c *gis.Collection) (probs []gis.Problem, err error) {
	r.sources, probs, err = gis.SourcesFromLayer(c, r.cfg.sourceSchema())
	return probs, err
}

func (r *result) readDemands(c *gis.Collection) (probs []gis.Problem, err error) {
	if r.cfg.Demands.Allocation == allocateAreas {
		r.areas, probs, err = gis.AreaDemandsFromLayer(c, areaLonLat(c), r.cfg.demandSchema())
	} else {
		r.demands, probs, err = gis.DemandsFromLayer(c, r.cfg.demandSchema())
	}
	return probs, err
}

func (r *result) readElevations(c *gis.Collection) (probs []gis.Problem, err error) {
	r.elevations, probs, err = gis.ElevationsFromLayer(c, r.cfg.elevationSchema())
	return probs, err
}

// openLayer opens one configured layer, or wraps the built-in collection.
func openLayer(in *inputs, l layerConfig, mem *geojson.FeatureCollection) (*gis.Collection, error) {
	if mem != nil {
		return gis.FromGeoJSON(filepath.Base(l.Path), mem), nil
	}
	opt := gis.OpenOptions{Key: l.key, Table: l.Table, Fallback: in.crs}
	if l.CRS != "" {
		c, err := gis.ParseCRS(l.CRS) // validated with the config
		if err != nil {
			return nil, fmt.Errorf("%s.crs: %w", l.key, err)
		}
		opt.CRS = c
	}
	return gis.OpenLayer(in.cfg.path(l.Path), opt)
}

// scenario is one steady state the run solves. Peak hour is the one the
// pipe criteria and the scores read; average day and max day are reported
// beside it (DOMAIN.md §3.5: peak hour for head loss and pressure, max day
// as the background of fire flow, average day for high static pressure).
type scenario struct {
	name   string  // "average day", "max day", "peak hour"
	prefix string  // output column prefix; "" for peak hour, whose columns keep the plain names
	factor float64 // demand ÷ average-day demand
	sol    *hydraulics.Solution
}

// solveScenarios solves the scenarios of solver.scenarios (average day, max
// day and peak hour unless it leaves some out), each from its peaking
// factor, and keeps peak hour, always the last, as r.sol. They share one
// hydraulics.Solver, so the ordering and symbolic factorisation of the head
// matrix are done once: each scenario sets its source grades (ctlGrades)
// and solves with its factored demands, starting from the scenarios before
// it (warmStart; the first from a cold start), to the same solution as a
// Solve of the scenario's own network with its DemandFactor.
func (r *result) solveScenarios() error {
	cfg := r.cfg
	r.scenarios = cfg.chosenScenarios()
	solver, err := hydraulics.NewSolver(r.net, &hydraulics.Options{
		Tolerance:     cfg.Solver.Tolerance,
		MaxIterations: cfg.Solver.MaxIterations,
	})
	if err != nil {
		return r.scenarioError(r.scenarios[0].name, err)
	}
	own := make([]hydraulics.Head, len(r.net.Nodes))
	for i, n := range r.net.Nodes {
		own[i] = n.Grade
	}
	demand := make([]hydraulics.Flow, len(r.net.Nodes))
	for i := range r.scenarios {
		sc := &r.scenarios[i]
		grades := r.ctlGrades(sc.name)
		if grades == nil {
			grades = own
		}
		if err := solver.SetGrades(grades); err != nil {
			return r.scenarioError(sc.name, err)
		}
		for k, n := range r.net.Nodes {
			demand[k] = hydraulics.Flow(float64(n.Demand) * sc.factor)
		}
		sol, err := solver.Solve(demand, warmStart(r.scenarios[:i], sc.factor))
		if err != nil {
			return r.scenarioError(sc.name, err)
		}
		sc.sol = sol
	}
	r.sol = r.scenarios[len(r.scenarios)-1].sol
	return nil
}

// warmStart is the starting flows of a scenario of demand factor f after
// the scenarios done; nil (a cold start) for the first.
//
//   - After one scenario, its flows as they are: the first Newton step from
//     them is the tangent to the solution as demand changes.
//   - After two or more, the line through the last two scenarios' flows,
//     taken to f: Q = Q₂ + (f − f₂)/(f₂ − f₁)·(Q₂ − Q₁). Flows are not
//     proportional to demand where several sources at fixed grades feed the
//     network (the flows between them do not grow with demand), but they
//     are close to linear in it over the range of the peaking factors.
//
// On the demo town these took 24, 25 and 25 iterations for the three
// scenarios at 10k, 100k and 1M pipes, against 24, 26 and 27 when each
// scenario started from the last one's flows scaled by the ratio of the
// factors (at a million pipes an iteration costs about 0.2 s). The
// solution is the same to the solver's tolerance whatever the start.
func warmStart(done []scenario, f float64) *hydraulics.Solution {
	if len(done) == 0 {
		return nil
	}
	last := done[len(done)-1]
	if last.sol == nil {
		return nil
	}
	flow := slices.Clone(last.sol.Flow)
	if len(done) == 1 {
		return &hydraulics.Solution{Flow: flow}
	}
	prev := done[len(done)-2]
	if prev.sol == nil || prev.factor == last.factor || len(prev.sol.Flow) != len(flow) {
		return &hydraulics.Solution{Flow: flow}
	}
	t := (f - last.factor) / (last.factor - prev.factor)
	for j, q := range prev.sol.Flow {
		flow[j] += hydraulics.Flow(t * float64(flow[j]-q))
	}
	return &hydraulics.Solution{Flow: flow}
}

// scenarioError explains a failed scenario solve.
func (r *result) scenarioError(name string, err error) error {
	var nc *hydraulics.NotConvergedError
	if errors.As(err, &nc) {
		return solverError{r.notConverged(name, nc)}
	}
	if errors.Is(err, hydraulics.ErrNoSupply) {
		return solverError{r.noSupply()}
	}
	return solverError{fmt.Errorf("%s solve: %w", name, err)}
}

// notConverged explains a failed solve in the run's units, naming the pipe
// with the largest head-balance residual by its id and feature.
func (r *result) notConverged(name string, nc *hydraulics.NotConvergedError) error {
	s := r.cfg.system()
	where := ""
	if nc.Pipe >= 0 && nc.Pipe < len(r.net.Pipes) {
		where = " at pipe " + r.net.Pipes[nc.Pipe].ID
		// links past the topology's are pumps (controls.go), not input pipes
		if i := ctlInputPipe(r.topo, nc.Pipe); i >= 0 && i < len(r.pipes) {
			where += fmt.Sprintf(" (%s feature %d)", filepath.Base(r.cfg.Pipes.Path), r.pipes[i].Index)
		}
	}
	return fmt.Errorf("the %s solve did not converge in %d Newton iteration%s (relative flow change %.2g, largest head-balance residual %.3g %s%s); no results were written. "+
		"Raise solver.max_iterations, or check that pipe's diameter, length and C, closed pipes that split the network, and the source grades",
		name, nc.Iterations, plural(nc.Iterations), nc.RelativeFlowChange, s.Head(nc.MaxHeadResidual), s.LengthLabel(), where)
}

// plural returns "s" unless n is 1.
func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// noteDeadEnds lists every dangling pipe end other than a source's node.
// Most are real dead ends; the list lets an engineer find the few that are
// drawing errors (near-misses are also reported on their own).
func (r *result) noteDeadEnds(fixed []bool) {
	file := filepath.Base(r.cfg.Pipes.Path)
	for _, d := range r.topo.DanglingEnds() {
		if fixed[d[0]] {
			continue
		}
		p := r.pipes[d[1]]
		r.problems = append(r.problems, gis.Problem{
			File: file, Feature: p.Index, ID: p.ID, Field: "geometry",
			What:   fmt.Sprintf("dead end: node %s, an end of this pipe, joins no other pipe", r.topo.Nodes[d[0]].ID),
			Action: "none if the main ends here; otherwise join it to the main it meets",
		})
	}
}

// noteUnsupplied lists, per pipe, the pipes in parts of the network that no
// source reaches through open pipes.
func (r *result) noteUnsupplied() {
	if len(r.sol.Unsupplied) == 0 {
		return
	}
	file := filepath.Base(r.cfg.Pipes.Path)
	for i, p := range r.pipes {
		if r.pipeUnsupplied(i) {
			r.problems = append(r.problems, gis.Problem{
				File: file, Feature: p.Index, ID: p.ID, Field: "geometry",
				What:   "no source reaches this pipe through open pipes",
				Action: "pipe not scored; check for unsnapped ends, closed valves, or a missing source in this part of the network",
			})
		}
	}
}

// noteFormulaRange lists the solved pipes outside the range Hazen-Williams
// is usually trusted in (about 2–90 in and up to 10 ft/s; DOMAIN.md §1.4).
func (r *result) noteFormulaRange() {
	file := filepath.Base(r.cfg.Pipes.Path)
	for i, p := range r.pipes {
		if len(r.parts[i]) == 0 || p.Closed || r.pipeUnsupplied(i) {
			continue
		}
		if ok, why := hydraulics.HWValid(p.Diameter, r.checks[r.governing(i)].Velocity); !ok {
			r.problems = append(r.problems, gis.Problem{
				File: file, Feature: p.Index, ID: p.ID, Field: r.cfg.Pipes.Fields.Diameter,
				What:   why,
				Action: "pipe scored, but its head loss is less certain outside the Hazen-Williams range; check the diameter",
			})
		}
	}
}

// noteNegativePressure lists each junction whose peak-hour pressure is below
// zero, p = ρg·(H − z) < 0: the hydraulic grade lies under the ground, which
// a steady model can compute but a real main cannot hold (it would draw air
// or run empty). It returns those junctions, ascending.
func (r *result) noteNegativePressure() []int {
	s := r.cfg.system()
	file := filepath.Base(r.cfg.Pipes.Path)
	var nodes []int
	for i, n := range r.net.Nodes {
		h := r.sol.Head[i]
		if n.Fixed || math.IsNaN(float64(h)) {
			continue
		}
		if p := hydraulics.NodePressure(n, h); p < 0 {
			nodes = append(nodes, i)
			r.problems = append(r.problems, gis.Problem{
				File: file, ID: n.ID, Field: "pressure_" + s.PressureSuffix(),
				What: fmt.Sprintf("junction %s has a peak-hour pressure of %.1f %s (hydraulic grade %.1f %s, ground %.1f %s)",
					n.ID, s.Pressure(p), s.PressureLabel(), s.Head(h), s.LengthLabel(), s.Length(n.Elevation), s.LengthLabel()),
				Action: "the source grade is below the ground here; check the source's grade and the elevations (its pipes are scored, and their reasons say so)",
			})
		}
	}
	return nodes
}

// unsupplied reports whether net pipe j touches a node no source reaches.
func (r *result) unsupplied(j int) bool {
	p := r.net.Pipes[j]
	return math.IsNaN(float64(r.sol.Head[p.From])) || math.IsNaN(float64(r.sol.Head[p.To]))
}

// pipeUnsupplied reports whether any part of input pipe i is unsupplied;
// false for a pipe not in the network.
func (r *result) pipeUnsupplied(i int) bool {
	for _, j := range r.parts[i] {
		if r.unsupplied(j) {
			return true
		}
	}
	return false
}

// governing returns the net pipe whose check stands for input pipe i: of
// its parts (a pipe split where tees join it), the one with the largest
// friction slope, the first of equals; -1 for a pipe not in the network.
// The parts share diameter and C, so it is also the part with the largest
// flow and velocity.
func (r *result) governing(i int) int {
	best := -1
	for _, j := range r.parts[i] {
		if best < 0 || math.Abs(r.checks[j].Slope) > math.Abs(r.checks[best].Slope) {
			best = j
		}
	}
	return best
}

// pipeLowPressure reports whether any node of any part of input pipe i is
// below the pressure criterion.
func (r *result) pipeLowPressure(i int) bool {
	for _, j := range r.parts[i] {
		if np := r.net.Pipes[j]; r.belowMin[np.From] || r.belowMin[np.To] {
			return true
		}
	}
	return false
}

// scoringInput describes each input pipe to the scorer.
func (r *result) scoringInput() []scoring.Pipe {
	in := make([]scoring.Pipe, len(r.pipes))
	for i, p := range r.pipes {
		sp := scoring.Pipe{Index: i, ID: p.ID, C: r.cFactor[i], Diameter: p.Diameter}
		switch {
		case !p.Usable:
			sp.Reason = "not in the network: " + p.Reason
		case len(r.parts[i]) == 0:
			sp.Reason = "not in the network"
		case p.Closed:
			sp.Reason = "closed: carries no flow"
		case r.pipeUnsupplied(i):
			sp.Reason = "no source reaches this pipe"
		default:
			sp.Scorable = true
			if r.fireCharge != nil {
				sp.FireFlow = r.fireCharge[i]
			}
			sp.Check = r.checks[r.governing(i)] // a split pipe is judged by its worst part
			sp.LowPressure = r.pipeLowPressure(i)
		}
		in[i] = sp
	}
	return in
}

// formatLength shows an SI length in the run's units.
func formatLength(cfg *Config, metres float64) string {
	s := cfg.system()
	return fmt.Sprintf("%.1f %s", s.Length(hydraulics.Length(metres)), s.LengthLabel())
}

// check that the output folder is not a file before any work is lost.
func prepareOutDir(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating output folder: %w (choose another --out)", err)
	}
	return nil
}
