#!/usr/bin/env bash
# Writes every CLI command's --json output on the built-in scenarios into OUTDIR, one file per command
# line, with volatile fields (clock times, durations, temp paths) removed, so that two trees can be
# compared byte for byte: scripts/json-snapshot.sh /tmp/a && (other tree) ... && diff -r /tmp/a /tmp/b
set -euo pipefail
OUT=${1:?usage: json-snapshot.sh OUTDIR}
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
CLI="node $ROOT/dist/src/cli/main.js"
mkdir -p "$OUT"
RUNS=$(mktemp -d)
trap 'rm -rf "$RUNS"' EXIT
# Drop keys whose values depend on the clock or on the temporary folder.
scrub() { node -e '
const volatile = /^(createdAt|finishedAt|time|trainSeconds|monitorSeconds|seconds|elapsedSeconds|runDir|dir|comparisonDir|path|report|runsDir|wallSeconds|durationMs|ms|index)$/;
const walk = (v) => Array.isArray(v) ? v.map(walk) : v && typeof v === "object" ? Object.fromEntries(Object.entries(v).filter(([k]) => !volatile.test(k)).map(([k, x]) => [k, walk(x)])) : v;
let s = ""; process.stdin.on("data", (d) => (s += d)).on("end", () => process.stdout.write(JSON.stringify(walk(JSON.parse(s)), null, 1) + "\n"));'; }
run() { local name=$1; shift; ( $CLI "$@" || true ) 2>/dev/null | scrub > "$OUT/$name.json"; }
run envs envs --json
for pair in seed-vault-courier:per-scan seed-vault-courier:default fresh-coat-tug:fast fresh-coat-tug:shaped quench-hall-run:light-loss quench-hall-run:default assay-carousel:belt-travel assay-carousel:default; do
  env=${pair%%:*}; rew=${pair##*:}
  run "solve-$env-$rew" solve --env "$env" --reward "$rew" --json
  run "audit-$env-$rew" audit --env "$env" --reward "$rew" --json
  run "pressure-$env-$rew" pressure --env "$env" --reward "$rew" --json
  run "train-$env-$rew" train --env "$env" --reward "$rew" --runs-dir "$RUNS" --json
done
for env in seed-vault-courier fresh-coat-tug quench-hall-run assay-carousel; do
  $CLI export --env "$env" > "$OUT/export-$env.json"
  run "check-$env" check --env "$env" --json
done
run compare-fresh-coat-tug compare --env fresh-coat-tug --rewards fast,default --seeds 3 --runs-dir "$RUNS" --json
run demo demo --runs-dir "$RUNS" --json
run runs runs --runs-dir "$RUNS" --json
