package scoring

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"headroom/hydraulics"
)

// BreakPipe is one main as the break statistics see it.
type BreakPipe struct {
	Length      hydraulics.Length
	Material    string
	InstallYear int // calendar year the main was laid; 0 when not known
}

// BreakRecord is one recorded main break.
type BreakRecord struct {
	// Pipe is the index into the pipes of the main the break was matched
	// to, or −1 when it was matched to none.
	Pipe int
	// Year is the decimal year of the break (2019.5 is the start of July
	// 2019). The break falls in calendar year ⌊Year⌋.
	Year float64
}

// BreakWindow is the span of the break record: the calendar years From to
// To, both included. A break at decimal year y is inside when
// From ≤ y < To + 1.
type BreakWindow struct {
	From, To int
}

// maxWindowYears bounds a window's length: no break record is longer, and
// a longer one is a typing slip that would only waste memory.
const maxWindowYears = 500

// Validate reports a window that ends before it starts or is longer than
// 500 years.
func (w BreakWindow) Validate() error {
	if w.From > w.To {
		return fmt.Errorf("scoring: break window: first year %d is after last year %d; give the first year of the record, then the last", w.From, w.To)
	}
	if w.To-w.From+1 > maxWindowYears {
		return fmt.Errorf("scoring: break window %d–%d is longer than %d years", w.From, w.To, maxWindowYears)
	}
	return nil
}

// Years returns the number of calendar years in the window, To − From + 1.
func (w BreakWindow) Years() int { return w.To - w.From + 1 }

// yearIndex returns k for a break in calendar year From + k, and false for
// a break outside the window (or with a NaN year).
func (w BreakWindow) yearIndex(year float64) (int, bool) {
	if !(year >= float64(w.From) && year < float64(w.To)+1) {
		return 0, false
	}
	return int(math.Floor(year)) - w.From, true
}

// mustBeValid panics on an invalid window: the caller validates the
// configured window with Validate before it asks for statistics.
func (w BreakWindow) mustBeValid() {
	if err := w.Validate(); err != nil {
		panic(err.Error() + " (call BreakWindow.Validate first)")
	}
}

// countedIn returns the index of b's pipe and whether b counts in window
// w: it must be matched to a pipe and fall inside the window. A pipe index
// below −1 or beyond the pipes is the caller's bug and panics.
func (b BreakRecord) countedIn(w BreakWindow, pipes int) (pipe, year int, ok bool) {
	if b.Pipe < -1 || b.Pipe >= pipes {
		panic(fmt.Sprintf("scoring: break record refers to pipe index %d of %d", b.Pipe, pipes))
	}
	if b.Pipe == -1 {
		return 0, 0, false
	}
	year, ok = w.yearIndex(b.Year)
	return b.Pipe, year, ok
}

// BreakTally accounts for every break record against a window:
// Counted + Unmatched + OutsideWindow is the number of records.
type BreakTally struct {
	Counted       int // matched to a pipe and inside the window
	Unmatched     int // Pipe −1, whatever the year
	OutsideWindow int // matched, but before From or after To (or a NaN year)
}

// TallyBreaks sorts the break records into those PipeBreakRates and
// BreakCohorts count and those they leave out, so the caller can report
// the ones left out. It panics on an invalid window.
func TallyBreaks(breaks []BreakRecord, w BreakWindow) BreakTally {
	w.mustBeValid()
	var t BreakTally
	for _, b := range breaks {
		switch _, ok := w.yearIndex(b.Year); {
		case b.Pipe == -1:
			t.Unmatched++
		case ok:
			t.Counted++
		default:
			t.OutsideWindow++
		}
	}
	return t
}

// PipeBreaks is one main's break history over a window.
type PipeBreaks struct {
	Count int // breaks in the window
	// PerLengthYear is the break rate in breaks per metre per year:
	//
	//	rate = Count / (Length · years in the window)
	//
	// NaN for a main whose length is not positive (the rate is not defined).
	PerLengthYear float64
}

// PipeBreakRates returns each main's break count and rate over window w,
// one entry per pipe in input order. Breaks matched to no main (Pipe −1)
// and breaks outside the window are not counted; TallyBreaks says how many
// there are. Every main is taken as in service for the whole window, so a
// main laid during the window has its rate understated; shorten the window
// when that matters.
//
// It panics on an invalid window (see BreakWindow.Validate) and on a break
// whose Pipe is below −1 or not an index into pipes: both are the caller's
// bugs.
func PipeBreakRates(pipes []BreakPipe, breaks []BreakRecord, w BreakWindow) []PipeBreaks {
	w.mustBeValid()
	rates := make([]PipeBreaks, len(pipes))
	for _, b := range breaks {
		if i, _, ok := b.countedIn(w, len(pipes)); ok {
			rates[i].Count++
		}
	}
	years := float64(w.Years())
	for i, p := range pipes {
		rates[i].PerLengthYear = breakRate(float64(rates[i].Count), p.Length, years)
	}
	return rates
}

// breakRate is count / (length · years) in breaks per metre per year, NaN
// for a length that is not positive.
func breakRate(count float64, length hydraulics.Length, years float64) float64 {
	if !(length > 0) {
		return math.NaN()
	}
	return count / (float64(length) * years)
}

// PerMileYear converts a break rate from breaks per metre per year to
// breaks per mile per year (× 1,609.344).
func PerMileYear(perMetreYear float64) float64 { return perMetreYear * float64(hydraulics.Mile) }

// PerHundredKmYear converts a break rate from breaks per metre per year to
// breaks per 100 km per year (× 100,000).
func PerHundredKmYear(perMetreYear float64) float64 { return perMetreYear * 1e5 }

// CohortOptions tune the growth fit of BreakCohorts.
type CohortOptions struct {
	// MinBreaks is the fewest breaks in the window for a cohort's growth
	// to be fitted; zero or negative means 10.
	MinBreaks int
	// DefaultGrowth is the growth coefficient A (1/yr) given to a cohort
	// with fewer than MinBreaks breaks or with breaks in fewer than 3
	// years; zero means no growth.
	DefaultGrowth float64
}

// defaultMinBreaks is the default CohortOptions.MinBreaks (common
// practice, no source: fewer breaks leave the slope mostly noise).
const defaultMinBreaks = 10

// Growth coefficients fitted outside [minGrowth, maxGrowth] (1/yr) are
// clamped to it. Published fits for ageing mains mostly fall between 0 and
// about 0.15/yr; a fit beyond the range says more about a short or uneven
// record than about the pipe. Common practice, no source.
const (
	minGrowth = -0.2
	maxGrowth = 0.3
)

// Cohort is the mains of one material laid in one decade, and their break
// history over a window.
type Cohort struct {
	Material string // as first spelled in the input, trimmed
	// Decade is the install decade (1950 for 1950–1959), 0 for mains with
	// no install year.
	Decade int
	Pipes  int
	Length hydraulics.Length
	Breaks int // breaks in the window on the cohort's mains
	// PerLengthYear is the mean break rate over the window, breaks per
	// metre per year (NaN when the cohort's length is not positive).
	PerLengthYear float64
	// Growth is the break-growth coefficient A of Shamir & Howard, 1/yr:
	// fitted when Fitted, else CohortOptions.DefaultGrowth.
	Growth float64
	Fitted bool
	// BaseRate is N(t₀), the model's break rate at t₀ = the window's last
	// year, breaks per metre per year.
	BaseRate float64
}

// BreakCohorts groups the mains into cohorts of material × install decade
// and fits each cohort's break growth over window w. Materials match in
// any case, ignoring surrounding space. Cohorts come sorted by material
// (upper-cased, byte order), then by decade, unknown decade (0) first.
// Breaks are counted as in PipeBreakRates, and it panics in the same cases.
//
// Break growth follows Shamir & Howard (1979), DOMAIN.md §7.2:
//
//	N(t) = N(t₀) · e^(A·(t − t₀)),   t₀ = w.To
//
// with N in breaks per metre per year and t the calendar year. A is fitted
// to the cohort's yearly break counts y_t by Poisson regression: y_t is
// taken as Poisson with mean μ_t = L·N(t), L the cohort's length (the
// exposure), and ln N(t₀) and A maximise the likelihood (log link, Newton's
// method; see fitBreakGrowth). DOMAIN.md §7.2 fits A as the slope of ln N
// against t (least squares); Poisson maximum likelihood is preferred
// here because a cohort's yearly counts are small: a year with no breaks
// has ln N = −∞ and must be dropped or padded, which biases A, and least
// squares weighs a year of 1 break as heavily as a year of 50, though a
// count's variance grows with its mean. The Poisson fit uses zero years as
// they are and agrees with the least-squares line when the counts are
// exactly exponential.
//
// A is fitted only for a cohort of positive length with at least
// opt.MinBreaks breaks, falling in at least 3 different years (with 2, a
// curve fits them exactly and says nothing; with all breaks in the first
// or the last year, A runs off to ∓∞). Other cohorts take
// opt.DefaultGrowth with Fitted false. A fitted A is
// clamped to [−0.2, 0.3] per year (common practice, no source; see
// minGrowth). BaseRate is the maximum-likelihood N(t₀) for the cohort's A,
// fitted or not:
//
//	N(t₀) = Σ y_t / (L · Σ e^(A·(t − t₀)))
//
// which for A = 0 is the mean rate over the window, PerLengthYear.
func BreakCohorts(pipes []BreakPipe, breaks []BreakRecord, w BreakWindow, opt CohortOptions) []Cohort {
	w.mustBeValid()
	cohorts, keys, member := groupCohorts(pipes)
	counts := make([][]float64, len(cohorts))
	for k := range counts {
		counts[k] = make([]float64, w.Years())
	}
	for _, b := range breaks {
		if i, year, ok := b.countedIn(w, len(pipes)); ok {
			counts[member[i]][year]++
			cohorts[member[i]].Breaks++
		}
	}
	for k := range cohorts {
		fitCohort(&cohorts[k], counts[k], w, opt)
	}
	order := make([]int, len(cohorts))
	for k := range order {
		order[k] = k
	}
	slices.SortFunc(order, func(a, b int) int {
		if c := strings.Compare(keys[a].material, keys[b].material); c != 0 {
			return c
		}
		return keys[a].decade - keys[b].decade
	})
	sorted := make([]Cohort, len(cohorts))
	for k, i := range order {
		sorted[k] = cohorts[i]
	}
	return sorted
}

type cohortKey struct {
	material string // upper-cased, trimmed
	decade   int
}

// groupCohorts returns the cohorts in order of first appearance with their
// pipe counts and lengths, their keys, and each pipe's cohort.
func groupCohorts(pipes []BreakPipe) (cohorts []Cohort, keys []cohortKey, member []int) {
	index := map[cohortKey]int{}
	member = make([]int, len(pipes))
	for i, p := range pipes {
		material := strings.TrimSpace(p.Material)
		key := cohortKey{strings.ToUpper(material), installDecade(p.InstallYear)}
		k, seen := index[key]
		if !seen {
			k = len(cohorts)
			index[key] = k
			keys = append(keys, key)
			cohorts = append(cohorts, Cohort{Material: material, Decade: key.decade})
		}
		cohorts[k].Pipes++
		cohorts[k].Length += p.Length
		member[i] = k
	}
	return cohorts, keys, member
}

// installDecade returns 1950 for 1950–1959 and 0 for an unknown (≤ 0) year.
func installDecade(year int) int {
	if year <= 0 {
		return 0
	}
	return year - year%10
}

// fitCohort sets c's mean rate, growth and base rate from its yearly
// counts over w (see BreakCohorts).
func fitCohort(c *Cohort, counts []float64, w BreakWindow, opt CohortOptions) {
	c.PerLengthYear = breakRate(float64(c.Breaks), c.Length, float64(w.Years()))
	years := make([]float64, len(counts))
	for k := range years {
		years[k] = float64(w.From + k)
	}
	c.Growth = opt.DefaultGrowth
	if canFitGrowth(counts, c.Breaks, opt) && c.Length > 0 {
		if fit, err := fitBreakGrowth(counts, years, float64(c.Length)); err == nil {
			c.Growth = min(max(fit.Growth, minGrowth), maxGrowth)
			c.Fitted = true
		}
	}
	if !(c.Length > 0) {
		c.BaseRate = math.NaN()
		return
	}
	c.BaseRate = rateGivenGrowth(counts, years, float64(c.Length), c.Growth, float64(w.To))
}

// canFitGrowth reports whether a cohort has the breaks (opt.MinBreaks, and
// breaks in 3 or more years) for a fitted growth.
func canFitGrowth(counts []float64, breaks int, opt CohortOptions) bool {
	minBreaks := opt.MinBreaks
	if minBreaks <= 0 {
		minBreaks = defaultMinBreaks
	}
	yearsWithBreaks := 0
	for _, y := range counts {
		if y > 0 {
			yearsWithBreaks++
		}
	}
	return breaks >= minBreaks && yearsWithBreaks >= 3
}

// rateGivenGrowth returns the maximum-likelihood N(t₀) of Poisson counts
// y_t with mean exposure·N(t₀)·e^(A·(t − t₀)), for a fixed A:
//
//	N(t₀) = Σ y_t / (exposure · Σ e^(A·(t − t₀)))
func rateGivenGrowth(counts, years []float64, exposure, growth, t0 float64) float64 {
	var breaks, weight float64
	for k, y := range counts {
		breaks += y
		weight += math.Exp(growth * (years[k] - t0))
	}
	return breaks / (exposure * weight)
}

// growthFit is a fitted exponential break model,
// N(t) = RefRate · e^(Growth·(t − RefYear)), with N per unit of exposure
// per year.
type growthFit struct {
	Growth     float64 // A, 1/yr
	RefYear    float64 // the mean of the years fitted (where the fit is best conditioned)
	RefRate    float64 // N(RefYear)
	Iterations int     // Newton steps taken
}

// rateAt returns the fitted N(t).
func (f growthFit) rateAt(t float64) float64 {
	return f.RefRate * math.Exp(f.Growth*(t-f.RefYear))
}

// Newton iteration limits of fitBreakGrowth: the log-likelihood is
// concave, so from the constant-rate start it converges in a handful of
// steps; the step tolerance is far below any meaningful A.
const (
	growthMaxIterations = 100
	growthStepTolerance = 1e-12
)

var errGrowthUnbounded = errors.New("scoring: break growth: every break falls in the first or the last year, so the growth is unbounded")

// fitBreakGrowth fits N(t) = N_ref · e^(A·(t − t_ref)) to yearly break
// counts by Poisson maximum likelihood: counts[k] in years[k] is Poisson
// with mean μ_k = exposure · N(years[k]). With β = (ln N_ref, A) and
// x_k = years[k] − t_ref (t_ref the mean year), the log-likelihood
//
//	ℓ(β) = Σ y_k·ln μ_k − μ_k   (+ a constant)
//
// is concave with gradient g = (Σ(y−μ), Σ(y−μ)x) and Hessian
// −[Σμ Σμx; Σμx Σμx²]. Newton's method β ← β + H⁻¹g (halving a step
// that lowers ℓ) starts from the constant mean rate, A = 0. At the optimum
// Σμ = Σy and Σμx = Σyx. Counts may be non-integer (expected counts).
//
// It returns an error when the years number fewer than 2 or do not match
// the counts, the exposure is not positive, a count is negative, there are
// no breaks, or the breaks all fall in the first or the last year (the
// likelihood then rises without bound as A → ∓∞).
//
// Reference: McCullagh & Nelder, Generalized Linear Models (2nd ed. 1989),
// ch. 6 (log-linear models for counts).
func fitBreakGrowth(counts []float64, years []float64, exposure float64) (growthFit, error) {
	x, err := growthDesign(counts, years, exposure)
	if err != nil {
		return growthFit{}, err
	}
	fit := growthFit{RefYear: meanYear(years)}
	var total float64
	for _, y := range counts {
		total += y
	}
	lnRate, a := math.Log(total/(exposure*float64(len(counts)))), 0.0
	for fit.Iterations < growthMaxIterations {
		fit.Iterations++
		d0, d1, err := newtonStep(counts, x, exposure, lnRate, a)
		if err != nil {
			return growthFit{}, err
		}
		step := dampedStep(counts, x, exposure, lnRate, a, d0, d1)
		lnRate += step * d0
		a += step * d1
		if math.Abs(step*d0) < growthStepTolerance && math.Abs(step*d1) < growthStepTolerance {
			fit.Growth, fit.RefRate = a, math.Exp(lnRate)
			return fit, nil
		}
	}
	return growthFit{}, fmt.Errorf("scoring: break growth: Newton's method did not converge in %d steps", growthMaxIterations)
}

// growthDesign checks fitBreakGrowth's inputs and returns x_k = years[k]
// minus their mean.
func growthDesign(counts, years []float64, exposure float64) ([]float64, error) {
	if len(years) != len(counts) || len(years) < 2 {
		return nil, fmt.Errorf("scoring: break growth: %d counts for %d years; want one count per year and 2 years or more", len(counts), len(years))
	}
	if !(exposure > 0) || math.IsInf(exposure, 1) {
		return nil, fmt.Errorf("scoring: break growth: exposure %g is not a positive length", exposure)
	}
	ref := meanYear(years)
	x := make([]float64, len(years))
	var total, moment float64
	for k, y := range counts {
		if !(y >= 0) || math.IsInf(y, 1) {
			return nil, fmt.Errorf("scoring: break growth: count %g in year %g is not a finite number ≥ 0", y, years[k])
		}
		x[k] = years[k] - ref
		total += y
		moment += y * x[k]
	}
	if total == 0 {
		return nil, errors.New("scoring: break growth: no breaks to fit")
	}
	// The maximum exists only when the break-weighted mean year lies
	// strictly inside the span of the years.
	lo, hi := slices.Min(x), slices.Max(x)
	if centre := moment / total; !(centre > lo && centre < hi) {
		return nil, errGrowthUnbounded
	}
	return x, nil
}

// newtonStep returns the Newton step (Δ ln N_ref, ΔA) of the Poisson
// log-likelihood at (lnRate, a).
func newtonStep(counts, x []float64, exposure, lnRate, a float64) (d0, d1 float64, err error) {
	var g0, g1, i00, i01, i11 float64
	for k, y := range counts {
		mu := exposure * math.Exp(lnRate+a*x[k])
		g0 += y - mu
		g1 += (y - mu) * x[k]
		i00 += mu
		i01 += mu * x[k]
		i11 += mu * x[k] * x[k]
	}
	det := i00*i11 - i01*i01
	if !(det > 0) {
		return 0, 0, errors.New("scoring: break growth: the information matrix is singular (all years equal?)")
	}
	return (i11*g0 - i01*g1) / det, (i00*g1 - i01*g0) / det, nil
}

// dampedStep returns the step length, 1 or a power of ½, at which the
// Newton step (d0, d1) does not lower the log-likelihood (to round-off).
func dampedStep(counts, x []float64, exposure, lnRate, a, d0, d1 float64) float64 {
	now := poissonLogLikelihood(counts, x, exposure, lnRate, a)
	step := 1.0
	for range 50 {
		next := poissonLogLikelihood(counts, x, exposure, lnRate+step*d0, a+step*d1)
		if next >= now-1e-12*math.Abs(now) {
			break
		}
		step /= 2
	}
	return step
}

// poissonLogLikelihood is Σ y·ln μ − μ with μ = exposure·e^(lnRate + a·x),
// without the constant −Σ ln y!.
func poissonLogLikelihood(counts, x []float64, exposure, lnRate, a float64) float64 {
	var ll float64
	for k, y := range counts {
		eta := math.Log(exposure) + lnRate + a*x[k]
		ll += y*eta - math.Exp(eta)
	}
	return ll
}

// meanYear returns the arithmetic mean of xs (NaN when empty).
func meanYear(xs []float64) float64 {
	var sum float64
	for _, x := range xs {
		sum += x
	}
	return sum / float64(len(xs))
}
