// Package dilution is the dilution step kind: from the stars listed by a companions step, in
// the light curve's band, it draws the contaminating flux ratio under each hypothesis of
// which star the planet orbits — the target, or each companion in turn — together with the
// companion's radius over the target's, so that the derive step can correct the fitted radius
// ratio afterwards (Ciardi et al. 2015, ApJ 805, 16). The fit does not take the dilution
// into its likelihood, so a revised companion list re-runs only cheap steps.
//
// It does not know the planet's radius ratio, so it never judges a hypothesis by the planet
// radius it implies; Implausible is the small test the derive step applies. It keeps no
// colour relations: a companion measured in another band is converted by the relation the
// workflow states (band_relation), or refused.
//
// Main entry points: New (register it with the engine), Compute (the numerical core) and
// Implausible. The artifact, *Result, implements stellar.DilutionSource.
package dilution

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/stellar"
)

// Kind is the dilution step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the dilution kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config]    = Kind{}
	_ steps.Artifact         = (*Result)(nil)
	_ stellar.DilutionSource = (*Result)(nil)
)

// version is bumped whenever the draws or the encoding change.
const version = 1

// defaultDraws gives the median and one-sigma width of a flux ratio to about 1 % of its
// sigma (the standard error of a median is 1.25 σ/√N, common practice), matching the
// sample counts of the star step.
const defaultDraws = 20000

// maxDraws bounds the memory of one step (8 bytes × draws × 2 × hypotheses).
const maxDraws = 10_000_000

// relationKeys are the keys of band_relation.
var relationKeys = []string{"from", "to", "slope", "offset", "scatter", "source"}

// Name implements steps.Typed.
func (Kind) Name() string { return "dilution" }

// Version implements steps.Typed.
func (Kind) Version() int { return version }

// Random implements steps.Typed: the step draws Monte Carlo samples from its seed.
func (Kind) Random() bool { return true }

// Doc implements steps.Typed.
func (Kind) Doc() string {
	return "Draws the flux ratio of contaminating stars in the light curve's band for the planet on the target and on each companion."
}

// Config is what a dilution block may say. Check reads band_relation; core turns the
// configuration into Options, the numerical core's own (core.go).
type Config struct {
	LightCurve steps.Ref  `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve whose transit is diluted: its band and whether its flux is already corrected for crowding are read from its segments"`
	Companions steps.Ref  `step:"companions,required" accepts:"companions" doc:"the stars near the target, with magnitude differences"`
	Star       *steps.Ref `step:"star" accepts:"star" doc:"the target star; needed only for the planet-on-companion radius scale (the target's radius, and its M_K for companions measured in Ks without a radius)"`
	// Draws defaults to defaultDraws.
	Draws int `step:"draws" default:"20000" doc:"Monte Carlo samples per hypothesis"`
	// BandRelation is nil when the block states no relation.
	BandRelation map[string]string `step:"band_relation" doc:"converts companions' magnitude differences into the light curve's band: Δm_to = offset + slope × Δm_from with a normal scatter drawn per sample; keys from, to, slope, offset (default 0), scatter (mag, default 0), source (where the relation comes from, echoed in a note)"`

	// relation is band_relation read by Check; nil when none is stated.
	relation *BandRelation
}

// Check holds the draws to their bounds and reads band_relation.
func (Kind) Check(s *Config) error {
	if s.Draws < 100 || s.Draws > maxDraws {
		return steps.Attrf("draws", "must be between 100 and %d, not %d", maxDraws, s.Draws)
	}
	s.relation = nil
	if s.BandRelation != nil {
		r, err := parseRelation(s.BandRelation)
		if err != nil {
			return err
		}
		s.relation = r
	}
	return nil
}

// core is the numerical core's configuration.
func (s *Config) core() Options { return Options{Draws: s.Draws, Relation: s.relation} }

// parseRelation checks and decodes the band_relation object.
func parseRelation(m map[string]string) (*BandRelation, error) {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		known := false
		for _, r := range relationKeys {
			known = known || k == r
		}
		if !known {
			return nil, steps.Attrf("band_relation", "unknown key %q; the keys are %s", k, strings.Join(relationKeys, ", "))
		}
	}
	r := &BandRelation{From: strings.TrimSpace(m["from"]), To: strings.TrimSpace(m["to"]), Source: strings.TrimSpace(m["source"])}
	for _, k := range []string{"from", "to", "slope", "source"} {
		if strings.TrimSpace(m[k]) == "" {
			return nil, steps.Attrf("band_relation", "%s is missing; a relation needs from, to, slope and source", k)
		}
	}
	if sameBand(r.From, r.To) {
		return nil, steps.Attrf("band_relation", "converts %q to itself", r.From)
	}
	num := func(k string, def float64) (float64, error) {
		s := strings.TrimSpace(m[k])
		if s == "" {
			return def, nil
		}
		x, err := strconv.ParseFloat(s, 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return 0, steps.Attrf("band_relation", "%s: %q is not a finite number", k, s)
		}
		return x, nil
	}
	var err error
	if r.Slope, err = num("slope", 0); err != nil {
		return nil, err
	}
	if r.Slope == 0 {
		return nil, steps.Attrf("band_relation", "slope is 0: every companion would get the same difference whatever was measured")
	}
	if r.Offset, err = num("offset", 0); err != nil {
		return nil, err
	}
	if r.Scatter, err = num("scatter", 0); err != nil {
		return nil, err
	}
	if r.Scatter < 0 {
		return nil, steps.Attrf("band_relation", "scatter %g is negative", r.Scatter)
	}
	return r, nil
}

// Run draws the hypotheses from the referenced light curve, companions and star.
func (Kind) Run(ctx context.Context, s *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return nil, errors.New("dilution: light_curve does not refer to a step with a light curve")
	}
	cs, ok := in.Ref("companions").(stellar.CompanionSource)
	if !ok {
		return nil, errors.New("dilution: companions does not refer to a step with a companion list")
	}
	input := Input{Companions: cs.CompanionList()}
	if a := in.Ref("star"); a != nil {
		ss, ok := a.(stellar.StarSource)
		if !ok {
			return nil, errors.New("dilution: star does not refer to a step with star draws")
		}
		input.Star = ss.StarDraws()
	}
	var err error
	var contamination []float64
	input.Band, input.CrowdingCorrected, contamination, err = readCurve(src.LightCurve())
	if err != nil {
		return nil, err
	}
	res, notes, err := Compute(s.core(), input, env.Seed)
	if err != nil {
		return nil, err
	}
	for _, n := range notes {
		env.Note("%s", n)
	}
	if len(contamination) > 0 && !input.CrowdingCorrected {
		fr := Summarize(res.Hypotheses[0].FluxRatio)
		lo, hi := contamination[0], contamination[len(contamination)-1]
		stated := fmt.Sprintf("%.4g", lo)
		if hi != lo {
			stated = fmt.Sprintf("%.4g to %.4g", lo, hi)
		}
		env.Note("light_curve states a contamination ratio of %s; the companions give %.4g ± %.4g (the companions are used)", stated, fr.Median, fr.Sigma)
	}
	return res, nil
}

// readCurve returns the band and crowding state the segments share, refusing segments that
// disagree, and the contamination ratios the segments state (sorted, NaN left out).
func readCurve(lc *lightcurve.LightCurve) (band string, corrected bool, contamination []float64, err error) {
	if len(lc.Segments) == 0 {
		return "", false, nil, steps.BadInputf("light_curve: no segments")
	}
	first := lc.Segments[0]
	band, corrected = strings.TrimSpace(first.Band), first.CrowdingCorrected
	for _, s := range lc.Segments[1:] {
		if !sameBand(s.Band, band) {
			return "", false, nil, steps.BadInputf("light_curve: segment %s is in band %q but segment %s in band %q; dilute each band in its own step", first.ID, first.Band, s.ID, s.Band)
		}
		if s.CrowdingCorrected != corrected {
			return "", false, nil, steps.BadInputf("light_curve: segment %s is %s but segment %s is %s; correct all segments alike or none",
				first.ID, crowding(corrected), s.ID, crowding(s.CrowdingCorrected))
		}
	}
	for _, s := range lc.Segments {
		if !math.IsNaN(s.Contamination) {
			contamination = append(contamination, s.Contamination)
		}
	}
	sort.Float64s(contamination)
	return band, corrected, contamination, nil
}

// crowding describes a segment's crowding state for messages.
func crowding(corrected bool) string {
	if corrected {
		return "corrected for crowding"
	}
	return "not corrected for crowding"
}
