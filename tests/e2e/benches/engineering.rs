//! Engineering benchmarks: `cargo bench -p lockpoint-e2e --bench engineering`.
//! Targets: the capacity curve at 1 rpm over 1000-9000 rpm under 100 µs; one recommendation with
//! both targets under 10 ms (2-core machine).

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use lockpoint::clutch::lockup::curve_at;
use lockpoint::clutch::recommend::{Limits, RecommendRequest, Steps, Targets};
use lockpoint::clutch::request::{
    CapacityRequest, DiscInput, EngineInput, FrictionInput, LeversInput, SpringsInput,
};
use lockpoint::clutch::units::Units;

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
        },
        levers: Some(LeversInput {
            count: 3,
            counterweight_g: 24.0,
            lever_mass_g: 12.0,
            cg_radius: Some(4.1),
            arm_ratio: Some(2.6),
            gain: None,
            body_cg_radius: None,
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

fn benches(c: &mut Criterion) {
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
        b.iter(|| lockpoint::clutch::recommend(black_box(&rec)).unwrap())
    });
}

criterion_group!(engineering, benches);
criterion_main!(engineering);
