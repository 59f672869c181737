//! Setting search: POST /api/v1/calc/recommend. Finds adjuster turns and counterweight, on the
//! shop's step grid and inside its limits, that bring the lockup speed (and optionally the
//! launch ratio) to target.
//!
//! More counterweight raises capacity at every speed, so the lockup speed never rises with
//! counterweight: for each turns value the counterweight grid is searched by bisection
//! (≈ log2(steps) lockup solves), then the two settings either side of the target are scored.

use crate::InputError;
use crate::capacity::lockup::{CapacityLaw, ClutchModel, lockup_text, torque_ratio};
use crate::capacity::report::report_for;
use crate::capacity::request::CapacityRequest;
use crate::quantity::{Bound, limits};
use crate::units::Units;
use serde::{Deserialize, Serialize};

/// A lockup-only target counts as reached within this share of it (2 %: about 100 rpm at
/// 5000 rpm; common shop practice, no published source).
pub const LOCKUP_CLOSE: f64 = 0.02;

/// Most grid points accepted on either axis.
pub const MAX_GRID_POINTS: f64 = 10_000.0;
/// Most settings (turns × counterweight) a search over both may cover.
pub const MAX_SEARCH_SETTINGS: usize = 250_000;

/// POST /api/v1/calc/recommend body: a capacity request plus targets, steps and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct RecommendRequest {
    /// The clutch as in a capacity request (its counterweight, and with a launch-ratio target
    /// its adjuster turns, are what the search replaces).
    #[serde(flatten)]
    pub setup: CapacityRequest,
    /// What to aim for.
    pub targets: Targets,
    /// Grid steps (defaults 0.25 turn, 1 g).
    #[serde(default)]
    pub steps: Steps,
    /// Upper limits (defaults 6 turns, 120 g); the lower limit is 0.
    #[serde(default)]
    pub limits: Limits,
}

/// Targets of the search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Targets {
    /// Wanted lockup speed, rev/min, inside the torque curve.
    pub lockup_rpm: f64,
    /// Wanted capacity / engine torque at `launch_rpm`; when given, turns are searched too.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub launch_ratio: Option<f64>,
}

/// Grid steps.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Steps {
    /// Adjuster step, turns (default 0.25).
    #[serde(default = "default_turn_step")]
    pub adjuster_turns: f64,
    /// Counterweight step, g (default 1).
    #[serde(default = "default_weight_step")]
    pub counterweight_g: f64,
}

/// Upper limits of the search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Limits {
    /// Most adjuster turns (default 6).
    #[serde(default = "default_max_turns")]
    pub max_adjuster_turns: f64,
    /// Most counterweight per lever, g (default 120).
    #[serde(default = "default_max_weight")]
    pub max_counterweight_g: f64,
}

fn default_turn_step() -> f64 {
    0.25
}
fn default_weight_step() -> f64 {
    1.0
}
fn default_max_turns() -> f64 {
    6.0
}
fn default_max_weight() -> f64 {
    120.0
}

impl Default for Steps {
    fn default() -> Self {
        Self {
            adjuster_turns: default_turn_step(),
            counterweight_g: default_weight_step(),
        }
    }
}

impl Default for Limits {
    fn default() -> Self {
        Self {
            max_adjuster_turns: default_max_turns(),
            max_counterweight_g: default_max_weight(),
        }
    }
}

/// Answer to POST /api/v1/calc/recommend.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Recommendation {
    /// The chosen setting.
    pub recommended: Setting,
    /// Whether the chosen setting meets the targets: lockup only, settings inside the limits
    /// lie either side of the target and the chosen one locks up within [`LOCKUP_CLOSE`] of
    /// it; with a launch-ratio target, lockup within 1 % and ratio within 2 %. `false`:
    /// `recommended` is only the closest setting.
    pub target_reached: bool,
    /// What [`capacity`] gives for the chosen setting.
    pub result: SettingResult,
    /// Next-best settings, best first.
    pub alternatives: Vec<Alternative>,
    /// Plain-English notes (targets met or not, cautions).
    pub notes: Vec<String>,
}

/// Adjuster turns and counterweight.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Setting {
    /// Adjuster turns.
    pub adjuster_turns: f64,
    /// Counterweight per lever, g.
    pub counterweight_g: f64,
}

/// Outcome of the chosen setting, as [`capacity`] reports it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct SettingResult {
    /// Lockup speed, rev/min (null: slips at the top).
    pub lockup_rpm: Option<f64>,
    /// True when the lockup is "at or below" the curve's first speed (left out when false).
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub lockup_at_or_below: bool,
    /// Capacity / engine torque at launch (null without launch_rpm).
    pub launch_ratio: Option<f64>,
    /// Static spring clamp (lbf / N).
    pub static_clamp: f64,
}

/// Another setting and its outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Alternative {
    /// Adjuster turns.
    pub adjuster_turns: f64,
    /// Counterweight per lever, g.
    pub counterweight_g: f64,
    /// Lockup speed, rev/min (null: slips at the top).
    pub lockup_rpm: Option<f64>,
    /// Capacity / engine torque at launch.
    pub launch_ratio: Option<f64>,
}

/// One scored candidate on the grid.
#[derive(Debug, Clone, Copy)]
struct Candidate {
    turns: f64,
    weight_g: f64,
    lockup: Option<f64>,
    launch_ratio: Option<f64>,
    score: f64,
}

/// The search problem, validated, in internal units.
struct Search<'a> {
    model: &'a ClutchModel,
    target_rpm: f64,
    target_ratio: Option<f64>,
    launch_rpm: Option<f64>,
    weight_step: f64,
    weights: usize,
}

impl Search<'_> {
    fn law(&self, turns: f64, j: usize) -> CapacityLaw {
        self.model.law_for(turns, j as f64 * self.weight_step)
    }

    /// Lockup speed for scoring: slipping at the top counts as 10 % above the top.
    fn lockup_key(&self, lockup: Option<f64>) -> f64 {
        lockup.unwrap_or(self.model.engine.range().1 * 1.1)
    }

    /// Smallest counterweight index whose lockup is at or below target (None if none is).
    fn first_at_or_below(&self, turns: f64) -> Option<usize> {
        let below = |j: usize| {
            self.law(turns, j)
                .lockup_rpm(&self.model.engine)
                .is_some_and(|l| l <= self.target_rpm)
        };
        if !below(self.weights - 1) {
            return None;
        }
        let (mut lo, mut hi) = (0, self.weights - 1);
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if below(mid) { hi = mid } else { lo = mid + 1 }
        }
        Some(lo)
    }

    fn candidate(&self, turns: f64, j: usize) -> Candidate {
        let law = self.law(turns, j);
        let lockup = law.lockup_rpm(&self.model.engine);
        let launch_ratio = self
            .launch_rpm
            .map(|rpm| torque_ratio(&law, &self.model.engine, rpm));
        let lockup_err = (self.lockup_key(lockup) - self.target_rpm) / self.target_rpm;
        let ratio_err = match (self.target_ratio, launch_ratio) {
            (Some(t), Some(r)) => (r - t) / t,
            _ => 0.0,
        };
        Candidate {
            turns,
            weight_g: j as f64 * self.weight_step,
            lockup,
            launch_ratio,
            score: lockup_err * lockup_err + ratio_err * ratio_err,
        }
    }

    /// Smallest counterweight index whose launch ratio reaches the target (None if none does).
    fn first_ratio_at_or_above(&self, turns: f64, target: f64, launch_rpm: f64) -> Option<usize> {
        let reaches =
            |j: usize| torque_ratio(&self.law(turns, j), &self.model.engine, launch_rpm) >= target;
        if !reaches(self.weights - 1) {
            return None;
        }
        let (mut lo, mut hi) = (0, self.weights - 1);
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if reaches(mid) { hi = mid } else { lo = mid + 1 }
        }
        Some(lo)
    }

    /// Candidates at one turns value that contain its best counterweight.
    ///
    /// Lockup only: the two settings either side of the target, plus the next heavier one.
    /// Both targets: below the smaller of the two bracketing indices both misses shrink as
    /// weight is added, above the larger both grow (lockup never rises and the launch ratio
    /// never falls with counterweight), so scanning between them finds the exact optimum.
    fn candidates(&self, turns: f64) -> Vec<Candidate> {
        let last = self.weights - 1;
        let j_lockup = self.first_at_or_below(turns);
        let range = match (self.target_ratio, self.launch_rpm) {
            (Some(t), Some(rpm)) => {
                let a = j_lockup.unwrap_or(last);
                let b = self.first_ratio_at_or_above(turns, t, rpm).unwrap_or(last);
                a.min(b).saturating_sub(1)..=a.max(b)
            }
            _ => match j_lockup {
                Some(j) => j.saturating_sub(1)..=(j + 1).min(last),
                None => last.saturating_sub(1)..=last,
            },
        };
        range.map(|j| self.candidate(turns, j)).collect()
    }
}

/// Recommended setting for the targets.
///
/// Lockup target only: adjuster turns stay as given and the counterweight whose lockup speed
/// is closest to the target wins. With a launch-ratio target too: the setting on the whole
/// grid with the least e = ((L − L*)/L*)² + ((ρ − ρ*)/ρ*)² wins (L lockup speed, ρ launch
/// ratio; a 1 % miss of either weighs the same; slipping at the top counts as a lockup 10 %
/// above the top of the curve). Every turns value is visited and, per turns, only the
/// counterweights between the two targets' bisection brackets are scored, which is exact
/// because both misses are monotone in counterweight outside them.
///
/// Settings are multiples of the steps, from 0 to the limits. `result` is exactly
/// [`capacity`] at the chosen setting. Needs levers (error field "levers"); other errors name
/// the field. Cost: a few thousand lockup solves at the default steps (well under 10 ms).
pub fn recommend(req: &RecommendRequest) -> Result<Recommendation, InputError> {
    recommend_shown(req, req.setup.units)
}

/// [`recommend`], the answer's figures in `shown` (a stored build's clutch is read in its
/// storage units and answered in the shop's).
pub fn recommend_shown(req: &RecommendRequest, shown: Units) -> Result<Recommendation, InputError> {
    let valid = req.setup.validate()?;
    match &req.setup.levers {
        Some(l) if l.count > 0 => {}
        _ => {
            return Err(InputError::new(
                "levers",
                "a recommendation needs levers with counterweights",
            ));
        }
    }
    let (lo, hi) = valid.model.engine.range();
    let target_rpm = crate::require_finite("targets.lockup_rpm", req.targets.lockup_rpm)?;
    if !(lo..=hi).contains(&target_rpm) {
        return Err(InputError::new(
            "targets.lockup_rpm",
            format!("must be between {lo:.0} and {hi:.0} rpm, the torque curve's range"),
        ));
    }
    let target_ratio = match req.targets.launch_ratio {
        Some(r) => {
            limits::LAUNCH_RATIO.check("targets.launch_ratio", r, req.setup.units)?;
            if valid.launch_rpm.is_none() {
                return Err(InputError::new(
                    "launch_rpm",
                    "is needed for a launch_ratio target",
                ));
            }
            Some(r)
        }
        None => None,
    };
    let (turn_step, mut turns_n) = grid(
        "steps.adjuster_turns",
        req.steps.adjuster_turns,
        "limits.max_adjuster_turns",
        req.limits.max_adjuster_turns,
        upper(limits::ADJUSTER_TURNS.max),
    )?;
    // Settings that leave less than the bind margin at full release are not settings: the
    // grid stops at coil_bind_turns (0 turns always stays, with its warning if it is short).
    if let Some(bind) = valid.model.springs.coil_bind_turns() {
        let within = ((bind / turn_step) * (1.0 + 1e-12)).floor() as usize + 1;
        turns_n = turns_n.min(within);
    }
    let (weight_step, weights) = grid(
        "steps.counterweight_g",
        req.steps.counterweight_g,
        "limits.max_counterweight_g",
        req.limits.max_counterweight_g,
        upper(limits::COUNTERWEIGHT.max),
    )?;
    if target_ratio.is_some() && turns_n * weights > MAX_SEARCH_SETTINGS {
        return Err(InputError::new(
            "steps",
            format!("are too fine: more than {MAX_SEARCH_SETTINGS} settings inside the limits"),
        ));
    }
    let search = Search {
        model: &valid.model,
        target_rpm,
        target_ratio,
        launch_rpm: valid.launch_rpm,
        weight_step,
        weights,
    };

    let mut candidates: Vec<Candidate> = match target_ratio {
        None => search.candidates(valid.model.adjuster_turns),
        Some(_) => (0..turns_n)
            .flat_map(|k| search.candidates(k as f64 * turn_step))
            .collect(),
    };
    candidates.sort_by(|a, b| a.score.total_cmp(&b.score));
    let Some(best) = candidates.first().copied() else {
        return Err(InputError::new("limits", "leave no setting to try"));
    };

    let mut chosen = req.setup.clone();
    chosen.springs.adjuster_turns = best.turns;
    if let Some(l) = chosen.levers.as_mut() {
        l.counterweight_g = best.weight_g;
    }
    let report = report_for(&chosen.validate_shown(shown)?);
    let result = SettingResult {
        lockup_rpm: report.lockup_rpm,
        lockup_at_or_below: report.lockup_at_or_below,
        launch_ratio: report.launch.as_ref().map(|l| l.ratio),
        static_clamp: report.static_clamp,
    };
    let (notes, target_reached) = notes(req, &search, &best, &candidates);
    let alternatives = candidates
        .iter()
        .skip(1)
        .take(3)
        .map(|c| Alternative {
            adjuster_turns: c.turns,
            counterweight_g: c.weight_g,
            lockup_rpm: c.lockup,
            launch_ratio: c.launch_ratio,
        })
        .collect();
    Ok(Recommendation {
        recommended: Setting {
            adjuster_turns: best.turns,
            counterweight_g: best.weight_g,
        },
        target_reached,
        result,
        alternatives,
        notes,
    })
}

/// The value of an upper bound from the table of limits.
fn upper(b: Bound) -> f64 {
    match b {
        Bound::Incl(v) | Bound::Excl(v) => v,
    }
}

/// Validates a step and its limit; returns the step and the number of grid points 0..=limit.
fn grid(
    step_field: &str,
    step: f64,
    limit_field: &str,
    limit: f64,
    max: f64,
) -> Result<(f64, usize), InputError> {
    let step = crate::require_positive(step_field, step, max)?;
    let limit = crate::require_range(limit_field, limit, 0.0, max)?;
    let points = (limit / step * (1.0 + 1e-12)).floor() + 1.0;
    if points > MAX_GRID_POINTS {
        return Err(InputError::new(
            step_field,
            format!("is too fine: more than {MAX_GRID_POINTS} settings up to the limit"),
        ));
    }
    Ok((step, points as usize))
}

/// The notes, and whether the targets are reached (see [`Recommendation::target_reached`]).
fn notes(
    req: &RecommendRequest,
    s: &Search,
    best: &Candidate,
    all: &[Candidate],
) -> (Vec<String>, bool) {
    let mut notes = Vec::new();
    let any_above = all.iter().any(|c| s.lockup_key(c.lockup) > s.target_rpm);
    let any_below = all
        .iter()
        .any(|c| c.lockup.is_some_and(|l| l <= s.target_rpm));
    let start = s.model.engine.range().0;
    let lockup_text = match best.lockup {
        None => "slips at the top of the curve".to_string(),
        Some(l) if l <= start => format!("locks up {}", lockup_text(Some(l), start)),
        Some(l) => format!("locks up at {}", lockup_text(Some(l), start)),
    };
    if !any_above {
        notes.push(format!(
            "The lockup target can't be reached inside the limits: even the lightest setting tried {lockup_text}, below the {:.0} rpm target. Less static clamp (fewer adjuster turns) or lighter levers would be needed.",
            s.target_rpm
        ));
    } else if !any_below {
        notes.push(format!(
            "The lockup target can't be reached inside the limits: the closest setting {lockup_text}, above the {:.0} rpm target.",
            s.target_rpm
        ));
    }
    let lockup_met = best
        .lockup
        .is_some_and(|l| ((l - s.target_rpm) / s.target_rpm).abs() <= 0.01);
    let ratio_met = |t: f64, r: f64| ((r - t) / t).abs() <= 0.02;
    let lockup_close = best
        .lockup
        .is_some_and(|l| ((l - s.target_rpm) / s.target_rpm).abs() <= LOCKUP_CLOSE);
    let bracketed = any_above && any_below;
    let reached = match (s.target_ratio, best.launch_ratio) {
        (Some(t), Some(r)) => lockup_met && ratio_met(t, r),
        _ => bracketed && lockup_close,
    };
    match (s.target_ratio, best.launch_ratio) {
        (Some(t), Some(r)) if lockup_met && ratio_met(t, r) => notes.push(format!(
            "The clutch {lockup_text} against a {:.0} rpm target with a launch ratio of {r:.3} (target {t:.3}).",
            s.target_rpm
        )),
        (Some(t), Some(r)) => notes.push(format!(
            "The two targets can't both be met inside the limits; closest compromise: the clutch {lockup_text} against a {:.0} rpm target with a launch ratio of {r:.3} (target {t:.3}).",
            s.target_rpm
        )),
        _ if bracketed && lockup_close => notes.push(format!(
            "The clutch {lockup_text} against a {:.0} rpm target, as close as the {} g counterweight step allows.",
            s.target_rpm, s.weight_step
        )),
        _ if bracketed => notes.push(format!(
            "No setting inside the limits locks up within {:.0} % of the {:.0} rpm target: one counterweight step moves the lockup right past it, because the capacity line runs almost alongside the torque curve there. Closest: the clutch {lockup_text}.",
            LOCKUP_CLOSE * 100.0,
            s.target_rpm
        )),
        _ => {}
    }
    if s.target_ratio.is_none() {
        let turns = req.setup.springs.adjuster_turns;
        if turns > req.limits.max_adjuster_turns {
            notes.push(format!(
                "Adjuster turns were kept at {turns}, above the {} turn limit.",
                req.limits.max_adjuster_turns
            ));
        }
    }
    notes.push(
        "Estimates from the entered measurements: confirm on the bench and at the track, within the parts maker's limits."
            .to_string(),
    );
    (notes, reached)
}
