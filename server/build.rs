//! Build script: `sqlx::migrate!()` in `db.rs` embeds every file of `migrations/`, but Cargo only
//! notices edits to files it already knows. Watching the folder makes a new migration file
//! rebuild the binary that embeds it.

fn main() {
    println!("cargo:rerun-if-changed=migrations");
}
