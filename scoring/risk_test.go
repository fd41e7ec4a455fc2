package scoring

import (
	"math"
	"testing"

	"headroom/hydraulics"
)

// TestScaleEdges: a rising scale steps up at each edge and a falling one
// down (DOMAIN.md §7.1: factors scored 1–5).
func TestScaleEdges(t *testing.T) {
	up := Scale{Edges: [4]float64{1, 2, 3, 4}}
	down := Scale{Edges: [4]float64{110, 90, 75, 60}, Descending: true}
	for _, tc := range []struct {
		s    Scale
		x    float64
		want float64
	}{
		{up, 0.5, 1}, {up, 1, 2}, {up, 2.5, 3}, {up, 3.999, 4}, {up, 4, 5}, {up, 99, 5},
		{down, 130, 1}, {down, 110, 2}, {down, 89, 3}, {down, 75, 4}, {down, 60, 5}, {down, 20, 5},
	} {
		if got := tc.s.Score(tc.x); got != tc.want {
			t.Errorf("%+v at %g: %g, want %g", tc.s, tc.x, got, tc.want)
		}
	}
	if !math.IsNaN(up.Score(math.NaN())) {
		t.Error("an unknown measure must score NaN")
	}
}

// TestAssessRiskByHand: a 1925 cast-iron 6-in main with 40 breaks per 100
// mi per year, C 62, 300 gpm at peak hour, 400 ft from a school, under a
// local street, with the default factors (DefaultRiskConfig):
//
//	likelihood = 0.25·5 (age 101/100 yr) + 0.2·4 (CI) + 0.4·4 (40 /100 mi/yr) + 0.15·4 (C 62) = 4.25
//	consequence = 0.3·2 (6 in) + 0.3·3 (300 gpm) + 0.25·4 (400 ft) + 0.15·2 (local) = 2.80
//	risk = 4.25 × 2.80 = 11.9; risk points 100·10.9/24 = 45.4167
//
// (risk = likelihood × consequence, each a weighted mean of 1–5 factor
// scores: DOMAIN.md §7.1).
func TestAssessRiskByHand(t *testing.T) {
	c := DefaultRiskConfig()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	p := RiskPipe{Age: 101, Material: "ci", BreakRate: 40.0 / 100 / float64(hydraulics.Mile), C: 62,
		Diameter: 6 * 0.0254, Flow: 300 * cubicMetresPerSecondPerGPM, FacilityDistance: 400 * metresPerFoot,
		Road: "Local", HasRoad: true, HasBreaks: true}
	r := AssessRisk(p, c)
	if math.Abs(r.Likelihood-4.25) > 1e-12 || math.Abs(r.Consequence-2.8) > 1e-12 || math.Abs(r.Value-11.9) > 1e-12 {
		t.Fatalf("likelihood %g, consequence %g, risk %g; want 4.25, 2.80, 11.9 (factors %+v)", r.Likelihood, r.Consequence, r.Value, r)
	}
	if got := RiskPoints(r.Value); math.Abs(got-45.416666666666664) > 1e-9 {
		t.Errorf("risk points %g, want 45.4167", got)
	}
	if got := Priority(r.Value, 60, c); math.Abs(got-(45.416666666666664+60)/2) > 1e-9 {
		t.Errorf("priority %g, want the mean of 45.42 and 60", got)
	}
	// Without a break layer or a road field those factors drop out and
	// the weights renormalise: likelihood (1.25+0.8+0.6)/0.6 = 4.41667.
	p.HasBreaks, p.HasRoad = false, false
	r = AssessRisk(p, c)
	if want := (1.25 + 0.8 + 0.6) / 0.6; math.Abs(r.Likelihood-want) > 1e-12 {
		t.Errorf("likelihood without breaks %g, want %g", r.Likelihood, want)
	}
	if want := (0.6 + 0.9 + 1.0) / 0.85; math.Abs(r.Consequence-want) > 1e-12 {
		t.Errorf("consequence without road class %g, want %g", r.Consequence, want)
	}
}

// TestRiskConfigValidate: bad edges, scores and weights are refused.
func TestRiskConfigValidate(t *testing.T) {
	for name, edit := range map[string]func(*RiskConfig){
		"edges not rising":  func(c *RiskConfig) { c.Diameter.Scale.Edges[2] = c.Diameter.Scale.Edges[1] },
		"edges not falling": func(c *RiskConfig) { c.CFactor.Scale.Edges = [4]float64{60, 75, 90, 110} },
		"score above 5":     func(c *RiskConfig) { c.Material.Scores["CI"] = 6 },
		"negative weight":   func(c *RiskConfig) { c.Flow.Weight = -1 },
		"no likelihood": func(c *RiskConfig) {
			c.AgeShare.Weight, c.Material.Weight, c.BreakRate.Weight, c.CFactor.Weight = 0, 0, 0, 0
		},
		"no priority weight": func(c *RiskConfig) { c.RiskWeight, c.PerformanceWeight = 0, 0 },
		"zero life":          func(c *RiskConfig) { c.ExpectedLife["PVC"] = 0 },
	} {
		c := DefaultRiskConfig()
		edit(&c)
		if c.Validate() == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}

// TestPriorityRanks: highest priority first, ties to the higher
// performance, then the ID; unused entries get 0.
func TestPriorityRanks(t *testing.T) {
	ranks := PriorityRanks([]float64{50, 70, 50, 50, 90}, []float64{10, 0, 20, 10, 0},
		[]string{"b", "x", "c", "a", "y"}, []bool{true, true, true, true, false})
	want := []int{4, 1, 2, 3, 0}
	for i := range want {
		if ranks[i] != want[i] {
			t.Fatalf("ranks %v, want %v", ranks, want)
		}
	}
}
