#!/usr/bin/env bash
# Bounded log analysis on loopback (a measurement, not a test): each case on a fresh server, so
# its peak resident memory (VmHWM) is that one analysis's.
#
#   1. an honest 50 MB log (2.8 M rows at 1 kHz, 47 minutes): answered, trace <= 5,000 points,
#      answer < 2 MiB, peak < 600 MiB;
#   2. a 50 MB log with uneven steps whose one clock would hold 4.9 M samples: the same bounds;
#   3. one whose clock would hold more than 5 M samples: 422 naming the limit;
#   4. three analyses at once: at most two run, the third gets 429 with Retry-After;
#   5. the pass page asked for with 50 different raw query strings: analysed once.
# Needs curl and python3. Usage: tests/load/bounded_logs.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
cargo build --release --quiet
WORK=$(mktemp -d)
SERVER=
trap '[ -n "$SERVER" ] && kill -9 $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
start_server() {
  [ -n "$SERVER" ] && { kill $SERVER; wait $SERVER 2>/dev/null || true; }
  rm -f "$WORK"/logs.db*
  serve_in_background "$WORK/logs.db" --demo
  TOKEN=$("$LOCKPOINT" token create demo --db "$WORK/logs.db")
}
hwm() { awk '/^VmHWM/ {printf "%.0f", $2 / 1024}' "/proc/$SERVER/status"; }

# Request bodies: {"units", "csv", "columns"} with the file as the JSON string.
python3 - "$WORK" <<'PY'
import json, sys
work = sys.argv[1]
def body(name, rows):
    csv = "t,engine,input\n" + "".join(rows)
    print(f"{name}: {len(csv) / 1048576:.1f} MiB of CSV")
    with open(f"{work}/{name}.json", "w") as f:
        json.dump({"units": "metric", "csv": csv,
                   "columns": {"time": "t", "engine_rpm": "engine", "input_rpm": "input"},
                   "time_unit": "ms",
                   "engine": {"torque_curve": [[1000, 500], [9000, 500]], "inertia": 0.2}}, f)
def launch(k):  # input rising to the engine's 6000 rpm over the first 800 samples
    return min(6000, k * 7.5)
# 1. 2.8 M rows, 1 ms steps (time in ms).
body("honest", (f"{k},6000,{launch(k):.0f}\n" for k in range(2_800_000)))
# 2./3. Steps of 1 ms with one long gap every 7 rows: the median step stays 1 ms, the clock
# at it holds (7 + gap) samples per 7 rows.
def uneven(rows, gap):
    t = 0
    for k in range(rows):
        yield f"{t},6000,{launch(t):.0f}\n"
        t += gap if k % 7 == 6 else 1
body("uneven", uneven(2_500_000, 7))      # 2.5 M * 13 / 7 = 4.6 M samples on one clock
body("past_cap", uneven(2_500_000, 20))   # about 9.3 M samples on one clock
PY

analyse() {  # name -> status, seconds, answer bytes, trace points, samples, peak MiB
  start_server
  local out="$WORK/$1.out"
  local s
  s=$(curl -s -o "$out" -w '%{http_code} %{time_total}' -H "Authorization: Bearer $TOKEN" \
      -H 'Content-Type: application/json' --data-binary "@$WORK/$1.json" "$BASE/api/v1/calc/log-analysis")
  python3 - "$out" "$1" "$s" "$(hwm)" <<'PY'
import json, os, sys
path, name, status, peak = sys.argv[1], sys.argv[2], sys.argv[3], sys.argv[4]
code, secs = status.split()
size = os.path.getsize(path)
v = json.load(open(path))
if code == "200":
    print(f"{name:9} {code} {float(secs):6.2f} s  answer {size / 1048576:.2f} MiB  "
          f"trace_points {v['trace_points']}  samples {v['samples']}  server peak {peak} MiB")
else:
    print(f"{name:9} {code} {float(secs):6.2f} s  {v['error'][:110]}  server peak {peak} MiB")
PY
}
echo "== one analysis per fresh server"
analyse honest
analyse uneven
analyse past_cap

echo "== three analyses at once"
start_server
PIDS=()
for i in 1 2 3; do
  curl -s -o /dev/null -D "$WORK/h$i" -w '%{http_code}\n' -H "Authorization: Bearer $TOKEN" \
    -H 'Content-Type: application/json' --data-binary "@$WORK/honest.json" \
    "$BASE/api/v1/calc/log-analysis" > "$WORK/s$i" &
  PIDS+=($!)
done
wait "${PIDS[@]}"
echo "statuses: $(cat "$WORK"/s1 "$WORK"/s2 "$WORK"/s3 | sort | tr '\n' ' ')  retry-after: $(grep -ih '^retry-after' "$WORK"/h1 "$WORK"/h2 "$WORK"/h3 | tr -d '\r' | tr '\n' ' ')"

echo "== the pass page asked for with 50 raw query strings"
COOKIE=$(session_cookie demo lockpoint-demo)
PASS=$(sqlite3 "$WORK/logs.db" 'SELECT pass_id FROM pass_logs LIMIT 1')
for n in $(seq 50); do
  curl -s -o /dev/null -w '%{http_code} %{time_total}\n' -H "Cookie: $COOKIE" "$BASE/passes/$PASS?compare=2&n=$n"
done | awk '{c[$1]++; t += $2; if ($2 > m) m = $2} END {for (k in c) printf "status %s x%d  ", k, c[k]; printf "mean %.1f ms, slowest %.1f ms\n", t / NR * 1000, m * 1000}'
