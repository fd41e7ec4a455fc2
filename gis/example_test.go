package gis_test

import (
	"fmt"

	"github.com/paulmach/orb"

	"headroom/gis"
)

// A 1 km north–south main at latitude 35°; PROJ's geod gives 1000.0000 m for
// these end points on WGS84.
func ExampleGeodesicLength() {
	main := orb.LineString{{-97.5, 35}, {-97.5, 35.009013828}}
	l := gis.GeodesicLength(main)
	fmt.Printf("%.3f m = %.2f ft\n", l.Metres(), l.Feet())
	// Output: 1000.000 m = 3280.84 ft
}
