# Sourced by the scale load runs (scale.sh, random_pages.sh), from the repository's top folder,
# after common.sh: builds the release server and the scale generator, generates the scale shop once (kept in
# target/load/scale-$SEED.db), and starts a server on a copy of it (the copy takes the writes).
# Sets WORK (a temporary folder, removed at exit), DB, SERVER (its pid) and BASE (its address);
# $SERVE_FLAGS, when set, go to `lockpoint serve` (such as --no-page-cache).
cargo build --release --quiet --example scale --bin lockpoint
CACHED="target/load/scale-$SEED.db"
scale_shop --db "$CACHED" "$SEED"
WORK=$(mktemp -d)
DB="$WORK/scale.db"
cp "$CACHED" "$DB"
SERVER=
trap '[ -n "$SERVER" ] && kill $SERVER 2>/dev/null; rm -rf "$WORK"' EXIT
# shellcheck disable=SC2086 # SERVE_FLAGS holds whole flags
WAIT_TRIES=300 serve_in_background "$DB" ${SERVE_FLAGS:-}
[ -n "$BASE" ] || { cat "$WORK/serve.err" >&2; exit 1; }
