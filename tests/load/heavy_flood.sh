#!/usr/bin/env bash
# Heavy work kept off the pages (a measurement, not a test): one API token floods the costliest
# launch preview the limits allow (10 s at 0.05 ms steps, a 50-point μ(θ) table) on 8
# connections while a signed-in user loads a page on 2 connections. The page's p99 should stay
# under 50 ms; the flood gets its 2 calculations at a time and 429 for the rest.
# Needs wrk (apt-get install wrk) and curl. Usage: tests/load/heavy_flood.sh [seconds]
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
SECS=${1:-20}
need wrk
cargo build --release --quiet
WORK=$(mktemp -d)
SERVER=
trap '[ -n "$SERVER" ] && kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
serve_in_background "$WORK/flood.db" --demo
COOKIE=$(session_cookie demo lockpoint-demo)
TOKEN=$("$LOCKPOINT" token create demo --db "$WORK/flood.db")
MU=$(python3 -c 'print(",".join(f"[{20 + 10 * i}, {0.40 - 0.002 * i:.3f}]" for i in range(50)))')
BODY='{"units": "metric",
  "disc": {"outer_diameter": 240, "inner_diameter": 160, "count": 3},
  "friction": {"mu": 0.30, "mu_vs_temperature": ['"$MU"']},
  "springs": {"count": 4, "rate": 1000, "base_compression": 1},
  "levers": {"count": 1, "counterweight_g": 50, "cg_radius": 100, "arm_ratio": 1},
  "launch_rpm": 6000,
  "engine": {"torque_curve": [[3000, 700], [5000, 700], [9000, 700]], "inertia": 0.20, "friction_torque": 0},
  "driveline": {"first_gear_ratio": 2.6, "final_drive_ratio": 4.1, "efficiency": 0.95,
    "input_inertia": 0.02, "driveshaft_inertia": 0.05, "rear_axle_inertia": 3.0, "front_axle_inertia": 1.0},
  "vehicle": {"mass": 1500, "tire_diameter": 760, "wheelbase": 2700, "cg_to_front_axle": 1600,
    "cg_height": 500, "drag_height": 500, "rolling_resistance": 0.015, "drag_area": 0.6,
    "air_density": 1.2, "tire_grip": 2.0, "tire_grip_spinning": 1.6},
  "thermal": {"pressure_plate_mass": 8, "flywheel_mass": 12, "specific_heat": 460,
    "start_temperature": 30, "plate_share": 0.45},
  "step_ms": 0.05, "duration_s": 10}'
echo "$BODY" > "$WORK/launch.json"
one=$(curl -s -o "$WORK/one.out" -w '%{http_code} %{time_total}' -H "Authorization: Bearer $TOKEN" \
  -H 'Content-Type: application/json' --data-binary "@$WORK/launch.json" "$BASE/api/v1/calc/launch")
echo "one costliest launch alone: $one s ($(head -c 120 "$WORK/one.out"))"
cat > "$WORK/flood.lua" <<LUA
wrk.method = "POST"
wrk.body = [==[$(cat "$WORK/launch.json")]==]
wrk.headers["Content-Type"] = "application/json"
wrk.headers["Authorization"] = "Bearer $TOKEN"
LUA
count_lua "$WORK/flood.lua"
wrk -t1 -c8 -d"${SECS}s" -s "$WORK/flood.lua" "$BASE/api/v1/calc/launch" > "$WORK/flood.txt" &
FLOOD=$!
sleep 1
wrk -t1 -c2 -d"$((SECS - 2))s" --latency -H "Cookie: $COOKIE" "$BASE/builds/1" > "$WORK/page.txt"
wait $FLOOD
echo "flood $(grep '^statuses' "$WORK/flood.txt")"
printf 'page GET /builds/1 during the flood: %s requests/s, p50 %s, p99 %s\n' \
  "$(awk '/^Requests\/sec/ {print $2}' "$WORK/page.txt")" \
  "$(awk '$1 == "50%" {print $2}' "$WORK/page.txt")" "$(awk '$1 == "99%" {print $2}' "$WORK/page.txt")"
