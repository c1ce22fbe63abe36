#!/usr/bin/env bash
# Times the demo's re-run after a catalogue revision with a built binary: the second
# revision of the invented catalogue changes FW-3318's parallax and Ks, so only the steps
# that read that row (and what reads them) may recompute. Prints which steps were computed,
# the wall time of each re-run, and the diff between the two runs.
# Usage, from the repository root:  bash examples/fernwell/bench_revision.sh [runs]
set -euo pipefail
runs=${1:-5}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
bin=$work/dipline
go build -o "$bin" ./cmd/dipline
cp -r examples/fernwell "$work/demo"
rm -rf "$work/demo/.dipline" "$work/demo/results"
wf=$work/demo/analysis.hcl
cat=$work/demo/data/nearby_stars.csv
cp "$cat" "$work/rev1.csv"
"$bin" run "$wf" >/dev/null # first run: everything computed and stored
TIMEFORMAT=%R
times=()
for i in $(seq "$runs"); do
  # Alternate the revisions so every timed run recomputes the catalogue's readers; the
  # stored results of both revisions are reused from the second round on, so force the
  # readers to recompute by timing only the first swap and, afterwards, fresh overrides.
  cp "$work/demo/data/nearby_stars_rev2.csv" "$cat"
  t=$({ time "$bin" run "$wf" --set "catalogue.nearby[\"FW-3318\"].parallax=$((30 + i)).$((i * 7))" --events "$work/events.json" >/dev/null; } 2>&1)
  times+=("$t")
  cp "$work/rev1.csv" "$cat"
done
echo "steps computed in the last timed re-run:"
grep -o '"address":"[^"]*","kind":"[^"]*","status":"computed"' "$work/events.json" | sed 's/"address":"\([^"]*\)".*/  \1/'
sorted=$(printf '%s\n' "${times[@]}" | sort -n)
echo "re-run after a catalogue revision, seconds over $runs runs (best, median, worst): $(echo "$sorted" | head -1), $(echo "$sorted" | sed -n "$(((runs + 1) / 2))p"), $(echo "$sorted" | tail -1)"
cp "$work/demo/data/nearby_stars_rev2.csv" "$cat"
"$bin" run "$wf" >/dev/null
"$bin" diff "$wf"
