package fits

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// ValueType says what kind of value a header card holds.
type ValueType int

// The value types of header cards (FITS 4.0 §4.2).
const (
	NoValue   ValueType = iota // commentary card (COMMENT, HISTORY, blank keyword) or no "= "
	Undefined                  // "= " followed by nothing: a keyword whose value is undefined
	Str                        // a quoted character string
	Logical                    // T or F
	Integer                    // an integer that fits in int64
	Real                       // a floating-point number (E or D exponent), or a huge integer
	Complex                    // (re, im); kept as text only
	Malformed                  // a value field that follows no FITS rule; Text holds it
)

func (v ValueType) String() string {
	return [...]string{"no value", "an undefined value", "a string", "a logical", "an integer",
		"a real number", "a complex number", "a malformed value"}[v]
}

// Card is one 80-character header record.
type Card struct {
	// Key is the keyword, upper case, trailing blanks removed.
	Key string
	// Type is the kind of value; only the matching field below is set (Real also for Integer).
	Type ValueType
	Str  string
	Int  int64
	Real float64
	Bool bool
	// Text is the value field as written (quotes included for strings), for messages.
	Text string
	// Comment is the text after the '/' separator, blanks trimmed.
	Comment string

	hdu *HDU
}

// where names the card for messages: "HDU 1 (LIGHTCURVE): keyword TIMESYS".
func (c *Card) where() string { return fmt.Sprintf("%s: keyword %s", c.hdu, c.Key) }

// AsString returns a string value, or an error naming the HDU and keyword.
func (c *Card) AsString() (string, error) {
	if c.Type != Str {
		return "", fmt.Errorf("%s: %s is %s, not a string", c.where(), c.shown(), c.Type)
	}
	return c.Str, nil
}

// AsInt returns an integer value, or an error naming the HDU and keyword.
func (c *Card) AsInt() (int64, error) {
	if c.Type != Integer {
		return 0, fmt.Errorf("%s: %s is %s, not an integer", c.where(), c.shown(), c.Type)
	}
	return c.Int, nil
}

// AsFloat returns an integer or real value as a float64, or an error naming the HDU and keyword.
func (c *Card) AsFloat() (float64, error) {
	if c.Type != Integer && c.Type != Real {
		return 0, fmt.Errorf("%s: %s is %s, not a number", c.where(), c.shown(), c.Type)
	}
	return c.Real, nil
}

// AsBool returns a logical value, or an error naming the HDU and keyword.
func (c *Card) AsBool() (bool, error) {
	if c.Type != Logical {
		return false, fmt.Errorf("%s: %s is %s, not T or F", c.where(), c.shown(), c.Type)
	}
	return c.Bool, nil
}

func (c *Card) shown() string {
	if c.Text == "" {
		return "the value"
	}
	return strconv.Quote(c.Text)
}

// Header is the list of cards of one HDU, up to (not including) END.
type Header struct {
	cards []Card
	index map[string]int // first card of each keyword
}

// Cards returns all cards in order, commentary cards included.
func (h *Header) Cards() []Card { return h.cards }

// Card returns the first card with the keyword (any case), or nil.
func (h *Header) Card(key string) *Card {
	if i, ok := h.index[strings.ToUpper(key)]; ok {
		return &h.cards[i]
	}
	return nil
}

// String returns a string keyword; ok is false when it is absent or not a string.
func (h *Header) String(key string) (string, bool) {
	if c := h.Card(key); c != nil && c.Type == Str {
		return c.Str, true
	}
	return "", false
}

// Int returns an integer keyword; ok is false when it is absent or not an integer.
func (h *Header) Int(key string) (int64, bool) {
	if c := h.Card(key); c != nil && c.Type == Integer {
		return c.Int, true
	}
	return 0, false
}

// Float returns an integer or real keyword; ok is false when it is absent or not a number.
func (h *Header) Float(key string) (float64, bool) {
	if c := h.Card(key); c != nil && (c.Type == Integer || c.Type == Real) {
		return c.Real, true
	}
	return 0, false
}

// Bool returns a logical keyword; ok is false when it is absent or not logical.
func (h *Header) Bool(key string) (bool, bool) {
	if c := h.Card(key); c != nil && c.Type == Logical {
		return c.Bool, true
	}
	return false, false
}

// commentary keywords carry free text, never a value (FITS 4.0 §4.4.2.4).
func commentary(key string) bool {
	return key == "" || key == "COMMENT" || key == "HISTORY" || key == "CONTINUE" || key == "HIERARCH"
}

// parseCard reads one 80-byte record. The caller has checked that every byte is printable
// ASCII. A value that follows no rule becomes Malformed rather than an error, so that a
// harmless oddity in a keyword nobody reads does not make the file unreadable; the keywords
// the reader needs are checked where they are used.
func parseCard(rec []byte, hdu *HDU) Card {
	c := Card{Key: strings.ToUpper(strings.TrimRight(string(rec[:8]), " ")), hdu: hdu}
	if commentary(c.Key) || rec[8] != '=' {
		// Without "=" in column 9 the rest of the card is commentary (FITS 4.0 §4.1.2.2).
		c.Comment = strings.TrimSpace(string(rec[8:]))
		return c
	}
	field := string(rec[9:])
	rest := strings.TrimLeft(field, " ")
	if strings.HasPrefix(rest, "'") {
		s, n, ok := scanString(rest)
		if !ok {
			c.Type, c.Text = Malformed, strings.TrimSpace(rest)
			return c
		}
		c.Type, c.Str, c.Text = Str, s, rest[:n]
		after := strings.TrimLeft(rest[n:], " ")
		if strings.HasPrefix(after, "/") {
			c.Comment = strings.TrimSpace(after[1:])
		} else if after != "" {
			c.Type, c.Str, c.Text = Malformed, "", strings.TrimSpace(rest)
		}
		return c
	}
	val := rest
	if i := strings.IndexByte(rest, '/'); i >= 0 {
		val, c.Comment = rest[:i], strings.TrimSpace(rest[i+1:])
	}
	val = strings.TrimSpace(val)
	c.Text = val
	switch {
	case val == "":
		c.Type = Undefined
	case val == "T" || val == "F":
		c.Type, c.Bool = Logical, val == "T"
	case val[0] == '(':
		c.Type = Complex
	default:
		c.Type, c.Int, c.Real = parseNumber(val)
	}
	return c
}

// scanString reads a quoted string at the start of s, with ” standing for one quote.
// Trailing blanks are not significant (FITS 4.0 §4.2.1.1); leading blanks are.
func scanString(s string) (val string, n int, ok bool) {
	var b strings.Builder
	for i := 1; i < len(s); i++ {
		if s[i] != '\'' {
			b.WriteByte(s[i])
			continue
		}
		if i+1 < len(s) && s[i+1] == '\'' {
			b.WriteByte('\'')
			i++
			continue
		}
		return strings.TrimRight(b.String(), " "), i + 1, true
	}
	return "", 0, false
}

// parseNumber reads a FITS integer or real: an optional sign, digits, an optional point and
// fraction, an optional exponent with E or D (FITS 4.0 §4.2.3–4.2.4). Anything else, such
// as "inf", "nan", hexadecimal or embedded blanks that Go's parser would take, is Malformed.
func parseNumber(s string) (ValueType, int64, float64) {
	digits, point, exp := 0, false, false
	for i := 0; i < len(s); i++ {
		switch ch := s[i]; {
		case ch >= '0' && ch <= '9':
			digits++
		case ch == '+' || ch == '-':
			if i != 0 && s[i-1] != 'E' && s[i-1] != 'D' && s[i-1] != 'e' && s[i-1] != 'd' {
				return Malformed, 0, 0
			}
		case ch == '.':
			if point || exp {
				return Malformed, 0, 0
			}
			point = true
		case ch == 'E' || ch == 'D' || ch == 'e' || ch == 'd':
			if exp || digits == 0 {
				return Malformed, 0, 0
			}
			exp = true
		default:
			return Malformed, 0, 0
		}
	}
	if digits == 0 {
		return Malformed, 0, 0
	}
	if !point && !exp {
		if i, err := strconv.ParseInt(s, 10, 64); err == nil {
			return Integer, i, float64(i)
		}
	}
	t := strings.Map(func(r rune) rune {
		if r == 'D' || r == 'd' {
			return 'E'
		}
		return r
	}, s)
	f, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsInf(f, 0) {
		return Malformed, 0, 0
	}
	return Real, 0, f
}
