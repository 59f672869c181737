//! Data-log benchmark: `cargo bench -p lockpoint-e2e --bench logs`. Reading and analysing a
//! 10 MB, 215 000-row, 6-column logger file (CSV parsing, blanks, clock, launch, lockup,
//! Savitzky–Golay derivative, torque, slip power and energy, tire spin).

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};

fn bench(c: &mut Criterion) {
    let text = lockpoint_e2e::logfile::text(215_000);
    let req = lockpoint_e2e::logfile::request();
    let valid = req.validate().expect("valid");
    let r = valid.run(text.as_bytes()).expect("the file reads");
    eprintln!(
        "file {:.1} MB, {} samples, lockup {:.3} s, energy {:.1} kJ",
        text.len() as f64 / 1e6,
        r.analysis.samples,
        r.analysis.lockup_s,
        r.analysis.slip_energy_j.unwrap_or(0.0) / 1000.0
    );
    let mut g = c.benchmark_group("data log");
    g.sample_size(10);
    g.bench_function("read and analyse 10 MB", |b| {
        b.iter(|| valid.run(black_box(text.as_bytes())).expect("reads"))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
