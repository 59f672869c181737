#!/usr/bin/env bash
# The pages that run the launch model (a benchmark, not a test): the demo shop's builds whose car
# has the launch fields (`launch_ready_builds`), each build page and tuning page uncached
# (`--no-page-cache`), one request at a time. For each page: the median and p90 of [requests]
# single requests (curl time_total, new connection each), and the server's CPU a request over
# 4 s of one wrk connection (from /proc/<pid>/stat before and after). The scale shop of
# random_pages.sh has no launch fields, so its pages never run the launch model.
# Needs wrk, curl and sqlite3. Usage: tests/load/launch_pages.sh [requests]
set -euo pipefail
cd "$(dirname "$0")/../.."
N=${1:-31}
source tests/load/common.sh
need wrk curl sqlite3
cargo build --release --quiet --bin lockpoint
WORK=$(mktemp -d)
SERVER=
trap '[ -n "$SERVER" ] && kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
serve_in_background "$WORK/demo.db" --demo --no-page-cache
[ -n "$BASE" ] || { cat "$WORK/serve.err" >&2; exit 1; }
COOKIE=$(session_cookie demo lockpoint-demo)
cpu() { awk '{print $14 + $15}' "/proc/$SERVER/stat"; }
HZ=$(getconf CLK_TCK)

printf '| %-18s | %6s | %12s | %10s | %14s |\n' page passes "median (curl)" "p90 (curl)" "server CPU/req"
printf '|%s|%s|%s|%s|%s|\n' "--------------------" "--------" "--------------" "------------" "----------------"
for id in $(sqlite3 "$WORK/demo.db" "SELECT build_id FROM launch_ready_builds ORDER BY build_id"); do
  passes=$(sqlite3 "$WORK/demo.db" "SELECT count(*) FROM passes WHERE build_id = $id")
  for path in "/builds/$id" "/builds/$id/tune"; do
    times=$(for _ in $(seq "$N"); do
      curl -s -o /dev/null -w '%{time_total}\n' -H "Cookie: $COOKIE" "$BASE$path"
    done | sort -n)
    median=$(awk -v n="$N" 'NR == int(n / 2) + 1 {printf "%.2f ms", 1000 * $1}' <<<"$times")
    p90=$(awk -v n="$N" 'NR == int(n * 0.9) {printf "%.2f ms", 1000 * $1}' <<<"$times")
    c0=$(cpu)
    out=$(wrk -t1 -c1 -d4s -H "Cookie: $COOKIE" "$BASE$path")
    c1=$(cpu)
    n=$(awk '/requests in/ {print $1}' <<<"$out")
    per=$(awk -v a="$c0" -v b="$c1" -v n="$n" -v hz="$HZ" 'BEGIN {printf "%.0f µs", (b - a) * 1e6 / hz / n}')
    printf '| %-18s | %6s | %12s | %10s | %14s |\n' "$path" "$passes" "$median" "$p90" "$per"
  done
done
server_log_clean
