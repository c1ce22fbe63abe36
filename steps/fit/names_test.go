package fit

import (
	"strings"
	"testing"
)

// Per-transit figures name their epoch without a sign a reader could take for a hyphen:
// the reference transit is transit0, the others transit_after<n> or transit_before<n>.
func TestTransitNamesHoldNoSign(t *testing.T) {
	for _, c := range []struct {
		epoch int64
		want  string
	}{{0, "transit0"}, {3, "transit_after3"}, {-3, "transit_before3"}, {-12, "transit_before12"}, {1, "transit_after1"}} {
		if got := TransitName(c.epoch); got != c.want || strings.Contains(got, "-") {
			t.Errorf("TransitName(%d) = %q, want %q", c.epoch, got, c.want)
		}
	}
}
