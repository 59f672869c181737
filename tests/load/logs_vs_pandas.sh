#!/usr/bin/env bash
# Side by side on one file: Lockpoint reading and analysing a 10 MB data log (release build,
# the example `log_memory`, its own timing, the server's way: two halves at once while a second
# heavy-work place is free) against `pandas.read_csv` alone reading the same file. Each run
# times both the same way, best of 5 in one process each (as a long-running server reads logs),
# one right after the other, and prints the ratio, with Lockpoint's best of 5 fresh processes
# beside it for reference;
# `tests/load/logs_vs_pandas.sh [RUNS]` does RUNS runs (default 1) and, past one, prints every
# ratio, the lowest, the highest and the median, and the load average before and after.
# Needs python3 with pandas (`pip install pandas`); the tests never do.
set -euo pipefail
cd "$(dirname "$0")/../.."
runs="${1:-1}"
file="${TMPDIR:-/tmp}/lockpoint-log-10mb.csv"
cargo build --release -q -p lockpoint-e2e --example log_memory
bin=${CARGO_TARGET_DIR:-target}/release/examples/log_memory
"$bin" --write "$file"
trap 'rm -f "$file"' EXIT
echo "file: $(du -h "$file" | cut -f1) ($(wc -l < "$file") lines); pandas $(python3 -c 'import pandas; print(pandas.__version__)'); load before: $(cut -d' ' -f1-3 /proc/loadavg)"
ratios=()
for run in $(seq 1 "$runs"); do
    ours=$("$bin" --best-of 5 "$file" | sed -n 's/.*read and analysed in \([0-9.]*\) ms.*/\1/p')
    fresh=$(for _ in 1 2 3 4 5; do "$bin" "$file" | sed -n 's/.*read and analysed in \([0-9.]*\) ms.*/\1/p'; done | sort -n | head -1)
    theirs=$(python3 - "$file" <<'PY'
import sys, time
import pandas
best = min(
    (lambda t0: (pandas.read_csv(sys.argv[1]), time.perf_counter() - t0)[1])(time.perf_counter())
    for _ in range(5)
)
print(f"{best * 1000:.1f}")
PY
)
    ratio=$(python3 -c "print(f'{${ours} / ${theirs}:.2f}')")
    ratios+=("$ratio")
    echo "run $run: lockpoint read + analysis ${ours} ms, pandas read_csv alone ${theirs} ms (each best of 5 in one process): ratio ${ratio}; lockpoint best of 5 fresh processes ${fresh} ms"
done
if [ "$runs" -gt 1 ]; then
    python3 -c "
import statistics, sys
r = [float(x) for x in sys.argv[1:]]
print(f'{len(r)} runs, ratio lockpoint / pandas: lowest {min(r):.2f}, highest {max(r):.2f}, median {statistics.median(r):.2f}; under 0.7: {sum(x < 0.7 for x in r)} of {len(r)}')
" "${ratios[@]}"
fi
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
