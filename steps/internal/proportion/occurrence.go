package proportion

import "fmt"

// lowEfficiency is the detection efficiency below which InverseEfficiency attaches its
// caution: a planet found at efficiency below 0.1 counts for more than ten planets, so one
// chance detection in a poorly searched region outweighs ten clear ones (common practice).
const lowEfficiency = 0.1

// lowEfficiencyCaution is the text InverseEfficiency returns when an efficiency is low.
const lowEfficiencyCaution = "caution: at least one planet was detected with efficiency below 0.1. " +
	"Inverse detection efficiency is biased where completeness is low " +
	"(Foreman-Mackey, Hogg & Morton 2014, ApJ 795, 64): each such planet stands for more " +
	"than ten, so the rate and its interval rest on few, uncertain weights."

// Occurrence is an occurrence rate estimated by inverse detection efficiency.
type Occurrence struct {
	// Rate is the number of planets per star, f = (1/N*) Σ 1/eff_i.
	Rate float64
	// Limits are Gehrels' limits on the detected count at significance S, each scaled by
	// the mean of 1/eff over the detections and divided by the number of stars.
	Limits Interval
	// Detections is the number of detected planets, n_det.
	Detections int
	// Stars is the number of stars searched, N*.
	Stars int
	// MeanInverseEfficiency is the mean of 1/eff_i over the detections.
	MeanInverseEfficiency float64
	// Caution is empty, or a sentence for the user when any efficiency is below 0.1.
	Caution string
}

// InverseEfficiency estimates an occurrence rate from the detection efficiencies eff of the
// planets detected among nStars stars, each efficiency being the recovery fraction at the
// planet's period and radius times its geometric transit probability. The rate is
// f = (1/N*) Σ 1/eff_i. Its interval takes Gehrels' (1986) single-sided limits at
// significance s on the detected count and multiplies them by the mean 1/eff over N*: the
// count carries the Poisson uncertainty, and the efficiencies are treated as known. With no
// detections there is no efficiency to scale by; use NoDetectionLimit.
func InverseEfficiency(eff []float64, nStars int, s float64) (Occurrence, error) {
	if len(eff) == 0 {
		return Occurrence{}, fmt.Errorf("proportion: no detections; an inverse-efficiency rate needs at least one, and NoDetectionLimit gives the upper limit for none")
	}
	if nStars <= 0 {
		return Occurrence{}, fmt.Errorf("proportion: %d stars searched; give a positive number", nStars)
	}
	sum, low, err := sumInverse(eff)
	if err != nil {
		return Occurrence{}, err
	}
	lim, err := PoissonLimits(len(eff), s)
	if err != nil {
		return Occurrence{}, err
	}
	mean := sum / float64(len(eff))
	stars := float64(nStars)
	occ := Occurrence{
		Rate:                  sum / stars,
		Limits:                Interval{Lower: lim.Lower * mean / stars, Upper: lim.Upper * mean / stars},
		Detections:            len(eff),
		Stars:                 nStars,
		MeanInverseEfficiency: mean,
	}
	if low {
		occ.Caution = lowEfficiencyCaution
	}
	return occ, nil
}

// sumInverse returns Σ 1/eff_i and whether any efficiency is below lowEfficiency.
func sumInverse(eff []float64) (sum float64, low bool, err error) {
	for i, e := range eff {
		if err := checkEfficiency(e); err != nil {
			return 0, false, fmt.Errorf("detection %d: %w", i+1, err)
		}
		sum += 1 / e
		low = low || e < lowEfficiency
	}
	return sum, low, nil
}

// NoDetectionLimit returns the upper limit on the occurrence rate when nothing was detected
// among nStars stars searched with mean detection efficiency eff: Gehrels' (1986) upper
// limit on a count of zero at significance s, divided by eff·N*.
func NoDetectionLimit(eff float64, nStars int, s float64) (float64, error) {
	if err := checkEfficiency(eff); err != nil {
		return 0, err
	}
	if nStars <= 0 {
		return 0, fmt.Errorf("proportion: %d stars searched; give a positive number", nStars)
	}
	lim, err := PoissonLimits(0, s)
	if err != nil {
		return 0, err
	}
	return lim.Upper / (eff * float64(nStars)), nil
}

// checkEfficiency reports whether e is a detection efficiency in (0, 1].
func checkEfficiency(e float64) error {
	if !(e > 0 && e <= 1) {
		return fmt.Errorf("proportion: detection efficiency %v; give a fraction above 0 and at most 1", e)
	}
	return nil
}
