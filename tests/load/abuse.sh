#!/usr/bin/env bash
# Abuse run on loopback (a measurement, not a test): can someone without an account stall the
# shop? Bounded in count and time: everything targets 127.0.0.1, each phase has a fixed length,
# and the server is stopped at the end.
#
#   1. 64 connections post wrong passwords to /login for SECS seconds while a signed-in user
#      loads GET /builds/1 and records passes through the API (2 connections each).
#   2. 300 half-open connections (headers never finished, re-opened when dropped) while
#      /healthz and a page are fetched; then SIGTERM, timed.
#   3. The sign-in throttle table flooded with 1 million rows (server stopped, sqlite3), then
#      shop writes timed one by one while the server purges the flood in the background.
#
# The server runs with an open-file limit of 256, as on a small shop machine.
# Needs wrk (apt-get install wrk), curl, python3 and sqlite3. Usage: tests/load/abuse.sh [seconds]
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
SECS=${1:-30}
need wrk curl python3 sqlite3

cargo build --release --quiet
WORK=$(mktemp -d)
DB="$WORK/abuse.db"
SERVER=
start_server() { OPEN_FILES=256 WAIT_TRIES=50 serve_in_background "$DB" --demo; }
trap '[ -n "$SERVER" ] && kill -9 $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
start_server

COOKIE=$(session_cookie demo lockpoint-demo)
TOKEN=$("$LOCKPOINT" token create demo --db "$DB")
PASS='{"run_on": "2026-11-20", "track": "Abuse strip", "launch_rpm": 4500, "sixty_ft_s": 1.4, "et_s": 10.9}'
# Each script counts its answers by status (count_lua).
: > "$WORK/page.lua"
count_lua "$WORK/page.lua"
cat > "$WORK/login.lua" <<'LUA'
wrk.method = "POST"
wrk.body = "username=demo&password=not-the-password&next=%2F"
wrk.headers["Content-Type"] = "application/x-www-form-urlencoded"
LUA
count_lua "$WORK/login.lua"
pass_lua "$WORK/post.lua" "$TOKEN" "Abuse strip"
count_lua "$WORK/post.lua"
summary() {
  local rps p99 errs
  rps=$(awk '/^Requests\/sec/ {print $2}' "$1")
  p99=$(awk '$1 == "99%" {print $2}' "$1")
  errs=$(awk '/Non-2xx or 3xx/ {n += $NF} /Socket errors/ {gsub(/[^0-9 ]/, " "); for (i = 1; i <= NF; i++) n += $i} END {print n + 0}' "$1")
  printf '%-44s %10s %10s %12s   %s\n' "$2" "$rps" "$p99" "$errs" "$(grep '^statuses' "$1")"
}

echo "== 1. 64 connections posting wrong passwords for ${SECS}s"
wrk -t1 -c64 -d"${SECS}s" --latency -s "$WORK/login.lua" "$BASE/login" > "$WORK/login.txt" &
HAMMER=$!
sleep 2
wrk -t1 -c2 -d"$((SECS - 4))s" --latency -s "$WORK/page.lua" -H "Cookie: $COOKIE" "$BASE/builds/1" > "$WORK/page.txt" &
PAGE=$!
wrk -t1 -c2 -d"$((SECS - 4))s" --latency -s "$WORK/post.lua" "$BASE/api/v1/builds/1/passes" > "$WORK/write.txt"
wait $PAGE $HAMMER
printf '%-44s %10s %10s %12s\n' "route" "requests/s" "p99" "non-2xx/3xx"
summary "$WORK/login.txt" "POST /login, wrong password (the attack)"
summary "$WORK/page.txt" "GET /builds/1, signed in"
summary "$WORK/write.txt" "POST /api/v1/builds/1/passes"
echo "sign-in throttle rows: $(sqlite3 "$DB" 'SELECT COUNT(*) FROM login_throttle')"

echo "== 2. 300 half-open connections"
python3 - "$BASE" 300 25 > "$WORK/halfopen.txt" 2>&1 <<'PY' &
import socket, sys, time
host, port = sys.argv[1].removeprefix("http://").split(":")
count, secs = int(sys.argv[2]), float(sys.argv[3])
def half_open():
    s = socket.create_connection((host, int(port)), timeout=5)
    s.sendall(b"GET / HTTP/1.1\r\nHost: x\r\n")
    s.setblocking(False)
    return s
socks, reopened, end = [], 0, time.time() + secs
while len(socks) < count and time.time() < end:
    try:
        socks.append(half_open())
    except OSError:
        time.sleep(0.05)
print(f"opened {len(socks)}", flush=True)
while time.time() < end:
    for i, s in enumerate(socks):
        try:
            if s.recv(1) == b"":
                raise OSError("closed")
        except BlockingIOError:
            continue
        except OSError:
            s.close()
            try:
                socks[i] = half_open()
                reopened += 1
            except OSError:
                pass
    time.sleep(0.2)
print(f"re-opened {reopened} dropped by the server", flush=True)
PY
HALF=$!
sleep 4
for path in /healthz /builds/1; do
  curl -s -o /dev/null -m 30 -H "Cookie: $COOKIE" -w "GET $path with 300 half-open: %{http_code} in %{time_total} s\n" "$BASE$path"
done
sleep 8
for path in /healthz /builds/1; do
  curl -s -o /dev/null -m 30 -H "Cookie: $COOKIE" -w "GET $path 12 s later: %{http_code} in %{time_total} s\n" "$BASE$path"
done
STARTED=$(date +%s%N)
kill -TERM $SERVER
wait $SERVER || true
SERVER=
echo "SIGTERM with the half-open connections still coming: exited after $(( ($(date +%s%N) - STARTED) / 1000000 )) ms"
wait $HALF || true
cat "$WORK/halfopen.txt"

echo "== 3. a flooded sign-in throttle table (1 million rows), then shop writes"
NOW=$(($(date +%s) * 1000))
sqlite3 "$DB" "WITH RECURSIVE n(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM n WHERE i < 1000000)
  INSERT INTO login_throttle (key, failures, last_failure_ms) SELECT 'name:flood-' || i, 1, $NOW - i FROM n;"
echo "rows before: $(sqlite3 "$DB" 'SELECT COUNT(*) FROM login_throttle')"
start_server
: > "$WORK/times.txt"
for _ in $(seq 100); do
  curl -s -o /dev/null -w '%{http_code} %{time_total}\n' -H "Authorization: Bearer $TOKEN" \
    -H 'Content-Type: application/json' -d "$PASS" "$BASE/api/v1/builds/1/passes" >> "$WORK/times.txt"
  sleep 0.1
done
sort -k2 -n "$WORK/times.txt" | awk '{t[NR] = $2; if ($1 != 201) bad++} END {printf "100 writes during the purge: median %.1f ms, p99 %.1f ms, max %.1f ms, not 201: %d\n", t[50] * 1000, t[99] * 1000, t[NR] * 1000, bad + 0}'
echo "rows after 100 writes (the purge goes on in batches of 500): $(sqlite3 "$DB" 'SELECT COUNT(*) FROM login_throttle')"
kill -TERM $SERVER; wait $SERVER || true; SERVER=
server_log_clean
