// Command generate writes the invented demo data of the fernwell example: two light
// curves of the made-up cool dwarf FW-3318, which has two transiting planets, a spotted
// surface, flares, gaps, flagged rows and missing rows, plus truth.json with the
// injected planet parameters.
//
// It analyses nothing: it makes the ground truth that the demo workflow and the tests are
// checked against. Every random choice comes from one fixed seed through the package's own
// splitmix64 generator (rng.go), so every run writes the same bytes.
//
// Run it from the repository root:
//
//	go run ./examples/fernwell/generate
//
// The scenario is set out below (fw3318, planetsOf, campaigns); generate builds every file
// in memory and main writes them. The pieces are in star.go (star, planets, transit
// shape), variability.go (spots, flares) and lightcurve.go (sampling, noise, defects,
// file layout).
package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
)

// seed is the one number all the randomness grows from. Change it and every file changes.
const seed = 3318

// fw3318 is the invented host star.
var fw3318 = star{
	ID:                 "FW-3318",
	Radius:             0.45,
	Mass:               0.47,
	U1:                 0.32,
	U2:                 0.28,
	RotationDays:       2.6,
	AxisInclinationDeg: 70,
	Shear:              0.02,
}

// planetsOf returns the two invented planets around s, with their geometry derived.
// Planet c is the shallow one: its depth is a tenth of the star's spot modulation.
func planetsOf(s *star) []planet {
	ps := []planet{
		{Name: "b", Period: 3.718462, Epoch: 413.73058, Depth: 2500e-6, Impact: 0.32},
		{Name: "c", Period: 5.371093, Epoch: 415.26117, Depth: 1000e-6, Impact: 0.45},
	}
	for i := range ps {
		ps[i].derive(s)
	}
	return ps
}

// timeOffset is the Julian date that the files' times count from: time 0 is
// BJD_TDB 2460000.0.
const timeOffset = 2460000.0

// campaigns returns the two light curves: the main one the demo analyses, and a shorter,
// faster one written differently, for pointing the workflow at another file.
func campaigns() []*campaign {
	return []*campaign{
		{
			Name: "main",
			File: "fw3318.csv",
			// Two stretches of about 40 days with a 3.4-day gap between them.
			Stretches:   []interval{{412.2817, 450.9117}, {454.2917, 492.6017}},
			CadenceMin:  29.4,
			ShortGaps:   3,
			ShortGapMin: 0.25,
			ShortGapMax: 0.9,
			NoisePPM:    300,
			Flares:      12,
			Flagged:     8,
			Missing:     2,
			FluxUnit:    1,
			Format: format{
				Comments: []string{
					"FW-3318: invented demo light curve from an invented space photometer; every value is made up (see examples/fernwell/README.md).",
					"BJD_TDB is the Barycentric Julian Date in the TDB time scale minus 2460000.0, in days, at mid-exposure.",
					"Cadence 29.4 min; each point integrates over the whole 29.4 min. Flux is relative (median 1); Flux_Err is its one-sigma error.",
					"Quality 0 is good; nonzero marks a row the instrument distrusts (1 pointing drift, 2 wheel unload, 8 scattered light).",
				},
				Columns: [4]string{"BJD_TDB", "Flux", "Flux_Err", "Quality"},
				Sep:     ",",
				TimeDec: 7,
				FluxDec: 7,
			},
		},
		{
			Name:        "fast",
			File:        "fw3318_fast.csv",
			Stretches:   []interval{{531.1406, 561.3906}},
			CadenceMin:  10,
			ShortGaps:   1,
			ShortGapMin: 0.3,
			ShortGapMax: 0.6,
			// The same star at the same brightness, with a third of the exposure:
			// 300 ppm × √(29.4/10).
			NoisePPM: 514,
			Flares:   5,
			Flagged:  4,
			Missing:  1,
			FluxUnit: 18350, // electrons per second
			Format: format{
				Comments: []string{
					"FW-3318 (invented star): a later and faster observation; all values are made up.",
					"time: BJD_TDB - 2460000.0 (days at mid-exposure); cadence and exposure 10 min",
					"FLUX and flux_error: electrons per second; QUALITY: 0 good and nonzero flagged",
				},
				Columns: [4]string{"time", "FLUX", "flux_error", "QUALITY"},
				Sep:     "\t",
				TimeDec: 7,
				FluxDec: 3,
			},
		},
	}
}

// file is one generated file: its name in the data folder and its bytes.
type file struct {
	Name  string
	Bytes []byte
}

// generate builds every file of the demo in memory, in a fixed order. It also returns the
// simulated series so that the tests can compare the files with what went into them.
func generate() ([]file, []*series, error) {
	s := fw3318
	planets := planetsOf(&s)
	var files []file
	var all []*series
	for _, c := range campaigns() {
		ser := simulate(seed, &s, planets, c)
		all = append(all, ser)
		files = append(files, file{c.File, ser.encode()})
	}
	t, err := encodeTruth(&s, planets, all)
	if err != nil {
		return nil, nil, err
	}
	files = append(files, file{"truth.json", t})
	return files, all, nil
}

func main() {
	out := flag.String("out", filepath.Join("examples", "fernwell", "data"), "folder to write the files into")
	table := flag.Bool("table", false, "print the README's truth table instead of writing files")
	flag.Parse()
	if *table {
		if err := printTable(); err != nil {
			fmt.Fprintln(os.Stderr, "generate:", err)
			os.Exit(1)
		}
		return
	}
	if err := run(*out); err != nil {
		fmt.Fprintln(os.Stderr, "generate:", err)
		os.Exit(1)
	}
}

// printTable prints the truth table that README.md shows.
func printTable() error {
	files, _, err := generate()
	if err != nil {
		return err
	}
	var t truthFile
	if err := json.Unmarshal(files[len(files)-1].Bytes, &t); err != nil {
		return err
	}
	fmt.Print(markdownTable(t))
	return nil
}

func run(out string) error {
	// Refuse to scatter files if started from the wrong folder.
	if st, err := os.Stat(filepath.Dir(out)); err != nil || !st.IsDir() {
		return fmt.Errorf("no folder %s here; run from the repository root or pass -out", filepath.Dir(out))
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return err
	}
	files, _, err := generate()
	if err != nil {
		return err
	}
	for _, f := range files {
		path := filepath.Join(out, f.Name)
		if old, err := os.ReadFile(path); err == nil && bytes.Equal(old, f.Bytes) {
			fmt.Printf("%s unchanged (%d bytes)\n", path, len(f.Bytes))
			continue
		}
		if err := os.WriteFile(path, f.Bytes, 0o644); err != nil {
			return err
		}
		fmt.Printf("%s written (%d bytes)\n", path, len(f.Bytes))
	}
	return nil
}

// ---- truth.json ----

type truthFile struct {
	Note        string        `json:"note"`
	Seed        uint64        `json:"seed"`
	TimeZeroJD  float64       `json:"time_zero_bjd_tdb"`
	Star        truthStar     `json:"star"`
	Planets     []truthPlanet `json:"planets"`
	LightCurves []truthCurve  `json:"light_curves"`
}

type truthStar struct {
	ID               string  `json:"id"`
	RadiusRsun       float64 `json:"radius_rsun"`
	MassMsun         float64 `json:"mass_msun"`
	LimbDarkeningU1  float64 `json:"limb_darkening_u1"`
	LimbDarkeningU2  float64 `json:"limb_darkening_u2"`
	RotationPeriodD  float64 `json:"rotation_period_d"`
	AxisInclinationD float64 `json:"rotation_axis_inclination_deg"`
}

type truthPlanet struct {
	Name            string  `json:"name"`
	PeriodD         float64 `json:"period_d"`
	EpochD          float64 `json:"epoch_d"`
	DepthPPM        float64 `json:"depth_ppm"`
	DurationH       float64 `json:"duration_h"`
	FlatDurationH   float64 `json:"flat_duration_h"`
	RadiusRatio     float64 `json:"radius_ratio"`
	ImpactParameter float64 `json:"impact_parameter"`
	AOverRstar      float64 `json:"a_over_rstar"`
	InclinationDeg  float64 `json:"inclination_deg"`
	Shape           string  `json:"shape"`
}

type truthCurve struct {
	File       string       `json:"file"`
	CadenceMin float64      `json:"cadence_min"`
	NoisePPM   float64      `json:"noise_ppm"`
	Rows       int          `json:"rows"`
	Flagged    int          `json:"flagged_rows"`
	Missing    int          `json:"nan_rows"`
	Flares     []truthFlare `json:"flares"`
}

type truthFlare struct {
	PeakD    float64 `json:"peak_d"`
	AmpPPM   float64 `json:"amplitude_ppm"`
	DecayMin float64 `json:"decay_min"`
}

// encodeTruth writes what was injected, for tests and for the README's table. Times are
// BJD_TDB − 2460000 in days, like the light curves.
func encodeTruth(s *star, planets []planet, all []*series) ([]byte, error) {
	t := truthFile{
		Note:       "Invented demo data for dipline's fernwell example: the star, planets and photometer are made up.",
		Seed:       seed,
		TimeZeroJD: timeOffset,
		Star: truthStar{
			ID: s.ID, RadiusRsun: s.Radius, MassMsun: s.Mass, LimbDarkeningU1: s.U1, LimbDarkeningU2: s.U2,
			RotationPeriodD: s.RotationDays, AxisInclinationD: s.AxisInclinationDeg,
		},
	}
	for _, p := range planets {
		t.Planets = append(t.Planets, truthPlanet{
			Name: p.Name, PeriodD: p.Period, EpochD: p.Epoch, DepthPPM: p.Depth * 1e6,
			DurationH: p.T14 * 24, FlatDurationH: p.T23 * 24, RadiusRatio: p.K,
			ImpactParameter: p.Impact, AOverRstar: p.ARs, InclinationDeg: p.Incl * 180 / math.Pi,
			Shape: p.Shape,
		})
	}
	for _, ser := range all {
		c := ser.Campaign
		tc := truthCurve{File: c.File, CadenceMin: c.CadenceMin, NoisePPM: c.NoisePPM,
			Rows: len(ser.Time), Flagged: c.Flagged, Missing: c.Missing}
		for _, f := range ser.Flares {
			tc.Flares = append(tc.Flares, truthFlare{PeakD: f.Peak, AmpPPM: f.Amp * 1e6, DecayMin: f.Decay * 1440})
		}
		t.LightCurves = append(t.LightCurves, tc)
	}
	b, err := json.MarshalIndent(t, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// markdownTable renders the planets of t as the README's truth table.
func markdownTable(t truthFile) string {
	var b strings.Builder
	b.WriteString("| planet | period (d) | epoch (BJD_TDB − 2460000) | depth (ppm) | duration T14 (h) | flat part T23 (h) | Rp/R* | b | a/R* |\n")
	b.WriteString("|---|---|---|---|---|---|---|---|---|\n")
	for _, p := range t.Planets {
		fmt.Fprintf(&b, "| %s | %.6f | %.5f | %.0f | %.3f | %.3f | %.4f | %.2f | %.2f |\n",
			p.Name, p.PeriodD, p.EpochD, p.DepthPPM, p.DurationH, p.FlatDurationH, p.RadiusRatio, p.ImpactParameter, p.AOverRstar)
	}
	return b.String()
}
