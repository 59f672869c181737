#!/usr/bin/env bash
# Slow request bodies from anonymous clients (a measurement, not a test): 1,100 connections
# each send a POST /login's headers (Content-Length 4000) and then one byte every 2 s, opened
# again whenever the server drops them, more than the server's 1,024-connection cap. Meanwhile
# /healthz and a signed-in page are fetched one at a time; each should answer in < 2 s.
# Then a 50 MB log sent at 1 MB/s through the API completes.
# Needs curl and python3. Usage: tests/load/slow_bodies.sh [seconds]
set -euo pipefail
cd "$(dirname "$0")/../.."
source tests/load/common.sh
SECS=${1:-30}
cargo build --release --quiet
WORK=$(mktemp -d)
SERVER=
ATTACK=
trap '[ -n "$ATTACK" ] && kill $ATTACK 2>/dev/null; [ -n "$SERVER" ] && kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
# An open-file limit that gives the server its full cap of 1,024 connections.
OPEN_FILES=2048 serve_in_background "$WORK/slow.db" --demo
COOKIE=$(session_cookie demo lockpoint-demo)
TOKEN=$("$LOCKPOINT" token create demo --db "$WORK/slow.db")

cat > "$WORK/attack.py" <<'PY'
import asyncio, sys
host, port = sys.argv[1].removeprefix("http://").split(":")
secs = float(sys.argv[2])
opened = dropped = 0
HEAD = (b"POST /login HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-www-form-urlencoded\r\n"
        b"Content-Length: 4000\r\n\r\n")
async def one(stop):
    global opened, dropped
    while asyncio.get_running_loop().time() < stop:
        try:
            r, w = await asyncio.open_connection(host, int(port))
            opened += 1
            w.write(HEAD)
            while asyncio.get_running_loop().time() < stop:
                w.write(b"a")
                await w.drain()
                try:
                    await asyncio.wait_for(r.read(1), 2.0)
                    break  # closed or answered: the server is done with this body
                except asyncio.TimeoutError:
                    pass
            w.close()
        except OSError:
            await asyncio.sleep(0.1)
        dropped += 1
async def main():
    stop = asyncio.get_running_loop().time() + secs
    await asyncio.gather(*(one(stop) for _ in range(1100)))
    print(f"attack: {opened} connections opened, {dropped} dropped or refused")
asyncio.run(main())
PY
(ulimit -n 4096; exec python3 "$WORK/attack.py" "$BASE" "$SECS") > "$WORK/attack.out" 2>&1 &
ATTACK=$!
sleep 8
echo "== during the attack (1,100 slow /login bodies, cap 1,024)"
for i in $(seq 5); do
  printf 'GET /healthz   %s\n' "$(curl -s -o /dev/null -m 30 -w '%{http_code} %{time_total}s' "$BASE/healthz")"
  printf 'GET /builds/1  %s\n' "$(curl -s -o /dev/null -m 30 -w '%{http_code} %{time_total}s' -H "Cookie: $COOKIE" "$BASE/builds/1")"
  sleep 2
done
echo "server connections open: $(ls /proc/$SERVER/fd | wc -l) file descriptors"
wait $ATTACK || true
ATTACK=
cat "$WORK/attack.out"

echo "== a 50 MB log sent at 1 MB/s"
python3 - "$WORK/big.json" <<'PY'
import json, sys
rows = "".join(f"{k},6000,{min(6000, k * 7.5):.0f}\n" for k in range(2_800_000))
json.dump({"units": "metric", "csv": "t,engine,input\n" + rows, "time_unit": "ms",
           "columns": {"time": "t", "engine_rpm": "engine", "input_rpm": "input"}}, open(sys.argv[1], "w"))
PY
printf 'POST /api/v1/calc/log-analysis, %s MB at 1 MB/s: %s\n' "$(( $(stat -c %s "$WORK/big.json") / 1000000 ))" \
  "$(curl -s -o /dev/null --limit-rate 1M -w '%{http_code} after %{time_total}s' -H "Authorization: Bearer $TOKEN" \
     -H 'Content-Type: application/json' --data-binary "@$WORK/big.json" "$BASE/api/v1/calc/log-analysis")"
