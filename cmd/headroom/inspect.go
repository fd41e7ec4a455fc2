package main

import (
	"flag"
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"headroom/gis"
	"headroom/hydraulics"
)

// maxInspectProblems is how many problems inspect lists per layer.
const maxInspectProblems = 20

// inspectCommand is `headroom inspect [--crs EPSG:N] [--table T]
// [--snap-tolerance-ft X] LAYER...`: what a planner runs before writing a
// config.
func inspectCommand(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("inspect", flag.ContinueOnError)
	fs.SetOutput(stderr)
	crsName := fs.String("crs", "", "coordinate system of layers that declare none, e.g. EPSG:2229")
	table := fs.String("table", "", "GeoPackage feature table (default: the only one)")
	tolFt := fs.Float64("snap-tolerance-ft", defaultSnapToleranceFt, "snap tolerance for the topology diagnostics, in feet")
	if err := fs.Parse(args); err != nil {
		return usageError{err.Error()}
	}
	if fs.NArg() == 0 {
		return usageError{"name at least one layer file: headroom inspect mains.shp demands.geojson"}
	}
	if !(*tolFt > 0) {
		return usageError{fmt.Sprintf("--snap-tolerance-ft %g: must be > 0", *tolFt)}
	}
	var crs *gis.CRS
	if *crsName != "" {
		c, err := gis.ParseCRS(*crsName)
		if err != nil {
			return usageError{fmt.Sprintf("--crs %s: %v", *crsName, err)}
		}
		crs = c
	}
	tol := hydraulics.Length(*tolFt) * hydraulics.Foot
	for i, path := range fs.Args() {
		if i > 0 {
			fmt.Fprintln(stdout)
		}
		c, err := gis.OpenLayer(path, gis.OpenOptions{Key: "layer", Table: *table, Fallback: crs})
		if err != nil {
			return err
		}
		if err := printLayer(stdout, c, tol); err != nil {
			return err
		}
	}
	return nil
}

// printLayer writes one layer's summary and, for a line layer, its topology.
func printLayer(w io.Writer, c *gis.Collection, tol hydraulics.Length) error {
	s := gis.Describe(c)
	var b strings.Builder
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "%s\n", s.File)
	fmt.Fprintf(tw, "  format\t%s\n", s.Format)
	crs := s.CRS.String()
	if s.Note != "" {
		crs += "; " + s.Note
	}
	fmt.Fprintf(tw, "  coordinate system\t%s\n", crs)
	var geom []string
	lines := false
	for _, g := range s.Geometry {
		geom = append(geom, fmt.Sprintf("%s %d", g.Type, g.Count))
		lines = lines || g.Type == "LineString" || g.Type == "MultiLineString"
	}
	z := ""
	if s.HasZ {
		z = ", with Z"
	}
	fmt.Fprintf(tw, "  features\t%d (%s%s)\n", s.Features, strings.Join(geom, ", "), z)
	if s.HasExtent {
		fmt.Fprintf(tw, "  extent\t%s, %s to %s, %s\n", coord(s.Extent.Min[0]), coord(s.Extent.Min[1]), coord(s.Extent.Max[0]), coord(s.Extent.Max[1]))
	}
	tw.Flush()
	fmt.Fprintf(&b, "  fields\n")
	tw = tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "    name\ttype\tnulls\tdistinct\tsamples\n")
	for _, f := range s.Fields {
		fmt.Fprintf(tw, "    %s\t%s\t%d\t%d\t%s\n", f.Name, f.Type, f.Nulls, f.Distinct, strings.Join(f.Samples, " | "))
	}
	tw.Flush()
	if lines {
		writeTopology(&b, c, tol)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// writeTopology prints the line layer's topology diagnostics.
func writeTopology(b *strings.Builder, c *gis.Collection, tol hydraulics.Length) {
	pipes, topo, probs := gis.LineDiagnostics(c, tol)
	var usable int
	for _, p := range pipes {
		if p.Usable {
			usable++
		}
	}
	fmt.Fprintf(b, "  topology (snap tolerance %s ft)\n", strconv.FormatFloat(tol.Feet(), 'f', -1, 64))
	fmt.Fprintf(b, "    %d of %d lines usable; %d nodes, %d links; %d tees split a line; %d dangling ends\n",
		usable, len(pipes), len(topo.Nodes), len(topo.Links), topo.Splits, topo.Dangles)
	if len(probs) == 0 {
		fmt.Fprintf(b, "    no problems found\n")
		return
	}
	fmt.Fprintf(b, "    %d problems:\n", len(probs))
	for i, p := range probs {
		if i == maxInspectProblems {
			fmt.Fprintf(b, "    ... and %d more (a run lists them all in problems.csv)\n", len(probs)-i)
			break
		}
		fmt.Fprintf(b, "    feature %d (id %q) %s: %s\n", p.Feature, p.ID, p.Field, p.What)
	}
}

// coord writes a coordinate with enough digits for lon/lat or feet.
func coord(v float64) string { return strconv.FormatFloat(v, 'f', 6, 64) }
