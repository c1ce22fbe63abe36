#!/usr/bin/env bash
# Times a no-change re-run of the demo with a built binary (every step reused), and a
# re-run after a detrend setting changes (detrend and search recomputed).
# Usage, from the repository root:  bash examples/fernwell/bench.sh [runs]
set -euo pipefail
runs=${1:-10}
bin=$(mktemp -d)/dipline
go build -o "$bin" ./cmd/dipline
wf=examples/fernwell/analysis.hcl
"$bin" run "$wf" >/dev/null # make sure everything is stored
TIMEFORMAT=%R
times=$(for _ in $(seq "$runs"); do { time "$bin" run "$wf" >/dev/null; } 2>&1; done | sort -n)
echo "no-change re-run, seconds over $runs runs (best, median, worst): $(echo "$times" | head -1), $(echo "$times" | sed -n "$(((runs + 1) / 2))p"), $(echo "$times" | tail -1)"
echo "store: $("$bin" store stats "$wf" | head -2 | tail -1)"
