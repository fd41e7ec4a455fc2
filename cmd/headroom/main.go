// Command headroom turns a water utility's GIS layers into a ranked list of
// mains to replace or upsize: it builds the pipe network, solves it with
// Hazen-Williams and aged C-factors, checks every main against planning
// criteria, scores and ranks them, and writes the results as GIS layers.
//
// Usage:
//
//	headroom run  [--config FILE] [--out DIR] [--quiet]  run a config, or the built-in demo town
//	headroom demo --out DIR [--pipes N] [--seed S]  write the demo town's layers and config
//	headroom init                               print a commented config template
//	headroom inspect [--crs EPSG:N] LAYER...    describe layers before writing a config
//
// Results are planning-level screening, not a calibrated model; see the
// README's cautions.
package main

import (
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"time"
)

// Exit codes (README: 0 ok, 1 input, 2 usage, 3 solver).
const (
	exitOK     = 0
	exitError  = 1 // input problems (or a write error) stopped the run
	exitUsage  = 2 // the command line was wrong
	exitSolver = 3 // the network could not be solved: no convergence, no supplied junction
)

func main() {
	if _, set := os.LookupEnv("GOMEMLIMIT"); !set {
		followMemoryLimit(softMemoryLimit, 250*time.Millisecond) // memlimit.go; until exit
	}
	if _, set := os.LookupEnv("GOGC"); !set {
		debug.SetGCPercent(gcPercent) // memlimit.go
	}
	os.Exit(headroomMain(os.Args[1:], os.Stdout, os.Stderr))
}

// headroomMain dispatches a subcommand and returns the process exit code.
func headroomMain(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stderr)
		return exitUsage
	}
	defer startProfiles(stderr)()
	var err error
	switch args[0] {
	case "run":
		err = runCommand(args[1:], stdout, stderr)
	case "demo":
		err = demoCommand(args[1:], stdout, stderr)
	case "init":
		err = initCommand(args[1:], stdout, stderr)
	case "inspect":
		err = inspectCommand(args[1:], stdout, stderr)
	case "help", "-h", "-help", "--help":
		usage(stdout)
		return exitOK
	default:
		fmt.Fprintf(stderr, "headroom: unknown command %q\n\n", args[0])
		usage(stderr)
		return exitUsage
	}
	if err == nil {
		return exitOK
	}
	if ue, ok := err.(usageError); ok {
		fmt.Fprintf(stderr, "headroom %s: %s\n", args[0], ue.msg)
		return exitUsage
	}
	if se, ok := err.(solverError); ok {
		fmt.Fprintf(stderr, "headroom %s: %v\n", args[0], se.err)
		return exitSolver
	}
	fmt.Fprintf(stderr, "headroom %s: %v\n", args[0], err)
	return exitError
}

// solverError is a network the solver could not solve (exit code 3).
type solverError struct{ err error }

func (e solverError) Error() string { return e.err.Error() }
func (e solverError) Unwrap() error { return e.err }

// usageError is a mistake on the command line (exit code 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usage(w io.Writer) {
	fmt.Fprint(w, `headroom ranks water mains for replacement and upsizing from GIS layers.

Commands:
  headroom run  [--config FILE] [--out DIR] [--quiet]
                                                  run a config (default: the built-in demo town);
                                                  progress goes to stderr unless --quiet
  headroom demo --out DIR [--pipes N] [--seed S]  write the demo town's layers and a config that runs them
  headroom init                                   print a commented config template with every key
  headroom inspect [--crs EPSG:N] [--table T] LAYER...
                                                  describe layers (format, coordinate system, fields, topology)

Outputs (in --out, default headroom-out): report.html (the evidence report), ranked.csv and
ranked.xlsx, projects.csv, plan.csv, problems.csv, the pipe, node, hydrant and project layers as
GeoJSON and GeoPackage (and shapefile when output.formats asks for it), and manifest.json.
Results are planning-level screening; see the cautions in the run summary and the README.
`)
}
