// Package paper writes posterior summaries the way a paper prints them: a value with its
// lower and upper errors rounded by the uncertainty, a "±" when the two errors agree at
// that precision, and a one-sided limit when the posterior piles against a bound; in plain
// text for the report's tables and in LaTeX for a table a manuscript can include. It also
// summarises a set of draws by the same rules, and escapes text for LaTeX.
//
// It does not decide what a quantity is or where its percentiles come from: the step kinds
// give it a median and two errors (or draws), and it only rounds and writes. Main entry
// points: Percentiles, Symmetric, Limit and FromDraws make a Value; Value.Text and
// Value.LaTeX write it.
//
// # The rounding rule
//
// The smaller of the two errors is kept to two significant figures, and the larger error
// and the value are rounded to the same decimal place (common practice; quoting two
// figures of the uncertainty whatever its leading digit keeps the rule one sentence long,
// and it is the rule the derive step's own summaries already follow). When rounding the
// error to two figures carries it into a third digit (0.0996 → 0.100), one decimal place
// fewer is kept (0.10). The two errors are written once, as "±", when they print alike at
// that decimal place. A value whose errors are both zero or not finite is written with at
// most six significant figures and no error.
//
// # One-sided limits
//
// A quantity that cannot go below a bound (an impact parameter, an eccentricity, a
// secondary depth) may have a posterior piled against it; its median and errors then
// describe the prior's edge more than the data, and the number to quote is an upper limit,
// the 95th percentile ("< 0.42 (95 %)"); symmetrically a lower limit, the 5th percentile,
// for a posterior piled against an upper bound (common practice). A limit is written with
// two significant figures. FromDraws decides the pile-up the way the derive step does: the
// draws between the bound and their 97.5th percentile are put in 20 equal bins, and the
// posterior piles against the bound when the bin next to it holds at least as many draws
// as any other (the mode sits at the edge).
package paper

import (
	"math"
	"slices"
	"strconv"
	"strings"

	"dipline/steps/internal/sampler"
)

// LimitKind says whether a Value is a two-sided summary or a one-sided limit.
type LimitKind int

const (
	// NoLimit: a median with a lower and an upper error.
	NoLimit LimitKind = iota
	// UpperLimit: the quantity is below Value.Bound at Value.Level.
	UpperLimit
	// LowerLimit: the quantity is above Value.Bound at Value.Level.
	LowerLimit
)

// String is the word written in a data file's column saying which kind a row is.
func (k LimitKind) String() string {
	switch k {
	case UpperLimit:
		return "upper"
	case LowerLimit:
		return "lower"
	}
	return "none"
}

// limitLevel is the confidence of a one-sided limit, 95 % (common practice).
const limitLevel = 0.95

// Value is a posterior summary ready to print.
type Value struct {
	// Median is the central value; Lower and Upper are its errors, Median minus the 16th
	// percentile and the 84th percentile minus Median (both ≥ 0; equal for a symmetric σ).
	Median, Lower, Upper float64
	// Limit says whether the value is to be quoted as a one-sided limit; Bound is then the
	// number quoted and Level its confidence (0.95).
	Limit LimitKind
	Bound float64
	Level float64
}

// Percentiles makes a Value from a median and the 16th and 84th percentiles.
func Percentiles(median, p16, p84 float64) Value {
	return Value{Median: median, Lower: median - p16, Upper: p84 - median}
}

// Symmetric makes a Value from a value and a one-sigma error.
func Symmetric(v, sigma float64) Value {
	return Value{Median: v, Lower: sigma, Upper: sigma}
}

// Limit makes a one-sided limit at the given confidence (0.95 for 95 %): kind UpperLimit
// says the quantity is below bound, LowerLimit above it. The median and errors, when
// known, may be filled in beside it for a data file.
func Limit(kind LimitKind, bound, level float64) Value {
	return Value{Limit: kind, Bound: bound, Level: level}
}

// Bounds are the physical or prior bounds of a quantity summarised from draws; a nil end
// is open.
type Bounds struct {
	Lo, Hi *float64
}

// AtLeast is the bound of a quantity that cannot go below lo (zero for most).
func AtLeast(lo float64) Bounds { return Bounds{Lo: &lo} }

// Rules for deciding a pile-up from draws, each with its reason (the derive step's, so
// that the two agree).
const (
	// pileBins equal bins between the bound and the pileTop quantile: a few thousand draws
	// give each a hundred or more, so noise rarely moves the mode, and a posterior peaked
	// away from the bound has its mode well clear of the first bin.
	pileBins = 20
	// pileTop is the far edge of the histogram as a quantile, not the extreme draw, so that
	// a long tail does not squeeze the body into the first bin.
	pileTop = 0.975
)

// oneSigmaLo and oneSigmaHi are the normal distribution's ±1σ fractions, Φ(∓1); the star
// and dilution steps summarise their draws with them.
const oneSigmaLo, oneSigmaHi = 0.15865525393145707, 0.8413447460685429

// FromDraws summarises draws: the median and the errors to the 15.9th and 84.1st
// percentiles (the normal ±1σ fractions), by linear interpolation between order statistics
// (sampler.Quantile); and, when b has a bound against which the draws pile (see the
// package comment), the 95 % one-sided limit away from it. Non-finite draws are left out;
// with none left the Value is all NaN. draws is not modified.
func FromDraws(draws []float64, b Bounds) Value {
	s := make([]float64, 0, len(draws))
	for _, x := range draws {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			s = append(s, x)
		}
	}
	if len(s) == 0 {
		nan := math.NaN()
		return Value{Median: nan, Lower: nan, Upper: nan}
	}
	slices.Sort(s)
	q := func(p float64) float64 { return sampler.Quantile(s, p) }
	v := Percentiles(q(0.5), q(oneSigmaLo), q(oneSigmaHi))
	switch {
	case b.Lo != nil && piles(s, *b.Lo, q(pileTop)):
		v.Limit, v.Bound, v.Level = UpperLimit, q(limitLevel), limitLevel
	case b.Hi != nil && piles(s, *b.Hi, q(1-pileTop)):
		v.Limit, v.Bound, v.Level = LowerLimit, q(1-limitLevel), limitLevel
	}
	return v
}

// piles reports whether the sorted draws s pile against edge: binned in pileBins equal
// bins from edge to far, the bin at the edge holds at least as many as any other. Draws
// beyond far, or on the wrong side of the edge, are not counted.
func piles(s []float64, edge, far float64) bool {
	width := far - edge
	if width == 0 {
		return true // (almost) every draw sits at the bound
	}
	var counts [pileBins]int
	for _, x := range s {
		u := (x - edge) / width
		if u < 0 || u > 1 {
			continue
		}
		counts[min(int(u*pileBins), pileBins-1)]++
	}
	return slices.Max(counts[1:]) <= counts[0]
}

// Rounded is a Value rounded for print: the texts of the value and its errors (or of the
// limit), without sign decorations.
type Rounded struct {
	// Value, Lower and Upper are the rounded median and errors; Lower and Upper are "" when
	// the value has no usable error.
	Value, Lower, Upper string
	// Symmetric is true when the two errors print alike.
	Symmetric bool
	// Limit is the kind of limit, and Bound its rounded number (two significant figures).
	Limit LimitKind
	Bound string
	// Percent is the limit's confidence in per cent ("95").
	Percent string
}

// Round applies the package's rounding rule.
func (v Value) Round() Rounded {
	if v.Limit != NoLimit {
		return Rounded{Limit: v.Limit, Bound: SigFigs(v.Bound, 2), Percent: strconv.FormatFloat(math.Round(1000*v.Level)/10, 'f', -1, 64)}
	}
	s := math.Min(v.Lower, v.Upper)
	if !usable(s) {
		s = math.Max(v.Lower, v.Upper)
	}
	if !usable(s) || math.IsNaN(v.Median) || math.IsInf(v.Median, 0) {
		return Rounded{Value: strconv.FormatFloat(v.Median, 'g', 6, 64)}
	}
	d := Decimals(s)
	r := Rounded{Value: Fixed(v.Median, d), Lower: Fixed(v.Lower, d), Upper: Fixed(v.Upper, d)}
	r.Symmetric = r.Lower == r.Upper
	return r
}

// usable reports whether an error can set the rounding: positive and finite.
func usable(s float64) bool { return s > 0 && !math.IsInf(s, 0) }

// Decimals returns the decimal place to which an error s > 0 keeps two significant figures
// (negative: tens, hundreds …), one fewer when rounding carries it into a third figure.
func Decimals(s float64) int {
	d := 1 - int(math.Floor(math.Log10(s)))
	if r := roundTo(s, d); r >= math.Pow(10, float64(2-d))*(1-1e-12) {
		d-- // 0.0996 rounds to 0.100: keep 0.10
	}
	return d
}

// roundTo rounds x to d decimal places.
func roundTo(x float64, d int) float64 {
	if d >= 0 {
		v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'f', d, 64), 64)
		return v
	}
	p := math.Pow(10, float64(-d))
	return math.Round(x/p) * p
}

// Fixed writes x rounded to d decimal places (d < 0 rounds to 10^−d), never as "-0".
func Fixed(x float64, d int) string {
	var s string
	if d >= 0 {
		s = strconv.FormatFloat(x, 'f', d, 64)
	} else {
		s = strconv.FormatFloat(roundTo(x, d), 'f', 0, 64)
	}
	if strings.HasPrefix(s, "-") && strings.Trim(s, "-0.") == "" {
		s = s[1:]
	}
	return s
}

// SigFigs writes x with n significant figures, in fixed notation for ordinary sizes and
// with an exponent ("1.2e-08") beyond them.
func SigFigs(x float64, n int) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', n, 64)
	}
	d := n - 1 - int(math.Floor(math.Log10(math.Abs(x))))
	if r := roundTo(math.Abs(x), d); r >= math.Pow(10, float64(n-d))*(1-1e-12) {
		d-- // 9.96 to two figures is 10, not 10.0
	}
	if d < -6 || d > 12 {
		return strconv.FormatFloat(x, 'e', n-1, 64)
	}
	return Fixed(x, d)
}

// minus is the typographic minus sign of the plain-text forms.
const minus = "−"

// signed writes a rounded number with a typographic minus.
func signed(s string) string {
	if strings.HasPrefix(s, "-") {
		return minus + s[1:]
	}
	return s
}

// Text writes the value in plain text: "3.21 ± 0.12", "3.21 +0.12/−0.10", "< 0.42 (95 %)",
// "> 0.87 (95 %)", or the bare value when it has no error.
func (v Value) Text() string {
	r := v.Round()
	switch {
	case r.Limit == UpperLimit:
		return "< " + signed(r.Bound) + " (" + r.Percent + " %)"
	case r.Limit == LowerLimit:
		return "> " + signed(r.Bound) + " (" + r.Percent + " %)"
	case r.Lower == "":
		return signed(r.Value)
	case r.Symmetric:
		return signed(r.Value) + " ± " + r.Upper
	}
	return signed(r.Value) + " +" + r.Upper + "/" + minus + r.Lower
}

// LaTeX writes the value for a LaTeX table, in math mode: "$3.21 \pm 0.12$",
// "$3.21^{+0.12}_{-0.10}$", "$<0.42$" (the limit's confidence goes in the table's notes),
// or "$3.21$".
func (v Value) LaTeX() string {
	r := v.Round()
	switch {
	case r.Limit == UpperLimit:
		return "$<" + latexNumber(r.Bound) + "$"
	case r.Limit == LowerLimit:
		return "$>" + latexNumber(r.Bound) + "$"
	case r.Lower == "":
		return "$" + latexNumber(r.Value) + "$"
	case r.Symmetric:
		return "$" + r.Value + ` \pm ` + r.Upper + "$"
	}
	return "$" + r.Value + "^{+" + r.Upper + "}_{-" + r.Lower + "}$"
}

// latexNumber writes a number for math mode: an exponent as "\times 10^{…}", not "e".
func latexNumber(s string) string {
	m, e, ok := strings.Cut(s, "e")
	if !ok {
		return s
	}
	exp, err := strconv.Atoi(e)
	if err != nil {
		return s
	}
	return m + `\times 10^{` + strconv.Itoa(exp) + "}"
}

// latexSpecial maps the characters LaTeX gives a meaning to their escaped forms in text.
var latexSpecial = strings.NewReplacer(
	`\`, `\textbackslash{}`, `&`, `\&`, `%`, `\%`, `$`, `\$`, `#`, `\#`, `_`, `\_`,
	`{`, `\{`, `}`, `\}`, `~`, `\textasciitilde{}`, `^`, `\textasciicircum{}`,
	`<`, `\textless{}`, `>`, `\textgreater{}`, `|`, `\textbar{}`,
)

// EscapeLaTeX writes text (a name from a user's file, say) so that LaTeX prints it as it
// is. Characters outside ASCII are kept; a bare LaTeX install reads them as UTF-8 (the
// default input encoding since 2018).
func EscapeLaTeX(s string) string {
	return latexSpecial.Replace(s)
}
