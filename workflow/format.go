package workflow

import (
	"math"
	"strconv"
)

// FormatValue writes a number rounded by its uncertainty: the uncertainty to two
// significant digits and the value to the same decimal place (common practice). Without an
// uncertainty the value keeps six significant digits.
func FormatValue(v, sigma float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	if !(sigma > 0) || math.IsInf(sigma, 0) {
		return strconv.FormatFloat(v, 'g', 6, 64)
	}
	// The decimal place of the second significant digit of sigma.
	place := int(math.Floor(math.Log10(sigma))) - 1
	if place >= 0 {
		scale := math.Pow(10, float64(place))
		return strconv.FormatFloat(math.Round(v/scale)*scale, 'f', 0, 64) + " ± " +
			strconv.FormatFloat(math.Round(sigma/scale)*scale, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', -place, 64) + " ± " + strconv.FormatFloat(sigma, 'f', -place, 64)
}
