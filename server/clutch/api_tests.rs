//! Request-level tests of the calculation API: capacity and recommend, through JSON.

use crate::InputError;
use crate::capacity::recommend::{RecommendRequest, recommend};
use crate::capacity::report::{CapacityReport, capacity};
use crate::capacity::request::CapacityRequest;
use crate::units::{MM_PER_IN, N_PER_LBF, NM_PER_LBFFT, Units};
use proptest::prelude::*;

const EXAMPLE: &str = r#"{"units": "imperial",
 "disc": {"outer_diameter": 10.4, "inner_diameter": 6.6, "count": 1, "theory": "uniform_wear"},
 "friction": {"mu": 0.32},
 "springs": {"count": 6, "rate": 380.0, "base_compression": 0.22,
             "adjuster_pitch": 0.0625, "adjuster_turns": 1.5},
 "levers": {"count": 3, "counterweight_g": 24.0, "lever_mass_g": 12.0,
            "cg_radius": 4.1, "arm_ratio": 2.6},
 "engine": {"torque_curve": [[3000, 410], [4000, 455], [5000, 480], [6000, 470], [7000, 430]]},
 "launch_rpm": 4500}"#;

fn example() -> CapacityRequest {
    serde_json::from_str(EXAMPLE).expect("example parses")
}

// Wear since the last shim: the springs extend by the cover-height growth, so the static clamp
// falls by count × rate × growth (Hooke's law for parallel springs, as the static clamp itself)
// and nothing else moves [D]. Absent, the answer is the same as before, field left out.
#[test]
fn clamp_loss_comes_off_the_static_clamp_and_nothing_else() {
    let fresh = capacity(&example()).expect("valid");
    let json = serde_json::to_value(&fresh).expect("serialises");
    assert!(json.get("clamp_loss").is_none());
    let mut worn = example();
    // 0.003 in of growth on six 380 lbf/in springs: 6.84 lbf.
    worn.springs.clamp_loss = 6.0 * 380.0 * 0.003;
    let r = capacity(&worn).expect("valid");
    assert!(rel(r.static_clamp, fresh.static_clamp - 6.84) < 1e-12);
    assert!(rel(r.clamp_loss, 6.84) < 1e-12);
    for (a, b) in r.curve.iter().zip(&fresh.curve) {
        assert!(rel(b.total_clamp - a.total_clamp, 6.84) < 1e-9);
        assert_eq!(a.centrifugal_clamp, b.centrifugal_clamp);
    }
    assert!(r.lockup_rpm.unwrap_or(f64::MAX) >= fresh.lockup_rpm.unwrap_or(f64::MAX));
    worn.springs.clamp_loss = -1.0;
    assert_eq!(
        capacity(&worn).err().map(|e| e.field).as_deref(),
        Some("springs.clamp_loss")
    );
}

// The lever body's own CG radius only changes the answer when it differs from cg_radius, and
// only works with geometry (not with a measured gain) [D: F = m·r·ω² per part].
#[test]
fn lever_body_radius_is_optional_and_needs_geometry() {
    let plain = capacity(&example()).expect("valid");
    let mut same = example();
    if let Some(l) = same.levers.as_mut() {
        l.body_cg_radius = Some(4.1);
    }
    assert_eq!(capacity(&same).expect("valid"), plain);
    let mut inner = example();
    if let Some(l) = inner.levers.as_mut() {
        l.body_cg_radius = Some(2.05);
    }
    let r = capacity(&inner).expect("valid");
    // 12 g lever + 24 g weight at 4.1 in → 24 + 12·2.05/4.1 = 30 g-equivalent: 30/36 of the
    // centrifugal clamp.
    for (a, b) in r.curve.iter().zip(&plain.curve) {
        assert!(rel(a.centrifugal_clamp, b.centrifugal_clamp * 30.0 / 36.0) < 1e-12);
    }
    let mut gain = example();
    if let Some(l) = gain.levers.as_mut() {
        l.cg_radius = None;
        l.arm_ratio = None;
        l.gain = Some(2.0);
        l.body_cg_radius = Some(2.0);
    }
    assert_eq!(
        capacity(&gain).err().map(|e| e.field).as_deref(),
        Some("levers.body_cg_radius")
    );
}

// Issue 21, item 3: the body on its own arm. The example's 12 g lever body at 2.05 in on an arm
// ratio of 1.3 (half the weight's 2.6) counts as 12 × (2.05/4.1) × (1.3/2.6) = 3 g at the weight
// [derived], so the centrifugal clamp is (24 + 3)/36 of the plain one. Absent, or equal to the
// weight's, the answer is unchanged bit for bit. In the gain form a measured body force at
// 1000 rpm replaces gain × lever mass: the plain example's per-gram gain is G = c/(3·36) per
// (rpm/1000)², and a body force of 12·G/4 gives (24 + 3)/36 again [derived].
#[test]
fn the_lever_body_has_its_own_arm_or_its_own_measured_force() {
    let plain = capacity(&example()).expect("valid");
    let mut req = example();
    if let Some(l) = req.levers.as_mut() {
        l.body_arm_ratio = Some(2.6);
    }
    assert_eq!(capacity(&req).expect("valid"), plain);
    if let Some(l) = req.levers.as_mut() {
        l.body_cg_radius = Some(2.05);
        l.body_arm_ratio = Some(1.3);
    }
    let own = capacity(&req).expect("valid");
    for (a, b) in own.curve.iter().zip(&plain.curve) {
        assert!(rel(a.centrifugal_clamp, b.centrifugal_clamp * 27.0 / 36.0) < 1e-12);
    }
    // The gain that gives the plain example: clamp per gram per lever at 1000 rpm.
    let top = plain.curve.last().expect("rows");
    let per_g = top.centrifugal_clamp / (3.0 * 36.0) / (top.rpm / 1000.0).powi(2);
    let mut gain = example();
    if let Some(l) = gain.levers.as_mut() {
        l.cg_radius = None;
        l.arm_ratio = None;
        l.gain = Some(per_g);
    }
    let g = capacity(&gain).expect("valid");
    assert!(rel(g.top.capacity, plain.top.capacity) < 1e-12);
    if let Some(l) = gain.levers.as_mut() {
        l.body_force_at_1000 = Some(12.0 * per_g / 4.0);
    }
    let g = capacity(&gain).expect("valid");
    let last = g.curve.last().expect("rows");
    assert!(rel(last.centrifugal_clamp, top.centrifugal_clamp * 27.0 / 36.0) < 1e-12);
    // Each form refuses the other's body input.
    if let Some(l) = gain.levers.as_mut() {
        l.body_arm_ratio = Some(1.0);
    }
    assert_eq!(
        field_of(capacity(&gain)).as_deref(),
        Some("levers.body_arm_ratio")
    );
    if let Some(l) = req.levers.as_mut() {
        l.body_force_at_1000 = Some(1.0);
    }
    assert_eq!(
        field_of(capacity(&req)).as_deref(),
        Some("levers.body_force_at_1000")
    );
}

// Issue 21: where the pages say "at or below", the answer says so too. A clutch holding at
// the curve's first speed (3000 rpm) sets the flag; the example (lockup inside the curve)
// leaves it out of the JSON.
#[test]
fn a_lockup_at_the_start_of_the_curve_is_flagged_at_or_below() {
    let plain = capacity(&example()).expect("valid");
    assert!(!plain.lockup_at_or_below);
    let json = serde_json::to_value(&plain).expect("json");
    assert!(json.get("lockup_at_or_below").is_none());
    let mut strong = example();
    strong.springs.adjuster_turns = 12.0;
    let r = capacity(&strong).expect("valid");
    assert_eq!(r.lockup_rpm, Some(3000.0));
    assert!(r.lockup_at_or_below);
    let json = serde_json::to_value(&r).expect("json");
    assert_eq!(json["lockup_at_or_below"], serde_json::json!(true));
}

// Issue 21, knife edge both ways [derived]: a spring-only clutch, 2 faces, r_eff 75 mm (uniform
// wear, 100–200 mm), 5320 N, μ 0.5: 2 × 0.5 × 5320 × 0.075 = 399 N·m against 400 N·m flat to
// 6000 rpm falling to 300 at 7000: lockup 6010 rpm. 1 % more μ (402.99 N·m) holds everywhere,
// so the answer warns that it would lock up at or below 3000 rpm; it used to say nothing.
#[test]
fn the_knife_edge_warning_tries_one_percent_more_friction_too() {
    let req: CapacityRequest = serde_json::from_str(
        r#"{"units": "metric",
            "disc": {"outer_diameter": 200, "inner_diameter": 100},
            "friction": {"mu": 0.5},
            "springs": {"count": 1, "rate": 200, "base_compression": 26.6},
            "engine": {"torque_curve": [[3000, 400], [6000, 400], [7000, 300]]}}"#,
    )
    .expect("parses");
    let r = capacity(&req).expect("valid");
    assert!(
        (r.lockup_rpm.unwrap() - 6010.0).abs() < 1e-6,
        "{:?}",
        r.lockup_rpm
    );
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("1 % more friction") && w.contains("lock up at or below 3000 rpm")),
        "{:?}",
        r.warnings
    );
}

// Coil bind: springs 2.10 in free, 1.20 in solid, base compression 0.22 in, 1/16 in per turn
// bind at (0.90 − 0.22) × 16 = 10.88 turns [D]; keeping the default 0.5 mm margin (issue 21,
// common shop practice) the last turns are (0.68 − 0.5/25.4) × 16 = 10.565 turns [D]. Past that
// the answer warns; the recommendation's grid stops at it; without both lengths nothing
// changes. (Changed with issue 21: the margin default moved the figure from 10.88.)
#[test]
fn coil_bind_turns_warn_and_bound_the_recommendation() {
    let plain = capacity(&example()).expect("valid");
    assert_eq!(plain.coil_bind_turns, None);
    let mut req = example();
    req.springs.free_length = Some(2.10);
    req.springs.solid_height = Some(1.20);
    let r = capacity(&req).expect("valid");
    assert!(rel(r.coil_bind_turns.unwrap(), (0.68 - 0.5 / 25.4) * 16.0) < 1e-12);
    req.springs.bind_margin = Some(0.0);
    let r = capacity(&req).expect("valid");
    assert!(rel(r.coil_bind_turns.unwrap(), 10.88) < 1e-12);
    req.springs.bind_margin = None;
    assert!(!r.warnings.iter().any(|w| w.contains("coil bind")));
    req.springs.adjuster_turns = 11.0;
    let bound = capacity(&req).expect("valid");
    assert!(
        bound.warnings.iter().any(|w| w.contains("coil bind")),
        "{:?}",
        bound.warnings
    );
    // A recommendation over 0–20 turns in whole turns never goes past 10 turns.
    let mut rec = recommend_request();
    rec.setup.springs.free_length = Some(2.10);
    rec.setup.springs.solid_height = Some(1.20);
    rec.steps.adjuster_turns = 1.0;
    rec.limits.max_adjuster_turns = 20.0;
    rec.targets.launch_ratio = Some(3.0);
    let got = recommend(&rec).expect("valid");
    assert!(
        got.recommended.adjuster_turns <= 10.0,
        "{:?}",
        got.recommended
    );
    req.springs.solid_height = Some(2.2);
    assert_eq!(
        capacity(&req).err().map(|e| e.field).as_deref(),
        Some("springs.solid_height")
    );
}

// Issue 21's worked check [derived from its stated rule]: free 2.100 in, solid 1.600 in, base
// 0.220 in, 16 TPI, release travel 0.050 in, margin 0.020 in: coil_bind_turns =
// (0.500 − 0.220 − 0.050 − 0.020) × 16 = 3.36; at 1.5 turns the released clearance is
// 0.500 − (0.220 + 1.5/16 + 0.050) = 0.13625 in; at 3.5 turns 0.01125 in, below the margin:
// a warning. Release travel absent counts as 0 and a note says so.
#[test]
fn coil_bind_keeps_the_margin_with_the_clutch_released() {
    let mut req = example();
    req.springs.free_length = Some(2.100);
    req.springs.solid_height = Some(1.600);
    req.springs.release_travel = Some(0.050);
    req.springs.bind_margin = Some(0.020);
    let r = capacity(&req).expect("valid");
    assert!((r.coil_bind_turns.unwrap() - 3.36).abs() < 1e-9);
    assert!((r.coil_bind_clearance.unwrap() - 0.13625).abs() < 1e-9);
    assert!(r.notes.is_empty(), "{:?}", r.notes);
    assert!(!r.warnings.iter().any(|w| w.contains("coil bind")));
    req.springs.adjuster_turns = 3.5;
    let r = capacity(&req).expect("valid");
    assert!((r.coil_bind_clearance.unwrap() - 0.01125).abs() < 1e-9);
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("coil bind") && w.contains("margin")),
        "{:?}",
        r.warnings
    );
    // Metric request, same clutch: the same turns, clearance in mm.
    req.springs.adjuster_turns = 1.5;
    let m = capacity(&req.in_units(Units::Metric)).expect("valid");
    assert!((m.coil_bind_turns.unwrap() - 3.36).abs() < 1e-9);
    assert!((m.coil_bind_clearance.unwrap() - 0.13625 * MM_PER_IN).abs() < 1e-9);
    // Each adjuster by the same rule: the third one at 3.5 turns is short of the margin.
    req.springs.adjuster_turns_each = Some(vec![1.5, 1.5, 3.5]);
    let each = capacity(&req).expect("valid");
    assert!(
        each.warnings
            .iter()
            .any(|w| w.starts_with("Adjuster 3 at 3.5 turns")),
        "{:?}",
        each.warnings
    );
    assert!(!each.warnings.iter().any(|w| w.starts_with("Adjuster 1")));
    // Without release travel: counted as 0, and said.
    req.springs.adjuster_turns_each = None;
    req.springs.release_travel = None;
    let r = capacity(&req).expect("valid");
    assert!((r.coil_bind_turns.unwrap() - 4.16).abs() < 1e-9);
    assert!(r.notes.iter().any(|n| n.contains("release travel")));
    // No coil-bind data: no notes, nothing new in the JSON.
    let plain = serde_json::to_value(capacity(&example()).expect("valid")).expect("json");
    assert!(plain.get("notes").is_none() && plain.get("coil_bind_clearance").is_none());
}

// Issue 21: free 2.10, solid 1.60, base 0.22 in, 1/16 in per turn binds at 4.48 turns [D]; the
// recommender used to propose 4.25 turns (0.37 mm short of bind engaged, none released). With
// the default 0.5 mm margin the grid stops at (0.28 − 0.5/25.4) × 16 = 4.165 turns [D].
#[test]
fn the_recommendation_stops_at_the_margin() {
    let mut rec = recommend_request();
    rec.setup.springs.free_length = Some(2.10);
    rec.setup.springs.solid_height = Some(1.60);
    rec.targets.launch_ratio = Some(5.0);
    rec.targets.lockup_rpm = 3000.0;
    let got = recommend(&rec).expect("valid");
    assert!(
        got.recommended.adjuster_turns <= 4.0,
        "{:?}",
        got.recommended
    );
    let mut chosen = rec.setup.clone();
    chosen.springs.adjuster_turns = got.recommended.adjuster_turns;
    let r = capacity(&chosen).expect("valid");
    assert!(r.coil_bind_clearance.unwrap() >= 0.5 / 25.4);
}

// A twin disc with each extra face at 0.9 works like 3.8 faces, so
// every capacity is 0.95 of the textbook 4-face value [D]; the efficiency is from memory.
// Absent, the answer is the same as before (bit for bit); outside (0, 1] it is refused.
#[test]
fn extra_face_efficiency_scales_the_extra_faces_only_when_given() {
    let mut twin = example();
    twin.disc.count = 2;
    let full = capacity(&twin).expect("valid");
    twin.disc.extra_face_efficiency = Some(1.0);
    assert_eq!(capacity(&twin).expect("valid"), full);
    twin.disc.extra_face_efficiency = Some(0.9);
    let derated = capacity(&twin).expect("valid");
    assert_eq!(derated.friction_surfaces, 4);
    for (a, b) in derated.curve.iter().zip(&full.curve) {
        assert!(rel(a.capacity, 0.95 * b.capacity) < 1e-12, "{} rpm", a.rpm);
    }
    twin.disc.extra_face_efficiency = Some(1.2);
    assert_eq!(
        field_of(capacity(&twin)).as_deref(),
        Some("disc.extra_face_efficiency")
    );
}

fn field_of(r: Result<CapacityReport, InputError>) -> Option<String> {
    r.err().map(|e| e.field)
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b { 0.0 } else { ((a - b) / b).abs() }
}

// [D] The example clutch by hand, in SI, from T = n·μ·F·r_eff (Bhandari ch. 11) and
// F_c = m·r·ω²·(a/b): static 6 × 380 lbf/in × (0.22 + 1.5 × 0.0625) in = 715.35 lbf;
// r_eff = (5.2 + 3.3)/2 = 4.25 in; at 6000 rpm each lever adds 0.036 kg × 0.10414 m × ω² × 2.6.
#[test]
fn example_request_matches_a_hand_calculation() {
    let r = capacity(&example()).expect("valid example");
    assert!(rel(r.static_clamp, 715.35) < 1e-12);
    assert!(rel(r.effective_radius, 4.25) < 1e-12);
    assert_eq!(r.friction_surfaces, 2);
    assert_eq!(r.curve.len(), 41);
    assert_eq!((r.curve[0].rpm, r.curve[40].rpm), (3000.0, 7000.0));

    let w = 6000.0 * 2.0 * std::f64::consts::PI / 60.0;
    let per_lever_n = 0.036 * (4.1 * 0.0254) * w * w * 2.6;
    let clamp_n = 715.35 * 4.4482216152605 + 3.0 * per_lever_n;
    let t_lbf_ft = 2.0 * 0.32 * clamp_n * (4.25 * 0.0254) / 1.3558179483314004;
    let row = r
        .curve
        .iter()
        .find(|p| p.rpm == 6000.0)
        .expect("6000 rpm row");
    assert!(
        rel(row.capacity, t_lbf_ft) < 1e-12,
        "{} vs {t_lbf_ft}",
        row.capacity
    );
    assert!(rel(row.centrifugal_clamp, 3.0 * per_lever_n / 4.4482216152605) < 1e-12);
    assert!(rel(row.engine_torque, 470.0) < 1e-12);

    let launch = r.launch.as_ref().expect("launch given");
    assert!(rel(launch.engine_torque, 467.5) < 1e-12);
    assert!(rel(launch.ratio, launch.capacity / 467.5) < 1e-12);
}

#[test]
fn lockup_sits_where_capacity_meets_torque() {
    let r = capacity(&example()).expect("valid example");
    let lockup = r.lockup_rpm.expect("locks up inside the curve");
    for p in &r.curve {
        if p.rpm > lockup + 1.0 {
            assert!(p.capacity >= p.engine_torque, "slips at {}", p.rpm);
        }
    }
    let mut at = example();
    at.launch_rpm = Some(lockup);
    let l = capacity(&at).expect("valid").launch.expect("launch given");
    assert!((l.ratio - 1.0).abs() < 1e-9, "{}", l.ratio);
}

#[test]
fn spring_only_clutch_and_json_defaults() {
    let json = r#"{"units": "metric",
      "disc": {"outer_diameter": 184, "inner_diameter": 127},
      "friction": {"material": "cermet"},
      "springs": {"count": 9, "rate": 60, "base_compression": 6},
      "engine": {"torque_curve": [[2000, 300], [4000, 350], [6000, 320]]},
      "some_future_field": true}"#;
    let req: CapacityRequest = serde_json::from_str(json).expect("defaults fill in");
    let r = capacity(&req).expect("valid");
    assert_eq!(r.friction_surfaces, 2);
    assert!(r.curve.iter().all(|p| p.centrifugal_clamp == 0.0));
    assert!(rel(r.static_clamp, 9.0 * 60.0 * 6.0) < 1e-12);
    assert_eq!(r.launch, None);
    // capacity 2 × 0.32 × 3240 N × 77.75 mm = 161.2 N·m: slips everywhere.
    assert_eq!(r.lockup_rpm, None);
    assert!(r.warnings.iter().any(|w| w.contains("slips at the top")));
}

#[test]
fn invalid_inputs_name_their_field() {
    let check = |edit: &dyn Fn(&mut CapacityRequest), field: &str| {
        let mut r = example();
        edit(&mut r);
        assert_eq!(
            field_of(capacity(&r)).as_deref(),
            Some(field),
            "expected {field}"
        );
    };
    check(&|r| r.disc.inner_diameter = 10.4, "disc.inner_diameter");
    check(&|r| r.disc.outer_diameter = -1.0, "disc.outer_diameter");
    check(&|r| r.disc.count = 4, "disc.count");
    check(&|r| r.springs.rate = 0.0, "springs.rate");
    check(&|r| r.springs.rate = -380.0, "springs.rate");
    check(&|r| r.springs.count = 25, "springs.count");
    check(&|r| r.friction.mu = Some(0.9), "friction.mu");
    check(&|r| r.friction.mu = None, "friction.mu");
    check(
        &|r| r.engine.torque_curve.truncate(2),
        "engine.torque_curve",
    );
    check(
        &|r| r.engine.torque_curve[2] = [5000.0, f64::NAN],
        "engine.torque_curve[2]",
    );
    check(&|r| r.launch_rpm = Some(2500.0), "launch_rpm");
    check(&|r| r.launch_rpm = Some(f64::INFINITY), "launch_rpm");
    check(
        &|r| r.springs.adjuster_turns = -1.0,
        "springs.adjuster_turns",
    );
    if let Some(l) = example().levers {
        let lever = |edit: &dyn Fn(&mut crate::capacity::request::LeversInput), field: &str| {
            let mut l = l.clone();
            edit(&mut l);
            check(&|r| r.levers = Some(l.clone()), field);
        };
        lever(&|l| l.counterweight_g = -1.0, "levers.counterweight_g");
        lever(&|l| l.lever_mass_g = f64::NAN, "levers.lever_mass_g");
        lever(&|l| l.count = 25, "levers.count");
        lever(&|l| l.arm_ratio = None, "levers.arm_ratio");
        lever(&|l| l.gain = Some(2.0), "levers.gain");
    }
}

#[test]
fn over_clamp_against_the_driveline_is_warned() {
    let mut r = example();
    r.driveline = Some(crate::capacity::request::DrivelineInput {
        rated_torque: 300.0,
    });
    let rep = capacity(&r).expect("valid");
    let top = rep.top.capacity;
    assert!(top > 450.0, "{top}");
    assert!(rep.warnings.iter().any(|w| w.contains("rated torque")));
    r.overclamp_factor = Some(top / 300.0 + 0.01);
    let rep = capacity(&r).expect("valid");
    assert!(!rep.warnings.iter().any(|w| w.contains("rated torque")));
}

/// The same clutch described in metric units.
fn to_metric(r: &CapacityRequest) -> CapacityRequest {
    let mut m = r.clone();
    m.units = Units::Metric;
    m.disc.outer_diameter *= MM_PER_IN;
    m.disc.inner_diameter *= MM_PER_IN;
    m.springs.rate *= N_PER_LBF / MM_PER_IN;
    m.springs.base_compression *= MM_PER_IN;
    m.springs.adjuster_pitch *= MM_PER_IN;
    if let Some(l) = m.levers.as_mut() {
        l.cg_radius = l.cg_radius.map(|v| v * MM_PER_IN);
        l.gain = l.gain.map(|v| v * N_PER_LBF);
    }
    for p in &mut m.engine.torque_curve {
        p[1] *= NM_PER_LBFFT;
    }
    m
}

// The general conversion agrees with the hand-written one above (exact factors, NIST SP 811).
#[test]
fn in_units_matches_the_hand_conversion_and_round_trips() {
    let r = example();
    let m = r.in_units(Units::Metric);
    let hand = to_metric(&r);
    assert!(rel(m.disc.outer_diameter, hand.disc.outer_diameter) < 1e-12);
    assert!(rel(m.springs.rate, hand.springs.rate) < 1e-12);
    assert!(rel(m.engine.torque_curve[2][1], hand.engine.torque_curve[2][1]) < 1e-12);
    let back = m.in_units(Units::Imperial);
    assert!(rel(back.springs.base_compression, r.springs.base_compression) < 1e-12);
    assert!(
        rel(
            back.levers.as_ref().unwrap().cg_radius.unwrap(),
            r.levers.as_ref().unwrap().cg_radius.unwrap()
        ) < 1e-12
    );
}

fn varied(rate: f64, turns: f64, weight: f64, mu: f64, gain: Option<f64>) -> CapacityRequest {
    let mut r = example();
    r.springs.rate = rate;
    r.springs.adjuster_turns = turns;
    r.friction.mu = Some(mu);
    if let Some(l) = r.levers.as_mut() {
        l.counterweight_g = weight;
        if gain.is_some() {
            (l.gain, l.cg_radius, l.arm_ratio) = (gain, None, None);
        }
    }
    r
}

proptest! {
    // Metric and imperial descriptions of one clutch give the same physical answers.
    #[test]
    fn metric_and_imperial_agree(
        rate in 100.0f64..800.0, turns in 0.0f64..6.0, weight in 0.0f64..120.0,
        mu in 0.1f64..0.6, gain in proptest::option::of(0.05f64..2.0),
    ) {
        let imp = varied(rate, turns, weight, mu, gain);
        let a = capacity(&imp).expect("valid imperial");
        let b = capacity(&to_metric(&imp)).expect("valid metric");
        prop_assert!(rel(a.static_clamp * N_PER_LBF, b.static_clamp) < 1e-12);
        prop_assert!(rel(a.effective_radius * MM_PER_IN, b.effective_radius) < 1e-12);
        prop_assert_eq!(a.curve.len(), b.curve.len());
        for (p, q) in a.curve.iter().zip(&b.curve) {
            prop_assert_eq!(p.rpm, q.rpm);
            prop_assert!(rel(p.capacity * NM_PER_LBFFT, q.capacity) < 1e-12);
            prop_assert!(rel(p.total_clamp * N_PER_LBF, q.total_clamp) < 1e-12);
        }
        match (a.lockup_rpm, b.lockup_rpm) {
            (Some(x), Some(y)) => prop_assert!((x - y).abs() < 1e-6, "{x} vs {y}"),
            (x, y) => prop_assert_eq!(x, y),
        }
        let (la, lb) = (a.launch.expect("launch"), b.launch.expect("launch"));
        prop_assert!(rel(la.ratio, lb.ratio) < 1e-12);
    }

    // With levers, capacity never falls as engine speed rises.
    #[test]
    fn capacity_never_falls_with_rpm(
        rate in 100.0f64..800.0, turns in 0.0f64..6.0, weight in 0.0f64..120.0, mu in 0.1f64..0.6,
    ) {
        let r = capacity(&varied(rate, turns, weight, mu, None)).expect("valid");
        prop_assert!(r.curve.windows(2).all(|w| w[1].capacity >= w[0].capacity));
    }

    // Any non-finite number anywhere is a field error, never a panic or NaN in the answer.
    #[test]
    fn non_finite_inputs_are_errors(which in 0usize..10, bad in prop_oneof![Just(f64::NAN), Just(f64::INFINITY), Just(f64::NEG_INFINITY)]) {
        let mut r = example();
        match which {
            0 => r.disc.outer_diameter = bad,
            1 => r.disc.inner_diameter = bad,
            2 => r.friction.mu = Some(bad),
            3 => r.springs.rate = bad,
            4 => r.springs.base_compression = bad,
            5 => r.springs.adjuster_pitch = bad,
            6 => r.engine.torque_curve[0][0] = bad,
            7 => r.launch_rpm = Some(bad),
            8 => r.overclamp_factor = Some(bad),
            _ => if let Some(l) = r.levers.as_mut() { l.cg_radius = Some(bad) },
        }
        prop_assert!(capacity(&r).is_err());
    }
}

const RECOMMEND: &str = r#"{"targets": {"lockup_rpm": 6200, "launch_ratio": 0.85},
 "steps": {"adjuster_turns": 0.25, "counterweight_g": 1.0},
 "limits": {"max_adjuster_turns": 6.0, "max_counterweight_g": 120.0}}"#;

fn recommend_request() -> RecommendRequest {
    let mut body: serde_json::Value = serde_json::from_str(EXAMPLE).expect("example parses");
    let extra: serde_json::Value = serde_json::from_str(RECOMMEND).expect("targets parse");
    if let (Some(b), Some(e)) = (body.as_object_mut(), extra.as_object()) {
        b.extend(e.clone());
    }
    serde_json::from_value(body).expect("recommend request parses")
}

fn on_grid(v: f64, step: f64) -> bool {
    ((v / step).round() * step - v).abs() < 1e-9
}

#[test]
fn both_targets_give_a_grid_setting_inside_the_limits() {
    let req = recommend_request();
    let rec = recommend(&req).expect("valid");
    // [D] By hand: capacity a + b·n² through 0.85 × 467.5 at 4500 rpm and 462 at 6200 rpm
    // needs a ≈ 325 lbf·ft of static capacity, ≈ 1436 lbf, ≈ 6.6 turns: beyond the 6-turn
    // limit, so the answer is a compromise, and must say so.
    assert!(
        rec.notes.iter().any(|n| n.contains("can't both be met")),
        "{:?}",
        rec.notes
    );
    assert!(!rec.target_reached);
    let s = rec.recommended;
    assert!(on_grid(s.adjuster_turns, 0.25) && (0.0..=6.0).contains(&s.adjuster_turns));
    assert!(on_grid(s.counterweight_g, 1.0) && (0.0..=120.0).contains(&s.counterweight_g));
    assert!(!rec.alternatives.is_empty());
}

// Targets read off a known grid setting must lead back to it (or to one just as close).
#[test]
fn targets_of_a_known_setting_lead_back_to_it() {
    let mut known = example();
    known.springs.adjuster_turns = 2.75;
    if let Some(l) = known.levers.as_mut() {
        l.counterweight_g = 30.0;
    }
    let rep = capacity(&known).expect("valid");
    let lockup = rep.lockup_rpm.expect("locks up");
    let ratio = rep.launch.expect("launch given").ratio;
    let mut req = recommend_request();
    req.targets.lockup_rpm = lockup;
    req.targets.launch_ratio = Some(ratio);
    let rec = recommend(&req).expect("valid");
    let got = rec.result.lockup_rpm.expect("locks up");
    assert!((got - lockup).abs() < 1e-6, "{got} vs {lockup}");
    assert!((rec.result.launch_ratio.unwrap_or(0.0) - ratio).abs() < 1e-9);
    assert_eq!(
        (
            rec.recommended.adjuster_turns,
            rec.recommended.counterweight_g
        ),
        (2.75, 30.0)
    );
}

#[test]
fn lockup_target_only_keeps_the_turns() {
    let mut req = recommend_request();
    req.targets.launch_ratio = None;
    let rec = recommend(&req).expect("valid");
    assert_eq!(rec.recommended.adjuster_turns, 1.5);
    let lockup = rec.result.lockup_rpm.expect("locks up");
    // Every alternative on the grid is at least as far from the target.
    for a in &rec.alternatives {
        let d = a.lockup_rpm.map_or(f64::INFINITY, |l| (l - 6200.0).abs());
        assert!(d >= (lockup - 6200.0).abs() - 1e-9);
    }
}

#[test]
fn unreachable_targets_are_noted_and_the_closest_returned() {
    let mut req = recommend_request();
    req.targets.launch_ratio = None;
    req.limits.max_counterweight_g = 2.0;
    req.targets.lockup_rpm = 3200.0;
    let rec = recommend(&req).expect("valid");
    assert_eq!(rec.recommended.counterweight_g, 2.0);
    assert!(
        rec.notes.iter().any(|n| n.contains("can't be reached")),
        "{:?}",
        rec.notes
    );
    assert!(!rec.target_reached);
    // The same target with the whole counterweight range is bracketed: reached.
    req.limits.max_counterweight_g = 120.0;
    req.targets.lockup_rpm = 6200.0;
    assert!(recommend(&req).expect("valid").target_reached);
}

#[test]
fn recommend_errors_name_their_field() {
    let field = |r: &RecommendRequest| recommend(r).err().map(|e| e.field);
    let mut r = recommend_request();
    r.setup.levers = None;
    assert_eq!(field(&r).as_deref(), Some("levers"));
    let mut r = recommend_request();
    r.targets.lockup_rpm = 9000.0;
    assert_eq!(field(&r).as_deref(), Some("targets.lockup_rpm"));
    let mut r = recommend_request();
    r.setup.launch_rpm = None;
    assert_eq!(field(&r).as_deref(), Some("launch_rpm"));
    let mut r = recommend_request();
    r.steps.counterweight_g = 1e-4;
    assert_eq!(field(&r).as_deref(), Some("steps.counterweight_g"));
    let mut r = recommend_request();
    r.limits.max_adjuster_turns = -1.0;
    assert_eq!(field(&r).as_deref(), Some("limits.max_adjuster_turns"));
}

#[test]
fn steps_and_limits_default_when_absent() {
    let mut v: serde_json::Value = serde_json::from_str(EXAMPLE).expect("parses");
    if let Some(o) = v.as_object_mut() {
        o.insert("targets".into(), serde_json::json!({"lockup_rpm": 6000}));
    }
    let req: RecommendRequest = serde_json::from_value(v).expect("defaults fill in");
    assert_eq!(
        (req.steps.adjuster_turns, req.steps.counterweight_g),
        (0.25, 1.0)
    );
    assert_eq!(
        (
            req.limits.max_adjuster_turns,
            req.limits.max_counterweight_g
        ),
        (6.0, 120.0)
    );
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    // The reported result is exactly capacity() at the recommended setting.
    #[test]
    fn recommended_setting_reproduces_its_result(
        lockup in 3000.0f64..7000.0, ratio in proptest::option::of(0.5f64..1.2),
        rate in 150.0f64..600.0,
    ) {
        let mut req = recommend_request();
        req.targets.lockup_rpm = lockup;
        req.targets.launch_ratio = ratio;
        req.setup.springs.rate = rate;
        let rec = recommend(&req).expect("valid");
        let mut again = req.setup.clone();
        again.springs.adjuster_turns = rec.recommended.adjuster_turns;
        if let Some(l) = again.levers.as_mut() {
            l.counterweight_g = rec.recommended.counterweight_g;
        }
        let rep = capacity(&again).expect("valid");
        prop_assert_eq!(rec.result.lockup_rpm, rep.lockup_rpm);
        prop_assert_eq!(rec.result.launch_ratio, rep.launch.map(|l| l.ratio));
        prop_assert_eq!(rec.result.static_clamp, rep.static_clamp);
        prop_assert!(on_grid(rec.recommended.counterweight_g, 1.0));
        prop_assert!((0.0..=120.0).contains(&rec.recommended.counterweight_g));
    }
}

/// e = ((L − L*)/L*)² + ((ρ − ρ*)/ρ*)², slipping at the top scored as 10 % above the top.
fn score(r: &CapacityReport, lockup: f64, ratio: f64) -> f64 {
    let top = r.top.rpm * 1.1;
    let l = (r.lockup_rpm.unwrap_or(top) - lockup) / lockup;
    let q = (r.launch.as_ref().map_or(0.0, |p| p.ratio) - ratio) / ratio;
    l * l + q * q
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(16))]
    // On a small grid, the search's answer scores as well as the best of every setting.
    #[test]
    fn search_finds_the_best_setting_of_the_whole_grid(
        lockup in 3000.0f64..7000.0, ratio in 0.5f64..1.2, rate in 150.0f64..600.0,
    ) {
        let mut req = recommend_request();
        (req.targets.lockup_rpm, req.targets.launch_ratio) = (lockup, Some(ratio));
        req.setup.springs.rate = rate;
        (req.steps.adjuster_turns, req.steps.counterweight_g) = (0.5, 3.0);
        (req.limits.max_adjuster_turns, req.limits.max_counterweight_g) = (4.0, 60.0);
        let rec = recommend(&req).expect("valid");
        let mut best = f64::INFINITY;
        for k in 0..=8 {
            for j in 0..=20 {
                let mut s = req.setup.clone();
                s.springs.adjuster_turns = f64::from(k) * 0.5;
                if let Some(l) = s.levers.as_mut() {
                    l.counterweight_g = f64::from(j) * 3.0;
                }
                best = best.min(score(&capacity(&s).expect("valid"), lockup, ratio));
            }
        }
        let mut chosen = req.setup.clone();
        chosen.springs.adjuster_turns = rec.recommended.adjuster_turns;
        if let Some(l) = chosen.levers.as_mut() {
            l.counterweight_g = rec.recommended.counterweight_g;
        }
        let got = score(&capacity(&chosen).expect("valid"), lockup, ratio);
        prop_assert!(got <= best + 1e-12, "{got} vs {best}");
    }
}

#[test]
fn input_error_displays_as_field_colon_message() {
    let e = InputError::new("springs.rate", "must be greater than 0");
    assert_eq!(e.to_string(), "springs.rate: must be greater than 0");
    let json = serde_json::to_string(&e).ok();
    assert_eq!(
        json.as_deref(),
        Some(r#"{"field":"springs.rate","message":"must be greater than 0"}"#)
    );
}
