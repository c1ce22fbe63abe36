# Reference values for dipline's local-polynomial trend (steps/detrend/robust/local.go),
# computed by R's own loess (package stats), a general-purpose implementation of Cleveland's
# (1979) robust locally weighted regression:
#
#   loess(y ~ x, span = q/n, degree = d, family = f, surface = "direct",
#         control = loess.control(surface = "direct", iterations = 4))
#
# family "gaussian" is the plain local fit (one pass); "symmetric" adds the biweight
# robustness iterations (four fits in all, R's default). surface = "direct" fits at every
# point exactly, with no interpolation.
#
# loess uses a nearest-neighbour span: each point's window reaches to its q-th nearest
# neighbour. On evenly sampled data without gaps, q = 2k + 1 points make the window in the
# interior exactly +-k cadences, the same as dipline's time window of half-width k
# cadences (points at exactly +-k get zero tricube weight in both). Near the ends loess's
# window stays q points wide while dipline's shrinks to one side, so the two differ there;
# to compare every point, the series is noise-free and exactly linear within 2k points of
# each end: fits of degree 1 and 2 then reproduce it exactly there, so the residuals, their median and
# the robustness weights agree everywhere.
#
# Run:  Rscript testdata/detrend/loess_reference.R > testdata/detrend/loess_reference.csv
# (needs only r-base-core; the first line of the output names the R version used).

n <- 721                                  # one day at a 2-minute cadence
k <- 90                                   # window half-width in cadences: 3 h
cadence <- 2 / 1440                       # days
x <- (0:(n - 1)) * cadence
q <- 2 * k + 1

# The signal: a spotted star's modulation, white noise, one flare and one unmasked dip,
# all inside the interior; an exact line within 2k points of each end.
set.seed(20261204)
line <- 1 + 3e-3 * (x - 0.5)
inner <- seq_len(n) > 2 * k & seq_len(n) <= n - 2 * k
y <- line
y[inner] <- y[inner] + 0.015 * sin(2 * pi * x[inner] / 0.9) + 8e-4 * rnorm(sum(inner))
y[400:406] <- y[400:406] + 0.01           # a flare
y[300:330] <- y[300:330] - 0.002          # a dip

cat(sprintf("# %s\n", R.version.string))
cat("x,y,degree,family,trend\n")
for (d in 1:2) {
  for (f in c("gaussian", "symmetric")) {
    fit <- loess(y ~ x, span = q / n, degree = d, family = f, surface = "direct",
                 control = loess.control(surface = "direct", iterations = 4))
    z <- fitted(fit)
    for (i in seq_len(n)) {
      cat(sprintf("%.17g,%.17g,%d,%s,%.17g\n", x[i], y[i], d, f, z[i]))
    }
  }
}
