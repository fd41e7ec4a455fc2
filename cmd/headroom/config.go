package main

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"headroom/gis"
	"headroom/hydraulics"
	"headroom/scoring"
)

// Config is the TOML run configuration. Keys that carry a quantity say their
// unit in their name; where both a US and an SI spelling exist (ft / m,
// psi / kPa, ...) either may be given, not both. Paths are relative to the
// config file's folder.
type Config struct {
	Units        string         `toml:"units"`
	AnalysisYear int            `toml:"analysis_year"`
	Pipes        PipeLayer      `toml:"pipes"`
	Sources      SourceLayer    `toml:"sources"`
	Demands      DemandLayer    `toml:"demands"`
	Elevations   ElevationLayer `toml:"elevations"`
	Network      NetworkConfig  `toml:"network"`
	Criteria     CriteriaConfig `toml:"criteria"`
	Solver       SolverConfig   `toml:"solver"`
	Weights      WeightsConfig  `toml:"weights"`
	Scoring      ScoringConfig  `toml:"scoring"`
	Aging        AgingConfig    `toml:"aging"`
	Output       OutputConfig   `toml:"output"`
	Hydrants     HydrantLayer   `toml:"hydrants"`
	FireFlow     FireFlowConfig `toml:"fire_flow"`
	Upsizing     UpsizingConfig `toml:"upsizing"`
	Sizing       SizingConfig   `toml:"sizing"` // sizes.go

	// The replacement program (program.go).
	Breaks     BreakLayer      `toml:"breaks"`
	Facilities FacilityLayer   `toml:"facilities"`
	Risk       RiskConfig      `toml:"risk"`
	Economics  EconomicsConfig `toml:"economics"`
	Projects   ProjectsConfig  `toml:"projects"`
	Costs      CostsConfig     `toml:"costs"`
	Plan       PlanConfig      `toml:"plan"`

	// dir is the folder relative paths are read from; file is the config's
	// own name for messages ("built-in demo" when there is none).
	dir, file string
}

// LayerFile is what every layer section has: the file, the GeoPackage
// table and the coordinate system to assume when the layer declares none.
// Its keys sit directly in the section ([pipes] path = ...).
type LayerFile struct {
	Path  string `toml:"path"`
	Table string `toml:"table"`
	CRS   string `toml:"crs"`
}

// PipeLayer names the pipe layer and its fields.
type PipeLayer struct {
	LayerFile
	Fields PipeFields `toml:"fields"`
	// DiameterIs says what the diameter field holds: "nominal" (default)
	// or "inside" diameters (sizes.go).
	DiameterIs string `toml:"diameter_is"`
}

// PipeFields maps headroom's pipe attributes to the layer's property names.
type PipeFields struct {
	ID           string   `toml:"id"`
	Diameter     string   `toml:"diameter"`
	DiameterUnit string   `toml:"diameter_unit"`
	Material     string   `toml:"material"`
	Class        string   `toml:"class"` // pressure class or dimension ratio: picks the size table (sizes.go)
	InstallYear  string   `toml:"install_year"`
	MeasuredC    string   `toml:"measured_c"`
	Status       string   `toml:"status"`
	ClosedValues []string `toml:"closed_values"`
	CheckValues  []string `toml:"check_values"`
	Zone         string   `toml:"zone"`
	Street       string   `toml:"street"`     // street name: projects follow one street (program.go)
	Surface      string   `toml:"surface"`    // surface or road class: cost factor and consequence (program.go)
	LinedYear    string   `toml:"lined_year"` // year lined or rehabilitated: restarts the age (aging.go)
	Length       string   `toml:"length"`
	LengthUnit   string   `toml:"length_unit"`
	// Flow is each pipe's flow from a model run elsewhere, read with
	// solver.flows = "from_layer" (layerflows.go); FlowUnit is its unit.
	Flow     string `toml:"flow"`
	FlowUnit string `toml:"flow_unit"`
}

// SourceLayer names the fixed-grade supply points.
type SourceLayer struct {
	LayerFile
	Fields SourceFields `toml:"fields"`
}

// SourceFields maps the source attributes.
type SourceFields struct {
	ID        string `toml:"id"`
	Name      string `toml:"name"`
	Grade     string `toml:"grade"`
	GradeUnit string `toml:"grade_unit"`
	SourceControlFields
}

// DemandLayer names the demand points and the peaking factor.
type DemandLayer struct {
	LayerFile
	Fields         DemandFields `toml:"fields"`
	PeakHourFactor float64      `toml:"peak_hour_factor"`
	MaxDayFactor   float64      `toml:"max_day_factor"`
	WarnDistanceFt *float64     `toml:"warn_distance_ft"`
	WarnDistanceM  *float64     `toml:"warn_distance_m"`
	Allocation     string       `toml:"allocation"`
}

// DemandFields maps the demand attributes.
type DemandFields struct {
	ID         string `toml:"id"`
	Demand     string `toml:"demand"`
	DemandUnit string `toml:"demand_unit"`
}

// ElevationLayer names the spot heights and the interpolation.
type ElevationLayer struct {
	LayerFile
	Fields     ElevationFields `toml:"fields"`
	Neighbours int             `toml:"neighbours"`
	Power      float64         `toml:"power"`
}

// ElevationFields maps the elevation attribute.
type ElevationFields struct {
	Elevation     string `toml:"elevation"`
	ElevationUnit string `toml:"elevation_unit"`
}

// NetworkConfig controls topology building.
type NetworkConfig struct {
	SnapToleranceFt *float64 `toml:"snap_tolerance_ft"`
	SnapToleranceM  *float64 `toml:"snap_tolerance_m"`
	SourceSearchFt  *float64 `toml:"source_search_ft"`
	SourceSearchM   *float64 `toml:"source_search_m"`
}

// CriteriaConfig holds the planning criteria for the peak-hour check.
type CriteriaConfig struct {
	MaxHeadlossFtPerKft *float64 `toml:"max_headloss_ft_per_kft"`
	MaxHeadlossMPerKm   *float64 `toml:"max_headloss_m_per_km"`
	MaxVelocityFps      *float64 `toml:"max_velocity_fps"`
	MaxVelocityMps      *float64 `toml:"max_velocity_mps"`
	MinPressurePsi      *float64 `toml:"min_pressure_psi"`
	MinPressureKPa      *float64 `toml:"min_pressure_kpa"`
	MinDiameterIn       *float64 `toml:"min_diameter_in"`
	MinDiameterMm       *float64 `toml:"min_diameter_mm"`
	DesignC             float64  `toml:"design_c"`
}

// SolverConfig controls the Global Gradient Algorithm.
type SolverConfig struct {
	Tolerance     float64 `toml:"tolerance"`
	MaxIterations int     `toml:"max_iterations"`
	// Flows is "solve" (the default) or "from_layer": take each pipe's
	// flow from pipes.fields.flow instead of solving (layerflows.go).
	Flows string `toml:"flows"`
	// Scenarios lists the steady states to solve: "average_day",
	// "max_day", "peak_hour" (all three by default; scenariochoice.go).
	Scenarios []string `toml:"scenarios"`
}

// WeightsConfig are the relative weights of the sub-scores.
type WeightsConfig struct {
	HeadLoss float64 `toml:"headloss"`
	Velocity float64 `toml:"velocity"`
	CFactor  float64 `toml:"c_factor"`
	Deficit  float64 `toml:"deficit"`
}

// ScoringConfig holds the breakpoints of the sub-scores: each scores 0 at
// its good value and 100 at its poor value.
type ScoringConfig struct {
	HeadlossGoodFtPerKft *float64 `toml:"headloss_good_ft_per_kft"`
	HeadlossPoorFtPerKft *float64 `toml:"headloss_poor_ft_per_kft"`
	HeadlossGoodMPerKm   *float64 `toml:"headloss_good_m_per_km"`
	HeadlossPoorMPerKm   *float64 `toml:"headloss_poor_m_per_km"`
	VelocityGoodFps      *float64 `toml:"velocity_good_fps"`
	VelocityPoorFps      *float64 `toml:"velocity_poor_fps"`
	VelocityGoodMps      *float64 `toml:"velocity_good_mps"`
	VelocityPoorMps      *float64 `toml:"velocity_poor_mps"`
	CGood                float64  `toml:"c_good"`
	CPoor                float64  `toml:"c_poor"`
	DeficitGoodFraction  *float64 `toml:"deficit_good_fraction"`
	DeficitPoorFraction  *float64 `toml:"deficit_poor_fraction"`
}

// HydrantLayer names the optional hydrant points. Without it fire flow is
// computed at every junction.
type HydrantLayer struct {
	LayerFile
	Fields HydrantFields `toml:"fields"`
}

// HydrantFields maps the hydrant attributes.
type HydrantFields struct {
	ID             string `toml:"id"`
	NeededFlow     string `toml:"needed_flow"`
	NeededFlowUnit string `toml:"needed_flow_unit"`
	Zone           string `toml:"zone"`

	// LandUse is the hydrant's land-use or zoning class, looked up in
	// fire_flow.needed_gpm_by_land_use (see needed.go).
	LandUse string `toml:"land_use"`
}

// FireFlowConfig is the max-day-plus-fire scenario.
type FireFlowConfig struct {
	// Enabled turns the fire-flow sweep off when false (a pointer: unset
	// means on).
	Enabled         *bool    `toml:"enabled"`
	ResidualPsi     *float64 `toml:"residual_pressure_psi"`
	ResidualKPa     *float64 `toml:"residual_pressure_kpa"`
	NeededGpm       *float64 `toml:"needed_gpm"`
	NeededLps       *float64 `toml:"needed_lps"`
	HydrantSearchFt *float64 `toml:"hydrant_search_ft"`
	HydrantSearchM  *float64 `toml:"hydrant_search_m"`

	// Needed fire flow by land-use class (hydrants.fields.land_use), in gpm
	// or L/s; either may be given, not both (see needed.go).
	NeededGpmByLandUse map[string]float64 `toml:"needed_gpm_by_land_use"`
	NeededLpsByLandUse map[string]float64 `toml:"needed_lps_by_land_use"`
}

// Demand allocations (demands.allocation).
const (
	allocateNearestNode = "nearest_node" // each point to its nearest junction
	allocateAlongPipe   = "along_pipe"   // each point to its nearest pipe, split between its ends by position
	allocateAreas       = "areas"        // polygons, each total spread over the junctions inside by connected pipe length
)

// OutputConfig chooses the formats of the annotated layers; ranked.csv and
// problems.csv are always written.
type OutputConfig struct {
	Formats []string `toml:"formats"`
}

// Output formats of the pipe and node layers.
const (
	formatGeoJSON    = "geojson" // pipes.geojson, nodes.geojson: WGS84 lon/lat (RFC 7946)
	formatGeoPackage = "gpkg"    // pipes.gpkg, nodes.gpkg: the pipe layer's coordinate system
	formatShapefile  = "shp"     // pipes.shp, nodes.shp, hydrants.shp (+ .shx .dbf .prj .cpg) and fields.csv
)

var defaultFormats = []string{formatGeoJSON, formatGeoPackage}

// AgingConfig is the C-factor table by material and age.
type AgingConfig struct {
	UnknownAgeYears float64       `toml:"unknown_age_years"`
	UnknownMaterial string        `toml:"unknown_material"`
	Curves          []CurveConfig `toml:"curve"`
	// Growth, LinedCurve and ZoneFactor: see aging.go.
	Growth     []GrowthConfig     `toml:"growth"`
	LinedCurve string             `toml:"lined_curve"`
	ZoneFactor map[string]float64 `toml:"zone_factor"`
}

// CurveConfig is one material's C by age, linearly interpolated.
type CurveConfig struct {
	Material string       `toml:"material"`
	Aliases  []string     `toml:"aliases"`
	Source   string       `toml:"source"`
	CByAge   [][2]float64 `toml:"c_by_age"`
}

// Defaults of the keys a config may leave out. The criteria defaults are
// common practice (DOMAIN.md §3): 10 ft per 1,000 ft at peak hour, 5 ft/s,
// 40 psi at peak hour; the Ten States Standards floor is 20 psi under all
// conditions, which the fire-flow scenario checks.
const (
	defaultSnapToleranceFt = 0.5
	defaultSourceSearchFt  = 50
	defaultWarnDistanceFt  = 1000
	defaultMaxHeadloss     = 10 // ft per 1,000 ft = m per km
	defaultMaxVelocityFps  = 5
	defaultMinPressurePsi  = 40
	defaultMinDiameterIn   = 6 // Ten States Standards: mains supplying hydrants (DOMAIN.md §3.4)
	// defaultMaxDayFactor is max day ÷ average day: the upper end of the
	// usual 1.5–2.0 (common practice; DOMAIN.md §3.6 gives the range from
	// memory of AWWA M32 and a confirmed district standard of 2.0).
	defaultMaxDayFactor = 2.0
	// defaultResidualPsi is the fire-flow residual criterion: 20 psi, the
	// Ten States Standards' minimum under all flow conditions and the
	// pressure NFPA 291 rates hydrants at (DOMAIN.md §3.1, §4.3).
	defaultResidualPsi = 20
	// defaultNeededGpm is the needed fire flow of a hydrant with none of
	// its own: 1,000 gpm, the International Fire Code's Appendix B figure
	// for one- and two-family dwellings up to 3,600 ft² (DOMAIN.md §4.1; the
	// fire authority's figure replaces it).
	defaultNeededGpm        = 1000
	defaultHydrantSearchFt  = 50
	defaultDesignC          = 130 // conservative long-term C for new PVC or lined DI (common practice)
	defaultNeighbours       = 4
	defaultPower            = 2
	defaultUnknownAgeYears  = 60
	defaultUnknownMaterial  = "CI"
	defaultSolverTolerance  = 1e-8
	defaultSolverIterations = 200
)

// loadConfig reads and validates a TOML config file. Unknown keys are errors:
// a misspelt key would otherwise be silently ignored.
func loadConfig(path string) (*Config, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("reading config: %w (check the --config path)", err)
	}
	cfg, err := decodeConfig(string(b), path)
	if err != nil {
		return nil, err
	}
	cfg.dir = filepath.Dir(path)
	cfg.file = filepath.Base(path)
	return cfg, nil
}

// decodeConfig parses and validates config text; name is used in messages.
func decodeConfig(text, name string) (*Config, error) {
	var cfg Config
	md, err := toml.Decode(text, &cfg)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		keys := make([]string, len(und))
		for i, k := range und {
			keys[i] = k.String()
		}
		return nil, fmt.Errorf("%s: unknown key(s) %s (run `headroom init` for the list of keys)", name, strings.Join(keys, ", "))
	}
	if err := cfg.validate(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return &cfg, nil
}

// validate checks the keys that have no usable default.
func (c *Config) validate() error {
	var errs []error
	if c.Units == "" {
		c.Units = "us"
	}
	if c.Units != "us" && c.Units != "si" {
		errs = append(errs, fmt.Errorf("units = %q: use \"us\" or \"si\"", c.Units))
	}
	if c.AnalysisYear == 0 {
		c.AnalysisYear = time.Now().Year()
	}
	need := func(key, v string) {
		if strings.TrimSpace(v) == "" {
			errs = append(errs, fmt.Errorf("%s is required", key))
		}
	}
	need("pipes.path", c.Pipes.Path)
	need("pipes.fields.id", c.Pipes.Fields.ID)
	need("pipes.fields.diameter", c.Pipes.Fields.Diameter)
	need("pipes.fields.material", c.Pipes.Fields.Material)
	need("pipes.fields.install_year", c.Pipes.Fields.InstallYear)
	need("sources.path", c.Sources.Path)
	need("sources.fields.grade", c.Sources.Fields.Grade)
	need("demands.path", c.Demands.Path)
	need("demands.fields.demand", c.Demands.Fields.Demand)
	need("elevations.path", c.Elevations.Path)
	need("elevations.fields.elevation", c.Elevations.Fields.Elevation)
	if !(c.Demands.PeakHourFactor > 0) || math.IsInf(c.Demands.PeakHourFactor, 0) {
		errs = append(errs, errors.New("demands.peak_hour_factor is required and must be > 0 (peak-hour demand ÷ average-day demand; typically 2.0–4.0; headroom does not guess it)"))
	}
	if c.Demands.PeakHourFactor > 0 {
		if c.Demands.MaxDayFactor == 0 {
			c.Demands.MaxDayFactor = math.Min(defaultMaxDayFactor, c.Demands.PeakHourFactor)
		}
		if f := c.Demands.MaxDayFactor; !(f >= 1) || math.IsInf(f, 0) || f > c.Demands.PeakHourFactor {
			errs = append(errs, fmt.Errorf("demands.max_day_factor = %g: must be at least 1 and at most peak_hour_factor", f))
		}
	}
	switch c.Demands.Allocation {
	case "":
		c.Demands.Allocation = allocateNearestNode
	case allocateNearestNode, allocateAlongPipe, allocateAreas:
	default:
		errs = append(errs, fmt.Errorf("demands.allocation = %q: use %q, %q or %q (polygons)", c.Demands.Allocation, allocateNearestNode, allocateAlongPipe, allocateAreas))
	}
	errs = append(errs, c.layerFlowValidate()...)
	errs = append(errs, c.scenarioValidate()...)
	errs = append(errs, c.sizeValidate()...)
	errs = append(errs, c.cureValidate()...)
	errs = append(errs, c.progValidate()...)
	if c.Elevations.Neighbours == 0 {
		c.Elevations.Neighbours = defaultNeighbours
	}
	if c.Elevations.Power == 0 {
		c.Elevations.Power = defaultPower
	}
	if c.Criteria.DesignC == 0 {
		c.Criteria.DesignC = defaultDesignC
	}
	if c.Aging.UnknownAgeYears == 0 {
		c.Aging.UnknownAgeYears = defaultUnknownAgeYears
	}
	if c.Aging.UnknownMaterial == "" {
		c.Aging.UnknownMaterial = defaultUnknownMaterial
	}
	for _, cu := range c.Aging.Curves {
		if cu.Material == "" || len(cu.CByAge) == 0 {
			errs = append(errs, errors.New("aging.curve: each curve needs material and c_by_age"))
		}
	}
	for _, q := range c.quantities() {
		if _, err := q.value(c.system()); err != nil {
			errs = append(errs, err)
		}
	}
	if _, err := c.needTable(); err != nil {
		errs = append(errs, err)
	}
	errs = append(errs, c.ageValidate()...)
	if _, ok := c.ageModels().Lookup(c.Aging.UnknownMaterial); !ok {
		errs = append(errs, fmt.Errorf("aging.unknown_material = %q is not a material of the aging models", c.Aging.UnknownMaterial))
	}
	if err := c.scoringConfig().Validate(); err != nil {
		errs = append(errs, err)
	}
	if len(c.Output.Formats) == 0 {
		c.Output.Formats = defaultFormats
	}
	for _, f := range c.Output.Formats {
		if !slices.Contains([]string{formatGeoJSON, formatGeoPackage, formatShapefile}, f) {
			errs = append(errs, fmt.Errorf("output.formats: %q is not one of \"geojson\", \"gpkg\", \"shp\"", f))
		}
	}
	for _, l := range append(c.layers(), c.hydrantLayer()) {
		if l.CRS == "" {
			continue
		}
		if _, err := gis.ParseCRS(l.CRS); err != nil {
			errs = append(errs, fmt.Errorf("%s.crs = %q: %w", l.key, l.CRS, err))
		}
	}
	return errors.Join(errs...)
}

// layerConfig is a layer section with its key, for messages.
type layerConfig struct {
	key string
	LayerFile
}

// layers lists the four required layer sections in reading order.
func (c *Config) layers() []layerConfig {
	return []layerConfig{
		{"pipes", c.Pipes.LayerFile},
		{"sources", c.Sources.LayerFile},
		{"demands", c.Demands.LayerFile},
		{"elevations", c.Elevations.LayerFile},
	}
}

// hydrantLayer is the optional hydrant section as a layerConfig.
func (c *Config) hydrantLayer() layerConfig { return layerConfig{"hydrants", c.Hydrants.LayerFile} }

// wants reports whether the config asks for an output format.
func (c *Config) wants(format string) bool { return slices.Contains(c.Output.Formats, format) }

// system is the unit system users read and write.
func (c *Config) system() hydraulics.System {
	if c.Units == "si" {
		return hydraulics.SI
	}
	return hydraulics.US
}

// path resolves a layer path against the config's folder.
func (c *Config) path(p string) string {
	if filepath.IsAbs(p) || c.dir == "" {
		return p
	}
	return filepath.Join(c.dir, p)
}

// quantity is a config key with a US and an SI spelling.
type quantity struct {
	usKey, siKey string
	us, si       *float64
	toSI         [2]float64 // factor from the US and from the SI spelling to SI
	def          float64    // default, in SI
	positive     bool       // must be > 0
}

// value returns the quantity in SI, or an error if both spellings are given.
func (q quantity) value(s hydraulics.System) (float64, error) {
	switch {
	case q.us != nil && q.si != nil:
		return 0, fmt.Errorf("both %s and %s are given: keep one", q.usKey, q.siKey)
	case q.us != nil:
		return q.check(q.usKey, *q.us, *q.us*q.toSI[0])
	case q.si != nil:
		return q.check(q.siKey, *q.si, *q.si*q.toSI[1])
	}
	return q.def, nil
}

func (q quantity) check(key string, raw, v float64) (float64, error) {
	if math.IsNaN(raw) || math.IsInf(raw, 0) {
		return 0, fmt.Errorf("%s = %g: must be a finite number", key, raw)
	}
	if q.positive && !(raw > 0) {
		return 0, fmt.Errorf("%s = %g: must be > 0", key, raw)
	}
	if raw < 0 {
		return 0, fmt.Errorf("%s = %g: must not be negative", key, raw)
	}
	return v, nil
}

// quantities lists every two-spelling key, so validate can check them all.
func (c *Config) quantities() []quantity {
	return []quantity{
		c.snapTolerance(), c.sourceSearch(), c.warnDistance(),
		c.maxHeadloss(), c.maxVelocity(), c.minPressure(), c.minDiameter(),
		c.fireResidual(), c.fireNeeded(), c.hydrantSearch(),
		c.headlossGood(), c.headlossPoor(), c.velocityGood(), c.velocityPoor(),
		c.deficitGood(), c.deficitPoor(),
	}
}

const (
	ft  = float64(hydraulics.Foot)
	in  = float64(hydraulics.Inch)
	gpm = float64(hydraulics.USGallonPerMinute)
	lps = float64(hydraulics.LitrePerSecond)
	mm  = float64(hydraulics.Millimetre)
	fps = float64(hydraulics.FootPerSecond)
	psi = float64(hydraulics.PoundPerSquareInch)
	kPa = float64(hydraulics.Kilopascal)
)

func (c *Config) snapTolerance() quantity {
	n := c.Network
	return quantity{"network.snap_tolerance_ft", "network.snap_tolerance_m", n.SnapToleranceFt, n.SnapToleranceM, [2]float64{ft, 1}, defaultSnapToleranceFt * ft, true}
}
func (c *Config) sourceSearch() quantity {
	n := c.Network
	return quantity{"network.source_search_ft", "network.source_search_m", n.SourceSearchFt, n.SourceSearchM, [2]float64{ft, 1}, defaultSourceSearchFt * ft, true}
}
func (c *Config) warnDistance() quantity {
	d := c.Demands
	return quantity{"demands.warn_distance_ft", "demands.warn_distance_m", d.WarnDistanceFt, d.WarnDistanceM, [2]float64{ft, 1}, defaultWarnDistanceFt * ft, true}
}

// Unit head loss is the same number in ft per 1,000 ft and m per km; SI
// here is the dimensionless slope.
func (c *Config) maxHeadloss() quantity {
	k := c.Criteria
	return quantity{"criteria.max_headloss_ft_per_kft", "criteria.max_headloss_m_per_km", k.MaxHeadlossFtPerKft, k.MaxHeadlossMPerKm, [2]float64{1e-3, 1e-3}, defaultMaxHeadloss * 1e-3, true}
}
func (c *Config) maxVelocity() quantity {
	k := c.Criteria
	return quantity{"criteria.max_velocity_fps", "criteria.max_velocity_mps", k.MaxVelocityFps, k.MaxVelocityMps, [2]float64{fps, 1}, defaultMaxVelocityFps * fps, true}
}
func (c *Config) minPressure() quantity {
	k := c.Criteria
	return quantity{"criteria.min_pressure_psi", "criteria.min_pressure_kpa", k.MinPressurePsi, k.MinPressureKPa, [2]float64{psi, kPa}, defaultMinPressurePsi * psi, false}
}
func (c *Config) minDiameter() quantity {
	k := c.Criteria
	return quantity{"criteria.min_diameter_in", "criteria.min_diameter_mm", k.MinDiameterIn, k.MinDiameterMm, [2]float64{in, mm}, defaultMinDiameterIn * in, false}
}

func (c *Config) fireResidual() quantity {
	f := c.FireFlow
	return quantity{"fire_flow.residual_pressure_psi", "fire_flow.residual_pressure_kpa", f.ResidualPsi, f.ResidualKPa, [2]float64{psi, kPa}, defaultResidualPsi * psi, false}
}

func (c *Config) fireNeeded() quantity {
	f := c.FireFlow
	return quantity{"fire_flow.needed_gpm", "fire_flow.needed_lps", f.NeededGpm, f.NeededLps, [2]float64{gpm, lps}, defaultNeededGpm * gpm, true}
}

func (c *Config) hydrantSearch() quantity {
	f := c.FireFlow
	return quantity{"fire_flow.hydrant_search_ft", "fire_flow.hydrant_search_m", f.HydrantSearchFt, f.HydrantSearchM, [2]float64{ft, 1}, defaultHydrantSearchFt * ft, true}
}

// fireFlowOn reports whether the run computes fire flow.
// With flows from the pipe layer there is no solve to search with, so no
// fire flow either.
func (c *Config) fireFlowOn() bool { return c.fireFlowEnabled() && !c.layerFlowsOn() }

// fireFlowEnabled is the fire_flow.enabled key (unset means on).
func (c *Config) fireFlowEnabled() bool { return c.FireFlow.Enabled == nil || *c.FireFlow.Enabled }

func (c *Config) hydrantSchema() gis.HydrantSchema {
	f := c.Hydrants.Fields
	return gis.HydrantSchema{ID: f.ID, NeededFlow: f.NeededFlow, NeededFlowUnit: f.NeededFlowUnit, Zone: f.Zone}
}

func (c *Config) headlossGood() quantity {
	s := c.Scoring
	return quantity{"scoring.headloss_good_ft_per_kft", "scoring.headloss_good_m_per_km", s.HeadlossGoodFtPerKft, s.HeadlossGoodMPerKm, [2]float64{1e-3, 1e-3}, scoring.DefaultConfig().HeadLoss.Good, false}
}
func (c *Config) headlossPoor() quantity {
	s := c.Scoring
	return quantity{"scoring.headloss_poor_ft_per_kft", "scoring.headloss_poor_m_per_km", s.HeadlossPoorFtPerKft, s.HeadlossPoorMPerKm, [2]float64{1e-3, 1e-3}, scoring.DefaultConfig().HeadLoss.Poor, false}
}
func (c *Config) velocityGood() quantity {
	s := c.Scoring
	return quantity{"scoring.velocity_good_fps", "scoring.velocity_good_mps", s.VelocityGoodFps, s.VelocityGoodMps, [2]float64{fps, 1}, scoring.DefaultConfig().Velocity.Good, false}
}
func (c *Config) velocityPoor() quantity {
	s := c.Scoring
	return quantity{"scoring.velocity_poor_fps", "scoring.velocity_poor_mps", s.VelocityPoorFps, s.VelocityPoorMps, [2]float64{fps, 1}, scoring.DefaultConfig().Velocity.Poor, false}
}

// The deficit fraction has one spelling; both slots point at it.
func (c *Config) deficitGood() quantity {
	s := c.Scoring
	return quantity{"scoring.deficit_good_fraction", "scoring.deficit_good_fraction", s.DeficitGoodFraction, nil, [2]float64{1, 1}, scoring.DefaultConfig().Deficit.Good, false}
}
func (c *Config) deficitPoor() quantity {
	s := c.Scoring
	return quantity{"scoring.deficit_poor_fraction", "scoring.deficit_poor_fraction", s.DeficitPoorFraction, nil, [2]float64{1, 1}, scoring.DefaultConfig().Deficit.Poor, false}
}

// si returns a validated quantity in SI; validate has already rejected errors.
func (c *Config) si(q quantity) float64 {
	v, _ := q.value(c.system())
	return v
}

// limits are the hydraulic criteria of the peak-hour check.
func (c *Config) limits() hydraulics.Limits {
	return hydraulics.Limits{
		MaxSlope:    c.si(c.maxHeadloss()),
		MaxVelocity: hydraulics.Velocity(c.si(c.maxVelocity())),
		MinPressure: hydraulics.Pressure(c.si(c.minPressure())),
		DesignC:     c.Criteria.DesignC,
		Sizes:       c.replacementSizes(),
		MinNominal:  hydraulics.Length(c.si(c.minDiameter())),
	}
}

// scoringConfig turns the weights and breakpoints into scoring's SI form.
func (c *Config) scoringConfig() scoring.Config {
	d := scoring.DefaultConfig()
	sc := scoring.Config{
		Weights:  d.Weights,
		HeadLoss: scoring.Breakpoints{Good: c.si(c.headlossGood()), Poor: c.si(c.headlossPoor())},
		Velocity: scoring.Breakpoints{Good: c.si(c.velocityGood()), Poor: c.si(c.velocityPoor())},
		CFactor:  d.CFactor,
		Deficit:  scoring.Breakpoints{Good: c.si(c.deficitGood()), Poor: c.si(c.deficitPoor())},
		Units:    c.system(),
	}
	if w := c.Weights; w != (WeightsConfig{}) {
		sc.Weights = scoring.Weights{HeadLoss: w.HeadLoss, Velocity: w.Velocity, CFactor: w.CFactor, Deficit: w.Deficit}
	}
	if c.Scoring.CGood != 0 || c.Scoring.CPoor != 0 {
		sc.CFactor = scoring.Breakpoints{Good: c.Scoring.CGood, Poor: c.Scoring.CPoor}
	}
	return sc
}

// agingTable is the built-in table with the config's curves replacing the
// built-in curve of the same material and adding new materials after it.
func (c *Config) agingTable() hydraulics.AgingTable {
	t := hydraulics.DefaultAgingTable()
	for _, cc := range c.Aging.Curves {
		cu := hydraulics.AgingCurve{Material: cc.Material, Aliases: cc.Aliases, Source: cc.Source}
		for _, p := range cc.CByAge {
			cu.Points = append(cu.Points, hydraulics.AgePoint{Age: p[0], C: p[1]})
		}
		i := slices.IndexFunc(t.Curves, func(x hydraulics.AgingCurve) bool {
			return strings.EqualFold(x.Material, cc.Material)
		})
		if i >= 0 {
			t.Curves[i] = cu
		} else {
			t.Curves = append(t.Curves, cu)
		}
	}
	return t
}

// Schemas for the gis readers.

func (c *Config) pipeSchema() gis.PipeSchema {
	f := c.Pipes.Fields
	return gis.PipeSchema{
		ID: f.ID, Diameter: f.Diameter, DiameterUnit: f.DiameterUnit, Material: f.Material,
		InstallYear: f.InstallYear, MeasuredC: f.MeasuredC, Status: f.Status,
		ClosedValues: f.ClosedValues, Zone: f.Zone, Length: f.Length, LengthUnit: f.LengthUnit,
		Street: f.Street, Surface: f.Surface,
		CheckValues: f.CheckValues,
	}
}

func (c *Config) sourceSchema() gis.SourceSchema {
	f := c.Sources.Fields
	return f.ctlSchema(gis.SourceSchema{ID: f.ID, Name: f.Name, Grade: f.Grade, GradeUnit: f.GradeUnit})
}

func (c *Config) demandSchema() gis.DemandSchema {
	f := c.Demands.Fields
	return gis.DemandSchema{ID: f.ID, Demand: f.Demand, DemandUnit: f.DemandUnit}
}

func (c *Config) elevationSchema() gis.ElevationSchema {
	f := c.Elevations.Fields
	return gis.ElevationSchema{Elevation: f.Elevation, ElevationUnit: f.ElevationUnit}
}
