package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"headroom/hydraulics"
)

// The control tests run small networks of the invented hamlet of
// Brindlecombe (lon −98.4, lat 38.6), written as GeoJSON into a temporary
// folder: nodes k = 0, 1, … lie 0.004° of longitude apart on one parallel,
// pipes carry a length field (so lengths are exact) and a measured C (so no
// aging), and the ground is at 0 ft everywhere.

// ctlPipe is one main of a test network, drawn from node from to node to.
type ctlPipe struct {
	id       string
	from, to int
	dia      float64 // in
	lenFt    float64
	status   string
}

// ctlSource is a source at node k with its properties (JSON members).
type ctlSource struct {
	node  int
	props string
}

// ctlTown is a test network and the extra config lines it needs.
type ctlTown struct {
	pipes       []ctlPipe
	sources     []ctlSource
	demands     map[int]float64 // node → average-day gpm
	sourceKeys  string          // extra [sources.fields] lines
	fireEnabled bool
}

func ctlLonLat(k int) string { return fmt.Sprintf("[%.3f,38.6]", -98.4+0.004*float64(k)) }

// ctlWrite writes the town's layers and config into a temporary folder and
// returns the analysis of it.
func ctlWrite(t *testing.T, town ctlTown) *result {
	t.Helper()
	dir := t.TempDir()
	write := func(name, text string) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	collection := func(fs []string) string {
		return `{"type":"FeatureCollection","features":[` + strings.Join(fs, ",\n") + "]}\n"
	}
	point := func(k int, props string) string {
		return `{"type":"Feature","properties":{` + props + `},"geometry":{"type":"Point","coordinates":` + ctlLonLat(k) + `}}`
	}
	var fs []string
	nodes := 0
	for _, p := range town.pipes {
		fs = append(fs, fmt.Sprintf(`{"type":"Feature","properties":{"id":%q,"dia_in":%g,"material":"PVC","year":2000,"c":120,"len_ft":%g,"status":%q},"geometry":{"type":"LineString","coordinates":[%s,%s]}}`,
			p.id, p.dia, p.lenFt, p.status, ctlLonLat(p.from), ctlLonLat(p.to)))
		nodes = max(nodes, p.from+1, p.to+1)
	}
	write("pipes.geojson", collection(fs))
	fs = nil
	for _, s := range town.sources {
		fs = append(fs, point(s.node, s.props))
	}
	write("sources.geojson", collection(fs))
	fs = nil
	for k := range nodes {
		if q, ok := town.demands[k]; ok {
			fs = append(fs, point(k, fmt.Sprintf(`"meter":"M%d","gpm":%g`, k, q)))
		}
	}
	write("demands.geojson", collection(fs))
	fs = nil
	for k := range nodes {
		fs = append(fs, point(k, `"z_ft":0`))
	}
	write("elevations.geojson", collection(fs))
	write("headroom.toml", fmt.Sprintf(`units = "us"
analysis_year = 2026
[pipes]
path = "pipes.geojson"
# The independent checks in these tests use the layer's diameter as the inside diameter.
diameter_is = "inside"
[pipes.fields]
id = "id"
diameter = "dia_in"
material = "material"
install_year = "year"
measured_c = "c"
status = "status"
length = "len_ft"
check_values = ["CV"]
[sources]
path = "sources.geojson"
[sources.fields]
id = "name"
grade = "hgl_ft"
%s
[demands]
path = "demands.geojson"
peak_hour_factor = 2.5
max_day_factor = 1.5
[demands.fields]
id = "meter"
demand = "gpm"
[elevations]
path = "elevations.geojson"
[elevations.fields]
elevation = "z_ft"
[fire_flow]
enabled = %v
`, town.sourceKeys, town.fireEnabled))
	return analyseConfig(t, filepath.Join(dir, "headroom.toml"))
}

// ctlGPM is one US gallon per minute in m³/s: 231 in³ = 3.785411784 L
// exactly (DOMAIN.md §3.7).
const ctlGPM = 3.785411784e-3 / 60

// ctlHWLossFt is the Hazen-Williams head loss in ft of a full pipe,
// computed here from the SI velocity form V = 0.849·C·R^0.63·S^0.54 with
// R = D/4 (DOMAIN.md §1.1), signed with the flow.
func ctlHWLossFt(qGPM, dIn, lenFt, c float64) float64 {
	q := math.Abs(qGPM) * ctlGPM
	d := dIn * 0.0254
	v := q / (math.Pi * d * d / 4)
	s := math.Pow(v/(0.849*c*math.Pow(d/4, 0.63)), 1/0.54)
	return math.Copysign(s*lenFt, qGPM)
}

// ctlBisect returns the root of the decreasing function f on [lo, hi] to
// 1e-9 (common numerical practice).
func ctlBisect(f func(float64) float64, lo, hi float64) float64 {
	for hi-lo > 1e-9 {
		mid := (lo + hi) / 2
		if f(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

// ctlFlowGPM is the peak-hour flow in gpm of input pipe id (its first part).
func ctlFlowGPM(t *testing.T, r *result, id string) float64 {
	t.Helper()
	for i, p := range r.pipes {
		if p.ID == id {
			return r.sol.Flow[r.parts[i][0]].GPM()
		}
	}
	t.Fatalf("no pipe %s", id)
	return 0
}

// ctlHeadFt is the head in ft in sol at the network node at position k
// (not a pump's suction node, which shares its source's position).
func ctlHeadFt(t *testing.T, r *result, sol *hydraulics.Solution, k int) float64 {
	t.Helper()
	want := -98.4 + 0.004*float64(k)
	for i, n := range r.topo.Nodes {
		if math.Abs(n.At[0]-want) < 1e-9 && !strings.HasSuffix(n.ID, ".suction") {
			return sol.Head[i].Feet()
		}
	}
	t.Fatalf("no node at %g", want)
	return 0
}

// A pump lifts water from a low wet well into a zone that a tank floats
// on. Its operating point is where the fitted curve meets the system curve,
//
//	H_well + A − B·Q^C = H_tank + h_f,1(Q) + h_f,2(Q − d),
//
// with d the demand at the middle node (the tank takes or gives the rest),
// found here by bisection, with the curve fitted here from the three points
// by the closed form of the power curve (A = shutoff head,
// C = ln((A−h₁)/(A−h₂))/ln(q₁/q₂), B = (A−h₁)/q₁^C; Walski et al., 2003).
func TestCtlPumpOperatingPoint(t *testing.T) {
	const wellFt, tankFt = 100.0, 250.0
	const shutoff, qDesign, hDesign, qMax, hMax = 220.0, 1000.0, 180.0, 1500.0, 140.0
	expC := math.Log((shutoff-hDesign)/(shutoff-hMax)) / math.Log(qDesign/qMax)
	expB := (shutoff - hDesign) / math.Pow(qDesign, expC)
	pumpFt := func(q float64) float64 { return shutoff - expB*math.Pow(q, expC) }
	cases := []struct {
		name      string
		demandGPM float64 // average day at the middle node; peak hour is 2.5×
	}{
		{"no demand", 0},
		{"demand at the middle node", 160},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := ctlWrite(t, ctlTown{
				pipes: []ctlPipe{{"W-1", 0, 1, 12, 1000, "open"}, {"W-2", 1, 2, 12, 1000, "open"}},
				sources: []ctlSource{
					{0, fmt.Sprintf(`"name":"Low well","hgl_ft":%g,"h0":%g,"qd":%g,"hd":%g,"qm":%g,"hm":%g`, wellFt, shutoff, qDesign, hDesign, qMax, hMax)},
					{2, fmt.Sprintf(`"name":"Upper tank","hgl_ft":%g`, tankFt)},
				},
				demands: map[int]float64{1: c.demandGPM},
				sourceKeys: `pump_shutoff_head = "h0"
pump_design_flow = "qd"
pump_design_head = "hd"
pump_max_flow = "qm"
pump_max_head = "hm"`,
			})
			if len(r.ctlPumps) != 1 {
				t.Fatalf("%d pump stations, want 1", len(r.ctlPumps))
			}
			st := r.ctlPumps[0]
			d := 2.5 * c.demandGPM
			system := func(q float64) float64 {
				return wellFt + pumpFt(q) - ctlHWLossFt(q, 12, 1000, 120) - ctlHWLossFt(q-d, 12, 1000, 120) - tankFt
			}
			want := ctlBisect(system, 0, qMax*1.5)
			got := r.sol.Flow[st.Link].GPM()
			t.Logf("pump %.3f gpm, independent %.3f gpm", got, want)
			// within 0.5 gpm (the task's tolerance)
			if math.Abs(got-want) > 0.5 {
				t.Errorf("pump flow %.3f gpm, independent operating point %.3f gpm", got, want)
			}
			gain := r.sol.Head[st.Discharge].Feet() - r.sol.Head[st.Suction].Feet()
			if math.Abs(gain-pumpFt(want)) > 0.05 {
				t.Errorf("pump head gain %.3f ft, curve at the operating point %.3f ft", gain, pumpFt(want))
			}
			if f := ctlFlowGPM(t, r, "W-1"); math.Abs(f-got) > 1e-6 {
				t.Errorf("main W-1 carries %.3f gpm, the pump %.3f", f, got)
			}
			var b strings.Builder
			r.ctlSummarisePumps(func(f string, a ...any) { fmt.Fprintf(&b, f, a...) })
			line := fmt.Sprintf("peak hour %.1f gpm at %.1f ft head", got, gain)
			if !strings.Contains(b.String(), "Low well.pump from source Low well") || !strings.Contains(b.String(), line) {
				t.Errorf("summary lacks the pump or %q:\n%s", line, b.String())
			}
		})
	}
}

// A check valve lets a main carry flow only from its first vertex to its
// last: where the grades would drive it backwards the main carries nothing
// and the other main serves the junction alone; forwards it flows. The
// same main without the valve carries the backward flow (the control).
func TestCtlCheckValve(t *testing.T) {
	cases := []struct {
		name           string
		north, south   float64 // tank grades, ft
		status         string  // of main CV-1, drawn from the south tank's node 2 to node 1
		wantZero       bool
		wantForwardCV1 bool
	}{
		{"backwards, valve", 250, 200, "CV", true, false},
		{"backwards, no valve", 250, 200, "open", false, false},
		{"forwards, valve", 200, 250, "CV", false, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := ctlWrite(t, ctlTown{
				pipes: []ctlPipe{{"N-1", 0, 1, 8, 1000, "open"}, {"CV-1", 2, 1, 8, 1000, c.status}},
				sources: []ctlSource{
					{0, fmt.Sprintf(`"name":"North tank","hgl_ft":%g`, c.north)},
					{2, fmt.Sprintf(`"name":"South tank","hgl_ft":%g`, c.south)},
				},
				demands: map[int]float64{1: 100},
			})
			q := ctlFlowGPM(t, r, "CV-1")
			layer := r.pipeLayer()
			status, ok := columnLookupOf(layer.Columns).position("status")
			if !ok {
				t.Fatal("the pipe layer has no status column")
			}
			for i, p := range r.pipes {
				if p.ID != "CV-1" {
					continue
				}
				want := map[string]string{"CV": "check valve", "open": "open"}[c.status]
				if got := layerRows(layer)[i].Values[status]; got != want {
					t.Errorf("status column %v, want %q", got, want)
				}
			}
			switch {
			case c.wantZero && q != 0:
				t.Errorf("check-valve main carries %.6f gpm against its direction, want 0", q)
			case !c.wantZero && c.wantForwardCV1 && !(q > 1):
				t.Errorf("check-valve main carries %.3f gpm, want forward flow", q)
			case !c.wantZero && !c.wantForwardCV1 && !(q < -1):
				t.Errorf("open main carries %.3f gpm, want backward flow (the control)", q)
			}
			if c.wantZero {
				// N-1 alone carries the peak demand, 2.5 × 100 gpm, and the
				// junction's head is the north grade less its HW loss.
				if n := ctlFlowGPM(t, r, "N-1"); math.Abs(n-250) > 1e-3 {
					t.Errorf("N-1 carries %.4f gpm, want 250", n)
				}
				want := c.north - ctlHWLossFt(250, 8, 1000, 120)
				if h := ctlHeadFt(t, r, r.sol, 1); math.Abs(h-want) > 0.01 {
					t.Errorf("junction head %.4f ft, want %.4f (north grade less the HW loss)", h, want)
				}
			}
		})
	}
}

// Each scenario holds the tank at its own grade, and the fire-flow sweep
// at grade_fire. On one main from a tank with no demand, the heads equal
// the scenario's grade, and the available fire flow at the far end is the
// flow whose HW loss takes the grade down to the 20 psi residual,
// h_f(Q) = H − z − 20 psi × 144/62.4 ft/psi (DOMAIN.md §3.7, §4.4): a lower
// tank level gives less fire flow.
func TestCtlScenarioGrades(t *testing.T) {
	const residualFt = 20 * 144 / 62.4
	fireAt := func(gradeFt float64) float64 {
		return ctlBisect(func(q float64) float64 { return gradeFt - residualFt - ctlHWLossFt(q, 8, 2000, 120) }, 0, 20000)
	}
	cases := []struct {
		name               string
		props              string
		avg, md, ph, fire  float64 // grades the scenarios must hold, ft
		separateFireSolved bool
	}{
		{"one grade", `"hgl_ft":250`, 250, 250, 250, 250, false},
		// an empty grade_fire is the grade field's value (not max day's)
		{"fire empty", `"hgl_ft":250,"md":240,"ph":230,"fire":""`, 250, 240, 230, 250, true},
		{"fire at max day's", `"hgl_ft":250,"md":240,"ph":230,"fire":240`, 250, 240, 230, 240, false},
		{"low level for fire", `"hgl_ft":250,"md":240,"ph":230,"fire":200`, 250, 240, 230, 200, true},
	}
	var available []float64
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := ctlWrite(t, ctlTown{
				pipes:       []ctlPipe{{"F-1", 0, 1, 8, 2000, "open"}},
				sources:     []ctlSource{{0, `"name":"Hill tank",` + c.props}},
				demands:     map[int]float64{1: 0},
				sourceKeys:  "grade_max_day = \"md\"\ngrade_peak_hour = \"ph\"\ngrade_fire = \"fire\"",
				fireEnabled: true,
			})
			for k, want := range []float64{c.avg, c.md, c.ph} {
				if h := ctlHeadFt(t, r, r.scenarios[k].sol, 1); math.Abs(h-want) > 1e-6 {
					t.Errorf("%s: head %.6f ft, want the grade %g", r.scenarios[k].name, h, want)
				}
			}
			if (r.ctlFire != nil) != c.separateFireSolved {
				t.Errorf("separate fire background solved: %v, want %v", r.ctlFire != nil, c.separateFireSolved)
			}
			if len(r.hydrants) != 1 || r.hydrants[0].res == nil {
				t.Fatalf("hydrants %+v, want one result", r.hydrants)
			}
			got := r.hydrants[0].res.Available.GPM()
			want := fireAt(c.fire)
			t.Logf("available %.1f gpm, independent %.1f gpm", got, want)
			// within 1 % (the tolerance for the fire-flow check)
			if math.Abs(got-want) > 0.01*want {
				t.Errorf("available fire flow %.1f gpm, independent %.1f gpm at grade %g ft", got, want, c.fire)
			}
			available = append(available, got)
		})
	}
	if len(available) == 4 && !(available[3] < available[2] && available[2] < available[0] && math.Abs(available[1]-available[0]) < 1) {
		t.Errorf("available fire flow %v gpm: a lower tank level must give less", available)
	}
}

// A zone boundary valve closed in the layer leaves two zones, each
// supplied by its own tank: no junction is unsupplied, the closed main
// carries nothing, each tank's main carries its own zone's peak demand, and
// each junction's head is its tank's grade less that main's HW loss.
func TestCtlZoneBoundary(t *testing.T) {
	r := ctlWrite(t, ctlTown{
		pipes: []ctlPipe{{"Z-1", 0, 1, 8, 1000, "open"}, {"Z-2", 1, 2, 8, 1000, "closed"}, {"Z-3", 2, 3, 8, 1000, "open"}},
		sources: []ctlSource{
			{0, `"name":"Low zone tank","hgl_ft":250`},
			{3, `"name":"High zone tank","hgl_ft":300`},
		},
		demands: map[int]float64{1: 100, 2: 200},
	})
	if len(r.sol.Unsupplied) != 0 {
		t.Fatalf("unsupplied nodes %v, want none", r.sol.Unsupplied)
	}
	cases := []struct {
		pipe      string
		flowGPM   float64 // 2.5 × the zone's average day; sign from the drawing direction
		node      int
		tankFt    float64
		lossFlowQ float64
	}{
		{"Z-1", 250, 1, 250, 250},
		{"Z-2", 0, -1, 0, 0},
		{"Z-3", -500, 2, 300, 500},
	}
	for _, c := range cases {
		t.Run(c.pipe, func(t *testing.T) {
			if q := ctlFlowGPM(t, r, c.pipe); math.Abs(q-c.flowGPM) > 1e-3 {
				t.Errorf("flow %.4f gpm, want %g", q, c.flowGPM)
			}
			if c.node < 0 {
				return
			}
			want := c.tankFt - ctlHWLossFt(c.lossFlowQ, 8, 1000, 120)
			if h := ctlHeadFt(t, r, r.sol, c.node); math.Abs(h-want) > 0.01 {
				t.Errorf("head at node %d %.4f ft, want %.4f", c.node, h, want)
			}
		})
	}
}
