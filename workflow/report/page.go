package report

import (
	"html/template"

	"dipline/steps"
)

// page is what the template reads: the document and each section drawn.
type page struct {
	Document
	Rendered []renderedSection
}

type renderedSection struct {
	*Section
	ID     string
	Panels []renderedPanel
}

type renderedPanel struct {
	Title, Caption string
	Columns        int
	Cells          []renderedCell
	Table          *steps.Table
	Notes          []string
}

// renderedCell is one place of a panel's grid: a drawn plot, or nothing (an empty cell).
type renderedCell struct {
	Empty bool
	Plot  drawnPlot
}

// renderSection is a section as the page shows it, its panels drawn now unless Draw has
// drawn them already.
func renderSection(s *Section) renderedSection {
	rs := renderedSection{Section: s, ID: Anchor("step", s.Step), Panels: s.panels}
	if !s.drawn {
		rs.Panels = drawPanels(s.Presentation.Panels)
	}
	return rs
}

// drawPanels draws a presentation's panels; a plot that cannot be drawn becomes a note of
// its panel.
func drawPanels(panels []steps.Panel) []renderedPanel {
	var drawn []renderedPanel
	for _, p := range panels {
		rp := renderedPanel{Title: p.Title, Caption: p.Caption, Columns: max(p.Columns, 1)}
		if len(p.Plots) == 0 {
			rp.Table = p.Table
		}
		if len(p.Plots) < rp.Columns {
			rp.Columns = max(len(p.Plots), 1)
		}
		for _, pl := range p.Plots {
			if pl == nil {
				rp.Cells = append(rp.Cells, renderedCell{Empty: true})
				continue
			}
			dp, err := drawPlot(pl, rp.Columns)
			if err != nil {
				rp.Notes = append(rp.Notes, err.Error())
				rp.Cells = append(rp.Cells, renderedCell{Empty: true})
				continue
			}
			rp.Notes = append(rp.Notes, dp.Notes...)
			rp.Cells = append(rp.Cells, renderedCell{Plot: dp})
		}
		drawn = append(drawn, rp)
	}
	return drawn
}

// The page's look is our own: a narrow column ordered as the workflow is, each step's
// section carrying its key and a link to how it was made, the making gathered at the end.
var pageTemplate = template.Must(template.New("page").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="dipline">
<title>{{.Title}} · dipline</title>
<style>
:root { --ink: #1f2a30; --soft: #5b6770; --paper: #fcfbf8; --rule: #d9d4c7; --accent: #7a4b12; --wash: #f3efe4; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink); font: 15px/1.5 system-ui, "Segoe UI", "DejaVu Sans", sans-serif; }
.sheet { max-width: 58rem; margin: 0 auto; padding: 1.5rem 1.25rem 4rem; }
header.top { border-bottom: 3px double var(--rule); padding-bottom: .75rem; margin-bottom: 1rem; }
header.top h1 { font-size: 1.7rem; margin: 0; letter-spacing: .01em; }
header.top p { margin: .25rem 0 0; color: var(--soft); }
nav.order ol { margin: .25rem 0 1.5rem; padding-left: 1.6rem; columns: 2; }
nav.order h2, .making > h2 { font-size: 1.05rem; text-transform: lowercase; font-variant: small-caps; color: var(--accent); margin: 1rem 0 .25rem; }
section.step { border-top: 1px solid var(--rule); padding: 1rem 0 .5rem; }
section.step > h2 { font-size: 1.3rem; margin: 0; }
section.step > h2 .kind { color: var(--accent); font-weight: 600; }
p.keys { margin: .1rem 0 .6rem; color: var(--soft); font-size: .85rem; }
code { font: .82rem/1.3 ui-monospace, "DejaVu Sans Mono", monospace; word-break: break-all; }
.state { display: inline-block; padding: 0 .4rem; border: 1px solid var(--rule); border-radius: .2rem; font-size: .8rem; }
.state-failed, .state-skipped { border-color: #a33; color: #a33; }
p.why { border-left: 4px solid #a33; padding: .3rem .6rem; background: #fbeeee; }
ul.cautions { list-style: none; padding: .4rem .7rem; background: var(--wash); border-left: 4px solid #b8860b; }
ul.cautions li::before { content: "⚠ "; }
ul.notes { color: var(--soft); font-size: .9rem; }
h3 { font-size: 1rem; margin: 1rem 0 .3rem; }
table { border-collapse: collapse; margin: .3rem 0 .6rem; font-size: .88rem; }
th, td { text-align: left; vertical-align: top; padding: .2rem .6rem .2rem 0; border-bottom: 1px solid var(--rule); }
th { font-weight: 600; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.finding-agree::before { content: "✓ "; }
.finding-caution::before { content: "△ "; }
.finding-disagree { font-weight: 700; }
.finding-disagree::before { content: "✗ "; }
.finding-not_run::before { content: "– "; }
figure.panel { margin: .8rem 0 1.2rem; }
figure.panel > h3 { margin-top: 0; }
.grid { display: grid; gap: .3rem; }
.cell svg.plot { width: 100%; height: auto; display: block; background: #fff; border: 1px solid var(--rule); }
ul.key { list-style: none; padding: 0; margin: .2rem 0; font-size: .85rem; }
ul.key li { display: inline-block; margin-right: 1.1rem; }
ul.key svg { vertical-align: middle; margin-right: .3rem; }
figcaption { font-size: .88rem; color: var(--soft); }
p.files { font-size: .85rem; color: var(--soft); }
.making article { border-top: 1px dotted var(--rule); padding: .5rem 0; }
.making dl { display: grid; grid-template-columns: max-content 1fr; gap: .1rem 1rem; margin: .3rem 0; font-size: .88rem; }
.making dt { color: var(--soft); }
.making dd { margin: 0; }
a { color: #0b5b7a; }
@media print { nav.order { display: none; } section.step { break-inside: avoid-page; } }
</style>
</head>
<body>
<div class="sheet">
<header class="top">
<h1>{{.Title}}</h1>
{{with .Subtitle}}<p>{{.}}</p>{{end}}
</header>
<nav class="order" aria-label="steps">
<h2>The steps, in the workflow's order</h2>
<ol>
{{range .Rendered}}<li><a href="#{{.ID}}">{{.Step}}</a> <span class="state state-{{.Status}}">{{.Status}}</span></li>
{{end}}<li><a href="#making">How these results were made</a></li>
</ol>
</nav>
<main>
{{range .Rendered}}
<section class="step" id="{{.ID}}" data-step="{{.Step}}">
<h2><span class="kind">{{.Kind}}</span> {{.Label}}</h2>
<p class="keys">step {{.Step}} · <span class="state state-{{.Status}}">{{.Status}}</span>{{if .StepKey}} · step key <code>{{.StepKey}}</code>{{end}} · <a href="#{{.Made}}">how it was made</a></p>
{{with .Why}}<p class="why">{{.}}</p>{{end}}
{{with .Cautions}}<ul class="cautions">{{range .}}<li>{{.}}</li>{{end}}</ul>{{end}}
{{with .Figures}}<h3>Numbers</h3>
<table class="figures"><thead><tr><th>name</th><th>value</th><th>unit</th><th>meaning</th></tr></thead><tbody>
{{range .}}<tr><td><code>{{.Name}}</code></td><td class="num">{{.Value}}</td><td>{{.Unit}}</td><td>{{.Doc}}</td></tr>
{{end}}</tbody></table>{{end}}
{{with .Verdicts}}<h3>Tests</h3>
<table class="verdicts"><thead><tr><th>subject</th><th>test</th><th>finding</th><th>measured against</th><th>why</th></tr></thead><tbody>
{{range .}}<tr><td>{{.Subject}}</td><td>{{.Test}}</td><td class="finding-{{.Verdict}}">{{.Verdict}}</td><td>{{.Threshold}}</td><td>{{.Reason}}</td></tr>
{{end}}</tbody></table>{{end}}
{{range .Panels}}<figure class="panel">
{{with .Title}}<h3>{{.}}</h3>{{end}}
{{if .Cells}}<div class="grid" style="grid-template-columns: repeat({{.Columns}}, minmax(0, 1fr))">
{{range .Cells}}<div class="cell">{{if not .Empty}}{{.Plot.SVG}}{{with .Plot.Keys}}
<ul class="key">{{range .}}<li>{{.Swatch}}{{.Label}}</li>{{end}}</ul>{{end}}{{end}}</div>
{{end}}</div>{{end}}
{{with .Table}}<table class="shown"><thead><tr>{{range .Header}}<th>{{.}}</th>{{end}}</tr></thead><tbody>
{{range .Rows}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>
{{end}}</tbody></table>{{with .Notes}}<ul class="notes">{{range .}}<li>{{.}}</li>{{end}}</ul>{{end}}{{end}}
{{if or .Caption .Notes}}<figcaption>{{.Caption}}{{range .Notes}} {{.}}{{end}}</figcaption>{{end}}
</figure>
{{end}}
{{with .Notes}}<ul class="notes">{{range .}}<li>{{.}}</li>{{end}}</ul>{{end}}
{{with .Files}}<p class="files">Written beside this page: {{range $i, $f := .}}{{if $i}}, {{end}}<a href="{{$f.Path}}">{{$f.Path}}</a> ({{$f.What}}){{end}}.</p>{{end}}
</section>
{{end}}
</main>
<section class="making" id="making">
<h2>How these results were made</h2>
<dl>{{range .Appendix.Run}}<dt>{{.Name}}</dt><dd>{{.Value}}</dd>{{end}}</dl>
{{with .Appendix.Overrides}}<h3>{{$.Appendix.OverridesFrom}}</h3>
<table><tbody>{{range .}}<tr><td><code>{{.Name}}</code></td><td>{{.Value}}</td></tr>{{end}}</tbody></table>{{end}}
{{range .Appendix.Steps}}<article id="{{.ID}}">
<h3>{{.Step}}</h3>
<dl><dt>kind version</dt><dd>{{.Version}}</dd>{{with .StepKey}}<dt>step key</dt><dd><code>{{.}}</code></dd>{{end}}{{with .ResultKey}}<dt>result key</dt><dd><code>{{.}}</code></dd>{{end}}{{with .Seed}}<dt>seed</dt><dd>{{.}}</dd>{{end}}</dl>
{{with .Settings}}<table class="settings"><thead><tr><th>setting</th><th>value</th></tr></thead><tbody>{{range .}}<tr><td><code>{{.Name}}</code></td><td>{{.Value}}</td></tr>{{end}}</tbody></table>{{end}}
{{with .Inputs}}<table class="inputs"><thead><tr><th>reads</th><th>step</th><th>result key</th></tr></thead><tbody>{{range .}}<tr><td><code>{{.Param}}</code></td><td>{{.Step}}</td><td><code>{{.ResultKey}}</code></td></tr>{{end}}</tbody></table>{{end}}
{{with .Files}}<table class="files"><thead><tr><th>file</th><th>path</th><th>SHA-256</th><th>bytes</th></tr></thead><tbody>{{range .}}<tr><td><code>{{.Param}}</code></td><td>{{.Path}}</td><td><code>{{.SHA256}}</code></td><td class="num">{{.Bytes}}</td></tr>{{end}}</tbody></table>{{end}}
{{range .Rows}}<table class="row"><thead><tr><th colspan="2"><code>{{.Param}}</code> = {{.Row}} ({{.Place}})</th></tr></thead><tbody>{{range .Values}}<tr><td>{{.Name}}</td><td class="num">{{.Value}}</td></tr>{{end}}{{range .Overridden}}<tr><td colspan="2">set on the command line: {{.}}</td></tr>{{end}}</tbody></table>
{{end}}{{with .Notes}}<ul class="notes">{{range .}}<li>{{.}}</li>{{end}}</ul>{{end}}
</article>
{{end}}
</section>
</div>
</body>
</html>
`))
