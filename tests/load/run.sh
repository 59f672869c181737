#!/usr/bin/env bash
# Load run on loopback (a benchmark, not a test): 64 connections for 30 s each against the
# busiest pages (counter, build page with its charts, setup sheet), a write route (recording a
# track pass through the API), and a minimal route on the same server for comparison.
# Needs wrk (apt-get install wrk). Usage: tests/load/run.sh [seconds] [connections]
set -euo pipefail
cd "$(dirname "$0")/../.."
SECS=${1:-30}
CONNS=${2:-64}
command -v wrk >/dev/null || { echo "wrk is not installed (apt-get install wrk)" >&2; exit 1; }

cargo build --release --quiet
WORK=$(mktemp -d)
DB="$WORK/load.db"
./target/release/lockpoint serve --demo --db "$DB" --addr 127.0.0.1:0 > "$WORK/serve.out" 2> "$WORK/serve.err" &
SERVER=$!
trap 'kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
for _ in $(seq 50); do grep -q '^listening on' "$WORK/serve.out" 2>/dev/null && break; sleep 0.2; done
BASE=$(sed -n 's/^listening on //p' "$WORK/serve.out")

# A signed-in browser session, a setup sheet to load, and an API token for the write route.
curl -s -c "$WORK/jar" -o /dev/null -d 'username=demo&password=lockpoint-demo' "$BASE/login"
COOKIE="lockpoint_session=$(awk '$6 == "lockpoint_session" {print $7}' "$WORK/jar")"
CSRF=$(curl -s -H "Cookie: $COOKIE" "$BASE/" | grep -o 'name="_csrf" value="[^"]*"' | head -1 | sed 's/.*value="//;s/"$//')
SHEET=$(curl -s -o /dev/null -w '%{redirect_url}' -H "Cookie: $COOKIE" -d "_csrf=$CSRF" "$BASE/builds/1/sheets")
TOKEN=$(./target/release/lockpoint token create demo --db "$DB")
cat > "$WORK/post.lua" <<LUA
wrk.method = "POST"
wrk.body = '{"run_on": "2026-11-20", "track": "Load strip", "launch_rpm": 4500, "sixty_ft_s": 1.4, "et_s": 10.9}'
wrk.headers["Content-Type"] = "application/json"
wrk.headers["Authorization"] = "Bearer $TOKEN"
LUA

printf '%-34s %12s %10s %8s\n' "route" "requests/s" "p99" "errors"
run() {
  local name=$1; shift
  local out
  out=$(wrk -t2 -c"$CONNS" -d"${SECS}s" --latency "$@")
  local rps p99 errs
  rps=$(awk '/^Requests\/sec/ {print $2}' <<<"$out")
  p99=$(awk '$1 == "99%" {print $2}' <<<"$out")
  errs=$(awk '/Non-2xx or 3xx/ {n += $NF} /Socket errors/ {gsub(/[^0-9 ]/, " "); for (i = 1; i <= NF; i++) n += $i} END {print n + 0}' <<<"$out")
  printf '%-34s %12s %10s %8s\n' "$name" "$rps" "$p99" "$errs"
}
run "GET /healthz (minimal)" "$BASE/healthz"
run "GET / (counter, work due)" -H "Cookie: $COOKIE" "$BASE/"
run "GET /builds/1 (charts)" -H "Cookie: $COOKIE" "$BASE/builds/1"
run "GET $SHEET (setup sheet)" -H "Cookie: $COOKIE" "$SHEET"
run "POST /api/v1/builds/1/passes" -s "$WORK/post.lua" "$BASE/api/v1/builds/1/passes"
if grep -qi 'database is locked\|panicked' "$WORK/serve.err"; then
  echo "server log shows lock errors or panics" >&2; exit 1
fi
