package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"headroom/hydraulics"
)

// writeConfig writes c as a commented TOML file with every key, in the
// spelling of c's unit system. `headroom init` prints it with the defaults;
// `headroom demo` writes it with the demo town's layers. loadConfig reads
// it back to the same values.
func writeConfig(w io.Writer, c *Config) error {
	s := c.system()
	var b strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	str := strconv.Quote
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	// q writes a two-spelling quantity in the run's units.
	q := func(qt quantity, comment string) {
		key, f := qt.usKey, qt.toSI[0]
		if s == hydraulics.SI {
			key, f = qt.siKey, qt.toSI[1]
		}
		key = key[strings.IndexByte(key, '.')+1:]
		p("%s = %s  # %s\n", key, num(roundConfig(c.si(qt)/f)), comment)
	}
	list := func(v []string) string {
		out := make([]string, len(v))
		for i, x := range v {
			out[i] = str(x)
		}
		return "[" + strings.Join(out, ", ") + "]"
	}

	p("# headroom run configuration (TOML). Every key is listed with its value;\n")
	p("# keys left out take the default shown by `headroom init`.\n")
	p("# Quantities carry their unit in the key name; with units = \"si\" use the\n")
	p("# SI spelling (_m, _mps, _kpa, _m_per_km) instead of the US one.\n\n")
	p("units = %s  # \"us\" (ft, in, gpm, psi) or \"si\" (m, mm, L/s, kPa)\n", str(c.Units))
	p("analysis_year = %d  # ages are counted to this year; default: the current year\n\n", c.AnalysisYear)

	f := c.Pipes.Fields
	layerKeys := func(table, crs string) {
		p("table = %s  # GeoPackage feature table; \"\" = the only one\n", str(table))
		p("crs = %s  # coordinate system when the layer declares none, e.g. \"EPSG:2229\"; \"\" = as declared\n", str(crs))
	}
	p("[pipes]  # LineString / MultiLineString layer of water mains: .geojson, .shp or .gpkg\n")
	p("path = %s\n", str(c.Pipes.Path))
	layerKeys(c.Pipes.Table, c.Pipes.CRS)
	p("diameter_is = %s  # \"nominal\": the diameter field holds trade sizes, whose inside diameters come from [sizing.existing]; \"inside\": it holds inside diameters\n", str(orDefault(c.Pipes.DiameterIs, diameterIsNominal)))
	p("[pipes.fields]  # property names in the layer; \"\" = not in the layer\n")
	p("id = %s  # required, unique\n", str(f.ID))
	p("diameter = %s  # required, > 0\n", str(f.Diameter))
	p("diameter_unit = %s  # \"in\" or \"mm\"\n", str(orDefault(f.DiameterUnit, "in")))
	p("material = %s  # required; matched to aging.curve material or aliases\n", str(f.Material))
	p("class = %s  # optional: pressure class or dimension ratio (\"DR18\", \"PC350\", \"350\"); empty values take the material's [sizing.existing] class\n", str(f.Class))
	p("install_year = %s  # required; unknown or implausible years use aging.unknown_age_years\n", str(f.InstallYear))
	p("measured_c = %s  # optional: a field-tested Hazen-Williams C overrides aging\n", str(f.MeasuredC))
	p("lined_year = %s  # optional: year of cement-mortar lining or rehabilitation; the age restarts then on aging.lined_curve\n", str(f.LinedYear))
	p("status = %s  # optional\n", str(f.Status))
	p("closed_values = %s  # status values meaning closed (no flow), any case\n", list(orDefaultList(f.ClosedValues, []string{"closed"})))
	p("check_values = %s  # status values marking a check valve: flow only first vertex → last, any case\n", list(orDefaultList(f.CheckValues, []string{})))
	p("zone = %s  # optional pressure zone\n", str(f.Zone))
	p("street = %s  # optional street name: a project follows one street\n", str(f.Street))
	p("surface = %s  # optional surface or road class (arterial, collector, local, unpaved): cost factor and consequence of failure\n", str(f.Surface))
	p("length = %s  # optional: overrides the geodesic length when > 0\n", str(f.Length))
	p("length_unit = %s  # \"ft\" or \"m\"\n", str(orDefault(f.LengthUnit, "ft")))
	p("flow = %s  # optional: each pipe's flow from a model run elsewhere, positive first vertex → last; read with solver.flows = \"from_layer\"\n", str(f.Flow))
	p("flow_unit = %s  # \"gpm\", \"lps\", \"mgd\", \"cfs\" or \"m3s\"\n\n", str(orDefault(f.FlowUnit, "gpm")))

	sf := c.Sources.Fields
	p("[sources]  # Point layer of fixed-grade supplies: tanks, reservoirs, pumped supplies at a set head\n")
	p("path = %s\n", str(c.Sources.Path))
	layerKeys(c.Sources.Table, c.Sources.CRS)
	p("[sources.fields]\n")
	p("id = %s\nname = %s\n", str(sf.ID), str(sf.Name))
	p("grade = %s  # required: the hydraulic grade held (water-surface elevation)\n", str(sf.Grade))
	p("grade_unit = %s  # \"ft\" or \"m\"\n", str(orDefault(sf.GradeUnit, "ft")))
	ctlTemplate(p, sf)
	p("\n")

	df := c.Demands.Fields
	p("[demands]  # Point layer of average-day demands (meters, parcels); each goes to its nearest junction\n")
	p("path = %s\n", str(c.Demands.Path))
	layerKeys(c.Demands.Table, c.Demands.CRS)
	p("peak_hour_factor = %s  # required: peak-hour ÷ average-day demand (typically 2.0–4.0); no default\n", num(c.Demands.PeakHourFactor))
	p("max_day_factor = %s  # max-day ÷ average-day demand (typically 1.5–2.0); default 2.0, at most peak_hour_factor\n",
		num(orDefaultFloat(c.Demands.MaxDayFactor, math.Min(defaultMaxDayFactor, c.Demands.PeakHourFactor))))
	q(c.warnDistance(), "a demand point farther than this from its node is listed in problems.csv")
	p("allocation = %s  # \"nearest_node\": each point to its nearest junction; \"along_pipe\": to its nearest pipe, split between the pipe's ends by position; \"areas\": the layer holds polygons, each total spread over the junctions inside by connected pipe length\n",
		str(orDefault(c.Demands.Allocation, allocateNearestNode)))
	p("[demands.fields]\n")
	p("id = %s\ndemand = %s  # required, average day\n", str(df.ID), str(df.Demand))
	p("demand_unit = %s  # \"gpm\", \"lps\", \"mgd\" or \"cfs\"\n\n", str(orDefault(df.DemandUnit, "gpm")))

	ef := c.Elevations.Fields
	p("[elevations]  # Point layer of spot heights; node elevation by inverse-distance weighting\n")
	p("path = %s\n", str(c.Elevations.Path))
	layerKeys(c.Elevations.Table, c.Elevations.CRS)
	p("neighbours = %d  # spot heights averaged per node\n", c.Elevations.Neighbours)
	p("power = %s  # inverse-distance power\n", num(c.Elevations.Power))
	p("[elevations.fields]\n")
	p("elevation = %s\n", str(ef.Elevation))
	p("elevation_unit = %s  # \"ft\" or \"m\"\n\n", str(orDefault(ef.ElevationUnit, "ft")))

	hf := c.Hydrants.Fields
	p("[hydrants]  # optional Point layer of hydrants; with no path, fire flow is computed at every junction\n")
	p("path = %s\n", str(c.Hydrants.Path))
	layerKeys(c.Hydrants.Table, c.Hydrants.CRS)
	p("[hydrants.fields]\n")
	p("id = %s\n", str(hf.ID))
	p("needed_flow = %s  # optional: the needed fire flow set by the fire authority\n", str(hf.NeededFlow))
	p("needed_flow_unit = %s  # \"gpm\", \"lps\", \"mgd\" or \"cfs\"\n", str(orDefault(hf.NeededFlowUnit, "gpm")))
	p("zone = %s  # optional pressure zone\n", str(hf.Zone))
	p("land_use = %s  # optional land-use or zoning class: needed fire flow from [%s] when the hydrant has no needed_flow\n\n", str(hf.LandUse), c.needTableKey())

	p("[fire_flow]  # max day plus fire flow at each hydrant, one at a time\n")
	p("enabled = %t\n", c.fireFlowEnabled())
	q(c.fireResidual(), "residual pressure kept at the hydrant and every junction of its zone")
	q(c.fireNeeded(), "needed fire flow where the hydrant layer gives none (IFC Appendix B: 1,000 gpm for dwellings)")
	q(c.hydrantSearch(), "a hydrant joins the nearest junction within this distance\n")
	p("%s", needTemplate(c))

	p("[network]\n")
	q(c.snapTolerance(), "pipe ends closer than this become one node")
	q(c.sourceSearch(), "a source joins the nearest node within this distance\n")

	p("[criteria]  # peak-hour planning criteria (common practice; use your utility's standards)\n")
	q(c.maxHeadloss(), "unit head loss criterion; capacity is the flow at this loss")
	q(c.maxVelocity(), "velocity criterion")
	q(c.minPressure(), "lowest pressure at a junction at peak hour")
	q(c.minDiameter(), "smallest size a replacement main may take (your utility's minimum)")
	p("design_c = %s  # Hazen-Williams C assumed for a new main when sizing\n\n", num(c.Criteria.DesignC))
	p("%s", sizeTemplate(c))
	p("%s", cureTemplate(c))

	p("[solver]  # Global Gradient Algorithm\n")
	p("tolerance = %s  # stop when the relative flow change is below this\n", num(orDefaultFloat(c.Solver.Tolerance, defaultSolverTolerance)))
	p("max_iterations = %d\n", orDefaultInt(c.Solver.MaxIterations, defaultSolverIterations))
	p("flows = %s  # \"solve\"; or \"from_layer\": no solve, every criterion on pipes.fields.flow (average day, max day and fire flow skipped)\n", str(orDefault(c.Solver.Flows, flowsSolve)))
	p("scenarios = %s  # the steady states solved; peak hour is required (the criteria and scores read it), max day while fire flow is on\n\n",
		list(orDefaultList(c.Solver.Scenarios, allScenarios)))

	sc := c.scoringConfig()
	p("[weights]  # relative weights of the sub-scores (normalised by their sum)\n")
	p("headloss = %s\nvelocity = %s\nc_factor = %s\ndeficit = %s\n\n",
		num(sc.Weights.HeadLoss), num(sc.Weights.Velocity), num(sc.Weights.CFactor), num(sc.Weights.Deficit))

	p("[scoring]  # each sub-score is 0 at its good value and 100 at its poor value\n")
	q(c.headlossGood(), "unit head loss scoring 0")
	q(c.headlossPoor(), "unit head loss scoring 100")
	q(c.velocityGood(), "velocity scoring 0")
	q(c.velocityPoor(), "velocity scoring 100")
	p("c_good = %s  # C scoring 0\n", num(sc.CFactor.Good))
	p("c_poor = %s  # C scoring 100\n", num(sc.CFactor.Poor))
	p("deficit_good_fraction = %s  # deficit ÷ capacity scoring 0\n", num(sc.Deficit.Good))
	p("deficit_poor_fraction = %s  # deficit ÷ capacity scoring 100\n\n", num(sc.Deficit.Poor))

	p("[output]\n")
	p("formats = %s  # pipe and node layers: \"geojson\" (WGS84), \"gpkg\" and \"shp\" (the pipe layer's coordinate system)\n\n",
		list(orDefaultList(c.Output.Formats, defaultFormats)))

	b.WriteString(ageTemplate(c))  // [aging], its curves and growth models (aging.go)
	b.WriteString(progTemplate(c)) // [breaks] … [plan] (program.go)
	_, err := io.WriteString(w, b.String())
	return err
}

// roundConfig trims conversion noise (0.30480000000000002) from a value shown
// in a config file, keeping 9 significant figures.
func roundConfig(v float64) float64 {
	r, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 9, 64), 64)
	return r
}

func orDefault(v, d string) string {
	if v == "" {
		return d
	}
	return v
}

func orDefaultList(v, d []string) []string {
	if len(v) == 0 {
		return d
	}
	return v
}

func orDefaultFloat(v, d float64) float64 {
	if v == 0 {
		return d
	}
	return v
}

func orDefaultInt(v, d int) int {
	if v == 0 {
		return d
	}
	return v
}
