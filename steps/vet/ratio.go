package vet

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
)

// The commensurabilities looked for, each with its reason.
const (
	// maxHarmonic is the largest n of the harmonics n·P and P/n: a search's aliases and a
	// binary's half and double periods are at n = 2 and 3, and a window function's
	// aliases rarely beyond; at a tolerance of 0.5 % an unrelated pair falls within n up
	// to 10 by chance with a probability of about 2·0.005·n, 10 % at most.
	maxHarmonic = 10
	// maxFraction bounds p and q of the non-integer ratios p/q (3/2, 5/3 …): small-integer
	// aliases and the resonances near which real planets also sit.
	maxFraction = 5
)

// relKind is how two periods relate.
type relKind int

const (
	relNone     relKind = iota
	relSame             // equal periods
	relHarmonic         // n·P or P/n, n ≥ 2
	relFraction         // p/q with p, q ≥ 2
)

// relation is the ratio of two periods and the commensurability it is near.
type relation struct {
	kind  relKind
	p, q  int     // ratio ≈ p/q
	ratio float64 // this period over the other's
	tol   float64 // relative tolerance used
}

// classify relates tg's period to o's: the commensurability p/q with the smallest relative
// offset |ratio·q/p − 1| within the tolerance, simpler ones first on a tie.
func (v *vetter) classify(tg, o *target) (relation, bool) {
	r := tg.eph.Period / o.eph.Period
	rel := relation{ratio: r, tol: v.periodTolerance(math.Max(tg.eph.Duration, o.eph.Duration))}
	best := math.Inf(1)
	try := func(p, q int) {
		off := math.Abs(r*float64(q)/float64(p) - 1)
		if off <= rel.tol && off < best {
			best, rel.p, rel.q = off, p, q
		}
	}
	for n := 1; n <= maxHarmonic; n++ {
		try(n, 1)
		if n > 1 {
			try(1, n)
		}
	}
	for p := 2; p <= maxFraction; p++ {
		for q := 2; q <= maxFraction; q++ {
			if p != q && gcd(p, q) == 1 {
				try(p, q)
			}
		}
	}
	switch {
	case math.IsInf(best, 1):
		rel.kind = relNone
	case rel.p == 1 && rel.q == 1:
		rel.kind = relSame
	case rel.p == 1 || rel.q == 1:
		rel.kind = relHarmonic
	default:
		rel.kind = relFraction
	}
	return rel, rel.kind != relNone
}

// severity orders the relations for the verdict.
func severity(k relKind) int {
	switch k {
	case relSame:
		return 2
	case relHarmonic, relFraction:
		return 1
	}
	return 0
}

// times writes the ratio p/q in words: "2 times", "1/3 of", "3/2 of".
func times(p, q int) string {
	if q == 1 {
		return fmt.Sprintf("%d times", p)
	}
	return fmt.Sprintf("%d/%d of", p, q)
}

func gcd(a, b int) int {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

// alignment says where the dips of the longer-period signal fall on the shorter one's
// train, for a harmonic: on them, half-way between, or at some phase.
func alignment(long, short *target) string {
	x := (long.eph.Epoch - short.eph.Epoch) / short.eph.Period
	frac := x - math.Round(x)
	dur := math.Max(long.eph.Duration, short.eph.Duration)
	switch {
	case math.Abs(frac)*short.eph.Period < dur:
		return fmt.Sprintf("%s's dips fall on %s's", long.name, short.name)
	case math.Abs(0.5-math.Abs(frac))*short.eph.Period < dur:
		return fmt.Sprintf("%s's dips fall half-way between %s's", long.name, short.name)
	}
	return fmt.Sprintf("%s's dips fall at phase %.2f of %s's", long.name, math.Mod(frac+1, 1), short.name)
}

// periodRatio relates this signal's period to every other's. Its rule: the same period
// disagrees (two dips on one period are one body's, or a binary's two eclipses; two
// planets cannot share an orbit's period save in rare co-orbital configurations); a
// harmonic (n·P or P/n) or a small-integer ratio p/q is a caution (an alias, a binary's
// half or double period, a periodic systematic, or planets near a resonance); anything
// else agrees.
func (v *vetter) periodRatio(tg *target) Test {
	const name = "period_ratio"
	if len(v.targets) < 2 {
		return notRun(name, "the search found one signal; there is no other period to compare")
	}
	pre := tg.name + "." + name + "."
	tol := 0.0
	t := Test{Name: name, Verdict: steps.VerdictAgree}
	var notes []string
	worst := 0 // 2 the same period, 1 another commensurability, 0 none
	for _, o := range v.targets {
		if o == tg {
			continue
		}
		rel, near := v.classify(tg, o)
		tol = math.Max(tol, rel.tol)
		t.Figures = append(t.Figures, steps.Figure{Name: pre + o.name, Value: rel.ratio,
			Doc: fmt.Sprintf("this signal's period over %s's", o.name)})
		if !near {
			continue
		}
		worst = max(worst, severity(rel.kind))
		long, short := tg, o
		if rel.ratio < 1 {
			long, short = o, tg
		}
		off := 100 * math.Abs(rel.ratio*float64(rel.q)/float64(rel.p)-1)
		switch rel.kind {
		case relSame:
			x := (o.eph.Epoch - tg.eph.Epoch) / tg.eph.Period
			notes = append(notes, fmt.Sprintf("%s has the same period (ratio %.5f, %.2g %% off) with its dips at phase %.2f of this one's: one body's transit and occultation, or a binary's two eclipses",
				o.name, rel.ratio, off, math.Mod(x-math.Floor(x), 1)))
		case relHarmonic:
			notes = append(notes, fmt.Sprintf("the period is %s %s's (ratio %.5f, %.2g %% off): a harmonic, and %s; one may be an alias of the other, or a binary's second eclipse",
				times(rel.p, rel.q), o.name, rel.ratio, off, alignment(long, short)))
		default:
			notes = append(notes, fmt.Sprintf("the period is %s %s's (ratio %.5f, %.2g %% off): an alias of a common period, or planets near a resonance",
				times(rel.p, rel.q), o.name, rel.ratio, off))
		}
	}
	t.Figures = append(t.Figures, steps.Figure{Name: pre + "tolerance", Value: tol,
		Doc: "relative tolerance of a commensurability: the longer duration over the baseline (a period off by less moves the transits by under one duration across the data), unless ratio_tolerance is set"})
	t.Threshold = fmt.Sprintf("ratios within %.2g %% of n or 1/n (n ≤ %d) or of p/q (p, q ≤ %d): the same period disagrees, the others give a caution; tolerance the longer duration over the baseline (a period off by less moves the transits by under one duration across the data)",
		100*tol, maxHarmonic, maxFraction)
	switch worst {
	case 2:
		t.Verdict = steps.VerdictDisagree
	case 1:
		t.Verdict = steps.VerdictCaution
	}
	if len(notes) == 0 {
		t.Reason = fmt.Sprintf("no other signal's period is commensurate with this one's within %.2g %%", 100*tol)
		return t
	}
	t.Reason = strings.Join(notes, "; ")
	return t
}
