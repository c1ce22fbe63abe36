// Package bls is the numerical core of the search step: a periodic transit search by box
// least squares (Kovács, Zucker & Mazeh 2002, A&A 391, 369) on a frequency grid uniform in
// f^{1/3} (Ofir 2014, A&A 561, A138), with box durations bounded by the star's mean density.
//
// Search runs it end to end: for each pass it folds the points not yet masked into phase
// bins at every grid frequency, scans every box position and duration for the deepest dip
// (the periodogram keeps, per frequency, the best over durations and phases), scores the
// highest peak by its signal detection efficiency (SDE) against the spectrum with its slow
// trend removed, refines an accepted peak with the
// exact, unbinned statistic on a zooming local grid (which gives the period's error), measures
// depth, transits with data and SNR, checks the signal against half and twice its period
// and against being carried by one or two transits (checks.go, with the box models of
// steps/internal/boxmodel), masks the transits and searches again.
//
// It works on plain slices (Series) and knows nothing of workflow files, caches or
// terminals; parallel work goes through a parallel.Func over fixed-size frequency
// blocks, so the result is the same for any number of workers. It does not detrend, fit a
// limb-darkened transit model or vet signals: later steps do.
package bls
