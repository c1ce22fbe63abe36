package vet

import (
	"fmt"
	"strings"

	"dipline/steps"
)

// offTarget are the tests whose disagreement says that a signal is not a planet on the
// target from the light curve itself, with the words that say why: none of them rests on
// the fit's shared star. (The density test does, and so does not count: the shared density
// is the one in doubt.)
var offTarget = []struct{ test, why string }{
	{"star_period", "it is at the star's own period"},
	{"odd_even", "its odd and even dips differ"},
	{"secondary", "it shows a secondary eclipse"},
}

// sharedFitTests are the tests whose verdicts rest on the fit's shared stellar density
// and limb darkening: the impact parameter and radius ratio a joint fit gives a planet
// move with them.
var sharedFitTests = map[string]bool{"shape": true, "density": true, "blend": true, "radius": true}

// sharedFitCaveat puts first in the reasons of every fitted signal's tests that rest on
// the fit's star (sharedFitTests), when the fit is a joint fit of several planets with one
// stellar density and one limb darkening, and the vet finds another of its planets not a
// planet on the target (offTarget): that signal's transit pulls the shared density, and
// with it this signal's impact parameter, radius ratio and density. The verdicts are left
// as they are: the caveat says they are not to be trusted yet, not that the planet is
// wrong. It returns a note per signal so qualified.
func (v *vetter) sharedFitCaveat(art *Artifact) []string {
	if v.d.Fit == nil || v.d.Fit.Planets() < 2 || len(art.Signals) != len(v.targets) {
		return nil
	}
	type rejected struct {
		index      int
		name, why  string
		planetName string
	}
	var bad []rejected
	for k, tg := range v.targets {
		if tg.post == nil {
			continue
		}
		var whys []string
		for _, ot := range offTarget {
			for _, t := range art.Signals[k].Tests {
				if t.Name == ot.test && t.Verdict == steps.VerdictDisagree {
					whys = append(whys, ot.why)
				}
			}
		}
		if len(whys) > 0 {
			bad = append(bad, rejected{index: tg.index, name: tg.name, why: strings.Join(whys, "; "), planetName: tg.planet})
		}
	}
	if len(bad) == 0 {
		return nil
	}
	var notes []string
	for k, tg := range v.targets {
		if tg.post == nil {
			continue
		}
		var names, whys []string
		first := len(v.targets)
		for _, b := range bad {
			if b.index == tg.index {
				continue
			}
			names = append(names, b.name)
			whys = append(whys, fmt.Sprintf("%s, planet %s of the fit: %s", b.name, b.planetName, b.why))
			first = min(first, b.index)
		}
		if len(names) == 0 {
			continue
		}
		them, is, a, its, pulls := strings.Join(names, " and "), "is", "a planet", "its transit's shape", "pulls"
		list := strings.Join(whys, "; ")
		if len(names) == 1 {
			list = strings.TrimPrefix(list, names[0]+", ")
		} else {
			is, a, its, pulls = "are", "planets", "their transits' shapes", "pull"
		}
		remedy := "a search that sets " + them + " aside"
		if first > tg.index {
			remedy = fmt.Sprintf("the fit's planets = %d, or %s", first, remedy)
		}
		caveat := fmt.Sprintf("the fit shares one stellar density and limb darkening between %s and %s, which the vet finds %s not %s on the target (%s): %s %s the shared density, so this signal's impact parameter, radius ratio and density are not to be trusted until it is fitted without %s (%s)",
			tg.name, them, is, a, list, its, pulls, them, remedy)
		qualified := false
		for j := range art.Signals[k].Tests {
			t := &art.Signals[k].Tests[j]
			if sharedFitTests[t.Name] && t.Verdict != NotRun {
				t.Reason = caveat + "; as fitted, " + t.Reason
				qualified = true
			}
		}
		if qualified {
			notes = append(notes, tg.name+": "+caveat)
		}
	}
	return notes
}
