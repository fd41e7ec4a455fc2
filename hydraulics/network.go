package hydraulics

// Node is a junction or a fixed-grade node of a network.
type Node struct {
	ID        string
	Elevation Length // ground elevation at the node, above the datum
	// Demand is the average-day withdrawal at a junction (> 0 leaves the
	// network). Scenarios multiply it by a peaking factor (Options.DemandFactor).
	Demand Flow
	// Fixed marks a node whose hydraulic grade is held at Grade: a tank,
	// a reservoir or a pumped supply at a set head.
	Fixed bool
	Grade Head // hydraulic grade of a fixed node, same datum as Elevation
	// X and Y are a planar position in any consistent unit. They are used
	// only to order the sparse factorisation; zero is allowed.
	X, Y float64
}

// Pipe is a link between two nodes. Flow is positive from From to To.
type Pipe struct {
	ID       string
	From, To int     // indices into Network.Nodes
	Length   Length  // along the centreline
	Diameter Length  // inside diameter
	C        float64 // Hazen-Williams C in use (already aged), dimensionless
	Closed   bool    // a closed valve or an out-of-service main carries no flow
	// Pump, when non-nil, makes the link a pump that adds the head
	// h = A − B·Q^C for flow Q ≥ 0 from From to To, with no friction; flow
	// from To to From is blocked as by a check valve. Length, Diameter and C
	// are ignored (and not validated) for a pump.
	Pump *PumpCurve
	// CheckValve lets the pipe carry flow only from From to To: when the
	// grades would push flow backwards the link closes.
	CheckValve bool
}

// Network is the node–link model a Solve works on.
type Network struct {
	Nodes []Node
	Pipes []Pipe
}
