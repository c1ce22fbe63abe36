package periodogram

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/mathext"

	"dipline/steps/internal/lightcurve"
)

// Defaults of Options, each with its reason.
const (
	// DefaultShortest is 0.1 d. A detrend's trend holds no shorter period: its windows are
	// normally 0.25 d or wider (steps/detrend chooses its span among 0.25–4 d; the demo
	// writes 0.3 d), and a window of width h averages away a period shorter than h; and no
	// star rotates much faster (a Sun-like star breaks up near
	// 2π√(R³/GM) = 0.116 d, computed; the fastest spotted dwarfs turn in a few hours, from
	// memory). Shorter pulsations are not in the trend and are not the trend's business.
	DefaultShortest = 0.1
	// DefaultOversample puts five grid frequencies in each resolution element 1/span, so a
	// peak falls at most a tenth of its width from a grid point and loses at most about 3 %
	// of its power there (sinc² at 0.1 of the main lobe: 1 − sinc²(0.1) = 0.033, computed)
	// before the parabolic refinement (common practice: 5 to 10).
	DefaultOversample = 5
	// DefaultFalseAlarm is the false-alarm probability at which a peak is kept: one quiet
	// series in a thousand gets a spurious period. A spurious period costs little (a vet
	// caution only when a signal falls near it); a missed one lets a star's residual pass
	// as a transit, so the level is not stricter.
	DefaultFalseAlarm = 1e-3
	// DefaultMax is the number of periods reported at most: a spotted star's rotation, its
	// first harmonic (two spot groups) and one more (a second star, or differential
	// rotation).
	DefaultMax = 3
	// binsPerShortest is the number of bins per shortest period: the series is averaged in
	// bins of Shortest/20, which lowers a sinusoid's amplitude by sinc(π/20) = 0.9959 at the
	// shortest period (computed) and by less at longer ones, and makes a long 2-min series
	// up to 3.6 times shorter at the default.
	binsPerShortest = 20
	// minCycles is the fewest cycles a piece must span to take part at a frequency: over
	// less, an offset and a sinusoid fit any slow curve, and a partial cycle's power says
	// nothing about a period. It is also why the longest period defaults to half the
	// longest piece.
	minCycles = 2
	// maxCandidates bounds the peaks examined, strongest first: the side lobes of a strong
	// peak come before a weak distinct period and fail their test, so a few more than Max.
	maxCandidates = 12
)

// Piece is one gap-free stretch of a series (a detrend's trend between two gaps): times in
// days, sorted, and values (relative flux). Points with a non-finite value are skipped.
type Piece struct {
	Time, Value []float64
}

// Options set Strongest's search; a zero field takes its default.
type Options struct {
	// Shortest and Longest bound the periods, days; by default DefaultShortest and half the
	// longest piece.
	Shortest, Longest float64
	// Oversample is the least number of grid frequencies per 1/(longest piece) (the grid is
	// made a little finer to suit the fast transforms); DefaultOversample.
	Oversample float64
	// FalseAlarm is the probability, for a series without any period, that a peak is kept
	// (a bound: see Strongest); DefaultFalseAlarm.
	FalseAlarm float64
	// Max is the most periods reported; DefaultMax.
	Max int
	// Smoothing is the time over which the series is smooth, days: a detrend's window span
	// or its spline's knot spacing. Points closer than it are not independent, so each
	// piece counts one independent value per Smoothing (plus one) in the false-alarm
	// probability. 0: every bin is independent (a series of independent points).
	Smoothing float64
}

// Period is one periodic component of a series.
type Period struct {
	// Period in days.
	Period float64
	// Amplitude is the semi-amplitude of the best-fitting sinusoid, in the series' units
	// (relative flux for a trend): the root mean square over the pieces of each piece's own
	// sinusoid, weighted by the piece's number of points, all periods fitted together.
	Amplitude float64
	// Power is the share of the scatter left by the stronger periods that this one explains.
	Power float64
	// FalseAlarm is the bound on the probability that noise alone gives as high a peak.
	FalseAlarm float64
}

func (o Options) withDefaults() Options {
	if o.Shortest == 0 {
		o.Shortest = DefaultShortest
	}
	if o.Oversample == 0 {
		o.Oversample = DefaultOversample
	}
	if o.FalseAlarm == 0 {
		o.FalseAlarm = DefaultFalseAlarm
	}
	if o.Max == 0 {
		o.Max = DefaultMax
	}
	return o
}

func (o Options) check() error {
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	switch {
	case !(o.Shortest > 0) || !finite(o.Shortest):
		return fmt.Errorf("periodogram: shortest period %v d; it must be positive", o.Shortest)
	case o.Longest != 0 && (!(o.Longest > o.Shortest) || !finite(o.Longest)):
		return fmt.Errorf("periodogram: longest period %v d must be longer than the shortest, %v d", o.Longest, o.Shortest)
	case !(o.Oversample >= 1) || !finite(o.Oversample):
		return fmt.Errorf("periodogram: oversampling factor %v; it must be at least 1", o.Oversample)
	case !(o.FalseAlarm > 0 && o.FalseAlarm < 1):
		return fmt.Errorf("periodogram: false-alarm probability %v; it must lie between 0 and 1", o.FalseAlarm)
	case o.Max < 1 || o.Max > 100:
		return fmt.Errorf("periodogram: %d periods asked for; ask for 1 to 100", o.Max)
	case !(o.Smoothing >= 0) || !finite(o.Smoothing):
		return fmt.Errorf("periodogram: smoothing time %v d; it must be 0 or positive", o.Smoothing)
	}
	return nil
}

// Strongest returns the strongest distinct periods of a pieced series, strongest first.
//
// Each piece is averaged in bins of Shortest/20 on an even grid and gets its own offset and
// sinusoid at every frequency, whose sums come from fast Fourier transforms
// (transformed); the pieces' reductions of χ² are added on one grid, so the power is
// 1 − Σχ²(offset + sinusoid)/Σχ²(offset) over the pieces that span at least two cycles
// (a spotted star's phase does not hold from one piece to the next, and each piece costs
// its own length, not the whole baseline's). Peaks are taken strongest first, skipping
// any within 1/(longest piece) of a period already kept (the main lobe's half width), and
// each is tested given the periods kept before it, at its grid frequency. With m pieces
// taking part, a cosine and a sine per piece add 2m parameters to a linear model, so for
// Gaussian white noise the χ² they remove and the χ² left are independent σ²χ²(2m) and
// σ²χ²(ν), ν the degrees of freedom left, and the share p removed follows Beta(m, ν/2)
// (linear-model theory; common practice; for m = 1 its tail is (1 − p)^((N−3)/2), the
// single-frequency false-alarm probability of the floating-mean periodogram). The
// false-alarm probability is that tail, the regularised incomplete beta function, times
// the number of grid frequencies: a Bonferroni bound on the maximum over the grid, which
// holds however the frequencies are correlated, so white noise passes at most at the
// stated rate (measured in the tests: 2.6 % at 0.05 and 0.1 % at 0.001 over 2,000
// series). We chose it over Baluev (2008)'s sharper approximation because his is for one
// series with one sinusoid, and ours adds one per piece. A smooth series counts one
// independent value per Smoothing, which is conservative for a trend (measured: 1 smoothed
// series in 2,000 at 0.05).
//
// A series too short for any period (no piece twice the shortest period long) gives no
// period and no error; malformed input (lengths that differ, unsorted or non-finite
// times, bad options) is an error.
func Strongest(pieces []Piece, o Options) ([]Period, error) {
	a, err := analyse(pieces, o)
	if err != nil || a == nil {
		return nil, err
	}
	return a.periods, nil
}

// Variability is Strongest in the shape a detrend step reports the star's own variability:
// periods strongest first and their semi-amplitudes. Pass the trend's gap-free pieces
// (relative flux) and Options{Smoothing: the trend's window span or knot spacing}.
func Variability(pieces []Piece, o Options) (lightcurve.Variability, error) {
	ps, err := Strongest(pieces, o)
	if err != nil {
		return lightcurve.Variability{}, err
	}
	v := lightcurve.Variability{Periods: []float64{}, Amplitudes: []float64{}}
	for _, p := range ps {
		v.Periods = append(v.Periods, p.Period)
		v.Amplitudes = append(v.Amplitudes, p.Amplitude)
	}
	return v, nil
}

// binned is one piece after binning, ready for the sums.
type binned struct {
	*prepared
	index  []int   // each bin's place on the even grid of bins, counted from the piece's first
	width  float64 // the bins' width, days
	length float64 // last minus first time of the raw piece, days
	neff   float64 // independent values it counts
}

// analysis is everything Strongest works out, kept for the tests.
type analysis struct {
	grid    Grid
	power   []float64
	pieces  []*binned
	periods []Period
}

func analyse(pieces []Piece, o Options) (*analysis, error) {
	o = o.withDefaults()
	if err := o.check(); err != nil {
		return nil, err
	}
	a := &analysis{}
	longestPiece, width := 0.0, o.Shortest/binsPerShortest
	for j, pc := range pieces {
		b, err := bin(pc, width)
		if err != nil {
			return nil, fmt.Errorf("periodogram: piece %d: %w", j+1, err)
		}
		if b == nil || b.length < minCycles*o.Shortest {
			continue
		}
		if o.Smoothing > 0 {
			b.neff = math.Min(b.neff, b.length/o.Smoothing+1)
		}
		a.pieces = append(a.pieces, b)
		longestPiece = math.Max(longestPiece, b.length)
	}
	if len(a.pieces) == 0 {
		return nil, nil
	}
	longest := o.Longest
	if longest == 0 {
		longest = longestPiece / minCycles
	}
	if longest <= o.Shortest {
		return nil, nil
	}
	size := transformSize(int(math.Ceil(o.Oversample*longestPiece/width)) + 1)
	if size > maxTransform {
		return nil, fmt.Errorf("periodogram: a piece of %.4g d in bins of %.3g d needs a transform of %d values, more than %d; split the series at its gaps", longestPiece, width, size, maxTransform)
	}
	// The grid's step is the transform's: 1/(size·width), at most 1/(Oversample·longest piece).
	g, err := NewGrid(o.Shortest, longest, float64(size)*width, 1)
	if err != nil {
		return nil, err
	}
	a.grid = g
	a.power = a.combined(size)
	a.periods = a.pick(o, longestPiece)
	return a, nil
}

// bin averages a piece in bins of width w on an even grid that starts at its first point
// (each bin's weight its number of points, its time the bin's middle) and centres it. It
// returns nil for a piece with fewer than 4 bins or no variation. Giving each bin its
// middle rather than its points' mean time lowers a sinusoid's amplitude by the same
// sinc(π·w/P) as the averaging itself, and puts the series on the even grid the fast
// transforms need.
func bin(pc Piece, w float64) (*binned, error) {
	if len(pc.Time) != len(pc.Value) {
		return nil, fmt.Errorf("%d times and %d values", len(pc.Time), len(pc.Value))
	}
	var idx []int
	var y, n []float64
	first, last := math.NaN(), math.NaN()
	for i, ti := range pc.Time {
		if math.IsNaN(ti) || math.IsInf(ti, 0) {
			return nil, fmt.Errorf("time %d is %v", i+1, ti)
		}
		if i > 0 && ti < pc.Time[i-1] {
			return nil, fmt.Errorf("time %d (%v d) comes before time %d (%v d); times must be sorted", i+1, ti, i, pc.Time[i-1])
		}
		yi := pc.Value[i]
		if math.IsNaN(yi) || math.IsInf(yi, 0) {
			continue
		}
		if math.IsNaN(first) {
			first = ti
		}
		last = ti
		j := int(math.Floor((ti - first) / w))
		if len(idx) == 0 || j != idx[len(idx)-1] {
			idx, y, n = append(idx, j), append(y, 0), append(n, 0)
		}
		k := len(idx) - 1
		y[k] += yi
		n[k]++
	}
	if len(idx) < 4 {
		return nil, nil
	}
	t := make([]float64, len(idx))
	for k, j := range idx {
		t[k] = first + (float64(j)+0.5)*w
		y[k] /= n[k]
	}
	p, err := prepare(Series{Time: t, Value: y, Weight: n}, Floating)
	if err != nil {
		return nil, nil // a constant piece says nothing about a period
	}
	return &binned{prepared: p, index: idx, width: w, length: last - first, neff: float64(len(idx))}, nil
}

// from is the first grid index at which the piece spans minCycles cycles.
func (b *binned) from(g Grid) int {
	k := int(math.Ceil((minCycles/b.length - g.Start) / g.Step))
	return max(0, k)
}

// combined is the pieces' power on the grid: the sum of their reductions over the sum of
// their scatters, each piece counted where it spans minCycles cycles. The sums at every
// grid frequency come from fast Fourier transforms of length size (transformed).
func (a *analysis) combined(size int) []float64 {
	g := a.grid
	ex, tot := make([]float64, g.N), make([]float64, g.N)
	tr := newTransforms(size, g.N)
	for _, b := range a.pieces {
		k0 := b.from(g)
		if k0 >= g.N {
			continue
		}
		b.transformed(ex, g, k0, tr)
		for k := k0; k < g.N; k++ {
			tot[k] += b.total
		}
	}
	for k := range ex {
		if tot[k] > 0 {
			ex[k] /= tot[k]
		}
	}
	return ex
}

// pick takes the peaks strongest first and keeps those that pass their test.
func (a *analysis) pick(o Options, longestPiece float64) []Period {
	g, p := a.grid, a.power
	var peaks []int
	for k := 1; k+1 < g.N; k++ {
		if p[k] > p[k-1] && p[k] >= p[k+1] {
			peaks = append(peaks, k)
		}
	}
	sort.SliceStable(peaks, func(i, j int) bool { return p[peaks[i]] > p[peaks[j]] })
	width := 1 / longestPiece
	chi2 := make([]float64, len(a.pieces))
	for j, b := range a.pieces {
		chi2[j] = b.total
	}
	var kept, fixed []float64 // refined and grid frequencies of the periods kept
	var out []Period
	for n, k := range peaks {
		if n >= maxCandidates || len(kept) == o.Max {
			break
		}
		f := a.refine(k)
		near := false
		for _, fk := range kept {
			near = near || math.Abs(f-fk) < width
		}
		if near {
			continue
		}
		// The test is made at the grid frequency, where the union bound holds; the period
		// reported is the refined one.
		share, fap, next := a.test(append(fixed[:len(fixed):len(fixed)], g.Freq(k)), chi2)
		if fap > o.FalseAlarm {
			continue
		}
		kept, fixed, chi2 = append(kept, f), append(fixed, g.Freq(k)), next
		out = append(out, Period{Period: 1 / f, Power: share, FalseAlarm: fap})
	}
	amps := a.amplitudes(kept)
	for j := range out {
		out[j].Amplitude = amps[j]
	}
	return out
}

// refine moves a grid peak to the vertex of the parabola through it and its neighbours.
func (a *analysis) refine(k int) float64 {
	p := a.power
	den := p[k-1] - 2*p[k] + p[k+1]
	d := 0.0
	if den < 0 {
		d = math.Max(-0.5, math.Min(0.5, 0.5*(p[k-1]-p[k+1])/den))
	}
	return a.grid.Freq(k) + d*a.grid.Step
}

// test fits every piece with the kept frequencies and the candidate (the last of fs) and
// returns the candidate's share of the χ² the kept ones left, its false-alarm bound and
// each piece's new χ².
func (a *analysis) test(fs []float64, before []float64) (share, fap float64, after []float64) {
	cand := fs[len(fs)-1]
	after = make([]float64, len(a.pieces))
	var gained, left, dof, m float64
	for j, b := range a.pieces {
		chi2, cols, ok := b.fit(fs, nil)
		if !ok || chi2 > before[j] {
			chi2 = before[j]
		}
		after[j] = chi2
		left += chi2
		dof += math.Max(0, b.neff-float64(cols))
		if cand*b.length >= minCycles {
			m++
			gained += before[j] - chi2
		}
	}
	if m == 0 || dof <= 0 || gained+left <= 0 {
		return 0, 1, before
	}
	share = gained / (gained + left)
	single := mathext.RegIncBeta(dof/2, m, 1-share)
	return share, math.Min(1, float64(a.grid.N)*single), after
}

// amplitudes fits all kept frequencies together and returns each one's semi-amplitude, the
// root mean square over the pieces that take part, weighted by their points.
func (a *analysis) amplitudes(fs []float64) []float64 {
	sum, wt := make([]float64, len(fs)), make([]float64, len(fs))
	amp := make([]float64, len(fs))
	for _, b := range a.pieces {
		for j := range amp {
			amp[j] = math.NaN()
		}
		if _, _, ok := b.fit(fs, amp); !ok {
			continue
		}
		for j, x := range amp {
			if !math.IsNaN(x) {
				sum[j] += b.wsum * x * x
				wt[j] += b.wsum
			}
		}
	}
	out := make([]float64, len(fs))
	for j := range out {
		if wt[j] > 0 {
			out[j] = math.Sqrt(sum[j] / wt[j])
		}
	}
	return out
}

// fit is the weighted least-squares fit of an offset and, for each frequency of fs the
// piece spans minCycles cycles of, a cosine and a sine. It returns χ², the number of
// columns, and, when amp is given, each fitted frequency's semi-amplitude √(a² + b²) in
// amp (the others untouched). ok is false when the normal equations are singular.
func (b *binned) fit(fs []float64, amp []float64) (chi2 float64, cols int, ok bool) {
	var use []int
	for j, f := range fs {
		if f*b.length >= minCycles {
			use = append(use, j)
		}
	}
	cols = 1 + 2*len(use)
	ata, aty, row := make([]float64, cols*cols), make([]float64, cols), make([]float64, cols)
	for i, t := range b.t {
		row[0] = 1
		for c, j := range use {
			row[1+2*c+1], row[1+2*c] = math.Sincos(2 * math.Pi * fs[j] * t)
		}
		w, wy := b.w[i], b.wy[i]
		for r, x := range row {
			aty[r] += wy * x
			wx := w * x
			for c := r; c < cols; c++ {
				ata[r*cols+c] += wx * row[c]
			}
		}
	}
	for r := 0; r < cols; r++ {
		for c := 0; c < r; c++ {
			ata[r*cols+c] = ata[c*cols+r]
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(cols, ata)) {
		return 0, cols, false
	}
	var beta mat.VecDense
	rhs := mat.NewVecDense(cols, aty)
	if err := ch.SolveVecTo(&beta, rhs); err != nil {
		return 0, cols, false
	}
	chi2 = math.Max(0, b.total-mat.Dot(&beta, rhs))
	for c, j := range use {
		if amp != nil {
			amp[j] = math.Hypot(beta.AtVec(1+2*c), beta.AtVec(2+2*c))
		}
	}
	return chi2, cols, true
}
