package scoring

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// bruteForceBest returns the largest total benefit of any subset of the
// projects whose costs add up to at most budget, trying all 2ⁿ subsets.
func bruteForceBest(costs, benefits []float64, budget float64) float64 {
	best := 0.0
	for mask := 0; mask < 1<<len(costs); mask++ {
		var cost, benefit float64
		for i := range costs {
			if mask&(1<<i) != 0 {
				cost += costs[i]
				benefit += benefits[i]
			}
		}
		if cost <= budget && benefit > best {
			best = benefit
		}
	}
	return best
}

// randomProjects returns n projects with costs drawn from 1..maxCost
// (whole dollars) and benefits that are whole numbers 0..9 half the time
// (so ties happen) and uniform in [0, 100) otherwise.
func randomProjects(rng *rand.Rand, n, maxCost int) []PlanProject {
	projects := make([]PlanProject, n)
	wholeBenefits := rng.IntN(2) == 0
	for i := range projects {
		projects[i].ID = fmt.Sprintf("P-%02d", i)
		projects[i].Cost = float64(1 + rng.IntN(maxCost))
		if wholeBenefits {
			projects[i].Benefit = float64(rng.IntN(10))
		} else {
			projects[i].Benefit = 100 * rng.Float64()
		}
	}
	return projects
}

func costsAndBenefits(projects []PlanProject) (costs, benefits []float64) {
	for _, p := range projects {
		costs = append(costs, p.Cost)
		benefits = append(benefits, p.Benefit)
	}
	return costs, benefits
}

// checkYear fails t unless y's projects are unique, fit the budget, and
// add up to Spent, Left and Benefit, with costs escalated by factor.
func checkYear(t *testing.T, y PlanYear, projects []PlanProject, budget, factor float64) {
	t.Helper()
	var spent, benefit float64
	for _, i := range y.Projects {
		spent += projects[i].Cost * factor
		benefit += projects[i].Benefit
	}
	if y.Spent > budget {
		t.Errorf("year %d: spent %.6f, over the budget %.6f", y.Year, y.Spent, budget)
	}
	if math.Abs(spent-y.Spent) > 1e-9*max(1, budget) || math.Abs(benefit-y.Benefit) > 1e-9*max(1, benefit) {
		t.Errorf("year %d: Spent %.9f, Benefit %.9f; projects add up to %.9f and %.9f", y.Year, y.Spent, y.Benefit, spent, benefit)
	}
	if math.Abs(y.Left-(budget-y.Spent)) > 1e-9*max(1, budget) {
		t.Errorf("year %d: Left %.9f, want budget − Spent = %.9f", y.Year, y.Left, budget-y.Spent)
	}
}

func TestPlanExactMatchesBruteForce(t *testing.T) {
	// One year, whole-dollar costs and a $1 cost unit, so the knapsack's
	// rounding is exact and its benefit must equal the best subset's.
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := range 400 {
		n := 1 + rng.IntN(12)
		projects := randomProjects(rng, n, 60)
		budget := float64(rng.IntN(200))
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: budget, CostUnit: 1})
		if err != nil {
			t.Fatal(err)
		}
		y := res.Years[0]
		checkYear(t, y, projects, budget, 1)
		costs, benefits := costsAndBenefits(projects)
		if want := bruteForceBest(costs, benefits, budget); !y.Exact || math.Abs(y.Benefit-want) > 1e-9*max(1, want) {
			t.Fatalf("trial %d (%d projects, budget %g): benefit %.9f (exact %v), brute force %.9f",
				trial, n, budget, y.Benefit, y.Exact, want)
		}
	}
}

func TestPlanExactRoundsCostsUp(t *testing.T) {
	// Costs that are not whole cost units: the knapsack works on costs
	// rounded up to $1,000 and money rounded down, so it may miss the true
	// optimum by the rounding, but it never overspends and never does
	// worse than the best subset at the rounded-up costs.
	rng := rand.New(rand.NewPCG(2, 2))
	for trial := range 300 {
		n := 1 + rng.IntN(10)
		projects := make([]PlanProject, n)
		for i := range projects {
			projects[i] = PlanProject{ID: fmt.Sprint(i), Cost: 10_000 + 90_000*rng.Float64(), Benefit: 1 + 9*rng.Float64()}
		}
		budget := 250_000 * rng.Float64()
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: budget})
		if err != nil {
			t.Fatal(err)
		}
		y := res.Years[0]
		checkYear(t, y, projects, budget, 1)
		costs, benefits := costsAndBenefits(projects)
		rounded := make([]float64, n)
		for i, c := range costs {
			rounded[i] = 1000 * math.Ceil(c/1000)
		}
		upper := bruteForceBest(costs, benefits, budget)
		lower := bruteForceBest(rounded, benefits, 1000*math.Floor(budget/1000))
		if y.Benefit > upper+1e-9 || y.Benefit < lower-1e-9 {
			t.Fatalf("trial %d: benefit %.6f, want between %.6f (rounded costs) and %.6f (true costs)", trial, y.Benefit, lower, upper)
		}
	}
}

func TestKnapsackChoiceFitsOnItsOwn(t *testing.T) {
	// The knapsack's own choice, before Plan's check as it funds each
	// project, must fit the money left: costs round up to the cost unit
	// and the money down, so the choice fits whatever the cents.
	rng := rand.New(rand.NewPCG(6, 6))
	for trial := range 300 {
		n := 1 + rng.IntN(15)
		projects := make([]PlanProject, n)
		for i := range projects {
			projects[i] = PlanProject{Cost: 1000 * (1 + 20*rng.Float64()), Benefit: 1 + rng.Float64()}
		}
		budget := 60_000 * rng.Float64()
		opt, err := PlanOptions{Years: 1, AnnualBudget: budget}.resolved()
		if err != nil {
			t.Fatal(err)
		}
		p := newPlanner(projects, opt)
		y := &planYearState{budget: budget, factor: 1}
		var candidates []int
		for i, pr := range projects {
			if pr.Cost <= budget {
				candidates = append(candidates, i)
			}
		}
		chosen, exact := p.choose(y, candidates)
		var spent float64
		for _, i := range chosen {
			spent += projects[i].Cost
		}
		if !exact || spent > budget {
			t.Fatalf("trial %d: knapsack chose $%.2f of $%.2f (exact %v)", trial, spent, budget, exact)
		}
	}
}

func TestPlanTiesGoToLowerIndex(t *testing.T) {
	// Three equal projects, money for two: the plan takes 0 and 1, by
	// either method.
	projects := []PlanProject{{"A", 100, 5, false}, {"B", 100, 5, false}, {"C", 100, 5, false}}
	for _, limit := range []int{0, 1} {
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: 200, CostUnit: 1, ExactLimit: limit})
		if err != nil {
			t.Fatal(err)
		}
		if got := res.Years[0].Projects; !slices.Equal(got, []int{0, 1}) || !slices.Equal(res.Unfunded, []int{2}) {
			t.Errorf("exact limit %d: funded %v, unfunded %v; want [0 1] and [2]", limit, got, res.Unfunded)
		}
	}
}

func TestPlanMultiYearInvariants(t *testing.T) {
	// Random multi-year plans by both methods: no year over budget, no
	// project twice, every project funded or listed as unfunded.
	rng := rand.New(rand.NewPCG(3, 3))
	for trial := range 200 {
		n := 5 + rng.IntN(40)
		projects := randomProjects(rng, n, 400)
		for i := range projects {
			projects[i].MustDo = rng.IntN(6) == 0
		}
		opt := PlanOptions{
			FirstYear:    2026,
			Years:        1 + rng.IntN(6),
			AnnualBudget: float64(100 + rng.IntN(900)),
			Escalation:   0.05 * rng.Float64(),
			CostUnit:     1,
		}
		if trial%2 == 1 {
			opt.ExactLimit = 1 // the heuristic
		}
		res, err := Plan(projects, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Years) != opt.Years {
			t.Fatalf("trial %d: %d years, want %d", trial, len(res.Years), opt.Years)
		}
		seen := make([]int, n)
		for k, y := range res.Years {
			if y.Year != opt.FirstYear+k {
				t.Errorf("trial %d: year %d is %d, want %d", trial, k, y.Year, opt.FirstYear+k)
			}
			checkYear(t, y, projects, opt.AnnualBudget, math.Pow(1+opt.Escalation, float64(k)))
			for _, i := range y.Projects {
				seen[i]++
			}
		}
		var unfunded, mustDoUnfunded []int
		for i, s := range seen {
			if s > 1 {
				t.Errorf("trial %d: project %d funded %d times", trial, i, s)
			}
			if s == 0 {
				unfunded = append(unfunded, i)
				if projects[i].MustDo {
					mustDoUnfunded = append(mustDoUnfunded, i)
				}
			}
		}
		if !slices.Equal(res.Unfunded, unfunded) || !slices.Equal(res.MustDoUnfunded, mustDoUnfunded) {
			t.Errorf("trial %d: unfunded %v / must-do %v, want %v / %v", trial, res.Unfunded, res.MustDoUnfunded, unfunded, mustDoUnfunded)
		}
	}
}

func TestPlanMustDoFirst(t *testing.T) {
	// Budget $100 a year, 2 years, no escalation. Must-do projects by
	// benefit per dollar: 2 (100/150 = 0.67), 4 (3/30 = 0.1), 1 (1/50 = 0.02).
	// Worked by hand:
	//   2026: 2 ($150) exceeds the whole budget; 4 ($30) and 1 ($50) fit,
	//         $80, although their benefits are least. Of the $20 left
	//         neither 0 ($60) nor 3 ($40) fits → [4 1], spent $80.
	//   2027: 2 still does not fit; 0 and 3 fit together → [0 3], $100.
	//   Must-do 2 is reported unfunded.
	projects := []PlanProject{
		{ID: "big benefit", Cost: 60, Benefit: 50},
		{ID: "order", Cost: 50, Benefit: 1, MustDo: true},
		{ID: "too big", Cost: 150, Benefit: 100, MustDo: true},
		{ID: "small", Cost: 40, Benefit: 10},
		{ID: "deadline", Cost: 30, Benefit: 3, MustDo: true},
	}
	res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 2, AnnualBudget: 100, CostUnit: 1})
	if err != nil {
		t.Fatal(err)
	}
	want := [][]int{{4, 1}, {0, 3}}
	for k, y := range res.Years {
		if !slices.Equal(y.Projects, want[k]) {
			t.Errorf("%d: projects %v, want %v", y.Year, y.Projects, want[k])
		}
	}
	if res.Years[0].Spent != 80 || res.Years[1].Spent != 100 {
		t.Errorf("spent %g and %g, want 80 and 100", res.Years[0].Spent, res.Years[1].Spent)
	}
	if !slices.Equal(res.MustDoUnfunded, []int{2}) || !slices.Equal(res.Unfunded, []int{2}) {
		t.Errorf("unfunded %v, must-do unfunded %v; want [2] and [2]", res.Unfunded, res.MustDoUnfunded)
	}

	t.Run("must-do projects spill into the next year", func(t *testing.T) {
		// Three must-do projects of $60 at $100 a year: one a year, and the
		// $40 left each year is too little for x ($80), whose benefit is
		// far larger. The third must-do project is reported.
		projects := []PlanProject{
			{ID: "m1", Cost: 60, Benefit: 1, MustDo: true},
			{ID: "m2", Cost: 60, Benefit: 1, MustDo: true},
			{ID: "m3", Cost: 60, Benefit: 1, MustDo: true},
			{ID: "x", Cost: 80, Benefit: 90},
		}
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 2, AnnualBudget: 100, CostUnit: 1})
		if err != nil {
			t.Fatal(err)
		}
		if a, b := res.Years[0].Projects, res.Years[1].Projects; !slices.Equal(a, []int{0}) || !slices.Equal(b, []int{1}) {
			t.Errorf("projects %v and %v, want [0] and [1]", a, b)
		}
		if !slices.Equal(res.MustDoUnfunded, []int{2}) || !slices.Equal(res.Unfunded, []int{2, 3}) {
			t.Errorf("unfunded %v, must-do unfunded %v; want [2 3] and [2]", res.Unfunded, res.MustDoUnfunded)
		}
	})
}

func TestPlanEscalation(t *testing.T) {
	// Budget $100 a year, 3 %/yr escalation. A ($100) takes 2026. Worked by hand:
	//   B at $90: in 2027 it costs 90 · 1.03 = $92.70 → spent 92.70, left 7.30.
	//   B at $99: 99 · 1.03 = $101.97 in 2027 and 99 · 1.03² = $105.03 in
	//   2028, both over $100: never funded, where with no escalation it
	//   would be funded in 2027.
	a := PlanProject{ID: "A", Cost: 100, Benefit: 10}
	cases := []struct {
		name       string
		costB      float64
		escalation float64
		wantYear   int // index of the year that funds B, −1 for none
		wantSpent  float64
	}{
		{"escalated, fits", 90, 0.03, 1, 92.70},
		{"escalated, too dear", 99, 0.03, -1, 0},
		{"no escalation", 99, 0, 1, 99},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			projects := []PlanProject{a, {ID: "B", Cost: tc.costB, Benefit: 5}}
			res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 3, AnnualBudget: 100, Escalation: tc.escalation, CostUnit: 1})
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(res.Years[0].Projects, []int{0}) || res.Years[0].Spent != 100 {
				t.Fatalf("2026: %v for %g, want [0] for 100", res.Years[0].Projects, res.Years[0].Spent)
			}
			funded := -1
			for k, y := range res.Years {
				if slices.Contains(y.Projects, 1) {
					funded = k
				}
			}
			if funded != tc.wantYear {
				t.Fatalf("B funded in year %d, want %d", funded, tc.wantYear)
			}
			if funded >= 0 {
				y := res.Years[funded]
				if math.Abs(y.Spent-tc.wantSpent) > 1e-9 || math.Abs(y.Left-(100-tc.wantSpent)) > 1e-9 {
					t.Errorf("%d: spent %.4f, left %.4f; want %.2f and %.2f", y.Year, y.Spent, y.Left, tc.wantSpent, 100-tc.wantSpent)
				}
			}
		})
	}
}

func TestPlanHeuristicHalfOfOptimum(t *testing.T) {
	// ExactLimit 1 forces the heuristic. The ½-approximation (greedy by
	// benefit per dollar, or the best single project) must never overspend
	// and never get less than half the brute-force optimum.
	rng := rand.New(rand.NewPCG(4, 4))
	worst := 1.0
	for trial := range 400 {
		n := 2 + rng.IntN(11)
		projects := randomProjects(rng, n, 100)
		budget := float64(10 + rng.IntN(200))
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: budget, CostUnit: 1, ExactLimit: 1})
		if err != nil {
			t.Fatal(err)
		}
		y := res.Years[0]
		checkYear(t, y, projects, budget, 1)
		costs, benefits := costsAndBenefits(projects)
		opt := bruteForceBest(costs, benefits, budget)
		if y.Benefit < opt/2-1e-9 {
			t.Fatalf("trial %d: heuristic benefit %.6f, under half the optimum %.6f", trial, y.Benefit, opt)
		}
		if opt > 0 {
			worst = min(worst, y.Benefit/opt)
		}
	}
	t.Logf("worst heuristic/optimum ratio over 400 instances: %.3f", worst)

	t.Run("best single project", func(t *testing.T) {
		// Greedy by benefit per dollar takes the $1 project (2 per $) and
		// then cannot fit the $100 one (1 per $): benefit 2 of a possible
		// 100. The single best project must win.
		projects := []PlanProject{{ID: "cheap", Cost: 1, Benefit: 2}, {ID: "main", Cost: 100, Benefit: 100}}
		res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: 100, CostUnit: 1, ExactLimit: 1})
		if err != nil {
			t.Fatal(err)
		}
		if y := res.Years[0]; y.Exact || !slices.Equal(y.Projects, []int{1}) || y.Benefit != 100 {
			t.Errorf("funded %v for benefit %g (exact %v), want [1] for 100 by the heuristic", y.Projects, y.Benefit, y.Exact)
		}
	})
}

func TestPlanZeroBenefitFromLeftovers(t *testing.T) {
	// A project with no benefit is funded only from what is left: here
	// $40 after the $60 project of benefit 1.
	projects := []PlanProject{{ID: "none", Cost: 40, Benefit: 0}, {ID: "some", Cost: 60, Benefit: 1}, {ID: "none-big", Cost: 50}}
	res, err := Plan(projects, PlanOptions{FirstYear: 2026, Years: 1, AnnualBudget: 100, CostUnit: 1})
	if err != nil {
		t.Fatal(err)
	}
	if got := res.Years[0].Projects; !slices.Equal(got, []int{0, 1}) || !slices.Equal(res.Unfunded, []int{2}) {
		t.Errorf("funded %v, unfunded %v; want [0 1] and [2]", got, res.Unfunded)
	}
}

func TestPlanRejects(t *testing.T) {
	ok := PlanOptions{FirstYear: 2026, Years: 5, AnnualBudget: 1e6}
	good := []PlanProject{{ID: "A", Cost: 1, Benefit: 1}}
	cases := []struct {
		name     string
		projects []PlanProject
		edit     func(*PlanOptions)
		want     string
	}{
		{"no years", good, func(o *PlanOptions) { o.Years = 0 }, "0 years"},
		{"too many years", good, func(o *PlanOptions) { o.Years = 5000 }, "1 to 1000 years"},
		{"negative budget", good, func(o *PlanOptions) { o.AnnualBudget = -1 }, "annual budget"},
		{"NaN budget", good, func(o *PlanOptions) { o.AnnualBudget = math.NaN() }, "annual budget"},
		{"escalation −100 %", good, func(o *PlanOptions) { o.Escalation = -1 }, "escalation"},
		{"negative exact limit", good, func(o *PlanOptions) { o.ExactLimit = -3 }, "exact limit"},
		{"negative cost unit", good, func(o *PlanOptions) { o.CostUnit = -1 }, "cost unit"},
		{"negative cost", []PlanProject{{ID: "A", Cost: 1}, {ID: "W-7", Cost: -5}}, nil, `project 2 (id "W-7"): cost is -5`},
		{"infinite benefit", []PlanProject{{ID: "Z", Cost: 1, Benefit: math.Inf(1)}}, nil, `project 1 (id "Z"): benefit`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			opt := ok
			if tc.edit != nil {
				tc.edit(&opt)
			}
			res, err := Plan(tc.projects, opt)
			if err == nil || !strings.Contains(err.Error(), tc.want) || res != nil {
				t.Errorf("got %v, %v; want no plan and an error containing %q", res, err, tc.want)
			}
		})
	}
}

// benchmarkProjects returns n invented projects of $50,000–$1,500,000
// with benefits loosely tied to cost.
func benchmarkProjects(n int) []PlanProject {
	rng := rand.New(rand.NewPCG(5, 5))
	projects := make([]PlanProject, n)
	for i := range projects {
		cost := 50_000 + 1_450_000*rng.Float64()
		projects[i] = PlanProject{
			ID:      fmt.Sprintf("PRJ-%03d", i),
			Cost:    cost,
			Benefit: cost / 1e5 * (0.5 + rng.Float64()),
			MustDo:  i%50 == 0,
		}
	}
	return projects
}

func BenchmarkPlan(b *testing.B) {
	// 500 projects over 5 years at $8 M a year and 3 % escalation. With the
	// default $1,000 cost unit the exact knapsack has about 500 × 8,000 =
	// 4 M cells a year, under the default limit.
	const n = 500
	projects := benchmarkProjects(n)
	for _, bc := range []struct {
		name  string
		limit int
	}{{"exact", 0}, {"heuristic", 1}} {
		b.Run(bc.name, func(b *testing.B) {
			opt := PlanOptions{FirstYear: 2026, Years: 5, AnnualBudget: 8e6, Escalation: 0.03, ExactLimit: bc.limit}
			b.ReportAllocs()
			var benefit float64
			for b.Loop() {
				res, err := Plan(projects, opt)
				if err != nil {
					b.Fatal(err)
				}
				benefit = 0
				for _, y := range res.Years {
					benefit += y.Benefit
				}
			}
			b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "projects/s")
			b.ReportMetric(benefit, "benefit")
		})
	}
}
