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
	s, c := fw3318, fw3318B
	d.planets = planetsOf(&s, &c)
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
	if len(first) != 6 || len(second) != len(first) {
		t.Fatalf("got %d and %d files, want 6", len(first), len(second))
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
		// The committed files must be what the generator writes: byte for byte on amd64,
		// where they were made; elsewhere the compiler may fuse multiply-adds and a printed
		// number may change in its last digit, so there the words must match and the numbers
		// agree to a millionth or one unit of their last printed digit.
		t.Run(first[i].Name+" matches the committed file", func(t *testing.T) {
			disk, err := os.ReadFile(filepath.Join("..", "data", first[i].Name))
			if err != nil {
				t.Fatalf("%v; run `go run ./examples/fernwell/generate` from the repository root", err)
			}
			if runtime.GOARCH == "amd64" {
				if !bytes.Equal(disk, first[i].Bytes) {
					t.Fatalf("data/%s is stale; run `go run ./examples/fernwell/generate` from the repository root", first[i].Name)
				}
				return
			}
			if msg := sameUpToRounding(disk, first[i].Bytes); msg != "" {
				t.Fatalf("data/%s is stale (%s); run `go run ./examples/fernwell/generate` from the repository root", first[i].Name, msg)
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
// Winn (2010, arXiv:1001.2010) with IAU 2015 Resolution B3 nominal values, worked
// independently at high precision: for
// P = 365.25 d, circular, b = 0, k = 0.0091679: a/R* = 215.029, T14 = 13.095 h,
// T23 = 12.857 h. Without limb darkening the depth at b = 0 is exactly k² (Mandel & Agol
// 2002, uniform source with the planet inside the disc).
func TestGeometry(t *testing.T) {
	sun := star{Radius: 1, Mass: 1}
	earth := planet{Period: 365.25, Depth: 0.0091679 * 0.0091679, Impact: 0}
	earth.derive(&sun, 0)
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"a over R star is 215.029", earth.ARs, 215.029, 0.001},
		{"the Sun's density is 1409.78 kg per cubic metre", sun.density(), 1409.78, 0.01},
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

	// Each planet's deficit at mid-transit must be its undiluted depth, the diluted depth
	// times 1 + F_c/F_t (third light, common practice; from memory), and the transit must last exactly T14. The edge
	// is found by bisection on the model itself.
	s, c := fw3318, fw3318B
	f := c.fluxRatio()
	for _, p := range planetsOf(&s, &c) {
		t.Run("planet "+p.Name+"'s model matches its stated depth and duration", func(t *testing.T) {
			if got := p.deficit(&s, p.Epoch); math.Abs(got-p.Depth*(1+f)) > 1e-12 {
				t.Errorf("deficit at mid-transit %.9f, want %.9f × (1 + %.5f)", got, p.Depth, f)
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

// TestOccultedFlux holds the quadrature of occult.go to the Mandel & Agol (2002) closed
// form: check values at u1 = 0.4, u2 = 0.25 computed by an independent 30-digit radial
// integration of the occulted intensity, every case of their Table 1 included; and
// to two values at this demo's limb darkening from an independent route, scipy's dblquad
// over the planet's disc (python3-scipy 1.10.1; the script is quoted below).
func TestOccultedFlux(t *testing.T) {
	ma := limbDarkening{U1: 0.4, U2: 0.25}
	tests := []struct {
		name    string
		k, z    float64
		ld      limbDarkening
		want    float64
		tol     float64
		reverse bool // want is the hidden light, 1 − flux
	}{
		{"a small planet at the centre", 0.1, 0, ma, 0.987890954717, 1e-11, false},
		{"a small planet at z = k", 0.1, 0.1, ma, 0.987915612136, 1e-11, false},
		{"a small planet half way out", 0.1, 0.5, ma, 0.988604498522, 1e-11, false},
		{"a small planet touching the limb from inside", 0.1, 0.9, ma, 0.991803712203, 1e-11, false},
		{"a small planet crossing the limb", 0.1, 0.95, ma, 0.994001442745, 1e-11, false},
		{"a grazing planet mostly off the disc", 0.05, 1.02, ma, 0.999642302155, 1e-11, false},
		{"a large planet covering the centre", 0.3, 0.1, ma, 0.892168630745, 1e-11, false},
		{"a half-size planet inside", 0.5, 0.3, ma, 0.713276289437, 1e-11, false},
		{"a half-size planet at z = one half", 0.5, 0.5, ma, 0.73198358118, 1e-11, false},
		{"a half-size planet on the limb", 0.5, 0.7, ma, 0.792408925313, 1e-11, false},
		{"a big planet over the centre", 0.7, 0.5, ma, 0.550204260893, 1e-11, false},
		{"a big planet at z = k", 0.7, 0.7, ma, 0.651466831548, 1e-11, false},
		{"a big planet on the limb", 0.7, 1.2, ma, 0.881738504877, 1e-11, false},
		{"a body larger than the star hiding it all", 1.5, 0.2, ma, 0, 1e-11, false},
		{"a body larger than the star hiding most of it", 1.5, 1.0, ma, 0.233219588842, 1e-11, false},
		{"nothing hidden beyond first contact", 0.05, 1.06, ma, 1, 0, false},
		// scipy golden: dblquad of I(r)·ρ over ρ ∈ [0, k], φ ∈ [0, 2π] in the planet's
		// polar coordinates, divided by π(1 − u1/3 − u2/6), epsrel 1e-12:
		//   x = z + ρ cos φ, y = ρ sin φ, I = 1 − u1(1−μ) − u2(1−μ)², μ = √(1 − x² − y²)
		{"planet b's geometry at this star's limb darkening", 0.05, 0.32, fw3318.LD, 2.912745550175e-03, 1e-12, true},
		{"planet c's geometry at this star's limb darkening", 0.03, 0.45, fw3318.LD, 1.026075223061e-03, 1e-12, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := occultedFlux(tc.z, tc.k, tc.ld)
			if tc.reverse {
				got = 1 - got
			}
			if math.Abs(got-tc.want) > tc.tol {
				t.Errorf("k = %g, z = %g: got %.13f, want %.13f ± %g", tc.k, tc.z, got, tc.want, tc.tol)
			}
		})
	}
	t.Run("the Gauss-Legendre rule integrates even powers up to degree 2n-1 exactly", func(t *testing.T) {
		// ∫_{−1}^{1} x^{2j} dx = 2/(2j+1) (elementary); an n-point rule is exact to degree 2n−1.
		for j := 0; 2*j <= 2*occultNodes-1; j++ {
			s := 0.0
			for i, x := range glX {
				s += glW[i] * math.Pow(x, float64(2*j))
			}
			if want := 2 / float64(2*j+1); math.Abs(s-want) > 1e-13 {
				t.Errorf("∫x^%d: %.15f, want %.15f", 2*j, s, want)
			}
		}
	})
}

// TestExposureIntegration compares the written model with a direct numerical quadrature
// of the instantaneous light over the exposure window (composite Simpson rule on 2000
// panels, whose error here is far below a ppm), at the row of each light curve whose
// exposure holds a first contact of planet b, where the light bends most within one
// exposure. The midpoint rule over subSamples instants must agree within 1 ppm (well
// under the 300 ppm noise), and must differ from the light at mid-exposure (the smearing
// it is there to model).
func TestExposureIntegration(t *testing.T) {
	d := build(t)
	s, c := fw3318, fw3318B
	f := c.fluxRatio()
	b := d.planets[0]
	for _, name := range []string{"main", "fast"} {
		ser := d.series[name]
		exposure := ser.Campaign.cadence()
		t.Run("the "+name+" light curve averages the model over each exposure", func(t *testing.T) {
			row := -1
			for i, tm := range ser.Time {
				contact := b.nearestMid(tm) - b.T14/2
				if math.Abs(tm-contact) < exposure/4 {
					row = i
					break
				}
			}
			if row < 0 {
				t.Fatal("no exposure holds a first contact of planet b")
			}
			light := func(u float64) float64 {
				_, l := instant(&s, f, ser.Spots, ser.Flares, d.planets, u)
				return l
			}
			const panels = 2000
			lo, h := ser.Time[row]-exposure/2, exposure/panels
			sum := light(lo) + light(lo+exposure)
			for j := 1; j < panels; j++ {
				w := 2.0
				if j%2 == 1 {
					w = 4
				}
				sum += w * light(lo+float64(j)*h)
			}
			want := sum * h / 3 / exposure
			if got := ser.Model[row]; math.Abs(got-want) > 1e-6 {
				t.Errorf("row %d at %.5f: model %.9f, quadrature %.9f (%.2f ppm apart)", row, ser.Time[row], got, want, (got-want)*1e6)
			}
			if mid := light(ser.Time[row]); math.Abs(mid-want) < 50e-6 {
				t.Errorf("row %d: the light at mid-exposure %.9f is within 50 ppm of the average %.9f; no smearing to test", row, mid, want)
			}
			t.Logf("row %d at %.5f: model − quadrature = %.3f ppm; smearing moves it %.0f ppm from mid-exposure",
				row, ser.Time[row], (ser.Model[row]-want)*1e6, (light(ser.Time[row])-want)*1e6)
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
		{"records diluted and undiluted depths", d.truth.Planets[0].DepthDilutedPPM == 2500 && d.truth.Planets[0].DepthUndilutedPPM > 2500},
		{"records the radius ratios, impact parameters and a/R*", d.truth.Planets[0].RadiusRatio > 0.04 && d.truth.Planets[1].ImpactParameter == 0.45 && d.truth.Planets[1].AOverRstar > 20},
		{"records the star's radius, mass and density", d.truth.Star.RadiusRsun == 0.45 && d.truth.Star.MassMsun == 0.447 && d.truth.Star.DensityGcm3 > 6.5},
		{"records the diluting companion", d.truth.Companion.Name == "FW-3318 B" && d.truth.Companion.Dilutes && d.truth.Companion.FluxRatioBand > 0.02},
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

// csvRows reads a small comma-separated table: a header of column names, then rows of as
// many fields, each row a map from column name to field. Errors name the line.
func csvRows(data []byte) ([]string, []map[string]string, error) {
	lines := strings.Split(strings.TrimSuffix(string(data), "\n"), "\n")
	if len(lines) == 0 || lines[0] == "" {
		return nil, nil, fmt.Errorf("line 1: no header")
	}
	header := strings.Split(lines[0], ",")
	var rows []map[string]string
	for n, line := range lines[1:] {
		f := strings.Split(line, ",")
		if len(f) != len(header) {
			return nil, nil, fmt.Errorf("line %d: %d fields, want %d", n+2, len(f), len(header))
		}
		row := map[string]string{}
		for j, name := range header {
			row[name] = f[j]
		}
		rows = append(rows, row)
	}
	return header, rows, nil
}

// num reads a numeric field of a table row, failing the test with the column named.
func num(t *testing.T, row map[string]string, col string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(row[col], 64)
	if err != nil {
		t.Fatalf("row %s, column %s: %v", row["id"]+row["name"], col, err)
	}
	return v
}

// Mann et al. (2015, ApJ 804, 64) radius and Mann et al. (2019, ApJ 871, 63) mass from
// absolute Ks, with the published coefficients (from memory; the check values
// R(6.0) = 0.44430, M(6.0) = 0.4404 were verified from them and are tested below).
func mannRadius(mk float64) float64 { return 1.9515 - 0.3520*mk + 0.01680*mk*mk }

func mannMass(mk float64) float64 {
	a := []float64{-0.642, -0.208, -8.43e-4, 7.87e-3, 1.42e-4, -2.13e-4}
	x, s := mk-7.5, 0.0
	for i := len(a) - 1; i >= 0; i-- {
		s = s*x + a[i]
	}
	return math.Pow(10, s)
}

// absFromCatalogue is the host's absolute Ks from a catalogue row: the blended Ks with the
// companion's light taken out (F_c/F_t = 10^(−0.4 Δm), common practice), then the distance
// modulus with the parallax (common practice).
func absFromCatalogue(t *testing.T, row map[string]string, dKs float64) float64 {
	ks := num(t, row, "ks") + 2.5*math.Log10(1+math.Pow(10, -0.4*dKs))
	return ks + 5*math.Log10(num(t, row, "parallax")/1000) + 5
}

// radiusSigma is the radius uncertainty a Mann-relation estimate carries: the relation's
// 2.89 % scatter and the propagated errors of Ks and parallax, in quadrature (common
// practice).
func radiusSigma(t *testing.T, row map[string]string) float64 {
	mk := absFromCatalogue(t, row, fw3318B.DeltaKs)
	r := mannRadius(mk)
	sMK := math.Hypot(num(t, row, "ks_err"), 5/math.Ln10*num(t, row, "parallax_err")/num(t, row, "parallax"))
	return math.Hypot(0.0289*r, (0.3520-2*0.01680*mk)*sMK)
}

func TestStarAndCatalogue(t *testing.T) {
	d := build(t)
	s := fw3318
	byID := func(rows []map[string]string, id string) map[string]string {
		for _, r := range rows {
			if r["id"] == id {
				return r
			}
		}
		t.Fatalf("no row %s", id)
		return nil
	}
	h1, rev1, err := csvRows(d.files["nearby_stars.csv"])
	if err != nil {
		t.Fatalf("nearby_stars.csv: %v", err)
	}
	h2, rev2, err := csvRows(d.files["nearby_stars_rev2.csv"])
	if err != nil {
		t.Fatalf("nearby_stars_rev2.csv: %v", err)
	}
	r1, r2 := byID(rev1, s.ID), byID(rev2, s.ID)
	mk1, mk2 := absFromCatalogue(t, r1, fw3318B.DeltaKs), absFromCatalogue(t, r2, fw3318B.DeltaKs)
	shift := (mannRadius(mk2) - mannRadius(mk1)) / radiusSigma(t, r1)
	tests := []struct {
		name string
		ok   bool
		got  any
	}{
		{"the Mann relations reproduce their check values", math.Abs(mannRadius(6)-0.44430) < 5e-6 && math.Abs(mannMass(6)-0.4404) < 5e-5,
			[2]float64{mannRadius(6), mannMass(6)}},
		{"the star's radius is Mann 2015's at its absolute Ks", math.Abs(s.Radius/mannRadius(s.AbsKs)-1) < 0.002, mannRadius(s.AbsKs)},
		{"the star's mass is Mann 2019's at its absolute Ks", math.Abs(s.Mass/mannMass(s.AbsKs)-1) < 0.002, mannMass(s.AbsKs)},
		{"the star's density is within 2 percent of the 7 g/cm3 the demo searches with", math.Abs(s.density()/7000-1) < 0.02, s.density()},
		{"both revisions have the documented header", h1 != nil && strings.Join(h1, ",") == catalogueHeader && strings.Join(h2, ",") == catalogueHeader, h1},
		{"both revisions list the same eight stars", len(rev1) == 8 && len(rev2) == 8, [2]int{len(rev1), len(rev2)}},
		{"revision 1 with the companion taken out gives the star's radius within 1 percent",
			math.Abs(mannRadius(mk1)/s.Radius-1) < 0.01, mannRadius(mk1)},
		{"revision 2 raises the radius by between half and one sigma", shift > 0.5 && shift <= 1, shift},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if !tc.ok {
				t.Errorf("got %v", tc.got)
			}
		})
	}
	t.Run("revision 2 changes FW-3318's parallax and Ks, FW-2741's parallax, and nothing else", func(t *testing.T) {
		changed := map[string]bool{
			"FW-3318/parallax": true, "FW-3318/parallax_err": true, "FW-3318/ks": true, "FW-3318/ks_err": true,
			"FW-2741/parallax": true, "FW-2741/parallax_err": true,
		}
		for i := range rev1 {
			if rev1[i]["id"] != rev2[i]["id"] {
				t.Fatalf("row %d: %s in revision 1, %s in revision 2", i+1, rev1[i]["id"], rev2[i]["id"])
			}
			for _, col := range h1 {
				key := rev1[i]["id"] + "/" + col
				if differ := rev1[i][col] != rev2[i][col]; differ != changed[key] {
					t.Errorf("%s: %q in revision 1, %q in revision 2", key, rev1[i][col], rev2[i][col])
				}
			}
		}
	})
	t.Logf("M_Ks rev1 %.4f → R %.4f; rev2 %.4f → R %.4f; σ_R %.4f; shift %.2f σ; blended Ks alone would give R %.4f",
		mk1, mannRadius(mk1), mk2, mannRadius(mk2), radiusSigma(t, r1), shift,
		mannRadius(num(t, r1, "ks")+5*math.Log10(num(t, r1, "parallax")/1000)+5))
}

func TestImagingTable(t *testing.T) {
	d := build(t)
	header, rows, err := csvRows(d.files["fw3318_imaging.csv"])
	if err != nil {
		t.Fatalf("fw3318_imaging.csv: %v", err)
	}
	if strings.Join(header, ",") != imagingHeader || len(rows) != 2 {
		t.Fatalf("header %q, %d rows; want %q and 2 rows", header, len(rows), imagingHeader)
	}
	ks, band := rows[0], rows[1]
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"the companion is 3.5 mag fainter in Ks", num(t, ks, "dmag"), 3.5, 1e-9},
		{"the companion is 4.2 mag fainter in the light curve's band", num(t, band, "dmag"), 4.2, 1e-9},
		{"both rows put it 1.2 arcsec away", num(t, ks, "separation") + num(t, band, "separation"), 2.4, 1e-9},
		// F_c/F_t = 10^(−0.4 Δm) in the light curve's band (Pogson's ratio, common practice).
		{"truth.json's flux ratio is the band row's", d.truth.Companion.FluxRatioBand, math.Pow(10, -0.4*num(t, band, "dmag")), 1e-12},
		// δ_true = δ_obs (1 + F_c/F_t) (third light, common practice; from memory).
		{"planet b's undiluted depth is its diluted depth times one plus the flux ratio",
			d.truth.Planets[0].DepthUndilutedPPM, d.truth.Planets[0].DepthDilutedPPM * (1 + d.truth.Companion.FluxRatioBand), 1e-9},
		{"planet c's undiluted depth is its diluted depth times one plus the flux ratio",
			d.truth.Planets[1].DepthUndilutedPPM, d.truth.Planets[1].DepthDilutedPPM * (1 + d.truth.Companion.FluxRatioBand), 1e-9},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if math.Abs(tc.got-tc.want) > tc.tol {
				t.Errorf("got %.9g, want %.9g", tc.got, tc.want)
			}
		})
	}
	t.Run("the rows name the companion and the bands", func(t *testing.T) {
		if ks["name"] != fw3318B.Name || band["name"] != fw3318B.Name || ks["band"] != "Ks" || band["band"] != lightCurveBand || d.truth.Band != lightCurveBand {
			t.Errorf("rows %v and %v, truth band %q", ks, band, d.truth.Band)
		}
	})
}

func FuzzCSVRows(f *testing.F) {
	f.Add([]byte(catalogueHeader + "\nFW-1,1,2,3,4,5,6,7,8,9,10\n"))
	f.Add([]byte(imagingHeader + "\nB,Ks,3.5,0.1\n"))
	f.Add([]byte(""))
	f.Fuzz(func(t *testing.T, data []byte) {
		header, rows, err := csvRows(data)
		if err != nil {
			return
		}
		for i, r := range rows {
			if len(r) > len(header) {
				t.Fatalf("row %d has %d fields, header %d", i+1, len(r), len(header))
			}
		}
	})
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

// sameUpToRounding compares two generated text files token by token (split at anything that
// is not part of a number or a word): words must be equal, numbers within a millionth
// relative or one unit of their last printed digit. It returns "" when they agree, else
// where they first differ.
func sameUpToRounding(a, b []byte) string {
	split := func(r rune) bool {
		return !(r >= '0' && r <= '9' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r == '.' || r == '-' || r == '+' || r == '_')
	}
	ta, tb := strings.FieldsFunc(string(a), split), strings.FieldsFunc(string(b), split)
	if len(ta) != len(tb) {
		return fmt.Sprintf("%d tokens against %d", len(ta), len(tb))
	}
	for i := range ta {
		if ta[i] == tb[i] {
			continue
		}
		x, errx := strconv.ParseFloat(ta[i], 64)
		y, erry := strconv.ParseFloat(tb[i], 64)
		if errx != nil || erry != nil {
			return fmt.Sprintf("token %d: %q against %q", i+1, ta[i], tb[i])
		}
		if d := math.Abs(x - y); d > 1e-6*math.Max(math.Abs(x), math.Abs(y)) && d > lastDigit(ta[i])*1.000001 {
			return fmt.Sprintf("token %d: %s against %s", i+1, ta[i], tb[i])
		}
	}
	return ""
}

// lastDigit is the value of one unit in the last printed digit of a decimal number.
func lastDigit(s string) float64 {
	mant, exp := s, 0
	if k := strings.IndexAny(s, "eE"); k >= 0 {
		mant = s[:k]
		exp, _ = strconv.Atoi(s[k+1:])
	}
	decimals := 0
	if k := strings.IndexByte(mant, '.'); k >= 0 {
		decimals = len(mant) - k - 1
	}
	return math.Pow(10, float64(exp-decimals))
}

func TestSameUpToRounding(t *testing.T) {
	for _, c := range []struct {
		a, b string
		same bool
	}{
		{"t,1.0001234,x\n", "t,1.0001235,x\n", true},  // one unit in the last digit
		{"t,1.0001234,x\n", "t,1.0001254,x\n", false}, // twenty
		{"t,1.5e-3\n", "t,1.6e-3\n", true},            // one unit of 0.1e-3
		{"t,1.5e-3\n", "t,1.8e-3\n", false},
		{"a,b\n", "a,c\n", false}, // words must match
		{"1,2,3\n", "1,2\n", false},
	} {
		if got := sameUpToRounding([]byte(c.a), []byte(c.b)) == ""; got != c.same {
			t.Errorf("%q against %q: same %v, want %v", c.a, c.b, got, c.same)
		}
	}
}
