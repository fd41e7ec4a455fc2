package scoring

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"headroom/hydraulics"
)

func TestRankScoreByHand(t *testing.T) {
	// DOMAIN.md §1.6 check point (500 gpm, 6 in, C 100: 33.41 ft/kft, 5.674 ft/s)
	// scored with the default breakpoints and weights, worked by hand:
	//   head loss  (0.03341 − 0.005)/0.015 > 1            → 100
	//   velocity   (5.674 − 3)/(8 − 3) = 0.5348            → 53.48
	//   C-factor   (100 − 120)/(60 − 120) = 1/3            → 33.333
	//   deficit    (33.41/10)^0.54 − 1 = 1.918197 − 1      → 91.8197
	//   score      0.35·100 + 0.15·53.48 + 0.20·33.333 + 0.30·91.8197
	//            = 35 + 8.022 + 6.6667 + 27.5459 = 77.2346
	res, err := Rank([]Pipe{sixInch("M-1")}, DefaultConfig(), usLimits())
	if err != nil {
		t.Fatal(err)
	}
	r := res[0]
	checks := []struct {
		name      string
		got, want float64
	}{
		{"head loss", r.HeadLoss, 100},
		{"velocity", r.Velocity, 53.48},
		{"C-factor", r.CFactor, 100.0 / 3},
		{"deficit", r.Deficit, 91.8197},
		{"score", r.Score, 77.2346},
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > 1e-3 { // points
			t.Errorf("%s sub-score = %.4f, want %.4f ± 0.001", c.name, c.got, c.want)
		}
	}
	if !r.Scored || r.Rank != 1 || r.ID != "M-1" {
		t.Errorf("got Scored %v Rank %d ID %q, want true 1 M-1", r.Scored, r.Rank, r.ID)
	}
}

func TestRankWeightNormalisation(t *testing.T) {
	// Score = Σ wᵢ·subᵢ / Σ wᵢ, so scaling every weight by 10 changes nothing,
	// and a single weight makes the score that one sub-score.
	p := []Pipe{sixInch("M-1")}
	base := DefaultConfig()
	scaled := base
	scaled.Weights = Weights{3.5, 1.5, 2.0, 3.0}
	only := base
	only.Weights = Weights{Velocity: 4}
	a, err := Rank(p, base, usLimits())
	if err != nil {
		t.Fatal(err)
	}
	b, err := Rank(p, scaled, usLimits())
	if err != nil {
		t.Fatal(err)
	}
	c, err := Rank(p, only, usLimits())
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(a[0].Score-b[0].Score) > 1e-9 {
		t.Errorf("scaled weights: score %.9f, want %.9f", b[0].Score, a[0].Score)
	}
	if math.Abs(c[0].Score-53.48) > 1e-9 { // (5.674 − 3)/(8 − 3)·100
		t.Errorf("velocity weight only: score %.9f, want 53.48", c[0].Score)
	}
}

// rankOrder returns the pipes' Index values in rank order, and checks that
// the ranks fill 1..n.
func rankOrder(t *testing.T, res []Result) []int {
	t.Helper()
	byRank := make([]int, len(res))
	for i := range byRank {
		byRank[i] = -1
	}
	for _, r := range res {
		if r.Rank < 1 || r.Rank > len(res) || byRank[r.Rank-1] != -1 {
			t.Fatalf("rank %d of index %d is not a free place in 1..%d", r.Rank, r.Index, len(res))
		}
		byRank[r.Rank-1] = r.Index
	}
	return byRank
}

func TestRankOrder(t *testing.T) {
	headLossOnly := DefaultConfig()
	headLossOnly.Weights = Weights{HeadLoss: 1}
	// pipe builds a scorable pipe with its Index set.
	pipe := func(index int, p Pipe) Pipe { p.Index = index; return p }
	// tied builds pipes of equal slope (so equal score under headLossOnly)
	// with the deficit set by hand.
	tied := func(index int, id string, deficitGPM float64) Pipe {
		p := pipe(index, sixInch(id))
		p.Check.Deficit = hydraulics.Flow(deficitGPM) * hydraulics.USGallonPerMinute
		return p
	}
	cases := []struct {
		name  string
		cfg   Config
		pipes []Pipe
		want  []int // Index values, rank 1 first
	}{
		{"score descending", DefaultConfig(),
			[]Pipe{pipe(0, passing("low", 110)), pipe(1, sixInch("high")), pipe(2, passing("mid", 62))},
			[]int{1, 2, 0}},
		{"tie on score: larger deficit first", headLossOnly,
			[]Pipe{tied(0, "A", 10), tied(1, "B", 20)},
			[]int{1, 0}},
		{"tie on score and deficit: ID ascending in byte order", headLossOnly,
			[]Pipe{tied(0, "P-2", 10), tied(1, "P-10", 10)},
			[]int{1, 0}},
		{"tie on score, deficit and ID: lower Index first", headLossOnly,
			[]Pipe{tied(7, "dup", 10), tied(3, "dup", 10)},
			[]int{3, 7}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Rank(tc.pipes, tc.cfg, usLimits())
			if err != nil {
				t.Fatal(err)
			}
			if got := rankOrder(t, res); !slices.Equal(got, tc.want) {
				t.Errorf("rank order (by Index) %v, want %v", got, tc.want)
			}
		})
	}
}

func TestRankUnscored(t *testing.T) {
	closed := Pipe{Index: 10, ID: "V-1", Reason: "closed"}
	lonely := Pipe{Index: 11, ID: "V-2", Reason: "no supply reaches it"}
	in := []Pipe{closed, passing("ok", 130), lonely, sixInch("bad")}
	in[1].Index, in[3].Index = 12, 13
	res, err := Rank(in, DefaultConfig(), usLimits())
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		index   int
		id      string
		scored  bool
		rank    int
		reasons string
	}{
		{10, "V-1", false, 0, "closed"},
		{12, "ok", true, 2, "meets the criteria"},
		{11, "V-2", false, 0, "no supply reaches it"},
		{13, "bad", true, 1, ""},
	}
	if len(res) != len(want) {
		t.Fatalf("got %d results, want %d", len(res), len(want))
	}
	for i, w := range want {
		r := res[i]
		if r.Index != w.index || r.ID != w.id || r.Scored != w.scored || r.Rank != w.rank {
			t.Errorf("result %d = {Index %d ID %q Scored %v Rank %d}, want {%d %q %v %d}",
				i, r.Index, r.ID, r.Scored, r.Rank, w.index, w.id, w.scored, w.rank)
		}
		if w.reasons != "" && r.Reasons != w.reasons {
			t.Errorf("result %d reasons %q, want %q", i, r.Reasons, w.reasons)
		}
		if !w.scored && (r.Score != 0 || r.HeadLoss != 0 || r.Deficit != 0) {
			t.Errorf("unscored result %d has score %f", i, r.Score)
		}
	}
}

func TestRankEmpty(t *testing.T) {
	res, err := Rank(nil, DefaultConfig(), usLimits())
	if err != nil || len(res) != 0 {
		t.Errorf("Rank(nil) = %v, %v; want no results and no error", res, err)
	}
}

func TestRankErrors(t *testing.T) {
	good := sixInch("M-1")
	badCfg := DefaultConfig()
	badCfg.Weights.Velocity = -1
	noSlope := usLimits()
	noSlope.MaxSlope = 0
	noVelocity := usLimits()
	noVelocity.MaxVelocity = hydraulics.Velocity(math.NaN())
	nanSlope := good
	nanSlope.Check.Slope = math.NaN()
	negC := good
	negC.C = -5
	zeroCap := good
	zeroCap.Check.Capacity = 0
	infDeficit := good
	infDeficit.Check.Deficit = hydraulics.Flow(math.Inf(1))
	cases := []struct {
		name string
		pipe Pipe
		cfg  Config
		lim  hydraulics.Limits
		want string // prefix of the error
	}{
		{"invalid config", good, badCfg, usLimits(), "scoring: weights.velocity is negative"},
		{"zero criterion slope", good, DefaultConfig(), noSlope, "scoring: limits: criterion head loss"},
		{"NaN criterion velocity", good, DefaultConfig(), noVelocity, "scoring: limits: criterion velocity"},
		{"NaN slope", nanSlope, DefaultConfig(), usLimits(), `scoring: pipe "M-1" (index 0): slope is NaN`},
		{"negative C", negC, DefaultConfig(), usLimits(), `scoring: pipe "M-1" (index 0): C is -5`},
		{"zero capacity", zeroCap, DefaultConfig(), usLimits(), `scoring: pipe "M-1" (index 0): capacity is zero`},
		{"infinite deficit", infDeficit, DefaultConfig(), usLimits(), `scoring: pipe "M-1" (index 0): deficit is +Inf`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Rank([]Pipe{tc.pipe}, tc.cfg, tc.lim)
			if err == nil || !strings.HasPrefix(err.Error(), tc.want) {
				t.Errorf("Rank() error = %v, want prefix %q", err, tc.want)
			}
			if res != nil {
				t.Errorf("Rank() returned %d results with an error", len(res))
			}
		})
	}
	t.Run("unscorable pipes are not checked", func(t *testing.T) {
		p := nanSlope
		p.Scorable = false
		if _, err := Rank([]Pipe{p}, DefaultConfig(), usLimits()); err != nil {
			t.Errorf("Rank() = %v, want nil", err)
		}
	})
}

func BenchmarkRank10k(b *testing.B) {
	// 10,000 pipes cycling through four kinds, so scores tie often.
	pipes := make([]Pipe, 10000)
	for i := range pipes {
		switch i % 4 {
		case 0:
			pipes[i] = sixInch("S")
		case 1:
			pipes[i] = passing("P", 130)
		case 2:
			pipes[i] = passing("A", 70)
		default:
			pipes[i] = Pipe{ID: "X", Reason: "closed"}
		}
		pipes[i].Index = i
	}
	cfg, lim := DefaultConfig(), usLimits()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Rank(pipes, cfg, lim); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(pipes))*float64(b.N)/b.Elapsed().Seconds(), "pipes/s")
}

// TestRankedPositionsAsStableSort: the rankings' sort of precomputed keys
// gives the order the stable sort of the entries gave before it (keys
// higher first, then ID and Index lower first, ties kept in input order),
// on 20,000 entries drawn from few values so that every kind of tie occurs.
func TestRankedPositionsAsStableSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	n := 100_000 // above 2·sortOnCoresMin: sorted in parts on two or more cores
	keys := make([]rankKey, n)
	for i := range keys {
		keys[i] = rankKey{first: float64(rng.IntN(5)), second: float64(rng.IntN(3)),
			id: fmt.Sprintf("P-%d", rng.IntN(40)), index: rng.IntN(7), pos: i}
	}
	want := make([]int, n)
	for i := range want {
		want[i] = i
	}
	ref := slices.Clone(keys)
	slices.SortStableFunc(want, func(a, b int) int {
		ka, kb := ref[a], ref[b]
		if c := cmp.Compare(kb.first, ka.first); c != 0 {
			return c
		}
		if c := cmp.Compare(kb.second, ka.second); c != 0 {
			return c
		}
		if c := strings.Compare(ka.id, kb.id); c != 0 {
			return c
		}
		return cmp.Compare(ka.index, kb.index)
	})
	if got := rankedPositions(keys); !slices.Equal(got, want) {
		t.Fatalf("order differs from the stable sort's")
	}
}

// sortInParts gives slices.SortFunc's order for any number of parts, in
// runs long enough to be split (ties in the value broken by the position:
// a total order, as rankedPositions' is).
func TestSortInPartsAsOneSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	vals := make([]int, 5*sortOnCoresMin+7)
	for i := range vals {
		vals[i] = rng.IntN(50)
	}
	byVal := func(a, b int32) int {
		if c := cmp.Compare(vals[a], vals[b]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	}
	order := make([]int32, len(vals))
	for i := range order {
		order[i] = int32(len(order) - 1 - i)
	}
	want := slices.Clone(order)
	slices.SortFunc(want, byVal)
	for _, parts := range []int{1, 2, 3, 4, 8} {
		got := slices.Clone(order)
		sortInParts(got, make([]int32, len(got)), byVal, parts)
		if !slices.Equal(got, want) {
			t.Errorf("%d parts: order differs from slices.SortFunc's", parts)
		}
	}
}

// BenchmarkPriorityRanks1M ranks a million mains with 1,000 distinct
// priorities and 100 performance scores, so that most comparisons go to
// the ID (invented values).
func BenchmarkPriorityRanks1M(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	n := 1000000
	pri, perf, ids, use := make([]float64, n), make([]float64, n), make([]string, n), make([]bool, n)
	for i := range pri {
		pri[i] = float64(rng.IntN(1000)) / 10
		perf[i] = float64(rng.IntN(100))
		ids[i] = fmt.Sprintf("QM-%06d", i)
		use[i] = true
	}
	for b.Loop() {
		PriorityRanks(pri, perf, ids, use)
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "mains/s")
}
