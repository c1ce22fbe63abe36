// Package rednoise measures correlated ("red") noise in fit residuals by the time-averaging
// method of Pont, Zucker & Queloz (2006, MNRAS 373, 231): the residuals are averaged in bins
// of growing width and the scatter of the bin means is compared with what white noise of the
// same point-to-point scatter would give. The ratio, summarised over the bin widths and
// floored at 1, is the factor β by which white-noise errors (of a transit time, say) are
// commonly inflated (Winn et al. 2008, ApJ 683, 1076). It does not fit anything, model the
// noise (no Gaussian process, no wavelets) or decide which widths matter: the caller gives the
// range, typically from about 10 minutes to about twice the transit duration. Main entry
// point: Beta; Scatter measures one width.
package rednoise

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// widthStep is the ratio between successive bin widths in Beta: √2 gives about ten widths
// between 10 min and 6 h, enough for a stable median (our choice).
var widthStep = math.Sqrt2

// MinBins is the least number of kept bins for a width to count in Beta: with M bins the
// scatter of the bin means has a relative error of about 1/√(2M), 30 % at M = 5 (our choice).
const MinBins = 5

// keepShare is the least filling of a bin, as a share of the points a full bin of that width
// holds at the segment's cadence, for the bin to be kept: bins cut by a gap or a segment end
// hold few points and would only add white noise (our choice).
const keepShare = 0.5

// BinScatter is the binned scatter at one bin width.
type BinScatter struct {
	Width    float64 // bin width, in the unit of the times
	Points   float64 // mean number of points per kept bin, n
	Bins     int     // number of kept bins, M
	Scatter  float64 // σ_n: sample standard deviation (divisor M−1) of the bin means about their mean
	Expected float64 // white-noise expectation of σ_n: σ_1·√(mean over bins of 1/n_j)
	Ratio    float64 // Scatter / Expected
}

// ErrInput marks bad input (lengths, NaN, unsorted times, bad widths or segment starts).
var ErrInput = errors.New("rednoise: bad input")

// Beta returns the red-noise factor β of the residuals resid at times time and the binned
// scatter at each bin width from minWidth to maxWidth in steps of a factor √2.
//
// starts holds the index at which each segment begins (ascending, the first 0; nil means one
// segment). Bins never cross a segment start; within a segment they are laid from its first
// time, and a bin holding fewer than half the points a full bin would hold at the segment's
// median cadence (one cut by a gap) is left out. Times must increase within a segment.
//
// σ_1 is the sample standard deviation (divisor N−1) of all residuals. For each width, σ_n is
// the sample standard deviation of the kept bin means about their mean; for white noise of
// variance σ² the bin means have variances σ²/n_j and, exactly, E[σ_n²] = σ²·mean(1/n_j),
// which is Expected. (Pont et al. write the expectation as σ_1/√n·√(M/(M−1)), which belongs
// to a scatter taken about zero with divisor M−1; subtracting the mean, as here, removes any
// leftover offset from the test and needs no such factor; for equal n_j both reduce to σ/√n.)
//
// β is the median of Ratio over the widths with at least MinBins bins, floored at 1. The
// median, not the mean, because the widest bins rest on few bins and their ratios scatter by
// ~30 %; one such width should not move β. Widths without enough bins are left out of perBin.
// An error wrapping ErrInput is returned for bad input or when no width has enough bins.
func Beta(time, resid []float64, starts []int, minWidth, maxWidth float64) (beta float64, perBin []BinScatter, err error) {
	if !(minWidth > 0) || !(maxWidth >= minWidth) || math.IsInf(maxWidth, 0) {
		return 0, nil, fmt.Errorf("%w: bin widths %v to %v; need 0 < min ≤ max, finite", ErrInput, minWidth, maxWidth)
	}
	d, err := prepare(time, resid, starts)
	if err != nil {
		return 0, nil, err
	}
	for w := minWidth; w <= maxWidth*(1+1e-12); w *= widthStep {
		b := d.scatter(w)
		if b.Bins >= MinBins {
			perBin = append(perBin, b)
		}
	}
	if len(perBin) == 0 {
		return 0, nil, fmt.Errorf("%w: no bin width from %v to %v gives %d or more full bins", ErrInput, minWidth, maxWidth, MinBins)
	}
	ratios := make([]float64, len(perBin))
	for i, b := range perBin {
		ratios[i] = b.Ratio
	}
	sort.Float64s(ratios)
	m := len(ratios) / 2
	beta = ratios[m]
	if len(ratios)%2 == 0 {
		beta = 0.5 * (ratios[m-1] + ratios[m])
	}
	return math.Max(beta, 1), perBin, nil
}

// Scatter returns the binned scatter at one width (see Beta for the rules). Bins is 0 when no
// bin is kept; Scatter, Expected and Ratio are NaN when fewer than two are.
func Scatter(time, resid []float64, starts []int, width float64) (BinScatter, error) {
	if !(width > 0) || math.IsInf(width, 0) {
		return BinScatter{}, fmt.Errorf("%w: bin width %v; need a positive finite width", ErrInput, width)
	}
	d, err := prepare(time, resid, starts)
	if err != nil {
		return BinScatter{}, err
	}
	return d.scatter(width), nil
}

// data is validated input with what every width needs.
type data struct {
	time, resid []float64
	bounds      []int     // segment s is [bounds[s], bounds[s+1])
	cadence     []float64 // median time step per segment
	sigma1      float64
}

func prepare(time, resid []float64, starts []int) (*data, error) {
	n := len(time)
	if n != len(resid) {
		return nil, fmt.Errorf("%w: %d times but %d residuals", ErrInput, n, len(resid))
	}
	if n < 2 {
		return nil, fmt.Errorf("%w: %d points; at least 2 are needed", ErrInput, n)
	}
	if len(starts) == 0 {
		starts = []int{0}
	}
	if starts[0] != 0 {
		return nil, fmt.Errorf("%w: the first segment starts at index %d, not 0", ErrInput, starts[0])
	}
	d := &data{time: time, resid: resid, bounds: make([]int, 0, len(starts)+1)}
	for s, i := range starts {
		if s > 0 && i <= starts[s-1] || i >= n {
			return nil, fmt.Errorf("%w: segment %d starts at index %d; starts must increase and lie below %d", ErrInput, s+1, i, n)
		}
		d.bounds = append(d.bounds, i)
	}
	d.bounds = append(d.bounds, n)
	var sum float64
	for i := range time {
		if math.IsNaN(time[i]) || math.IsInf(time[i], 0) || math.IsNaN(resid[i]) || math.IsInf(resid[i], 0) {
			return nil, fmt.Errorf("%w: point %d: time %v, residual %v are not finite", ErrInput, i+1, time[i], resid[i])
		}
		sum += resid[i]
	}
	mean := sum / float64(n)
	var ss float64
	for _, r := range resid {
		ss += (r - mean) * (r - mean)
	}
	d.sigma1 = math.Sqrt(ss / float64(n-1))
	if !(d.sigma1 > 0) {
		return nil, fmt.Errorf("%w: the residuals are all equal; there is no scatter to bin", ErrInput)
	}
	// Median cadence per segment; one scratch slice for all segments.
	steps := make([]float64, 0, n)
	d.cadence = make([]float64, len(d.bounds)-1)
	for s := range d.cadence {
		lo, hi := d.bounds[s], d.bounds[s+1]
		steps = steps[:0]
		for i := lo + 1; i < hi; i++ {
			dt := time[i] - time[i-1]
			if !(dt > 0) {
				return nil, fmt.Errorf("%w: point %d: time %v does not increase on the previous %v within segment %d", ErrInput, i+1, time[i], time[i-1], s+1)
			}
			steps = append(steps, dt)
		}
		if len(steps) == 0 {
			d.cadence[s] = math.Inf(1) // a one-point segment fills no bin
			continue
		}
		sort.Float64s(steps)
		d.cadence[s] = steps[len(steps)/2]
	}
	return d, nil
}

// scatter bins at width w in one pass per segment (no allocation): Welford's running mean and
// sum of squares of the kept bin means, and the running sum of 1/n_j.
func (d *data) scatter(w float64) BinScatter {
	out := BinScatter{Width: w}
	var mean, m2, invN, points float64
	m := 0
	keep := func(sum float64, cnt int) {
		if cnt == 0 {
			return
		}
		v := sum / float64(cnt)
		m++
		dv := v - mean
		mean += dv / float64(m)
		m2 += dv * (v - mean)
		invN += 1 / float64(cnt)
		points += float64(cnt)
	}
	for s := 0; s+1 < len(d.bounds); s++ {
		lo, hi := d.bounds[s], d.bounds[s+1]
		full := w / d.cadence[s]
		need := max(2, int(math.Ceil(keepShare*full-1e-9)))
		if full < 2 {
			continue // bins narrower than two cadences hold single points
		}
		t0 := d.time[lo]
		bin, cnt, sum := int64(0), 0, 0.0
		for i := lo; i < hi; i++ {
			j := int64(math.Floor((d.time[i] - t0) / w))
			if j != bin {
				if cnt >= need {
					keep(sum, cnt)
				}
				bin, cnt, sum = j, 0, 0
			}
			cnt++
			sum += d.resid[i]
		}
		if cnt >= need {
			keep(sum, cnt)
		}
	}
	out.Bins = m
	nan := math.NaN()
	out.Scatter, out.Expected, out.Ratio = nan, nan, nan
	if m > 0 {
		out.Points = points / float64(m)
	}
	if m >= 2 {
		out.Scatter = math.Sqrt(m2 / float64(m-1))
		out.Expected = d.sigma1 * math.Sqrt(invN/float64(m))
		out.Ratio = out.Scatter / out.Expected
	}
	return out
}
