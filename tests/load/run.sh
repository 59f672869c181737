#!/usr/bin/env bash
# Load run on loopback (a benchmark, not a test): 64 connections for 30 s each against the
# busiest pages (counter, build page with its charts, setup sheet), a write route (recording a
# track pass through the API), and a minimal route on the same server for comparison.
# Needs wrk (apt-get install wrk). Usage: tests/load/run.sh [seconds] [connections]
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
SECS=${1:-30}
CONNS=${2:-64}
need wrk

cargo build --release --quiet
WORK=$(mktemp -d)
DB="$WORK/load.db"
SERVER=
trap '[ -n "$SERVER" ] && kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
WAIT_TRIES=50 serve_in_background "$DB" --demo

# A signed-in browser session, a setup sheet to load, and an API token for the write route.
COOKIE=$(session_cookie demo lockpoint-demo)
CSRF=$(curl -s -H "Cookie: $COOKIE" "$BASE/" | grep -o 'name="_csrf" value="[^"]*"' | head -1 | sed 's/.*value="//;s/"$//')
SHEET=$(curl -s -o /dev/null -w '%{redirect_url}' -H "Cookie: $COOKIE" -d "_csrf=$CSRF" "$BASE/builds/1/sheets")
TOKEN=$("$LOCKPOINT" token create demo --db "$DB")
pass_lua "$WORK/post.lua" "$TOKEN"

printf '%-34s %12s %10s %8s\n' "route" "requests/s" "p99" "errors"
run() {
  local name=$1; shift
  wrk_run "$@"
  local errs
  errs=$(awk '/Non-2xx or 3xx/ {n += $NF} /Socket errors/ {gsub(/[^0-9 ]/, " "); for (i = 1; i <= NF; i++) n += $i} END {print n + 0}' <<<"$OUT")
  printf '%-34s %12s %10s %8s\n' "$name" "$RPS" "$P99" "$errs"
}
run "GET /healthz (minimal)" "$BASE/healthz"
run "GET / (counter, work due)" -H "Cookie: $COOKIE" "$BASE/"
run "GET /builds/1 (charts)" -H "Cookie: $COOKIE" "$BASE/builds/1"
run "GET $SHEET (setup sheet)" -H "Cookie: $COOKIE" "$SHEET"
run "POST /api/v1/builds/1/passes" -s "$WORK/post.lua" "$BASE/api/v1/builds/1/passes"
server_log_clean
