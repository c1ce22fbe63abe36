// Package kinds lists the step kinds this build of dipline knows. The engine takes the
// registry as a parameter; only the command line (and tests that want every kind) import
// this package.
package kinds

import (
	"dipline/steps"
	"dipline/steps/companions"
	"dipline/steps/completeness"
	"dipline/steps/derive"
	"dipline/steps/detrend"
	"dipline/steps/dilution"
	"dipline/steps/ephemeris"
	"dipline/steps/fit"
	"dipline/steps/photometry"
	"dipline/steps/search"
	"dipline/steps/star"
	"dipline/steps/vet"
)

// Registry returns every step kind, checked.
func Registry() (steps.Registry, error) {
	return steps.NewRegistry(photometry.New(), detrend.New(), search.New(), fit.New(),
		star.New(), companions.New(), dilution.New(), derive.New(), vet.New(),
		ephemeris.New(), completeness.New())
}
