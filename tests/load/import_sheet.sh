#!/usr/bin/env bash
# The spreadsheet import measured (a benchmark, not a test): an invented 10,000-row sheet (one
# build per row, a last cover height on each, units in cells and columns, 4,000 customers with
# two or three cars each) sent to a running server as `POST /api/v1/import/spreadsheet`, first
# as a dry run, then committed. Reports each request's elapsed time (curl) and the server
# process's peak resident memory (VmHWM) before and after. Goals: the import under 10 s and
# 100 MB. Usage: tests/load/import_sheet.sh [rows] [debug|release]   (defaults: 10000 release);
# NO_BUILD=1 uses the binary as it is.
set -euo pipefail
cd "$(dirname "$0")/../.."
ROWS=${1:-10000}
PROFILE=${2:-release}
if [ -n "${NO_BUILD:-}" ]; then
  :
elif [ "$PROFILE" = release ]; then
  cargo build --release --quiet --bin lockpoint
else
  cargo build --quiet --bin lockpoint
fi
BIN=${CARGO_TARGET_DIR:-target}/$PROFILE/lockpoint
mkdir -p target/load
WORK=$(mktemp -d -p target/load import-sheet.XXXXXX)
PID=
trap '[ -n "$PID" ] && kill "$PID" 2>/dev/null; rm -rf "$WORK"' EXIT
DB="$WORK/shop.db"

# The sheet: invented names, fixed pattern, no randomness.
awk -v rows="$ROWS" 'BEGIN {
  print "Customer,Phone,Email,Car,Weight (lb),Build,Disc OD,Disc ID,Springs,Spring rate,Shims,Checked on,Cover height,Passes,Notes"
  for (i = 0; i < rows; i++) {
    c = int(i / 2.5)
    printf "Test Customer %d,555-%07d,c%d@example.test,Car %d of %d,%d,Build %d,7.25 in,%.2f in,6,%d,0.010 0.010 0.020,%d/%d/20%02d,%.3f in,%d,\"row %d, imported\"\n",
      c, c, c, i % 3, c, 2600 + (i % 900), i, 4.5 + (i % 5) * 0.05, 250 + (i % 120), 1 + (i % 12), 1 + (i % 28), 10 + (i % 15), 2.05 + (i % 40) * 0.001, i % 200, i
  }
}' > "$WORK/sheet.csv"
python3 - "$WORK" <<'PY'
import json, sys
work = sys.argv[1]
csv = open(f"{work}/sheet.csv").read()
columns = {"customer_name": "Customer", "customer_phone": "Phone", "customer_email": "Email",
  "customer_notes": "Notes", "car_description": "Car", "car_weight_kg": "Weight (lb)",
  "build_label": "Build", "build_facing_od_mm": "Disc OD", "build_facing_id_mm": "Disc ID",
  "build_spring_count": "Springs", "build_spring_rate_n_per_mm": "Spring rate",
  "build_shim_stack_mm": "Shims", "measurement_measured_on": "Checked on",
  "measurement_height_mm": "Cover height", "measurement_passes": "Passes"}
units = {"Weight (lb)": "lb", "Disc OD": "cell", "Disc ID": "cell", "Spring rate": "lbf/in",
  "Shims": "in", "Cover height": "cell"}
for dry in (True, False):
    body = {"file_name": "load-sheet.csv", "csv": csv, "columns": columns, "units": units,
            "date_order": "mdy", "duplicates": "skip", "dry_run": dry}
    open(f"{work}/{'dry' if dry else 'commit'}.json", "w").write(json.dumps(body))
PY

"$BIN" user add loader --role admin --db "$DB" <<< "load test password 1" > /dev/null
TOKEN=$("$BIN" token create loader --db "$DB" | tail -1)
"$BIN" serve --db "$DB" --addr 127.0.0.1:0 > "$WORK/serve.log" 2>&1 &
PID=$!
for _ in $(seq 1 100); do
  ADDR=$(grep -oE '127\.0\.0\.1:[0-9]+' "$WORK/serve.log" | head -1 || true)
  [ -n "$ADDR" ] && curl -fs "http://$ADDR/healthz" > /dev/null 2>&1 && break
  sleep 0.1
done
[ -n "${ADDR:-}" ] || { cat "$WORK/serve.log" >&2; exit 1; }
hwm() { awk '/VmHWM/ { printf "%.1f", $2 / 1024 }' "/proc/$PID/status"; }
BEFORE=$(hwm)
post() {
  curl -s -o "$WORK/answer.json" -w '%{http_code} %{time_total}\n' \
    -H "Authorization: Bearer $TOKEN" -H 'Content-Type: application/json' \
    --data-binary "@$WORK/$1.json" "http://$ADDR/api/v1/import/spreadsheet"
}
read -r DSTATUS DSECS < <(post dry)
DRY=$(python3 -c 'import json,sys; a=json.load(open(sys.argv[1])); print(a["rows"], "rows,", len(a["problems"]), "problems")' "$WORK/answer.json")
read -r CSTATUS CSECS < <(post commit)
DONE=$(python3 -c 'import json,sys; a=json.load(open(sys.argv[1])); print(a["customers_created"], "customers,", a["cars_created"], "cars,", a["builds_created"], "builds,", a["measurements_created"], "cover heights")' "$WORK/answer.json")
AFTER=$(hwm)
echo "sheet: $ROWS rows, $(du -k "$WORK/sheet.csv" | cut -f1) KB; $(nproc) cores; $PROFILE build"
printf '| %-28s | %6s | %9s |\n' "request" "status" "elapsed"
printf '| %-28s | %6s | %7.2f s |\n' "dry run ($DRY)" "$DSTATUS" "$DSECS"
printf '| %-28s | %6s | %7.2f s |\n' "commit" "$CSTATUS" "$CSECS"
echo "made: $DONE"
echo "server peak resident memory: $BEFORE MB after start, $AFTER MB after the import"
echo "load average at the end: $(cut -d' ' -f1-3 /proc/loadavg)"
[ "$CSTATUS" = 200 ] || { echo "the commit was refused" >&2; head -c 2000 "$WORK/answer.json" >&2; exit 1; }
awk -v s="$CSECS" -v m="$AFTER" 'BEGIN { if (s >= 10 || m >= 100) { print "goals (< 10 s, < 100 MB): NOT met"; exit 1 } print "goals (< 10 s, < 100 MB): met" }'
