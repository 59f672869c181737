#!/usr/bin/env bash
# The import/export measurement (a benchmark, not a test): the scale generator's invented shop
# (tests/load/scale.rs: 10,000 customers, cars and builds, 1,000,000 cover heights, 200,000
# passes, fixed seed) written once as an export document, then `lockpoint import` of it into a
# fresh database and `lockpoint export` of the result, each under /usr/bin/time -v: elapsed
# time and peak resident memory (maximum resident set size) of the whole process.
# Goals: import under 60 s and 100 MB. Then checks that the imported database's work-due list
# (the kept status) equals the one worked out from the full history (`scale --check-due`), and
# reports whether every imported build has a current status (needs sqlite3 for that line).
# Needs /usr/bin/time (Debian package `time`). Usage: tests/load/import_scale.sh [seed]
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
SEED=${1:-13}
[ -x /usr/bin/time ] || { echo "/usr/bin/time is not installed (apt-get install time)" >&2; exit 1; }

cargo build --release --quiet --example scale --bin lockpoint
DOC="target/load/scale-$SEED.json"
scale_shop --json "$DOC" "$SEED"
WORK=$(mktemp -d -p target/load import-scale.XXXXXX)
trap 'rm -rf "$WORK"' EXIT

# Runs a command under /usr/bin/time -v; prints "<seconds> <cpu seconds> <peak MB>" (CPU time,
# user + system, moves less than elapsed time when other work shares the cores).
measure() {
  /usr/bin/time -v "$@" > "$WORK/out" 2> "$WORK/time" || { cat "$WORK/out" "$WORK/time" >&2; exit 1; }
  awk -F': ' '
    /Elapsed \(wall clock\)/ { n = split($2, t, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + t[i] }
    /User time|System time/ { cpu += $2 }
    /Maximum resident set size/ { kb = $2 }
    END { printf "%.1f %.1f %.1f\n", s, cpu, kb / 1024 }' "$WORK/time"
}

echo "document: $DOC ($(du -m "$DOC" | cut -f1) MB), $(nproc) cores"
read -r ISECS ICPU IMB < <(measure "$LOCKPOINT" import "$DOC" --db "$WORK/imported.db")
cat "$WORK/out"
STALE="? (no sqlite3)"
if command -v sqlite3 >/dev/null; then
  STALE=$(sqlite3 "$WORK/imported.db" \
    "SELECT (SELECT COUNT(*) FROM builds) - (SELECT COUNT(*) FROM build_status WHERE stale = 0)")
fi
"$SCALE" --check-due "$WORK/imported.db"
read -r ESECS ECPU EMB < <(measure "$LOCKPOINT" export "$WORK/export" --db "$WORK/imported.db")
cat "$WORK/out"

printf '| %-42s | %8s | %8s | %14s |\n' "command" "elapsed" "CPU" "peak resident"
printf '|%s|%s|%s|%s|\n' "--------------------------------------------" "----------" "----------" "----------------"
printf '| %-42s | %6s s | %6s s | %11s MB |\n' "lockpoint import (1,000,000 measurements)" "$ISECS" "$ICPU" "$IMB"
printf '| %-42s | %6s s | %6s s | %11s MB |\n' "lockpoint export (JSON and CSV)" "$ESECS" "$ECPU" "$EMB"
echo "load average at the end: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "database: $(du -m "$WORK/imported.db" | cut -f1) MB; export: $(du -m "$WORK/export" | cut -f1) MB;" \
  "builds without a current work-due status after the import: $STALE"
awk -v s="$ISECS" -v m="$IMB" 'BEGIN { if (s >= 60 || m >= 100) { print "import goals (< 60 s, < 100 MB): NOT met"; exit 1 } print "import goals (< 60 s, < 100 MB): met" }'
