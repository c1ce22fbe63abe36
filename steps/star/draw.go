package star

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/stellar"
)

// The methods, as written in the method attribute.
const (
	MethodCoolDwarf       = "cool-dwarf"
	MethodStefanBoltzmann = "stefan-boltzmann"
	MethodBenchmark       = "benchmark"
	MethodGiven           = "given"
)

// Methods lists the methods in the order the schema shows them.
var Methods = []string{MethodCoolDwarf, MethodStefanBoltzmann, MethodBenchmark, MethodGiven}

// Measured is one input value with its one-sigma error, in the unit its Input field names,
// and where it came from, for messages. Sigma 0 takes the value as exact.
type Measured struct {
	Value, Sigma float64
	Where        string
}

// Input holds every value a method may use, resolved from the block and the catalogue row;
// nil means absent.
type Input struct {
	Parallax   *Measured // mas
	Ks, J, V   *Measured // apparent magnitudes (Ks: the catalogued blend)
	Teff       *Measured // K
	FeH        *Measured // dex
	Fbol       *Measured // bolometric flux at Earth, W/m²
	Luminosity *Measured // L☉
	LogG       *Measured // log10 of cgs surface gravity
	Radius     *Measured // R☉
	Mass       *Measured // M☉
	Distance   *Measured // pc

	// The benchmark method's star: measured radius and mass, absolute Ks and (optional) Teff.
	BenchRadius, BenchMass, BenchAbsK, BenchTeff *Measured
	// DeltaAbsK and DeltaTeff are target minus benchmark.
	DeltaAbsK, DeltaTeff *Measured

	// Companions are stars near the target; those measured in Ks correct the host's Ks.
	Companions []stellar.Companion
}

// Options are the settings of a draw.
type Options struct {
	Method string
	Draws  int
	Seed   uint64
	// Scatter draws each empirical relation's published scatter per sample.
	Scatter bool
	// AllowExtrapolation continues a Mann relation past its range with a note instead of
	// refusing a star whose absolute Ks lies outside it.
	AllowExtrapolation bool
	// TransferPerMag is the benchmark method's extra fractional uncertainty per magnitude
	// of |ΔM_Ks|.
	TransferPerMag float64
}

// Basis says, per quantity, how the draws were made; it feeds the figures' docs.
type Basis struct {
	Radius, Mass, Teff, Luminosity, Distance string
}

// Result is what Draw gives: the joint draws, how they were made, and notes for the user.
type Result struct {
	Star  *stellar.Star
	Basis Basis
	Notes []string
}

// Draw makes opt.Draws joint draws of the star by opt.Method from in. Each input has its
// own random stream derived from opt.Seed and the input's name, so the draws of one input
// do not depend on which others are given. Problems with the inputs are *steps.InputError
// values naming where the value came from.
func Draw(in Input, opt Options) (*Result, error) {
	if opt.Draws < 1 {
		return nil, fmt.Errorf("star: %d draws", opt.Draws)
	}
	d := &drawer{in: in, opt: opt, n: opt.Draws, s: &stellar.Star{}}
	var err error
	switch opt.Method {
	case MethodCoolDwarf:
		err = d.coolDwarf()
	case MethodStefanBoltzmann:
		err = d.stefanBoltzmann()
	case MethodBenchmark:
		err = d.benchmark()
	case MethodGiven:
		err = d.given()
	default:
		return nil, fmt.Errorf("star: unknown method %q", opt.Method)
	}
	if err != nil {
		return nil, err
	}
	if err := d.finish(); err != nil {
		return nil, err
	}
	return &Result{Star: d.s, Basis: d.b, Notes: d.notes}, nil
}

type drawer struct {
	in    Input
	opt   Options
	n     int
	s     *stellar.Star
	b     Basis
	notes []string
}

// notef records a fact for the user.
func (d *drawer) notef(format string, a ...any) { d.notes = append(d.notes, fmt.Sprintf(format, a...)) }

// stream returns the random stream of one named input or scatter term.
func (d *drawer) stream(label string, index uint64) *rng.Stream {
	return rng.Derive(d.opt.Seed, "star/"+label, index)
}

// sample fills a new slice with m.Value + m.Sigma·z from the stream of label.
func (d *drawer) sample(m *Measured, label string) []float64 {
	out := make([]float64, d.n)
	g := d.stream(label, 0)
	for i := range out {
		out[i] = m.Value + m.Sigma*g.Normal()
	}
	return out
}

// scatter multiplies v by (1 + frac·z) per draw when relation scatter is on.
func (d *drawer) scatter(v []float64, frac float64, label string) {
	if !d.opt.Scatter || frac == 0 {
		return
	}
	g := d.stream("scatter/"+label, 0)
	for i := range v {
		v[i] *= 1 + frac*g.Normal()
	}
}

// positive checks that every draw of a quantity is positive and finite; a failure names
// the input and suggests its error is too large for its value.
func positive(v []float64, what string, m *Measured) error {
	for _, x := range v {
		if !(x > 0) || math.IsInf(x, 0) {
			return steps.BadInputf("%s: %s %g ± %g gives non-positive draws; its error is too large for its value", m.Where, what, m.Value, m.Sigma)
		}
	}
	return nil
}

// minParallaxSNR is the smallest parallax over its error accepted: below 5 the inverse
// parallax is a biased distance and draws may cross zero (common practice).
const minParallaxSNR = 5

// distanceDraws sets s.Distance from a distance or a parallax, if either is given, and
// returns the parallax draws (mas) when a parallax was used.
func (d *drawer) distanceDraws() ([]float64, error) {
	switch {
	case d.in.Distance != nil:
		d.s.Distance = d.sample(d.in.Distance, "distance")
		d.b.Distance = "as given"
		return nil, positive(d.s.Distance, "distance", d.in.Distance)
	case d.in.Parallax != nil:
		p := d.in.Parallax
		if p.Sigma > 0 && p.Value/p.Sigma < minParallaxSNR {
			return nil, steps.BadInputf("%s: parallax %g ± %g mas has a signal-to-noise ratio of %.2g, below %d: 1/parallax is then a biased distance", p.Where, p.Value, p.Sigma, p.Value/p.Sigma, minParallaxSNR)
		}
		plx := d.sample(p, "parallax")
		if err := positive(plx, "parallax", p); err != nil {
			return nil, err
		}
		d.s.Distance = make([]float64, d.n)
		for i, x := range plx {
			d.s.Distance[i] = 1000 / x
		}
		d.b.Distance = "1/parallax (no prior on distance; extinction ignored)"
		return plx, nil
	}
	return nil, nil
}

// isKs reports whether a companion's band is Ks (K is taken as Ks).
func isKs(band string) bool {
	b := strings.ToLower(strings.TrimSpace(band))
	return b == "ks" || b == "k" || b == "k_s"
}

// companionCorrection returns per draw the magnitudes to add to the blended Ks to get the
// host's own, m_host = m_blend + 2.5 log10(1 + Σ 10^(−0.4 Δm_i)) over the companions
// measured in Ks (Pogson's ratio, common practice), and the value at the companions'
// central Δm. It notes the companions in other bands, which it does not use.
func (d *drawer) companionCorrection() ([]float64, float64) {
	corr := make([]float64, d.n)
	var used, unused []string
	central := 1.0
	sums := make([]float64, d.n)
	for i := range sums {
		sums[i] = 1
	}
	for k, c := range d.in.Companions {
		if !isKs(c.Band) {
			unused = append(unused, fmt.Sprintf("%s (%s)", c.Name, c.Band))
			continue
		}
		used = append(used, fmt.Sprintf("%s (ΔKs = %.3g ± %.2g)", c.Name, c.DMag, c.DMagErr))
		central += math.Pow(10, -0.4*c.DMag)
		g := d.stream("companion", uint64(k))
		for i := range sums {
			sums[i] += math.Pow(10, -0.4*(c.DMag+c.DMagErr*g.Normal()))
		}
	}
	if len(used) > 0 {
		for i, s := range sums {
			corr[i] = 2.5 * math.Log10(s)
		}
		d.notef("the catalogue Ks was taken as the blend of the host and %s: the host is %.3f mag fainter", strings.Join(used, ", "), 2.5*math.Log10(central))
	}
	if len(unused) > 0 {
		d.notef("companions not measured in Ks were not used to correct the host's Ks: %s", strings.Join(unused, ", "))
	}
	return corr, 2.5 * math.Log10(central)
}

// checkRange refuses, or notes, an absolute Ks outside a relation's range, and notes the
// share of draws outside it.
func (d *drawer) checkRange(rel mkRelation, central float64, mk []float64, from string) error {
	if !rel.inside(central) {
		if !d.opt.AllowExtrapolation {
			return steps.BadInputf("%s: %s; set allow_extrapolation = true to continue the relation past its range", from, rel.rangeError(central))
		}
		d.notef("%s: %s; the relation's polynomial was continued past its range, as allow_extrapolation asks: treat the result with caution", from, rel.rangeError(central))
		return nil
	}
	out := 0
	for _, m := range mk {
		if !rel.inside(m) {
			out++
		}
	}
	if out > 0 {
		d.notef("%.2g %% of the absolute Ks draws fall outside the %.1f–%.1f range of the %s; there the relation's polynomial was continued", 100*float64(out)/float64(d.n), rel.lo, rel.hi, rel.name)
	}
	return nil
}

// fehLo, fehHi bound the metallicities of the Mann et al. (2015) calibration sample
// (roughly; from memory).
const fehLo, fehHi = -0.6, 0.5

// coolDwarf draws an M dwarf's radius and mass from its absolute Ks magnitude (Mann et al.
// 2015 and 2019), and its Teff as given or from V−J.
func (d *drawer) coolDwarf() error {
	mk, from, err := d.absoluteKs()
	if err != nil {
		return err
	}
	if err := d.coolDwarfRadius(mk, from); err != nil {
		return err
	}
	if err := d.coolDwarfMass(mk, from); err != nil {
		return err
	}
	// Teff: given, else from V−J.
	switch {
	case d.in.Teff != nil:
		return d.givenTeff()
	case d.in.V != nil && d.in.J != nil:
		return d.colourTeff()
	}
	return fmt.Errorf("star: cool-dwarf method without teff or V and J")
}

// absoluteKs draws the absolute Ks magnitude from Ks (less the companions' light) and the
// parallax, checks it against the ranges of both relations, and keeps it in the star. from
// names the inputs for messages.
func (d *drawer) absoluteKs() (mk []float64, from string, err error) {
	in := d.in
	plx, err := d.distanceDraws()
	if err != nil {
		return nil, "", err
	}
	ks := d.sample(in.Ks, "ks")
	corr, centralCorr := d.companionCorrection()
	mk = make([]float64, d.n)
	for i := range mk {
		if mk[i], err = astro.AbsoluteMagnitude(ks[i]+corr[i], plx[i]); err != nil {
			return nil, "", steps.BadInputf("%s: %v", in.Parallax.Where, err)
		}
	}
	centralMK, err := astro.AbsoluteMagnitude(in.Ks.Value+centralCorr, in.Parallax.Value)
	if err != nil {
		return nil, "", steps.BadInputf("%s: %v", in.Parallax.Where, err)
	}
	from = fmt.Sprintf("Ks %.3f (%s) and parallax %.4g mas (%s)", in.Ks.Value, in.Ks.Where, in.Parallax.Value, in.Parallax.Where)
	if err := d.checkRange(mann15Radius, centralMK, mk, from); err != nil {
		return nil, "", err
	}
	if err := d.checkRange(mann19Mass, centralMK, mk, from); err != nil {
		return nil, "", err
	}
	d.s.MagK = mk
	d.s.Relation = RelationMann2015
	return mk, from, nil
}

// coolDwarfRadius draws the radius from M_Ks by Mann et al. (2015), with the [Fe/H] form
// when [Fe/H] is given.
func (d *drawer) coolDwarfRadius(mk []float64, from string) error {
	in := d.in
	var feh []float64
	scat := scatterMann15
	d.b.Radius = fmt.Sprintf("Mann et al. (2015) M_Ks–radius relation, scatter %.2f %%", 100*scatterMann15)
	if in.FeH != nil {
		feh = d.sample(in.FeH, "feh")
		scat = scatterMann15FeH
		d.b.Radius = fmt.Sprintf("Mann et al. (2015) M_Ks–[Fe/H]–radius relation, scatter %.2f %%", 100*scatterMann15FeH)
		if in.FeH.Value < fehLo || in.FeH.Value > fehHi {
			d.notef("[Fe/H] %.2f (%s) is outside the roughly %.1f to +%.1f dex of the Mann et al. (2015) calibration sample", in.FeH.Value, in.FeH.Where, fehLo, fehHi)
		}
	}
	if !d.opt.Scatter {
		d.b.Radius += " (not drawn)"
	}
	d.s.Radius = make([]float64, d.n)
	for i, m := range mk {
		f := 0.0
		if feh != nil {
			f = feh[i]
		}
		var err error
		if d.s.Radius[i], err = mannRadius(m, f, feh != nil); err != nil {
			return steps.BadInputf("%s: %v", from, err)
		}
	}
	d.scatter(d.s.Radius, scat, "radius")
	return nil
}

// coolDwarfMass draws the mass from M_Ks by Mann et al. (2019).
func (d *drawer) coolDwarfMass(mk []float64, from string) error {
	d.s.Mass = make([]float64, d.n)
	for i, m := range mk {
		var err error
		if d.s.Mass[i], err = mannMass(m); err != nil {
			return steps.BadInputf("%s: %v", from, err)
		}
	}
	d.scatter(d.s.Mass, scatterMann19, "mass")
	d.b.Mass = fmt.Sprintf("Mann et al. (2019) M_Ks–mass relation, scatter %.1f %%", 100*scatterMann19)
	if !d.opt.Scatter {
		d.b.Mass += " (not drawn)"
	}
	return nil
}

// colourTeff draws Teff from V−J by the Mann et al. (2015) colour–temperature relation.
func (d *drawer) colourTeff() error {
	in := d.in
	v, j := d.sample(in.V, "v"), d.sample(in.J, "j")
	d.s.Teff = make([]float64, d.n)
	for i := range v {
		d.s.Teff[i] = ColourTeff(v[i] - j[i])
	}
	if d.opt.Scatter {
		g := d.stream("scatter/teff", 0)
		for i := range d.s.Teff {
			d.s.Teff[i] += scatterColourTeff * g.Normal()
		}
	}
	vj := in.V.Value - in.J.Value
	if vj < colourLo || vj > colourHi {
		d.notef("V−J = %.2f is outside the %.1f–%.1f over which the Mann et al. (2015) colour–temperature relation is used; Teff is extrapolated", vj, colourLo, colourHi)
	}
	d.b.Teff = fmt.Sprintf("Mann et al. (2015) V−J relation (coefficients from memory), scatter %g K; V and J are blends: companions are not removed", scatterColourTeff)
	return positive(d.s.Teff, "Teff from V−J", in.V)
}

// givenTeff draws Teff as given.
func (d *drawer) givenTeff() error {
	d.s.Teff = d.sample(d.in.Teff, "teff")
	d.b.Teff = "as given"
	return positive(d.s.Teff, "Teff", d.in.Teff)
}

// stefanBoltzmann takes Teff as given and the luminosity as given or from the bolometric
// flux and distance, for the radius by the Stefan–Boltzmann law; the mass is given or comes
// from log g by Torres et al. (2010).
func (d *drawer) stefanBoltzmann() error {
	in := d.in
	if _, err := d.distanceDraws(); err != nil {
		return err
	}
	if err := d.givenTeff(); err != nil {
		return err
	}
	if in.Luminosity != nil {
		d.s.Luminosity = d.sample(in.Luminosity, "luminosity")
		d.b.Luminosity = "as given"
		if err := positive(d.s.Luminosity, "luminosity", in.Luminosity); err != nil {
			return err
		}
	} else {
		f := d.sample(in.Fbol, "fbol")
		if err := positive(f, "bolometric flux", in.Fbol); err != nil {
			return err
		}
		d.s.Luminosity = make([]float64, d.n)
		for i := range f {
			r := d.s.Distance[i] * astro.Parsec
			d.s.Luminosity[i] = 4 * math.Pi * r * r * f[i] / astro.SolarLuminosity
		}
		d.b.Luminosity = "4π d² F_bol from the bolometric flux and the distance"
	}
	d.s.Radius = make([]float64, d.n)
	for i := range d.s.Radius {
		r, err := astro.RadiusFromLuminosity(d.s.Luminosity[i]*astro.SolarLuminosity, d.s.Teff[i])
		if err != nil {
			return steps.BadInputf("%s: %v", in.Teff.Where, err)
		}
		d.s.Radius[i] = r / astro.SolarRadius
	}
	d.b.Radius = "Stefan–Boltzmann law, R = √(L / 4πσTeff⁴)"
	switch {
	case in.Mass != nil:
		d.s.Mass = d.sample(in.Mass, "mass")
		d.b.Mass = "as given"
		return positive(d.s.Mass, "mass", in.Mass)
	case in.LogG != nil:
		g := d.sample(in.LogG, "logg")
		feh := make([]float64, d.n)
		if in.FeH != nil {
			feh = d.sample(in.FeH, "feh")
		} else {
			d.notef("mass: [Fe/H] not given; the Torres et al. (2010) relation was evaluated at solar metallicity")
		}
		d.s.Mass = make([]float64, d.n)
		sg := d.stream("scatter/mass", 0)
		for i := range g {
			m, err := astro.TorresMass(d.s.Teff[i], g[i], feh[i])
			if err != nil {
				return steps.BadInputf("%s: %v", in.LogG.Where, err)
			}
			if d.opt.Scatter {
				m *= math.Pow(10, scatterTorresLogM*sg.Normal())
			}
			d.s.Mass[i] = m
		}
		d.b.Mass = fmt.Sprintf("Torres, Andersen & Giménez (2010) Teff–log g–[Fe/H] relation, scatter %g dex", scatterTorresLogM)
		if !d.opt.Scatter {
			d.b.Mass += " (not drawn)"
		}
		if med := median(d.s.Mass); med < torresMinMass {
			d.notef("mass: the Torres et al. (2010) relation gives %.3g M_sun, below the about %.1f M_sun its calibration covers", med, torresMinMass)
		}
		d.notef("log g: the reported log g follows from the mass and the Stefan–Boltzmann radius, not from the log g given (%s)", in.LogG.Where)
		return nil
	}
	return fmt.Errorf("star: stefan-boltzmann method without mass or log g")
}

// torresMinMass is roughly the lowest mass of the Torres et al. (2010) calibration (from
// memory).
const torresMinMass = 0.6

// largeTransfer is the |ΔM_Ks| beyond which the benchmark transfer is noted as stretched:
// the second-order term of ln R, ½ (d² ln R/dM_K²) ΔM_K², reaches about 0.5 % there for
// mid-M dwarfs (d² ln R/dM_K² ≈ −0.04 mag⁻² from the Mann et al. 2015 quadratic).
const largeTransfer = 0.5

// benchmark transfers a benchmark star's measured radius and mass to the target through
// the local slopes of the Mann relations in absolute Ks.
func (d *drawer) benchmark() error {
	in := d.in
	mk0 := in.BenchAbsK.Value
	sR, err := RadiusSlope(mk0)
	if err != nil {
		return steps.BadInputf("%s: %v", in.BenchAbsK.Where, err)
	}
	sM, err := MassSlope(mk0)
	if err != nil {
		return steps.BadInputf("%s: %v", in.BenchAbsK.Where, err)
	}
	if !mann15Radius.inside(mk0) || !mann19Mass.inside(mk0) {
		if !d.opt.AllowExtrapolation {
			rel := mann15Radius
			if mann15Radius.inside(mk0) {
				rel = mann19Mass
			}
			return steps.BadInputf("%s: the benchmark's %s; its local slope would come from the relation continued past its range: set allow_extrapolation = true to accept that", in.BenchAbsK.Where, rel.rangeError(mk0))
		}
		d.notef("the benchmark's absolute Ks %.3f is outside a Mann relation's range; its slope comes from the relation's polynomial continued past the range", mk0)
	}
	dmk := in.DeltaAbsK
	if math.Abs(dmk.Value) > largeTransfer {
		d.notef("ΔM_Ks = %.2f mag is large for a differential transfer (above %.1f mag); a relation for the target itself may be better", dmk.Value, largeTransfer)
	}
	extra := d.opt.TransferPerMag * math.Abs(dmk.Value)
	bmk := d.sample(in.BenchAbsK, "benchmark_abs_k")
	dm := d.sample(dmk, "delta_abs_k")
	rb := d.sample(in.BenchRadius, "benchmark_radius")
	mb := d.sample(in.BenchMass, "benchmark_mass")
	if err := positive(rb, "benchmark radius", in.BenchRadius); err != nil {
		return err
	}
	if err := positive(mb, "benchmark mass", in.BenchMass); err != nil {
		return err
	}
	gr, gm := d.stream("transfer/radius", 0), d.stream("transfer/mass", 0)
	d.s.Radius = make([]float64, d.n)
	d.s.Mass = make([]float64, d.n)
	d.s.MagK = make([]float64, d.n)
	for i := range rb {
		d.s.Radius[i] = rb[i] * math.Exp(sR*dm[i]) * (1 + extra*gr.Normal())
		d.s.Mass[i] = mb[i] * math.Exp(sM*dm[i]) * (1 + extra*gm.Normal())
		d.s.MagK[i] = bmk[i] + dm[i]
	}
	d.s.Relation = RelationMann2015
	d.b.Radius = fmt.Sprintf("benchmark radius × exp(d ln R/dM_Ks · ΔM_Ks), slope %.4f /mag of the Mann et al. (2015) relation at M_Ks = %.3f, transfer uncertainty %.3g %%", sR, mk0, 100*extra)
	d.b.Mass = fmt.Sprintf("benchmark mass × exp(d ln M/dM_Ks · ΔM_Ks), slope %.4f /mag of the Mann et al. (2019) relation at M_Ks = %.3f, transfer uncertainty %.3g %%", sM, mk0, 100*extra)
	if _, err := d.distanceDraws(); err != nil {
		return err
	}
	switch {
	case in.Teff != nil:
		return d.givenTeff()
	case in.BenchTeff != nil && in.DeltaTeff != nil:
		t0, dt := d.sample(in.BenchTeff, "benchmark_teff"), d.sample(in.DeltaTeff, "delta_teff")
		d.s.Teff = make([]float64, d.n)
		for i := range t0 {
			d.s.Teff[i] = t0[i] + dt[i]
		}
		d.b.Teff = "benchmark Teff + ΔTeff"
		return positive(d.s.Teff, "Teff", in.BenchTeff)
	}
	return nil
}

// given takes the radius and mass (and Teff, when there is one) as given.
func (d *drawer) given() error {
	in := d.in
	d.s.Radius = d.sample(in.Radius, "radius")
	d.s.Mass = d.sample(in.Mass, "mass")
	d.b.Radius, d.b.Mass = "as given", "as given"
	if err := positive(d.s.Radius, "radius", in.Radius); err != nil {
		return err
	}
	if err := positive(d.s.Mass, "mass", in.Mass); err != nil {
		return err
	}
	if _, err := d.distanceDraws(); err != nil {
		return err
	}
	if in.Teff != nil {
		return d.givenTeff()
	}
	return nil
}

// finish derives the luminosity (when Teff is known and L is not), log g and density from
// the draws, carries the catalogued magnitudes, and checks every draw is usable.
func (d *drawer) finish() error {
	s := d.s
	n := d.n
	if s.Luminosity == nil && s.Teff != nil {
		s.Luminosity = make([]float64, n)
		for i := range s.Luminosity {
			// Teff is positive by now; a radius that is not is refused below, with the mass.
			l, _ := astro.Luminosity(s.Radius[i]*astro.SolarRadius, s.Teff[i])
			s.Luminosity[i] = l / astro.SolarLuminosity
		}
		d.b.Luminosity = "Stefan–Boltzmann law, L = 4πR²σTeff⁴"
	}
	s.LogG = make([]float64, n)
	s.Density = make([]float64, n)
	for i := range s.LogG {
		r, m := s.Radius[i], s.Mass[i]
		if !(r > 0) || !(m > 0) || math.IsInf(r, 0) || math.IsInf(m, 0) {
			return steps.BadInputf("star: draw %d has radius %g R_sun and mass %g M_sun; the inputs' errors are too large for the method", i, r, m)
		}
		rm := r * astro.SolarRadius
		s.LogG[i] = math.Log10(100 * astro.SolarGM * m / (rm * rm))
		s.Density[i], _ = astro.StellarDensityCGS(m, r) // m, r checked above
	}
	mags := map[string]*Measured{"Ks": d.in.Ks, "J": d.in.J, "V": d.in.V}
	for band, m := range mags {
		if m != nil {
			if s.Mags == nil {
				s.Mags = map[string]float64{}
			}
			s.Mags[band] = m.Value
		}
	}
	return nil
}

// median returns the median of v (not changing v).
func median(v []float64) float64 { return quantile(v, 0.5) }

// quantile returns the q-quantile of v by linear interpolation between order statistics
// (Hyndman & Fan 1996, definition 7), without changing v.
func quantile(v []float64, q float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	s := slices.Clone(v)
	slices.Sort(s)
	return sortedQuantile(s, q)
}

func sortedQuantile(s []float64, q float64) float64 {
	h := q * float64(len(s)-1)
	i := int(math.Floor(h))
	if i >= len(s)-1 {
		return s[len(s)-1]
	}
	return s[i] + (h-float64(i))*(s[i+1]-s[i])
}
