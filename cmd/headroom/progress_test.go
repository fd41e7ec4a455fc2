package main

import (
	"bytes"
	"regexp"
	"testing"
	"time"
)

// A stage line names the stage, its count, its time and a rate that stays
// readable below one item a second (three scenarios in seven seconds).
func TestStageLine(t *testing.T) {
	var out bytes.Buffer
	p := newProgress(&out, false)
	s := p.begin("solving", "scenarios", 0)
	s.start = s.start.Add(-7 * time.Second)
	s.add(3)
	s.end("565579 nodes")
	want := regexp.MustCompile(`^headroom: solving +3 scenarios in 7\.0\d s \(0\.4/s\); 565579 nodes\n$`)
	if !want.MatchString(out.String()) {
		t.Errorf("stage line %q, want it to match %s", out.String(), want)
	}
	out.Reset()
	s = p.begin("solving", "scenarios", 0)
	s.add(1)
	s.end("")
	if one := regexp.MustCompile(`^headroom: solving +1 scenario in `); !one.MatchString(out.String()) {
		t.Errorf("stage line %q, want one scenario in the singular", out.String())
	}
	for _, c := range []struct {
		rate float64
		want string
	}{{0.43, "0.4/s"}, {9.94, "9.9/s"}, {12.6, "13/s"}, {406365.2, "406365/s"}} {
		if got := formatRate(c.rate); got != c.want {
			t.Errorf("formatRate(%v) = %q, want %q", c.rate, got, c.want)
		}
	}
}
