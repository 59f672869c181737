//! Engineering benchmarks: `cargo bench -p lockpoint-e2e --bench engineering`.
//! Targets: the capacity curve at 1 rpm over 1000-9000 rpm under 100 µs; one recommendation with
//! both targets under 10 ms; one 3 s launch preview at 0.5 ms steps under 5 ms; a counterweight
//! search for a lockup time through the launch preview under 100 ms (2-core machine).

use std::hint::black_box;

use clutch::capacity::lockup::curve_at;
use clutch::capacity::recommend::{Limits, RecommendRequest, Steps, Targets};
use clutch::capacity::request::{
    CapacityRequest, DiscInput, EngineInput, FrictionInput, LeversInput, SpringsInput,
};
use clutch::launch::target::{Clean, Grid, LaunchTarget, find_counterweight};
use clutch::units::Units;
use criterion::{Criterion, criterion_group, criterion_main};

fn request() -> CapacityRequest {
    CapacityRequest {
        units: Units::Imperial,
        disc: DiscInput {
            outer_diameter: 10.4,
            inner_diameter: 6.6,
            count: 1,
            theory: Default::default(),
            extra_face_efficiency: None,
        },
        friction: FrictionInput {
            mu: Some(0.32),
            material: None,
        },
        springs: SpringsInput {
            count: 6,
            rate: 380.0,
            base_compression: 0.22,
            adjuster_pitch: 0.0625,
            adjuster_turns: 1.5,
            clamp_loss: 0.0,
            free_length: None,
            solid_height: None,
            release_travel: None,
            bind_margin: None,
            adjuster_turns_each: None,
        },
        levers: Some(LeversInput {
            count: 3,
            counterweight_g: 24.0,
            lever_mass_g: 12.0,
            cg_radius: Some(4.1),
            arm_ratio: Some(2.6),
            gain: None,
            body_cg_radius: None,
            body_arm_ratio: None,
            body_force_at_1000: None,
        }),
        engine: EngineInput {
            torque_curve: vec![
                [1000.0, 250.0],
                [2000.0, 330.0],
                [3000.0, 410.0],
                [4000.0, 455.0],
                [5000.0, 480.0],
                [6000.0, 470.0],
                [7000.0, 430.0],
                [8000.0, 390.0],
                [9000.0, 340.0],
            ],
        },
        launch_rpm: Some(4500.0),
        driveline: None,
        overclamp_factor: None,
    }
}

/// The reference launch body with a torque curve long enough (to 10 000 rpm) that the run goes
/// the full 3 s: 6000 steps of RK4 with lock, sixty feet and the trace.
fn launch_request() -> clutch::launch::request::LaunchRequest {
    use clutch::reference::{launch, without};
    let mut r = without(launch(), &["vehicle.air_density", "thermal.plate_share"]);
    r["engine"]["torque_curve"] =
        serde_json::json!([[3000, 700], [5000, 700], [7000, 700], [10000, 600]]);
    serde_json::from_value(r).expect("launch request")
}

fn benches(c: &mut Criterion) {
    let launch = launch_request().validate().expect("valid launch").model;
    assert_eq!(
        launch.simulate().end_s,
        3.0,
        "the benchmark launch runs the full 3 s"
    );
    c.bench_function("launch preview, 3 s at 0.5 ms", |b| {
        b.iter(|| black_box(&launch).simulate())
    });
    let valid = launch_request().validate().expect("valid launch");
    let target = LaunchTarget::LockupTime(1.5);
    c.bench_function("counterweight for a 1.5 s lockup, launch preview", |b| {
        b.iter(|| {
            find_counterweight(black_box(&valid), target, Grid::default(), Clean::default())
                .unwrap()
        })
    });
    let valid = request().validate().expect("valid request");
    let law = valid.model.law();
    c.bench_function("capacity curve, 1 rpm steps, 1000-9000 rpm", |b| {
        b.iter(|| curve_at(black_box(&law), black_box(&valid.model.engine), 1.0).unwrap())
    });
    let rec = RecommendRequest {
        setup: request(),
        targets: Targets {
            lockup_rpm: 5600.0,
            launch_ratio: Some(0.85),
        },
        steps: Steps::default(),
        limits: Limits::default(),
    };
    c.bench_function("recommendation, lockup and launch targets", |b| {
        b.iter(|| clutch::capacity::recommend::recommend(black_box(&rec)).unwrap())
    });
}

criterion_group!(engineering, benches);
criterion_main!(engineering);
