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

# Remove the spot modulation with a robust local quadratic in a sliding window; flares are
# clipped upward only. The window is chosen from the light curve: the run prints the choice
# and what it weighed (here 0.71 d: wider windows keep more of a transit but leave more of
# the 2.6-day rotation behind).
detrend "spots" {
  light_curve = photometry.survey
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
  mask        = search.first # with the transits masked, the widest window of negligible bias
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
# long (about twenty seconds here). It takes neither the star nor the dilution (derive
# combines them afterwards), so a catalogue revision does not re-run it.
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

# Test both signals against what else could make them: odd and even depths, a secondary
# eclipse, the shape, the star's density against the transits', the faintest blended star
# that could mimic them, period ratios, the star's own periods, the radius. Each test says
# whether the data agree, give a caution or disagree. Vetting supports, and does not
# replace, a validation of the planets.
vet "planets" {
  signals     = search.dips
  light_curve = detrend.masked
  fit         = fit.planets
  star        = star.host
  derive      = derive.planets
}

# The next transits from an invented observatory over the season after the data (early
# 2025, when the star is up at night): each with its error from the fit's posterior (growing
# with the number of orbits since the data), whether the whole transit and an hour of
# baseline on each side fall in a dark night with the star at least 30° up, and the nights
# holding two whole transits (one, this season: b and c three hours apart). A linear
# ephemeris ignores timing variations; the observatory's rules and the observer's
# judgement come first.
ephemeris "next" {
  fit            = fit.planets
  from           = "2025-01-01"
  to             = "2025-04-30"
  ra             = "157.38412 deg" # FW-3318, from the catalogue of nearby stars
  dec            = "23.91775 deg"
  site_latitude  = "31.6 deg"
  site_longitude = "61.4 deg"
  site_elevation = "2300 m"
}

# How many planets like these the search would have found. Planets are injected into the
# raw light curve over a grid of periods and radii (drawn from the seed), each copy is
# detrended and searched with the settings of the steps named here (not a copy of them),
# and the map gives the share recovered per cell with the transit probability. b and c
# are placed on it, with the planets per star they imply for this one star. Each
# injection is kept in the store, so a larger per_cell makes only the new ones. Each copy
# is searched over periods near its planet's; 50 of them are also searched over the whole
# range, to measure what that window changes.
completeness "reach" {
  light_curve  = photometry.survey
  detrend      = detrend.spots # unmasked: an injected planet is not known in advance
  search       = search.dips
  star         = star.host
  fit          = fit.planets
  planets      = derive.planets
  period_range = ["1 d", "20 d"]
  radius_range = ["0.6 R_earth", "2.4 R_earth"]
  per_cell     = 20

  full_grid_checks = 50
}
