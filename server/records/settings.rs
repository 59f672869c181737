//! The shop's own settings: name and contact for the sheets, display units, time zone, limits.

use super::measure::Length;
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::customer::check_email;
use super::date::ShopZone;
use super::field::{Ctx, Field, Record, Value};
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
        Field {
            column: "name",
            form: "name",
            label: "Shop name",
            value: Value::Text {
                max_chars: 120,
                required: true,
                get: |r| &r.name,
                set: |r, v| r.name = v,
            },
        },
        Field {
            column: "phone",
            form: "phone",
            label: "Phone",
            value: Value::Text {
                max_chars: 40,
                required: false,
                get: |r| &r.phone,
                set: |r, v| r.phone = v,
            },
        },
        Field {
            column: "email",
            form: "email",
            label: "Email",
            value: Value::Text {
                max_chars: 120,
                required: false,
                get: |r| &r.email,
                set: |r, v| r.email = v,
            },
        },
        Field {
            column: "address",
            form: "address",
            label: "Address",
            value: Value::Text {
                max_chars: 400,
                required: false,
                get: |r| &r.address,
                set: |r, v| r.address = v,
            },
        },
        Field {
            column: "units",
            form: "units",
            label: "Units",
            value: Value::Choice {
                options: &[("imperial", "imperial"), ("metric", "metric")],
                get: |r| &r.units,
                set: |r, v| r.units = v,
            },
        },
        Field {
            column: "spring_spread_pct",
            form: "spring_spread_pct",
            label: "Spring spread flag",
            value: Value::Number {
                limit: limits::SPRING_SPREAD,
                required: true,
                get: |r| Some(r.spring_spread_pct),
                set: |r, v| r.spring_spread_pct = v.unwrap_or(f64::NAN),
            },
        },
        Field {
            column: "spring_sag_pct",
            form: "spring_sag_pct",
            label: "Spring sag flag",
            value: Value::Number {
                limit: limits::SPRING_SAG,
                required: true,
                get: |r| Some(r.spring_sag_pct),
                set: |r, v| r.spring_sag_pct = v.unwrap_or(f64::NAN),
            },
        },
        Field {
            column: "shimming_limit_mm",
            form: "shimming_limit",
            label: "Shimming limit",
            value: Value::Number {
                limit: limits::SHIMMING_LIMIT,
                required: true,
                get: |r| Some(r.shimming_limit_mm.mm()),
                set: |r, v| r.shimming_limit_mm = Length::from_mm(v.unwrap_or(f64::NAN)),
            },
        },
        Field {
            column: "overclamp_factor",
            form: "overclamp_factor",
            label: "Over-clamp warning factor",
            value: Value::Number {
                limit: limits::OVERCLAMP_FACTOR,
                required: true,
                get: |r| Some(r.overclamp_factor),
                set: |r, v| r.overclamp_factor = v.unwrap_or(f64::NAN),
            },
        },
        Field {
            column: "due_within_passes",
            form: "due_within_passes",
            label: "List work due within",
            value: Value::Whole {
                limit: limits::DUE_WITHIN_PASSES,
                default: None,
                get: |r| r.due_within_passes,
                set: |r, v| r.due_within_passes = v,
            },
        },
        Field {
            column: "extra_face_efficiency",
            form: "extra_face_efficiency",
            label: "Torque share of each extra face",
            value: Value::Number {
                limit: limits::EXTRA_FACE_EFFICIENCY,
                required: false,
                get: |r| Some(r.extra_face_efficiency),
                // Blank: every face carries its full share.
                set: |r, v| r.extra_face_efficiency = v.unwrap_or_else(full_share),
            },
        },
        Field {
            column: "bind_margin_mm",
            form: "bind_margin",
            label: "Coil-bind margin",
            value: Value::Number {
                limit: limits::BIND_MARGIN,
                required: false,
                get: |r| Some(r.bind_margin_mm.mm()),
                // Blank: the default 0.5 mm.
                set: |r, v| r.bind_margin_mm = v.map_or_else(default_bind_margin, Length::from_mm),
            },
        },
        Field {
            column: "launch_bog_pct",
            form: "launch_bog_pct",
            label: "Clean lock: engine may fall below the launch speed by at most",
            value: Value::Number {
                limit: limits::LAUNCH_BOG,
                required: false,
                get: |r| Some(r.launch_bog_pct),
                // Blank: the default 15 %.
                set: |r, v| r.launch_bog_pct = v.unwrap_or_else(default_launch_bog),
            },
        },
        Field {
            column: "time_zone",
            form: "time_zone",
            label: "Time zone",
            value: Value::Text {
                max_chars: 64,
                required: false,
                get: |r| &r.time_zone,
                set: |r, v| r.time_zone = v,
            },
        },
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
