package periodogram

import (
	"math"
	"os"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"dipline/steps/internal/rng"
)

// pieces cuts an evenly sampled series into stretches of the given length with one-day
// gaps between them, as a survey's orbits give; value(t, i) gives the value at time t,
// the i-th point.
func pieces(n int, length, cadence float64, value func(t float64, i int) float64) []Piece {
	var out []Piece
	i := 0
	for k := 0; k < n; k++ {
		start := float64(k) * (length + 1)
		var p Piece
		for t := start; t <= start+length; t += cadence {
			p.Time = append(p.Time, t)
			p.Value = append(p.Value, value(t, i))
			i++
		}
		out = append(out, p)
	}
	return out
}

// noise returns white noise of standard deviation sigma from a seeded stream.
func noise(sigma float64, seed uint64) func(float64, int) float64 {
	g := rng.New(seed)
	return func(float64, int) float64 { return sigma * g.Normal() }
}

// smoothed returns white noise averaged over a running window of width h (in time), the
// kind of wander a detrend's trend of a quiet star holds: the noise is drawn on a grid
// of the cadence, then each value is the mean of the draws within h/2 of it.
func smoothed(sigma, h, cadence float64, seed uint64) func(float64, int) float64 {
	g := rng.New(seed)
	half := int(h / cadence / 2)
	var buf []float64
	return func(t float64, i int) float64 {
		for len(buf) <= i+half {
			buf = append(buf, sigma*g.Normal())
		}
		lo := max(0, i-half)
		s := 0.0
		for _, x := range buf[lo : i+half+1] {
			s += x
		}
		return s / float64(i+half+1-lo)
	}
}

func TestASpottedStarsPeriodsAndAmplitudesAreRecovered(t *testing.T) {
	// An invented spotted star: 1 + 1.2 % sin at 1.7 d + 0.4 % sin at its first harmonic
	// (0.85 d) + 0.6 % at an unrelated 4.3 d, with 0.1 % white noise, two 13-day pieces at
	// a 10-minute cadence. Each frequency to within a twentieth of the peak's width 1/(13 d):
	// the peaks of the three overlap through their side lobes over so few cycles and pull
	// one another by up to 0.02/(13 d) (measured), ten times less than the vet step's
	// tolerance of half the width. Each semi-amplitude to 3 % of itself: the fit's own error
	// is σ/√(N/2) = 0.006 % absolute (common practice) and the bins lower it by under 0.4 %.
	g := rng.New(11)
	value := func(t float64, _ int) float64 {
		return 1 + 0.012*math.Sin(2*math.Pi*t/1.7) + 0.004*math.Sin(2*math.Pi*t/0.85+0.3) +
			0.006*math.Sin(2*math.Pi*t/4.3+1) + 0.001*g.Normal()
	}
	got, err := Strongest(pieces(2, 13, 10.0/1440, value), Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := []Period{{Period: 1.7, Amplitude: 0.012}, {Period: 4.3, Amplitude: 0.006}, {Period: 0.85, Amplitude: 0.004}}
	if len(got) != len(want) {
		t.Fatalf("%d periods (%+v), want %d", len(got), got, len(want))
	}
	for j, w := range want {
		p := got[j]
		t.Run("period "+strconv.Itoa(j+1)+" is found at "+strconv.FormatFloat(w.Period, 'g', -1, 64)+" d", func(t *testing.T) {
			if math.Abs(1/p.Period-1/w.Period) > 0.05/13 {
				t.Errorf("period %v d, want %v d", p.Period, w.Period)
			}
			if math.Abs(p.Amplitude/w.Amplitude-1) > 0.03 {
				t.Errorf("amplitude %v, want %v", p.Amplitude, w.Amplitude)
			}
			if !(p.FalseAlarm < 1e-10) || !(p.Power > 0 && p.Power <= 1) {
				t.Errorf("false alarm %v, power %v", p.FalseAlarm, p.Power)
			}
		})
	}
}

func TestPeaksWithinOnePeakWidthAreOnePeriod(t *testing.T) {
	// Two sinusoids 0.3/(13 d) apart in frequency, inside the main lobe of a 13-day piece:
	// one period is reported, between them (1/13 d⁻¹ is the lobe's half width, computed
	// from sinc²).
	f1 := 1 / 2.0
	f2 := f1 + 0.3/13
	value := func(t float64, _ int) float64 {
		return 0.01*math.Sin(2*math.Pi*f1*t) + 0.008*math.Sin(2*math.Pi*f2*t+0.5)
	}
	got, err := Strongest(pieces(1, 13, 0.01, value), Options{})
	if err != nil {
		t.Fatal(err)
	}
	near := 0
	for _, p := range got {
		if f := 1 / p.Period; f > f1-1.0/13 && f < f2+1.0/13 {
			near++
		}
	}
	if near != 1 {
		t.Errorf("%d periods near the pair: %+v", near, got)
	}
}

// detections counts the series of white noise (or smoothed noise) on which Strongest
// keeps a period at false-alarm level alpha.
func detections(t *testing.T, seeds int, alpha float64, make func(seed uint64) []Piece, smoothing float64) int {
	t.Helper()
	n := 0
	for s := 0; s < seeds; s++ {
		got, err := Strongest(make(uint64(1000+s)), Options{FalseAlarm: alpha, Smoothing: smoothing})
		if err != nil {
			t.Fatal(err)
		}
		if len(got) > 0 {
			n++
		}
	}
	return n
}

// binomialCeiling is the count that n trials at rate p exceed with probability about
// 0.0013: mean plus three standard deviations, rounded up (normal approximation to the
// binomial; common practice), and at least 2.
func binomialCeiling(n int, p float64) int {
	mu := float64(n) * p
	return max(2, int(math.Ceil(mu+3*math.Sqrt(mu*(1-p)))))
}

func TestNoiseAloneGivesAPeriodNoMoreOftenThanTheFalseAlarmLevel(t *testing.T) {
	// The bound holds whatever the series (a union bound over the grid), so the rate on
	// pure white noise must not exceed the level beyond binomial scatter. Two 8-day pieces
	// of 30-minute points; DIPLINE_LONG=1 runs ten times as many seeds.
	seeds := 200
	if os.Getenv("DIPLINE_LONG") != "" {
		seeds = 2000
	}
	white := func(seed uint64) []Piece { return pieces(2, 8, 1.0/48, noise(0.01, seed)) }
	for _, alpha := range []float64{0.05, DefaultFalseAlarm} {
		t.Run("white noise at false-alarm level "+strconv.FormatFloat(alpha, 'g', -1, 64), func(t *testing.T) {
			n := detections(t, seeds, alpha, white, 0)
			t.Logf("%d of %d white-noise series gave a period at level %g", n, seeds, alpha)
			if c := binomialCeiling(seeds, alpha); n > c {
				t.Errorf("%d of %d series gave a period; at most %d expected", n, seeds, c)
			}
		})
	}
	t.Run("noise smoothed over half a day, with that smoothing stated", func(t *testing.T) {
		// The smoothed series counts one independent value per 0.5 d; the rate at level
		// 0.05 must stay within the level.
		sm := func(seed uint64) []Piece { return pieces(2, 13, 1.0/48, smoothed(0.01, 0.5, 1.0/48, seed)) }
		n := detections(t, seeds, 0.05, sm, 0.5)
		t.Logf("%d of %d smoothed-noise series gave a period at level 0.05", n, seeds)
		if c := binomialCeiling(seeds, 0.05); n > c {
			t.Errorf("%d of %d series gave a period; at most %d expected", n, seeds, c)
		}
	})
}

func TestATooShortSeriesGivesNoPeriodAndNoError(t *testing.T) {
	cases := []struct {
		name string
		in   []Piece
	}{
		{"no pieces", nil},
		{"a piece shorter than two shortest periods", pieces(1, 0.15, 0.001, func(t float64, _ int) float64 { return math.Sin(40 * t) })},
		{"a piece of three points", []Piece{{Time: []float64{0, 1, 2}, Value: []float64{1, 2, 1}}}},
		{"a constant piece", pieces(1, 5, 0.01, func(float64, int) float64 { return 1 })},
		{"a piece with every value missing", pieces(1, 5, 0.01, func(float64, int) float64 { return math.NaN() })},
	}
	for _, c := range cases {
		t.Run(c.name+" gives nothing", func(t *testing.T) {
			got, err := Strongest(c.in, Options{})
			if err != nil || len(got) != 0 {
				t.Errorf("periods %+v, error %v", got, err)
			}
		})
	}
}

func TestMissingValuesAreSkipped(t *testing.T) {
	value := func(t float64, i int) float64 {
		if i%7 == 0 {
			return math.NaN()
		}
		return 0.01 * math.Sin(2*math.Pi*t/1.3)
	}
	got, err := Strongest(pieces(1, 10, 0.01, value), Options{})
	if err != nil || len(got) == 0 || math.Abs(got[0].Period/1.3-1) > 1e-3 {
		t.Errorf("periods %+v, error %v", got, err)
	}
}

func TestMalformedInputIsRefused(t *testing.T) {
	good := pieces(1, 5, 0.01, func(t float64, _ int) float64 { return math.Sin(t) })
	cases := []struct {
		name string
		in   []Piece
		o    Options
		says string
	}{
		{"times and values of different lengths", []Piece{{Time: []float64{1, 2, 3}, Value: []float64{1, 2}}}, Options{}, "piece 1"},
		{"unsorted times", []Piece{{Time: []float64{1, 3, 2, 4, 5}, Value: []float64{1, 2, 3, 4, 5}}}, Options{}, "sorted"},
		{"a missing time", []Piece{{Time: []float64{1, math.NaN(), 3, 4}, Value: []float64{1, 2, 3, 4}}}, Options{}, "time 2"},
		{"a negative shortest period", good, Options{Shortest: -1}, "shortest"},
		{"a longest period below the shortest", good, Options{Shortest: 1, Longest: 0.5}, "longest"},
		{"a false-alarm level of one", good, Options{FalseAlarm: 1}, "false-alarm"},
		{"no periods asked for", good, Options{Max: -2}, "periods asked"},
		{"a negative smoothing time", good, Options{Smoothing: -0.5}, "smoothing"},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			_, err := Strongest(c.in, c.o)
			if err == nil || !strings.Contains(err.Error(), c.says) {
				t.Errorf("error %v, want one saying %q", err, c.says)
			}
		})
	}
}

func TestTheSameSeriesGivesTheSameBits(t *testing.T) {
	make := func() []Piece { return pieces(3, 12, 0.02, noise(0.01, 5)) }
	value := func(t float64, i int) float64 { return 0.02*math.Sin(2*math.Pi*t/2.2) + 0.001*math.Sin(float64(i)) }
	a, err1 := Strongest(append(make(), pieces(1, 12, 0.02, value)...), Options{})
	b, err2 := Strongest(append(make(), pieces(1, 12, 0.02, value)...), Options{})
	if err1 != nil || err2 != nil || !reflect.DeepEqual(a, b) || len(a) == 0 {
		t.Errorf("%+v and %+v (%v, %v)", a, b, err1, err2)
	}
}

func TestVariabilityIsTheStrongestPeriodsInTheDetrendsShape(t *testing.T) {
	value := func(t float64, _ int) float64 { return 1 + 0.03*math.Sin(2*math.Pi*t) }
	v, err := Variability(pieces(2, 13, 0.01, value), Options{Smoothing: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	if len(v.Periods) != 1 || len(v.Amplitudes) != 1 || math.Abs(v.Periods[0]-1) > 1e-3 || math.Abs(v.Amplitudes[0]/0.03-1) > 0.01 {
		t.Errorf("variability %+v, want 1.000 d at 3 %%", v)
	}
	quiet, err := Variability(pieces(2, 13, 0.01, noise(1e-4, 2)), Options{Smoothing: 0.5})
	if err != nil || quiet.Periods == nil || len(quiet.Periods) != 0 {
		t.Errorf("white noise gave %+v (%v), want an empty, non-nil list", quiet, err)
	}
}

// The fast transforms give the same sums as rotating each bin's phase from one frequency
// to the next (the direct periodogram, itself checked against least squares), at every
// grid frequency, for a piece with gaps inside it and a grid that does not start at zero.
func TestTheTransformedSumsEqualTheDirectOnes(t *testing.T) {
	value := func(t float64, i int) float64 {
		return 0.01*math.Sin(2*math.Pi*t/1.7) + 0.002*math.Cos(2*math.Pi*t/0.31) + 1e-3*math.Sin(float64(i*i))
	}
	pc := pieces(1, 30, 0.013, value)[0]
	var holed Piece // two holes inside the piece, so some bins are empty
	for i, ti := range pc.Time {
		if (ti > 7 && ti < 7.4) || (ti > 20 && ti < 22) {
			continue
		}
		holed.Time, holed.Value = append(holed.Time, ti), append(holed.Value, pc.Value[i])
	}
	o := Options{}.withDefaults()
	a, err := analyse([]Piece{holed}, o)
	if err != nil || a == nil {
		t.Fatal(a, err)
	}
	b := a.pieces[0]
	direct := make([]float64, a.grid.N)
	k0 := b.from(a.grid)
	b.explained(direct, a.grid, k0, newScratch(len(b.t)))
	worst := 0.0
	for k := k0; k < a.grid.N; k++ {
		worst = math.Max(worst, math.Abs(a.power[k]-direct[k]/b.total))
	}
	if worst > 1e-9 || a.grid.Step > 1/(o.Oversample*b.length) {
		t.Errorf("largest difference in power %.3g (want ≤ 1e-9); step %v, want at most %v",
			worst, a.grid.Step, 1/(o.Oversample*b.length))
	}
}
