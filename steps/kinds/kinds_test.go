package kinds

import "testing"

func TestEveryKindRegisters(t *testing.T) {
	// NewRegistry checks every default against its parameter's type, duplicate names and
	// quantities without a dimension; the command line would fail at start-up otherwise.
	reg, err := Registry()
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"photometry", "detrend", "search", "fit"} {
		if reg[name] == nil {
			t.Errorf("no %s kind registered", name)
		}
	}
}
