package main

import (
	"os/exec"
	"slices"
	"strings"
	"testing"
)

// TestImportRules keeps the package rules of DESIGN.md: imports point inward
// to the domain. hydraulics uses the standard library only; scoring reads
// hydraulics and nothing else of ours; gis never imports scoring; demotown
// knows neither gis nor scoring; report imports none of our packages. Checked with `go list -deps`, which lists
// every package a package's non-test code pulls in.
func TestImportRules(t *testing.T) {
	if _, err := exec.LookPath("go"); err != nil {
		t.Skip("go command not on PATH")
	}
	rules := []struct {
		pkg     string
		allowed func(dep string) bool
	}{
		{"headroom/hydraulics", func(d string) bool { return d == "headroom/hydraulics" }},
		{"headroom/scoring", func(d string) bool { return d == "headroom/scoring" || d == "headroom/hydraulics" }},
		{"headroom/gis", func(d string) bool { return d != "headroom/scoring" && d != "headroom/demotown" }},
		// report lays out figures it is handed: no physics, no scores, no layers.
		{"headroom/report", func(d string) bool { return !strings.HasPrefix(d, "headroom/") || d == "headroom/report" }},
		{"headroom/demotown", func(d string) bool {
			return !slices.Contains([]string{"headroom/gis", "headroom/scoring"}, d)
		}},
	}
	for _, r := range rules {
		out, err := exec.Command("go", "list", "-deps", "-f", "{{if not .Standard}}{{.ImportPath}}{{end}}", r.pkg).CombinedOutput()
		if err != nil {
			t.Fatalf("go list -deps %s: %v\n%s", r.pkg, err, out)
		}
		for _, dep := range strings.Fields(string(out)) {
			if !r.allowed(dep) {
				t.Errorf("%s imports %s, which DESIGN.md does not allow", r.pkg, dep)
			}
		}
	}
}
