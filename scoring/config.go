package scoring

import (
	"fmt"
	"math"
	"strconv"

	"headroom/hydraulics"
)

// Breakpoints map a measure onto a 0–100 sub-score: 0 at Good, 100 at Poor,
// linear between, clamped outside:
//
//	sub = 100 · clamp((x − Good) / (Poor − Good), 0, 1)
//
// Good may be above Poor (for the C-factor, where low is bad); the same
// formula then scores values below Good. Good == Poor is invalid.
type Breakpoints struct {
	Good, Poor float64
}

// Score returns the sub-score of measure x, in 0–100. A NaN x scores NaN;
// Rank rejects non-finite measures before it calls Score.
func (b Breakpoints) Score(x float64) float64 {
	t := (x - b.Good) / (b.Poor - b.Good)
	switch {
	case t <= 0:
		return 0
	case t >= 1:
		return 100
	}
	return 100 * t
}

// Weights are relative (normalised by their sum); negative is invalid, all
// zero is invalid.
type Weights struct {
	HeadLoss, Velocity, CFactor, Deficit float64
}

// Sum returns HeadLoss + Velocity + CFactor + Deficit.
func (w Weights) Sum() float64 { return w.HeadLoss + w.Velocity + w.CFactor + w.Deficit }

// Normalised returns w divided by its sum, so the fields add up to 1.
// It returns the zero Weights when the sum is not positive.
func (w Weights) Normalised() Weights {
	s := w.Sum()
	if !(s > 0) {
		return Weights{}
	}
	return Weights{w.HeadLoss / s, w.Velocity / s, w.CFactor / s, w.Deficit / s}
}

// Config holds the weights and breakpoints of the priority score.
type Config struct {
	Weights  Weights
	HeadLoss Breakpoints // friction slope, dimensionless (0.010 = 10 ft per 1,000 ft)
	Velocity Breakpoints // m/s (SI inside; callers convert from their config's units)
	CFactor  Breakpoints // Hazen-Williams C
	// Deficit is the deficit as a fraction of the pipe's capacity at the
	// criterion slope (0.5 = the pipe carries 150 % of its capacity).
	Deficit Breakpoints
	Units   hydraulics.System // units of the reason text
}

// DefaultConfig returns the documented defaults. All of them are common
// practice with no single source; tune them to the utility.
//
//   - Head loss: Good 0.005, Poor 0.020 (5 and 20 ft per 1,000 ft). 10 ft/kft is
//     the usual distribution criterion and stricter utilities use 5–8, so a
//     pipe at 5 scores nothing and one at twice the usual criterion scores
//     in full (DOMAIN.md §3.3).
//   - Velocity: Good 3 ft/s, Poor 8 ft/s (0.9144 and 2.4384 m/s). Peak-hour
//     mains normally run at or below 5 ft/s and transmission mains at 3–5;
//     8 ft/s is where some utilities put even the fire-flow limit (DOMAIN.md §3.2).
//   - C-factor: Good 120, Poor 60. 120 is the low end of new-pipe design
//     values and 60 the badly tuberculated old iron of DOMAIN.md §2.1–2.2.
//   - Deficit: Good 0, Poor 1.0. Any flow above capacity starts to count and a
//     pipe carrying twice its capacity scores in full.
//   - Weights: HeadLoss 0.35, Velocity 0.15, CFactor 0.20, Deficit 0.30. Head
//     loss is the planning bottleneck screen and weighs most; the deficit says
//     how much flow the main is short by and comes next; the C-factor stands
//     for condition (tuberculation) that relining or replacement cures; high
//     velocity mostly repeats what head loss says, so it weighs least.
//   - Units: US.
func DefaultConfig() Config {
	return Config{
		Weights:  Weights{HeadLoss: 0.35, Velocity: 0.15, CFactor: 0.20, Deficit: 0.30},
		HeadLoss: Breakpoints{Good: 0.005, Poor: 0.020},
		Velocity: Breakpoints{
			Good: float64(3 * hydraulics.FootPerSecond),
			Poor: float64(8 * hydraulics.FootPerSecond),
		},
		CFactor: Breakpoints{Good: 120, Poor: 60},
		Deficit: Breakpoints{Good: 0, Poor: 1.0},
		Units:   hydraulics.US,
	}
}

// Validate reports the first invalid setting, naming its key: a negative or
// non-finite weight, weights that sum to zero, a non-finite breakpoint,
// breakpoints with Good == Poor, or an unknown unit system.
// Keys: weights.{headloss,velocity,c_factor,deficit},
// {headloss,velocity,c_factor,deficit}.{good,poor}, units.
func (c Config) Validate() error {
	weights := []struct {
		key string
		w   float64
	}{
		{"headloss", c.Weights.HeadLoss},
		{"velocity", c.Weights.Velocity},
		{"c_factor", c.Weights.CFactor},
		{"deficit", c.Weights.Deficit},
	}
	for _, w := range weights {
		switch {
		case math.IsNaN(w.w) || math.IsInf(w.w, 0):
			return fmt.Errorf("scoring: weights.%s is not a finite number", w.key)
		case w.w < 0:
			return fmt.Errorf("scoring: weights.%s is negative (%s)", w.key, formatPlain(w.w))
		}
	}
	if !(c.Weights.Sum() > 0) {
		return fmt.Errorf("scoring: weights are all zero; give at least one a positive weight")
	}
	breaks := []struct {
		key string
		b   Breakpoints
	}{
		{"headloss", c.HeadLoss},
		{"velocity", c.Velocity},
		{"c_factor", c.CFactor},
		{"deficit", c.Deficit},
	}
	for _, b := range breaks {
		if err := b.b.validate(b.key); err != nil {
			return err
		}
	}
	if c.Units != hydraulics.US && c.Units != hydraulics.SI {
		return fmt.Errorf("scoring: units is %d, want us (%d) or si (%d)", int(c.Units), int(hydraulics.US), int(hydraulics.SI))
	}
	return nil
}

func (b Breakpoints) validate(key string) error {
	for _, v := range []struct {
		end string
		x   float64
	}{{"good", b.Good}, {"poor", b.Poor}} {
		if math.IsNaN(v.x) || math.IsInf(v.x, 0) {
			return fmt.Errorf("scoring: %s.%s is not a finite number", key, v.end)
		}
	}
	if b.Good == b.Poor {
		return fmt.Errorf("scoring: %s.good equals %s.poor (%s); they must differ", key, key, formatPlain(b.Good))
	}
	return nil
}

// formatPlain writes x with the fewest digits that read back exactly, for
// echoing a configured value in an error message.
func formatPlain(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }
