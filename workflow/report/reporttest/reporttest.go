// Package reporttest reads a written report page back for tests: it finds every plot, checks
// that each is well-formed XML, counts the marks each layer drew, and drives a headless
// Chromium over the page (the DOM it builds, the console errors it logs, a screenshot).
// Test support only; the main entry points are Plots and Browser.
package reporttest

import (
	"bytes"
	"context"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
)

// Plot is one plot found on a page.
type Plot struct {
	// CSV names the data the plot draws ("" when none).
	CSV    string
	Label  string
	Layers []Layer
	// At is the plot's offset in the page.
	At int
}

// Layer is one marked layer of a plot: how many rows it has, how many marks it says it drew,
// and how many marks (SVG paths, or uses of one defined path) its group holds.
type Layer struct {
	Style              string
	Rows, Drawn, Marks int
}

// Plots finds the plots on a page (each an <svg class="plot"> … </svg>), parses each as XML
// and counts the paths inside each of its mark groups. A plot that does not parse is an
// error.
func Plots(page string) ([]Plot, error) {
	var plots []Plot
	rest, at := page, 0
	for {
		i := strings.Index(rest, `<svg class="plot"`)
		if i < 0 {
			return plots, nil
		}
		rest, at = rest[i:], at+i
		j := strings.Index(rest, "</svg>")
		if j < 0 {
			return plots, errors.New("a plot's SVG does not end")
		}
		p, err := readPlot(rest[:j+len("</svg>")])
		if err != nil {
			return plots, fmt.Errorf("plot %d: %w", len(plots)+1, err)
		}
		p.At = at
		plots = append(plots, p)
		rest, at = rest[j:], at+j
	}
}

func readPlot(svg string) (Plot, error) {
	var p Plot
	d := xml.NewDecoder(strings.NewReader(svg))
	d.Strict = true
	depth, groupDepth := 0, -1
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return p, err
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			attr := func(name string) string {
				for _, a := range t.Attr {
					if a.Name.Local == name {
						return a.Value
					}
				}
				return ""
			}
			switch {
			case t.Name.Local == "svg" && depth == 1:
				p.CSV, p.Label = attr("data-csv"), attr("aria-label")
			case t.Name.Local == "g" && attr("class") == "marks":
				if groupDepth >= 0 {
					return p, errors.New("a mark group inside another")
				}
				rows, err1 := strconv.Atoi(attr("data-rows"))
				drawn, err2 := strconv.Atoi(attr("data-drawn"))
				if err1 != nil || err2 != nil {
					return p, errors.New("a mark group without its counts")
				}
				p.Layers = append(p.Layers, Layer{Style: attr("data-style"), Rows: rows, Drawn: drawn})
				groupDepth = depth
			case (t.Name.Local == "path" || t.Name.Local == "use") && groupDepth >= 0:
				p.Layers[len(p.Layers)-1].Marks++
			case t.Name.Local == "script" || t.Name.Local == "foreignObject":
				return p, fmt.Errorf("a <%s> element in a plot", t.Name.Local)
			}
		case xml.EndElement:
			if depth == groupDepth {
				groupDepth = -1
			}
			depth--
		}
	}
	if depth != 0 {
		return p, errors.New("unbalanced elements")
	}
	return p, nil
}

// CSVRows counts the data rows of a CSV file (lines after the header).
func CSVRows(path string) (int, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return 0, err
	}
	n := bytes.Count(b, []byte("\n"))
	if n == 0 {
		return 0, fmt.Errorf("%s has no header", path)
	}
	return n - 1, nil
}

// Chromium returns the browser's path, or "" when none is installed.
func Chromium() string {
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

// Browser runs a headless Chromium with a profile of its own in a temporary folder.
type Browser struct {
	Path string
	// Profile is a folder the browser may write (its user data).
	Profile string
}

func (b Browser) run(ctx context.Context, args ...string) (stdout, stderr []byte, err error) {
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
		"--no-first-run", "--disable-extensions", "--enable-logging=stderr", "--v=0",
		"--user-data-dir=" + b.Profile}
	cmd := exec.CommandContext(ctx, b.Path, append(base, args...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err = cmd.Run()
	if err != nil {
		err = fmt.Errorf("chromium: %w\n%s", err, tail(errb.String(), 2000))
	}
	return out.Bytes(), errb.Bytes(), err
}

// DumpDOM loads a page and returns the DOM the browser built, and every line of its log that
// reports a console message or an uncaught error (a page without script logs none).
func (b Browser) DumpDOM(ctx context.Context, page string) (string, []string, error) {
	abs, err := filepath.Abs(page)
	if err != nil {
		return "", nil, err
	}
	out, errb, err := b.run(ctx, "--dump-dom", "file://"+abs)
	return string(out), consoleLines(string(errb)), err
}

// Screenshot loads a page and writes a PNG of its first width × height pixels.
func (b Browser) Screenshot(ctx context.Context, page, png string, width, height int) ([]string, error) {
	abs, err := filepath.Abs(page)
	if err != nil {
		return nil, err
	}
	_, errb, err := b.run(ctx, "--screenshot="+png, fmt.Sprintf("--window-size=%d,%d", width, height),
		"--hide-scrollbars", "file://"+abs)
	return consoleLines(string(errb)), err
}

func consoleLines(log string) []string {
	var bad []string
	for _, l := range strings.Split(log, "\n") {
		if strings.Contains(l, "CONSOLE") || strings.Contains(l, "Uncaught") {
			bad = append(bad, l)
		}
	}
	return bad
}

func tail(s string, n int) string {
	if len(s) > n {
		return "…" + s[len(s)-n:]
	}
	return s
}

// PNGSignature starts every PNG file (PNG specification, section 5.2).
var PNGSignature = []byte{0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'}
