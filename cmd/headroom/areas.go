package main

import (
	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/hydraulics"
)

// Demand areas (demands.allocation = "areas"): the demand layer holds
// polygons or multipolygons (service areas, pressure zones, parcels), each
// with its total average-day demand in the demand field. gis.AllocateAreaDemands
// spreads each total over the junctions inside in proportion to the pipe
// length connected to each,
//
//	q_k = Q_area · w_k / Σ w,  w_k = Σ ½·L_link over the open links at k,
//
// so the allocation conserves every area's total; an area with no junction
// inside goes whole to the junction nearest its centroid, with a row in
// problems.csv.

// areaAllocate has the signature of the point allocators in analyse; it
// ignores the points and the warning distance and spreads r.areas instead.
func (r *result) areaAllocate(t *gis.Topology, _ []gis.Point, fixed []bool, _ hydraulics.Length) ([]hydraulics.Flow, []gis.Problem) {
	return gis.AllocateAreaDemands(t, r.pipes, r.areas, fixed)
}

// areaAccount counts the demand areas in the summary: every usable area is
// allocated (to the junctions inside it, or to the one nearest it) unless the
// network has no junction at all; each unusable one has its problems.csv row.
func (r *result) areaAccount(a *layerAccount) {
	a.noun = "demand areas"
	a.used = 0
	if len(r.net.Nodes) > len(r.supplies) {
		for _, ar := range r.areas {
			if ar.Usable {
				a.used++
			}
		}
	}
	a.in = len(r.areas)
	a.leftOut = a.in - a.used
}

// areaLonLat returns the demand layer's features in WGS 84 lon/lat with
// polygon rings reprojected too (Collection.LonLat reprojects points and
// lines only); other geometries are left to the area reader to report.
func areaLonLat(c *gis.Collection) *geojson.FeatureCollection {
	if c.CRS.Geographic() {
		return c.Features
	}
	out := c.LonLat()
	for i, f := range c.Features.Features {
		switch g := f.Geometry.(type) {
		case orb.Polygon:
			out.Features[i].Geometry = areaPolygonLonLat(c.CRS, g)
		case orb.MultiPolygon:
			mp := make(orb.MultiPolygon, len(g))
			for k, poly := range g {
				mp[k] = areaPolygonLonLat(c.CRS, poly)
			}
			out.Features[i].Geometry = mp
		}
	}
	return out
}

// areaPolygonLonLat inverts the layer's projection at every ring vertex.
func areaPolygonLonLat(crs *gis.CRS, poly orb.Polygon) orb.Polygon {
	out := make(orb.Polygon, len(poly))
	for k, ring := range poly {
		rr := make(orb.Ring, len(ring))
		for m, q := range ring {
			lon, lat := crs.Inverse(q[0], q[1])
			rr[m] = orb.Point{lon, lat}
		}
		out[k] = rr
	}
	return out
}
