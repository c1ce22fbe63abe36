package report

import (
	"math"
	"strconv"

	"gonum.org/v1/plot"
)

// plainTicks places ticks as the plotting library does but writes every labelled tick
// with as many decimals as it takes to tell the ticks apart and to be true: the library's
// own labels keep too few digits near 1 (a tick at 1.00025 labelled "1"), which would
// misplace a transit's baseline by a quarter of its depth on a reader's eye.
type plainTicks struct{}

var _ plot.Ticker = plainTicks{}

// Ticks returns the library's ticks, relabelled.
func (plainTicks) Ticks(min, max float64) []plot.Tick {
	ticks := plot.DefaultTicks{}.Ticks(min, max)
	var major []float64
	for _, t := range ticks {
		if t.Label != "" {
			major = append(major, t.Value)
		}
	}
	d, ok := tickDecimals(major)
	if !ok {
		return ticks // magnitudes where fixed decimals do not serve; the library's labels stand
	}
	for i, t := range ticks {
		if t.Label != "" {
			ticks[i].Label = strconv.FormatFloat(t.Value, 'f', d, 64)
			if ticks[i].Label == "-"+strconv.FormatFloat(0, 'f', d, 64) {
				ticks[i].Label = ticks[i].Label[1:]
			}
		}
	}
	return ticks
}

// tickDecimals is the fewest decimals (at most 9) that write each of the major ticks within
// a millionth of their spacing; false when there is none or the numbers are too large for
// fixed decimals.
func tickDecimals(major []float64) (int, bool) {
	if len(major) < 2 {
		return 0, false
	}
	step := math.Abs(major[1] - major[0])
	for _, v := range major {
		if math.Abs(v) >= 1e7 || step == 0 {
			return 0, false
		}
	}
	for d := 0; d <= 9; d++ {
		p := math.Pow(10, float64(d))
		true_ := true
		for _, v := range major {
			if math.Abs(math.Round(v*p)/p-v) > step*1e-6 {
				true_ = false
				break
			}
		}
		if true_ {
			return d, true
		}
	}
	return 0, false
}

// logTicks labels a logarithmic axis at 1, 2 and 5 times the powers of ten when it spans
// fewer than maxLabelledDecades decades, where powers of ten alone leave it with one label
// or none (a period axis from 1 to 20 d); over wider spans it keeps the library's powers of
// ten. The other whole multiples get unlabelled ticks.
type logTicks struct{}

// maxLabelledDecades is the widest span labelled at 1, 2 and 5: beyond it the labels crowd.
const maxLabelledDecades = 3

func (logTicks) Ticks(min, max float64) []plot.Tick {
	if !(min > 0) || !(max > min) || math.Log10(max/min) >= maxLabelledDecades {
		return plot.LogTicks{Prec: -1}.Ticks(min, max)
	}
	var ticks []plot.Tick
	for e := math.Floor(math.Log10(min)); e <= math.Ceil(math.Log10(max)); e++ {
		for m := 1; m < 10; m++ {
			v := float64(m) * math.Pow(10, e)
			if v < min*(1-1e-9) || v > max*(1+1e-9) {
				continue
			}
			t := plot.Tick{Value: v}
			if m == 1 || m == 2 || m == 5 {
				t.Label = strconv.FormatFloat(v, 'g', 6, 64)
			}
			ticks = append(ticks, t)
		}
	}
	return ticks
}
