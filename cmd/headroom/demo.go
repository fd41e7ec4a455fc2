package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/paulmach/orb/geojson"

	"headroom/demotown"
	"headroom/gis"
)

// The demo town's layer files. They are named for the town so that a run
// whose --out is the demo folder cannot overwrite them.
const (
	demoPipes      = "quillmere-mains.geojson"
	demoSources    = "quillmere-supplies.geojson"
	demoDemands    = "quillmere-demands.geojson"
	demoElevations = "quillmere-spot-heights.geojson"
	demoHydrants   = "quillmere-hydrants.geojson"
	demoBreaks     = "quillmere-breaks.geojson"
	// demoAnnualBudget is the demo town's (invented) yearly main
	// replacement budget, in dollars.
	demoAnnualBudget = 3e6
	demoFacilities   = "quillmere-facilities.geojson"
	demoConfigName   = "headroom.toml"

	// The range of --pipes: the smallest town that holds a whole district,
	// and the largest the issue asks the generator to scale to.
	minDemoPipes = 300
	maxDemoPipes = 1_000_000
)

// demoCommand is `headroom demo --out DIR [--pipes N] [--seed S]`.
func demoCommand(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "", "folder to write the demo town's layers and headroom.toml into (required)")
	pipes := fs.Int("pipes", 0, "number of pipe segments (default: the standard town, about 2,400; up to 1,000,000)")
	seed := fs.Uint64("seed", 1, "random seed of the generator")
	if err := fs.Parse(args); err != nil {
		return usageError{err.Error()}
	}
	if *out == "" {
		return usageError{"--out DIR is required"}
	}
	if *pipes != 0 && (*pipes < minDemoPipes || *pipes > maxDemoPipes) {
		return usageError{fmt.Sprintf("--pipes %d: use %d to %d, or leave it out for the standard town", *pipes, minDemoPipes, maxDemoPipes)}
	}
	town, err := demotown.Generate(demotown.Options{Pipes: *pipes, Seed: *seed})
	if err != nil {
		return err
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return fmt.Errorf("creating %s: %w", *out, err)
	}
	layers := []struct {
		name string
		fc   *geojson.FeatureCollection
	}{{demoPipes, town.Pipes}, {demoSources, town.Sources}, {demoDemands, town.Demands}, {demoElevations, town.Elevations},
		{demoHydrants, town.Hydrants}, {demoBreaks, town.Breaks}, {demoFacilities, town.Facilities}}
	for _, l := range layers {
		path := filepath.Join(*out, l.name)
		if err := gis.WriteCollection(path, l.fc); err != nil {
			return fmt.Errorf("writing %s: %w", path, err)
		}
	}
	var cfgText bytes.Buffer
	if err := writeConfig(&cfgText, demoConfig(town)); err != nil {
		return err
	}
	cfgPath := filepath.Join(*out, demoConfigName)
	if err := gis.WriteFileAtomic(cfgPath, func(w io.Writer) error {
		_, err := w.Write(cfgText.Bytes())
		return err
	}); err != nil {
		return fmt.Errorf("writing %s: %w", cfgPath, err)
	}
	fmt.Fprintf(stdout, "wrote the %s demo town (%d pipes) to %s\nrun it with: headroom run --config %s\n",
		town.Name, len(town.Pipes.Features), *out, cfgPath)
	return nil
}

// demoConfig maps every field of the demo town's (invented) schema.
func demoConfig(town *demotown.Town) *Config {
	c := &Config{Units: "us", AnalysisYear: town.AnalysisYear}
	c.Pipes = PipeLayer{LayerFile: LayerFile{Path: demoPipes}, Fields: PipeFields{
		ID: demotown.PipeID, Diameter: demotown.PipeDiameter, DiameterUnit: "in", Material: demotown.PipeMaterial,
		InstallYear: demotown.PipeYear, MeasuredC: demotown.PipeMeasuredC, Status: demotown.PipeStatus,
		ClosedValues: []string{"closed"}, Zone: demotown.PipeZone, LengthUnit: "ft",
		Street: demotown.PipeStreet, Surface: demotown.PipeSurface,
	}}
	c.Breaks = BreakLayer{LayerFile: LayerFile{Path: demoBreaks}, Fields: BreakFields{
		ID: demotown.BreakID, Date: demotown.BreakDate, PipeID: demotown.BreakPipeID,
	}}
	c.Facilities = FacilityLayer{LayerFile: LayerFile{Path: demoFacilities}, Fields: FacilityFields{
		ID: demotown.FacilityID, Kind: demotown.FacilityKind,
	}}
	budget := demoAnnualBudget
	c.Plan = PlanConfig{AnnualBudget: &budget}
	c.Sources = SourceLayer{LayerFile: LayerFile{Path: demoSources}, Fields: SourceFields{
		ID: demotown.SourceID, Name: demotown.SourceName, Grade: demotown.SourceGrade, GradeUnit: "ft",
	}}
	c.Demands = DemandLayer{LayerFile: LayerFile{Path: demoDemands}, PeakHourFactor: town.PeakHourFactor, Fields: DemandFields{
		ID: demotown.DemandID, Demand: demotown.DemandADD, DemandUnit: "gpm",
	}}
	c.Elevations = ElevationLayer{LayerFile: LayerFile{Path: demoElevations}, Fields: ElevationFields{
		Elevation: demotown.ElevationValue, ElevationUnit: "ft",
	}}
	c.Hydrants = HydrantLayer{LayerFile: LayerFile{Path: demoHydrants}, Fields: HydrantFields{
		ID: demotown.HydrantID, NeededFlow: demotown.HydrantNeeded, NeededFlowUnit: "gpm", Zone: demotown.HydrantZone,
	}}
	fillDefaults(c)
	return c
}

// fillDefaults sets the defaults validate would set, so a written config
// shows them.
func fillDefaults(c *Config) {
	c.Elevations.Neighbours = defaultNeighbours
	c.Elevations.Power = defaultPower
	c.Criteria.DesignC = defaultDesignC
	c.Aging.UnknownAgeYears = defaultUnknownAgeYears
	c.Aging.UnknownMaterial = defaultUnknownMaterial
}

// builtInDemo is the default run: the demo town generated in memory, with
// its config passed through the same text a written demo holds, so the two
// runs are the same run.
func builtInDemo() (*inputs, error) {
	town, err := demotown.Generate(demotown.Options{})
	if err != nil {
		return nil, err
	}
	var text bytes.Buffer
	if err := writeConfig(&text, demoConfig(town)); err != nil {
		return nil, err
	}
	cfg, err := decodeConfig(text.String(), "built-in demo config")
	if err != nil {
		return nil, fmt.Errorf("built-in demo config: %w", err)
	}
	return &inputs{
		cfg: cfg, title: town.Name + " demo town (built-in)",
		pipes: town.Pipes, sources: town.Sources, demands: town.Demands, elevations: town.Elevations,
		hydrants: town.Hydrants, breaks: town.Breaks, facilities: town.Facilities,
	}, nil
}

// initCommand prints a commented config template with every key.
func initCommand(args []string, stdout, stderr io.Writer) error {
	if len(args) > 0 {
		return usageError{"init takes no arguments; redirect its output to a file: headroom init > headroom.toml"}
	}
	c := &Config{Units: "us", AnalysisYear: 2026}
	c.Pipes = PipeLayer{LayerFile: LayerFile{Path: "mains.geojson"}, Fields: PipeFields{
		ID: "id", Diameter: "diameter", Material: "material", InstallYear: "install_year",
		MeasuredC: "measured_c", Status: "status", Zone: "zone",
	}}
	c.Sources = SourceLayer{LayerFile: LayerFile{Path: "sources.geojson"}, Fields: SourceFields{ID: "id", Name: "name", Grade: "grade"}}
	c.Demands = DemandLayer{LayerFile: LayerFile{Path: "demands.geojson"}, PeakHourFactor: 2.5, Fields: DemandFields{ID: "id", Demand: "demand"}}
	c.Elevations = ElevationLayer{LayerFile: LayerFile{Path: "elevations.geojson"}, Fields: ElevationFields{Elevation: "elevation"}}
	fillDefaults(c)
	return writeConfig(stdout, c)
}
