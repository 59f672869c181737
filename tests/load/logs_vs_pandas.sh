#!/usr/bin/env bash
# Side by side, in one run on one file: Lockpoint reading and analysing a 10 MB data log
# (release build, the example `log_memory`) against `pandas.read_csv` alone reading the same
# file. Prints both times (best of 5 for pandas, the example's own timing best of 5) and the
# ratio. Needs python3 with pandas (`pip install pandas`).
set -euo pipefail
cd "$(dirname "$0")/../.."
file="${TMPDIR:-/tmp}/lockpoint-log-10mb.csv"
cargo build --release -q -p lockpoint-e2e --example log_memory
bin=target/release/examples/log_memory
"$bin" --write "$file"
ours=$(for _ in 1 2 3 4 5; do "$bin" "$file" | sed -n 's/.*read and analysed in \([0-9.]*\) ms.*/\1/p'; done | sort -n | head -1)
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
echo "file: $(du -h "$file" | cut -f1) ($(wc -l < "$file") lines)"
echo "lockpoint read + analysis: ${ours} ms (best of 5)"
echo "pandas $(python3 -c 'import pandas; print(pandas.__version__)') read_csv alone: ${theirs} ms (best of 5)"
python3 -c "print(f'ratio lockpoint / pandas: {${ours} / ${theirs}:.2f}')"
rm -f "$file"
