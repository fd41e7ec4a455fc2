package scoring

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// UnitCost is the construction cost per metre of new main up to a
// diameter: a main of diameter D takes the first row with D ≤ UpTo.
type UnitCost struct {
	UpTo     float64 // metres (nominal diameter)
	PerMetre float64 // dollars per metre
}

// CostTable prices replacement mains (DOMAIN.md §7.4: cost per foot by
// diameter, times a factor for the surface that is cut and restored, plus
// a fixed cost per project).
type CostTable struct {
	// Rows, by ascending UpTo; a main larger than the last row takes the
	// last row's cost scaled by diameter (PerMetre·D/UpTo), as unit costs
	// grow about in proportion to diameter in the §7.4 table.
	Rows []UnitCost
	// SurfaceFactor multiplies the cost per metre by surface or road class
	// (any case); a class the table lacks, or no class, takes 1.
	SurfaceFactor map[string]float64
	// PerProject is added once per project: mobilisation, design, traffic
	// control (dollars).
	PerProject float64
}

// Validate reports the first invalid setting.
func (t CostTable) Validate() error {
	if len(t.Rows) == 0 {
		return fmt.Errorf("costs: no cost row")
	}
	for k, r := range t.Rows {
		if !(r.UpTo > 0) || !(r.PerMetre >= 0) || math.IsInf(r.PerMetre, 0) {
			return fmt.Errorf("costs: row %d (up to %g m, %g per m): the diameter must be positive and the cost a number ≥ 0", k+1, r.UpTo, r.PerMetre)
		}
		if k > 0 && !(r.UpTo > t.Rows[k-1].UpTo) {
			return fmt.Errorf("costs: rows must rise in diameter (row %d, %g m, after %g m)", k+1, r.UpTo, t.Rows[k-1].UpTo)
		}
	}
	for k, f := range t.SurfaceFactor {
		if !(f > 0) || math.IsInf(f, 0) {
			return fmt.Errorf("costs: surface factor %g for %q is not a positive number", f, k)
		}
	}
	if !(t.PerProject >= 0) || math.IsInf(t.PerProject, 0) {
		return fmt.Errorf("costs: cost per project %g is not a number ≥ 0", t.PerProject)
	}
	return nil
}

// PerMetre returns the cost per metre of a main of diameter d (metres)
// under the given surface class. The rows must rise (see Validate).
func (t CostTable) PerMetre(d float64, surface string) float64 {
	rows := t.Rows
	cost := 0.0
	if i := slices.IndexFunc(rows, func(r UnitCost) bool { return d <= r.UpTo*(1+1e-9) }); i >= 0 {
		cost = rows[i].PerMetre
	} else {
		last := rows[len(rows)-1]
		cost = last.PerMetre * d / last.UpTo
	}
	return cost * t.surface(surface)
}

// surface is the factor of a surface class.
func (t CostTable) surface(class string) float64 {
	class = strings.TrimSpace(class)
	if class == "" {
		return 1
	}
	for k, f := range t.SurfaceFactor {
		if strings.EqualFold(k, class) {
			return f
		}
	}
	return 1
}

// DefaultCostTable returns invented demonstration figures in the range of
// DOMAIN.md §7.4's rough 2020s all-in costs ($200–500/ft at 6–8 in,
// $300–650 at 10–12, $500–1,200 at 16–24, $1,000+ at 30 in and up). They
// are not any utility's prices: replace them with local bid tabulations.
//
//	up to 6 in $260/ft, 8 in $300, 10 in $360, 12 in $420, 16 in $600,
//	20 in $780, 24 in $950, 30 in $1,300, 36 in $1,600; surface factors
//	arterial 1.4, collector 1.2, local 1.0, unpaved 0.8; $75,000 per project.
func DefaultCostTable() CostTable {
	perFoot := func(in, dollars float64) UnitCost {
		return UnitCost{UpTo: in * 0.0254, PerMetre: dollars / metresPerFoot}
	}
	return CostTable{
		Rows: []UnitCost{perFoot(6, 260), perFoot(8, 300), perFoot(10, 360), perFoot(12, 420), perFoot(16, 600),
			perFoot(20, 780), perFoot(24, 950), perFoot(30, 1300), perFoot(36, 1600)},
		SurfaceFactor: map[string]float64{"arterial": 1.4, "collector": 1.2, "local": 1.0, "unpaved": 0.8},
		PerProject:    75000,
	}
}
