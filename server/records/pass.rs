//! A track pass: what really happened with a setup.

use super::measure::{EngineSpeed, Seconds, Temperature};
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, Value};
use clutch::quantity::limits;

#[derive(
    Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema,
)]
#[serde(default)]
pub struct PassInput {
    pub run_on: String,
    /// Time of day, `HH:MM`, or empty.
    pub run_at: String,
    pub track: String,
    pub launch_rpm: Option<EngineSpeed>,
    pub sixty_ft_s: Option<Seconds>,
    pub et_s: Option<Seconds>,
    pub observed_lockup_rpm: Option<EngineSpeed>,
    /// Seconds from the launch to lockup, typed (a logger's or timing screen's); a data log's
    /// own lock time is used when this is empty.
    pub lockup_time_s: Option<Seconds>,
    /// Ambient temperature, °C.
    pub ambient_c: Option<Temperature>,
    pub notes: String,
}

impl Record for PassInput {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "run_on",
            form: "run_on",
            label: "Date",
            value: Value::Date {
                get: |r| &r.run_on,
                set: |r, v| r.run_on = v,
            },
        },
        Field {
            column: "run_at",
            form: "run_at",
            label: "Time of day (HH:MM)",
            value: Value::Text {
                max_chars: 5,
                required: false,
                get: |r| &r.run_at,
                set: |r, v| r.run_at = v,
            },
        },
        Field {
            column: "track",
            form: "track",
            label: "Track",
            value: Value::Text {
                max_chars: 120,
                required: false,
                get: |r| &r.track,
                set: |r, v| r.track = v,
            },
        },
        Field {
            column: "launch_rpm",
            form: "launch_rpm",
            label: "Launch speed",
            value: Value::Number {
                limit: limits::ENGINE_SPEED,
                required: false,
                get: |r| r.launch_rpm.map(EngineSpeed::rpm),
                set: |r, v| r.launch_rpm = v.map(EngineSpeed::from_rpm),
            },
        },
        Field {
            column: "sixty_ft_s",
            form: "sixty_ft",
            label: "60-ft",
            value: Value::Number {
                limit: limits::SIXTY_FT,
                required: false,
                get: |r| r.sixty_ft_s.map(Seconds::s),
                set: |r, v| r.sixty_ft_s = v.map(Seconds::from_s),
            },
        },
        Field {
            column: "et_s",
            form: "et",
            label: "ET",
            value: Value::Number {
                limit: limits::ET,
                required: false,
                get: |r| r.et_s.map(Seconds::s),
                set: |r, v| r.et_s = v.map(Seconds::from_s),
            },
        },
        Field {
            column: "observed_lockup_rpm",
            form: "observed_lockup_rpm",
            label: "Lockup seen in the data log",
            value: Value::Number {
                limit: limits::ENGINE_SPEED,
                required: false,
                get: |r| r.observed_lockup_rpm.map(EngineSpeed::rpm),
                set: |r, v| r.observed_lockup_rpm = v.map(EngineSpeed::from_rpm),
            },
        },
        Field {
            column: "lockup_time_s",
            form: "lockup_time",
            label: "Lock time after launch",
            value: Value::Number {
                limit: limits::LOCKUP_TIME,
                required: false,
                get: |r| r.lockup_time_s.map(Seconds::s),
                set: |r, v| r.lockup_time_s = v.map(Seconds::from_s),
            },
        },
        Field {
            column: "ambient_c",
            form: "ambient",
            label: "Air temperature",
            value: Value::Number {
                limit: limits::AMBIENT_TEMPERATURE,
                required: false,
                get: |r| r.ambient_c.map(Temperature::c),
                set: |r, v| r.ambient_c = v.map(Temperature::from_c),
            },
        },
        Field {
            column: "notes",
            form: "notes",
            label: "Notes",
            value: Value::Text {
                max_chars: 2000,
                required: false,
                get: |r| &r.notes,
                set: |r, v| r.notes = v,
            },
        },
    ];

    fn check_more(&mut self, _: &Ctx, errors: &mut FieldErrors) {
        if !self.run_at.is_empty() && clutch::heat::time_of_day_s(&self.run_at).is_none() {
            Self::fault(
                errors,
                "run_at",
                "write the time of day as HH:MM, 00:00 to 23:59",
            );
        }
        if let (Some(sixty), Some(et)) = (self.sixty_ft_s, self.et_s)
            && et <= sixty
        {
            Self::fault(errors, "et_s", "the ET must be longer than the 60-ft time");
        }
    }
}
