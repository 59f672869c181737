//! A setting found with the launch preview: the counterweight (adjuster turns held) that makes
//! the clutch lock at a target time after the launch, or the least counterweight that keeps the
//! slip energy within a limit.
//!
//! More counterweight means more centrifugal clamp at every engine speed, so more capacity, a
//! shorter slip and less slip energy [derived from T_cap = n·μ·r·(F_s + c·ω²) and the two-inertia
//! engagement]. The search relies on that order and bisects the counterweight grid, a handful of
//! simulations instead of one per step; a test checks it against trying every step.

use crate::InputError;
use crate::launch::request::ValidLaunch;
use crate::launch::simulation::{Event, LaunchModel, LaunchRun};
use crate::quantity::limits;
use crate::units::Units;

/// What the setting should give.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LaunchTarget {
    /// Lock this many seconds after the launch.
    LockupTime(f64),
    /// Keep the slip energy at or below this many joules, slipping as long as that allows.
    MaxSlipEnergy(f64),
}

/// The setting found and its launch.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchPick {
    pub adjuster_turns: f64,
    pub counterweight_g: f64,
    pub run: LaunchRun,
    /// Simulations run to find it.
    pub runs: usize,
    /// False when no counterweight on the grid meets the target (the nearest end is given).
    pub met: bool,
    /// For a lockup time: the next counterweight up spins the tires or pulls the engine below
    /// its torque curve (a lock that early comes only that way, so the pick stops short).
    pub too_much_beyond: bool,
}

/// How the launch preview searches counterweight.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Grid {
    pub step_g: f64,
    pub max_g: f64,
}

impl Default for Grid {
    /// 1 g steps from 0 to 120 g, as the capacity recommendation searches.
    fn default() -> Self {
        Self {
            step_g: 1.0,
            max_g: 120.0,
        }
    }
}

/// The launch with another counterweight: everything else as validated, the static clamp lost
/// to wear included (the same law a launch request with that counterweight gets).
fn with_counterweight(valid: &ValidLaunch, counterweight_g: f64) -> LaunchModel {
    let mut m = valid.model.clone();
    m.clutch.law = valid
        .clutch
        .law_for(valid.clutch.adjuster_turns, counterweight_g);
    m
}

/// The clamp is too much for the car: the tires spin, or the engine is pulled below its curve.
fn too_much(run: &LaunchRun) -> bool {
    !run.tire_spin.is_empty()
        || run
            .events
            .iter()
            .any(|e| matches!(e.event, Event::LeftCurve { above: false, .. }))
}

/// A measure that falls as counterweight rises. For a lockup time a launch that spins the tires
/// or bogs the engine out of its curve counts as past every target: that is not the lock wanted.
fn measure(run: &LaunchRun, target: LaunchTarget) -> f64 {
    match target {
        LaunchTarget::LockupTime(_) if too_much(run) => f64::NEG_INFINITY,
        LaunchTarget::LockupTime(_) => run.lockup.map_or(f64::INFINITY, |l| l.time_s),
        LaunchTarget::MaxSlipEnergy(_) => run.slip_energy_j,
    }
}

/// Searches counterweight on `grid` at the clutch's adjuster turns for `target` (see the module
/// notes). Lockup time: the step whose lock time is nearest the target. Slip energy: the least
/// counterweight within the limit. The target must be positive (s or J); the clutch needs levers.
pub fn find_counterweight(
    valid: &ValidLaunch,
    target: LaunchTarget,
    grid: Grid,
) -> Result<LaunchPick, InputError> {
    let u = Units::Metric;
    let (field, goal) = match target {
        LaunchTarget::LockupTime(t) => ("target.lockup_time_s", t),
        LaunchTarget::MaxSlipEnergy(e) => ("target.max_slip_energy", e),
    };
    crate::require_positive(field, goal, f64::MAX)?;
    if valid.clutch.levers.is_none() {
        return Err(InputError::new(
            "levers",
            "a clutch without levers has no counterweight to set",
        ));
    }
    let step = limits::COUNTERWEIGHT.check("grid.step_g", grid.step_g, u)?;
    let max = limits::COUNTERWEIGHT.check("grid.max_g", grid.max_g, u)?;
    if step <= 0.0 {
        return Err(InputError::new("grid.step_g", "must be above 0"));
    }
    let n = (max / step).floor() as usize;
    let mut runs = 0;
    let mut run_at = |k: usize| {
        runs += 1;
        with_counterweight(valid, k as f64 * step).simulate()
    };
    // Smallest k whose measure is at or below the goal (measure falls with k).
    let (mut lo, mut hi) = (0usize, n);
    let mut hi_run = run_at(n);
    if measure(&hi_run, target) > goal {
        return Ok(LaunchPick {
            adjuster_turns: valid.clutch.adjuster_turns,
            counterweight_g: n as f64 * step,
            run: hi_run,
            runs,
            met: false,
            too_much_beyond: false,
        });
    }
    let lo_run = run_at(0);
    if measure(&lo_run, target) <= goal {
        hi = 0;
        hi_run = lo_run.clone();
    } else {
        while hi - lo > 1 {
            let mid = (lo + hi) / 2;
            let r = run_at(mid);
            if measure(&r, target) <= goal {
                hi = mid;
                hi_run = r;
            } else {
                lo = mid;
            }
        }
    }
    let spins = too_much(&hi_run);
    let (k, run, met) = match target {
        LaunchTarget::MaxSlipEnergy(_) => (hi, hi_run, true),
        LaunchTarget::LockupTime(t) if hi > 0 => {
            // The step just below may lock nearer the target from the slow side, and is the
            // pick when the step found only gets there by spinning the tires.
            let below = run_at(hi - 1);
            let nearer = (measure(&below, target) - t).abs() < (measure(&hi_run, target) - t).abs();
            if spins || nearer {
                (hi - 1, below, !spins)
            } else {
                (hi, hi_run, true)
            }
        }
        LaunchTarget::LockupTime(_) => (hi, hi_run, !spins),
    };
    Ok(LaunchPick {
        adjuster_turns: valid.clutch.adjuster_turns,
        counterweight_g: k as f64 * step,
        run,
        runs,
        met,
        too_much_beyond: spins && matches!(target, LaunchTarget::LockupTime(_)),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::launch::request::LaunchRequest;

    /// The reference launch (docs/engineering.md §18) with four levers of 20 g at 50 mm, so
    /// counterweight matters.
    fn request() -> LaunchRequest {
        serde_json::from_value(serde_json::json!({
            "units": "metric",
            "disc": { "outer_diameter": 240, "inner_diameter": 160, "count": 2 },
            "friction": { "mu": 0.30 },
            "springs": { "count": 4, "rate": 1000, "base_compression": 1 },
            "levers": { "count": 4, "counterweight_g": 20, "cg_radius": 50, "arm_ratio": 1 },
            "launch_rpm": 6000,
            "engine": { "torque_curve": [[2000, 700], [5000, 700], [9000, 700]],
                        "inertia": 0.20 },
            "driveline": { "first_gear_ratio": 2.6, "final_drive_ratio": 4.1, "efficiency": 0.95,
                           "input_inertia": 0.02, "driveshaft_inertia": 0.05,
                           "rear_axle_inertia": 3.0, "front_axle_inertia": 1.0 },
            "vehicle": { "mass": 1500, "tire_diameter": 760, "wheelbase": 2700,
                         "cg_to_front_axle": 1600, "cg_height": 500, "drag_height": 500,
                         "rolling_resistance": 0.015, "drag_area": 0.6, "tire_grip": 2.0,
                         "tire_grip_spinning": 1.6 },
            "duration_s": 3
        }))
        .expect("request")
    }

    fn valid() -> ValidLaunch {
        request().validate().expect("valid")
    }

    fn scan(v: &ValidLaunch, grid: Grid) -> Vec<(f64, LaunchRun)> {
        let n = (grid.max_g / grid.step_g).floor() as usize;
        (0..=n)
            .map(|k| {
                let g = k as f64 * grid.step_g;
                (g, with_counterweight(v, g).simulate())
            })
            .collect()
    }

    // The bisection gives what trying every 5 g step gives, with far fewer runs.
    #[test]
    fn the_search_matches_trying_every_step() {
        let v = valid();
        let grid = Grid {
            step_g: 5.0,
            max_g: 120.0,
        };
        let all = scan(&v, grid);
        let times: Vec<f64> = all
            .iter()
            .map(|(_, r)| r.lockup.map_or(f64::INFINITY, |l| l.time_s))
            .collect();
        assert!(times.windows(2).all(|w| w[1] <= w[0]), "{times:?}");
        let target = (times[3] + times[4]) / 2.0 + 0.001;
        let best = all
            .iter()
            .min_by(|a, b| {
                let da = (a.1.lockup.map_or(f64::INFINITY, |l| l.time_s) - target).abs();
                let db = (b.1.lockup.map_or(f64::INFINITY, |l| l.time_s) - target).abs();
                da.total_cmp(&db)
            })
            .map(|(g, _)| *g);
        let pick = find_counterweight(&v, LaunchTarget::LockupTime(target), grid).expect("ok");
        assert!(pick.met);
        assert_eq!(Some(pick.counterweight_g), best);
        assert!(pick.runs < all.len() / 2, "{} runs", pick.runs);

        let limit = all[6].1.slip_energy_j + 1.0;
        let least = all
            .iter()
            .find(|(_, r)| r.slip_energy_j <= limit)
            .map(|(g, _)| *g);
        let pick = find_counterweight(&v, LaunchTarget::MaxSlipEnergy(limit), grid).expect("ok");
        assert_eq!(Some(pick.counterweight_g), least);
        assert!(pick.run.slip_energy_j <= limit);
    }

    // A worn clutch (static clamp lost since the last shim) is searched as it is: the pick's run
    // is the run a launch request with that counterweight gives. Consistency check, no outside
    // value: the search once built its clutch without the clamp loss.
    #[test]
    fn the_search_keeps_the_wear_clamp_loss() {
        let mut req = request();
        req.springs.clamp_loss = 600.0;
        let v = req.validate().expect("valid");
        let base = v.model.simulate().lockup.expect("locks").time_s;
        let pick = find_counterweight(&v, LaunchTarget::LockupTime(base * 0.8), Grid::default())
            .expect("ok");
        req.levers.as_mut().expect("levers").counterweight_g = pick.counterweight_g;
        let tried = req.validate().expect("valid").model.simulate();
        assert_eq!(
            pick.run.lockup.map(|l| l.time_s),
            tried.lockup.map(|l| l.time_s)
        );
        assert_eq!(pick.run.slip_energy_j, tried.slip_energy_j);
    }

    #[test]
    fn an_unreachable_target_says_so() {
        let v = valid();
        let pick =
            find_counterweight(&v, LaunchTarget::LockupTime(0.001), Grid::default()).expect("ok");
        // No lock in a millisecond: the search stops where more counterweight is too much.
        assert!(!pick.met && pick.too_much_beyond);
        assert!(!too_much(&pick.run) && pick.run.lockup.is_some());
        let one_more = with_counterweight(&v, pick.counterweight_g + 1.0).simulate();
        assert!(too_much(&one_more));
        assert!(
            find_counterweight(&v, LaunchTarget::MaxSlipEnergy(-1.0), Grid::default()).is_err()
        );
    }
}
