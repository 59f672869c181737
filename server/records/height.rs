//! A cover-height measurement: how far the disc has worn, read through the checking hole.

use super::measure::Length;
use serde::{Deserialize, Serialize};

use super::field::{self, Ctx, Field, Record, field};
use super::{Checked, FieldErrors};
use clutch::quantity::{Bound, Kind, Limit, counted, limits};
use clutch::units::Units;

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema)]
#[serde(default)]
pub struct HeightInput {
    pub measured_on: String,
    pub height_mm: Length,
    /// Cumulative passes on this disc when measured.
    pub passes: i64,
    /// How many shims of the stack had been pulled by then.
    pub shims_pulled: i64,
    /// This measurement is the baseline of a newly fitted disc (full shim stack back in).
    pub new_disc: bool,
    pub note: String,
    /// The technician had a second look and stands by an unusual reading (off the trend of the
    /// last readings, or dated before the last one with more passes). Not stored, so never
    /// in an answer.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    #[schema(write_only)]
    #[sqlx(skip)]
    pub confirm: bool,
}

impl Default for HeightInput {
    fn default() -> Self {
        Self {
            measured_on: String::new(),
            height_mm: Length::from_mm(f64::NAN),
            passes: -1,
            shims_pulled: 0,
            new_disc: false,
            note: String::new(),
            confirm: false,
        }
    }
}

/// What the build already knows that a new measurement must agree with.
#[derive(Debug, Clone, Default)]
pub struct HeightContext {
    /// The build's shim stack (mm), in the order the shims are pulled.
    pub shims_mm: Vec<Length>,
    /// The measurements recorded just before this one on its disc, oldest first: at most the
    /// latest three, from the disc's new-disc baseline on.
    pub before: Vec<HeightInput>,
    /// The measurement recorded just after it on the same disc (when an older one is corrected).
    pub next: Option<HeightInput>,
}

/// How far (mm) a cover height may sit from the trend of the last three readings before it
/// asks for a second look: 0.5 mm (0.020 in), common shop practice, no published source.
pub const TREND_ALLOWANCE_MM: f64 = 0.5;

impl AsRef<HeightInput> for HeightInput {
    fn as_ref(&self) -> &HeightInput {
        self
    }
}

impl Record for HeightInput {
    const FIELDS: &'static [Field<Self>] = &[
        field!(date measured_on, "measured_on", "Date"),
        field!(number height_mm, "height", "Cover height", limits::COVER_HEIGHT, required),
        field!(whole passes, "passes", "Passes on this disc", limits::PASSES),
        field!(
            whole shims_pulled, "shims_pulled", "Shims pulled",
            Limit::new(Kind::Count, Bound::Incl(0.0), Bound::Incl(limits::SHIM_COUNT as f64)),
            default 0
        )
        .hint("so far"),
        field!(flag new_disc, "new_disc", "New disc fitted"),
        field!(text note, "note", "Note", 2000),
    ];
}

impl HeightInput {
    /// Checks the measurement's own fields, then that it agrees with what the build already
    /// records (shims in the stack, the measurements before and after it), then, unless
    /// `confirm` is set, that it is plausible ([`HeightInput::doubt`]): an unusual reading is
    /// refused on its field with an extra message on `confirm`, the second look a form offers.
    pub fn check_on(
        self,
        hc: &HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        let mut errors = errors;
        self.context_faults(hc, &mut errors);
        let checked = field::check(self, ctx, errors)?;
        match checked.doubt(hc, ctx.units).filter(|_| !checked.confirm) {
            None => Ok(checked),
            Some((column, message)) => {
                let mut errors = FieldErrors::default();
                Self::fault(&mut errors, column, message);
                errors.add("confirm", "The reading is right: store it as measured");
                Err(errors)
            }
        }
    }

    /// Why a measurement that breaks no rule still deserves a second look: (column, message in
    /// the shop's units). A cover height more than [`TREND_ALLOWANCE_MM`] off the trend of the
    /// last three readings on the disc ([`clutch::wear::expected_height`]), or a date before
    /// the last reading's with more passes than it.
    pub fn doubt(&self, hc: &HeightContext, units: Units) -> Option<(&'static str, String)> {
        let last = hc.before.last().filter(|_| !self.new_disc)?;
        if self.measured_on < last.measured_on && self.passes > last.passes {
            return Some((
                "measured_on",
                format!(
                    "is before the last reading ({}, at {}) with more passes ({}): check the date",
                    last.measured_on,
                    counted(last.passes as f64, "pass", "passes"),
                    self.passes
                ),
            ));
        }
        let readings: Vec<(f64, f64, u32)> = hc
            .before
            .iter()
            .map(|h| {
                (
                    h.passes as f64,
                    h.height_mm.mm(),
                    h.shims_pulled.max(0) as u32,
                )
            })
            .collect();
        let expected = clutch::wear::expected_height(
            &hc.shims_mm.iter().map(|s| s.mm()).collect::<Vec<_>>(),
            &readings[readings.len().saturating_sub(3)..],
            self.passes as f64,
            self.shims_pulled.max(0) as u32,
        )?;
        let off = self.height_mm.mm() - expected;
        (off.abs() > TREND_ALLOWANCE_MM + clutch::wear::AT_LIMIT_TOLERANCE_MM).then(|| {
            let len = |mm| Kind::Length.show(units, mm);
            (
                "height_mm",
                format!(
                    "is {} {} the trend of the last {} readings, which expects about {} at {}: measure again",
                    len(off.abs()),
                    if off > 0.0 { "above" } else { "below" },
                    readings.len().min(3),
                    len(expected),
                    counted(self.passes as f64, "pass", "passes")
                ),
            )
        })
    }

    /// The rules against the build's other records (they come first: "between 0 and 3, the
    /// shims in this build's stack" says more than the general limit).
    fn context_faults(&self, hc: &HeightContext, errors: &mut FieldErrors) {
        let errors = &mut *errors;
        let this = self;
        let stack = hc.shims_mm.len() as i64;
        if this.shims_pulled > stack {
            Self::fault(
                errors,
                "shims_pulled",
                format!("must be between 0 and {stack} (the shims in this build's stack)"),
            );
        }
        if this.new_disc && this.shims_pulled != 0 {
            Self::fault(
                errors,
                "shims_pulled",
                "a new disc starts with the full shim stack (0 pulled)",
            );
        }
        if let Some(&HeightInput {
            passes,
            shims_pulled: pulled,
            ..
        }) = hc.next.as_ref()
        {
            if this.passes > passes {
                Self::fault(
                    errors,
                    "passes",
                    format!(
                        "the next measurement is at {}",
                        counted(passes as f64, "pass", "passes")
                    ),
                );
            }
            if this.shims_pulled > pulled {
                Self::fault(
                    errors,
                    "shims_pulled",
                    format!(
                        "the next measurement has {} pulled",
                        counted(pulled as f64, "shim", "shims")
                    ),
                );
            }
        }
        if let Some(&HeightInput {
            passes,
            shims_pulled: pulled,
            ..
        }) = hc.before.last().filter(|_| !this.new_disc)
        {
            if this.passes < passes {
                Self::fault(
                    errors,
                    "passes",
                    format!(
                        "passes cannot go backwards: the last measurement was at {}",
                        counted(passes as f64, "pass", "passes")
                    ),
                );
            }
            if this.shims_pulled < pulled {
                Self::fault(
                    errors,
                    "shims_pulled",
                    format!(
                        "{} already pulled; a pulled shim does not go back",
                        if pulled == 1 {
                            "1 shim was".to_string()
                        } else {
                            format!("{pulled} shims were")
                        }
                    ),
                );
            }
        }
    }
}
