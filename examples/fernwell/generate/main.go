// Command generate writes the invented demo data of the fernwell example: two light
// curves of the made-up cool dwarf FW-3318, which has two transiting planets, a fainter
// companion 1.2 arcsec away whose light dilutes the transits, a spotted surface, flares,
// gaps, flagged rows and missing rows; an invented catalogue of nearby cool dwarfs in two
// revisions; the companion table of FW-3318's (invented) imaging; and truth.json with
// everything injected.
//
// It analyses nothing: it makes the ground truth that the demo workflow and the tests are
// checked against. Every random choice comes from one fixed seed through the package's own
// splitmix64 generator (rng.go), so every run writes the same bytes.
//
// Run it from the repository root:
//
//	go run ./examples/fernwell/generate          # write the files into examples/fernwell/data
//	go run ./examples/fernwell/generate -table   # print the README's truth table
//
// The scenario is set out below (fw3318, fw3318B, planetsOf, campaigns); generate builds
// every file in memory and main writes them. The pieces are in star.go (star, companion,
// planets), occult.go (the limb-darkened transit model), variability.go (spots, flares),
// lightcurve.go (sampling, exposure averaging, dilution, noise, defects, file layout) and
// catalogue.go (the catalogue and imaging tables).
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

// fw3318 is the invented host star: an M dwarf of absolute Ks 5.96, whose Mann et al.
// radius and mass give a mean density of 6.9 g/cm³.
var fw3318 = star{
	ID:                 "FW-3318",
	RA:                 157.38412,
	Dec:                23.91775,
	AbsKs:              5.96,
	Radius:             0.450,
	Mass:               0.447,
	Teff:               3480,
	JMinusKs:           0.842,
	LD:                 limbDarkening{U1: 0.35, U2: 0.25},
	RotationDays:       2.6,
	AxisInclinationDeg: 70,
	Shear:              0.02,
}

// fw3318B is the invented companion that imaging finds 1.2 arcsec from FW-3318: a cooler
// dwarf, 3.5 mag fainter in Ks and, being redder, 4.2 mag fainter in the light curve's
// band, where it adds 2.1 % of the host's light and so dilutes the transits by that much.
var fw3318B = companion{
	Name:       "FW-3318 B",
	Separation: 1.2,
	DeltaKs:    3.5, DeltaKsErr: 0.1,
	DeltaJ:    3.8,
	DeltaBand: 4.2, DeltaBandErr: 0.15,
}

// planetsOf returns the two invented planets around s, with their geometry derived.
// Planet c is the shallow one: its depth is a tenth of the star's spot modulation.
// Depths are as the light curves show them (diluted by c's light).
func planetsOf(s *star, c *companion) []planet {
	ps := []planet{
		{Name: "b", Period: 3.718462, Epoch: 413.73058, Depth: 2500e-6, Impact: 0.32},
		{Name: "c", Period: 5.371093, Epoch: 415.26117, Depth: 1000e-6, Impact: 0.45},
	}
	for i := range ps {
		ps[i].derive(s, c.fluxRatio())
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

// generate builds every file of the demo in memory, in a fixed order, truth.json last. It also returns the
// simulated series so that the tests can compare the files with what went into them.
func generate() ([]file, []*series, error) {
	s, comp := fw3318, fw3318B
	planets := planetsOf(&s, &comp)
	var files []file
	var all []*series
	for _, c := range campaigns() {
		ser := simulate(seed, &s, &comp, planets, c)
		all = append(all, ser)
		files = append(files, file{c.File, ser.encode()})
	}
	files = append(files,
		file{"nearby_stars.csv", encodeCatalogue(catalogue(&s, &comp, 1))},
		file{"nearby_stars_rev2.csv", encodeCatalogue(catalogue(&s, &comp, 2))},
		file{"fw3318_imaging.csv", encodeImaging(&comp)},
	)
	t, err := encodeTruth(&s, &comp, planets, all)
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
	Note        string         `json:"note"`
	Seed        uint64         `json:"seed"`
	TimeZeroJD  float64        `json:"time_zero_bjd_tdb"`
	Band        string         `json:"light_curve_band"`
	Star        truthStar      `json:"star"`
	Companion   truthCompanion `json:"companion"`
	Planets     []truthPlanet  `json:"planets"`
	LightCurves []truthCurve   `json:"light_curves"`
}

type truthStar struct {
	ID               string  `json:"id"`
	AbsKs            float64 `json:"abs_ks_mag"`
	KsHost           float64 `json:"ks_host_mag"`
	KsBlend          float64 `json:"ks_blend_mag"`
	ParallaxRev1     float64 `json:"parallax_rev1_mas"`
	ParallaxRev2     float64 `json:"parallax_rev2_mas"`
	KsBlendRev2      float64 `json:"ks_blend_rev2_mag"`
	RadiusRsun       float64 `json:"radius_rsun"`
	MassMsun         float64 `json:"mass_msun"`
	DensityGcm3      float64 `json:"density_g_cm3"`
	TeffK            float64 `json:"teff_k"`
	LimbDarkeningU1  float64 `json:"limb_darkening_u1"`
	LimbDarkeningU2  float64 `json:"limb_darkening_u2"`
	RotationPeriodD  float64 `json:"rotation_period_d"`
	AxisInclinationD float64 `json:"rotation_axis_inclination_deg"`
}

type truthCompanion struct {
	Name          string  `json:"name"`
	SeparationAS  float64 `json:"separation_arcsec"`
	DeltaKs       float64 `json:"dmag_ks"`
	DeltaKsErr    float64 `json:"dmag_ks_err"`
	DeltaBand     float64 `json:"dmag_band"`
	DeltaBandErr  float64 `json:"dmag_band_err"`
	FluxRatioBand float64 `json:"flux_ratio_band"`
	Dilutes       bool    `json:"dilutes_light_curves"`
}

type truthPlanet struct {
	Name     string  `json:"name"`
	PeriodD  float64 `json:"period_d"`
	EpochD   float64 `json:"epoch_d"`
	DepthPPM float64 `json:"depth_ppm"`
	// DepthDilutedPPM repeats DepthPPM under an explicit name: the mid-transit deficit in
	// the light curves, companion's light included, before exposure smearing.
	DepthDilutedPPM   float64 `json:"depth_diluted_ppm"`
	DepthUndilutedPPM float64 `json:"depth_undiluted_ppm"`
	DurationH         float64 `json:"duration_h"`
	FlatDurationH     float64 `json:"flat_duration_h"`
	RadiusRatio       float64 `json:"radius_ratio"`
	RadiusEarth       float64 `json:"radius_rearth"`
	ImpactParameter   float64 `json:"impact_parameter"`
	AOverRstar        float64 `json:"a_over_rstar"`
	InclinationDeg    float64 `json:"inclination_deg"`
	LimbDarkeningU1   float64 `json:"limb_darkening_u1"`
	LimbDarkeningU2   float64 `json:"limb_darkening_u2"`
	Shape             string  `json:"shape"`
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
func encodeTruth(s *star, c *companion, planets []planet, all []*series) ([]byte, error) {
	rev1 := fw3318Row(s, c)
	t := truthFile{
		Note: "Invented demo data for dipline's fernwell example: the star, its companion, the planets and the photometer are made up. " +
			"Depths are mid-transit deficits before exposure smearing; depth_ppm is as the light curves show it, diluted by the companion.",
		Seed:       seed,
		TimeZeroJD: timeOffset,
		Band:       lightCurveBand,
		Star: truthStar{
			ID: s.ID, AbsKs: s.AbsKs, KsHost: apparentFromAbsolute(s.AbsKs, fw3318Parallax), KsBlend: rev1.Ks,
			ParallaxRev1: rev1.Parallax, ParallaxRev2: fw3318Rev2.Parallax, KsBlendRev2: fw3318Rev2.Ks,
			RadiusRsun: s.Radius, MassMsun: s.Mass, DensityGcm3: s.density() / 1000, TeffK: s.Teff,
			LimbDarkeningU1: s.LD.U1, LimbDarkeningU2: s.LD.U2,
			RotationPeriodD: s.RotationDays, AxisInclinationD: s.AxisInclinationDeg,
		},
		Companion: truthCompanion{
			Name: c.Name, SeparationAS: c.Separation, DeltaKs: c.DeltaKs, DeltaKsErr: c.DeltaKsErr,
			DeltaBand: c.DeltaBand, DeltaBandErr: c.DeltaBandErr, FluxRatioBand: c.fluxRatio(), Dilutes: true,
		},
	}
	for _, p := range planets {
		t.Planets = append(t.Planets, truthPlanet{
			Name: p.Name, PeriodD: p.Period, EpochD: p.Epoch, DepthPPM: p.Depth * 1e6,
			DepthDilutedPPM: p.Depth * 1e6, DepthUndilutedPPM: p.DepthUndiluted * 1e6,
			DurationH: p.T14 * 24, FlatDurationH: p.T23 * 24, RadiusRatio: p.K,
			RadiusEarth:     p.K * s.Radius * rSun / rEarth,
			ImpactParameter: p.Impact, AOverRstar: p.ARs, InclinationDeg: p.Incl * 180 / math.Pi,
			LimbDarkeningU1: s.LD.U1, LimbDarkeningU2: s.LD.U2,
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
	b.WriteString("| planet | period (d) | epoch (BJD_TDB − 2460000) | depth (ppm) | undiluted depth (ppm) | duration T14 (h) | flat part T23 (h) | Rp/R* | Rp (R⊕) | b | a/R* |\n")
	b.WriteString("|---|---|---|---|---|---|---|---|---|---|---|\n")
	for _, p := range t.Planets {
		fmt.Fprintf(&b, "| %s | %.6f | %.5f | %.0f | %.0f | %.3f | %.3f | %.4f | %.2f | %.2f | %.2f |\n",
			p.Name, p.PeriodD, p.EpochD, p.DepthPPM, p.DepthUndilutedPPM, p.DurationH, p.FlatDurationH, p.RadiusRatio,
			p.RadiusEarth, p.ImpactParameter, p.AOverRstar)
	}
	return b.String()
}
