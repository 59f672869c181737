//! A bench test of a build's spring set: each spring's force at a test compression.

use super::measure::{Force, Length};
use serde::Deserialize;

use super::field::{self, Ctx, Field, Record, Value, field, parse_number};
use super::{Checked, FieldErrors, FormData};
use clutch::quantity::{Bound, Kind, Limit, limits};
use clutch::units::Units;

#[derive(Debug, Clone, Default, Deserialize, serde::Serialize, utoipa::ToSchema)]
#[serde(default)]
pub struct BenchInput {
    pub tested_on: String,
    pub note: String,
    pub springs: Vec<SpringReading>,
}

#[derive(Debug, Clone, Default, Deserialize, serde::Serialize, utoipa::ToSchema)]
pub struct SpringReading {
    /// The spring's place in the set (1-based); the list order when not given.
    #[serde(skip)]
    pub position: Option<i64>,
    #[serde(default)]
    pub free_length_mm: Option<Length>,
    pub compression_mm: Length,
    pub force_n: Force,
}

/// Where a spring reading's problem is shown: its JSON path, and the form input beside which
/// the page shows it.
struct Place {
    path: String,
    input: String,
}

impl BenchInput {
    /// Reads the bench form: per spring row a free length and a force, plus one test height
    /// (compression = free length - height) or one test compression shared by all springs.
    /// Rows left empty are springs not tested this time.
    pub fn from_form(form: &FormData, units: Units, spring_count: usize) -> (Self, FieldErrors) {
        let mut errors = FieldErrors::default();
        let length = |name: &str, errors: &mut FieldErrors| -> Option<f64> {
            let raw = form.get(name);
            if raw.is_empty() {
                return None;
            }
            match parse_number(raw) {
                Some(v) => Some(Kind::Length.from_shown(units, v)),
                None => {
                    errors.add(name, "enter a number");
                    Some(f64::NAN)
                }
            }
        };
        let height = length("test_height", &mut errors);
        let compression = length("test_compression", &mut errors);
        match (height, compression) {
            (None, None) => errors.add(
                "test_height",
                "give the test height, or the test compression",
            ),
            (Some(_), Some(_)) => errors.add(
                "test_compression",
                "give the test height or the test compression, not both",
            ),
            _ => {}
        }
        let mut springs = Vec::with_capacity(spring_count);
        for i in 1..=spring_count {
            let (free_name, force_name) = (format!("free_length_{i}"), format!("force_{i}"));
            if form.get(&free_name).is_empty() && form.get(&force_name).is_empty() {
                continue;
            }
            let free = length(&free_name, &mut errors);
            let force = match parse_number(form.get(&force_name)) {
                Some(v) => Kind::Force.from_shown(units, v),
                None => {
                    let m = if form.get(&force_name).is_empty() {
                        "required"
                    } else {
                        "enter a number"
                    };
                    errors.add(&force_name, m);
                    f64::NAN
                }
            };
            let compression = match (compression, height, free) {
                (Some(c), _, _) => c,
                (None, Some(h), Some(free)) => free - h,
                (None, Some(_), None) => {
                    errors.add(
                        &free_name,
                        "needed to work out the compression from the test height",
                    );
                    f64::NAN
                }
                (None, None, _) => f64::NAN,
            };
            springs.push(SpringReading {
                position: Some(i as i64),
                free_length_mm: free.map(Length::from_mm),
                compression_mm: Length::from_mm(compression),
                force_n: Force::from_n(force),
            });
        }
        if springs.is_empty() {
            errors.add("force_1", "enter at least one spring");
        }
        let input = Self {
            tested_on: form.get("tested_on").to_string(),
            note: form.get("note").to_string(),
            springs,
        };
        (input, errors)
    }

    /// Where the reading at `index` is shown: the JSON path of `field`, and the form input
    /// (`force_3`, `free_length_3`; a compression comes from the shared test height).
    fn place(&self, index: usize, field: &str, by_height: bool) -> Place {
        let row = self.springs[index].position.unwrap_or(index as i64 + 1);
        let input = match field {
            "force_n" => format!("force_{row}"),
            "free_length_mm" => format!("free_length_{row}"),
            _ if by_height => "test_height".into(),
            _ => "test_compression".into(),
        };
        Place {
            path: format!("springs[{index}].{field}"),
            input,
        }
    }

    /// Checks the date, the note and every reading, and each reading against the springs'
    /// solid height recorded on the build (a free length at or below it, or a test height
    /// below it, is a misread: a coil-bound spring gives no rate); messages land beside the
    /// form inputs (and under the JSON paths for the API).
    pub fn check(
        self,
        solid_height_mm: Option<Length>,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        let mut errors = errors;
        if let Some(solid) = solid_height_mm.filter(|s| s.is_finite()) {
            let solid = solid.mm();
            let message = |what: &str| {
                format!(
                    "{what} the springs' solid height ({}, from the build): a coil-bound spring gives no rate",
                    Kind::Length.show(ctx.units, solid)
                )
            };
            for (i, s) in self.springs.iter().enumerate() {
                let Some(free) = s.free_length_mm.filter(|f| f.is_finite()) else {
                    continue;
                };
                let free = free.mm();
                let (field, what) = if free <= solid {
                    ("free_length_mm", "is not above")
                } else if free - s.compression_mm.mm() < solid {
                    ("compression_mm", "is below")
                } else {
                    continue;
                };
                let p = self.place(i, field, true);
                if !errors.has(&p.input) {
                    errors.add_at(&p.path, &p.input, None, message(what));
                }
            }
        }
        field::check(self, ctx, errors)
    }
}

impl Record for BenchInput {
    const WHOLE_ROW: bool = false;
    const FIELDS: &'static [Field<Self>] = &[
        field!(date tested_on, "tested_on", "Date"),
        field!(text note, "note", "Note", 2000),
    ];

    fn check_more(&mut self, ctx: &Ctx, errors: &mut FieldErrors) {
        let units = ctx.units;
        if self.springs.is_empty() && !errors.has("springs") && !errors.has("force_1") {
            errors.add_at("springs", "force_1", None, "enter at least one spring");
        }
        if self.springs.len() > limits::ADJUSTER_COUNT {
            errors.add(
                "springs",
                format!("at most {} springs", limits::ADJUSTER_COUNT),
            );
        }
        // No compression at all is already said once, on the test height the form asks for;
        // the blank test compression beside it is not marked as well.
        let no_compression = errors.has("test_height");
        for (i, s) in self.springs.iter().enumerate() {
            let unsaid = !(s.compression_mm.mm().is_nan() && no_compression);
            let by_height = s.free_length_mm.is_some();
            let mut fault = |column: &str, message: String| {
                let p = self.place(i, column, by_height);
                if !errors.has(&p.input) {
                    errors.add_at(&p.path, &p.input, None, message);
                }
            };
            if let Some(free) = s.free_length_mm.map(Length::mm)
                && !limits::SPRING_FREE_LENGTH.admits(free)
            {
                fault("free_length_mm", limits::SPRING_FREE_LENGTH.message(units));
            }
            if unsaid && !limits::SPRING_COMPRESSION.admits(s.compression_mm.mm()) {
                let message = match s.free_length_mm.map(Length::mm) {
                    Some(free) if free.is_finite() && s.compression_mm.mm() <= 0.0 => format!(
                        "must be below the free length of spring {} ({})",
                        s.position.unwrap_or(i as i64 + 1),
                        Kind::Length.show(units, free)
                    ),
                    _ => limits::SPRING_COMPRESSION.message(units),
                };
                fault("compression_mm", message);
            }
            if !limits::SPRING_FORCE.admits(s.force_n.n()) {
                fault("force_n", limits::SPRING_FORCE.message(units));
            }
        }
    }
}

/// One spring's reading as stored (`bench_springs`); its fields are read through the bench
/// form above, so the form names here are only its inputs' stems.
impl Record for SpringReading {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "position",
            form: "position",
            label: "Spring",
            hint: "",
            unit: "",
            value: Value::Whole {
                limit: Limit::new(
                    Kind::Count,
                    Bound::Incl(1.0),
                    Bound::Incl(limits::ADJUSTER_COUNT as f64),
                ),
                default: None,
                get: |r| r.position.unwrap_or(0),
                set: |r, v| r.position = Some(v),
            },
        },
        field!(number free_length_mm, "free_length", "Free length", limits::SPRING_FREE_LENGTH),
        field!(
            number compression_mm, "compression", "Compression", limits::SPRING_COMPRESSION,
            required
        ),
        field!(number force_n, "force", "Force", limits::SPRING_FORCE, required),
    ];
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form(pairs: &[(&str, &str)]) -> FormData {
        FormData::new(
            pairs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect(),
        )
    }

    fn ctx() -> Ctx {
        Ctx {
            units: Units::Metric,
            today: crate::records::date::Date::parse("2026-12-04").unwrap(),
        }
    }

    fn checked_errors(pairs: &[(&str, &str)]) -> FieldErrors {
        let (input, errors) = BenchInput::from_form(&form(pairs), Units::Metric, 6);
        input.check(None, &ctx(), errors).err().unwrap_or_default()
    }

    // The form's optional inputs (the other of test height / compression, untested springs'
    // rows, the note) are never marked when left blank.
    #[test]
    fn a_blank_optional_input_is_not_marked() {
        let by_height = checked_errors(&[
            ("tested_on", "2026-11-02"),
            ("test_height", "40.6"),
            ("free_length_1", "53.3"),
            ("force_1", "845"),
        ]);
        assert!(by_height.is_empty(), "{}", by_height.summary());
        let neither = checked_errors(&[("tested_on", "2026-11-02"), ("force_1", "845")]);
        assert!(neither.has("test_height"), "{}", neither.summary());
        assert!(!neither.has("test_compression"), "{}", neither.summary());
        assert_eq!(neither.len(), 1, "{}", neither.summary());
    }
}
