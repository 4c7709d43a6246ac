#!/usr/bin/env bash
# Audit false-alarm count over simulated sessions of one preset.
# Usage: scripts/audit_false_alarms.sh PRESET FIRST_SEED LAST_SEED [DURATION_S] [BINARY]
# Prints one line per seed (seed, change points, verdict) and a total of sessions with any
# change point. Build first: cargo build --release.
set -euo pipefail
preset=$1; first=$2; last=$3; duration=${4:-40}; bin=${5:-./target/release/mountdrift}
dir=$(mktemp -d)
alarms=0; total=0
for s in $(seq "$first" "$last"); do
  "$bin" simulate --preset "$preset" --duration "$duration" --seed "$s" --out "$dir/$s" >/dev/null
  line=$("$bin" audit "$dir/$s/session.yaml" --json 2>/dev/null | python3 -c \
    "import json,sys;d=json.load(sys.stdin);print(len(d['change_points']), d['verdict'], [c['frame'] for c in d['change_points']])" || true)
  echo "$s $line"
  total=$((total + 1))
  case $line in 0\ *) ;; *) alarms=$((alarms + 1)) ;; esac
  rm -rf "${dir:?}/$s"
done
rmdir "$dir"
echo "preset=$preset duration=${duration}s seeds=$first..$last sessions=$total with_change_points=$alarms"
