package astro

import "math"

// FluxRatio returns a companion's flux relative to the target, F_i/F_t = 10^{−0.4 Δm},
// for the magnitude difference dm = m_i − m_t in the photometric band of the light curve
// (Pogson's ratio, common practice).
func FluxRatio(dm float64) (float64, error) {
	if !finite(dm) {
		return 0, domainf("magnitude difference %g must be finite", dm)
	}
	return math.Pow(10, -0.4*dm), nil
}

// totalOverTarget returns F_tot/F_t = 1 + Σ 10^{−0.4 Δm_i}.
func totalOverTarget(dms []float64) (float64, error) {
	s := 1.0
	for _, dm := range dms {
		r, err := FluxRatio(dm)
		if err != nil {
			return 0, err
		}
		s += r
	}
	return s, nil
}

// UndilutedDepth returns the transit depth the target alone would show,
// δ_true = δ_obs (1 + Σ 10^{−0.4 Δm_i}), for an observed depth and the magnitude
// differences dms (companion minus target, light-curve band) of every star in the aperture
// (common practice, from memory).
func UndilutedDepth(observed float64, dms []float64) (float64, error) {
	if !finite(observed) {
		return 0, domainf("depth %g must be finite", observed)
	}
	s, err := totalOverTarget(dms)
	return observed * s, err
}

// TargetRadiusCorrection returns X_R = R_p,true/R_p,obs = √(F_tot/F_t) for a planet
// transiting the target, with dms the magnitude differences (companion minus target, in
// the light-curve band) of the companions blended with it (Ciardi et al. 2015, ApJ 805,
// 16; form from memory).
func TargetRadiusCorrection(dms []float64) (float64, error) {
	s, err := totalOverTarget(dms)
	return math.Sqrt(s), err
}

// CompanionRadiusCorrection returns X_R for a planet transiting companion j instead:
// X_R = (R_j/R_t) √(F_tot/F_j), with F_tot/F_j = (1 + Σ_i 10^{−0.4 Δm_i}) · 10^{+0.4 Δm_j},
// where radiusRatio = R_j/R_t is the companion's radius over the target's and dms are as in
// TargetRadiusCorrection (Ciardi et al. 2015, ApJ 805, 16; form from memory). The result
// multiplies the planet radius that was derived assuming the target's radius.
func CompanionRadiusCorrection(dms []float64, j int, radiusRatio float64) (float64, error) {
	if j < 0 || j >= len(dms) {
		return 0, domainf("companion index %d outside the %d companions", j, len(dms))
	}
	if !finite(radiusRatio) || radiusRatio <= 0 {
		return 0, domainf("companion radius ratio %g must be positive", radiusRatio)
	}
	s, err := totalOverTarget(dms)
	if err != nil {
		return 0, err
	}
	return radiusRatio * math.Sqrt(s*math.Pow(10, 0.4*dms[j])), nil
}
