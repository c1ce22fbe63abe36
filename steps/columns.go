package steps

import (
	"slices"
	"sort"
	"strings"
)

// NamedColumns reads an object attribute that names a file's columns by role, e.g.
// columns = { time = "BJD", flux = "SAP" }: it returns the trimmed column name for each of
// roles, in their order ("" where the block names none). A key that is not a role, or an
// empty name, is an *AttrError on attr.
func NamedColumns(attr string, written map[string]string, roles []string) ([]string, error) {
	out := make([]string, len(roles))
	keys := make([]string, 0, len(written))
	for k := range written {
		keys = append(keys, k)
	}
	sort.Strings(keys) // the first mistake in name order, the same every time
	for _, k := range keys {
		i := slices.Index(roles, k)
		if i < 0 {
			return nil, Attrf(attr, "unknown key %q; the keys are %s", k, strings.Join(roles, ", "))
		}
		name := strings.TrimSpace(written[k])
		if name == "" {
			return nil, Attrf(attr, "%s: empty column name", k)
		}
		out[i] = name
	}
	return out, nil
}
