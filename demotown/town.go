package demotown

import (
	"errors"
	"fmt"

	"github.com/paulmach/orb/geojson"
)

// Field names of Quillmere's invented GIS schema. Numbers are JSON numbers
// (float64 after decoding), text is a string, and c_tested is null where no
// flow test was made.
const (
	PipeID        = "main_no"  // text, unique, e.g. "QM-00042"
	PipeDiameter  = "diam_in"  // nominal diameter, inches
	PipeMaterial  = "material" // "CI" unlined cast iron, "AC", "DI", "PVC", "STL"
	PipeYear      = "yr_laid"  // year laid
	PipeMeasuredC = "c_tested" // Hazen-Williams C from a hydrant flow test, or null
	PipeStatus    = "status"   // "open" | "closed"
	PipeZone      = "zone"     // district, e.g. "Z01"
	PipeStreet    = "street"   // invented name of the street the main lies under, e.g. "Tansy Lane"
	PipeSurface   = "surface"  // road class above the main: "arterial", "collector", "local", "unpaved"

	SourceID    = "site_no"   // text, unique, e.g. "QS-01"
	SourceName  = "site_name" // e.g. "Harrow Hill Tank"
	SourceGrade = "hgl_ft"    // fixed hydraulic grade, feet above the vertical datum
	SourceKind  = "site_type" // "tank" | "reservoir"
	SourceZone  = "zone"      // district the site feeds

	DemandID  = "acct"      // text, unique, e.g. "QA-000042"
	DemandADD = "add_gpm"   // average-day demand, US gallons per minute
	DemandUse = "use_class" // "residential", "commercial", "school", ...

	ElevationValue = "elev_ft" // ground elevation, feet above the vertical datum

	HydrantID     = "hyd_no"     // text, unique, e.g. "QH-00042"
	HydrantNeeded = "ff_req_gpm" // needed fire flow, US gallons per minute
	HydrantZone   = "zone"       // district of the main it stands on

	BreakID     = "break_id"   // text, unique, e.g. "QB-00042"
	BreakDate   = "break_date" // "YYYY-MM-DD", or text that is no date where the record lost it
	BreakPipeID = "pipe_id"    // the broken main's PipeID, or "" where the record names none

	FacilityID   = "facility_id" // text, unique, e.g. "QF-03"
	FacilityName = "name"        // e.g. "Quillmere General Hospital"
	FacilityKind = "kind"        // one of the Facility* kinds
)

// Road classes, the PipeSurface values.
const (
	SurfaceArterial  = "arterial"
	SurfaceCollector = "collector"
	SurfaceLocal     = "local"
	SurfaceUnpaved   = "unpaved"
)

// Critical facilities, the FacilityKind values.
const (
	FacilityHospital    = "hospital"
	FacilityDialysis    = "dialysis_clinic"
	FacilitySchool      = "school"
	FacilityCareHome    = "care_home"
	FacilityFireStation = "fire_station"
	FacilityFactory     = "factory" // a plant that cannot run without water
)

// Pipe status values.
const (
	StatusOpen   = "open"
	StatusClosed = "closed"
)

// DefaultPipes is the size of the default town, in pipe segments.
const DefaultPipes = 2400

// MaxPipes is the largest town Generate builds.
const MaxPipes = 5_000_000

// minPipes is the smallest town that still holds one whole district.
const minPipes = 300

// Options say how large a town to build and from which seed.
type Options struct {
	Pipes int    // target number of pipe segments; 0 means the default town (about 2,400); at most MaxPipes
	Seed  uint64 // 0 means 1
}

// Town is a generated town: seven GeoJSON layers in lon/lat (RFC 7946) and
// the figures an analysis of it needs.
type Town struct {
	Name           string  // "Quillmere"
	AnalysisYear   int     // 2026: the year ages are counted to (fixed so outputs do not change with the calendar)
	PeakHourFactor float64 // the town's peak-hour / average-day factor

	// Pipes are LineStrings split at every junction; Sources are points at
	// the far end of each transmission main; Demands are service points
	// set back from the main that serves them; Elevations are spot heights.
	Pipes, Sources, Demands, Elevations *geojson.FeatureCollection
	// Hydrants are points at pipe end vertices (or a few feet off one, on
	// their lateral) about every 400–500 ft along the mains, with the
	// needed fire flow of the blocks they serve. They come from a random
	// stream of their own: the other layers are the same with or without them.
	Hydrants *geojson.FeatureCollection
	// Breaks are the recorded main breaks of 2012–2025, points on or a few
	// feet off the broken main, most naming it, with a few deliberate
	// faults for the demo (see breakLayer). Facilities are critical
	// customers (hospital, dialysis clinic, schools, care home, fire
	// station, a factory that needs water), one set per district, each
	// within about 150 ft of a main. Both come from random streams of their
	// own, as the street names and surfaces on Pipes do.
	Breaks, Facilities *geojson.FeatureCollection
}

// Town figures.
const (
	townName       = "Quillmere"
	analysisYear   = 2026
	peakHourFactor = 2.6
)

// ErrSize is returned when Options.Pipes is out of range.
var ErrSize = errors.New("demotown: pipes out of range")

// Generate builds the town that opt describes. The same Options always give
// identical collections.
func Generate(opt Options) (*Town, error) {
	n := opt.Pipes
	if n == 0 {
		n = DefaultPipes
	}
	if n < minPipes || n > MaxPipes {
		return nil, fmt.Errorf("%w: %d is not in [%d, %d]", ErrSize, opt.Pipes, minPipes, MaxPipes)
	}
	seed := opt.Seed
	if seed == 0 {
		seed = 1
	}
	g := newGenerator(n, seed)
	g.layout()
	g.build()
	if err := g.connect(); err != nil {
		return nil, fmt.Errorf("demotown: %w", err)
	}
	g.assign()
	if err := g.placeValves(); err != nil {
		return nil, fmt.Errorf("demotown: %w", err)
	}
	return &Town{
		Name:           townName,
		AnalysisYear:   analysisYear,
		PeakHourFactor: peakHourFactor,
		Pipes:          g.pipeLayer(),
		Sources:        g.sourceLayer(),
		Demands:        g.demandLayer(),
		Elevations:     g.elevationLayer(),
		Hydrants:       g.hydrantLayer(),
		Breaks:         g.breakLayer(),
		Facilities:     g.facilityLayer(),
	}, nil
}
