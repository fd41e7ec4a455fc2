package scoring

import (
	"math"
	"strings"
	"testing"

	"headroom/hydraulics"
)

// exponentialCounts returns the expected yearly counts
// exposure·n0·e^(a·(t − t0)) for the years from..to, and the years.
func exponentialCounts(exposure, n0, a float64, from, to, t0 int) (counts, years []float64) {
	for t := from; t <= to; t++ {
		years = append(years, float64(t))
		counts = append(counts, exposure*n0*math.Exp(a*float64(t-t0)))
	}
	return counts, years
}

func TestFitBreakGrowthRecoversExactExponential(t *testing.T) {
	// When the counts are exactly μ_t = L·N0·e^(A(t−t0)), the Poisson score
	// equations Σ(y−μ) = 0 and Σ(y−μ)x = 0 hold at the true (N0, A), and the
	// log-likelihood is strictly concave, so the fit must return them.
	cases := []struct {
		name     string
		exposure float64 // metres
		n0       float64 // breaks per metre per year at t0
		a        float64 // 1/yr
		from, to int
	}{
		{"cast iron, 5 %/yr over 10 years", 16093.44, 2.5e-4, 0.05, 2015, 2024},
		{"declining, −3 %/yr", 5000, 1e-3, -0.03, 2010, 2024},
		{"steep, 20 %/yr over 6 years", 800, 2e-3, 0.2, 2019, 2024},
		{"flat", 12000, 4e-4, 0, 2000, 2009},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			counts, years := exponentialCounts(tc.exposure, tc.n0, tc.a, tc.from, tc.to, tc.to)
			fit, err := fitBreakGrowth(counts, years, tc.exposure)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(fit.Growth-tc.a) > 1e-9 {
				t.Errorf("A = %.12f /yr, want %.12f ± 1e-9", fit.Growth, tc.a)
			}
			if got := fit.rateAt(float64(tc.to)); math.Abs(got-tc.n0) > 1e-9*tc.n0 {
				t.Errorf("N(t0) = %.6e /m/yr, want %.6e", got, tc.n0)
			}
			if fit.Iterations > 20 {
				t.Errorf("took %d Newton steps, want ≤ 20 for a concave problem from a near start", fit.Iterations)
			}
		})
	}
}

func TestFitBreakGrowthDomainCheck(t *testing.T) {
	// DOMAIN.md §7.2: breaks going from 2 to 5 per year over 10 years give
	// A = ln(2.5)/10 = 0.0916/yr.
	want := math.Log(2.5) / 10 // 0.091629
	cases := []struct {
		name          string
		counts, years []float64
	}{
		// Two years, two parameters: the fit passes through both points.
		{"end points only", []float64{2, 5}, []float64{2010, 2020}},
		// Every year on the curve 2·2.5^(k/10), k = 0..10.
		{"every year on the curve", nil, nil},
	}
	for k := 0; k <= 10; k++ {
		cases[1].counts = append(cases[1].counts, 2*math.Pow(2.5, float64(k)/10))
		cases[1].years = append(cases[1].years, float64(2010+k))
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			fit, err := fitBreakGrowth(tc.counts, tc.years, 1000)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(fit.Growth-want) > 1e-9 {
				t.Errorf("A = %.6f /yr, want ln(2.5)/10 = %.6f", fit.Growth, want)
			}
			if math.Abs(fit.Growth-0.0916) > 5e-5 {
				t.Errorf("A = %.6f /yr, want DOMAIN.md's 0.0916 to 4 decimals", fit.Growth)
			}
		})
	}
}

// profileGrowth maximises the Poisson log-likelihood over A by brute force
// on a grid of the given step over [lo, hi], with N profiled out (for a
// fixed A its maximum-likelihood value is Σy / Σ E·e^(A·t), with t
// measured from the first year). It returns the best A on the grid.
func profileGrowth(counts, years []float64, exposure, lo, hi, step float64) float64 {
	best, bestLL := math.NaN(), math.Inf(-1)
	for a := lo; a <= hi; a += step {
		var total, weight float64
		for k, y := range counts {
			total += y
			weight += exposure * math.Exp(a*(years[k]-years[0]))
		}
		n := total / weight
		var ll float64
		for k, y := range counts {
			mu := exposure * n * math.Exp(a*(years[k]-years[0]))
			ll += y*math.Log(mu) - mu
		}
		if ll > bestLL {
			best, bestLL = a, ll
		}
	}
	return best
}

func TestFitBreakGrowthZeroYearsMatchesBruteForce(t *testing.T) {
	// Years with no breaks: ln N is −∞ there, so a least-squares line
	// through ln N cannot use them. The Poisson fit must still be the
	// maximum of the likelihood, which a grid scan over A finds by brute
	// force (to the grid step 1e-4 /yr).
	cases := []struct {
		name   string
		counts []float64
	}{
		{"sparse, rising", []float64{0, 1, 0, 0, 2, 1, 0, 3, 2, 4}},
		{"zeros at both ends", []float64{0, 2, 1, 3, 0, 2, 5, 1, 3, 0}},
		{"falling", []float64{6, 4, 5, 0, 3, 2, 0, 1, 0, 1}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			years := make([]float64, len(tc.counts))
			for k := range years {
				years[k] = float64(2015 + k)
			}
			const exposure = 3200.0 // m
			fit, err := fitBreakGrowth(tc.counts, years, exposure)
			if err != nil {
				t.Fatal(err)
			}
			grid := profileGrowth(tc.counts, years, exposure, -1, 1, 1e-4)
			if math.Abs(fit.Growth-grid) > 1e-4 {
				t.Errorf("A = %.5f /yr, brute-force maximum at %.5f /yr", fit.Growth, grid)
			}
			// The maximum-likelihood equations: Σμ = Σy and Σμ·t = Σy·t.
			var sumY, sumMu, sumYT, sumMuT float64
			for k, y := range tc.counts {
				mu := exposure * fit.rateAt(years[k])
				sumY, sumMu = sumY+y, sumMu+mu
				sumYT, sumMuT = sumYT+y*(years[k]-2015), sumMuT+mu*(years[k]-2015)
			}
			if math.Abs(sumMu-sumY) > 1e-9 || math.Abs(sumMuT-sumYT) > 1e-8 {
				t.Errorf("Σμ = %.9f, Σy = %.0f; Σμt = %.9f, Σyt = %.0f: want equal", sumMu, sumY, sumMuT, sumYT)
			}
		})
	}
}

func TestFitBreakGrowthRejects(t *testing.T) {
	years := []float64{2020, 2021, 2022, 2023}
	cases := []struct {
		name     string
		counts   []float64
		years    []float64
		exposure float64
		want     string
	}{
		{"no breaks", []float64{0, 0, 0, 0}, years, 100, "no breaks"},
		{"all in the last year", []float64{0, 0, 0, 7}, years, 100, "unbounded"},
		{"all in the first year", []float64{3, 0, 0, 0}, years, 100, "unbounded"},
		{"negative count", []float64{1, -1, 2, 3}, years, 100, "not a finite number ≥ 0"},
		{"length mismatch", []float64{1, 2}, years, 100, "2 counts for 4 years"},
		{"one year", []float64{4}, []float64{2020}, 100, "2 years or more"},
		{"zero exposure", []float64{1, 2, 3, 4}, years, 0, "exposure"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := fitBreakGrowth(tc.counts, tc.years, tc.exposure)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one containing %q", err, tc.want)
			}
		})
	}
}

func TestPipeBreakRatesByHand(t *testing.T) {
	// Hand examples:
	//   pipe 0: 1 mile, 3 breaks in 2015–2019 (5 years):
	//     3 / (1 mi · 5 yr) = 0.6 /mi/yr = 0.6 / 1.609344 · 100 = 37.28227 /100 km/yr
	//   pipe 1: 500 m, 1 break: 1 / (500 m · 5 yr) = 4e-4 /m/yr = 40 /100 km/yr
	//   pipe 2: no breaks: 0
	//   pipe 3: zero length: rate not defined (NaN)
	w := BreakWindow{From: 2015, To: 2019}
	pipes := []BreakPipe{
		{Length: 5280 * hydraulics.Foot, Material: "CI", InstallYear: 1958},
		{Length: 500 * hydraulics.Metre, Material: "DI", InstallYear: 1975},
		{Length: 300 * hydraulics.Metre, Material: "PVC", InstallYear: 1995},
		{Length: 0, Material: "CI", InstallYear: 1958},
	}
	breaks := []BreakRecord{
		{Pipe: 0, Year: 2015.0},   // first instant of the window: in
		{Pipe: 0, Year: 2017.4},   // in
		{Pipe: 0, Year: 2019.999}, // last days of 2019: in
		{Pipe: 0, Year: 2014.99},  // December 2014: out
		{Pipe: 0, Year: 2020.0},   // 1 January 2020: out
		{Pipe: 1, Year: 2016.5},   // in
		{Pipe: -1, Year: 2017.0},  // matched to no main: not counted
		{Pipe: 2, Year: math.NaN()},
	}
	got := PipeBreakRates(pipes, breaks, w)
	if len(got) != len(pipes) {
		t.Fatalf("got %d entries, want one per pipe (%d)", len(got), len(pipes))
	}
	wantCounts := []int{3, 1, 0, 0}
	for i, want := range wantCounts {
		if got[i].Count != want {
			t.Errorf("pipe %d: count %d, want %d", i, got[i].Count, want)
		}
	}
	if r := PerMileYear(got[0].PerLengthYear); math.Abs(r-0.6) > 1e-12 {
		t.Errorf("pipe 0: %.12f breaks/mi/yr, want 0.6", r)
	}
	if r := PerHundredKmYear(got[0].PerLengthYear); math.Abs(r-37.28227) > 1e-5 {
		t.Errorf("pipe 0: %.5f breaks/100 km/yr, want 37.28227", r)
	}
	if r := got[1].PerLengthYear; math.Abs(r-4e-4) > 1e-15 {
		t.Errorf("pipe 1: %g breaks/m/yr, want 4e-4", r)
	}
	if r := PerHundredKmYear(got[1].PerLengthYear); math.Abs(r-40) > 1e-9 {
		t.Errorf("pipe 1: %g breaks/100 km/yr, want 40", r)
	}
	if got[2].PerLengthYear != 0 {
		t.Errorf("pipe 2: rate %g, want 0", got[2].PerLengthYear)
	}
	if !math.IsNaN(got[3].PerLengthYear) {
		t.Errorf("pipe 3 (zero length): rate %g, want NaN", got[3].PerLengthYear)
	}
	// Every record is accounted for: 4 counted, 1 unmatched, 3 outside
	// (2014.99, 2020.0 and the NaN year).
	tally := TallyBreaks(breaks, w)
	if want := (BreakTally{Counted: 4, Unmatched: 1, OutsideWindow: 3}); tally != want {
		t.Errorf("tally %+v, want %+v", tally, want)
	}
}

func TestBreakWindowValidate(t *testing.T) {
	cases := []struct {
		name    string
		w       BreakWindow
		years   int
		wantErr string
	}{
		{"ten years", BreakWindow{2015, 2024}, 10, ""},
		{"one year", BreakWindow{2020, 2020}, 1, ""},
		{"reversed", BreakWindow{2024, 2015}, 0, "is after last year"},
		{"too long", BreakWindow{1, 2024}, 0, "longer than"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.w.Validate()
			if tc.wantErr == "" {
				if err != nil {
					t.Fatalf("unexpected error %v", err)
				}
				if tc.w.Years() != tc.years {
					t.Errorf("Years() = %d, want %d", tc.w.Years(), tc.years)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
				t.Errorf("error %v, want one containing %q", err, tc.wantErr)
			}
		})
	}
}

// expectBreakPanic fails t unless f panics with a message containing want.
func expectBreakPanic(t *testing.T, want string, f func()) {
	t.Helper()
	defer func() {
		t.Helper()
		r := recover()
		if msg, _ := r.(string); !strings.Contains(msg, want) {
			t.Errorf("panic %v, want one containing %q", r, want)
		}
	}()
	f()
}

func TestBreakRatesPanicOnCallerBugs(t *testing.T) {
	pipes := []BreakPipe{{Length: 100}}
	expectBreakPanic(t, "pipe index 1 of 1", func() {
		PipeBreakRates(pipes, []BreakRecord{{Pipe: 1, Year: 2020}}, BreakWindow{2015, 2024})
	})
	expectBreakPanic(t, "pipe index -2 of 1", func() {
		BreakCohorts(pipes, []BreakRecord{{Pipe: -2, Year: 2020}}, BreakWindow{2015, 2024}, CohortOptions{})
	})
	expectBreakPanic(t, "is after last year", func() {
		PipeBreakRates(pipes, nil, BreakWindow{2024, 2015})
	})
}

// breaksEachYear returns counts[k] break records on pipe in year from+k,
// each at mid-year.
func breaksEachYear(pipe, from int, counts []int) []BreakRecord {
	var out []BreakRecord
	for k, n := range counts {
		for range n {
			out = append(out, BreakRecord{Pipe: pipe, Year: float64(from+k) + 0.5})
		}
	}
	return out
}

func TestBreakCohortsGroupAndSort(t *testing.T) {
	// Material × install decade, materials in any case and spacing, sorted
	// by material, then decade with unknown (0) first.
	pipes := []BreakPipe{
		{Length: 100, Material: "CI", InstallYear: 1955},   // CI 1950
		{Length: 200, Material: "DI", InstallYear: 1979},   // DI 1970
		{Length: 300, Material: " ci ", InstallYear: 1950}, // CI 1950
		{Length: 400, Material: "PVC", InstallYear: 0},     // PVC unknown
		{Length: 500, Material: "CI", InstallYear: 1960},   // CI 1960
		{Length: 600, Material: "AC", InstallYear: 1968},   // AC 1960
		{Length: 700, Material: "CI", InstallYear: 0},      // CI unknown
	}
	breaks := []BreakRecord{{Pipe: 0, Year: 2020.2}, {Pipe: 2, Year: 2021.7}, {Pipe: 6, Year: 2022.1}}
	got := BreakCohorts(pipes, breaks, BreakWindow{2015, 2024}, CohortOptions{})
	want := []struct {
		material string
		decade   int
		pipes    int
		length   hydraulics.Length
		breaks   int
	}{
		{"AC", 1960, 1, 600, 0},
		{"CI", 0, 1, 700, 1},
		{"CI", 1950, 2, 400, 2},
		{"CI", 1960, 1, 500, 0},
		{"DI", 1970, 1, 200, 0},
		{"PVC", 0, 1, 400, 0},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d cohorts, want %d: %+v", len(got), len(want), got)
	}
	for k, w := range want {
		g := got[k]
		if g.Material != w.material || g.Decade != w.decade || g.Pipes != w.pipes || g.Length != w.length || g.Breaks != w.breaks {
			t.Errorf("cohort %d = %s %d: %d pipes, %g m, %d breaks; want %s %d: %d pipes, %g m, %d breaks",
				k, g.Material, g.Decade, g.Pipes, g.Length, g.Breaks, w.material, w.decade, w.pipes, w.length, w.breaks)
		}
	}
	// CI 1950: 2 breaks / (400 m · 10 yr) = 5e-4 /m/yr; too few to fit.
	ci := got[2]
	if math.Abs(ci.PerLengthYear-5e-4) > 1e-15 || ci.Fitted || ci.Growth != 0 || math.Abs(ci.BaseRate-5e-4) > 1e-15 {
		t.Errorf("CI 1950: rate %g, fitted %v, growth %g, base %g; want 5e-4, false, 0, 5e-4",
			ci.PerLengthYear, ci.Fitted, ci.Growth, ci.BaseRate)
	}
}

func TestBreakCohortsGrowth(t *testing.T) {
	w := BreakWindow{From: 2015, To: 2024}
	years := make([]float64, w.Years())
	for k := range years {
		years[k] = float64(w.From + k)
	}
	toFloat := func(c []int) []float64 {
		out := make([]float64, len(c))
		for k, n := range c {
			out[k] = float64(n)
		}
		return out
	}
	// Two CI mains of 1960 (2 km together) share the rising counts.
	rising := []int{3, 4, 4, 5, 6, 7, 8, 9, 10, 12}
	// A sudden run: 1, 2, 4, ... doubling, A = ln 2 ≈ 0.69/yr, beyond the clamp.
	doubling := []int{1, 2, 4, 8, 16, 32, 64, 128, 256, 512}
	// 20 breaks in only two years: too few years to fit.
	twoYears := []int{0, 0, 0, 10, 0, 0, 0, 0, 10, 0}
	// 6 breaks: fewer than MinBreaks.
	thin := []int{1, 0, 1, 0, 2, 0, 0, 1, 0, 1}
	pipes := []BreakPipe{
		{Length: 1200, Material: "CI", InstallYear: 1962},
		{Length: 800, Material: "CI", InstallYear: 1967},
		{Length: 1000, Material: "STL", InstallYear: 1948},
		{Length: 1000, Material: "AC", InstallYear: 1970},
		{Length: 1000, Material: "DI", InstallYear: 1985},
	}
	var breaks []BreakRecord
	half := func(c []int, odd bool) []int { // split a cohort's counts between two mains
		out := make([]int, len(c))
		for k, n := range c {
			out[k] = n / 2
			if odd {
				out[k] = n - n/2
			}
		}
		return out
	}
	breaks = append(breaks, breaksEachYear(0, w.From, half(rising, false))...)
	breaks = append(breaks, breaksEachYear(1, w.From, half(rising, true))...)
	breaks = append(breaks, breaksEachYear(2, w.From, doubling)...)
	breaks = append(breaks, breaksEachYear(3, w.From, twoYears)...)
	breaks = append(breaks, breaksEachYear(4, w.From, thin)...)
	const defaultGrowth = 0.05
	got := BreakCohorts(pipes, breaks, w, CohortOptions{DefaultGrowth: defaultGrowth})
	byMaterial := map[string]Cohort{}
	for _, c := range got {
		byMaterial[c.Material] = c
	}
	// N(t0) for a fixed A, worked directly: Σy / (L · Σ e^(A(t − 2024))).
	baseRate := func(counts []int, length, a float64) float64 {
		var total, weight float64
		for k, n := range counts {
			total += float64(n)
			weight += math.Exp(a * (years[k] - 2024))
		}
		return total / (length * weight)
	}

	t.Run("fitted", func(t *testing.T) {
		c := byMaterial["CI"]
		grid := profileGrowth(toFloat(rising), years, 2000, -1, 1, 1e-4)
		if !c.Fitted || math.Abs(c.Growth-grid) > 1e-4 {
			t.Fatalf("CI: fitted %v, A = %.5f; want true and the brute-force maximum %.5f", c.Fitted, c.Growth, grid)
		}
		if want := baseRate(rising, 2000, c.Growth); math.Abs(c.BaseRate-want) > 1e-12*want {
			t.Errorf("CI: base rate %.6e, want %.6e", c.BaseRate, want)
		}
		if c.Breaks != 68 || math.Abs(c.PerLengthYear-68.0/(2000*10)) > 1e-15 {
			t.Errorf("CI: %d breaks at %g /m/yr, want 68 at 3.4e-3", c.Breaks, c.PerLengthYear)
		}
	})
	t.Run("clamped", func(t *testing.T) {
		c := byMaterial["STL"]
		if !c.Fitted || c.Growth != maxGrowth {
			t.Fatalf("STL: fitted %v, A = %g; want true, clamped to %g", c.Fitted, c.Growth, maxGrowth)
		}
		if want := baseRate(doubling, 1000, maxGrowth); math.Abs(c.BaseRate-want) > 1e-12*want {
			t.Errorf("STL: base rate %.6e, want %.6e for the clamped A", c.BaseRate, want)
		}
	})
	t.Run("two years only", func(t *testing.T) {
		c := byMaterial["AC"]
		if c.Fitted || c.Growth != defaultGrowth {
			t.Errorf("AC: fitted %v, A = %g; want false and the default %g", c.Fitted, c.Growth, defaultGrowth)
		}
		if want := baseRate(twoYears, 1000, defaultGrowth); math.Abs(c.BaseRate-want) > 1e-12*want {
			t.Errorf("AC: base rate %.6e, want %.6e", c.BaseRate, want)
		}
	})
	t.Run("fewer than MinBreaks", func(t *testing.T) {
		c := byMaterial["DI"]
		if c.Fitted || c.Growth != defaultGrowth || c.Breaks != 6 {
			t.Errorf("DI: fitted %v, A = %g, %d breaks; want false, %g, 6", c.Fitted, c.Growth, c.Breaks, defaultGrowth)
		}
		lowered := BreakCohorts(pipes, breaks, w, CohortOptions{MinBreaks: 5})
		for _, c := range lowered {
			if c.Material == "DI" && !c.Fitted {
				t.Errorf("DI with MinBreaks 5: not fitted, want fitted (6 breaks in 5 years)")
			}
		}
	})
}
