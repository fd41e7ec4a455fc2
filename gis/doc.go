// Package gis reads and writes the layers headroom works on (GeoJSON now), measures
// lengths on the WGS84 ellipsoid, snaps pipe ends into a node–link topology with a spatial index, joins
// points to nodes, and turns mapped fields into hydraulics pipes and nodes.
//
// Readers never stop at the first bad feature: each finding that still lets the
// run go on becomes a [Problem] (a row of problems.csv), and the pipe or point
// is kept, kept with the value treated as unknown, or left out (Usable false,
// Reason set). Only errors that make the whole layer unusable are returned as
// errors, as a [*FieldError] where they are about one feature or field.
//
// Coordinates are GeoJSON lon/lat on WGS84 (RFC 7946). Lengths are metres on
// the ellipsoid (see [GeodesicLength]); node positions for indexing are local
// planar metres about the layer's mean latitude (see [Snap]).
package gis
