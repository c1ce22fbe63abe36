// Package bls is the numerical core of the search step: a periodic transit search by box
// least squares (Kovács, Zucker & Mazeh 2002, A&A 391, 369) on a frequency grid uniform in
// f^{1/3} (Ofir 2014, A&A 561, A138), with box durations bounded by the star's mean density.
//
// Search runs it end to end. Each pass computes a periodogram — per frequency the best box
// over durations and phases — by one of two methods over the same grid (passes.go): the
// fast fold (fastfold.go), which bins the light curve evenly in time and folds all trial
// periods between p and p+1 bins at once by Staelin's (1969) algorithm, or fold-and-scan
// (periodogram.go), which folds every point at every frequency and suits sparse, uneven
// data; the cheaper is taken unless the caller names one. The highest peak is scored by its signal
// detection efficiency (SDE) against the spectrum with its slow trend removed, measured in
// robust standard deviations (sde.go); an accepted peak is refined with the exact, unbinned
// statistic on a zooming local grid (which gives the period's error), its depth, transits
// with data and SNR are measured, it is checked against half and twice its period and
// against being carried by one or two transits (checks.go, with the box models of
// steps/internal/boxmodel), its transits are masked and the search goes on.
//
// It works on plain slices (Series) and knows nothing of workflow files, caches or
// terminals; parallel work goes through a parallel.Func over fixed-size blocks, so the
// result is the same for any number of workers. It does not detrend, fit a limb-darkened
// transit model or vet signals: later steps do.
package bls
