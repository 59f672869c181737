# Sourced by the load scripts, from the repository's top folder (where they cd first): the
# release binary, the tools a run needs, a server started in the background and waited for, a
# signed-in session, the API write every run uses (a track pass), and the check of the server's
# log at the end.

# The release binary where cargo puts it (CARGO_TARGET_DIR when that is set).
LOCKPOINT="${CARGO_TARGET_DIR:-target}/release/lockpoint"

# The scale generator (tests/load/scale.rs), built with `--example scale`.
SCALE="${CARGO_TARGET_DIR:-target}/release/examples/scale"

# scale_shop --db|--json FILE SEED: the scale generator's invented shop for SEED, written to FILE
# as a database or an export document the first time and kept there for later runs.
scale_shop() {
  mkdir -p "$(dirname "$2")"
  if [ ! -f "$2" ]; then
    rm -f "$2.tmp"
    "$SCALE" "$1" "$2.tmp" --seed "$3"
    mv "$2.tmp" "$2"
  fi
}

# need TOOL...: stops the run when a tool is missing.
need() {
  local tool
  for tool in "$@"; do
    command -v "$tool" >/dev/null || { echo "$tool is not installed (apt-get install $tool)" >&2; exit 1; }
  done
}

# serve_in_background DB [SERVE ARGS...]: `lockpoint serve` on DB at a free loopback port, its
# output in $WORK/serve.out and its errors added to $WORK/serve.err, under an open-file limit of
# $OPEN_FILES when that is set. Sets SERVER (its pid) and, once it says where it listens (waiting
# at most $WAIT_TRIES × 0.2 s, 100 unless set), BASE (its address).
serve_in_background() {
  local db=$1
  shift
  : > "$WORK/serve.out"
  (
    if [ -n "${OPEN_FILES:-}" ]; then ulimit -n "$OPEN_FILES"; fi
    exec "$LOCKPOINT" serve --db "$db" --addr 127.0.0.1:0 "$@"
  ) > "$WORK/serve.out" 2>> "$WORK/serve.err" &
  SERVER=$!
  for _ in $(seq "${WAIT_TRIES:-100}"); do
    grep -q '^listening on' "$WORK/serve.out" 2>/dev/null && break
    sleep 0.2
  done
  BASE=$(sed -n 's/^listening on //p' "$WORK/serve.out")
}

# session_cookie USER PASSWORD: signs in at $BASE; prints the session's Cookie header value.
session_cookie() {
  curl -s -c "$WORK/jar" -o /dev/null -d "username=$1&password=$2" "$BASE/login"
  echo "lockpoint_session=$(awk '$6 == "lockpoint_session" {print $7}' "$WORK/jar")"
}

# pass_lua FILE TOKEN [TRACK]: a wrk script that records a track pass at TRACK ("Load strip"
# unless given) through the API with TOKEN.
pass_lua() {
  cat > "$1" <<LUA
wrk.method = "POST"
wrk.body = '{"run_on": "2026-11-20", "track": "${3:-Load strip}", "launch_rpm": 4500, "sixty_ft_s": 1.4, "et_s": 10.9}'
wrk.headers["Content-Type"] = "application/json"
wrk.headers["Authorization"] = "Bearer $2"
LUA
}

# count_lua FILE: adds to a wrk script the count of its answers by status (wrk's own summary
# lumps 4xx and 5xx together), printed when it ends as
# "statuses: 2xx/3xx N, 4xx N (429 N), 5xx N".
count_lua() {
  cat >> "$1" <<'LUA'
local threads = {}
function setup(thread) table.insert(threads, thread) end
function init(args) ok, c4, busy, c5 = 0, 0, 0, 0 end
function response(status, headers, body)
  if status >= 500 then c5 = c5 + 1 elseif status >= 400 then c4 = c4 + 1 else ok = ok + 1 end
  if status == 429 then busy = busy + 1 end
end
function done(summary, latency, requests)
  local a, b, c, d = 0, 0, 0, 0
  for _, t in ipairs(threads) do
    a = a + t:get("ok"); b = b + t:get("c4"); c = c + t:get("busy"); d = d + t:get("c5")
  end
  io.write(string.format("statuses: 2xx/3xx %d, 4xx %d (429 %d), 5xx %d\n", a, b, c, d))
end
LUA
}

# wrk_run WRK-ARGS...: one route for $SECS s at $CONNS connections; sets OUT (wrk's report),
# RPS (requests/s) and P99.
wrk_run() {
  OUT=$(wrk -t2 -c"$CONNS" -d"${SECS}s" --latency "$@")
  RPS=$(awk '/^Requests\/sec/ {print $2}' <<<"$OUT")
  P99=$(awk '$1 == "99%" {print $2}' <<<"$OUT")
}

# server_log_clean: fails the run when the server's log shows lock errors or panics.
server_log_clean() {
  if grep -qi 'database is locked\|panicked' "$WORK/serve.err"; then
    echo "server log shows lock errors or panics" >&2
    exit 1
  fi
}
