//! One 10 MB data log read and analysed as the server does it (its two halves at once while a
//! second heavy-work place is free, `Heavy::spare_core`), with the time it took and the
//! process's peak resident memory (Linux `VmHWM`) against the file's size:
//! `cargo run --release -p lockpoint-e2e --example log_memory [-- FILE]`. Without a file it
//! makes the benchmark's invented one. With `--write FILE` it only writes that file (for a side
//! by side run with another reader). `--best-of N FILE` reads and analyses the file N times in
//! this one process, as a long-running server does, and prints the shortest time (the way the
//! side-by-side script times `pandas.read_csv`, best of 5 in one process).

use std::time::Instant;

fn vm_hwm_kb() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse().ok())
        })
        .unwrap_or(0)
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.first().map(String::as_str) == Some("--write") {
        let path = args.get(1).expect("--write FILE");
        std::fs::write(path, lockpoint_e2e::logfile::text(215_000)).expect("write");
        return;
    }
    let (runs, file) = match args.first().map(String::as_str) {
        Some("--best-of") => (
            args.get(1)
                .and_then(|n| n.parse().ok())
                .expect("--best-of N FILE"),
            args.get(2),
        ),
        _ => (1, args.first()),
    };
    let text = match file {
        Some(path) => std::fs::read(path).expect("read the file"),
        None => lockpoint_e2e::logfile::text(215_000).into_bytes(),
    };
    let before = vm_hwm_kb();
    let req = lockpoint_e2e::logfile::request();
    let heavy = lockpoint::web::http::heavy::Heavy::default();
    let mut took = std::time::Duration::MAX;
    let mut r = None;
    for _ in 0..runs {
        let start = Instant::now();
        let result = req
            .validate()
            .and_then(|v| v.run_on(&text, &heavy.spare_core()))
            .expect("the file reads");
        took = took.min(start.elapsed());
        r = Some(result);
    }
    let r = r.expect("at least one run");
    let peak = vm_hwm_kb();
    let mb = text.len() as f64 / 1e6;
    println!(
        "file {mb:.2} MB, {} samples: read and analysed in {:.1} ms{}; lockup {:.3} s",
        r.analysis.samples,
        took.as_secs_f64() * 1000.0,
        if runs > 1 {
            format!(" (best of {runs})")
        } else {
            String::new()
        },
        r.analysis.lockup_s
    );
    println!(
        "peak resident {:.1} MB (with the file in memory {:.1} MB before the analysis): {:.2} x the file",
        peak as f64 / 1024.0,
        before as f64 / 1024.0,
        peak as f64 * 1024.0 / text.len() as f64
    );
}
