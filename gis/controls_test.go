package gis

import (
	"errors"
	"math"
	"strings"
	"testing"

	"headroom/hydraulics"
)

// Check valves are read from the status field: a status in CheckValues
// (any case) marks the pipe, is not reported as unknown, and a closed value
// still closes.
func TestCtlCheckValveStatus(t *testing.T) {
	s := testSchema
	s.CheckValues = []string{"CV", "check valve"}
	fc := mustDecode(t, collection(
		pipeFeature(`"PIPE_ID":"P-1","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"cv"`),
		pipeFeature(`"PIPE_ID":"P-2","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"Check Valve"`),
		pipeFeature(`"PIPE_ID":"P-3","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"open"`),
		pipeFeature(`"PIPE_ID":"P-4","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"closed"`),
		pipeFeature(`"PIPE_ID":"P-5","DIAM_IN":8,"MATL":"CI","YR":1950,"STATUS":"flap"`),
	))
	pipes, probs, err := PipesFromCollection("pipes.geojson", fc, s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		check, closed bool
	}{{true, false}, {true, false}, {false, false}, {false, true}, {false, false}}
	for i, w := range want {
		if pipes[i].CheckValve != w.check || pipes[i].Closed != w.closed {
			t.Errorf("pipe %s: check valve %v closed %v, want %v %v", pipes[i].ID, pipes[i].CheckValve, pipes[i].Closed, w.check, w.closed)
		}
	}
	fp := featureProblems(probs)
	if len(fp) != 1 || fp[0].Feature != 5 || !strings.Contains(fp[0].What, `status "flap" is not a known value`) {
		t.Errorf("problems %+v, want one about feature 5's unknown status", fp)
	}
}

// A check-valve main split by a tee keeps the valve on every part, each
// drawn from the main's first vertex towards its last (Link: From nearer the
// pipe's start), so flow is allowed only in the digitised direction.
func TestCtlCheckValveOnEveryPart(t *testing.T) {
	s := testSchema
	s.CheckValues = []string{"CV"}
	// main M-1 runs west → east over 0.004° of longitude; M-2 tees into
	// its middle from the north.
	fc := mustDecode(t, collection(
		`{"type":"Feature","properties":{"PIPE_ID":"M-1","DIAM_IN":8,"MATL":"DI","YR":1990,"STATUS":"CV"},"geometry":{"type":"LineString","coordinates":[[-98.404,38.6],[-98.400,38.6]]}}`,
		`{"type":"Feature","properties":{"PIPE_ID":"M-2","DIAM_IN":6,"MATL":"DI","YR":1990},"geometry":{"type":"LineString","coordinates":[[-98.402,38.601],[-98.402,38.6]]}}`,
	))
	pipes, _, err := PipesFromCollection("pipes.geojson", fc, s, 2026)
	if err != nil {
		t.Fatal(err)
	}
	topo, _ := Snap(pipes, 0.5*hydraulics.Foot)
	net := NewNetwork(pipes, topo, nil, nil, nil, nil, []float64{130, 130})
	parts := topo.Parts[0]
	if len(parts) != 2 {
		t.Fatalf("main M-1 has %d parts, want 2 (split at the tee)", len(parts))
	}
	// the first part starts at the main's first vertex, the second ends at its last
	start, end := net.Pipes[parts[0]].From, net.Pipes[parts[1]].To
	if topo.Nodes[start].At != pipes[0].Line[0] || topo.Nodes[end].At != pipes[0].Line[len(pipes[0].Line)-1] {
		t.Errorf("parts run %v → %v, want the main's first → last vertex", topo.Nodes[start].At, topo.Nodes[end].At)
	}
	for _, j := range parts {
		if !net.Pipes[j].CheckValve {
			t.Errorf("part %s has no check valve", net.Pipes[j].ID)
		}
	}
	if j := topo.Parts[1][0]; net.Pipes[j].CheckValve {
		t.Errorf("pipe %s has a check valve it was not given", net.Pipes[j].ID)
	}
}

var ctlSourceSchema = SourceSchema{ID: "TANK", Grade: "HGL", GradeMaxDay: "HGL_MD", GradePeakHour: "HGL_PH", GradeFire: "HGL_FIRE"}

// Per-scenario grades: an empty or absent field takes the grade, a number
// is read in the grade unit, and a value that is not a number or not a
// plausible elevation is reported with the grade kept for that scenario.
func TestCtlScenarioGrades(t *testing.T) {
	cases := []struct {
		name           string
		props          string
		unit           string
		md, ph, fire   float64 // metres
		problemField   string  // "" for none
		problemContain string
	}{
		{"all empty", `"TANK":"T","HGL":1000,"HGL_MD":null,"HGL_PH":"","HGL_FIRE":" "`, "", 304.8, 304.8, 304.8, "", ""},
		{"absent", `"TANK":"T","HGL":1000`, "", 304.8, 304.8, 304.8, "", ""},
		// 1 ft = 0.3048 m exactly (DOMAIN.md §3.7)
		{"each its own", `"TANK":"T","HGL":1000,"HGL_MD":990,"HGL_PH":"985","HGL_FIRE":970`, "", 301.752, 300.228, 295.656, "", ""},
		{"metres", `"TANK":"T","HGL":300,"HGL_FIRE":290`, "m", 300, 300, 290, "", ""},
		{"text", `"TANK":"T","HGL":1000,"HGL_FIRE":"low"`, "", 304.8, 304.8, 304.8, "HGL_FIRE", `grade_fire "low" is not a number`},
		{"no-data", `"TANK":"T","HGL":1000,"HGL_MD":-9999`, "", 304.8, 304.8, 304.8, "HGL_MD", "grade_max_day -9999 ft is outside"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := ctlSourceSchema
			s.GradeUnit = c.unit
			pts, probs, err := SourcesFromCollection("sources.geojson", mustDecode(t, collection(pointFeature(c.props, -98.4, 38.6))), s)
			if err != nil {
				t.Fatal(err)
			}
			ctl := pts[0].Controls
			if ctl == nil || ctl.Pump != nil {
				t.Fatalf("controls %+v, want grades and no pump", ctl)
			}
			got := [3]float64{ctl.GradeMaxDay.Metres(), ctl.GradePeakHour.Metres(), ctl.GradeFire.Metres()}
			for k, w := range [3]float64{c.md, c.ph, c.fire} {
				if math.Abs(got[k]-w) > 1e-9 {
					t.Errorf("grades %v m, want %v %v %v", got, c.md, c.ph, c.fire)
					break
				}
			}
			fp := featureProblems(probs)
			if c.problemField == "" {
				if len(fp) != 0 {
					t.Errorf("problems %+v, want none", fp)
				}
				return
			}
			if len(fp) != 1 || fp[0].Field != c.problemField || !strings.Contains(fp[0].What, c.problemContain) ||
				!strings.Contains(fp[0].Action, "source kept") || fp[0].Feature != 1 || fp[0].ID != "T" {
				t.Errorf("problems %+v, want one on %s containing %q", fp, c.problemField, c.problemContain)
			}
			if !pts[0].Usable {
				t.Error("a bad scenario grade left the source out; it should keep the grade")
			}
		})
	}
}

var ctlPumpSchema = SourceSchema{ID: "WELL", Grade: "HGL", PumpShutoffHead: "H0", PumpDesignFlow: "QD", PumpDesignHead: "HD",
	PumpMaxFlow: "QM", PumpMaxHead: "HM"}

// The five pump fields give a curve that passes through the three points,
// read in the grade unit (ft) and the pump flow unit (gpm by default).
func TestCtlPumpCurveFromFields(t *testing.T) {
	cases := []struct {
		name     string
		unit     string
		props    string
		q        [3]float64 // m³/s
		h        [3]float64 // m
		exponent float64    // C of h = A − B·Q^C, from the closed form below
	}{
		// 1 gpm = 3.785411784e-3/60 m³/s (DOMAIN.md §3.7)
		{"gpm and ft", "", `"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":160,"QM":1500,"HM":110`,
			[3]float64{0, 1000 * 3.785411784e-3 / 60, 1500 * 3.785411784e-3 / 60}, [3]float64{200 * 0.3048, 160 * 0.3048, 110 * 0.3048},
			math.Log(40.0/90) / math.Log(1000.0/1500)},
		{"lps", "lps", `"WELL":"W","HGL":500,"H0":"200","QD":"60","HD":"160","QM":"90","HM":"110"`,
			[3]float64{0, 0.060, 0.090}, [3]float64{200 * 0.3048, 160 * 0.3048, 110 * 0.3048},
			math.Log(40.0/90) / math.Log(60.0/90)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := ctlPumpSchema
			s.PumpFlowUnit = c.unit
			pts, probs, err := SourcesFromCollection("sources.geojson", mustDecode(t, collection(pointFeature(c.props, -98.4, 38.6))), s)
			if err != nil {
				t.Fatal(err)
			}
			if fp := featureProblems(probs); len(fp) != 0 {
				t.Fatalf("problems %+v", fp)
			}
			pump := pts[0].Controls.Pump
			if pump == nil {
				t.Fatal("no pump read")
			}
			for k := range 3 {
				if math.Abs(float64(pump.Flow[k])-c.q[k]) > 1e-12 || math.Abs(float64(pump.Head[k])-c.h[k]) > 1e-9 {
					t.Errorf("point %d: (%g m³/s, %g m), want (%g, %g)", k, float64(pump.Flow[k]), float64(pump.Head[k]), c.q[k], c.h[k])
				}
				// the curve passes through each point within 1 mm
				if got := pump.Curve.Head(hydraulics.Flow(c.q[k])); math.Abs(float64(got)-c.h[k]) > 1e-3 {
					t.Errorf("curve at point %d: %g m, want %g", k, float64(got), c.h[k])
				}
			}
			// C = ln((A−h1)/(A−h2)) / ln(q1/q2) (three-point power fit, Walski et al. 2003)
			if math.Abs(pump.Curve.C-c.exponent) > 1e-9 {
				t.Errorf("exponent %g, want %g", pump.Curve.C, c.exponent)
			}
		})
	}
}

// A pump given in part, with a value that is not a positive number, or
// with points no falling curve fits leaves its source out with a Problem
// naming the field; a source with no pump values is a plain source.
func TestCtlPumpProblems(t *testing.T) {
	cases := []struct {
		name, props, field, contains string
	}{
		{"incomplete", `"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":160,"QM":null,"HM":""`, "QM", "pump curve incomplete: QM, HM empty"},
		{"text", `"WELL":"W","HGL":500,"H0":200,"QD":"lots","HD":160,"QM":1500,"HM":110`, "QD", `pump curve value "lots" is not a number`},
		{"negative", `"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":-160,"QM":1500,"HM":110`, "HD", "pump curve value -160 is not positive"},
		{"rising", `"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":210,"QM":1500,"HM":110`, "HD", "cannot be fitted"},
		{"flows backwards", `"WELL":"W","HGL":500,"H0":200,"QD":1500,"HD":160,"QM":1000,"HM":110`, "QM", "cannot be fitted"},
		{"flat tail", `"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":160,"QM":1500,"HM":160`, "HM", "cannot be fitted"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			fc := mustDecode(t, collection(pointFeature(c.props, -98.4, 38.6),
				pointFeature(`"WELL":"T2","HGL":520`, -98.41, 38.6)))
			pts, probs, err := SourcesFromCollection("sources.geojson", fc, ctlPumpSchema)
			if err != nil {
				t.Fatal(err)
			}
			if pts[0].Usable || pts[0].Controls != nil {
				t.Errorf("source with a bad pump kept: %+v", pts[0])
			}
			if !pts[1].Usable || pts[1].Controls == nil || pts[1].Controls.Pump != nil {
				t.Errorf("source without pump values: %+v, want usable with no pump", pts[1])
			}
			fp := featureProblems(probs)
			if len(fp) != 1 || fp[0].Field != c.field || fp[0].Feature != 1 || fp[0].ID != "W" ||
				!strings.Contains(fp[0].What, c.contains) || !strings.Contains(fp[0].Action, "source left out") {
				t.Errorf("problems %+v, want one on %s containing %q", fp, c.field, c.contains)
			}
		})
	}
	t.Run("no source left", func(t *testing.T) {
		fc := mustDecode(t, collection(pointFeature(`"WELL":"W","HGL":500,"H0":200,"QD":1000,"HD":210,"QM":1500,"HM":110`, -98.4, 38.6)))
		_, _, err := SourcesFromCollection("sources.geojson", fc, ctlPumpSchema)
		if !errors.Is(err, ErrNoUsable) {
			t.Errorf("error %v, want ErrNoUsable", err)
		}
	})
	t.Run("partly mapped", func(t *testing.T) {
		s := ctlPumpSchema
		s.PumpMaxHead = ""
		fc := mustDecode(t, collection(pointFeature(`"WELL":"W","HGL":500`, -98.4, 38.6)))
		_, _, err := SourcesFromCollection("sources.geojson", fc, s)
		if err == nil || !strings.Contains(err.Error(), "sources.fields.pump_max_head") {
			t.Errorf("error %v, want one naming sources.fields.pump_max_head", err)
		}
	})
}

// AddPumps makes the attached node a junction and adds a fixed wet-well
// node at the source's grade and a pump link from it to that node.
func TestCtlAddPumps(t *testing.T) {
	topo, pipes := lineTopology(t)
	fc := mustDecode(t, collection(pointFeature(`"WELL":"W","HGL":100,"H0":200,"QD":1000,"HD":160,"QM":1500,"HM":110`, -97.5, 35)))
	sources, _, err := SourcesFromCollection("sources.geojson", fc, ctlPumpSchema)
	if err != nil {
		t.Fatal(err)
	}
	supplies, _ := AttachSources(topo, sources, 0)
	c := make([]float64, len(pipes))
	for i := range c {
		c[i] = 130
	}
	net := NewNetwork(pipes, topo, supplies, nil, nil, nil, c)
	nn, np := len(net.Nodes), len(net.Pipes)
	at := supplies[0].Node
	st := AddPumps(net, topo, sources, supplies)
	if len(st) != 1 || len(net.Nodes) != nn+1 || len(net.Pipes) != np+1 || len(topo.Nodes) != nn+1 {
		t.Fatalf("stations %+v, %d nodes, %d pipes", st, len(net.Nodes), len(net.Pipes))
	}
	s := st[0]
	pump := net.Pipes[s.Link]
	switch {
	case net.Nodes[at].Fixed:
		t.Error("the attached node is still fixed")
	case !net.Nodes[s.Suction].Fixed || math.Abs(net.Nodes[s.Suction].Grade.Feet()-100) > 1e-9:
		t.Errorf("suction node %+v, want fixed at 100 ft", net.Nodes[s.Suction])
	case pump.Pump == nil || pump.From != s.Suction || pump.To != at || s.Discharge != at:
		t.Errorf("pump link %+v, station %+v", pump, s)
	case supplies[0].Node != s.Suction:
		t.Errorf("supply node %d, want the suction node %d", supplies[0].Node, s.Suction)
	case net.Nodes[s.Suction].ID != "W.suction" || pump.ID != "W.pump":
		t.Errorf("ids %q, %q", net.Nodes[s.Suction].ID, pump.ID)
	}
	if err := net.Validate(); err != nil {
		t.Errorf("network with the pump does not validate: %v", err)
	}
	// nothing joins the suction node: the nearest node to the source is still the attached one
	k := -1
	topo.nearest(sources[0].At, func(n int) bool { k = n; return false })
	if k != at {
		t.Errorf("nearest node to the source is %d, want the attached node %d", k, at)
	}
}
