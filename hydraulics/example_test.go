package hydraulics_test

import (
	"fmt"

	"headroom/hydraulics"
)

// A reservoir feeds two street junctions in series through 12-in and 8-in
// mains; Solve returns heads, flows and the run statistics. (By hand: M-1
// loses 2.94 ft/kft at 1,000 gpm and M-2 5.45 ft/kft at 400 gpm.)
func ExampleSolve() {
	net := &hydraulics.Network{
		Nodes: []hydraulics.Node{
			{ID: "Hilltop reservoir", Fixed: true, Grade: hydraulics.Head(180 * hydraulics.Foot)},
			{ID: "Orchard St", Elevation: 40 * hydraulics.Foot, Demand: 600 * hydraulics.USGallonPerMinute},
			{ID: "Quarry Rd", Elevation: 55 * hydraulics.Foot, Demand: 400 * hydraulics.USGallonPerMinute},
		},
		Pipes: []hydraulics.Pipe{
			{ID: "M-1", From: 0, To: 1, Length: 2000 * hydraulics.Foot, Diameter: 12 * hydraulics.Inch, C: 120},
			{ID: "M-2", From: 1, To: 2, Length: 1500 * hydraulics.Foot, Diameter: 8 * hydraulics.Inch, C: 100},
		},
	}
	sol, err := hydraulics.Solve(net, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	for i, n := range net.Nodes {
		p := hydraulics.NodePressure(n, sol.Head[i])
		fmt.Printf("%-17s head %7.2f ft  pressure %6.2f psi\n", n.ID, sol.Head[i].Feet(), p.PSI())
	}
	for j, p := range net.Pipes {
		fmt.Printf("%s flow %7.2f gpm\n", p.ID, sol.Flow[j].GPM())
	}
	fmt.Printf("supply %.2f gpm, demand %.2f gpm\n", sol.Supply.GPM(), sol.Demand.GPM())
	// Output:
	// Hilltop reservoir head  180.00 ft  pressure  78.00 psi
	// Orchard St        head  174.12 ft  pressure  58.12 psi
	// Quarry Rd         head  165.95 ft  pressure  48.08 psi
	// M-1 flow 1000.00 gpm
	// M-2 flow  400.00 gpm
	// supply 1000.00 gpm, demand 1000.00 gpm
}

func ExampleFlow_GPM() {
	q := 50 * hydraulics.LitrePerSecond
	fmt.Printf("%.1f L/s = %.1f gpm = %.3f cfs\n", q.LPS(), q.GPM(), q.CFS())
	fmt.Printf("1 MGD = %.3f gpm\n", hydraulics.MillionGallonsPerDay.GPM())
	// Output:
	// 50.0 L/s = 792.5 gpm = 1.766 cfs
	// 1 MGD = 694.444 gpm
}
