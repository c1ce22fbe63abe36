package ephemeris

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/sky"
)

// Present shows first, when a site is given, a timeline of the nights with a transit seen
// from there, drawn and as a table; then per planet a table of the predicted transits,
// written as data too ("transits_b").
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok {
		return steps.Presentation{}, fmt.Errorf("ephemeris: cannot present %T", art)
	}
	var pr steps.Presentation
	if a.Site {
		pr.Panels = append(pr.Panels, steps.Panel{
			Title:   "Nights at the site",
			Caption: timelineCaption(a),
			Plots:   []*steps.Plot{timelinePlot(a)},
		}, steps.Panel{
			Title:   "Nights at the site, transit by transit",
			Caption: "The nights of the timeline above, each transit seen with its window and contacts in UTC.",
			Table:   timeline(a),
		})
		pr.Data = append(pr.Data, nightsData(a))
	}
	for i := range a.Planets {
		p := &a.Planets[i]
		pr.Panels = append(pr.Panels, steps.Panel{
			Title:   "Predicted transits of planet " + p.Name,
			Caption: caption(a, p),
			Table:   table(a, p),
		})
		pr.Data = append(pr.Data, data(p))
	}
	return pr, nil
}

// timelineCaption says what the timeline shows and by which rules.
func timelineCaption(a *Artifact) string {
	return fmt.Sprintf("Each row is a night with a transit seen, dated by its evening (×2: two or more transits observable). "+
		"The first bar is the time the site sees the target; over it each transit's window, from the baseline before to the baseline after, "+
		"with a tick at mid-transit. Hours run from local mean midnight (UTC plus the longitude's hours). "+
		"Nights at latitude %.4f°, longitude %.4f° (east positive), %.0f m: "+
		"a transit is observable when its whole window — ingress less the baseline and one σ of the mid-time, to egress plus both — "+
		"is dark (%s) with the target at least %.4g° high, tested every 5 minutes and at both ends; otherwise what is seen is named. "+
		"A night runs from local mean noon to the next and is named by the date of its evening. "+
		"This is a guide for planning: the observatory's rules and the observer's judgement come first.",
		a.SiteLat, a.SiteLon, a.SiteHeight, sky.Darkness(a.Darkness), a.AltitudeLimit)
}

// event is one transit seen on a night.
type event struct {
	planet string
	epoch  int64
	w      Window
}

// doubleSet returns the nights holding two or more observable transits, as a set.
func (a *Artifact) doubleSet() map[int64]bool {
	set := make(map[int64]bool, len(a.Doubles))
	for _, n := range a.Doubles {
		set[n] = true
	}
	return set
}

// maxDateTicks is the most nights a timeline labels with their dates; beyond it every k-th
// night is labelled, so the labels do not run into one another.
const maxDateTicks = 24

// hoursFromMidnight returns a UTC Julian date as hours from the local mean midnight of a
// night (see NightNumber) at east longitude lon.
func hoursFromMidnight(utc float64, night int64, lon float64) float64 {
	return 24 * (utc - (float64(night) + 0.5 - normLon(lon)/360))
}

// timelinePlot draws the nights with a transit seen: one row per night, the latest lowest,
// labelled by its date ("×2" when it holds two or more observable transits), with the time
// the site sees the target behind each transit's window, per planet and outcome, and a tick
// at each mid-transit. Hours run from local mean midnight at the site.
func timelinePlot(a *Artifact) *steps.Plot {
	row := map[int64]int{}
	up := steps.Layer{Label: "target seen (dark, above the altitude limit)", Style: steps.Spans}
	pl := &steps.Plot{Title: "Transits seen from the site", XLabel: "hours from local mean midnight",
		YLabel: "night of", Data: "nights"}
	double := a.doubleSet()
	every := (len(a.Nights) + maxDateTicks - 1) / maxDateTicks
	for i, n := range a.Nights {
		row[n.Night] = i
		y := -float64(i)
		up.X, up.Y = append(up.X, math.NaN()), append(up.Y, y)
		up.XLo = append(up.XLo, hoursFromMidnight(n.Begin, n.Night, a.SiteLon))
		up.XHi = append(up.XHi, hoursFromMidnight(n.End, n.Night, a.SiteLon))
		if i%every == 0 || double[n.Night] {
			yy, m, d := NightDate(n.Night)
			label := fmt.Sprintf("%04d-%02d-%02d", yy, m, d)
			if double[n.Night] {
				label += " ×2"
			}
			pl.YTicks = append(pl.YTicks, steps.Mark{Value: y, Label: label})
		}
	}
	pl.Layers = append(pl.Layers, up)
	for i := range a.Planets {
		p := &a.Planets[i]
		for _, seen := range []Seen{seenObservable, seenPartly} {
			l := windowLayer(a, p, seen, row)
			if len(l.X) > 0 {
				pl.Layers = append(pl.Layers, l)
			}
		}
	}
	return pl
}

// windowLayer draws the windows of one planet's transits with one outcome, each on its
// night's row.
func windowLayer(a *Artifact, p *Planet, seen Seen, row map[int64]int) steps.Layer {
	what := "observable"
	if seen == seenPartly {
		what = "partly seen"
	}
	l := steps.Layer{Label: "planet " + p.Name + ", " + what, Style: steps.Spans}
	for _, w := range p.Windows {
		i, ok := row[w.Night]
		if w.Seen != seen || !ok {
			continue
		}
		l.X = append(l.X, hoursFromMidnight(w.Mid, w.Night, a.SiteLon))
		l.Y = append(l.Y, -float64(i))
		l.XLo = append(l.XLo, hoursFromMidnight(w.Start, w.Night, a.SiteLon))
		l.XHi = append(l.XHi, hoursFromMidnight(w.End, w.Night, a.SiteLon))
	}
	return l
}

// nightsData writes the timeline's nights: the night's Julian day number (its evening's
// date at local mean noon), when the site sees the target in UTC and in hours from local
// mean midnight, and whether two or more transits are observable.
func nightsData(a *Artifact) steps.Data {
	n := len(a.Nights)
	col := func(name string) steps.Series { return steps.Series{Name: name, Values: make([]float64, n)} }
	cols := []steps.Series{col("night_jd"), col("seen_from_jd_utc"), col("seen_to_jd_utc"),
		col("seen_from_h"), col("seen_to_h"), col("two_or_more_observable")}
	double := a.doubleSet()
	for i, s := range a.Nights {
		two := 0.0
		if double[s.Night] {
			two = 1
		}
		for k, v := range []float64{float64(s.Night), s.Begin, s.End,
			hoursFromMidnight(s.Begin, s.Night, a.SiteLon), hoursFromMidnight(s.End, s.Night, a.SiteLon), two} {
			cols[k].Values[i] = v
		}
	}
	return steps.Data{Name: "nights", Series: cols}
}

// timeline lists one row per night with a transit observable or partly seen: the night's
// date, its transits in time order with their contacts in UTC, and a mark when two or more
// are observable.
func timeline(a *Artifact) *steps.Table {
	t := &steps.Table{Header: []string{"night of", "transits (UTC)", "two or more transits"}}
	nights := map[int64][]event{}
	for i := range a.Planets {
		p := &a.Planets[i]
		for j, w := range p.Windows {
			if w.Seen != seenNone {
				nights[w.Night] = append(nights[w.Night], event{p.Name, p.Transits[j].Epoch, w})
			}
		}
	}
	double := a.doubleSet()
	keys := make([]int64, 0, len(nights))
	for n := range nights {
		keys = append(keys, n)
	}
	slices.Sort(keys)
	for _, n := range keys {
		ev := nights[n]
		sort.SliceStable(ev, func(i, j int) bool { return ev[i].w.Start < ev[j].w.Start })
		var cells []string
		for _, e := range ev {
			cells = append(cells, eventText(e))
		}
		y, m, d := NightDate(n)
		mark := ""
		if double[n] {
			mark = "yes"
		}
		t.Rows = append(t.Rows, []string{fmt.Sprintf("%04d-%02d-%02d", y, m, d), strings.Join(cells, " · "), mark})
	}
	if len(t.Rows) == 0 {
		t.Notes = append(t.Notes, "No transit in the range is seen from the site.")
	}
	t.Notes = append(t.Notes, "Times are UTC; the window runs from the start of the baseline before to the end of the baseline after. "+
		"The Moon's distance from the target and its illuminated fraction are at mid-transit.")
	return t
}

// eventText writes one transit of a night: planet and transit number, whether it is
// observable or what is seen, the window and contacts in UTC, and the Moon.
func eventText(e event) string {
	return fmt.Sprintf("planet %s, transit %d, %s — window %s to %s, ingress %s, mid-transit %s, egress %s; Moon %.0f° away, %.0f %% lit",
		e.planet, e.epoch, seenText(e.w), clock(e.w.Start), clock(e.w.End), clock(e.w.Ingress), clock(e.w.Mid), clock(e.w.Egress),
		e.w.MoonSep, 100*e.w.MoonLit)
}

// clock writes a UTC Julian date as HH:MM.
func clock(jd float64) string {
	s := isoUTC(jd)
	if len(s) < 16 {
		return "—"
	}
	return s[11:16]
}

// caption says where the ephemeris comes from and how the errors were found.
func caption(a *Artifact, p *Planet) string {
	src := fmt.Sprintf("from %d posterior draws of the fit, each transit's mid-time computed per draw (so the period's and mid-time's covariance is kept) and summarised by its median and half its 16–84 %% range", p.Draws)
	if p.Draws == 0 {
		src = "from the written period and epoch, taken as independent: σ² = σ²_epoch + n²σ²_period"
	}
	s := fmt.Sprintf("Transits with mid-times in BJD_TDB %.5f to %.5f, %s; transit numbers count from the ephemeris' reference.", a.From, a.To, src)
	if p.Scatter > 0 {
		s += fmt.Sprintf(" Every σ has the fit's O−C scatter (%.3g min RMS) added in quadrature.", p.Scatter*minutesPerDay)
	}
	return s
}

// table lists n, mid-time ± σ, σ in minutes, UTC (when known), ingress and egress.
func table(a *Artifact, p *Planet) *steps.Table {
	t := &steps.Table{Header: []string{"transit", "mid-time (BJD_TDB)", "σ (min)", "mid-time (UTC)", "ingress (BJD_TDB)", "egress (BJD_TDB)"}}
	if a.Site {
		t.Header = append(t.Header, "from the site")
	}
	for i, tr := range p.Transits {
		utc := isoUTC(tr.UTC)
		if utc == "" {
			utc = "—"
		}
		r := []string{
			strconv.FormatInt(tr.Epoch, 10),
			paper.Symmetric(tr.Mid, p.Sigma(i)).Text(),
			strconv.FormatFloat(p.Sigma(i)*minutesPerDay, 'f', 1, 64),
			utc,
			timeText(tr.Ingress, tr.SigmaIngress, p.Scatter),
			timeText(tr.Egress, tr.SigmaEgress, p.Scatter),
		}
		if a.Site && i < len(p.Windows) {
			r = append(r, seenText(p.Windows[i]))
		}
		t.Rows = append(t.Rows, r)
	}
	if p.Draws > 0 {
		t.Notes = append(t.Notes, "σ from the draws' percentiles; the analytic propagation σ² = σ²_T0 + n²σ²_P + 2n cov(T0, P) is in the data file beside it.")
	}
	if !a.Direction {
		t.Notes = append(t.Notes, "UTC needs the target's direction: write ra and dec in the block.")
	} else {
		t.Notes = append(t.Notes, "UTC is when the mid-transit's light reaches the Earth's centre (within about 0.02 s of any site).")
	}
	if math.IsNaN(p.Duration) {
		t.Notes = append(t.Notes, "Ingress and egress need the transit's duration.")
	}
	return t
}

// seenText says how much of a transit the site sees.
func seenText(w Window) string {
	switch w.Seen {
	case seenObservable:
		return "observable"
	case seenPartly:
		return "partly seen: " + Described(w)
	}
	return "not seen"
}

// timeText writes an ingress or egress time with its error, or a dash when unknown.
func timeText(v, sigma, scatter float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return paper.Symmetric(v, math.Hypot(sigma, scatter)).Text()
}

// data writes the planet's transits as columns.
func data(p *Planet) steps.Data {
	n := len(p.Transits)
	col := func(name string) steps.Series { return steps.Series{Name: name, Values: make([]float64, n)} }
	cols := []steps.Series{col("epoch"), col("mid_bjd_tdb"), col("sigma_d"), col("sigma_analytic_d"),
		col("ingress_bjd_tdb"), col("egress_bjd_tdb"), col("mid_jd_utc")}
	for i, t := range p.Transits {
		for k, v := range []float64{float64(t.Epoch), t.Mid, p.Sigma(i), p.SigmaAnalytic(i), t.Ingress, t.Egress, t.UTC} {
			cols[k].Values[i] = v
		}
	}
	if len(p.Windows) == n && n > 0 {
		// seen: 0 not seen, 1 partly seen, 2 observable.
		extra := []steps.Series{col("seen"), col("window_start_jd_utc"), col("window_end_jd_utc"), col("moon_separation_deg"), col("moon_illuminated")}
		for i, w := range p.Windows {
			for k, v := range []float64{float64(w.Seen), w.Start, w.End, w.MoonSep, w.MoonLit} {
				extra[k].Values[i] = v
			}
		}
		cols = append(cols, extra...)
	}
	return steps.Data{Name: "transits_" + p.Name, Series: cols}
}
