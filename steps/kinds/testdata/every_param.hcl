# Every parameter of every kind written out, most at a value other than its default, so that
# the step-key golden test covers the key encoding of each parameter type. Not an analysis:
# the values are chosen to decode, not to make sense together.

analysis "every-param" {
  seed = 7
}

photometry "full" {
  files              = ["fw3318.csv"]
  columns            = { time = "BJD_TDB", flux = "Flux", error = "Flux_Err" }
  time_scale         = "BJD_TDB"
  time_zero          = 2460000
  exposure           = "29.4 min"
  band               = "survey-red"
  flag_mask          = 7
  crowding_corrected = true
  contamination      = 0.02
}

detrend "full" {
  light_curve       = photometry.full
  estimator         = "biweight"
  degree            = 1
  span              = "12 h"
  knot_spacing      = "0.75 d"
  biweight_c        = 6
  flare_sigma       = 4
  split_at_gap      = "0.4 d"
  min_window_points = 7
  mask_factor       = 2
  mask_count        = 1
}

search "full" {
  light_curve   = detrend.full
  periods       = ["1 d", "12 d"]
  star_density  = "5 g/cm3"
  oversampling  = 4
  max_signals   = 2
  sde_threshold = 8
  min_snr       = 6
  mask_factor   = 2.5
}

detrend "masked" {
  light_curve = detrend.full
  mask        = search.full
}

catalogue "nearby" {
  file = "nearby_stars.csv"
}

companions "imaging" {
  file    = ["fw3318_imaging.csv"]
  columns = { dmag = "dmag" }
}

star "dwarf" {
  method              = "cool-dwarf"
  row                 = catalogue.nearby["FW-3318"]
  companions          = companions.imaging
  parallax            = "40.1 ± 0.1 mas"
  ks                  = "8.62 ± 0.02 mag"
  j                   = "9.40 ± 0.02 mag"
  teff                = "3400 ± 70 K"
  feh                 = "0.1 ± 0.1 dex"
  allow_extrapolation = true
  relation_scatter    = false
  draws               = 5000
}

star "given" {
  method     = "given"
  radius     = "0.39 ± 0.01 R_sun"
  mass       = "0.40 ± 0.02 M_sun"
  teff       = "3400 ± 70 K"
  distance   = "25 ± 0.5 pc"
  v          = "13.1 ± 0.05 mag"
}

star "bolometric" {
  method     = "stefan-boltzmann"
  fbol       = "1e-10 ± 1e-12 W/m2"
  parallax   = "40.1 ± 0.1 mas"
  teff       = "3400 ± 70 K"
  logg       = "4.85 ± 0.05 dex"
}

star "luminous" {
  method     = "stefan-boltzmann"
  mass       = "0.40 ± 0.02 M_sun"
  luminosity = "0.02 ± 0.002 L_sun"
  distance   = "25 ± 0.5 pc"
  teff       = "3400 ± 70 K"
}

star "transfer" {
  method               = "benchmark"
  benchmark_radius     = "0.40 ± 0.004 R_sun"
  benchmark_mass       = "0.41 ± 0.01 M_sun"
  benchmark_abs_k      = "6.0 ± 0.02 mag"
  delta_abs_k          = "0.3 ± 0.03 mag"
  benchmark_teff       = "3450 ± 50 K"
  delta_teff           = "-40 ± 30 K"
  transfer_uncertainty = 0.08
}

dilution "full" {
  light_curve   = photometry.full
  companions    = companions.imaging
  star          = star.dwarf
  draws         = 3000
  band_relation = { from = "Ks", to = "survey-red", slope = "1.1", offset = "0.1", scatter = "0.05", source = "invented for this fixture" }
}

fit "full" {
  light_curve     = detrend.masked
  signals         = search.full
  planets         = 1
  max_steps       = 500
  ensembles       = 3
  window          = 3
  supersample     = false
  jitter          = false
  inflate_by_beta = true
  priors          = { "b.b" = "uniform(0, 0.9)" }
  limb_darkening  = { "survey-red" = "u1 = 0.3 ± 0.1, u2 = 0.3 ± 0.1" }
  eccentric       = ["b"]
  star            = star.dwarf
  dilution        = dilution.full
}

derive "full" {
  fit                = fit.full
  star               = star.dwarf
  dilution           = dilution.full
  albedo             = 0.2
  redistribution     = "dayside"
  masses             = { b = "3 ± 1 M_earth" }
  ess_threshold      = 100
  draws              = 4000
  fit_has_star_prior = true
  max_planet_radius  = "1.5 R_jup"
}

vet "full" {
  signals                 = search.full
  light_curve             = detrend.masked
  fit                     = fit.full
  star                    = star.dwarf
  derive                  = derive.full
  odd_even_sigma          = 4
  secondary_false_alarm   = 0.001
  secondary_depth_ratio   = 0.3
  max_albedo              = 1.2
  band_wavelength         = "900 nm"
  grazing_probability     = 0.4
  v_shape_fraction        = 0.3
  density_sigma           = 4
  depth_false_alarm       = 0.001
  ratio_tolerance         = 0.01
  max_planet_radius       = "2.5 R_jup"
  star_period_tolerance   = 0.05
  variability_depth_ratio = 8
}

ephemeris "full" {
  fit     = fit.full
  from    = "2027-01-01"
  to      = "2461420.5"
  planets = ["b"]
  ra      = "285.1234 deg"
  dec     = "-12.5 deg"

  site_latitude  = "-30.2 deg"
  site_longitude = "-70.7 deg"
  site_elevation = "2200 m"
  altitude_limit = "35 deg"
  darkness       = "astronomical"
  baseline       = "1.5 h"
  timing_scatter = "always"
  pm_ra          = "-35.2 mas/yr"
  pm_dec         = "12.8 mas/yr"
  position_epoch = 2016.0
}

ephemeris "written" {
  period   = "3.7185 ± 0.0004 d"
  epoch    = "2460450.9146 ± 0.0005 d"
  duration = "2.4 ± 0.1 h"
  from     = "2460460"
  to       = "2027-06-30"
  planets  = ["c"]
}

completeness "full" {
  light_curve      = photometry.full
  detrend          = detrend.full
  search           = search.full
  star             = star.dwarf
  fit              = fit.full
  planets          = derive.full
  period_range     = ["0.5 d", "20 d"]
  period_cells     = 3
  radius_range     = ["0.8 R_earth", "4 R_earth"]
  radius_cells     = 5
  per_cell         = 12
  window           = 0.25
  full_grid_checks = 6
}
