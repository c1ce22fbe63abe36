// Package star is the star step kind: seeded joint Monte Carlo draws of a host star's
// radius, mass, effective temperature, luminosity, surface gravity, mean density and
// distance, by one of four methods — the cool-dwarf relations in absolute Ks magnitude
// (Mann et al. 2015 radius, Mann et al. 2019 mass), the Stefan–Boltzmann law from a
// bolometric flux or luminosity and Teff, a transfer from a benchmark star with measured
// radius and mass along the slopes of those relations, or values given directly. Inputs come
// from the block as measurements ("35.21 ± 0.04 mas") or from a catalogue row; companions
// measured in Ks are removed from a blended Ks.
//
// Main entry points: New (the engine registers it) and Draw (the library call: plain values
// in, draws out, knowing nothing of workflow files; Kind adapts a block and its row to it).
// The relations themselves are in steps/internal/astro. The artifact gives its draws
// through stellar.StarSource. It does not fit spectra or isochrones, correct for
// extinction, or put a prior on distance.
package star

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/stellar"
)

// Kind is the star step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the star kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var _ steps.Typed[Config] = Kind{}

// version is bumped whenever the numbers or the encoding change.
const version = 1

// defaultDraws gives Monte Carlo errors of the median near 1 % of σ (√(π/2)/√N ≈ 0.009 for
// N = 20000), well below the quoted precision of any input.
const defaultDraws = 20000

// Bounds of the draws attribute: fewer than 1000 draws make the 16–84 % range noisy at the
// 3 % level; more than a million only grow the store.
const minDraws, maxDrawsAttr = 1000, 1000000

// defaultTransferPerMag is the benchmark method's extra fractional uncertainty per magnitude
// of |ΔM_Ks|: 5 %/mag, i.e. 1.5 % for a 0.3 mag difference, about half the relations'
// scatter between single stars (our judgement: the transfer assumes the benchmark and the
// target sit alike about the relation, which holds better for closer analogs).
const defaultTransferPerMag = 0.05

// Name is the block type.
func (Kind) Name() string { return "star" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is true: the draws come from the step's seed.
func (Kind) Random() bool { return true }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Draws the host star's radius, mass, Teff, luminosity, log g, density and distance jointly from its measurements, by the M-dwarf absolute-Ks relations of Mann et al. (2015, 2019), the Stefan–Boltzmann law, a transfer from a benchmark star of measured radius and mass, or values given directly."
}

// Config is what a star block may say. Each measurement is in its dimension's base unit
// (parallax in arcsec); Check copies the written ones into the units Input takes.
type Config struct {
	Method     string        `step:"method,required" choices:"cool-dwarf|stefan-boltzmann|benchmark|given" doc:"how R and M are obtained: \"cool-dwarf\" (M dwarfs, K7–M7: Mann et al. 2015 radius and Mann et al. 2019 mass from the absolute Ks magnitude), \"stefan-boltzmann\" (R from a bolometric flux and distance, or a luminosity, and Teff; M given or from Torres et al. 2010), \"benchmark\" (a star of measured R and M moved along the Mann relations by the measured ΔM_Ks), or \"given\" (R and M as measured)"`
	Row        *steps.RowRef `step:"row" doc:"the star's catalogue row, e.g. catalogue.nearby[\"FW-3318\"]; columns parallax, parallax_err (mas), ks, ks_err, j, j_err, v, v_err (mag), teff, teff_err (K), feh, feh_err (dex), fbol, fbol_err (W/m2) are read as the method needs; a value written in this block wins over the row's"`
	Companions *steps.Ref    `step:"companions" accepts:"companions" doc:"stars near the target (cool-dwarf method): those measured in Ks are taken as blended into the catalogue Ks and removed from it, m_host = m_blend + 2.5 log10(1 + Σ 10^(−0.4 ΔKs)); those in other bands are listed but not used"`

	Parallax        *steps.Measurement `step:"parallax" dim:"angle" doc:"trigonometric parallax, e.g. \"35.21 ± 0.04 mas\"; the distance is 1/parallax (no prior, no extinction); cool-dwarf needs it, stefan-boltzmann with fbol needs it or distance"`
	Distance        *steps.Measurement `step:"distance" dim:"distance" doc:"distance, in place of a parallax (not for cool-dwarf), e.g. \"28.4 ± 0.1 pc\""`
	Ks              *steps.Measurement `step:"ks" dim:"magnitude" doc:"apparent Ks magnitude (2MASS system), the blend of the host and any companions, e.g. \"8.62 ± 0.02 mag\"; cool-dwarf needs it, other methods carry it for the spectroscopy metrics"`
	J               *steps.Measurement `step:"j" dim:"magnitude" doc:"apparent J magnitude; carried for the spectroscopy metrics, and with v gives Teff from V−J in cool-dwarf when teff is absent"`
	V               *steps.Measurement `step:"v" dim:"magnitude" doc:"apparent V magnitude; with j gives Teff from the Mann et al. (2015) V−J relation (coefficients from memory) in cool-dwarf when teff is absent"`
	Teff            *steps.Measurement `step:"teff" dim:"temperature" doc:"effective temperature, e.g. \"3350 ± 70 K\"; required by stefan-boltzmann, optional elsewhere (without it the luminosity is not given)"`
	FeH             *steps.Measurement `step:"feh" dim:"metallicity" doc:"metallicity [Fe/H], e.g. \"-0.12 ± 0.08 dex\"; cool-dwarf then uses the Mann et al. (2015) relation with its [Fe/H] term, stefan-boltzmann uses it in the Torres et al. (2010) mass"`
	Fbol            *steps.Measurement `step:"fbol" dim:"irradiance" doc:"bolometric flux at Earth, e.g. \"1.32e-10 ± 0.04e-10 W/m2\" (stefan-boltzmann, with a parallax or distance, unless luminosity is given)"`
	Luminosity      *steps.Measurement `step:"luminosity" dim:"luminosity" doc:"bolometric luminosity, e.g. \"0.021 ± 0.001 L_sun\" (stefan-boltzmann, in place of fbol)"`
	LogG            *steps.Measurement `step:"logg" dim:"gravity" doc:"spectroscopic log g in cgs, e.g. \"4.45 ± 0.10 dex\"; stefan-boltzmann without a mass takes the mass from Teff, log g and [Fe/H] by Torres et al. (2010); the reported log g then follows from that mass and the radius"`
	Radius          *steps.Measurement `step:"radius" dim:"radius" doc:"stellar radius as measured (given method), e.g. \"0.392 ± 0.004 R_sun\""`
	Mass            *steps.Measurement `step:"mass" dim:"mass" doc:"stellar mass as measured (given method, or stefan-boltzmann), e.g. \"0.39 ± 0.02 M_sun\""`
	BenchmarkRadius *steps.Measurement `step:"benchmark_radius" dim:"radius" doc:"benchmark method: the benchmark star's directly measured radius (e.g. interferometric)"`
	BenchmarkMass   *steps.Measurement `step:"benchmark_mass" dim:"mass" doc:"benchmark method: the benchmark star's measured mass (e.g. from a binary orbit)"`
	BenchmarkAbsK   *steps.Measurement `step:"benchmark_abs_k" dim:"magnitude" doc:"benchmark method: the benchmark's absolute Ks magnitude, where the relations' slopes d ln R/dM_Ks and d ln M/dM_Ks are taken"`
	DeltaAbsK       *steps.Measurement `step:"delta_abs_k" dim:"magnitude" doc:"benchmark method: absolute Ks of the target minus that of the benchmark, e.g. \"0.31 ± 0.03 mag\""`
	BenchmarkTeff   *steps.Measurement `step:"benchmark_teff" dim:"temperature" doc:"benchmark method: the benchmark's Teff; with delta_teff gives the target's Teff (or give teff directly)"`
	DeltaTeff       *steps.Measurement `step:"delta_teff" dim:"temperature" doc:"benchmark method: Teff of the target minus that of the benchmark"`

	// TransferPerMag defaults to defaultTransferPerMag, Draws to defaultDraws.
	TransferPerMag     float64 `step:"transfer_uncertainty" default:"0.05" doc:"benchmark method: extra fractional uncertainty of the transfer per magnitude of |ΔM_Ks|, drawn on R and M (0.05: 1.5 % at 0.3 mag; none for an identical twin)"`
	AllowExtrapolation bool    `step:"allow_extrapolation" default:"false" doc:"continue a Mann relation's polynomial past its absolute-Ks range (radius 4.6–9.8, mass 4.0–11.0 mag) with a warning, instead of refusing the star"`
	Scatter            bool    `step:"relation_scatter" default:"true" doc:"draw each empirical relation's scatter per sample (Mann 2015 radius 2.89 %, or 2.70 % with [Fe/H]; Mann 2019 mass 2 %; Torres 2010 mass 0.027 dex; V−J Teff 55 K); false propagates the measurement errors alone"`
	Draws              int     `step:"draws" default:"20000" doc:"number of joint draws; the derive step pairs them with a fit's posterior samples"`

	// Set by Check. inline holds the measurements written in the block, by attribute name,
	// in the units of Input (parallax in mas); required and optional are the row columns
	// read (with their _err columns).
	inline             map[string]Measured
	required, optional []string
}

// measurement is one measurement attribute: its name, as its step tag writes it, and its
// field, nil when the block does not write it.
type measurement struct {
	name string
	m    *steps.Measurement
}

// measurements lists every measurement attribute by name, in the fixed order of the checks
// and the notes.
func (c *Config) measurements() []measurement {
	return []measurement{
		{"parallax", c.Parallax}, {"distance", c.Distance}, {"ks", c.Ks}, {"j", c.J}, {"v", c.V},
		{"teff", c.Teff}, {"feh", c.FeH}, {"fbol", c.Fbol}, {"luminosity", c.Luminosity}, {"logg", c.LogG},
		{"radius", c.Radius}, {"mass", c.Mass}, {"benchmark_radius", c.BenchmarkRadius},
		{"benchmark_mass", c.BenchmarkMass}, {"benchmark_abs_k", c.BenchmarkAbsK}, {"delta_abs_k", c.DeltaAbsK},
		{"benchmark_teff", c.BenchmarkTeff}, {"delta_teff", c.DeltaTeff},
	}
}

// hasRow and hasCompanions say whether the row and companions attributes are set.
func (c *Config) hasRow() bool        { return c.Row != nil && *c.Row != "" }
func (c *Config) hasCompanions() bool { return c.Companions != nil && *c.Companions != "" }

// rowColumns are the quantities a catalogue row can give, each with its error column
// "<name>_err", in the units the row parameter's doc names.
var rowColumns = []string{"parallax", "ks", "j", "v", "teff", "feh", "fbol"}

// Columns lists the catalogue columns the step reads from its row: the method's needed
// quantities not written in the block are required (value and error), the others it can use
// optional. Nothing is read for any other parameter.
func (c *Config) Columns(param string) (required, optional []string) {
	if param != "row" || !c.hasRow() {
		return nil, nil
	}
	for _, q := range c.required {
		required = append(required, q, q+"_err")
	}
	for _, q := range c.optional {
		optional = append(optional, q, q+"_err")
	}
	return required, optional
}

var _ steps.ColumnReader = (*Config)(nil)

// methodAttrs lists per method the measurement attributes it accepts.
var methodAttrs = map[string][]string{
	MethodCoolDwarf:       {"parallax", "ks", "j", "v", "teff", "feh"},
	MethodStefanBoltzmann: {"parallax", "distance", "ks", "j", "v", "teff", "feh", "fbol", "luminosity", "logg", "mass"},
	MethodBenchmark:       {"parallax", "distance", "ks", "j", "v", "teff", "benchmark_radius", "benchmark_mass", "benchmark_abs_k", "delta_abs_k", "benchmark_teff", "delta_teff"},
	MethodGiven:           {"parallax", "distance", "ks", "j", "v", "teff", "radius", "mass"},
}

// inlineUnit is the unit of each measurement attribute as held in Config.inline.
var inlineUnit = map[string]string{"parallax": "mas", "distance": "pc", "ks": "mag", "j": "mag", "v": "mag", "teff": "K",
	"feh": "dex", "fbol": "W/m2", "luminosity": "L_sun", "logg": "dex", "radius": "R_sun", "mass": "M_sun",
	"benchmark_radius": "R_sun", "benchmark_mass": "M_sun", "benchmark_abs_k": "mag", "delta_abs_k": "mag",
	"benchmark_teff": "K", "delta_teff": "K"}

// positiveAttrs must have a positive value.
var positiveAttrs = map[string]bool{"parallax": true, "distance": true, "teff": true, "fbol": true, "luminosity": true,
	"radius": true, "mass": true, "benchmark_radius": true, "benchmark_mass": true, "benchmark_teff": true}

// Check holds the measurements to the method and completes the configuration: the
// measurements written in the block, and the row columns to read.
func (Kind) Check(c *Config) error {
	c.inline, c.required, c.optional = map[string]Measured{}, nil, nil
	if c.Draws < minDraws || c.Draws > maxDrawsAttr {
		return steps.Attrf("draws", "must be between %d and %d, not %d", minDraws, maxDrawsAttr, c.Draws)
	}
	if !(c.TransferPerMag >= 0 && c.TransferPerMag <= 1) {
		return steps.Attrf("transfer_uncertainty", "must be a fraction per magnitude between 0 and 1, not %v", c.TransferPerMag)
	}
	accepted := methodAttrs[c.Method]
	for _, q := range c.measurements() {
		if q.m == nil {
			continue
		}
		name := q.name
		if !slices.Contains(accepted, name) {
			return steps.Attrf(name, "is not used by the %s method (it reads %s)", c.Method, strings.Join(accepted, ", "))
		}
		val, sig := q.m.Value, q.m.Sigma
		if math.IsNaN(val) || math.IsInf(val, 0) || math.IsNaN(sig) || math.IsInf(sig, 0) || sig < 0 {
			return steps.Attrf(name, "must be a finite value with a non-negative error, not %v ± %v", val, sig)
		}
		if positiveAttrs[name] && !(val > 0) {
			return steps.Attrf(name, "must be positive, not %v", val)
		}
		if name == "parallax" {
			val, sig = val*1000, sig*1000 // arcsec → mas
		}
		c.inline[name] = Measured{Value: val, Sigma: sig, Where: "attribute " + name}
	}
	if c.hasCompanions() && c.Method != MethodCoolDwarf {
		return steps.Attrf("companions", "only the cool-dwarf method corrects the host's Ks for companions; the %s method does not use them", c.Method)
	}
	if c.Method != MethodBenchmark && c.TransferPerMag != defaultTransferPerMag {
		return steps.Attrf("transfer_uncertainty", "is used only by the benchmark method")
	}
	return c.plan()
}

// has reports whether an attribute was written in the block.
func (c *Config) has(name string) bool { _, ok := c.inline[name]; return ok }

// need adds a row quantity: from the row when not written in the block; when there is no
// row either, a required quantity is an error naming the attribute, with why.
func (c *Config) need(q string, required bool, why string) error {
	if c.has(q) {
		return nil
	}
	if !c.hasRow() {
		if required {
			return steps.Attrf(q, "the %s method needs %s: write it here or give a catalogue row (attribute row) with columns %s and %s_err", c.Method, why, q, q)
		}
		return nil
	}
	if required {
		c.required = append(c.required, q)
	} else {
		c.optional = append(c.optional, q)
	}
	return nil
}

// plan decides, per method, which quantities are required and which optional, checks that
// the required inline-only ones are written, and sets the row columns.
func (c *Config) plan() error {
	if err := c.notBoth("parallax", "distance"); err != nil {
		return err
	}
	switch c.Method {
	case MethodCoolDwarf:
		return c.planCoolDwarf()
	case MethodStefanBoltzmann:
		return c.planStefanBoltzmann()
	case MethodBenchmark:
		return c.planBenchmark()
	case MethodGiven:
		return c.planGiven()
	}
	return nil
}

// needAll adds each quantity with need.
func (c *Config) needAll(required bool, why string, names ...string) error {
	for _, q := range names {
		if err := c.need(q, required, why); err != nil {
			return err
		}
	}
	return nil
}

// written requires attributes that only the block can give (no catalogue has them).
func (c *Config) written(names ...string) error {
	for _, n := range names {
		if !c.has(n) {
			return steps.Attrf(n, "the %s method needs %s", c.Method, n)
		}
	}
	return nil
}

// notBoth refuses two attributes that say the same thing two ways.
func (c *Config) notBoth(a, b string) error {
	if c.has(a) && c.has(b) {
		return steps.Attrf(b, "give %s or %s, not both", a, b)
	}
	return nil
}

// distance needs a parallax unless a distance is written.
func (c *Config) distance(required bool) error {
	if c.has("distance") {
		return nil
	}
	return c.need("parallax", required, "a parallax (or distance)")
}

// magnitudes reads the apparent magnitudes when there are any, for the spectroscopy metrics.
func (c *Config) magnitudes() error { return c.needAll(false, "", "ks", "j", "v") }

// planCoolDwarf: the Mann et al. relations need a parallax and Ks, and a Teff (given, from
// the row, or from V−J).
func (c *Config) planCoolDwarf() error {
	if err := c.need("parallax", true, "a parallax"); err != nil {
		return err
	}
	if err := c.need("ks", true, "an apparent Ks magnitude"); err != nil {
		return err
	}
	if !c.has("teff") && !c.hasRow() && !(c.has("v") && c.has("j")) {
		return steps.Attrf("teff", "the cool-dwarf method needs teff, or v and j for the Mann et al. (2015) V−J relation, or a catalogue row with them")
	}
	return c.needAll(false, "", "teff", "feh", "j", "v")
}

// planStefanBoltzmann: a Teff, a luminosity (or a bolometric flux and a distance), and a
// mass (or log g for the Torres et al. 2010 relation).
func (c *Config) planStefanBoltzmann() error {
	if err := c.need("teff", true, "an effective temperature"); err != nil {
		return err
	}
	if err := c.notBoth("fbol", "luminosity"); err != nil {
		return err
	}
	if !c.has("luminosity") {
		if err := c.need("fbol", true, "a bolometric flux fbol (with a parallax or distance) or a luminosity"); err != nil {
			return err
		}
		if err := c.distance(true); err != nil {
			return err
		}
	} else if err := c.distance(false); err != nil {
		return err
	}
	if err := c.notBoth("mass", "logg"); err != nil {
		return err
	}
	switch {
	case !c.has("mass") && !c.has("logg"):
		return steps.Attrf("mass", "the stefan-boltzmann method needs a mass: write mass, or logg (with teff, and feh if known) for the Torres et al. (2010) relation")
	case !c.has("mass"):
		if err := c.need("feh", false, ""); err != nil {
			return err
		}
	case c.has("feh"):
		return steps.Attrf("feh", "is used by the stefan-boltzmann method only for the Torres et al. (2010) mass, and the mass is given")
	}
	return c.magnitudes()
}

// planBenchmark: the benchmark's measured radius, mass and M_Ks and the target's ΔM_Ks, all
// written; Teff given, or the benchmark's with the difference.
func (c *Config) planBenchmark() error {
	if err := c.written("benchmark_radius", "benchmark_mass", "benchmark_abs_k", "delta_abs_k"); err != nil {
		return err
	}
	if c.has("benchmark_teff") != c.has("delta_teff") {
		return steps.Attrf("delta_teff", "benchmark_teff and delta_teff go together: the target's Teff is their sum")
	}
	if err := c.notBoth("teff", "delta_teff"); err != nil {
		return err
	}
	if !c.has("delta_teff") {
		if err := c.need("teff", false, ""); err != nil {
			return err
		}
	}
	if err := c.distance(false); err != nil {
		return err
	}
	return c.magnitudes()
}

// planGiven: radius and mass as measured, written in the block.
func (c *Config) planGiven() error {
	if err := c.written("radius", "mass"); err != nil {
		return err
	}
	if err := c.need("teff", false, ""); err != nil {
		return err
	}
	if err := c.distance(false); err != nil {
		return err
	}
	return c.magnitudes()
}

// Run draws the star.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	input, notes, err := cfg.resolve(in)
	if err != nil {
		return nil, err
	}
	res, err := Draw(input, Options{Method: cfg.Method, Draws: cfg.Draws, Seed: env.Seed, Scatter: cfg.Scatter,
		AllowExtrapolation: cfg.AllowExtrapolation, TransferPerMag: cfg.TransferPerMag})
	if err != nil {
		return nil, err
	}
	for _, n := range append(notes, res.Notes...) {
		env.Note("%s", n)
	}
	return &Artifact{Method: cfg.Method, Basis: res.Basis, Star: res.Star}, nil
}

// Inspect implements steps.Inspector: it reads the catalogue row's cells as Run will, so
// that `dipline check` names a blank, negative or unparsable cell the run would refuse
// before anything runs. The companions, another step's result, are not there yet and are
// checked by Run.
func (Kind) Inspect(c *Config, in steps.Inputs) error {
	_, _, err := c.measured(in)
	return err
}

// resolve builds the Input from the block's measurements, the row and the companions.
func (c *Config) resolve(in steps.Inputs) (Input, []string, error) {
	x, notes, err := c.measured(in)
	if err != nil {
		return Input{}, nil, err
	}
	if c.hasCompanions() {
		src, ok := in.Ref("companions").(stellar.CompanionSource)
		if !ok {
			return Input{}, nil, fmt.Errorf("star: companions does not refer to a step that lists companions")
		}
		for _, cp := range src.CompanionList() {
			if math.IsNaN(cp.DMag) || math.IsInf(cp.DMag, 0) || !(cp.DMagErr >= 0) || math.IsInf(cp.DMagErr, 0) {
				return Input{}, nil, steps.BadInputf("companions: %s has Δm %v ± %v", cp.Name, cp.DMag, cp.DMagErr)
			}
			x.Companions = append(x.Companions, cp)
		}
	}
	return x, notes, nil
}

// measured builds the Input from the block's measurements and the catalogue row.
func (c *Config) measured(in steps.Inputs) (Input, []string, error) {
	var notes []string
	var row steps.Row
	if c.hasRow() {
		r, ok := in.Rows["row"]
		if !ok {
			return Input{}, nil, fmt.Errorf("star: the catalogue row was not handed to the step")
		}
		row = r
	}
	got := map[string]*Measured{}
	for _, q := range c.measurements() {
		name := q.name
		m, ok := c.inline[name]
		if !ok {
			continue
		}
		if m.Sigma == 0 {
			notes = append(notes, fmt.Sprintf("%s = %g %s has no error and is taken as exact", name, m.Value, inlineUnit[name]))
		}
		got[name] = &m
	}
	fromRow := func(q string, required bool) error {
		v, ok := row.Get(q)
		if !ok {
			if required {
				return steps.BadInputf("%s: %s is blank; the %s method needs it", row.Where(q), q, c.Method)
			}
			return nil
		}
		e, eok := row.Get(q + "_err")
		switch {
		case math.IsNaN(v) || math.IsInf(v, 0):
			return steps.BadInputf("%s: %s is %v", row.Where(q), q, v)
		case positiveAttrs[q] && !(v > 0):
			return steps.BadInputf("%s: %s is %v; it must be positive", row.Where(q), q, v)
		case !eok:
			return steps.BadInputf("%s: %s is given (%v) but its error is blank", row.Where(q+"_err"), q, v)
		case !(e > 0) || math.IsInf(e, 0):
			return steps.BadInputf("%s: the error of %s is %v; it must be positive", row.Where(q+"_err"), q, e)
		}
		got[q] = &Measured{Value: v, Sigma: e, Where: row.Where(q)}
		return nil
	}
	if c.hasRow() {
		for _, q := range c.required {
			if err := fromRow(q, true); err != nil {
				return Input{}, nil, err
			}
		}
		for _, q := range c.optional {
			if err := fromRow(q, false); err != nil {
				return Input{}, nil, err
			}
		}
	}
	x := Input{
		Parallax: got["parallax"], Ks: got["ks"], J: got["j"], V: got["v"], Teff: got["teff"], FeH: got["feh"],
		Fbol: got["fbol"], Luminosity: got["luminosity"], LogG: got["logg"], Radius: got["radius"], Mass: got["mass"],
		Distance: got["distance"], BenchRadius: got["benchmark_radius"], BenchMass: got["benchmark_mass"],
		BenchAbsK: got["benchmark_abs_k"], BenchTeff: got["benchmark_teff"], DeltaAbsK: got["delta_abs_k"],
		DeltaTeff: got["delta_teff"],
	}
	if c.Method == MethodCoolDwarf && x.Teff == nil && (x.V == nil || x.J == nil) {
		return Input{}, nil, steps.BadInputf("%s: teff is blank, and without teff the cool-dwarf method needs v and j (Mann et al. 2015 V−J relation)", row.Where("teff"))
	}
	return x, notes, nil
}
