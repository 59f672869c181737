//! Lockpoint's browser tests (`browser/`, real headless Chromium against the real server binary)
//! and criterion benchmarks of the engineering (`benches/`). A workspace member of its own so
//! their crates stay out of the everyday `cargo test` at the top level; nothing lives here.

/// The invented logger file the data-log benchmark and memory run read.
pub mod logfile;
