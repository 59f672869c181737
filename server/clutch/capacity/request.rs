//! The capacity calculation request, as the API receives it (JSON), and its validation into a
//! [`ClutchModel`] in internal units.
//!
//! Lengths, forces, rates and torques are in the request's `units` (in / lbf / lbf·in⁻¹ / lbf·ft
//! or mm / N / N·mm⁻¹ / N·m); counterweights and lever masses are grams in both systems.
//! JSON type errors belong to the web layer; [`CapacityRequest::validate`] reports range and
//! consistency errors with the JSON path of the field.

use crate::InputError;
use crate::capacity::clamp::{LeverBody, LeverSet, SpringPack};
use crate::capacity::friction::{FacingMaterial, friction_surfaces};
use crate::capacity::lockup::ClutchModel;
use crate::capacity::torque::{Theory, effective_radius_mm};
use crate::capacity::torque_curve::TorqueCurve;
use crate::quantity::{Limit, limits};
use crate::units::Units;
use serde::{Deserialize, Serialize};

/// Default multiple of the driveline's rated input torque above which capacity is flagged
/// (common shop practice, no published source).
pub const DEFAULT_OVERCLAMP_FACTOR: f64 = 1.5;

/// POST /api/v1/calc/capacity body.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct CapacityRequest {
    /// Unit system of every length, force, rate and torque in the request and the answer.
    pub units: Units,
    /// Friction disc(s).
    pub disc: DiscInput,
    /// Friction coefficient.
    pub friction: FrictionInput,
    /// Springs and adjusters.
    pub springs: SpringsInput,
    /// Levers; absent for a spring-only (static) clutch.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub levers: Option<LeversInput>,
    /// Engine torque curve.
    pub engine: EngineInput,
    /// Engine speed at launch, rev/min; must lie inside the torque curve.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub launch_rpm: Option<f64>,
    /// Optional driveline data for the over-clamp check.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub driveline: Option<DrivelineInput>,
    /// Multiple of the rated driveline torque above which capacity is flagged (default 1.5).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub overclamp_factor: Option<f64>,
}

/// Disc geometry.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct DiscInput {
    /// Facing outer diameter (in / mm).
    pub outer_diameter: f64,
    /// Facing inner diameter (in / mm).
    pub inner_diameter: f64,
    /// Number of driven discs, 1–3 (default 1).
    #[serde(default = "one")]
    pub count: u32,
    /// Effective-radius assumption (default uniform wear).
    #[serde(default)]
    pub theory: Theory,
    /// Share of its torque each face beyond the first two carries, 0–1 (default 1: every
    /// face counts fully). From memory, no published value.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub extra_face_efficiency: Option<f64>,
}

fn one() -> u32 {
    1
}

/// Friction: give `mu`, or a facing `material` to use its nominal μ.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct FrictionInput {
    /// Friction coefficient, 0.05–0.8.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mu: Option<f64>,
    /// Facing material; its nominal μ is used when `mu` is absent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub material: Option<FacingMaterial>,
}

/// Springs and adjusters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct SpringsInput {
    /// Number of springs, 1–24.
    pub count: u32,
    /// Rate of one spring (lbf/in / N/mm).
    pub rate: f64,
    /// Compression with adjusters at zero turns (in / mm): free minus installed cover height.
    pub base_compression: f64,
    /// Adjuster travel per turn (in / mm), i.e. the thread pitch (default 0).
    #[serde(default)]
    pub adjuster_pitch: f64,
    /// Adjuster turns (default 0).
    #[serde(default)]
    pub adjuster_turns: f64,
    /// Static clamp lost to disc wear since the last shim (lbf / N; default 0): the springs
    /// extend by the cover-height growth and push less. Taken off the static clamp, which never
    /// goes below zero.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub clamp_loss: f64,
    /// Free length of the springs (in / mm), with `solid_height`: for the coil-bind check.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub free_length: Option<f64>,
    /// Solid height of the springs, coils touching (in / mm), with `free_length`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solid_height: Option<f64>,
    /// Further spring compression at full release (in / mm): the pressure plate's lift at the
    /// springs. Absent: counted as 0, and the answer's notes say so.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub release_travel: Option<f64>,
    /// Clearance to coil bind to keep at full release (in / mm; default 0.5 mm = 0.0197 in,
    /// common shop practice, no published source).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bind_margin: Option<f64>,
    /// Turns of each adjuster when they were set one by one: each is checked against coil
    /// bind by the same rule as `adjuster_turns`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub adjuster_turns_each: Option<Vec<f64>>,
}

fn is_zero(v: &f64) -> bool {
    *v == 0.0
}

/// Levers: geometry (`cg_radius` + `arm_ratio`) or a calibrated `gain`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LeversInput {
    /// Number of levers, 0–24.
    pub count: u32,
    /// Counterweight on each lever, g.
    pub counterweight_g: f64,
    /// Mass of one lever itself, g (default 0).
    #[serde(default)]
    pub lever_mass_g: f64,
    /// Radius of the lever + weight centre of gravity (in / mm).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cg_radius: Option<f64>,
    /// Lever arm ratio a/b (centrifugal-force arm over plate-reaction arm).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub arm_ratio: Option<f64>,
    /// Radius of the lever body's own centre of gravity (in / mm), with `cg_radius` and
    /// `arm_ratio` (then `cg_radius` is the counterweight's); absent: the lever's mass counts
    /// at `cg_radius`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub body_cg_radius: Option<f64>,
    /// The lever body's own arm ratio (its centrifugal force's arm over the plate reaction's),
    /// with `cg_radius` and `arm_ratio`; absent: the body acts on `arm_ratio`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub body_arm_ratio: Option<f64>,
    /// Clamp per gram per lever at 1000 rpm (lbf / N), instead of cg_radius and arm_ratio.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gain: Option<f64>,
    /// With `gain`: the clamp one lever gives at 1000 rpm with no counterweight (lbf / N), its
    /// body's own share measured; then the gain counts for the counterweight only and
    /// `lever_mass_g` is not used. Absent: the lever's mass counts with the gain.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub body_force_at_1000: Option<f64>,
}

/// Engine data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct EngineInput {
    /// Dyno points `[rpm, torque]` (torque in lbf·ft / N·m), at least 3.
    pub torque_curve: Vec<[f64; 2]>,
}

/// Driveline data for the over-clamp check.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct DrivelineInput {
    /// Rated input torque of the transmission / driveline (lbf·ft / N·m).
    pub rated_torque: f64,
}

/// A validated request in internal units.
#[derive(Debug, Clone, PartialEq)]
pub struct ValidRequest {
    /// Display units of the request.
    pub units: Units,
    /// The clutch with its setting.
    pub model: ClutchModel,
    /// Launch speed, rev/min, inside the curve.
    pub launch_rpm: Option<f64>,
    /// Rated driveline torque, N·m.
    pub rated_torque_nm: Option<f64>,
    /// Over-clamp factor.
    pub overclamp_factor: f64,
    /// Facing material, if given.
    pub material: Option<FacingMaterial>,
    /// Turns of each adjuster, when given.
    pub adjuster_turns_each: Vec<f64>,
    /// Plain-English notes on the inputs (assumed values).
    pub notes: Vec<String>,
}

/// A whole count checked against its limit.
fn count_in(field: &str, v: u32, limit: Limit) -> Result<u32, InputError> {
    limit.check(field, f64::from(v), Units::Metric).map(|_| v)
}

impl CapacityRequest {
    /// The same clutch described in another unit system (lengths, forces, rates, torques
    /// converted; grams, counts, ratios and speeds unchanged). Non-finite values stay so.
    /// Only the tests use it, to check both systems give one answer: the program reads a
    /// request in its own units and shows the answer in another (`validate_shown`).
    #[cfg(test)]
    pub fn in_units(&self, target: Units) -> CapacityRequest {
        let from = self.units;
        let len = |v: f64| target.mm_to_length(from.length_to_mm(v));
        let force = |v: f64| target.n_to_force(from.force_to_n(v));
        let torque = |v: f64| target.nm_to_torque(from.torque_to_nm(v));
        let mut r = self.clone();
        r.units = target;
        r.disc.outer_diameter = len(r.disc.outer_diameter);
        r.disc.inner_diameter = len(r.disc.inner_diameter);
        r.springs.rate = target.n_per_mm_to_rate(from.rate_to_n_per_mm(r.springs.rate));
        r.springs.base_compression = len(r.springs.base_compression);
        r.springs.adjuster_pitch = len(r.springs.adjuster_pitch);
        r.springs.clamp_loss = force(r.springs.clamp_loss);
        r.springs.free_length = r.springs.free_length.map(len);
        r.springs.solid_height = r.springs.solid_height.map(len);
        r.springs.release_travel = r.springs.release_travel.map(len);
        r.springs.bind_margin = r.springs.bind_margin.map(len);
        if let Some(l) = r.levers.as_mut() {
            l.cg_radius = l.cg_radius.map(len);
            l.body_cg_radius = l.body_cg_radius.map(len);
            l.gain = l.gain.map(force);
            l.body_force_at_1000 = l.body_force_at_1000.map(force);
        }
        for p in &mut r.engine.torque_curve {
            p[1] = torque(p[1]);
        }
        if let Some(d) = r.driveline.as_mut() {
            d.rated_torque = torque(d.rated_torque);
        }
        r
    }

    /// Checks every value and builds the model in internal units (mm, N, N/mm, N·m, g).
    /// Errors name the first offending field by its JSON path.
    pub fn validate(&self) -> Result<ValidRequest, InputError> {
        self.validate_shown(self.units)
    }

    /// [`Self::validate`], with the answer (report, notes) to be shown in `shown`: a stored
    /// build's clutch is read in its storage units and shown in the shop's, with no trip
    /// through the shop's units on the way.
    pub fn validate_shown(&self, shown: Units) -> Result<ValidRequest, InputError> {
        let u = self.units;
        let od = limits::FACING_DIAMETER.check_shown(
            "disc.outer_diameter",
            self.disc.outer_diameter,
            u,
        )?;
        let id = limits::FACING_DIAMETER.check_shown(
            "disc.inner_diameter",
            self.disc.inner_diameter,
            u,
        )?;
        let r_eff = effective_radius_mm(od, id, self.disc.theory)?;
        count_in("disc.count", self.disc.count, limits::DISC_COUNT)?;
        let surfaces = friction_surfaces(self.disc.count)?;
        let extra_face_efficiency = match self.disc.extra_face_efficiency {
            Some(e) => limits::EXTRA_FACE_EFFICIENCY.check("disc.extra_face_efficiency", e, u)?,
            None => 1.0,
        };
        let mu = match (self.friction.mu, self.friction.material) {
            (Some(mu), _) => limits::MU.check("friction.mu", mu, u)?,
            (None, Some(m)) => m.data().mu_nominal,
            (None, None) => {
                return Err(InputError::new(
                    "friction.mu",
                    "give mu or a facing material",
                ));
            }
        };
        let springs = self.spring_pack()?;
        let turns = limits::ADJUSTER_TURNS.check(
            "springs.adjuster_turns",
            self.springs.adjuster_turns,
            u,
        )?;
        let clamp_loss_n =
            limits::CLAMP_LOSS.check_shown("springs.clamp_loss", self.springs.clamp_loss, u)?;
        let (levers, counterweight_g) = match &self.levers {
            Some(l) => (Some(l.lever_set(u)?), l.counterweight_g),
            None => (None, 0.0),
        };
        let points: Vec<(f64, f64)> = self
            .engine
            .torque_curve
            .iter()
            .map(|&[rpm, t]| (rpm, if t.is_finite() { u.torque_to_nm(t) } else { t }))
            .collect();
        let engine = TorqueCurve::new(&points, "engine.torque_curve", u)?;
        let launch_rpm = match self.launch_rpm {
            Some(rpm) => {
                let (lo, hi) = engine.range();
                Some(crate::require_range("launch_rpm", rpm, lo, hi)?)
            }
            None => None,
        };
        let rated_torque_nm = match &self.driveline {
            Some(d) => Some(limits::RATED_TORQUE.check_shown(
                "driveline.rated_torque",
                d.rated_torque,
                u,
            )?),
            None => None,
        };
        let adjuster_turns_each = match &self.springs.adjuster_turns_each {
            Some(each) => {
                crate::capacity::clamp::check_adjusters(each, "springs.adjuster_turns_each")
                    .map(|_| each.clone())?
            }
            None => Vec::new(),
        };
        let mut notes = Vec::new();
        if springs.bind_compression_mm.is_some() {
            if self.springs.release_travel.is_none() {
                notes.push("No release travel was given: it counts as 0, so the coil-bind figures hold for the engaged clutch only. Measure how far the springs compress further at full release and enter it.".to_string());
            }
            if self.springs.bind_margin.is_none() {
                notes.push(format!(
                    "The clearance kept to coil bind is the default {} (common shop practice).",
                    crate::quantity::Kind::Length.show(shown, springs.bind_margin_mm)
                ));
            }
        }
        let overclamp_factor = match self.overclamp_factor {
            Some(f) => limits::OVERCLAMP_FACTOR.check("overclamp_factor", f, u)?,
            None => DEFAULT_OVERCLAMP_FACTOR,
        };
        Ok(ValidRequest {
            units: shown,
            model: ClutchModel {
                springs,
                adjuster_turns: turns,
                clamp_loss_n,
                levers,
                counterweight_g,
                surfaces,
                extra_face_efficiency,
                mu,
                effective_radius_mm: r_eff,
                engine,
            },
            launch_rpm,
            rated_torque_nm,
            overclamp_factor,
            material: self.friction.material,
            adjuster_turns_each,
            notes,
        })
    }

    fn spring_pack(&self) -> Result<SpringPack, InputError> {
        let (u, s) = (self.units, &self.springs);
        let count = count_in("springs.count", s.count, limits::SPRING_COUNT)?;
        Ok(SpringPack {
            count,
            rate_n_per_mm: limits::SPRING_RATE.check_shown("springs.rate", s.rate, u)?,
            base_compression_mm: limits::BASE_COMPRESSION.check_shown(
                "springs.base_compression",
                s.base_compression,
                u,
            )?,
            pitch_mm: limits::ADJUSTER_TRAVEL.check_shown(
                "springs.adjuster_pitch",
                s.adjuster_pitch,
                u,
            )?,
            bind_compression_mm: self.bind_compression_mm()?,
            release_travel_mm: match s.release_travel {
                Some(r) => limits::RELEASE_TRAVEL.check_shown("springs.release_travel", r, u)?,
                None => 0.0,
            },
            bind_margin_mm: match s.bind_margin {
                Some(m) => limits::BIND_MARGIN.check_shown("springs.bind_margin", m, u)?,
                None => crate::capacity::clamp::DEFAULT_BIND_MARGIN_MM,
            },
        })
    }

    /// Free length minus solid height, mm, when both are given.
    fn bind_compression_mm(&self) -> Result<Option<f64>, InputError> {
        let (u, s) = (self.units, &self.springs);
        match (s.free_length, s.solid_height) {
            (None, None) => Ok(None),
            (Some(free), Some(solid)) => {
                let free =
                    limits::SPRING_FREE_LENGTH.check_shown("springs.free_length", free, u)?;
                let solid =
                    limits::SPRING_FREE_LENGTH.check_shown("springs.solid_height", solid, u)?;
                if solid >= free {
                    return Err(InputError::new(
                        "springs.solid_height",
                        "must be less than the free length",
                    ));
                }
                Ok(Some(free - solid))
            }
            (Some(_), None) => Err(InputError::new(
                "springs.solid_height",
                "is needed with free_length",
            )),
            (None, Some(_)) => Err(InputError::new(
                "springs.free_length",
                "is needed with solid_height",
            )),
        }
    }
}

impl LeversInput {
    fn lever_set(&self, u: Units) -> Result<LeverSet, InputError> {
        let count = count_in("levers.count", self.count, limits::LEVER_COUNT)?;
        limits::COUNTERWEIGHT.check("levers.counterweight_g", self.counterweight_g, u)?;
        let lever_mass = limits::LEVER_MASS.check("levers.lever_mass_g", self.lever_mass_g, u)?;
        let body_radius = match self.body_cg_radius {
            Some(_) if self.gain.is_some() => {
                return Err(InputError::new(
                    "levers.body_cg_radius",
                    "works with cg_radius and arm_ratio, not with gain",
                ));
            }
            Some(r) => Some(limits::LEVER_CG_RADIUS.check_shown("levers.body_cg_radius", r, u)?),
            None => None,
        };
        let body_arm = match self.body_arm_ratio {
            Some(_) if self.gain.is_some() => {
                return Err(InputError::new(
                    "levers.body_arm_ratio",
                    "works with cg_radius and arm_ratio, not with gain (give body_force_at_1000)",
                ));
            }
            Some(a) => Some(limits::LEVER_ARM_RATIO.check("levers.body_arm_ratio", a, u)?),
            None => None,
        };
        let body_force = match self.body_force_at_1000 {
            Some(_) if self.gain.is_none() => {
                return Err(InputError::new(
                    "levers.body_force_at_1000",
                    "works with gain, not with cg_radius and arm_ratio (give body_cg_radius and body_arm_ratio)",
                ));
            }
            Some(f) => {
                Some(limits::LEVER_BODY_FORCE.check_shown("levers.body_force_at_1000", f, u)?)
            }
            None => None,
        };
        match (self.gain, self.cg_radius, self.arm_ratio) {
            (Some(_), Some(_), _) | (Some(_), _, Some(_)) => Err(InputError::new(
                "levers.gain",
                "give either gain or cg_radius with arm_ratio, not both",
            )),
            (Some(gain), None, None) => {
                let gain = limits::LEVER_GAIN.check_shown("levers.gain", gain, u)?;
                Ok(match body_force {
                    Some(f) => LeverSet::from_gain_and_body(count, gain, f),
                    None => LeverSet::from_gain(count, lever_mass, gain),
                })
            }
            (None, Some(r), Some(ratio)) => {
                let r = limits::LEVER_CG_RADIUS.check_shown("levers.cg_radius", r, u)?;
                let ratio = limits::LEVER_ARM_RATIO.check("levers.arm_ratio", ratio, u)?;
                Ok(LeverSet::from_geometry(
                    count,
                    lever_mass,
                    r,
                    ratio,
                    LeverBody {
                        cg_radius_mm: body_radius,
                        arm_ratio: body_arm,
                    },
                ))
            }
            (None, None, _) => Err(InputError::new(
                "levers.cg_radius",
                "give cg_radius with arm_ratio, or gain",
            )),
            (None, Some(_), None) => Err(InputError::new(
                "levers.arm_ratio",
                "is needed with cg_radius",
            )),
        }
    }
}
