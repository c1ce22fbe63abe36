#!/usr/bin/env bash
# Times the demo's re-run after a catalogue revision with a built binary. Revision 2 of the
# invented catalogue changes FW-3318's parallax and Ks (and another star's parallax), so only
# the steps that read FW-3318's row, and what reads them, may recompute: star, dilution,
# derive. Each timed run then tries one more parallax with --set, so that it recomputes the
# same steps again. Prints the steps computed, the wall times and the diff of the revision.
# Run the demo once first (go run ./cmd/dipline run examples/fernwell/analysis.hcl): the
# script copies its store, so the transit fit is reused rather than computed for minutes.
# Usage, from the repository root:  bash examples/fernwell/bench_revision.sh [runs]
set -euo pipefail
runs=${1:-5}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
bin=$work/dipline
go build -o "$bin" ./cmd/dipline
cp -r examples/fernwell "$work/demo"
wf=$work/demo/analysis.hcl
cat=$work/demo/data/nearby_stars.csv
[ -d "$work/demo/.dipline" ] || echo "no stored results: the first run computes everything (minutes)" >&2
rev1=$("$bin" run "$wf" | awk '/^run /{print $2}') # revision 1: everything stored
cp "$work/demo/data/nearby_stars_rev2.csv" "$cat"
TIMEFORMAT=%R
first=$({ time "$bin" run "$wf" --events "$work/events.json" >/dev/null; } 2>&1)
echo "steps computed after the revision:"
grep -o '"address":"[^"]*","kind":"[^"]*","status":"computed"' "$work/events.json" | sed 's/"address":"\([^"]*\)".*/  \1/'
echo "first re-run after the revision: $first s"
times=()
for i in $(seq "$runs"); do
  plx=$(printf '38.%02d' $((30 + i)))
  times+=("$({ time "$bin" run "$wf" --set "catalogue.nearby[\"FW-3318\"].parallax=$plx" >/dev/null; } 2>&1)")
done
sorted=$(printf '%s\n' "${times[@]}" | sort -n)
echo "re-runs with one catalogue value changed, seconds over $runs runs (best, median, worst): $(echo "$sorted" | head -1), $(echo "$sorted" | sed -n "$(((runs + 1) / 2))p"), $(echo "$sorted" | tail -1)"
rev2=$("$bin" run "$wf" | awk '/^run /{print $2}') # revision 2, no override
echo
"$bin" diff "$wf" "$rev1" "$rev2"
