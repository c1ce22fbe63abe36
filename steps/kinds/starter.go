package kinds

import "fmt"

// Starter returns the text of a starter workflow for one light-curve file: data is the
// file's path relative to the workflow (slashes), out the workflow's own path (for the
// comment saying how to run it), name the analysis label and seed its seed. The workflow
// uses the kinds of this build, so it lives beside their list.
func Starter(data, out, name string, seed int) string {
	return fmt.Sprintf(starterTemplate, data, out, name, seed)
}

// starterTemplate is the workflow `dipline starter` writes: photometry, a first detrend and
// search, a detrend with the transits found left out of the trend, a second search, and a
// vet step that tests every signal; the fit, star and derive steps that follow are sketched
// in comments. Every setting it leaves out is derived from the data and printed when the
// workflow runs.
const starterTemplate = `# A starter workflow for %[1]s, written by dipline starter.
# Run it with:  dipline run %[2]s
# Every setting left out takes its default or is derived from the data; the run prints each
# derived value. 'dipline kinds' lists every attribute.

analysis %[3]q {
  seed = %[4]d
}

photometry "lc" {
  files = [%[1]q]
  # Text files: the Julian date of time 0, unless the times are full Julian dates.
  # time_zero = 2460000
}

# Remove the star's own variability with a robust local quadratic in a sliding window. The
# window is chosen from the light curve: the run prints the choice and what it weighed (how
# much of a transit each window keeps against the bias the star's variability leaves).
detrend "first" {
  light_curve = photometry.lc
}

search "first" {
  light_curve  = detrend.first
  star_density = "1 rho_sun" # the host's mean density bounds the durations searched
}

# Detrend again with the transits found left out of the trend, so that they keep their
# depth, then search again.
detrend "masked" {
  light_curve = photometry.lc
  mask        = search.first
}

search "dips" {
  light_curve  = detrend.masked
  star_density = "1 rho_sun"
}

# Test every signal: odd and even depths, a secondary eclipse, the shape, period ratios, the
# star's own periods. Each test says whether the data agree, give a caution or disagree.
# Vetting supports, and does not replace, a validation of a planet.
vet "dips" {
  signals     = search.dips
  light_curve = detrend.masked
  # fit  = fit.planets  # with a fit, the shape, density and blend tests sharpen
  # star = star.host
}

# What usually follows ('dipline kinds' lists their attributes):
#
# fit "planets" {                       # a limb-darkened transit model, posterior samples
#   light_curve = detrend.masked
#   signals     = search.dips
# }
#
# catalogue "nearby" {                  # a table of stars with an id column
#   file = "stars.csv"
# }
#
# star "host" {                         # radius, mass, density of the host
#   method = "cool-dwarf"
#   row    = catalogue.nearby["YOUR-STAR-ID"]
# }
#
# derive "planets" {                    # radius, orbit, temperature and follow-up metrics
#   fit  = fit.planets
#   star = star.host
# }
`
