package main

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// Accounting: every input feature ends in the outputs. A pipe is always a
// row of pipes.geojson, scored or unscored with its reason; a source,
// demand or elevation point is either used (joined, allocated, interpolated
// from) or left out with a row in problems.csv. The run summary prints the
// counts per layer, and the bad-input corpus test checks them against the
// written files.

// layerAccount is one layer's in/out count: In = Used + LeftOut.
type layerAccount struct {
	path    string // the layer's path as configured
	in      int    // features read
	noun    string // "pipes", "sources", "points", "spot heights"
	used    int    // features that took part in the run
	verb    string // how they took part: "scored", "joined to the network", ...
	leftOut int    // features that did not; each has its reason
	detail  string // a breakdown of leftOut, or ""
	where   string // where the reasons are: "problems.csv", "reasons in pipes.geojson"
	extra   string // a figure appended after the counts, or ""
}

// String is the summary line, a tab between the path and the counts:
//
//	demands.geojson	3 points: 2 allocated, 1 left out (problems.csv); 50.0 gpm average day
//	pipes.geojson	6 pipes: 4 scored, 2 unscored (1 left out of the network, 1 closed; reasons in pipes.geojson)
func (a layerAccount) String() string {
	var b strings.Builder
	noun := a.noun
	if a.in == 1 {
		noun = strings.TrimSuffix(noun, "s") // every noun here is a plural in -s
	}
	fmt.Fprintf(&b, "%s\t%d %s: %d %s, %d %s", a.path, a.in, noun, a.used, a.verb, a.leftOut, a.leftOutWord())
	if a.leftOut > 0 {
		if a.detail != "" {
			fmt.Fprintf(&b, " (%s; %s)", a.detail, a.where)
		} else {
			fmt.Fprintf(&b, " (%s)", a.where)
		}
	}
	if a.extra != "" {
		fmt.Fprintf(&b, "; %s", a.extra)
	}
	return b.String()
}

func (a layerAccount) leftOutWord() string {
	if a.noun == "pipes" {
		return "unscored"
	}
	return "left out"
}

// accounts counts each layer's features in and out, pipes first.
func (r *result) accounts() []layerAccount {
	s := r.cfg.system()
	cfg := r.cfg
	pipes := layerAccount{path: cfg.Pipes.Path, in: len(r.pipes), noun: "pipes", verb: "scored",
		where: "reasons in pipes.geojson"}
	var out, closed, dry int
	for i, p := range r.pipes {
		switch {
		case r.scores[i].Scored:
			pipes.used++
		case !p.Usable || len(r.parts[i]) == 0:
			out++
		case p.Closed:
			closed++
		default:
			dry++
		}
	}
	pipes.leftOut = pipes.in - pipes.used
	var parts []string
	for _, c := range []struct {
		n    int
		what string
	}{{out, "left out of the network"}, {closed, "closed"}, {dry, "no source reaches"}} {
		if c.n > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", c.n, c.what))
		}
	}
	pipes.detail = strings.Join(parts, ", ")

	sources := layerAccount{path: cfg.Sources.Path, in: len(r.sources), noun: "sources",
		used: len(r.supplies), verb: "joined to the network", where: "problems.csv"}
	sources.leftOut = sources.in - sources.used

	// AllocateDemands places every usable demand on its nearest junction;
	// only a network with no junction (every node a source) takes none.
	demands := layerAccount{path: cfg.Demands.Path, in: r.demandCount.read, noun: "points", verb: "allocated", where: "problems.csv"}
	if len(r.net.Nodes) > len(r.supplies) {
		demands.used = r.demandCount.usable
	}
	if r.areas != nil {
		r.areaAccount(&demands)
	}
	demands.leftOut = demands.in - demands.used
	var avg hydraulics.Flow
	for _, n := range r.net.Nodes {
		avg += n.Demand
	}
	demands.extra = fmt.Sprintf("%.1f %s average day", s.Flow(avg), s.FlowLabel())

	elev := layerAccount{path: cfg.Elevations.Path, in: r.elevationCount.read, noun: "spot heights",
		used: r.elevationCount.usable, verb: "used", where: "problems.csv"}
	elev.leftOut = elev.in - elev.used
	return []layerAccount{pipes, sources, demands, elev}
}

// pointCount is how many points a layer gave and how many were usable.
type pointCount struct{ read, usable int }

// countPoints counts pts and the usable ones.
func countPoints(pts []gis.Point) pointCount {
	c := pointCount{read: len(pts)}
	for _, p := range pts {
		if p.Usable {
			c.usable++
		}
	}
	return c
}

// maxListed is how many problems a fatal message lists.
const maxListed = 10

// withProblems adds to a fatal error the problems found so far (in file,
// or in the file the error names when file is ""), since problems.csv is
// not written when the run stops: each line gives the feature, its id, the
// field, what is wrong and what to do.
func withProblems(err error, probs []gis.Problem, file string) error {
	if file == "" {
		var fe *gis.FieldError
		if errors.As(err, &fe) {
			file = fe.File
		}
	}
	var lines []string
	n := 0
	for _, p := range probs {
		if p.File != file || p.Feature == 0 {
			continue
		}
		n++
		if n <= maxListed {
			lines = append(lines, "  "+describeProblem(p))
		}
	}
	if n == 0 {
		return err
	}
	if n > maxListed {
		lines = append(lines, fmt.Sprintf("  ... and %d more", n-maxListed))
	}
	return fmt.Errorf("%w\nproblems found in %s:\n%s", err, file, strings.Join(lines, "\n"))
}

// describeProblem is one problem as a line of a message:
// `feature 1 (id "BC-1"), field "dia_in": diameter "?" is not a number; pipe left out ...`.
func describeProblem(p gis.Problem) string {
	var b strings.Builder
	fmt.Fprintf(&b, "feature %d", p.Feature)
	if p.ID != "" {
		fmt.Fprintf(&b, " (id %q)", p.ID)
	}
	if p.Field != "" {
		fmt.Fprintf(&b, ", field %q", p.Field)
	}
	fmt.Fprintf(&b, ": %s; %s", p.What, p.Action)
	return b.String()
}

// noSupply explains a network in which no junction is reached from a source
// through open pipes: it names each joined source, its node and the pipes
// that end there.
func (r *result) noSupply() error {
	file := filepath.Base(r.cfg.Sources.Path)
	var where []string
	for _, sp := range r.supplies {
		src := r.sources[sp.Source]
		var ends []string
		for i, p := range r.pipes {
			if len(r.parts[i]) == 0 {
				continue
			}
			if e := r.topo.Ends[i]; e[0] == sp.Node || e[1] == sp.Node {
				state := "open"
				if p.Closed {
					state = "closed"
				}
				ends = append(ends, fmt.Sprintf("%s (%s feature %d, %s)", p.ID, filepath.Base(r.cfg.Pipes.Path), p.Index, state))
			}
		}
		desc := "where no pipe ends"
		if len(ends) > 0 {
			desc = "where these pipes end: " + strings.Join(ends, ", ")
		}
		where = append(where, fmt.Sprintf("source %q (%s feature %d) joins node %s, %s",
			src.ID, file, src.Index, r.topo.Nodes[sp.Node].ID, desc))
	}
	return fmt.Errorf("no junction is reached from a source through open pipes, so there is nothing to solve: %s. "+
		"Check the status of the pipes at each source (pipes.fields.status and closed_values) and where the sources lie",
		strings.Join(where, "; "))
}

// flagNegativePressure adds to the reasons of every scored pipe with an end
// at one of nodes (junctions below zero pressure) that its pressures cannot
// be trusted.
func (r *result) flagNegativePressure(nodes []int) {
	if len(nodes) == 0 {
		return
	}
	negative := make([]bool, len(r.net.Nodes))
	for _, n := range nodes {
		negative[n] = true
	}
	for i := range r.pipes {
		for _, j := range r.parts[i] {
			np := r.net.Pipes[j]
			k := np.From
			if !negative[k] {
				k = np.To
			}
			if !negative[k] {
				continue
			}
			note := fmt.Sprintf("negative pressure at node %s: the source grade is below the ground here", r.net.Nodes[k].ID)
			if r.scores[i].Reasons == "" {
				r.scores[i].Reasons = note
			} else {
				r.scores[i].Reasons += "; " + note
			}
			break
		}
	}
}
