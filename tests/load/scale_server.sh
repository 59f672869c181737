# Sourced by the scale load runs (scale.sh, random_pages.sh), from the repository's top folder:
# builds the release server and the scale generator, generates the scale shop once (kept in
# target/load/scale-$SEED.db), and starts a server on a copy of it (the copy takes the writes).
# Sets WORK (a temporary folder, removed at exit), DB, SERVER (its pid) and BASE (its address);
# $SERVE_FLAGS, when set, go to `lockpoint serve` (such as --no-page-cache).
cargo build --release --quiet --example scale --bin lockpoint
mkdir -p target/load
CACHED="target/load/scale-$SEED.db"
if [ ! -f "$CACHED" ]; then
  rm -f "$CACHED.tmp"
  ./target/release/examples/scale --db "$CACHED.tmp" --seed "$SEED"
  mv "$CACHED.tmp" "$CACHED"
fi
WORK=$(mktemp -d)
DB="$WORK/scale.db"
cp "$CACHED" "$DB"
./target/release/lockpoint serve --db "$DB" --addr 127.0.0.1:0 ${SERVE_FLAGS:-} > "$WORK/serve.out" 2> "$WORK/serve.err" &
SERVER=$!
trap 'kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
for _ in $(seq 300); do grep -q '^listening on' "$WORK/serve.out" 2>/dev/null && break; sleep 0.2; done
BASE=$(sed -n 's/^listening on //p' "$WORK/serve.out")
[ -n "$BASE" ] || { cat "$WORK/serve.err" >&2; exit 1; }
