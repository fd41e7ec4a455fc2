package main

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// progRun builds the replacement program after scoring and the upsizing
// loop: break rates and cohorts, facilities near each main, risk and
// priority, each main's economic replacement year, the projects and the
// budget plan.
func (r *result) progRun(in *inputs) error {
	cfg := r.cfg
	p := &progResult{}
	r.prog = p
	var err error
	if p.riskCfg, err = cfg.progRisk(); err != nil {
		return err
	}
	if p.costs, err = cfg.progCosts(); err != nil {
		return err
	}
	if err := r.progReadBreaks(in); err != nil {
		return err
	}
	if err := r.progReadFacilities(in); err != nil {
		return err
	}
	r.progAssess()
	r.progEconomics()
	if err := r.progGroup(); err != nil {
		return err
	}
	return r.progPlan()
}

// joined is the break layer read and joined to the mains: the breaks,
// each one's main, the problems found on the way, in the order the reading
// and the join found them, and the error that stopped them.
type joined struct {
	breaks []gis.Break
	match  []gis.BreakMatch
	probs  []gis.Problem
	err    error
}

// ahead is work started on another goroutine while the network is joined
// and solved (the break and facility layers); wait gives its result, as
// often as asked (a copy of a result may run the program again).
type ahead[T any] struct {
	done chan struct{} // closed once v is set
	v    T
}

// startAhead runs work on another goroutine.
func startAhead[T any](work func() T) *ahead[T] {
	a := &ahead[T]{done: make(chan struct{})}
	go func() {
		defer close(a.done)
		a.v = work()
	}()
	return a
}

func (a *ahead[T]) wait() T {
	<-a.done
	return a.v
}

// progStartBreaks reads the break layer and joins it to the mains on
// another goroutine, so that the work overlaps the joining and the solving
// (1M demo town: 1.4 s of CPU, most of it the index of a million mains'
// lines). It must start after gis.Snap, which marks zero-length and looped
// pipes unusable: from there on the pipes are only read. It returns nil
// when there is no break layer. progReadBreaks takes the result, so
// problems and errors come in the order they did when it read the layer
// itself.
func (r *result) progStartBreaks(in *inputs) *ahead[joined] {
	cfg := r.cfg
	if cfg.Breaks.Path == "" && in.breaks == nil {
		return nil
	}
	return startAhead(func() joined { return r.progJoinBreaks(in) })
}

// progJoinBreaks reads the break layer and joins each break to a main.
func (r *result) progJoinBreaks(in *inputs) joined {
	cfg := r.cfg
	c, err := openLayer(in, layerConfig{"breaks", cfg.Breaks.LayerFile}, in.breaks)
	if err != nil {
		return joined{err: err}
	}
	f := cfg.Breaks.Fields
	bs, probs, err := gis.BreaksFromLayer(c, gis.BreakSchema{ID: f.ID, Date: f.Date, PipeID: f.PipeID, AnalysisYear: cfg.AnalysisYear})
	if err != nil {
		return joined{probs: probs, err: err}
	}
	match, more := gis.JoinBreaks(r.pipes, bs, hydraulics.Length(cfg.si(cfg.progBreakDistance())))
	return joined{breaks: bs, match: match, probs: append(probs, more...)}
}

// progReadBreaks takes the break layer read and joined (progStartBreaks,
// or here when nothing started it) and counts the rates per main and per
// cohort.
func (r *result) progReadBreaks(in *inputs) error {
	cfg, p := r.cfg, r.prog
	pending := r.breaksAhead
	if pending == nil {
		pending = r.progStartBreaks(in)
	}
	if pending == nil {
		return nil
	}
	j := pending.wait()
	r.problems = append(r.problems, j.probs...)
	if j.err != nil {
		return j.err
	}
	bs, match := j.breaks, j.match
	p.breaks, p.breakMatch = bs, match
	var records []scoring.BreakRecord
	lo, hi := math.Inf(1), math.Inf(-1)
	for k, b := range bs {
		if b.Usable {
			records = append(records, scoring.BreakRecord{Pipe: match[k].Pipe, Year: b.Year})
			lo, hi = min(lo, b.Year), max(hi, b.Year)
		}
	}
	p.window = scoring.BreakWindow{From: cfg.Breaks.FirstYear, To: cfg.Breaks.LastYear}
	if p.window.From == 0 && len(records) > 0 {
		p.window.From = int(math.Floor(lo))
	}
	if p.window.To == 0 && len(records) > 0 {
		p.window.To = int(math.Floor(hi))
	}
	if len(records) == 0 {
		p.window = scoring.BreakWindow{From: cfg.AnalysisYear - 1, To: cfg.AnalysisYear - 1}
	}
	if err := p.window.Validate(); err != nil {
		return fmt.Errorf("breaks: %w; check breaks.first_year and breaks.last_year", err)
	}
	p.tally = scoring.TallyBreaks(records, p.window)
	pipes := r.progBreakPipes()
	p.pipeBreaks = scoring.PipeBreakRates(pipes, records, p.window)
	minBreaks := orDefaultInt(cfg.Economics.MinCohortBreaks, progDefaultCohortBreaks)
	p.cohorts = scoring.BreakCohorts(pipes, records, p.window, scoring.CohortOptions{
		MinBreaks: minBreaks, DefaultGrowth: orDefaultPtr(cfg.Economics.DefaultGrowth, progDefaultGrowth)})
	return nil
}

// progBreakPipes are the input pipes as the break statistics see them.
func (r *result) progBreakPipes() []scoring.BreakPipe {
	out := make([]scoring.BreakPipe, len(r.pipes))
	for i, p := range r.pipes {
		out[i] = scoring.BreakPipe{Length: p.Length, Material: p.Material, InstallYear: p.InstallYear}
	}
	return out
}

// nearest is the critical-facility layer read and each main's nearest
// facility: the facilities, one entry per input pipe, the problems found
// reading the layer and the error that stopped it.
type nearest struct {
	fs    []gis.Facility
	near  []gis.FacilityNear
	probs []gis.Problem
	err   error
}

// progStartFacilities reads the facility layer and finds each main's
// nearest facility on another goroutine, as progStartBreaks does the
// breaks (1M demo town: 0.24 s that the program stage waited for); nil
// when there is no facility layer. It must start after gis.Snap, as
// progStartBreaks must.
func (r *result) progStartFacilities(in *inputs) *ahead[nearest] {
	cfg := r.cfg
	if cfg.Facilities.Path == "" && in.facilities == nil {
		return nil
	}
	return startAhead(func() nearest { return r.progNearFacilities(in) })
}

// progNearFacilities reads the critical-facility layer and finds the
// nearest facility to each main, out to the farthest edge of the
// facility factor (beyond it every main scores 1).
func (r *result) progNearFacilities(in *inputs) nearest {
	cfg := r.cfg
	c, err := openLayer(in, layerConfig{"facilities", cfg.Facilities.LayerFile}, in.facilities)
	if err != nil {
		return nearest{err: err}
	}
	fs, probs, err := gis.FacilitiesFromLayer(c, gis.FacilitySchema{ID: cfg.Facilities.Fields.ID, Kind: cfg.Facilities.Fields.Kind})
	if err != nil {
		return nearest{probs: probs, err: err}
	}
	riskCfg, err := cfg.progRisk() // validated with the config; progRun reports its error first
	if err != nil {
		return nearest{probs: probs, err: err}
	}
	within := slices.Max(riskCfg.Facility.Scale.Edges[:])
	return nearest{fs: fs, near: gis.NearestFacilities(r.pipes, fs, hydraulics.Length(within)), probs: probs}
}

// progReadFacilities takes the facilities read and each main's nearest
// (progStartFacilities, or here when nothing started it).
func (r *result) progReadFacilities(in *inputs) error {
	pending := r.facilitiesAhead
	if pending == nil {
		pending = r.progStartFacilities(in)
	}
	if pending == nil {
		return nil
	}
	pf := pending.wait()
	r.problems = append(r.problems, pf.probs...)
	if pf.err != nil {
		return pf.err
	}
	r.prog.facilities, r.prog.facilityNear = pf.fs, pf.near
	return nil
}

// progAssess scores the risk and the priority of every scored main.
func (r *result) progAssess() {
	p := r.prog
	n := len(r.pipes)
	p.risk, p.priority = make([]scoring.Risk, n), make([]float64, n)
	use, perf, ids := make([]bool, n), make([]float64, n), make([]string, n)
	hydraulics.ForPipeRanges(n, func(lo, hi int) { // each main on its own: on every core
		for i := lo; i < hi; i++ {
			ids[i] = r.pipes[i].ID
			if sc := r.scores[i]; sc.Scored {
				p.risk[i] = scoring.AssessRisk(r.progRiskPipe(i), p.riskCfg)
				p.priority[i] = scoring.Priority(p.risk[i].Value, sc.Score, p.riskCfg)
				use[i], perf[i] = true, sc.Score
			}
		}
	})
	p.priorityRank = scoring.PriorityRanks(p.priority, perf, ids, use)
}

// progRiskPipe is what the risk of input pipe i is assessed from.
func (r *result) progRiskPipe(i int) scoring.RiskPipe {
	cfg, p, pipe := r.cfg, r.prog, &r.pipes[i]
	age := math.NaN()
	if pipe.InstallYear > 0 {
		age = float64(cfg.AnalysisYear - pipe.InstallYear)
	}
	rp := scoring.RiskPipe{Age: age, Material: pipe.Material, C: r.cFactor[i], Diameter: float64(pipe.Diameter),
		Flow: math.Abs(float64(r.checks[r.governing(i)].Flow)), FacilityDistance: math.NaN(),
		Road: pipe.Surface, HasRoad: cfg.Pipes.Fields.Surface != "", HasBreaks: p.pipeBreaks != nil}
	if p.pipeBreaks != nil {
		rp.BreakRate = p.pipeBreaks[i].PerLengthYear
	}
	if p.facilityNear != nil {
		rp.FacilityDistance = math.Inf(1)
		if f := p.facilityNear[i]; f.Facility >= 0 {
			rp.FacilityDistance = float64(f.Distance)
		}
	}
	return rp
}

// progNewDiameter is the nominal size input pipe i is replaced at: the
// upsizing loop's recommendation, else its present size.
func (r *result) progNewDiameter(i int) hydraulics.Length {
	if r.cure != nil {
		if d := r.cureRecommended(i); d > 0 {
			return d
		}
	}
	return r.pipes[i].Diameter
}

// progEconomics gives each scored main with a break record its economic
// replacement year by Shamir & Howard (1979): the main's own break rate
// when it had at least two breaks in the record, else its cohort's rate at
// the end of the record, growing at the cohort's fitted (or default) rate.
func (r *result) progEconomics() {
	p := r.prog
	p.replaceYear = make([]float64, len(r.pipes))
	p.replaceState = make([]scoring.ReplacementState, len(r.pipes))
	for i := range p.replaceYear {
		p.replaceYear[i] = math.NaN()
	}
	if p.pipeBreaks == nil {
		return
	}
	hydraulics.ForPipeRanges(len(r.pipes), func(lo, hi int) { // each main on its own: on every core
		for i := lo; i < hi; i++ {
			r.progEconomicsOne(i)
		}
	})
}

// progEconomicsOne is progEconomics for input pipe i.
func (r *result) progEconomicsOne(i int) {
	cfg, p, pipe := r.cfg, r.prog, r.pipes[i]
	if !r.scores[i].Scored {
		return
	}
	co := progCohortOf(p.cohorts, pipe)
	if co == nil {
		return
	}
	n0 := co.BaseRate
	if pb := p.pipeBreaks[i]; pb.Count >= 2 {
		n0 = pb.PerLengthYear
	}
	y, state := scoring.OptimalReplacementYear(scoring.ReplacementEconomics{
		BaseYear: float64(p.window.To), BaseRate: n0, Growth: co.Growth,
		RepairCost:      orDefaultPtr(cfg.Economics.RepairCost, progDefaultRepairCost),
		ReplacementCost: p.costs.PerMetre(float64(r.progNewDiameter(i)), pipe.Surface),
		DiscountRate:    orDefaultPtr(cfg.Economics.DiscountRate, progDefaultDiscountRate),
	})
	if state == scoring.ReplacementFuture && y > float64(p.window.To+progHorizonYears) {
		y, state = math.Inf(1), scoring.ReplacementNever // growth so slow that the year means nothing
	}
	p.replaceYear[i], p.replaceState[i] = y, state
}

// progCohortOf finds the cohort (material × install decade) of a pipe.
func progCohortOf(cohorts []scoring.Cohort, p gis.Pipe) *scoring.Cohort {
	decade := 0
	if p.InstallYear > 0 {
		decade = p.InstallYear / 10 * 10
	}
	for k := range cohorts {
		if strings.EqualFold(cohorts[k].Material, strings.TrimSpace(p.Material)) && cohorts[k].Decade == decade { // cohorts match materials in any case
			return &cohorts[k]
		}
	}
	return nil
}

// progGroup marks the qualifying mains and groups them into projects.
func (r *result) progGroup() error {
	cfg, p := r.cfg, r.prog
	first, years := cfg.progPlanYears()
	last := float64(first + years - 1)
	minPriority := orDefaultPtr(cfg.Projects.MinPriority, progDefaultMinPriority)
	segs := make([]scoring.Segment, len(r.pipes))
	p.qualifies = make([]bool, len(r.pipes))
	for i, pipe := range r.pipes {
		if !r.scores[i].Scored {
			segs[i].Skip = true
			continue
		}
		due := !math.IsNaN(p.replaceYear[i]) && p.replaceYear[i] <= last
		upsized := r.cure != nil && r.cureRecommended(i) > 0
		p.qualifies[i] = p.priority[i] >= minPriority || upsized || due
		e := r.topo.Ends[i]
		segs[i] = scoring.Segment{From: e[0], To: e[1], Length: float64(pipe.Length), Street: pipe.Street, Qualifies: p.qualifies[i]}
	}
	r.progMustDoUnknown()
	byStreet := cfg.Pipes.Fields.Street != ""
	if cfg.Projects.ByStreet != nil {
		byStreet = *cfg.Projects.ByStreet
	}
	groups, err := scoring.GroupSegments(segs, scoring.GroupOptions{
		MaxLength: cfg.si(cfg.progMaxLength()), MaxGap: cfg.si(cfg.progMaxGap()), ByStreet: byStreet})
	if err != nil {
		return err
	}
	for _, g := range groups {
		p.projects = append(p.projects, r.progProjectOf(g, last))
	}
	slices.SortStableFunc(p.projects, func(a, b progProject) int {
		if c := cmp.Compare(b.meanPriority, a.meanPriority); c != 0 {
			return c
		}
		return cmp.Compare(a.segments[0], b.segments[0])
	})
	p.projectOf = make([]int, len(r.pipes))
	for i := range p.projectOf {
		p.projectOf[i] = -1
	}
	for k := range p.projects {
		p.projects[k].id = fmt.Sprintf("PRJ-%03d", k+1)
		for _, i := range p.projects[k].segments {
			p.projectOf[i] = k
		}
	}
	return nil
}

// progMustDoUnknown reports must-do pipe ids that name no pipe.
func (r *result) progMustDoUnknown() {
	for _, id := range r.cfg.Plan.MustDoPipes {
		if !slices.ContainsFunc(r.pipes, func(p gis.Pipe) bool { return p.ID == id }) {
			r.problems = append(r.problems, gis.Problem{File: r.cfg.file, ID: id, Field: "plan.must_do_pipes",
				What: fmt.Sprintf("pipe id %q names no pipe of the pipe layer", id), Action: "ignored; check the id against pipes.fields.id"})
		}
	}
}

// progProjectOf turns a group into a project with its figures.
func (r *result) progProjectOf(g scoring.Group, lastYear float64) progProject {
	cfg, p := r.cfg, r.prog
	s := cfg.system()
	pr := progProject{segments: g.Segments, gap: g.Gap, worstPriority: math.Inf(-1)}
	streetLength := map[string]hydraulics.Length{} // lookup only
	var counted hydraulics.Length                  // qualifying (non-gap) length
	var sumPriority, sumPerf float64
	must := map[string]bool{} // lookup only
	for _, id := range cfg.Plan.MustDoPipes {
		must[id] = true
	}
	for k, i := range g.Segments {
		pipe := r.pipes[i]
		l := pipe.Length
		pr.length += l
		pr.cost += float64(l) * p.costs.PerMetre(float64(r.progNewDiameter(i)), pipe.Surface)
		pr.benefit += p.priority[i] / 100 * s.Length(l)
		streetLength[pipe.Street] += l
		if must[pipe.ID] {
			pr.mustDo = true
		}
		if g.Gap[k] {
			pr.gapLength += l
			continue
		}
		if r.cure != nil && r.cureRecommended(i) > 0 {
			pr.upsizedLength += l
		}
		if sh := r.progFireCharge(i); sh != nil && !slices.Contains(pr.hydrants, sh.Hydrant) {
			pr.hydrants = append(pr.hydrants, sh.Hydrant)
		}
		if y := p.replaceYear[i]; !math.IsNaN(y) && y <= lastYear {
			pr.due++
		}
		pr.worstPriority = max(pr.worstPriority, p.priority[i])
		pr.maxRisk = max(pr.maxRisk, p.risk[i].Value)
		counted += l
		sumPriority += p.priority[i] * float64(l)
		sumPerf += r.scores[i].Score * float64(l)
	}
	pr.cost += p.costs.PerProject
	if counted > 0 {
		pr.meanPriority, pr.meanPerformance = sumPriority/float64(counted), sumPerf/float64(counted)
	}
	for _, name := range sortedKeys(streetLength) {
		if pr.street == "" || streetLength[name] > streetLength[pr.street] {
			pr.street = name
		}
	}
	return pr
}

// progFireCharge is the fire-flow shortfall input pipe i is charged
// with, nil for none or with fire flow off.
func (r *result) progFireCharge(i int) *scoring.FireFlowShortfall {
	if i < len(r.fireCharge) {
		return r.fireCharge[i]
	}
	return nil
}

// progPlan schedules the projects within the annual budget.
func (r *result) progPlan() error {
	cfg, p := r.cfg, r.prog
	p.budget = orDefaultPtr(cfg.Plan.AnnualBudget, 0)
	if p.budget == 0 || len(p.projects) == 0 {
		return nil
	}
	first, years := cfg.progPlanYears()
	in := make([]scoring.PlanProject, len(p.projects))
	for k, pr := range p.projects {
		in[k] = scoring.PlanProject{ID: pr.id, Cost: pr.cost, Benefit: pr.benefit, MustDo: pr.mustDo}
	}
	plan, err := scoring.Plan(in, scoring.PlanOptions{FirstYear: first, Years: years, AnnualBudget: p.budget,
		Escalation: orDefaultPtr(cfg.Plan.Escalation, progDefaultEscalation)})
	if err != nil {
		return fmt.Errorf("plan: %w", err)
	}
	p.plan = plan
	for _, y := range plan.Years {
		for _, k := range y.Projects {
			p.projects[k].year = y.Year
		}
	}
	return nil
}
