//! The shop's own settings: name and contact for the sheets, display units, time zone, limits.

use super::measure::Length;
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::customer::check_email;
use super::date::ShopZone;
use super::field::{Ctx, Field, Record, field};
use clutch::quantity::limits;
use clutch::units::Units;

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
pub struct SettingsInput {
    pub name: String,
    pub phone: String,
    pub email: String,
    pub address: String,
    /// `imperial` or `metric`.
    pub units: String,
    pub spring_spread_pct: f64,
    pub spring_sag_pct: f64,
    pub shimming_limit_mm: Length,
    pub overclamp_factor: f64,
    pub due_within_passes: i64,
    /// IANA time zone name; empty for the server's own zone. (Sheets printed before the
    /// setting existed keep settings without it.)
    #[serde(default)]
    pub time_zone: String,
    /// Share of its torque each face beyond the first two carries, 0–1 (1: all; sheets printed
    /// before the setting existed keep 1).
    #[serde(default = "full_share")]
    pub extra_face_efficiency: f64,
    /// Clearance to coil bind kept at full release, mm (sheets printed before the setting
    /// existed take the default 0.5 mm).
    #[serde(default = "default_bind_margin")]
    pub bind_margin_mm: Length,
    /// How far the engine may fall below the launch speed in a clean lock, percent (sheets
    /// printed before the setting existed take the default 15 %).
    #[serde(default = "default_launch_bog")]
    pub launch_bog_pct: f64,
}

fn full_share() -> f64 {
    1.0
}

fn default_bind_margin() -> Length {
    Length::from_mm(clutch::capacity::clamp::DEFAULT_BIND_MARGIN_MM)
}

fn default_launch_bog() -> f64 {
    clutch::launch::target::Clean::default().max_bog_share * 100.0
}

impl Default for SettingsInput {
    fn default() -> Self {
        Self {
            name: String::new(),
            phone: String::new(),
            email: String::new(),
            address: String::new(),
            units: Units::default().key().into(),
            spring_spread_pct: f64::NAN,
            spring_sag_pct: f64::NAN,
            shimming_limit_mm: Length::from_mm(f64::NAN),
            overclamp_factor: f64::NAN,
            due_within_passes: 0,
            time_zone: String::new(),
            extra_face_efficiency: full_share(),
            bind_margin_mm: default_bind_margin(),
            launch_bog_pct: default_launch_bog(),
        }
    }
}

impl SettingsInput {
    /// What the launch preview's searches count as a clean lock.
    pub fn clean_lock(&self) -> clutch::launch::target::Clean {
        clutch::launch::target::Clean {
            max_bog_share: self.launch_bog_pct / 100.0,
        }
    }

    /// The shop's display units.
    pub fn units(&self) -> Units {
        Units::from_key(&self.units).unwrap_or_default()
    }

    /// What a record check needs: the shop's units and today in its time zone.
    pub fn ctx(&self) -> Ctx {
        Ctx {
            units: self.units(),
            today: super::date::Date::today(&self.zone()),
        }
    }

    /// What the record API checks with: storage units (metric; the JSON fields name them) and
    /// the shop's today.
    pub fn record_ctx(&self) -> Ctx {
        Ctx {
            units: Units::Metric,
            ..self.ctx()
        }
    }

    /// The shop's time zone (the server's own when unset or no longer known).
    pub fn zone(&self) -> ShopZone {
        ShopZone::parse(&self.time_zone).unwrap_or_else(|_| ShopZone::server())
    }
}

impl Record for SettingsInput {
    const FIELDS: &'static [Field<Self>] = &[
        field!(text name, "name", "Shop name", 120, required),
        field!(text phone, "phone", "Phone", 40),
        field!(text email, "email", "Email", 120),
        field!(text address, "address", "Address", 400),
        field!(choice units, "units", "Units", &[("imperial", "imperial"), ("metric", "metric")]),
        field!(
            number spring_spread_pct, "spring_spread_pct", "Spring spread flag",
            limits::SPRING_SPREAD, required
        )
        .hint("when a set's rates spread more than this share of their mean"),
        field!(
            number spring_sag_pct, "spring_sag_pct", "Spring sag flag", limits::SPRING_SAG, required
        )
        .hint("when a spring's load at the test height fell by more than this"),
        field!(
            number shimming_limit_mm, "shimming_limit", "Shimming limit", limits::SHIMMING_LIMIT,
            required
        )
        .hint("for builds without one of their own"),
        field!(
            number overclamp_factor, "overclamp_factor", "Over-clamp warning factor",
            limits::OVERCLAMP_FACTOR, required
        )
        .hint("when the capacity is this many times the transmission's rated torque")
        .unit("×"),
        field!(
            whole due_within_passes, "due_within_passes", "List work due within",
            limits::DUE_WITHIN_PASSES
        )
        .unit("passes"),
        field!(
            number extra_face_efficiency, "extra_face_efficiency",
            "Torque share of each extra face", limits::EXTRA_FACE_EFFICIENCY, blank full_share()
        )
        .hint("twin and triple discs: the share each face beyond the first two carries"),
        field!(
            number bind_margin_mm, "bind_margin", "Coil-bind margin", limits::BIND_MARGIN,
            blank default_bind_margin()
        )
        .hint("clearance to keep with the clutch fully released"),
        field!(
            number launch_bog_pct, "launch_bog_pct",
            "Clean lock: engine may fall below the launch speed by at most", limits::LAUNCH_BOG,
            blank default_launch_bog()
        ),
        field!(text time_zone, "time_zone", "Time zone", 64)
            .hint("e.g. America/Chicago; empty: this computer's"),
    ];

    fn check_more(&mut self, _: &Ctx, errors: &mut FieldErrors) {
        if let Err(m) = check_email(&self.email) {
            Self::fault(errors, "email", m);
        }
        if let Err(m) = ShopZone::parse(&self.time_zone) {
            Self::fault(errors, "time_zone", m);
        }
    }
}
