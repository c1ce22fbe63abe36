package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// table is a light-curve file read back from its bytes.
type table struct {
	Columns []string
	Time    []float64
	Flux    []float64
	Err     []float64
	Quality []int
}

// parseTable reads a file written by series.encode: "#" comment lines, one line of column
// names, then rows of time, flux, error and quality, split on sep (or on runs of spaces
// and tabs when sep is ""). Errors name the line.
func parseTable(data []byte, sep string) (*table, error) {
	split := func(s string) []string {
		if sep == "" {
			return strings.Fields(s)
		}
		return strings.Split(s, sep)
	}
	t := &table{}
	for n, line := range strings.Split(string(data), "\n") {
		switch {
		case line == "" || strings.HasPrefix(line, "#"):
			continue
		case t.Columns == nil:
			t.Columns = split(line)
			if len(t.Columns) != 4 {
				return nil, fmt.Errorf("line %d: %d column names, want 4", n+1, len(t.Columns))
			}
			continue
		}
		f := split(line)
		if len(f) != 4 {
			return nil, fmt.Errorf("line %d: %d fields, want 4", n+1, len(f))
		}
		var v [3]float64
		for j := range v {
			x, err := strconv.ParseFloat(f[j], 64)
			if err != nil {
				return nil, fmt.Errorf("line %d, column %s: %v", n+1, t.Columns[j], err)
			}
			v[j] = x
		}
		q, err := strconv.Atoi(f[3])
		if err != nil {
			return nil, fmt.Errorf("line %d, column %s: %v", n+1, t.Columns[3], err)
		}
		t.Time = append(t.Time, v[0])
		t.Flux = append(t.Flux, v[1])
		t.Err = append(t.Err, v[2])
		t.Quality = append(t.Quality, q)
	}
	if t.Columns == nil {
		return nil, fmt.Errorf("no column names")
	}
	return t, nil
}

// demo holds one generation, shared by the tests (it takes a fraction of a second).
type demo struct {
	files   map[string][]byte
	series  map[string]*series
	tables  map[string]*table
	truth   truthFile
	planets []planet
}

func build(t *testing.T) *demo {
	t.Helper()
	files, all, err := generate()
	if err != nil {
		t.Fatal(err)
	}
	d := &demo{files: map[string][]byte{}, series: map[string]*series{}, tables: map[string]*table{}}
	for _, f := range files {
		d.files[f.Name] = f.Bytes
	}
	for _, s := range all {
		c := s.Campaign
		d.series[c.Name] = s
		sep := c.Format.Sep
		if sep == "\t" {
			sep = "" // read the fast file as whitespace-separated, as a user's reader would
		}
		tab, err := parseTable(d.files[c.File], sep)
		if err != nil {
			t.Fatalf("%s: %v", c.File, err)
		}
		d.tables[c.Name] = tab
	}
	if err := json.Unmarshal(d.files["truth.json"], &d.truth); err != nil {
		t.Fatalf("truth.json: %v", err)
	}
	s := fw3318
	d.planets = planetsOf(&s)
	return d
}

func TestGeneratorIsDeterministic(t *testing.T) {
	first, _, err := generate()
	if err != nil {
		t.Fatal(err)
	}
	second, _, err := generate()
	if err != nil {
		t.Fatal(err)
	}
	if len(first) != 3 || len(second) != len(first) {
		t.Fatalf("got %d and %d files, want 3", len(first), len(second))
	}
	for i := range first {
		t.Run(first[i].Name+" is byte-identical on a second run", func(t *testing.T) {
			if first[i].Name != second[i].Name || !bytes.Equal(first[i].Bytes, second[i].Bytes) {
				t.Fatalf("%s differs between two runs", first[i].Name)
			}
			if n := len(first[i].Bytes); n == 0 || n >= 1<<20 {
				t.Errorf("%s has %d bytes, want between 1 and 1 MiB", first[i].Name, n)
			}
		})
		// The committed files must be what the generator writes. Only checked on amd64,
		// where they were made: on other architectures the compiler may fuse
		// multiply-adds and a last-digit change is possible (as for golden records).
		t.Run(first[i].Name+" matches the committed file", func(t *testing.T) {
			if runtime.GOARCH != "amd64" {
				t.Skipf("committed data made on amd64, this is %s", runtime.GOARCH)
			}
			disk, err := os.ReadFile(filepath.Join("..", "data", first[i].Name))
			if err != nil {
				t.Fatalf("%v; run `go run ./examples/fernwell/generate` from the repository root", err)
			}
			if !bytes.Equal(disk, first[i].Bytes) {
				t.Fatalf("data/%s is stale; run `go run ./examples/fernwell/generate` from the repository root", first[i].Name)
			}
		})
	}
}

// TestSplitmix64 checks the generator against the first outputs of Steele, Lea & Flood's
// splitmix64 from state 0 (from memory; confirmed with an independent Python
// implementation of the published algorithm).
func TestSplitmix64(t *testing.T) {
	r := &splitmix64{}
	for i, want := range []uint64{0xe220a8397b1dcdaf, 0x6e789e6aa1b965f4, 0x06c45d188009454f} {
		if got := r.next(); got != want {
			t.Errorf("output %d: %#x, want %#x", i, got, want)
		}
	}
	t.Run("normal deviates have mean 0 and variance 1", func(t *testing.T) {
		// Standard results for N(0,1) samples (common practice): the mean has standard
		// error 1/√n, the variance √(2/n).
		const n = 200000
		r := newStream(1, "test")
		var sum, sum2 float64
		for range n {
			x := r.normal()
			sum += x
			sum2 += x * x
		}
		mean, variance := sum/n, sum2/n-(sum/n)*(sum/n)
		if math.Abs(mean) > 5/math.Sqrt(n) || math.Abs(variance-1) > 5*math.Sqrt(2.0/n) {
			t.Errorf("mean %.5f, variance %.5f from %d deviates", mean, variance, n)
		}
	})
	t.Run("streams with different labels differ", func(t *testing.T) {
		if newStream(seed, "main/noise").next() == newStream(seed, "main/flags").next() {
			t.Error("two purposes drew the same first number")
		}
	})
}

// TestGeometry checks derive on the Sun and Earth against the check values of
// REFERENCES.md §4 (computed there from Winn 2010 and IAU 2015 B3 nominal values): for
// P = 365.25 d, circular, b = 0, k = 0.0091679: a/R* = 215.029, T14 = 13.095 h,
// T23 = 12.857 h.
func TestGeometry(t *testing.T) {
	sun := star{Radius: 1, Mass: 1}
	earth := planet{Period: 365.25, Depth: 0.0091679 * 0.0091679, Impact: 0}
	earth.derive(&sun)
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"a over R star is 215.029", earth.ARs, 215.029, 0.001},
		{"the radius ratio comes back from the depth without limb darkening", earth.K, 0.0091679, 1e-10},
		{"T14 is 13.095 hours", earth.T14 * 24, 13.095, 0.001},
		{"T23 is 12.857 hours", earth.T23 * 24, 12.857, 0.001},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if math.Abs(tc.got-tc.want) > tc.tol {
				t.Errorf("got %.6f, want %.6f ± %g", tc.got, tc.want, tc.tol)
			}
		})
	}

	// The model's transit must last exactly the duration in truth.json and be exactly
	// Depth deep at mid-transit. The edge is found by bisection on the model itself.
	s := fw3318
	for _, p := range planetsOf(&s) {
		t.Run("planet "+p.Name+"'s model matches its stated depth and duration", func(t *testing.T) {
			if got := p.deficit(&s, p.Epoch); math.Abs(got-p.Depth) > 1e-12 {
				t.Errorf("deficit at mid-transit %.9f, want %.9f", got, p.Depth)
			}
			lo, hi := 0.0, p.T14 // deficit > 0 at lo, = 0 at hi
			for range 60 {
				mid := (lo + hi) / 2
				if p.deficit(&s, p.Epoch+mid) > 0 {
					lo = mid
				} else {
					hi = mid
				}
			}
			if math.Abs(2*lo-p.T14) > 1e-9 {
				t.Errorf("model lasts %.9f d, T14 says %.9f d", 2*lo, p.T14)
			}
		})
	}
}

// clean says whether row i may be used to measure the star: finite and unflagged.
func (tab *table) clean(i int) bool {
	return tab.Quality[i] == 0 && !math.IsNaN(tab.Flux[i])
}

func TestMainLightCurve(t *testing.T) {
	d := build(t)
	tab, ser := d.tables["main"], d.series["main"]
	cadence := 29.4 / 1440

	t.Run("columns have the documented mixed-case names", func(t *testing.T) {
		if !slices.Equal(tab.Columns, []string{"BJD_TDB", "Flux", "Flux_Err", "Quality"}) {
			t.Errorf("columns %q", tab.Columns)
		}
		if !bytes.Contains(d.files["fw3318.csv"], []byte("# BJD_TDB is the Barycentric Julian Date in the TDB time scale minus 2460000.0")) {
			t.Error("no comment line stating the time reference")
		}
	})

	t.Run("the cadence is 29.4 minutes and the span about 80 days", func(t *testing.T) {
		regular := 0
		for i := 1; i < len(tab.Time); i++ {
			step := tab.Time[i] - tab.Time[i-1]
			n := math.Round(step / cadence)
			if n < 1 || math.Abs(step-n*cadence) > 1e-6 {
				t.Fatalf("row %d: step %.7f d is not a whole number of cadences", i, step)
			}
			if n == 1 {
				regular++
			}
		}
		if frac := float64(regular) / float64(len(tab.Time)-1); frac < 0.95 {
			t.Errorf("only %.1f%% of steps are one cadence", 100*frac)
		}
		if span := tab.Time[len(tab.Time)-1] - tab.Time[0]; span < 78 || span > 82 {
			t.Errorf("span %.2f d, want about 80", span)
		}
	})

	t.Run("there is one long gap between the stretches and a few short ones", func(t *testing.T) {
		var long, short int
		for i := 1; i < len(tab.Time); i++ {
			switch step := tab.Time[i] - tab.Time[i-1]; {
			case step > 2:
				long++
			case step > 2*cadence:
				short++
			}
		}
		if long != 1 || short < 2 || short > 6 {
			t.Errorf("%d long and %d short gaps, want 1 and 2–6", long, short)
		}
	})

	t.Run("a handful of rows are flagged and a couple are NaN", func(t *testing.T) {
		var flagged, missing int
		for i := range tab.Time {
			if tab.Quality[i] != 0 {
				flagged++
			}
			if math.IsNaN(tab.Flux[i]) {
				missing++
			}
		}
		if flagged < 5 || flagged > 12 || missing < 2 || missing > 4 {
			t.Errorf("%d flagged and %d NaN rows", flagged, missing)
		}
	})

	t.Run("the noise is about 300 ppm per point", func(t *testing.T) {
		var res []float64
		for i := range tab.Time {
			if tab.clean(i) && !nearTransit(tab.Time[i], d.planets, 0.1) && !nearFlare(tab.Time[i], ser.Flares, 0.3) {
				res = append(res, tab.Flux[i]/ser.Star[i]-1)
			}
		}
		mean, sd := meanSD(res)
		// Standard errors of a sample mean and standard deviation (common practice).
		n := float64(len(res))
		if math.Abs(mean) > 5*300e-6/math.Sqrt(n) || math.Abs(sd-300e-6) > 0.05*300e-6 {
			t.Errorf("out-of-transit residuals: mean %.1f ppm, sd %.1f ppm over %d points", mean*1e6, sd*1e6, len(res))
		}
	})

	// The star's modulation must dwarf the shallow planet: at least ten times planet c's
	// depth peak to peak in a typical (median) rotation, and five times in the quietest.
	t.Run("the spot modulation is at least ten times planet c's depth on a one-day scale", func(t *testing.T) {
		limit := 10 * d.truth.Planets[1].DepthPPM * 1e-6
		model := peakToPeakPerRotation(tab.Time, ser.Star, func(i int) bool { return true })
		smoothed := runningMedian(tab, 5)
		data := peakToPeakPerRotation(tab.Time, smoothed, func(i int) bool { return !math.IsNaN(smoothed[i]) })
		if len(model) < 20 {
			t.Fatalf("only %d full rotations", len(model))
		}
		if lo := slices.Min(model); lo < limit/2 {
			t.Errorf("weakest rotation of the star model: %.0f ppm peak to peak, want ≥ %.0f", lo*1e6, limit/2*1e6)
		}
		if med := median(model); med < limit {
			t.Errorf("median rotation of the star model: %.0f ppm peak to peak, want ≥ %.0f", med*1e6, limit*1e6)
		}
		if med := median(data); med < limit {
			t.Errorf("median peak to peak of the smoothed data %.0f ppm, want ≥ %.0f", med*1e6, limit*1e6)
		}
		t.Logf("peak to peak per rotation: model min %.0f / median %.0f / max %.0f ppm; smoothed data median %.0f ppm",
			slices.Min(model)*1e6, median(model)*1e6, slices.Max(model)*1e6, median(data)*1e6)
	})

	t.Run("there are a dozen flares, several of 1 to 5 percent", func(t *testing.T) {
		// Count events in the data: runs of rows more than 5 σ above the star.
		events, big := 0, 0
		inEvent, peak := false, 0.0
		for i := range tab.Time {
			if !tab.clean(i) {
				continue
			}
			excess := tab.Flux[i]/ser.Star[i] - 1
			if excess > 5*tab.Err[i] {
				if !inEvent {
					events++
					peak = 0
				}
				inEvent = true
				peak = math.Max(peak, excess)
				continue
			}
			if inEvent && peak >= 0.01 {
				big++
			}
			inEvent = false
		}
		if events != 12 || big < 3 {
			t.Errorf("%d flares in the data (want 12), %d of them above 1%%", events, big)
		}
		for _, f := range ser.Flares {
			if f.Amp > 0.06 {
				t.Errorf("flare at %.3f has amplitude %.3f, above 6%%", f.Peak, f.Amp)
			}
		}
	})

	for _, tp := range d.truth.Planets {
		checkTransits(t, tab, ser, tp, map[string]int{"b": 15, "c": 5}[tp.Name])
	}
}

// checkTransits measures each planet's depth in the written data: the mean of flux/star − 1
// over rows whose whole exposure lies between second and third contact must be −depth,
// within 15 % (limb darkening makes the bottom shallower away from mid-transit) plus
// 4 standard errors.
func checkTransits(t *testing.T, tab *table, ser *series, tp truthPlanet, minTransits int) {
	t.Run("planet "+tp.Name+"'s transits sit below the star by about its depth", func(t *testing.T) {
		half := tp.FlatDurationH/24/2 - ser.Campaign.cadence()/2
		var res []float64
		seen := map[float64]bool{}
		for i := range tab.Time {
			mid := tp.EpochD + math.Round((tab.Time[i]-tp.EpochD)/tp.PeriodD)*tp.PeriodD
			if !tab.clean(i) || math.Abs(tab.Time[i]-mid) > half {
				continue
			}
			res = append(res, tab.Flux[i]/ser.Star[i]-1)
			seen[mid] = true
		}
		if len(seen) < minTransits {
			t.Fatalf("only %d transits have points in their flat part, want ≥ %d", len(seen), minTransits)
		}
		mean, _ := meanSD(res)
		depth := tp.DepthPPM * 1e-6
		se := ser.Campaign.NoisePPM * 1e-6 / math.Sqrt(float64(len(res)))
		if math.Abs(-mean-depth) > 0.15*depth+4*se {
			t.Errorf("in-transit flux is %.0f ppm below the star over %d points, want %.0f ± %.0f",
				-mean*1e6, len(res), depth*1e6, (0.15*depth+4*se)*1e6)
		}
		t.Logf("planet %s: %.0f ppm below the star over %d points in %d transits (truth %.0f)",
			tp.Name, -mean*1e6, len(res), len(seen), tp.DepthPPM)
	})
}

func TestFastLightCurve(t *testing.T) {
	d := build(t)
	tab, ser := d.tables["fast"], d.series["fast"]

	t.Run("columns have other spellings and the file is tab-separated", func(t *testing.T) {
		if !slices.Equal(tab.Columns, []string{"time", "FLUX", "flux_error", "QUALITY"}) {
			t.Errorf("columns %q", tab.Columns)
		}
		if bytes.Contains(d.files["fw3318_fast.csv"], []byte(",")) {
			t.Error("the fast file contains a comma")
		}
	})
	t.Run("the cadence is 10 minutes over about 30 days", func(t *testing.T) {
		steps := make([]float64, 0, len(tab.Time))
		for i := 1; i < len(tab.Time); i++ {
			steps = append(steps, tab.Time[i]-tab.Time[i-1])
		}
		if m := median(steps) * 1440; math.Abs(m-10) > 1e-3 {
			t.Errorf("typical step %.5f min", m)
		}
		if span := tab.Time[len(tab.Time)-1] - tab.Time[0]; span < 28 || span > 32 {
			t.Errorf("span %.2f d", span)
		}
		if slices.Max(steps) < 0.2 {
			t.Error("no gap")
		}
	})
	t.Run("the flux is a count rate near 18350 with flagged and NaN rows", func(t *testing.T) {
		var finite []float64
		var flagged, missing int
		for i := range tab.Flux {
			if math.IsNaN(tab.Flux[i]) {
				missing++
			} else {
				finite = append(finite, tab.Flux[i])
			}
			if tab.Quality[i] != 0 {
				flagged++
			}
		}
		if m := median(finite); math.Abs(m-18350) > 20 {
			t.Errorf("median flux %.1f", m)
		}
		if flagged == 0 || missing == 0 {
			t.Errorf("%d flagged and %d NaN rows, want some of each", flagged, missing)
		}
	})
	checkTransits(t, tab, ser, d.truth.Planets[0], 6)
}

func TestTruthFile(t *testing.T) {
	d := build(t)
	tests := []struct {
		name string
		ok   bool
	}{
		{"names the invented star", d.truth.Star.ID == "FW-3318"},
		{"lists planets b and c", len(d.truth.Planets) == 2 && d.truth.Planets[0].Name == "b" && d.truth.Planets[1].Name == "c"},
		{"gives planet b a 3.7-day period and 2500 ppm", math.Abs(d.truth.Planets[0].PeriodD-3.7) < 0.05 && d.truth.Planets[0].DepthPPM == 2500},
		{"gives planet c a 5.4-day period and 1000 ppm", math.Abs(d.truth.Planets[1].PeriodD-5.37) < 0.05 && d.truth.Planets[1].DepthPPM == 1000},
		{"has durations between one and three hours", d.truth.Planets[0].DurationH > 1 && d.truth.Planets[1].DurationH < 3},
		{"counts the rows of both files", d.truth.LightCurves[0].Rows == len(d.tables["main"].Time) && d.truth.LightCurves[1].Rows == len(d.tables["fast"].Time)},
		{"lists the dozen flares of the main file", len(d.truth.LightCurves[0].Flares) == 12},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if !tc.ok {
				t.Errorf("truth.json: %s", d.files["truth.json"])
			}
		})
	}
}

func TestReadmeShowsTheTruthTable(t *testing.T) {
	d := build(t)
	readme, err := os.ReadFile(filepath.Join("..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	if table := markdownTable(d.truth); !bytes.Contains(readme, []byte(table)) {
		t.Errorf("README.md lacks the current truth table; paste the output of `go run ./examples/fernwell/generate -table`:\n%s", table)
	}
}

func FuzzParseTable(f *testing.F) {
	f.Add([]byte("# c\nA,B,C,D\n1,2,3,0\n"), ",")
	f.Add([]byte("time\tFLUX\tflux_error\tQUALITY\n1\tNaN\t0.1\t4\n"), "")
	f.Add([]byte("a,b\n"), ",")
	f.Fuzz(func(t *testing.T, data []byte, sep string) {
		tab, err := parseTable(data, sep)
		if err != nil {
			return
		}
		if len(tab.Time) != len(tab.Flux) || len(tab.Flux) != len(tab.Err) || len(tab.Err) != len(tab.Quality) {
			t.Fatalf("columns of unequal length from %q", data)
		}
	})
}

// peakToPeakPerRotation splits the times into windows one rotation long and returns the
// peak-to-peak of y in each window that is at least 90 % covered.
func peakToPeakPerRotation(time, y []float64, use func(int) bool) []float64 {
	width := fw3318.RotationDays
	cadence := time[1] - time[0]
	var out []float64
	for start := time[0]; start+width <= time[len(time)-1]; start += width {
		lo, hi, n := math.Inf(1), math.Inf(-1), 0
		for i, t := range time {
			if t >= start && t < start+width && use(i) {
				lo, hi, n = math.Min(lo, y[i]), math.Max(hi, y[i]), n+1
			}
		}
		if float64(n) >= 0.9*width/cadence {
			out = append(out, hi-lo)
		}
	}
	return out
}

// runningMedian smooths the clean rows of tab with a median over w neighbouring rows; it
// is NaN where the rows are not clean.
func runningMedian(tab *table, w int) []float64 {
	out := make([]float64, len(tab.Flux))
	for i := range out {
		out[i] = math.NaN()
		if !tab.clean(i) || i < w/2 || i+w/2 >= len(out) {
			continue
		}
		var win []float64
		for j := i - w/2; j <= i+w/2; j++ {
			if tab.clean(j) {
				win = append(win, tab.Flux[j])
			}
		}
		out[i] = median(win)
	}
	return out
}

func meanSD(x []float64) (mean, sd float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	for _, v := range x {
		sd += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(sd / float64(len(x)-1))
}
