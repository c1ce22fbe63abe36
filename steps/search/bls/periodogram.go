package bls

import (
	"math"

	"dipline/steps/internal/parallel"
)

// The box durations scanned at period P run from durShort·T(P) to durLong·T(P), where T(P)
// is the central-transit duration for the stated density (CentralDuration), and never below
// the cadence.
//
// durShort = 0.3 reaches a transit with impact parameter b ≈ 0.95 (duration ∝ √(1−b²),
// Winn 2010) or, at b ≈ 0.9, a star twice as dense as stated (duration ∝ ρ^{-1/3}).
// durLong = 1.75 covers a star three times less dense than stated (×1.44) together with a
// large planet (×(1+k), k ≤ 0.2), or a transit near apoastron of an orbit with e ≈ 0.5.
const (
	durShort = 0.3
	durLong  = 1.75
)

// binsPerShortest is the number of phase bins across the shortest duration at a frequency:
// box edges then fall within a quarter of the shortest duration of the true edges, and a
// box of T(P) (about seven bins) loses at most 7 % of its signal to misalignment.
const binsPerShortest = 2

// freqBlock is the number of consecutive frequencies one parallel block computes. It is
// fixed, so the split of work never depends on the number of workers.
const freqBlock = 256

// The stars the durations were chosen to cover, as their density over the stated one: by
// durLong's reason, one down to CoveredLessDense (a third); by durShort's, one up to
// CoveredDenser (twice), the densest whose chords out to b ≈ 0.9 the shortest box still
// reaches. A test holds them to durShort and durLong.
const (
	CoveredLessDense = 1.0 / 3
	CoveredDenser    = 2.0
)

// ShortestBox and LongestBox are durShort and durLong, for the steps that report the boxes.
const (
	ShortestBox = durShort
	LongestBox  = durLong
)

// DurationRange returns the shortest and longest box durations, in days, that a search
// scans at period p (days) for a star of the given mean density (g/cm³) on data of the
// given cadence (days): durShort to durLong times the central-transit duration
// (CentralDuration), never below the cadence.
func DurationRange(p, density, cadence float64) (lo, hi float64) {
	return durationRange(p, density, cadence)
}

// durationRange returns the shortest and longest box durations scanned at period p.
func durationRange(p, density, cadence float64) (lo, hi float64) {
	t := CentralDuration(p, density)
	lo = math.Max(durShort*t, cadence)
	hi = math.Max(durLong*t, lo)
	return lo, hi
}

// bin accumulates the normalised weight and weighted residual of the points in one phase bin.
type bin struct{ w, s float64 }

// scratch is one block's reusable work space; the hot loops allocate nothing.
type scratch struct {
	bins   [2][]bin
	cw, cs []float64
}

// box is the best dip found at one frequency.
type box struct {
	stat     float64 // s²/(r(1−r)) with normalised weights; the χ² improvement is Σσ⁻² times this
	duration float64 // days
	centre   float64 // time since t0 of one mid-transit, in [0, P)
}

// phaseBins returns the number of phase bins at frequency f for a shortest duration lo and
// the range of box lengths, in bins, for durations lo … hi.
func phaseBins(f, lo, hi float64) (nb, nlo, nhi int) {
	p := 1 / f
	nb = int(math.Ceil(p * binsPerShortest / lo))
	if nb < 2*binsPerShortest {
		nb = 2 * binsPerShortest
	}
	width := p / float64(nb)
	nlo = binsPerShortest
	nhi = int(math.Round(hi / width))
	if nhi < nlo {
		nhi = nlo
	}
	if nhi > nb/2 {
		nhi = nb / 2
	}
	return nb, nlo, nhi
}

// fold adds every point to its phase bin at frequency f. The bin of a point at time t ≥ 0
// is ⌊t·f·nb⌋ − ⌊t·f⌋·nb, computed in integers (faster than taking the fractional phase in
// floating point); since t·f·nb and t·f are rounded separately it may come out as −1 or nb,
// so bins has nb+2 entries, offset by one: bins[1 … nb] are the phase bins, and wrap adds
// bins[0] to bins[nb] and bins[nb+1] to bins[1].
func fold(bins []bin, t, w, wx []float64, f float64, nb int) {
	w = w[:len(t)]
	wx = wx[:len(t)]
	fn := f * float64(nb)
	for i, ti := range t {
		k := int(ti*fn) - int(ti*f)*nb + 1
		bins[k].w += w[i]
		bins[k].s += wx[i]
	}
}

// foldPair is fold at two frequencies in one pass over the points: each point is loaded
// once, and the two accumulations are independent, so a run of points landing in the same
// bin (long periods) stalls only half the work. Each bin receives its points in the same
// order as from fold, so the sums are bit for bit the same.
func foldPair(b1, b2 []bin, t, w, wx []float64, f1, f2 float64, nb1, nb2 int) {
	w = w[:len(t)]
	wx = wx[:len(t)]
	fn1, fn2 := f1*float64(nb1), f2*float64(nb2)
	for i, ti := range t {
		k := int(ti*fn1) - int(ti*f1)*nb1 + 1
		m := int(ti*fn2) - int(ti*f2)*nb2 + 1
		wi, si := w[i], wx[i]
		b1[k].w += wi
		b1[k].s += si
		b2[m].w += wi
		b2[m].s += si
	}
}

// binsFor returns the k-th bin buffer, cleared, with room for nb+2 bins.
func (sc *scratch) binsFor(k, nb int) []bin {
	if cap(sc.bins[k]) < nb+2 {
		sc.bins[k] = make([]bin, nb+2, 2*nb+2)
	}
	b := sc.bins[k][:nb+2]
	clear(b)
	return b
}

// wrap folds the two spill bins of fold back and returns the nb phase bins.
func wrap(all []bin, nb int) []bin {
	all[nb].w += all[0].w
	all[nb].s += all[0].s
	all[1].w += all[nb+1].w
	all[1].s += all[nb+1].s
	return all[1 : nb+1]
}

// best folds the data at frequency f into phase bins and scans them (see scan).
func (sc *scratch) best(p *prepared, f, lo, hi float64) box {
	nb, nlo, nhi := phaseBins(f, lo, hi)
	all := sc.binsFor(0, nb)
	fold(all, p.t, p.w, p.wx, f, nb)
	return sc.scan(p, wrap(all, nb), f, nlo, nhi)
}

// bestPair is best at two frequencies, folded in one pass over the points.
func (sc *scratch) bestPair(p *prepared, f1, lo1, hi1, f2, lo2, hi2 float64) (box, box) {
	nb1, nlo1, nhi1 := phaseBins(f1, lo1, hi1)
	nb2, nlo2, nhi2 := phaseBins(f2, lo2, hi2)
	a1, a2 := sc.binsFor(0, nb1), sc.binsFor(1, nb2)
	foldPair(a1, a2, p.t, p.w, p.wx, f1, f2, nb1, nb2)
	return sc.scan(p, wrap(a1, nb1), f1, nlo1, nhi1), sc.scan(p, wrap(a2, nb2), f2, nlo2, nhi2)
}

// scan finds, over every box position and every length from nlo to nhi bins, the largest
// s²/(r(1−r)) with s < 0 (a dip) and r at least the least in-transit weight, following
// Kovács, Zucker & Mazeh (2002, A&A 391, 369): r and s are the summed normalised weights and
// weighted residuals of the bins inside the box. Boxes may wrap past phase 1.
func (sc *scratch) scan(p *prepared, bins []bin, f float64, nlo, nhi int) box {
	nb := len(bins)
	m := nb + nhi + 1
	if cap(sc.cw) < m {
		sc.cw = make([]float64, m, 2*m)
		sc.cs = make([]float64, m, 2*m)
	}
	cw, cs := sc.cw[:m], sc.cs[:m]
	var aw, as float64
	cw[0], cs[0] = 0, 0
	for k := 0; k < nb; k++ {
		aw += bins[k].w
		as += bins[k].s
		cw[k+1], cs[k+1] = aw, as
	}
	for k := 0; k < nhi; k++ {
		aw += bins[k].w
		as += bins[k].s
		cw[nb+k+1], cs[nb+k+1] = aw, as
	}

	// Compare s²/(r(1−r)) by cross-multiplying, so the scan divides only on improvement.
	bestNum, bestDen := 0.0, 1.0
	bj, bn := -1, 0
	rmin := p.rmin
	for n := nlo; n <= nhi; n++ {
		hw, hs := cw[n:n+nb], cs[n:n+nb]
		lw, ls := cw[:nb], cs[:nb]
		for j := range hw {
			r := hw[j] - lw[j]
			s := hs[j] - ls[j]
			den := r - r*r
			if s*s*bestDen > bestNum*den && s < 0 && r >= rmin {
				bestNum, bestDen = s*s, den
				bj, bn = j, n
			}
		}
	}
	if bj < 0 || bestDen <= 0 {
		return box{}
	}
	per := 1 / f
	width := per / float64(nb)
	c := (float64(bj) + float64(bn)/2) * width
	if c >= per {
		c -= per
	}
	return box{stat: bestNum / bestDen, duration: float64(bn) * width, centre: c}
}

// spectrum is one pass's periodogram: per frequency, the best box over durations and phases.
type spectrum struct {
	power    []float64 // sqrt(Σσ⁻² · s²/(r(1−r))): the χ² improvement's square root
	duration []float64 // days
	centre   []float64 // time since t0 of one mid-transit
}

// periodogram computes the spectrum over the grid in fixed blocks of freqBlock frequencies;
// every frequency is computed on its own, so the result does not depend on the workers.
func periodogram(p *prepared, g Grid, par parallel.Func, progress func()) spectrum {
	sp := spectrum{power: make([]float64, g.N), duration: make([]float64, g.N), centre: make([]float64, g.N)}
	nblk := (g.N + freqBlock - 1) / freqBlock
	par.Run(nblk, func(b int) {
		var sc scratch
		end := min(g.N, (b+1)*freqBlock)
		put := func(j int, bx box) {
			sp.power[j] = math.Sqrt(p.sumW * bx.stat)
			sp.duration[j] = bx.duration
			sp.centre[j] = bx.centre
		}
		j := b * freqBlock
		for ; j+1 < end; j += 2 {
			f1, f2 := g.Freq(j), g.Freq(j+1)
			lo1, hi1 := durationRange(1/f1, g.Density, p.cadence)
			lo2, hi2 := durationRange(1/f2, g.Density, p.cadence)
			b1, b2 := sc.bestPair(p, f1, lo1, hi1, f2, lo2, hi2)
			put(j, b1)
			put(j+1, b2)
		}
		if j < end {
			f := g.Freq(j)
			lo, hi := durationRange(1/f, g.Density, p.cadence)
			put(j, sc.best(p, f, lo, hi))
		}
		if progress != nil {
			progress()
		}
	})
	return sp
}

// sde returns the signal detection efficiency of the spectrum's highest peak,
// (P_peak − ⟨P⟩)/σ_P with the population standard deviation over all frequencies, and the
// index of that peak (the lowest index on a tie). Because it is invariant to scaling the
// power, it equals the SDE of the signal residue SR (Kovács, Zucker & Mazeh 2002), which is
// the power over sqrt(Σσ⁻²).
func sde(power []float64) (float64, int) {
	if len(power) == 0 {
		return 0, -1
	}
	peak := 0
	for j, v := range power {
		if v > power[peak] {
			peak = j
		}
	}
	mean, sd := meanSD(power)
	if sd == 0 {
		return 0, peak
	}
	return (power[peak] - mean) / sd, peak
}

// meanSD returns the mean and the population standard deviation of x, summed in order.
func meanSD(x []float64) (mean, sd float64) {
	var sum float64
	for _, v := range x {
		sum += v
	}
	mean = sum / float64(len(x))
	var ss float64
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(ss / float64(len(x)))
}
