#!/usr/bin/env bash
# Per-step cost of this checkout against another one, interleaved so that a drift in the
# machine's load falls on both sides alike: each round runs every case once in each checkout
# (the order alternates between rounds), one process per case, as `npm run bench` does.
#
#   bash tools/bench/compare.sh /path/to/other/checkout [rounds=3] > compare.jsonl
#
# Both checkouts must be built (`npm run build`). Prints one JSON line per run and, at the end,
# the median seconds per step of each side and their ratio (this checkout / the other).
set -euo pipefail
other="${1:?usage: compare.sh OTHER_CHECKOUT [ROUNDS]}"
rounds="${2:-3}"
here="$(cd "$(dirname "$0")/../.." && pwd)"
for dir in "$here" "$other"; do
  [ -f "$dir/dist/tools/bench/worker.js" ] || { echo "compare.sh: $dir/dist/tools/bench/worker.js is missing: run 'npm run build' there" >&2; exit 2; }
done
cases=("bratu 100 20 0" "bratu 100 20 6" "bratu 200 12 0" "bratu 200 12 6" "bratu 300 8 0" "bratu 300 8 6" "gray-scott 128 10 0" "gray-scott 128 10 6")
log="$(mktemp)"
trap 'rm -f "$log"' EXIT
for r in $(seq 1 "$rounds"); do
  for c in "${cases[@]}"; do
    if (( r % 2 )); then order="other this"; else order="this other"; fi
    for side in $order; do
      dir="$here"; [ "$side" = other ] && dir="$other"
      # shellcheck disable=SC2086
      row="$(cd "$dir" && node --expose-gc dist/tools/bench/worker.js steps $c 1 | tail -1)"
      line="{\"round\":$r,\"side\":\"$side\",\"args\":\"$c\",\"load\":$(cut -d' ' -f1 /proc/loadavg),\"row\":$row}"
      echo "$line" | tee -a "$log"
    done
  done
done
node -e '
const rows = require("fs").readFileSync(process.argv[1], "utf8").trim().split("\n").map((l) => JSON.parse(l));
const median = (a) => { const s = [...a].sort((x, y) => x - y); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
const byCase = new Map();
for (const r of rows) {
  if (!byCase.has(r.args)) byCase.set(r.args, { this: [], other: [] });
  byCase.get(r.args)[r.side].push(r.row.secondsPerStep);
}
console.error("case (model m steps eigenvalues)   other s/step   this s/step   ratio");
for (const [c, v] of byCase) {
  const a = median(v.other), b = median(v.this);
  console.error(`${c.padEnd(34)} ${a.toPrecision(3).padStart(12)} ${b.toPrecision(3).padStart(13)} ${(b / a).toFixed(3).padStart(7)}`);
}' "$log"
