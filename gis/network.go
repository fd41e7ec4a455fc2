package gis

import (
	"fmt"
	"strconv"

	"headroom/hydraulics"
)

// NewNetwork assembles the hydraulics network. Nodes are t.Nodes in order,
// with elevation[k] and demand[k] (either slice may be nil: zero) and the
// planar X, Y; a node with a Supply is fixed at its grade. Each of t.Links
// becomes one network pipe, in Links order (so net.Pipes[j] is t.Links[j]
// and t.Parts[i] lists the network pipes of input pipe i), with the link's
// Length, inside[i] (the input pipe's inside diameter; nil: its recorded
// Diameter), its Closed flag and c[i], the Hazen-Williams C in use. Its ID is the pipe's id for an unsplit pipe and
// "<id>/1", "<id>/2", … along the pipe for the parts of a split one; a pipe
// without an id is named "#<Index>".
//
// The slices must match: len(c), len(t.Ends), len(t.Parts) and, when not
// nil, len(inside) == len(pipes),
// demand and elevation nil or len(t.Nodes), links within range; a mismatch is
// a bug of the caller and panics.
func NewNetwork(pipes []Pipe, t *Topology, supplies []Supply, demand []hydraulics.Flow, elevation []hydraulics.Length, inside []hydraulics.Length, c []float64) *hydraulics.Network {
	if len(c) != len(pipes) || len(t.Ends) != len(pipes) || len(t.Parts) != len(pipes) || (inside != nil && len(inside) != len(pipes)) {
		panic(fmt.Sprintf("gis: NewNetwork: %d pipes, %d ends, %d part lists, %d inside diameters, %d C values", len(pipes), len(t.Ends), len(t.Parts), len(inside), len(c)))
	}
	if (demand != nil && len(demand) != len(t.Nodes)) || (elevation != nil && len(elevation) != len(t.Nodes)) {
		panic(fmt.Sprintf("gis: NewNetwork: %d nodes, %d demands, %d elevations", len(t.Nodes), len(demand), len(elevation)))
	}
	net := &hydraulics.Network{Nodes: make([]hydraulics.Node, len(t.Nodes)), Pipes: make([]hydraulics.Pipe, 0, len(t.Links))}
	for k, n := range t.Nodes {
		node := hydraulics.Node{ID: n.ID, X: n.X, Y: n.Y}
		if demand != nil {
			node.Demand = demand[k]
		}
		if elevation != nil {
			node.Elevation = elevation[k]
		}
		net.Nodes[k] = node
	}
	for _, s := range supplies {
		net.Nodes[s.Node].Fixed = true
		net.Nodes[s.Node].Grade = s.Grade
	}
	part := make([]int, len(pipes)) // parts of each pipe named so far
	for j, l := range t.Links {
		if l.Pipe < 0 || l.Pipe >= len(pipes) || l.From < 0 || l.From >= len(t.Nodes) || l.To < 0 || l.To >= len(t.Nodes) {
			panic(fmt.Sprintf("gis: NewNetwork: link %d (%+v) out of range", j, l))
		}
		p := pipes[l.Pipe]
		id := p.ID
		if id == "" {
			id = "#" + strconv.Itoa(p.Index)
		}
		part[l.Pipe]++
		if len(t.Parts[l.Pipe]) > 1 {
			id += "/" + strconv.Itoa(part[l.Pipe])
		}
		d := p.Diameter
		if inside != nil {
			d = inside[l.Pipe]
		}
		net.Pipes = append(net.Pipes, hydraulics.Pipe{ID: id, From: l.From, To: l.To,
			Length: l.Length, Diameter: d, C: c[l.Pipe], Closed: p.Closed, CheckValve: p.CheckValve})
	}
	return net
}
