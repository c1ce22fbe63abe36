package workflow

import "unicode/utf8"

// A suggestion is a courtesy for a mistyped name; these bound what it may cost when the
// candidates are a large catalogue's ids.
const (
	// maxSuggestRunes: names longer than this are not typed by hand.
	maxSuggestRunes = 64
	// maxSuggestWork bounds the cells of the edit-distance tables computed for one
	// suggestion, some 0.1 s of work; candidates beyond it are not considered.
	maxSuggestWork = 20_000_000
)

// suggest returns ` Did you mean "x"?` for the closest candidate within a small edit
// distance, or "".
func suggest(given string, candidates []string) string {
	best := nearest(given, candidates)
	if best == "" {
		return ""
	}
	return " Did you mean " + quote(best) + "?"
}

// nearest is the closest candidate within a small edit distance, or "".
func nearest(given string, candidates []string) string {
	n := utf8.RuneCountInString(given)
	if n > maxSuggestRunes {
		return ""
	}
	// At most two edits away, and one for a name of up to four letters: two edits leave
	// little of "id" ("j" is two away).
	best, bestD := "", 3
	if n <= 4 {
		bestD = 2
	}
	work := 0
	for _, c := range candidates {
		// Lengths that differ by bestD or more cannot be closer.
		m := utf8.RuneCountInString(c)
		if abs(m-n) >= bestD {
			continue
		}
		if work += (n + 1) * (m + 1); work > maxSuggestWork {
			break
		}
		if d := editDistance(given, c); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance between a and b, in runes.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}
