package signals

import "testing"

func TestInTransit(t *testing.T) {
	s := Signal{Period: 10, Epoch: 3, Duration: 0.2}
	cases := []struct {
		t, factor float64
		want      bool
	}{
		{3, 1, true}, {3.09, 1, true}, {3.11, 1, false}, {3.11, 1.5, true},
		{23.05, 1, true}, {-6.95, 1, true}, {8, 1, false}, {12.95, 1, true},
	}
	for _, c := range cases {
		if got := s.InTransit(c.t, c.factor); got != c.want {
			t.Errorf("InTransit(%v, %v) = %v, want %v", c.t, c.factor, got, c.want)
		}
	}
}
