package scoring

import (
	"cmp"
	"fmt"
	"math"
	"slices"

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

func rank(pipes []Pipe, cfg Config, lim hydraulics.Limits) ([]Result, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if err := checkLimits(lim); err != nil {
		return nil, err
	}
	results := make([]Result, len(pipes))
	var order []int // indices into results of the scored pipes
	for i, p := range pipes {
		if !p.Scorable {
			results[i] = Result{Index: p.Index, ID: p.ID, Reasons: p.Reason}
			continue
		}
		if err := checkPipe(p); err != nil {
			return nil, err
		}
		results[i] = score(p, cfg, lim)
		order = append(order, i)
	}
	slices.SortStableFunc(order, func(a, b int) int {
		ra, rb := results[a], results[b]
		if c := cmp.Compare(tieKey(rb.Score, scoreResolution), tieKey(ra.Score, scoreResolution)); c != 0 {
			return c
		}
		da, db := float64(pipes[a].Check.Deficit), float64(pipes[b].Check.Deficit)
		if c := cmp.Compare(tieKey(db, deficitResolution), tieKey(da, deficitResolution)); c != 0 {
			return c
		}
		if c := cmp.Compare(ra.ID, rb.ID); c != 0 {
			return c
		}
		return cmp.Compare(ra.Index, rb.Index)
	})
	for place, i := range order {
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
