package hydraulics

// Size is a standard nominal pipe size and the inside diameter used for it.
type Size struct {
	Nominal Length // trade size, e.g. 8 * Inch
	Inside  Length // actual inside diameter of the replacement product
}

// Limits are the planning criteria a pipe and a node are checked against.
type Limits struct {
	// MaxSlope is the criterion unit head loss, head per length
	// (dimensionless): 10 ft per 1,000 ft is 0.010.
	MaxSlope float64
	// MaxVelocity is the largest mean velocity allowed at the scenario's flow.
	MaxVelocity Velocity
	// MinPressure is the lowest pressure allowed at a junction.
	MinPressure Pressure
	// DesignC is the Hazen-Williams C assumed for a new replacement main.
	DesignC float64
	// Sizes are the standard sizes a replacement may take, ascending.
	Sizes []Size
	// MinNominal is the smallest nominal size a replacement may take, the
	// utility's minimum main size (the Ten States Standards ask 6 in for
	// mains that supply hydrants; DOMAIN.md §3.4). Zero means no minimum.
	MinNominal Length
}

// PipeCheck is one pipe's result against the Limits in one scenario.
type PipeCheck struct {
	Flow     Flow     // signed, positive From→To
	Velocity Velocity // of |Flow|
	// Slope is the friction head loss per length, dimensionless
	// (× 1000 gives ft per 1,000 ft or m per km).
	Slope float64
	// Capacity is the flow the pipe carries at Limits.MaxSlope with its
	// own C and inside diameter: Q = C·D^2.63·S^0.54/148 in gpm, in, ft/kft.
	Capacity Flow
	// Deficit is |Flow| above Capacity, zero when the pipe passes.
	Deficit Flow
	// RequiredInside is the smallest inside diameter that meets both
	// MaxSlope and MaxVelocity at |Flow| with Limits.DesignC.
	RequiredInside Length
	// Required is the smallest standard size whose inside diameter is at
	// least RequiredInside and whose nominal size is at least
	// Limits.MinNominal; the zero Size when none in Limits.Sizes is.
	Required Size
	// Failing criteria.
	OverSlope, OverVelocity bool
}
