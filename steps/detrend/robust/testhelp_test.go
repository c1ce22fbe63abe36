package robust

import "dipline/steps/internal/rng"

// noise draws synthetic test data from our own random streams (steps/internal/rng), so
// the test data cannot change with a Go release.
type noise struct{ s *rng.Stream }

func newNoise(seed uint64) *noise { return &noise{s: rng.New(seed)} }

// uniform is in (0, 1).
func (n *noise) uniform() float64 { return n.s.Float64() }

func (n *noise) normal() float64 { return n.s.Normal() }

// cadence294 is the 29.4-min long cadence of a space survey, in days (common practice).
const cadence294 = 29.4 / 1440
