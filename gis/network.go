package gis

import (
	"fmt"
	"strconv"

	"headroom/hydraulics"
)

// NewNetwork assembles the hydraulics network. Nodes are t.Nodes in order,
// with elevation[k] and demand[k] (either slice may be nil: zero) and the
// planar X, Y; a node with a Supply is fixed at its grade. Every pipe with
// both ends in t becomes a network pipe, in input order, with its Length,
// Diameter, Closed flag and c[i], the Hazen-Williams C in use. A pipe
// without an id is named "#<Index>". It returns, per input pipe, the index
// in net.Pipes or -1.
//
// The slices must match: len(c) and len(t.Ends) == len(pipes), demand and
// elevation nil or len(t.Nodes); a mismatch is a bug of the caller and panics.
func NewNetwork(pipes []Pipe, t *Topology, supplies []Supply, demand []hydraulics.Flow, elevation []hydraulics.Length, c []float64) (*hydraulics.Network, []int) {
	if len(c) != len(pipes) || len(t.Ends) != len(pipes) {
		panic(fmt.Sprintf("gis: NewNetwork: %d pipes, %d ends, %d C values", len(pipes), len(t.Ends), len(c)))
	}
	if (demand != nil && len(demand) != len(t.Nodes)) || (elevation != nil && len(elevation) != len(t.Nodes)) {
		panic(fmt.Sprintf("gis: NewNetwork: %d nodes, %d demands, %d elevations", len(t.Nodes), len(demand), len(elevation)))
	}
	net := &hydraulics.Network{Nodes: make([]hydraulics.Node, len(t.Nodes))}
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
	index := make([]int, len(pipes))
	for i, p := range pipes {
		e := t.Ends[i]
		if !p.Usable || e[0] < 0 || e[1] < 0 {
			index[i] = -1
			continue
		}
		id := p.ID
		if id == "" {
			id = "#" + strconv.Itoa(p.Index)
		}
		index[i] = len(net.Pipes)
		net.Pipes = append(net.Pipes, hydraulics.Pipe{ID: id, From: e[0], To: e[1],
			Length: p.Length, Diameter: p.Diameter, C: c[i], Closed: p.Closed})
	}
	return net, index
}
