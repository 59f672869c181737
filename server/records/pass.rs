//! A track pass: what really happened with a setup.

use super::measure::{EngineSpeed, Seconds, Temperature};
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, field};
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
        field!(date run_on, "run_on", "Date"),
        field!(text run_at, "run_at", "Time of day (HH:MM)", 5),
        field!(text track, "track", "Track", 120),
        field!(number launch_rpm, "launch_rpm", "Launch speed", limits::ENGINE_SPEED),
        field!(number sixty_ft_s, "sixty_ft", "60-ft", limits::SIXTY_FT),
        field!(number et_s, "et", "ET", limits::ET),
        field!(
            number observed_lockup_rpm, "observed_lockup_rpm", "Lockup seen in the data log",
            limits::ENGINE_SPEED
        ),
        field!(number lockup_time_s, "lockup_time", "Lock time after launch", limits::LOCKUP_TIME),
        field!(number ambient_c, "ambient", "Air temperature", limits::AMBIENT_TEMPERATURE),
        field!(text notes, "notes", "Notes", 2000),
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
