package scoring

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"headroom/hydraulics"
)

// Scale turns a measure into a factor score of 1 to 5 (DOMAIN.md §7.1:
// each likelihood and consequence factor is scored 1–5). Edges are the
// four values at which the score steps up: a measure below Edges[0]
// scores 1, one at or above Edges[3] scores 5. With Descending the edges
// run downwards (a lower measure is worse, as for C or for the distance
// to a hospital): a measure above Edges[0] scores 1, one at or below
// Edges[3] scores 5.
type Scale struct {
	Edges      [4]float64
	Descending bool
}

// Score returns the 1–5 score of x. A NaN x (not known) scores NaN.
func (s Scale) Score(x float64) float64 {
	if math.IsNaN(x) {
		return math.NaN()
	}
	score := 1.0
	for _, e := range s.Edges {
		if (!s.Descending && x >= e) || (s.Descending && x <= e) {
			score++
		}
	}
	return score
}

func (s Scale) validate(name string) error {
	for k := 1; k < len(s.Edges); k++ {
		a, b := s.Edges[k-1], s.Edges[k]
		if math.IsNaN(a) || math.IsNaN(b) || (!s.Descending && !(b > a)) || (s.Descending && !(b < a)) {
			order := "rise"
			if s.Descending {
				order = "fall"
			}
			return fmt.Errorf("%s: the four edges %v must %s strictly", name, s.Edges, order)
		}
	}
	return nil
}

// RiskFactor is one weighted factor of likelihood or consequence.
type RiskFactor struct {
	Weight float64 // relative; 0 leaves the factor out
	Scale  Scale
}

// ClassFactor scores a class (a material, a road class) from a table, 1–5;
// a class the table lacks scores Default. Classes match in any case.
type ClassFactor struct {
	Weight  float64
	Scores  map[string]float64
	Default float64
}

// Score returns the class's score.
func (f ClassFactor) Score(class string) float64 {
	for k, v := range f.Scores {
		if strings.EqualFold(k, strings.TrimSpace(class)) {
			return v
		}
	}
	return f.Default
}

// RiskConfig holds the factors of the likelihood and the consequence of
// failure and the weights that combine risk with hydraulic performance.
// Measures are SI: metres, m³/s, breaks per metre per year.
type RiskConfig struct {
	// Likelihood of failure.
	AgeShare  RiskFactor  // age as a share of the material's expected life
	Material  ClassFactor // material
	BreakRate RiskFactor  // breaks per metre per year in the record
	CFactor   RiskFactor  // the derated Hazen-Williams C (descending)
	// ExpectedLife is years of service by material (any case); a material
	// the table lacks takes DefaultLife.
	ExpectedLife map[string]float64
	DefaultLife  float64

	// Consequence of failure.
	Diameter RiskFactor  // metres
	Flow     RiskFactor  // |flow| carried at peak hour, m³/s: the customers and area behind the main
	Facility RiskFactor  // distance to the nearest critical facility, metres (descending)
	Road     ClassFactor // surface or road class

	// Priority = (RiskWeight·riskPoints + PerformanceWeight·performance)
	// / (RiskWeight + PerformanceWeight); see Priority.
	RiskWeight, PerformanceWeight float64
}

// Metres per mile and per foot, for the defaults (exact, DOMAIN.md §3.7).
const (
	metresPerFoot              = 0.3048
	cubicMetresPerSecondPerGPM = 0.003785411784 / 60
)

// DefaultRiskConfig returns the documented defaults: common practice with
// no single source (DOMAIN.md §7.1 lists the factors, not their
// breakpoints); tune them to the utility's own records.
//
//   - Age share of expected life: 1 below 0.25, 2 from 0.25, 3 from 0.5,
//     4 from 0.75, 5 at 1.0 and beyond. Expected life (years): CI 100,
//     DI 100, STL 80, AC 70, PVC 100, HDPE 100, others 80 — planning
//     figures of the order AWWA's "Buried No Longer" uses (from memory).
//   - Material: CI 4, AC 3, STL 3, DI 2, PVC 1, HDPE 1, unknown 3 (the
//     North American break-rate order of DOMAIN.md §7.3).
//   - Break rate: 1 below 5, 2 from 5, 3 from 15, 4 from 30, 5 from 60
//     breaks per 100 miles per year (the §7.3 survey rates: PVC ≈ 2.6,
//     all mains ≈ 11–14, CI ≈ 24–34; 25–30 is a common screening trigger).
//   - C-factor: 1 above 110, 2 at or below 110, 3 at 90, 4 at 75, 5 at 60.
//   - Diameter: 1 below 6 in, 2 from 6, 3 from 10, 4 from 16, 5 from 24
//     (distribution, large distribution, transmission).
//   - Flow carried at peak hour: 1 below 50 gpm, 2 from 50, 3 from 200,
//     4 from 750, 5 from 2,000 gpm.
//   - Critical facility: 1 beyond 2,000 ft, 2 within 2,000, 3 within
//     1,000, 4 within 500, 5 within 150 ft.
//   - Road class: arterial 5, collector 3, local 2, unpaved 1, unknown 2.
//   - Likelihood weights: break rate 0.4, age 0.25, material 0.2, C 0.15;
//     consequence weights: diameter 0.3, flow 0.3, facility 0.25, road 0.15.
//   - Priority: risk and performance weighted equally.
func DefaultRiskConfig() RiskConfig {
	perMileYear := func(per100mi float64) float64 { return per100mi / 100 / float64(hydraulics.Mile) }
	inch := 0.0254
	gpm := cubicMetresPerSecondPerGPM
	ft := metresPerFoot
	return RiskConfig{
		AgeShare: RiskFactor{0.25, Scale{Edges: [4]float64{0.25, 0.5, 0.75, 1.0}}},
		Material: ClassFactor{Weight: 0.2, Default: 3,
			Scores: map[string]float64{"CI": 4, "AC": 3, "STL": 3, "DI": 2, "PVC": 1, "HDPE": 1}},
		BreakRate:    RiskFactor{0.4, Scale{Edges: [4]float64{perMileYear(5), perMileYear(15), perMileYear(30), perMileYear(60)}}},
		CFactor:      RiskFactor{0.15, Scale{Edges: [4]float64{110, 90, 75, 60}, Descending: true}},
		ExpectedLife: map[string]float64{"CI": 100, "DI": 100, "STL": 80, "AC": 70, "PVC": 100, "HDPE": 100},
		DefaultLife:  80,
		Diameter:     RiskFactor{0.3, Scale{Edges: [4]float64{6 * inch, 10 * inch, 16 * inch, 24 * inch}}},
		Flow:         RiskFactor{0.3, Scale{Edges: [4]float64{50 * gpm, 200 * gpm, 750 * gpm, 2000 * gpm}}},
		Facility:     RiskFactor{0.25, Scale{Edges: [4]float64{2000 * ft, 1000 * ft, 500 * ft, 150 * ft}, Descending: true}},
		Road: ClassFactor{Weight: 0.15, Default: 2,
			Scores: map[string]float64{"arterial": 5, "collector": 3, "local": 2, "unpaved": 1}},
		RiskWeight: 0.5, PerformanceWeight: 0.5,
	}
}

// Validate reports the first invalid setting.
func (c RiskConfig) Validate() error {
	factors := []struct {
		name string
		f    RiskFactor
	}{{"age share", c.AgeShare}, {"break rate", c.BreakRate}, {"C-factor", c.CFactor},
		{"diameter", c.Diameter}, {"flow", c.Flow}, {"critical facility", c.Facility}}
	for _, f := range factors {
		if f.f.Weight < 0 || math.IsNaN(f.f.Weight) {
			return fmt.Errorf("risk: %s weight %g is negative", f.name, f.f.Weight)
		}
		if err := f.f.Scale.validate("risk: " + f.name); err != nil {
			return err
		}
	}
	for _, f := range []struct {
		name string
		f    ClassFactor
	}{{"material", c.Material}, {"road class", c.Road}} {
		if f.f.Weight < 0 || math.IsNaN(f.f.Weight) {
			return fmt.Errorf("risk: %s weight %g is negative", f.name, f.f.Weight)
		}
		for k, v := range f.f.Scores {
			if !(v >= 1 && v <= 5) {
				return fmt.Errorf("risk: %s score %g for %q is not in 1–5", f.name, v, k)
			}
		}
		if !(f.f.Default >= 1 && f.f.Default <= 5) {
			return fmt.Errorf("risk: %s default score %g is not in 1–5", f.name, f.f.Default)
		}
	}
	if c.AgeShare.Weight+c.Material.Weight+c.BreakRate.Weight+c.CFactor.Weight <= 0 {
		return errors.New("risk: every likelihood weight is zero")
	}
	if c.Diameter.Weight+c.Flow.Weight+c.Facility.Weight+c.Road.Weight <= 0 {
		return errors.New("risk: every consequence weight is zero")
	}
	for k, v := range c.ExpectedLife {
		if !(v > 0) {
			return fmt.Errorf("risk: expected life %g years for %q is not positive", v, k)
		}
	}
	if !(c.DefaultLife > 0) {
		return fmt.Errorf("risk: default expected life %g years is not positive", c.DefaultLife)
	}
	if c.RiskWeight < 0 || c.PerformanceWeight < 0 || !(c.RiskWeight+c.PerformanceWeight > 0) {
		return fmt.Errorf("risk: priority weights %g (risk) and %g (performance) must be ≥ 0 and not both zero", c.RiskWeight, c.PerformanceWeight)
	}
	return nil
}

// RiskPipe is what the risk assessment reads of one main. NaN marks a
// measure that is not known (an unknown install year, no solve); it drops
// out of the weighted mean.
type RiskPipe struct {
	Age       float64 // years in service
	Material  string
	BreakRate float64 // breaks per metre per year
	C         float64
	Diameter  float64 // metres
	Flow      float64 // |flow| at peak hour, m³/s
	// FacilityDistance is the distance to the nearest critical facility
	// in metres; +Inf when none is near or there is no facility layer.
	FacilityDistance float64
	Road             string
	// HasRoad is false when the layer has no road-class field: the factor
	// is left out rather than scored with its default.
	HasRoad bool
	// HasBreaks is false when there is no break layer: the break-rate
	// factor is left out rather than scored as "no breaks".
	HasBreaks bool
}

// Risk is the assessment of one main.
type Risk struct {
	// Factor scores, 1–5 (NaN when left out).
	AgeShare, Material, BreakRate, CFactor float64
	Diameter, Flow, Facility, Road         float64
	Likelihood, Consequence                float64 // weighted means of their factors, 1–5
	Value                                  float64 // Likelihood × Consequence, 1–25
}

// AssessRisk scores one main (DOMAIN.md §7.1): each factor 1–5 from its
// scale, likelihood and consequence the weighted means of their known
// factors (weights renormalised over them), risk their product, 1–25.
// A factor with weight 0, or whose measure is NaN, is left out; when no
// factor of a side is known that side is 3, the middle of the scale.
func AssessRisk(p RiskPipe, c RiskConfig) Risk {
	life := c.DefaultLife
	for k, v := range c.ExpectedLife {
		if strings.EqualFold(k, strings.TrimSpace(p.Material)) {
			life = v
		}
	}
	r := Risk{
		AgeShare:  c.AgeShare.Scale.Score(p.Age / life),
		Material:  c.Material.Score(p.Material),
		CFactor:   c.CFactor.Scale.Score(p.C),
		Diameter:  c.Diameter.Scale.Score(p.Diameter),
		Flow:      c.Flow.Scale.Score(p.Flow),
		Facility:  c.Facility.Scale.Score(p.FacilityDistance),
		BreakRate: math.NaN(), Road: math.NaN(),
	}
	if p.HasBreaks {
		r.BreakRate = c.BreakRate.Scale.Score(p.BreakRate)
	}
	if p.HasRoad {
		r.Road = c.Road.Score(p.Road)
	}
	r.Likelihood = weightedMean([]float64{r.AgeShare, r.Material, r.BreakRate, r.CFactor},
		[]float64{c.AgeShare.Weight, c.Material.Weight, c.BreakRate.Weight, c.CFactor.Weight})
	r.Consequence = weightedMean([]float64{r.Diameter, r.Flow, r.Facility, r.Road},
		[]float64{c.Diameter.Weight, c.Flow.Weight, c.Facility.Weight, c.Road.Weight})
	r.Value = r.Likelihood * r.Consequence
	return r
}

// weightedMean is Σ wᵢxᵢ / Σ wᵢ over the known xᵢ with wᵢ > 0; 3 when there
// is none.
func weightedMean(x, w []float64) float64 {
	var sum, weight float64
	for i := range x {
		if w[i] > 0 && !math.IsNaN(x[i]) {
			sum += w[i] * x[i]
			weight += w[i]
		}
	}
	if weight == 0 {
		return 3
	}
	return sum / weight
}

// RiskPoints maps a risk of 1–25 onto 0–100, the range of the performance
// score: 100·(risk − 1)/24.
func RiskPoints(risk float64) float64 { return 100 * (risk - 1) / 24 }

// Priority combines risk and hydraulic performance (the Score of Rank,
// 0–100) with the planner's weights, 0–100:
//
//	priority = (w_r·RiskPoints(risk) + w_p·performance) / (w_r + w_p)
func Priority(risk, performance float64, c RiskConfig) float64 {
	return (c.RiskWeight*RiskPoints(risk) + c.PerformanceWeight*performance) / (c.RiskWeight + c.PerformanceWeight)
}

// PriorityRanks ranks mains by priority, highest first: ties (on the grid
// of scoreResolution) go to the higher performance score, then to the ID
// in byte order, then to the lower index. Entries with use false get rank
// 0. It returns one rank per entry, 1..n over the used ones.
func PriorityRanks(priority, performance []float64, ids []string, use []bool) []int {
	var keys []rankKey
	for i := range priority {
		if use[i] {
			keys = append(keys, rankKey{first: tieKey(priority[i], scoreResolution),
				second: tieKey(performance[i], scoreResolution), id: ids[i], pos: i})
		}
	}
	ranks := make([]int, len(priority))
	for k, i := range rankedPositions(keys) {
		ranks[i] = k + 1
	}
	return ranks
}
