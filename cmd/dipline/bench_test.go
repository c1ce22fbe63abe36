package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"dipline/steps/search/bls"
)

// The starter's search on a long light curve: four years at 29.4 minutes (71,560 points;
// white noise of 1000 ppm and an invented 9.7 d, 800 ppm box), searched as the starter's
// workflow does — detrend, search, detrend again with the found transits masked, search
// again — around a star of 3.2 g/cm³ over its default period range (0.4 d, the star's
// Roche-type limit, to 730 d, half the span). Beside it, in the same run, a plain
// fold-and-scan box search of one periodogram over the same grid on as many threads: the
// starter's four steps should take less wall time than that one periodogram.
//
//	go test ./cmd/dipline -run '^$' -bench StarterSearch4yr -benchtime 1x -timeout 30m

const starterBenchWorkflow = `analysis "bench" {
  seed = 1
}

photometry "lc" {
  files     = ["lc.csv"]
  time_zero = 2460000
}

detrend "first" {
  light_curve = photometry.lc
}

search "first" {
  light_curve  = detrend.first
  star_density = "3.2 g/cm3"
}

detrend "masked" {
  light_curve = photometry.lc
  mask        = search.first
}

search "dips" {
  light_curve  = detrend.masked
  star_density = "3.2 g/cm3"
}
`

// benchLightCurve writes the four-year light curve: seeded white noise, the box.
func benchLightCurve() string {
	var b strings.Builder
	b.WriteString("# invented benchmark data\ntime,flux,flux_err\n")
	next := uniforms(7)
	dt := 29.4 / 1440
	for i := 0; float64(i)*dt <= 4*365.25; i++ {
		t := float64(i) * dt
		f := 1 + 1e-3*math.Sqrt(-2*math.Log(next()))*math.Cos(2*math.Pi*next())
		if ph := math.Mod(t-3.1, 9.7); ph >= 0 && ph < 0.1 {
			f -= 8e-4
		}
		fmt.Fprintf(&b, "%.6f,%.7f,0.001\n", t, f)
	}
	return b.String()
}

// starterFolder writes the starter benchmark's workflow and light curve lc into the i-th
// folder under dir.
func starterFolder(dir string, i int, lc string) *folder {
	run := filepath.Join(dir, fmt.Sprint(i))
	os.MkdirAll(run, 0o755)
	os.WriteFile(filepath.Join(run, "analysis.hcl"), []byte(starterBenchWorkflow), 0o644)
	os.WriteFile(filepath.Join(run, "lc.csv"), []byte(lc), 0o644)
	return &folder{t: &testing.T{}, dir: run}
}

func BenchmarkStarterSearch4yr(b *testing.B) {
	dir := b.TempDir()
	lc := benchLightCurve()
	var starter, plain time.Duration
	for i := 0; i < b.N; i++ {
		f := starterFolder(dir, i, lc)
		t0 := time.Now()
		code, out, errs := f.dipline("run", "--workers", "2", "--quiet")
		starter += time.Since(t0)
		if code != 0 || !strings.Contains(out, "signal1.period") {
			b.Fatalf("the starter's search: exit %d\n%s\n%s", code, out, errs)
		}
		t0 = time.Now()
		if p := plainFoldAndScan(b, f.dir, 2); math.Abs(p-9.7) > 0.01 {
			b.Fatalf("the plain search's peak is at %v d", p)
		}
		plain += time.Since(t0)
	}
	b.ReportMetric(starter.Seconds()/float64(b.N), "starter-s")
	b.ReportMetric(plain.Seconds()/float64(b.N), "plain-periodogram-s")
	b.ReportMetric(starter.Seconds()/plain.Seconds(), "ratio")
}

// plainFoldAndScan is a classic box search of one periodogram, written plainly: for each
// frequency of the search's grid (0.4–730 d, 3.2 g/cm³, oversampling 3), fold the points
// into phase bins two to the shortest duration, and scan boxes from 0.3 to 1.75 central
// durations for the largest s²/(r(1−r)) (Kovács, Zucker & Mazeh 2002), frequencies shared
// among threads. It returns the period of the highest power.
func plainFoldAndScan(b *testing.B, dir string, threads int) float64 {
	t, flux := readBenchCurve(b, filepath.Join(dir, "lc.csv"))
	n := float64(len(t))
	var mean float64
	for _, f := range flux {
		mean += f / n
	}
	g, err := bls.NewGrid(3.2, t[len(t)-1]-t[0], 0.4, 730, 3)
	if err != nil {
		b.Fatal(err)
	}
	power := make([]float64, g.N)
	var wg sync.WaitGroup
	for w := 0; w < threads; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := w; j < g.N; j += threads {
				power[j] = plainBest(t, flux, mean, g.Freq(j), bls.CentralDuration(1/g.Freq(j), 3.2))
			}
		}()
	}
	wg.Wait()
	best := 0
	for j := range power {
		if power[j] > power[best] {
			best = j
		}
	}
	return g.Period(best)
}

// plainBest folds and scans at one frequency (equal weights).
func plainBest(t, flux []float64, mean, f, dur float64) float64 {
	nb := int(math.Ceil(2 / (0.3 * dur * f)))
	w, s := make([]float64, nb), make([]float64, nb)
	for i, ti := range t {
		ph := ti*f - math.Floor(ti*f)
		k := min(int(ph*float64(nb)), nb-1)
		w[k]++
		s[k] += flux[i] - mean
	}
	total := float64(len(t))
	lo, hi := 2, max(2, int(math.Round(1.75*dur*f*float64(nb))))
	hi = min(hi, nb/2)
	best := 0.0
	for k := 0; k < nb; k++ {
		var r, sum float64
		for n := 0; n < hi; n++ {
			r += w[(k+n)%nb]
			sum += s[(k+n)%nb]
			if n+1 >= lo && r > 0 && r < total && sum < 0 {
				x := r / total
				best = math.Max(best, sum*sum/total/total/(x*(1-x)))
			}
		}
	}
	return best
}

func readBenchCurve(b *testing.B, path string) (t, flux []float64) {
	data, err := os.ReadFile(path)
	if err != nil {
		b.Fatal(err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		var a, c, e float64
		if _, err := fmt.Sscanf(line, "%g,%g,%g", &a, &c, &e); err == nil {
			t, flux = append(t, a), append(flux, c)
		}
	}
	return t, flux
}

// BenchmarkSurvey8Targets runs the eight-target survey of the survey tests, each target's
// light curve lengthened to 120 days so that the targets' own work outweighs starting
// them, first on one worker and then on two, each in a fresh folder, and reports both wall
// times and their ratio (the target: at least 1.8).
//
//	go test ./cmd/dipline -run '^$' -bench Survey8Targets -benchtime 1x
func BenchmarkSurvey8Targets(b *testing.B) {
	walls := map[int]time.Duration{}
	for i := 0; i < b.N; i++ {
		for _, workers := range []int{1, 2} {
			t := &testing.T{}
			f := &folder{t: t, dir: filepath.Join(b.TempDir(), fmt.Sprint(workers))}
			os.MkdirAll(f.dir, 0o755)
			f.write("analysis.hcl", workflowText)
			f.write("lc.csv", lightCurveCSV()) // the template's own light curve
			var table strings.Builder
			table.WriteString("id,photometry.raw.files\n")
			for k, p := range surveyPeriods {
				name := fmt.Sprintf("t%d.csv", k+1)
				f.write(name, boxCurve(120, p, uint64(100+k)))
				fmt.Fprintf(&table, "T-%02d,%s\n", k+1, name)
			}
			f.write("targets.csv", table.String())
			t0 := time.Now()
			code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", fmt.Sprint(workers))
			walls[workers] += time.Since(t0)
			if code != 0 {
				b.Fatalf("survey on %d workers: exit %d\n%s\n%s", workers, code, out, errs)
			}
		}
	}
	one, two := walls[1].Seconds()/float64(b.N), walls[2].Seconds()/float64(b.N)
	b.ReportMetric(one, "1-worker-s")
	b.ReportMetric(two, "2-workers-s")
	b.ReportMetric(one/two, "speed-up")
}

// BenchmarkInjections1000x4yr runs a thousand injections through a completeness step on the
// starter benchmark's four-year light curve, as a user would: the starter's workflow plus a
// completeness step taking the first detrend's and the second search's settings, 2 × 2 cells
// over 0.5–100 d and the default radius range, 250 planets per cell, windowed searches, two
// workers. It reports the completeness step's own wall time in minutes (the target: at most
// 15) apart from the starter's steps before it, and the planets recovered.
//
//	go test ./cmd/dipline -run '^$' -bench Injections1000x4yr -benchtime 1x -timeout 60m
func BenchmarkInjections1000x4yr(b *testing.B) {
	const thousand = `
completeness "thousand" {
  light_curve  = photometry.lc
  detrend      = detrend.first
  search       = search.dips
  period_range = ["0.5 d", "100 d"]
  period_cells = 2
  radius_cells = 2
  per_cell     = 250
}
`
	dir := b.TempDir()
	lc := benchLightCurve()
	var starter, injections time.Duration
	for i := 0; i < b.N; i++ {
		f := starterFolder(dir, i, lc)
		t0 := time.Now()
		if code, out, errs := f.dipline("run", "--workers", "2", "--quiet"); code != 0 {
			b.Fatalf("the starter's steps: exit %d\n%s\n%s", code, out, errs)
		}
		starter += time.Since(t0)
		os.WriteFile(filepath.Join(f.dir, "analysis.hcl"), []byte(starterBenchWorkflow+thousand), 0o644)
		t0 = time.Now()
		code, out, errs := f.dipline("run", "--workers", "2", "--quiet")
		injections += time.Since(t0)
		if code != 0 || !strings.Contains(out, "injections") {
			b.Fatalf("the completeness step: exit %d\n%s\n%s", code, out, errs)
		}
		b.Log(out[strings.Index(out, "completeness.thousand"):])
	}
	b.ReportMetric(starter.Seconds()/float64(b.N), "starter-s")
	b.ReportMetric(injections.Minutes()/float64(b.N), "min/1000-injections")
}
