# FW-3318: an invented cool dwarf with two invented transiting planets (see README.md).
# Run from the repository root:  go run ./cmd/dipline run examples/fernwell/analysis.hcl

analysis "fw-3318" {
  seed = 3318
}

# The light curve: times are BJD_TDB − 2460000 (the file's header says so).
photometry "survey" {
  files     = ["data/fw3318.csv"]
  time_zero = 2460000
  band      = "survey-red"
}

# Remove the spot modulation with a sliding biweight; flares are clipped upward only.
# The window should be about three times the longest transit sought, short enough to
# follow the 2.6-day rotation.
detrend "spots" {
  light_curve = photometry.survey
  span        = "0.3 d" # ≈ 3 × 2.3 h, a central transit at P = 10 d for this density
}

# A first search finds the strongest dips.
search "first" {
  light_curve  = detrend.spots
  star_density = "7 g/cm3" # a dwarf of about 0.45 R☉ and 0.45 M☉
}

# Detrend again with the transits found above left out of the trend, so they keep
# their full depth, and search once more.
detrend "masked" {
  light_curve = photometry.survey
  span        = "0.3 d" # ≈ 3 × 2.3 h, a central transit at P = 10 d for this density
  mask        = search.first
}

search "dips" {
  light_curve  = detrend.masked
  star_density = "7 g/cm3"
}

# The host star. Its parallax and Ks come from the (invented) catalogue of nearby stars;
# only the values this step reads enter its key, so a revision of another star's row, or
# of a column it does not read, re-runs nothing.
catalogue "nearby" {
  file = "data/nearby_stars.csv"
}

# Stars near FW-3318 found by high-resolution imaging (invented).
companions "imaging" {
  file = "data/fw3318_imaging.csv"
}

star "host" {
  method     = "cool-dwarf"
  row        = catalogue.nearby["FW-3318"]
  companions = companions.imaging # the catalogue's Ks is a blend with the companion
}

# How much the companion's light dilutes the transits, per hypothesis on which star the
# planets orbit.
dilution "aperture" {
  light_curve = photometry.survey
  companions  = companions.imaging
  star        = star.host
}

# The transit fit: a limb-darkened model integrated over each point's exposure, sampled by
# two independently seeded ensembles until the kept chains are 50 autocorrelation times
# long (about two minutes here: planet b's impact parameter is poorly constrained at this
# cadence, so the chains mix slowly, τ ≈ 670 steps). It takes neither the star nor the
# dilution (derive combines them afterwards), so a catalogue revision does not re-run it.
fit "planets" {
  light_curve = detrend.masked
  signals     = search.dips
}

# Radius, orbit, temperature and follow-up metrics per planet: the fit's posterior
# reweighted by the star's density, the dilution applied to the radius ratio.
derive "planets" {
  fit      = fit.planets
  star     = star.host
  dilution = dilution.aperture
}
