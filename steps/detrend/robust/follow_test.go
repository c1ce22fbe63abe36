package robust

import (
	"math"
	"testing"
)

// What a window leaves of a sinusoid and how wide it must be to keep half of a box dip,
// against the same equivalent kernel built on a finer grid in numpy. Source: python3
// (numpy 1.24, scipy 1.10) via /usr/bin/python3:
//
//	import numpy as np
//	from scipy.optimize import brentq
//	def kern(W, step):
//	    h = W/2; m = int(np.ceil(h/step)) - 1
//	    off = np.arange(-m, m+1)*step; u = off/h
//	    w = (1 - np.abs(u)**3)**3
//	    X = np.vstack([np.ones_like(u), u, u*u]).T
//	    c = np.linalg.solve(X.T @ (w[:, None]*X), [1, 0, 0])
//	    return off, w*(X @ c)
//	def unfollowed(W, P):
//	    off, ell = kern(W, 1e-4); return abs(1 - np.sum(ell*np.cos(2*np.pi*off/P)))
//	def kept(W, D):
//	    off, ell = kern(W, 1e-5); return 1 - np.sum(ell[np.abs(off) < D/2])
//	brentq(lambda W: kept(W, D) - 0.5, D, 10*D, xtol=1e-7)
//
// The tolerances are the grids': ours is coarser (a 400th of the window, a 30th of the dip).
func TestWhatAWindowFollowsAndKeeps(t *testing.T) {
	for _, c := range []struct{ span, period, want float64 }{
		{0.5, 0.35, 0.29547}, {0.77, 0.35, 0.84831}, {2, 2.6, 0.03515}, {0.75, 2.6, 0.0007847},
	} {
		if got := Unfollowed(c.span, c.period, 2); math.Abs(got/c.want-1) > 0.01 {
			t.Errorf("Unfollowed(%g d, %g d) = %.5g, numpy %.5g", c.span, c.period, got, c.want)
		}
	}
	for _, c := range []struct{ d, want float64 }{{2.0 / 24, 0.51357}, {3.0 / 24, 0.77032}} {
		if got := KeepingSpan(c.d, 0.5, 2); math.Abs(got/c.want-1) > 0.005 {
			t.Errorf("KeepingSpan(%.3g h) = %.5g d, numpy %.5g", c.d*24, got, c.want)
		}
	}
}
