package companions

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/stellar"
)

// List is the companions step's artifact: the companions in the table's order.
type List struct {
	Companions []stellar.Companion
}

// CompanionList implements stellar.CompanionSource.
func (l *List) CompanionList() []stellar.Companion { return l.Companions }

const (
	tag       = "companions"
	formatVer = 1
)

// Encode returns the canonical encoding.
func (l *List) Encode() []byte {
	w := codec.NewWriter(tag, formatVer)
	w.Uint64(uint64(len(l.Companions)))
	for _, c := range l.Companions {
		w.String(c.Name)
		w.String(c.Band)
		w.Float(c.DMag)
		w.Float(c.DMagErr)
		w.Float(c.Separation)
		w.Float(c.Radius)
		w.Float(c.RadiusErr)
	}
	return w.Bytes()
}

// Decode implements steps.Typed.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads a List back, rejecting truncated, foreign or invalid records.
func Decode(b []byte) (*List, error) {
	r := codec.NewReader(b, tag, formatVer)
	n := r.Uint64()
	// Each companion takes at least 2×8 + 5×8 bytes.
	if n > uint64(len(b))/56 {
		if err := r.Err(); err != nil {
			return nil, fmt.Errorf("companions: %w", err)
		}
		return nil, fmt.Errorf("companions: record claims %d companions in %d bytes", n, len(b))
	}
	l := &List{}
	for i := uint64(0); i < n; i++ {
		var c stellar.Companion
		c.Name = r.String()
		c.Band = r.String()
		c.DMag = r.Float()
		c.DMagErr = r.Float()
		c.Separation = r.Float()
		c.Radius = r.Float()
		c.RadiusErr = r.Float()
		l.Companions = append(l.Companions, c)
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("companions: %w", err)
	}
	if err := l.check(); err != nil {
		return nil, fmt.Errorf("companions: %w", err)
	}
	return l, nil
}

// check holds a decoded list to the rules Parse enforces.
func (l *List) check() error {
	seen := map[string]bool{}
	for i, c := range l.Companions {
		key := FigureName(c.Name) + "\x00" + FigureName(c.Band) // one row per companion and band
		switch {
		case c.Name == "" || c.Band == "":
			return fmt.Errorf("companion %d has no name or no band", i+1)
		case strings.EqualFold(c.Name, "target") || seen[key]:
			return fmt.Errorf("companion %d: name %q is reserved or repeated in band %s", i+1, c.Name, c.Band)
		case math.IsNaN(c.DMag) || math.IsInf(c.DMag, 0):
			return fmt.Errorf("companion %q: dmag %v", c.Name, c.DMag)
		case !(c.DMagErr >= 0) || math.IsInf(c.DMagErr, 0):
			return fmt.Errorf("companion %q: dmag_err %v", c.Name, c.DMagErr)
		case c.Separation < 0 || math.IsInf(c.Separation, 0):
			return fmt.Errorf("companion %q: separation %v", c.Name, c.Separation)
		case math.IsNaN(c.Radius) != math.IsNaN(c.RadiusErr):
			return fmt.Errorf("companion %q: radius and radius_err must be both given or both absent", c.Name)
		case !math.IsNaN(c.Radius) && (!(c.Radius > 0) || math.IsInf(c.Radius, 0) || c.RadiusErr < 0 || math.IsInf(c.RadiusErr, 0)):
			return fmt.Errorf("companion %q: radius %v ± %v", c.Name, c.Radius, c.RadiusErr)
		}
		seen[key] = true
	}
	return nil
}

// Figures lists the number of companions and, per companion, its magnitude difference and
// separation (and radius when given), named by FigureName of the companion's name.
func (l *List) Figures() []steps.Figure {
	names := map[string]bool{}
	for _, c := range l.Companions {
		names[FigureName(c.Name)] = true
	}
	figs := []steps.Figure{{Name: "count", Value: float64(len(names)), Doc: "companions listed (0: imaging found none); one may be measured in several bands"}}
	shown := map[string]bool{}
	for _, c := range l.Companions {
		p := FigureName(c.Name) + "."
		figs = append(figs, steps.Figure{Name: p + "dmag_" + FigureName(c.Band), Value: c.DMag, Sigma: c.DMagErr, Unit: "mag",
			Doc: fmt.Sprintf("magnitude of %s minus the target's, in band %s", c.Name, c.Band)})
		if shown[p] {
			continue // separation and radius once per companion
		}
		shown[p] = true
		if !math.IsNaN(c.Separation) {
			figs = append(figs, steps.Figure{Name: p + "separation", Value: c.Separation, Unit: "arcsec",
				Doc: fmt.Sprintf("angular separation of %s from the target", c.Name)})
		}
		if !math.IsNaN(c.Radius) {
			figs = append(figs, steps.Figure{Name: p + "radius", Value: c.Radius, Sigma: c.RadiusErr, Unit: "R_sun",
				Doc: fmt.Sprintf("radius of %s as given in the table", c.Name)})
		}
	}
	return figs
}
