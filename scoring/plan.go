package scoring

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
)

// PlanProject is one candidate project of a budget plan.
type PlanProject struct {
	ID      string
	Cost    float64 // $ in the first plan year's money, ≥ 0
	Benefit float64 // ≥ 0, in the planner's own units (risk reduced, score points)
	// MustDo puts the project ahead of every other, whatever its benefit
	// (a regulatory order, a main that failed, a paving deadline).
	MustDo bool
}

// PlanOptions shape a budget plan.
type PlanOptions struct {
	// The plan runs over the calendar years FirstYear to
	// FirstYear + Years − 1; Years is 1 to 1,000.
	FirstYear, Years int
	// AnnualBudget is the money of each year, $ in that year's own money,
	// ≥ 0 and the same figure every year. What a year leaves unspent is
	// not carried over.
	AnnualBudget float64
	// Escalation is the yearly rise in costs (0.03 for 3 %; more than −1):
	// a project done in year FirstYear + k costs Cost·(1 + Escalation)^k.
	Escalation float64
	// ExactLimit is the largest n × capacity (candidates times the year's
	// money left in cost units) for which a year is chosen by the exact
	// knapsack; larger years use the heuristic. Zero means 10,000,000,
	// about 10 MB of decision table and some tens of milliseconds a year.
	ExactLimit int
	// CostUnit is the $ resolution of the exact knapsack; zero means
	// $1,000. Costs are rounded up to it and the money left down, so the
	// knapsack never overspends.
	CostUnit float64
}

// Defaults and bounds of PlanOptions.
const (
	defaultExactLimit = 10_000_000
	defaultCostUnit   = 1000.0
	maxPlanYears      = 1000
)

// PlanYear is one year of a budget plan. Money is in that year's own $.
type PlanYear struct {
	Year int
	// Projects are indices into the projects funded this year: must-do
	// projects first, in the order they were funded, then the others in
	// ascending index.
	Projects []int
	Spent    float64 // escalated cost of Projects, ≤ the annual budget
	Left     float64 // annual budget − Spent, lapses at the year's end
	Benefit  float64 // sum of the Projects' benefits
	// Exact is true when the projects after the must-do ones were chosen
	// by the exact knapsack (maximum benefit for the money left), false
	// when by the heuristic.
	Exact bool
}

// PlanResult is a budget plan.
type PlanResult struct {
	Years []PlanYear
	// Unfunded are the indices of the projects no year funds, ascending;
	// must-do projects among them are in MustDoUnfunded as well.
	Unfunded []int
	// MustDoUnfunded are the must-do projects that no year could fund,
	// ascending: costing more than a whole year's budget, or not fitting
	// beside the other must-do projects.
	MustDoUnfunded []int
}

// Plan schedules projects into a multi-year budget, one year at a time,
// each year filled as well as it can be on its own (no year holds money
// back for a later one, and unspent money lapses):
//
//  1. The must-do projects not yet funded, in order of benefit per dollar
//     (highest first, lower index on ties), each one that fits in what is
//     left of the year's budget.
//  2. The remaining projects with a positive benefit that fit, chosen to
//     maximise the year's benefit under what is left of the budget (exactly
//     or by the heuristic, below).
//  3. Any project still unfunded (must-do excepted) that fits, by
//     benefit per dollar: projects with zero benefit, and any the
//     knapsack's rounding or the heuristic left out.
//
// Step 2 is exact, by the 0/1 knapsack's dynamic programme over cost units
// (costs rounded up to CostUnit, money left rounded down), when
// n × capacity ≤ ExactLimit, n the candidates and capacity the money left
// in units (or the candidates' total cost, if smaller); it takes
// O(n × capacity) time and memory. Among choices of equal benefit the one
// with the lower indices wins. Otherwise it is a heuristic: projects are
// taken greedily by benefit per dollar while they fit, and that set or the
// single project of highest benefit is kept, whichever has more benefit.
// This is the classical ½-approximation of the knapsack, never less than
// half the best benefit, in O(n log n).
//
// A project done in year FirstYear + k costs Cost·(1 + Escalation)^k,
// against an AnnualBudget that is the same figure each year. No year ever
// spends more than its budget. The result is the same on every run.
//
// Plan returns an error for invalid options or a project with a negative
// or non-finite cost or benefit (the first 10 such problems, each naming
// the project).
func Plan(projects []PlanProject, opt PlanOptions) (*PlanResult, error) {
	opt, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	if err := checkPlanProjects(projects); err != nil {
		return nil, err
	}
	p := newPlanner(projects, opt)
	res := &PlanResult{Years: make([]PlanYear, 0, opt.Years)}
	for k := range opt.Years {
		res.Years = append(res.Years, p.fundYear(k))
	}
	for i, pr := range projects {
		if p.funded[i] {
			continue
		}
		res.Unfunded = append(res.Unfunded, i)
		if pr.MustDo {
			res.MustDoUnfunded = append(res.MustDoUnfunded, i)
		}
	}
	return res, nil
}

// resolved checks o and fills in its defaults.
func (o PlanOptions) resolved() (PlanOptions, error) {
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	switch {
	case o.Years < 1 || o.Years > maxPlanYears:
		return o, fmt.Errorf("scoring: plan: %d years; give a plan of 1 to %d years", o.Years, maxPlanYears)
	case !finite(o.AnnualBudget) || o.AnnualBudget < 0:
		return o, fmt.Errorf("scoring: plan: annual budget is %g; give a finite amount ≥ 0 in $", o.AnnualBudget)
	case !finite(o.Escalation) || o.Escalation <= -1:
		return o, fmt.Errorf("scoring: plan: escalation is %g; give a yearly rate above −1 (0.03 for 3 %%)", o.Escalation)
	case o.ExactLimit < 0:
		return o, fmt.Errorf("scoring: plan: exact limit is %d; give 0 for the default or a positive size", o.ExactLimit)
	case !finite(o.CostUnit) || o.CostUnit < 0:
		return o, fmt.Errorf("scoring: plan: cost unit is %g; give 0 for the default or a positive amount in $", o.CostUnit)
	}
	if o.ExactLimit == 0 {
		o.ExactLimit = defaultExactLimit
	}
	if o.CostUnit == 0 {
		o.CostUnit = defaultCostUnit
	}
	return o, nil
}

// checkPlanProjects reports the first 10 negative or non-finite costs and
// benefits, naming each project by 1-based position and ID.
func checkPlanProjects(projects []PlanProject) error {
	var errs []error
	for i, p := range projects {
		for _, f := range []struct {
			name  string
			value float64
		}{{"cost", p.Cost}, {"benefit", p.Benefit}} {
			if math.IsNaN(f.value) || math.IsInf(f.value, 0) || f.value < 0 {
				errs = append(errs, fmt.Errorf("scoring: plan: project %d (id %q): %s is %g; want a finite number ≥ 0", i+1, p.ID, f.name, f.value))
			}
		}
		if len(errs) >= 10 {
			break
		}
	}
	return errors.Join(errs[:min(len(errs), 10)]...)
}

// planner holds the state of a plan between years.
type planner struct {
	projects []PlanProject
	opt      PlanOptions
	funded   []bool
	byValue  []int // indices by benefit per dollar, highest first, lower index on ties
	rank     []int // rank[i] is i's position in byValue
	table    []bool
}

func newPlanner(projects []PlanProject, opt PlanOptions) *planner {
	p := &planner{
		projects: projects,
		opt:      opt,
		funded:   make([]bool, len(projects)),
		byValue:  make([]int, len(projects)),
		rank:     make([]int, len(projects)),
	}
	for i := range p.byValue {
		p.byValue[i] = i
	}
	slices.SortStableFunc(p.byValue, func(a, b int) int {
		if c := cmp.Compare(benefitPerDollar(projects[b]), benefitPerDollar(projects[a])); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	})
	for pos, i := range p.byValue {
		p.rank[i] = pos
	}
	return p
}

// benefitPerDollar is Benefit/Cost: +Inf for a free project with a
// benefit, 0 for one with none.
func benefitPerDollar(p PlanProject) float64 {
	switch {
	case p.Benefit == 0:
		return 0
	case p.Cost == 0:
		return math.Inf(1)
	}
	return p.Benefit / p.Cost
}

// planYearState is one plan year being filled.
type planYearState struct {
	PlanYear
	budget, factor float64
}

// cost returns p's cost in this year's money.
func (y *planYearState) cost(p PlanProject) float64 {
	if p.Cost == 0 {
		return 0
	}
	return p.Cost * y.factor
}

// fundYear fills year FirstYear + k (see Plan).
func (p *planner) fundYear(k int) PlanYear {
	y := &planYearState{
		PlanYear: PlanYear{Year: p.opt.FirstYear + k, Left: p.opt.AnnualBudget},
		budget:   p.opt.AnnualBudget,
		factor:   math.Pow(1+p.opt.Escalation, float64(k)),
	}
	for _, i := range p.byValue {
		if p.projects[i].MustDo {
			p.fundIfFits(y, i)
		}
	}
	mustDo := len(y.Projects)
	var candidates []int // ascending index
	for i, pr := range p.projects {
		if !p.funded[i] && !pr.MustDo && pr.Benefit > 0 && y.Spent+y.cost(pr) <= y.budget {
			candidates = append(candidates, i)
		}
	}
	var chosen []int
	chosen, y.Exact = p.choose(y, candidates)
	for _, i := range chosen {
		p.fundIfFits(y, i)
	}
	for _, i := range p.byValue {
		if !p.projects[i].MustDo {
			p.fundIfFits(y, i)
		}
	}
	slices.Sort(y.Projects[mustDo:])
	return y.PlanYear
}

// fundIfFits funds project i in y when it is not funded yet and its cost
// fits in what y has left.
func (p *planner) fundIfFits(y *planYearState, i int) {
	pr := p.projects[i]
	c := y.cost(pr)
	if p.funded[i] || !(y.Spent+c <= y.budget) {
		return
	}
	p.funded[i] = true
	y.Projects = append(y.Projects, i)
	y.Spent += c
	y.Left = y.budget - y.Spent
	y.Benefit += pr.Benefit
}

// choose picks among candidates (ascending index, each fitting on its
// own) the set to fund in y: by the exact knapsack when it is small
// enough, else by the heuristic. It reports whether the choice is exact.
func (p *planner) choose(y *planYearState, candidates []int) (chosen []int, exact bool) {
	unit := p.opt.CostUnit
	capacity := costUnitsDown(y.budget-y.Spent, unit)
	var items []int
	var weights []int
	var total float64
	for _, i := range candidates {
		if w := costUnitsUp(y.cost(p.projects[i]), unit); w <= capacity {
			items = append(items, i)
			weights = append(weights, int(w))
			total += w
		}
	}
	capacity = min(capacity, total)
	if float64(len(items))*capacity > float64(p.opt.ExactLimit) {
		return p.halfApproximation(y, candidates), false
	}
	values := make([]float64, len(items))
	for k, i := range items {
		values[k] = p.projects[i].Benefit
	}
	for _, k := range p.knapsack(weights, values, int(capacity)) {
		chosen = append(chosen, items[k])
	}
	return chosen, true
}

// costUnitsUp returns ⌈cost/unit⌉, never less than cost/unit after rounding.
func costUnitsUp(cost, unit float64) float64 {
	k := math.Ceil(cost / unit)
	if k*unit < cost {
		k++
	}
	return k
}

// costUnitsDown returns ⌊money/unit⌋ (≥ 0), never more than money/unit after
// rounding.
func costUnitsDown(money, unit float64) float64 {
	k := math.Floor(money / unit)
	if k*unit > money {
		k--
	}
	return max(k, 0)
}

// knapsack solves the 0/1 knapsack: it returns the positions of the items
// of greatest total value whose weights add up to at most capacity.
// Items are taken from the last to the first, so that a tie goes to the
// set with the lower positions:
//
//	best_k(c) = max(best_{k+1}(c), best_{k+1}(c − w_k) + v_k)
//
// in O(n·capacity) time, with one float64 per unit of capacity and one
// decision per item and unit.
func (p *planner) knapsack(weights []int, values []float64, capacity int) []int {
	width := capacity + 1
	cells := len(weights) * width
	if cap(p.table) < cells {
		p.table = make([]bool, cells)
	}
	take := p.table[:cells]
	clear(take)
	best := make([]float64, width)
	for k := len(weights) - 1; k >= 0; k-- {
		w, v, row := weights[k], values[k], take[k*width:(k+1)*width]
		for c := capacity; c >= w; c-- {
			if with := best[c-w] + v; with >= best[c] {
				best[c], row[c] = with, true
			}
		}
	}
	var chosen []int
	c := capacity
	for k, w := range weights {
		if take[k*width+c] {
			chosen = append(chosen, k)
			c -= w
		}
	}
	return chosen
}

// halfApproximation is the heuristic of Plan: the greedy set by benefit
// per dollar (each project that still fits), or the single project of
// highest benefit (lower index on ties) when that is worth more. Every
// candidate fits on its own, so the result is at least half the optimum.
func (p *planner) halfApproximation(y *planYearState, candidates []int) []int {
	order := slices.Clone(candidates)
	slices.SortFunc(order, func(a, b int) int { return cmp.Compare(p.rank[a], p.rank[b]) })
	left := y.budget - y.Spent
	var greedy []int
	var spent, gained float64
	for _, i := range order {
		if c := y.cost(p.projects[i]); spent+c <= left {
			greedy = append(greedy, i)
			spent += c
			gained += p.projects[i].Benefit
		}
	}
	single := -1
	for _, i := range candidates {
		if single < 0 || p.projects[i].Benefit > p.projects[single].Benefit {
			single = i
		}
	}
	if single >= 0 && p.projects[single].Benefit > gained {
		return []int{single}
	}
	return greedy
}
