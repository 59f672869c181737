#!/usr/bin/env bash
# The uncached counter (a benchmark, not a test): one release server on loopback against the
# scale shop (tests/load/scale.rs, 10,000 builds, 1,000,000 cover heights, 200,000 passes), with
# every request picking a different record, so the page cache cannot answer from the page just
# seen. In one run, side by side, [seconds] at [connections] wrk connections each:
#   /healthz; a random active build's page or tuning page; a random customer's page; a search for
#   a random customer's name or phone digits; then writes (passes through the API) on
#   [connections] while as many connections read random build and tuning pages.
# Then the single-request medians: 200 random builds' pages and tuning pages, one at a time, each
# asked once (uncached). Prints requests/s, p50, p99, errors, the ratio to /healthz and the
# server's peak resident memory, and checks that every acknowledged write is in the file.
# Needs wrk, curl and sqlite3. Usage: tests/load/random_pages.sh [seconds] [connections]
# (SERVE_FLAGS=--no-page-cache measures with the page cache off.)
set -euo pipefail
cd "$(dirname "$0")/../.."
SECS=${1:-10}
CONNS=${2:-8}
SEED=13
source tests/load/common.sh
need wrk curl sqlite3
source tests/load/scale_server.sh

# 32 signed-in sessions, one picked at random per request: eight people at a counter, not one
# person in eight tabs (one session may run 2 heavy calculations at once, see web/http/heavy.rs).
for _ in $(seq 32); do
  session_cookie loadtest load-test-password >> "$WORK/cookies.txt"
done
COOKIE=$(head -1 "$WORK/cookies.txt")
TOKEN=$("$LOCKPOINT" token create loadtest --db "$DB")

# The paths each script picks from, one per line (read by the Lua scripts below).
sqlite3 "$DB" "SELECT '/builds/' || b.id FROM builds b JOIN cars c ON c.id = b.car_id
  JOIN customers u ON u.id = c.customer_id WHERE b.status = 'active' AND u.deleted_at IS NULL
  UNION ALL SELECT '/builds/' || b.id || '/tune' FROM builds b JOIN cars c ON c.id = b.car_id
  JOIN customers u ON u.id = c.customer_id WHERE b.status = 'active' AND u.deleted_at IS NULL" \
  > "$WORK/builds.txt"
sqlite3 "$DB" "SELECT '/customers/' || id FROM customers WHERE deleted_at IS NULL" > "$WORK/customers.txt"
# A search is a customer's name (spaces as +) or the digits of their phone, half and half.
sqlite3 "$DB" "SELECT '/customers?q=' || CASE WHEN id % 2 = 0 THEN replace(name, ' ', '+')
  ELSE replace(phone, '-', '') END FROM customers WHERE deleted_at IS NULL" > "$WORK/searches.txt"
sqlite3 "$DB" "SELECT id FROM builds WHERE status = 'active'" > "$WORK/active.txt"

# random.lua: each request a random line of the paths file, with a random session's cookie.
cat > "$WORK/random.lua" <<LUA
local paths, cookies = {}, {}
function init(args)
  for line in io.lines(args[1]) do paths[#paths + 1] = line end
  for line in io.lines("$WORK/cookies.txt") do cookies[#cookies + 1] = line end
  math.randomseed(os.time() + tonumber(tostring({}):sub(8), 16))
end
function request()
  return wrk.format("GET", paths[math.random(#paths)], {Cookie = cookies[math.random(#cookies)]})
end
LUA
# write.lua: each request a pass on a random active build, through the API.
cat > "$WORK/write.lua" <<LUA
local ids = {}
function init(args)
  for line in io.lines(args[1]) do ids[#ids + 1] = line end
  math.randomseed(os.time() + tonumber(tostring({}):sub(8), 16))
end
function request()
  local body = '{"run_on": "2026-11-20", "track": "Load strip", "launch_rpm": 4500, "sixty_ft_s": 1.4, "et_s": 10.9}'
  return wrk.format("POST", "/api/v1/builds/" .. ids[math.random(#ids)] .. "/passes",
    {["Content-Type"] = "application/json", Authorization = "Bearer $TOKEN"}, body)
end
-- count 201s, to compare with the rows in the file afterwards
created = 0
function response(status, headers, body) if status == 201 then created = created + 1 end end
function done(summary, latency, requests)
  local f = io.open(os.getenv("WRITES_OUT"), "a")
  for _, t in ipairs(threads) do f:write(t:get("created") .. "\n") end
  f:close()
end
threads = {}
function setup(thread) table.insert(threads, thread) end
LUA

row() {
  local name=$1 out=$2
  local rps p50 p99 errs ratio
  rps=$(awk '/^Requests\/sec/ {print $2}' <<<"$out")
  p50=$(awk '$1 == "50%" {print $2}' <<<"$out")
  p99=$(awk '$1 == "99%" {print $2}' <<<"$out")
  errs=$(awk '/Non-2xx or 3xx/ {n += $NF} /Socket errors/ {gsub(/[^0-9 ]/, " "); for (i = 1; i <= NF; i++) n += $i} END {print n + 0}' <<<"$out")
  [ -n "${HEALTHZ:-}" ] || HEALTHZ=$rps
  ratio=$(awk -v a="$rps" -v b="$HEALTHZ" 'BEGIN {printf "%.1f %%", 100 * a / b}')
  printf '| %-44s | %10s | %8s | %8s | %6s | %8s |\n' "$name" "$rps" "$p50" "$p99" "$errs" "$ratio"
}
wrk_run() { wrk -t2 -c"$CONNS" -d"${SECS}s" --latency "$@"; }

echo "$CONNS connections, ${SECS} s each, $(nproc) cores shared by wrk and the server"
printf '| %-44s | %10s | %8s | %8s | %6s | %8s |\n' route requests/s p50 p99 errors /healthz
printf '|%s|%s|%s|%s|%s|%s|\n' "----------------------------------------------" "------------" "----------" "----------" "--------" "----------"
row "GET /healthz" "$(wrk_run "$BASE/healthz")"
row "random build page or tuning page" "$(wrk_run -s "$WORK/random.lua" "$BASE" -- "$WORK/builds.txt")"
row "random customer page" "$(wrk_run -s "$WORK/random.lua" "$BASE" -- "$WORK/customers.txt")"
row "random search (name or phone digits)" "$(wrk_run -s "$WORK/random.lua" "$BASE" -- "$WORK/searches.txt")"

# Writes and reads at once.
BEFORE=$(sqlite3 "$DB" "SELECT count(*) FROM passes")
export WRITES_OUT="$WORK/created.txt"
: > "$WRITES_OUT"
wrk_run -s "$WORK/random.lua" "$BASE" -- "$WORK/builds.txt" > "$WORK/reads.out" &
READS=$!
WRITES=$(wrk_run -s "$WORK/write.lua" "$BASE" -- "$WORK/active.txt")
wait $READS
row "POST pass (random build), beside the reads" "$WRITES"
row "random build/tuning page, beside the writes" "$(cat "$WORK/reads.out")"
ACKED=$(awk '{n += $1} END {print n + 0}' "$WRITES_OUT")
AFTER=$(sqlite3 "$DB" "SELECT count(*) FROM passes")
echo "acknowledged writes: $ACKED; passes added in the file: $((AFTER - BEFORE))"
[ "$((AFTER - BEFORE))" -ge "$ACKED" ] || { echo "acknowledged writes are missing" >&2; exit 1; }

# One page alone, uncached: 200 random builds, each page asked once (a build not seen since
# the writes above changed the shop's generation, so nothing is cached).
single() {
  local suffix=$1
  # One write first, so no page rendered before it is reused.
  curl -s -o /dev/null -H "Authorization: Bearer $TOKEN" -H "Content-Type: application/json" \
    -d '{"run_on": "2026-11-20", "track": "Load strip", "launch_rpm": 4500}' "$BASE/api/v1/builds/1/passes"
  shuf -n 200 --random-source=<(yes) "$WORK/active.txt" | while read -r id; do
    curl -s -o /dev/null -w '%{time_total}\n' -H "Cookie: $COOKIE" "$BASE/builds/$id$suffix"
  done | sort -n | awk '{t[NR] = $1} END {printf "%.2f ms median, %.2f ms p90\n", 1000 * t[int(NR / 2) + 1], 1000 * t[int(NR * 0.9)]}'
}
echo "one build page alone, uncached (200 random builds, curl time_total): $(single "")"
echo "one tuning page alone, uncached (200 random builds, curl time_total): $(single /tune)"
echo "server peak resident memory (VmHWM): $(awk '/VmHWM/ {printf "%.1f MB", $2 / 1024}' /proc/$SERVER/status)"
server_log_clean
