package vet

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"dipline/steps"
	"dipline/steps/internal/boxmodel"
)

// groupDepth is the box depth of one set of segments.
type groupDepth struct {
	label        string
	depth, sigma float64
}

// groupDepths fits the box depth of each set of segments on its own (its own level, so
// that the depths are independent), skipping sets with no point in a box or none outside.
func (v *vetter) groupDepths(tg *target, w []float64, scale float64, sets [][]int, labels []string) []groupDepth {
	var out []groupDepth
	member := make([]int, len(v.d.Light.Segments))
	wg := make([]float64, len(w))
	for g, set := range sets {
		for i := range member {
			member[i] = -1
		}
		for _, s := range set {
			member[s] = g
		}
		for i := range wg {
			wg[i] = 0
			if member[v.seg[i]] == g {
				wg[i] = w[i]
			}
		}
		r := boxmodel.Fit(v.f, wg, 1, func(i int) int {
			if _, in := tg.eph.Inside(v.t[i]); in {
				return 0
			}
			return -1
		})
		if r.Points[0] == 0 || math.IsNaN(r.Depth[0]) {
			continue
		}
		out = append(out, groupDepth{labels[g], r.Depth[0], scale * r.Sigma[0]})
	}
	return out
}

// commonDepth returns the χ² of the depths about their weighted mean, its degrees of
// freedom and the probability of a χ² at least as large if they share one depth.
func commonDepth(gs []groupDepth) (chi2 float64, dof int, p float64) {
	var sw, swd float64
	for _, g := range gs {
		w := 1 / (g.sigma * g.sigma)
		sw += w
		swd += w * g.depth
	}
	mean := swd / sw
	for _, g := range gs {
		d := (g.depth - mean) / g.sigma
		chi2 += d * d
	}
	dof = len(gs) - 1
	return chi2, dof, distuv.ChiSquared{K: float64(dof)}.Survival(chi2)
}

// depth tests whether the segments, and the bands when there are several, share one
// depth: χ² of the independent box depths about their weighted mean. Its rule: a caution
// when the probability of so large a χ² falls below DepthAlarm. Between bands a different
// depth points to a blend of stars of different colour; between segments, to crowding
// that differs between them or to systematics. Never "disagree": a planet's own box depth
// differs a little between bands through limb darkening, which a precise light curve can
// resolve.
func (v *vetter) depth(tg *target, w []float64, scale float64) Test {
	const name = "depth"
	segs := v.d.Light.Segments
	sets := make([][]int, len(segs))
	labels := make([]string, len(segs))
	bandOf := map[string][]int{}
	var bands []string
	for i, s := range segs {
		sets[i], labels[i] = []int{i}, s.ID
		if s.Band != "" {
			if _, seen := bandOf[s.Band]; !seen {
				bands = append(bands, s.Band)
			}
			bandOf[s.Band] = append(bandOf[s.Band], i)
		}
	}
	bySeg := v.groupDepths(tg, w, scale, sets, labels)
	var byBand []groupDepth
	if len(bands) >= 2 {
		bsets := make([][]int, len(bands))
		for j, b := range bands {
			bsets[j] = bandOf[b]
		}
		byBand = v.groupDepths(tg, w, scale, bsets, bands)
	}
	if len(bySeg) < 2 && len(byBand) < 2 {
		return notRun(name, fmt.Sprintf("transits have data in %d segment(s), and the light curve names %d band(s); two segments or two bands are needed", len(bySeg), len(bands)))
	}
	pre := tg.name + "." + name + "."
	t := Test{Name: name, Verdict: steps.VerdictAgree,
		Threshold: fmt.Sprintf("a caution when the χ² of one common depth has p < %.3g (about two-sided 3 σ; common practice); never a disagreement, as a planet's box depth differs a little between bands through limb darkening", v.o.DepthAlarm)}
	var reasons, alarms []string
	judge := func(what string, gs []groupDepth) {
		if len(gs) < 2 {
			return
		}
		chi2, dof, p := commonDepth(gs)
		t.Figures = append(t.Figures,
			steps.Figure{Name: pre + what + "_chi2", Value: chi2, Doc: fmt.Sprintf("χ² of the %d %s' box depths about their weighted mean, %d degrees of freedom", len(gs), what, dof)},
			steps.Figure{Name: pre + what + "_p_value", Value: p, Doc: fmt.Sprintf("probability of a χ² at least this large if the %s share one depth", what)})
		for _, g := range gs {
			t.Figures = append(t.Figures, steps.Figure{Name: pre + strings.TrimSuffix(what, "s") + "_" + steps.FigureKey(g.label), Value: g.depth * 1e6, Sigma: g.sigma * 1e6, Unit: "ppm",
				Doc: fmt.Sprintf("box depth in %s %q alone", strings.TrimSuffix(what, "s"), g.label)})
		}
		line := fmt.Sprintf("%d %s: χ² = %.1f for %d degrees of freedom, p = %.2g", len(gs), what, chi2, dof, p)
		reasons = append(reasons, line)
		if p < v.o.DepthAlarm {
			alarms = append(alarms, what)
		}
	}
	judge("segments", bySeg)
	judge("bands", byBand)
	switch {
	case slices.Contains(alarms, "bands"):
		t.Verdict = steps.VerdictCaution
		t.Reason = "the depth differs between bands, as a blend of stars of different colour makes it (" + strings.Join(reasons, "; ") + ")"
	case slices.Contains(alarms, "segments"):
		t.Verdict = steps.VerdictCaution
		t.Reason = "the depth differs between segments: crowding that differs between them, or a systematic (" + strings.Join(reasons, "; ") + ")"
	default:
		t.Reason = "one depth fits them all (" + strings.Join(reasons, "; ") + ")"
	}
	return t
}
