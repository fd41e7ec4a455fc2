package scoring

import (
	"math"
	"strings"
	"testing"

	"headroom/hydraulics"
)

func TestBreakpointsScore(t *testing.T) {
	// Expected values worked by hand from sub = 100·clamp((x − Good)/(Poor − Good), 0, 1).
	headLoss := Breakpoints{Good: 0.005, Poor: 0.020}
	velocity := Breakpoints{Good: 0.9144, Poor: 2.4384} // 3 and 8 ft/s in m/s
	cFactor := Breakpoints{Good: 120, Poor: 60}         // inverted: low C is bad
	cases := []struct {
		name string
		b    Breakpoints
		x    float64
		want float64
	}{
		{"head loss at good", headLoss, 0.005, 0},
		{"head loss below good clamps to 0", headLoss, 0.002, 0},
		{"head loss midway", headLoss, 0.0125, 50},             // 0.0075/0.015 = 0.5
		{"head loss at 10 ft/kft", headLoss, 0.010, 100.0 / 3}, // 0.005/0.015 = 1/3
		{"head loss at poor", headLoss, 0.020, 100},
		{"head loss above poor clamps to 100", headLoss, 0.030, 100},
		{"velocity 5 ft/s", velocity, 1.524, 40}, // (5 − 3)/(8 − 3) = 0.4
		{"C above good clamps to 0", cFactor, 130, 0},
		{"C at good", cFactor, 120, 0},
		{"C 100", cFactor, 100, 100.0 / 3}, // (100 − 120)/(60 − 120) = 1/3
		{"C midway", cFactor, 90, 50},      // −30/−60 = 0.5
		{"C at poor", cFactor, 60, 100},
		{"C below poor clamps to 100", cFactor, 40, 100},
		{"deficit of twice capacity clamps", Breakpoints{0, 1}, 2.5, 100},
		{"deficit of a quarter", Breakpoints{0, 1}, 0.25, 25},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if got := tc.b.Score(tc.x); math.Abs(got-tc.want) > 1e-9 {
				t.Errorf("Score(%g) = %.12f, want %.12f", tc.x, got, tc.want)
			}
		})
	}
}

func TestWeightsNormalised(t *testing.T) {
	cases := []struct {
		name string
		w    Weights
		want Weights
	}{
		{"equal", Weights{1, 1, 1, 1}, Weights{0.25, 0.25, 0.25, 0.25}},
		{"defaults already sum to 1", Weights{0.35, 0.15, 0.20, 0.30}, Weights{0.35, 0.15, 0.20, 0.30}},
		{"two of four", Weights{2, 0, 0, 6}, Weights{0.25, 0, 0, 0.75}}, // 2/8, 6/8
		{"all zero stays zero", Weights{}, Weights{}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got := tc.w.Normalised()
			g := []float64{got.HeadLoss, got.Velocity, got.CFactor, got.Deficit}
			w := []float64{tc.want.HeadLoss, tc.want.Velocity, tc.want.CFactor, tc.want.Deficit}
			for i := range g {
				if math.Abs(g[i]-w[i]) > 1e-12 {
					t.Errorf("Normalised() = %+v, want %+v", got, tc.want)
					break
				}
			}
		})
	}
}

func TestDefaultConfig(t *testing.T) {
	c := DefaultConfig()
	if err := c.Validate(); err != nil {
		t.Fatalf("DefaultConfig().Validate() = %v", err)
	}
	// The documented defaults: 3 and 8 ft/s are 0.9144 and 2.4384 m/s (1 ft = 0.3048 m exactly).
	if math.Abs(c.Velocity.Good-0.9144) > 1e-12 || math.Abs(c.Velocity.Poor-2.4384) > 1e-12 {
		t.Errorf("velocity breakpoints = %+v m/s, want {0.9144 2.4384}", c.Velocity)
	}
	if s := c.Weights.Sum(); math.Abs(s-1) > 1e-12 {
		t.Errorf("default weights sum to %g, want 1", s)
	}
	if c.Units != hydraulics.US {
		t.Errorf("Units = %v, want us", c.Units)
	}
}

func TestValidate(t *testing.T) {
	cases := []struct {
		name   string
		modify func(*Config)
		want   string // the error message, exactly
	}{
		{"negative weight", func(c *Config) { c.Weights.Velocity = -1 },
			"scoring: weights.velocity is negative (-1)"},
		{"NaN weight", func(c *Config) { c.Weights.HeadLoss = math.NaN() },
			"scoring: weights.headloss is not a finite number"},
		{"infinite weight", func(c *Config) { c.Weights.Deficit = math.Inf(1) },
			"scoring: weights.deficit is not a finite number"},
		{"all zero weights", func(c *Config) { c.Weights = Weights{} },
			"scoring: weights are all zero; give at least one a positive weight"},
		{"good equals poor", func(c *Config) { c.CFactor = Breakpoints{100, 100} },
			"scoring: c_factor.good equals c_factor.poor (100); they must differ"},
		{"NaN breakpoint", func(c *Config) { c.HeadLoss.Poor = math.NaN() },
			"scoring: headloss.poor is not a finite number"},
		{"infinite breakpoint", func(c *Config) { c.Deficit.Good = math.Inf(-1) },
			"scoring: deficit.good is not a finite number"},
		{"unknown units", func(c *Config) { c.Units = 7 },
			"scoring: units is 7, want us (0) or si (1)"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c := DefaultConfig()
			tc.modify(&c)
			err := c.Validate()
			if err == nil {
				t.Fatalf("Validate() = nil, want %q", tc.want)
			}
			if err.Error() != tc.want {
				t.Errorf("Validate() = %q, want %q", err, tc.want)
			}
		})
	}
	t.Run("one positive weight is enough", func(t *testing.T) {
		c := DefaultConfig()
		c.Weights = Weights{CFactor: 0.5}
		if err := c.Validate(); err != nil {
			t.Errorf("Validate() = %v, want nil", err)
		}
	})
	t.Run("inverted breakpoints are valid", func(t *testing.T) {
		c := DefaultConfig()
		c.HeadLoss = Breakpoints{Good: 0.02, Poor: 0.005}
		if err := c.Validate(); err != nil {
			t.Errorf("Validate() = %v, want nil", err)
		}
	})
	t.Run("prefix", func(t *testing.T) {
		c := DefaultConfig()
		c.Weights.CFactor = -0.5
		if err := c.Validate(); err == nil || !strings.HasPrefix(err.Error(), "scoring: weights.c_factor") {
			t.Errorf("Validate() = %v, want a scoring: weights.c_factor error", err)
		}
	})
}
