// Package proportion holds the small-number statistics behind completeness and occurrence
// estimates: confidence intervals for a binomial proportion (how many of n injected transits
// a search recovered), confidence limits on a Poisson count (how many planets were found),
// and an occurrence rate by inverse detection efficiency. It knows nothing of workflows,
// grids or configuration; callers pass counts and levels and receive plain numbers. The
// entry points are Jeffreys, Wilson, PoissonLimits and InverseEfficiency.
//
// Which binomial interval to use: Brown, Cai & DasGupta (2001, Statistical Science 16, 101)
// recommend the Wilson or the Jeffreys interval for small n, where the textbook normal
// interval covers far less often than it claims. Callers in dipline should default to
// Jeffreys, because a recovery fraction of 0 or 1 is common in a completeness grid and
// there the Jeffreys interval ends exactly at 0 or 1 while keeping equal tails, whereas
// the Wilson interval's coverage dips well below nominal for true fractions near 0 or 1.
package proportion
