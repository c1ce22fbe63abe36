// Package completeness measures how often the workflow's own detrend and box search would
// find a planet of a given period and size around this star, in this light curve: it
// multiplies limb-darkened transits into copies of the raw light curve (Inject), draws the
// planets cell by cell over a period–radius grid from a seed (Plan, Grid), runs the detrend
// and search configurations on each copy and decides whether the planet was found
// (Recover, RunAll), and summarises each cell's recovered fraction with a Jeffreys interval
// and its geometric transit probability (Summarise). A search may be restricted to a
// window of periods around each planet's, its peaks then judged against the noise of the
// full grid, measured once on the light curve without injections.
//
// It holds the numerics only: it knows no HCL, caches nothing and prints nothing; the step
// kind that wires it into a workflow is still to come. Main entry points: Plan and RunAll.
package completeness
