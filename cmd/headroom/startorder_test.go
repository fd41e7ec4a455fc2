package main

import (
	"slices"
	"testing"
)

// The longest writes start first; outputs not in longestFirst keep their
// order after them.
func TestStartOrderLongestFirst(t *testing.T) {
	names := []string{"ranked.csv", "pipes.geojson", "nodes.geojson", "pipes.gpkg", "nodes.gpkg", "projects.csv", "plan.csv", "ranked.xlsx", "report.html"}
	outs := make([]output, len(names))
	for k, n := range names {
		outs[k].name = n
	}
	var got []string
	for _, k := range startOrder(outs) {
		got = append(got, outs[k].name)
	}
	want := []string{"pipes.geojson", "ranked.xlsx", "pipes.gpkg", "ranked.csv", "report.html", "nodes.geojson", "nodes.gpkg", "projects.csv", "plan.csv"}
	if !slices.Equal(got, want) {
		t.Errorf("start order %v, want %v", got, want)
	}
}
