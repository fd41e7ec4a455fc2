package scoring

import (
	"cmp"
	"fmt"
	"math"
	"runtime"
	"slices"
	"strings"
	"sync"

	"headroom/hydraulics"
)

// Pipe is one pipe as the scorer sees it: its identity, whether it could be
// scored, and its check against the Limits.
type Pipe struct {
	Index int // position in the caller's pipe list (kept in results)
	ID    string
	// Scorable is false for a pipe that was not solved (left out, closed,
	// unsupplied); Reason then says why and is copied to the result.
	Scorable bool
	Reason   string
	C        float64           // Hazen-Williams C used
	Diameter hydraulics.Length // the size now as the layer records it (nominal unless diameter_is = "inside"), compared with the required nominal size in the reasons
	Check    hydraulics.PipeCheck
	// LowPressure marks a pipe with an end node below the pressure
	// criterion. It is mentioned in the reasons and not scored.
	LowPressure bool
	// FireFlow, when not nil, is the hydrant whose fire-flow shortfall this
	// main is charged with (it carries that fire flow at one of the
	// highest unit head losses). The deficit sub-score reads the larger of
	// the capacity deficit and the fire-flow shortfall.
	FireFlow *FireFlowShortfall
}

// FireFlowShortfall is a hydrant that cannot deliver its needed fire flow
// at the residual criterion.
type FireFlowShortfall struct {
	Hydrant   string
	Available hydraulics.Flow
	Needed    hydraulics.Flow
}

// Fraction is the share of the needed flow that is missing:
// (Needed − Available) / Needed, 0 when nothing is missing.
func (f *FireFlowShortfall) Fraction() float64 {
	if f == nil || !(f.Needed > 0) || f.Available >= f.Needed {
		return 0
	}
	return float64((f.Needed - f.Available) / f.Needed)
}

// Result is one pipe's score and rank.
type Result struct {
	Index  int
	ID     string
	Scored bool
	// Sub-scores, 0–100 each (see Breakpoints).
	HeadLoss, Velocity, CFactor, Deficit float64
	// Score is the weighted mean of the sub-scores, 0–100:
	//
	//	Score = Σ wᵢ·subᵢ / Σ wᵢ
	Score float64
	// Rank is 1 for the pipe to replace first and runs 1..n without gaps or
	// shared places over the scored pipes; 0 when not scored.
	Rank int
	// Reasons says in plain words what fails and by how much,
	// "; "-separated, most important first.
	Reasons string
}

// Rank scores every scorable pipe with cfg against lim and ranks them.
// Results come back in input order, one per pipe.
//
// Each pipe gets four sub-scores from cfg's breakpoints:
//
//	head loss  friction slope |Check.Slope|
//	velocity   |Check.Velocity| in m/s
//	C-factor   Pipe.C
//	deficit    Check.Deficit / Check.Capacity
//
// Ranking is by score descending; ties go to the larger deficit flow, then
// to the ID in ascending byte order, then to the lower Index, so the order is
// the same on every run. Scores and deficits are compared on the grids of
// scoreResolution and deficitResolution, so that round-off cannot break a
// tie that the data make. Pipes that are not scorable keep Rank 0 and their
// caller's Reason.
//
// Rank returns an error, and no results, for an invalid cfg, a limit it
// needs (MaxSlope, MaxVelocity) that is not positive, or a scorable pipe
// with a negative or non-finite measure or a capacity that is not positive.
func Rank(pipes []Pipe, cfg Config, lim hydraulics.Limits) ([]Result, error) {
	return rank(pipes, cfg, lim)
}

// Ranking resolutions: scores that agree to scoreResolution points, and
// deficits that agree to deficitResolution m³/s (about 0.00002 gpm), are
// ties. Mains in series with no demand between them carry one flow and so
// one score, which a network solve reproduces only to round-off; without
// the grids that round-off, not the data, would order them.
const (
	scoreResolution   = 1e-6
	deficitResolution = 1e-9
)

// tieKey is x on a grid of the given step: a transitive comparison key
// under which values that differ by round-off (almost always) agree.
func tieKey(x, step float64) float64 { return math.Round(x / step) }

// rankKey is what the rankings compare for one entry: two tie keys, higher
// first, then the ID in byte order, the Index and the entry's position,
// lower first.
type rankKey struct {
	first, second float64
	id            string
	index, pos    int
}

// rankedPositions returns the positions of keys in rank order; keys must be
// in ascending pos. The tie keys are worked out once, not at every
// comparison, and the order is total (the position decides last), so an
// unstable sort gives what a stable one would. On a million entries with
// many ties (BenchmarkPriorityRanks1M) PriorityRanks took 0.64–0.67 s on one core, 0.42 s on two (sortOnCores),
// against 1.06 s for the stable sort that worked the keys out in each
// comparison.
func rankedPositions(keys []rankKey) []int {
	order := make([]int32, len(keys))
	for k := range order {
		order[k] = int32(k)
	}
	sortOnCores(order, func(a, b int32) int {
		ka, kb := &keys[a], &keys[b]
		if c := cmp.Compare(kb.first, ka.first); c != 0 {
			return c
		}
		if c := cmp.Compare(kb.second, ka.second); c != 0 {
			return c
		}
		if c := strings.Compare(ka.id, kb.id); c != 0 {
			return c
		}
		if c := cmp.Compare(ka.index, kb.index); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	})
	out := make([]int, len(keys))
	for k, o := range order {
		out[k] = keys[o].pos
	}
	return out
}

// sortOnCores sorts s by the total order cmp, as slices.SortFunc does, on
// up to GOMAXPROCS cores: the halves are sorted at once and merged, down
// to runs of sortOnCoresMin. With a total order every sort gives the same
// result, so the split does not show in it.
func sortOnCores(s []int32, cmp func(a, b int32) int) {
	parts := 1
	for parts < runtime.GOMAXPROCS(0) {
		parts *= 2
	}
	sortInParts(s, make([]int32, len(s)), cmp, parts)
}

// sortOnCoresMin is the shortest run sortOnCores splits (common practice:
// below some thousands of entries a goroutine costs more than it saves).
const sortOnCoresMin = 1 << 14

// sortInParts sorts s with parts goroutines, buf (as long as s) holding
// the merge.
func sortInParts(s, buf []int32, cmp func(a, b int32) int, parts int) {
	if parts < 2 || len(s) < 2*sortOnCoresMin {
		slices.SortFunc(s, cmp)
		return
	}
	h := len(s) / 2
	var wg sync.WaitGroup
	wg.Go(func() { sortInParts(s[:h], buf[:h], cmp, parts/2) })
	sortInParts(s[h:], buf[h:], cmp, parts-parts/2)
	wg.Wait()
	a, b, k := s[:h], s[h:], 0
	for len(a) > 0 && len(b) > 0 {
		if cmp(b[0], a[0]) < 0 {
			buf[k], b = b[0], b[1:]
		} else {
			buf[k], a = a[0], a[1:]
		}
		k++
	}
	k += copy(buf[k:], a)
	copy(buf[k:], b)
	copy(s, buf)
}

func rank(pipes []Pipe, cfg Config, lim hydraulics.Limits) ([]Result, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if err := checkLimits(lim); err != nil {
		return nil, err
	}
	results := make([]Result, len(pipes))
	var keys []rankKey // of the scored pipes
	for i, p := range pipes {
		if !p.Scorable {
			results[i] = Result{Index: p.Index, ID: p.ID, Reasons: p.Reason}
			continue
		}
		if err := checkPipe(p); err != nil {
			return nil, err
		}
		results[i] = score(p, cfg, lim)
		keys = append(keys, rankKey{first: tieKey(results[i].Score, scoreResolution),
			second: tieKey(float64(p.Check.Deficit), deficitResolution), id: results[i].ID, index: results[i].Index, pos: i})
	}
	for place, i := range rankedPositions(keys) {
		results[i].Rank = place + 1
	}
	return results, nil
}

// score returns the sub-scores, score and reasons of a checked, scorable pipe.
func score(p Pipe, cfg Config, lim hydraulics.Limits) Result {
	r := Result{
		Index:    p.Index,
		ID:       p.ID,
		Scored:   true,
		HeadLoss: cfg.HeadLoss.Score(math.Abs(p.Check.Slope)),
		Velocity: cfg.Velocity.Score(math.Abs(float64(p.Check.Velocity))),
		CFactor:  cfg.CFactor.Score(p.C),
		Deficit:  cfg.Deficit.Score(math.Max(deficitFraction(p.Check), p.FireFlow.Fraction())),
	}
	w := cfg.Weights
	r.Score = (w.HeadLoss*r.HeadLoss + w.Velocity*r.Velocity + w.CFactor*r.CFactor + w.Deficit*r.Deficit) / w.Sum()
	r.Reasons = reasons(p, r, cfg, lim)
	return r
}

// deficitFraction returns the deficit as a fraction of the capacity at the
// criterion slope: Deficit / Capacity (0.5 = carries 150 % of capacity).
func deficitFraction(c hydraulics.PipeCheck) float64 {
	return float64(c.Deficit / c.Capacity)
}

func checkLimits(lim hydraulics.Limits) error {
	if !(lim.MaxSlope > 0) || math.IsInf(lim.MaxSlope, 1) {
		return fmt.Errorf("scoring: limits: criterion head loss must be positive and finite, got %s", formatPlain(lim.MaxSlope))
	}
	v := float64(lim.MaxVelocity)
	if !(v > 0) || math.IsInf(v, 1) {
		return fmt.Errorf("scoring: limits: criterion velocity must be positive and finite, got %s m/s", formatPlain(v))
	}
	return nil
}

// checkPipe rejects measures that would make a score NaN or meaningless.
// Slope and velocity are scored by magnitude, so their sign is free.
func checkPipe(p Pipe) error {
	measures := []struct {
		name   string
		x      float64
		signed bool
	}{
		{"C", p.C, false},
		{"slope", p.Check.Slope, true},
		{"velocity", float64(p.Check.Velocity), true},
		{"capacity", float64(p.Check.Capacity), false},
		{"deficit", float64(p.Check.Deficit), false},
	}
	for _, m := range measures {
		if math.IsNaN(m.x) || math.IsInf(m.x, 0) || (m.x < 0 && !m.signed) {
			return fmt.Errorf("scoring: pipe %q (index %d): %s is %s, want a finite number ≥ 0", p.ID, p.Index, m.name, formatPlain(m.x))
		}
	}
	if p.Check.Capacity == 0 {
		return fmt.Errorf("scoring: pipe %q (index %d): capacity is zero", p.ID, p.Index)
	}
	return nil
}
