//! The capacity calculation: POST /api/v1/calc/capacity. Builds the capacity curve over the
//! engine's torque curve, finds the lockup speed and the launch ratio, and words the warnings.
//! Every output is in the request's unit system.

use crate::InputError;
use crate::capacity::friction::FacingMaterial;
use crate::capacity::lockup::{KNIFE_EDGE_MU_DROP, SpeedPoint, curve_at, knife_edge, lockup_text};
use crate::capacity::request::{CapacityRequest, ValidRequest};
use crate::quantity::Kind;
use crate::units::Units;
use serde::Serialize;

/// Spacing of the reported capacity curve, rev/min.
pub const REPORT_STEP_RPM: f64 = 100.0;

/// Answer to POST /api/v1/calc/capacity.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct CapacityReport {
    /// Static spring clamp (lbf / N), after the clamp lost to wear.
    pub static_clamp: f64,
    /// Static clamp lost to wear since the last shim (lbf / N), as given; left out when 0.
    #[serde(skip_serializing_if = "is_zero")]
    pub clamp_loss: f64,
    /// Most adjuster turns that keep `springs.bind_margin` to solid height with the clutch
    /// fully released: (x_bind − x_base − release travel − margin) / pitch, floored at 0; left
    /// out without `springs.free_length` and `springs.solid_height`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coil_bind_turns: Option<f64>,
    /// Clearance to solid height at the set turns with the clutch fully released (in / mm):
    /// x_bind − (x_base + turns·pitch + release travel); left out as `coil_bind_turns`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coil_bind_clearance: Option<f64>,
    /// Effective friction radius (in / mm).
    pub effective_radius: f64,
    /// Friction surfaces (2 per disc).
    pub friction_surfaces: u32,
    /// Capacity against engine speed: the curve's ends and every 100 rpm between.
    pub curve: Vec<CurvePoint>,
    /// Lowest speed from which capacity holds to the top of the curve; null if it slips there.
    pub lockup_rpm: Option<f64>,
    /// True when the clutch already holds at the curve's first speed: the lockup is "at or
    /// below" `lockup_rpm` (the curve says nothing about lower speeds), as the pages word it.
    /// Left out when false.
    #[serde(skip_serializing_if = "is_false")]
    pub lockup_at_or_below: bool,
    /// Capacity and engine torque at the launch speed; null without `launch_rpm`.
    pub launch: Option<SpeedCheck>,
    /// Capacity and engine torque at the top of the curve (ratio − 1 is the margin).
    pub top: SpeedCheck,
    /// Plain-English warnings.
    pub warnings: Vec<String>,
    /// Plain-English notes on what the answer assumed (left out when there are none).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// One row of the capacity curve, in display units.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct CurvePoint {
    /// Engine speed, rev/min.
    pub rpm: f64,
    /// Centrifugal clamp of all levers (lbf / N).
    pub centrifugal_clamp: f64,
    /// Static + centrifugal clamp (lbf / N).
    pub total_clamp: f64,
    /// Torque capacity (lbf·ft / N·m).
    pub capacity: f64,
    /// Engine torque (lbf·ft / N·m).
    pub engine_torque: f64,
}

/// Capacity against engine torque at one speed, in display units.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct SpeedCheck {
    /// Engine speed, rev/min.
    pub rpm: f64,
    /// Torque capacity (lbf·ft / N·m).
    pub capacity: f64,
    /// Engine torque (lbf·ft / N·m).
    pub engine_torque: f64,
    /// capacity / engine torque (below 1 the clutch slips).
    pub ratio: f64,
}

impl CurvePoint {
    fn from_si(p: &SpeedPoint, u: Units) -> Self {
        Self {
            rpm: p.rpm,
            centrifugal_clamp: u.n_to_force(p.centrifugal_clamp_n),
            total_clamp: u.n_to_force(p.total_clamp_n),
            capacity: u.nm_to_torque(p.capacity_nm),
            engine_torque: u.nm_to_torque(p.engine_torque_nm),
        }
    }
}

impl SpeedCheck {
    fn from_si(p: &SpeedPoint, u: Units) -> Self {
        Self {
            rpm: p.rpm,
            capacity: u.nm_to_torque(p.capacity_nm),
            engine_torque: u.nm_to_torque(p.engine_torque_nm),
            ratio: p.capacity_nm / p.engine_torque_nm,
        }
    }
}

/// Capacity report for a request: T(n) = n_f·μ·r_eff·(F_static + F_centrifugal(n)) over the
/// engine curve (see [`crate::capacity::lockup`]), lockup speed, launch ratio and warnings.
/// Errors name the offending field; never panics on any input.
pub fn capacity(req: &CapacityRequest) -> Result<CapacityReport, InputError> {
    Ok(report_for(&req.validate()?))
}

/// The report for an already validated request.
pub fn report_for(v: &ValidRequest) -> CapacityReport {
    let (u, m) = (v.units, &v.model);
    let law = m.law();
    let engine = &m.engine;
    // The step is a positive constant and a valid curve spans at most 14 500 rpm, so
    // curve_at cannot fail here; an empty curve would only be a programming error.
    let rows = curve_at(&law, engine, REPORT_STEP_RPM).unwrap_or_default();
    let (_, hi) = engine.range();
    let top = law.point(engine, hi);
    let launch = v.launch_rpm.map(|rpm| law.point(engine, rpm));
    let lockup_rpm = law.lockup_rpm(engine);

    let mut warnings = Vec::new();
    if lockup_rpm.is_none() {
        warnings.push(format!(
            "The clutch slips at the top of the torque curve: capacity {} is below engine torque {} at {:.0} rpm.",
            torque_text(top.capacity_nm, u),
            torque_text(top.engine_torque_nm, u),
            hi
        ));
    }
    if let Some(l) = &launch
        && l.capacity_nm >= l.engine_torque_nm
    {
        warnings.push(launch_grab_text(l.rpm, l.capacity_nm / l.engine_torque_nm));
    }
    if let (Some(now), Some(edge)) = (lockup_rpm, knife_edge(&law, engine)) {
        let start = engine.range().0;
        let mut w = String::new();
        if let Some(moved) = edge.less {
            w = format!(
                "The lockup is on a knife edge: above the lockup ({}) capacity only just covers engine torque somewhere. With {:.0} % less friction (a hot or glazed disc) the clutch would {}.",
                lockup_text(Some(now), start),
                KNIFE_EDGE_MU_DROP * 100.0,
                moved.map_or("slip at the top of the curve".to_string(), |l| format!(
                    "lock up only at {l:.0} rpm"
                ))
            );
        }
        if let Some(lower) = edge.more {
            if w.is_empty() {
                w = format!(
                    "The lockup is on a knife edge: below the lockup ({}) capacity only just falls short of engine torque somewhere.",
                    lockup_text(Some(now), start)
                );
            }
            w.push_str(&format!(
                " With {:.0} % more friction (a fresh or cooler disc) the clutch would lock up {}.",
                KNIFE_EDGE_MU_DROP * 100.0,
                match lockup_text(Some(lower), start) {
                    t if lower <= start => t,
                    t => format!("at {t}"),
                }
            ));
        }
        warnings.push(w);
    }
    let coil_bind_turns = m.springs.coil_bind_turns();
    let coil_bind_clearance_mm = m.springs.coil_bind_clearance_mm(m.adjuster_turns);
    if let Some(w) = bind_warning(m, u, "At", m.adjuster_turns, coil_bind_turns) {
        warnings.push(w);
    }
    for (i, &t) in v.adjuster_turns_each.iter().enumerate() {
        if let Some(w) = bind_warning(m, u, &format!("Adjuster {} at", i + 1), t, coil_bind_turns) {
            warnings.push(w);
        }
    }
    if let Some(rated) = v.rated_torque_nm {
        let limit = rated * v.overclamp_factor;
        if top.capacity_nm > limit {
            warnings.push(format!(
                "Capacity at {:.0} rpm ({}) is more than {} times the driveline's rated torque ({}): shock loads may break transmission or axle parts.",
                hi,
                torque_text(top.capacity_nm, u),
                v.overclamp_factor,
                torque_text(rated, u)
            ));
        }
    }
    if let Some(w) = v.material.and_then(|mat| mu_range_warning(m.mu, mat, u)) {
        warnings.push(w);
    }

    CapacityReport {
        static_clamp: u.n_to_force(law.static_clamp_n),
        clamp_loss: u.n_to_force(m.clamp_loss_n),
        coil_bind_turns,
        coil_bind_clearance: coil_bind_clearance_mm.map(|c| u.mm_to_length(c)),
        effective_radius: u.mm_to_length(m.effective_radius_mm),
        friction_surfaces: m.surfaces,
        curve: rows.iter().map(|p| CurvePoint::from_si(p, u)).collect(),
        lockup_rpm,
        lockup_at_or_below: lockup_rpm.is_some_and(|l| l <= engine.range().0),
        launch: launch.as_ref().map(|p| SpeedCheck::from_si(p, u)),
        top: SpeedCheck::from_si(&top, u),
        warnings,
        notes: v.notes.clone(),
    }
}

/// The coil-bind warning for `turns` (the setting, or one adjuster's), by the one rule: less
/// than the bind margin left to solid height with the clutch fully released.
fn bind_warning(
    m: &crate::capacity::lockup::ClutchModel,
    u: Units,
    what: &str,
    turns: f64,
    most: Option<f64>,
) -> Option<String> {
    let s = &m.springs;
    if !s.short_of_margin(turns) {
        return None;
    }
    let clear = s.coil_bind_clearance_mm(turns)?;
    let len = |mm: f64| crate::quantity::Kind::Length.show(u, mm);
    let back_off = most.map_or(String::new(), |t| format!(" to {t:.2} turns or fewer"));
    Some(if clear <= 0.0 {
        format!(
            "{what} {turns} turns the springs reach solid height (coil bind){}: the clamp figures no longer hold, and the springs, adjusters and cover can be damaged. Back the adjusters off{back_off}.",
            if s.release_travel_mm > 0.0 {
                " when the clutch is released"
            } else {
                ""
            }
        )
    } else {
        format!(
            "{what} {turns} turns only {} is left to coil bind with the clutch fully released, less than the {} margin: back the adjusters off{back_off}, and check the spring maker's solid height.",
            len(clear),
            len(s.bind_margin_mm)
        )
    })
}

/// The words every answer, page and sheet uses when capacity at the launch speed is at least
/// engine torque. The clutch still slips at the launch (its driven side starts at rest and must
/// be brought up to engine speed), so nothing here says it will not slip: it grabs hard.
pub fn launch_grab_text(launch_rpm: f64, ratio: f64) -> String {
    format!(
        "Capacity at the {launch_rpm:.0} rpm launch is {ratio:.2} times engine torque, so the clutch grabs hard: the engine is pulled down, or the driveline and tires take the shock. It still slips until the input shaft comes up to engine speed."
    )
}

/// Whether a warning is the one [`launch_grab_text`] words, so a page can put the launch
/// preview's slip time beside it.
pub fn is_launch_grab(warning: &str) -> bool {
    warning.starts_with("Capacity at the ") && warning.contains("so the clutch grabs hard")
}

fn is_false(v: &bool) -> bool {
    !*v
}

/// The warning for a μ outside the published range of its facing material, judged as shown
/// (three decimals, [`Kind::Mu`]): a μ that reads inside the range is not called outside it.
fn mu_range_warning(mu: f64, mat: FacingMaterial, u: Units) -> Option<String> {
    let d = mat.data();
    let shown = Kind::Mu.number(u, mu);
    let read = shown.parse::<f64>().unwrap_or(mu);
    (read < d.mu_min || read > d.mu_max).then(|| {
        format!(
            "Friction coefficient {shown} is outside the published range {:.2}–{:.2} for {} facings.",
            d.mu_min,
            d.mu_max,
            mat.label().to_lowercase()
        )
    })
}

fn is_zero(v: &f64) -> bool {
    *v == 0.0
}

fn torque_text(nm: f64, u: Units) -> String {
    format!("{:.0} {}", u.nm_to_torque(nm), u.torque_label())
}

#[cfg(test)]
mod tests {
    use super::*;

    // Safety wording: a clutch whose driven side starts at rest always slips first, so no
    // answer may say it will not slip (issue 21, item 1). 1.87 is the ratio as given.
    #[test]
    fn the_launch_warning_never_says_the_clutch_will_not_slip() {
        let w = launch_grab_text(5000.0, 1.8712);
        assert_eq!(
            w,
            "Capacity at the 5000 rpm launch is 1.87 times engine torque, so the clutch grabs hard: the engine is pulled down, or the driveline and tires take the shock. It still slips until the input shaft comes up to engine speed."
        );
        assert!(!w.contains("not slip"));
        assert!(is_launch_grab(&w));
        assert!(!is_launch_grab(
            "Capacity at 7000 rpm (1571 lbf·ft) is more than 1.5 times"
        ));
    }

    // The ranges are the facing table's (capacity::friction); a μ is read to 0.001 everywhere.
    #[test]
    fn a_mu_that_reads_inside_the_range_is_not_called_outside_it() {
        let m = FacingMaterial::Organic;
        let d = m.data();
        let u = Units::Imperial;
        assert_eq!(mu_range_warning(d.mu_min - 0.0004, m, u), None);
        let w = mu_range_warning(d.mu_min - 0.0006, m, u).expect("reads below");
        assert!(
            w.starts_with(&format!(
                "Friction coefficient {:.3} is outside",
                d.mu_min - 0.001
            )),
            "{w}"
        );
        assert_eq!(mu_range_warning(d.mu_max + 0.0004, m, u), None);
    }

    #[test]
    fn torque_text_rounds_and_labels() {
        assert_eq!(torque_text(135.5818, Units::Imperial), "100 lbf·ft");
        assert_eq!(torque_text(135.5818, Units::Metric), "136 N·m");
    }
}
