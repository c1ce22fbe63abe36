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
// The completeness step kind (kind.go) wires this into a workflow: it takes the raw light
// curve, the settings of the workflow's own detrend and search steps (not a copy of them),
// and optionally the star, the fit and the derived planets; it keeps each injection's
// outcome as a piece of its work (steps.Parts), so a larger grid or more injections per
// cell makes only the new ones; and it places the workflow's planets on the map with the
// occurrence they imply by inverse detection efficiency (Gehrels' limits). The numerics
// know no HCL, cache nothing and print nothing. Main entry points: New (the kind), Plan
// and RunAll (the numerics).
package completeness
