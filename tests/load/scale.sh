#!/usr/bin/env bash
# The scale load run (a benchmark, not a test): one release server on loopback against a shop
# grown by the scale generator (tests/load/scale.rs: 10,000 customers, cars and builds,
# 1,000,000 cover heights, 200,000 passes, invented, fixed seed), each route in turn for
# [seconds] with [connections] wrk connections: requests/s, p99, errors, the ratio to /healthz's
# requests/s, and the server's peak resident memory (VmHWM) over the whole run. Then every
# route again at [burst connections] for [burst seconds] each (errors are what counts there).
# Needs wrk and curl.
# Usage: tests/load/scale.sh [seconds] [connections] [burst seconds] [burst connections]
# The generated database is kept in target/load/ and copied for each run (the write route
# adds passes to the copy only).
set -euo pipefail
cd "$(dirname "$0")/../.."
SECS=${1:-10}
CONNS=${2:-8}
BURST_SECS=${3:-30}
BURST_CONNS=${4:-64}
SEED=13
BUILD=4321
QUERY=Halvorsen
source tests/load/common.sh
need wrk
source tests/load/scale_server.sh

COOKIE=$(session_cookie loadtest load-test-password)
TOKEN=$("$LOCKPOINT" token create loadtest --db "$DB")
pass_lua "$WORK/post.lua" "$TOKEN"
for path in / "/customers?q=$QUERY" "/builds/$BUILD" "/builds/$BUILD/tune"; do
  code=$(curl -s -o /dev/null -w '%{http_code}' -H "Cookie: $COOKIE" "$BASE$path")
  [ "$code" = 200 ] || { echo "$path answers $code" >&2; exit 1; }
done

# run NAME WRK-ARGS...: one route for $SECS s at $CONNS connections, one table row.
run() {
  local name=$1; shift
  local errs ratio
  wrk_run "$@"
  # Errors: answers other than 2xx/3xx, and socket errors (connect, read, write, timeout: no
  # answer within wrk's 2 s), each kind named when there are any.
  errs=$(awk '/Non-2xx or 3xx/ {printf "%s", (n++ ? ", " : "") $NF " non-2xx"}
    /Socket errors/ {split("connect read write timeout", kind, " ");
      gsub(/[^0-9 ]/, " "); for (i = 1; i <= NF; i++) if ($i > 0) printf "%s", (n++ ? ", " : "") $i " " kind[i]}
    END {if (!n) print 0; else print ""}' <<<"$OUT")
  [ -n "$HEALTHZ" ] || HEALTHZ=$RPS
  ratio=$(awk -v a="$RPS" -v b="$HEALTHZ" 'BEGIN {printf "%.1f %%", 100 * a / b}')
  printf '| %-40s | %10s | %9s | %6s | %9s |\n' "$name" "$RPS" "$P99" "$errs" "$ratio"
}
routes() {
  echo "$CONNS connections, ${SECS} s per route, $(nproc) cores shared by wrk and the server"
  printf '| %-40s | %10s | %9s | %6s | %9s |\n' "route" "requests/s" "p99" "errors" "/healthz"
  printf '|%s|%s|%s|%s|%s|\n' "------------------------------------------" "------------" "-----------" "--------" "-----------"
  HEALTHZ=
  run "GET /healthz" "$BASE/healthz"
  run "GET / (counter, work due)" -H "Cookie: $COOKIE" "$BASE/"
  run "GET /customers?q=$QUERY" -H "Cookie: $COOKIE" "$BASE/customers?q=$QUERY"
  run "GET /builds/$BUILD (build page)" -H "Cookie: $COOKIE" "$BASE/builds/$BUILD"
  run "GET /builds/$BUILD/tune (tuning page)" -H "Cookie: $COOKIE" "$BASE/builds/$BUILD/tune"
  run "POST /api/v1/builds/$BUILD/passes (write)" -s "$WORK/post.lua" "$BASE/api/v1/builds/$BUILD/passes"
}
routes
SECS=$BURST_SECS CONNS=$BURST_CONNS
echo
routes
echo "server peak resident memory (VmHWM): $(awk '/VmHWM/ {printf "%.1f MB", $2 / 1024}' /proc/$SERVER/status)"
server_log_clean
