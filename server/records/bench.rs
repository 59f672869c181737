//! A bench test of a build's spring set: each spring's force at a test compression.

use serde::Deserialize;

use super::{Bound, Checked, FieldErrors, FormReader, Rules};

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct BenchInput {
    pub tested_on: String,
    pub note: String,
    pub springs: Vec<SpringReading>,
}

#[derive(Debug, Clone, Deserialize)]
pub struct SpringReading {
    #[serde(default)]
    pub free_length_mm: Option<f64>,
    pub compression_mm: f64,
    pub force_n: f64,
}

impl BenchInput {
    /// Reads `spring_count` rows: per spring a free length and a force, plus one test height
    /// (compression = free length - height) or one test compression shared by all springs.
    pub fn from_form(r: &mut FormReader, spring_count: usize) -> Self {
        let height = r.opt_length("test_height");
        let compression = r.opt_length("test_compression");
        match (height, compression) {
            (None, None) => r.errors.add(
                "test_height",
                "give the test height, or the test compression",
            ),
            (Some(_), Some(_)) => r.errors.add(
                "test_compression",
                "give the test height or the test compression, not both",
            ),
            _ => {}
        }
        let mut springs = Vec::with_capacity(spring_count);
        for i in 1..=spring_count {
            let free = r.opt_length(&format!("free_length_{i}"));
            let force = r.force(&format!("force_{i}"));
            let compression = match (compression, height, free) {
                (Some(c), _, _) => c,
                (None, Some(h), Some(free)) => free - h,
                (None, Some(_), None) => {
                    r.errors.add(
                        &format!("free_length_{i}"),
                        "needed to work out the compression from the test height",
                    );
                    f64::NAN
                }
                (None, None, _) => f64::NAN,
            };
            springs.push(SpringReading {
                free_length_mm: free,
                compression_mm: compression,
                force_n: force,
            });
        }
        Self {
            tested_on: r.text("tested_on"),
            note: r.text("note"),
            springs,
        }
    }

    /// The form's input name for a field of the JSON shape (`springs[2].force_n` is the form's
    /// `force_3`; a compression comes from the shared test height or compression).
    pub fn form_field(field: &str) -> String {
        let Some(rest) = field.strip_prefix("springs[") else {
            return match field {
                "springs" => "test_height".into(),
                other => other.into(),
            };
        };
        let (index, name) = rest.split_once("].").unwrap_or((rest, ""));
        let n = index.parse::<usize>().map_or(0, |i| i + 1);
        match name {
            "force_n" => format!("force_{n}"),
            "free_length_mm" => format!("free_length_{n}"),
            _ => "test_height".into(),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::{Excl, Incl};
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.date("tested_on", &self.tested_on);
        rules.text("note", &self.note, false, 2000);
        if self.springs.is_empty() || self.springs.len() > 24 {
            rules.errors.add("springs", "give 1 to 24 spring readings");
        }
        for (i, s) in self.springs.iter().enumerate() {
            rules.opt_range(
                &format!("springs[{i}].free_length_mm"),
                s.free_length_mm,
                Excl(0.0),
                Incl(200.0),
            );
            rules.range(
                &format!("springs[{i}].compression_mm"),
                s.compression_mm,
                Excl(0.0),
                Incl(100.0),
            );
            rules.range(
                &format!("springs[{i}].force_n"),
                s.force_n,
                Excl(0.0),
                Incl(50_000.0),
            );
        }
        errors.into_result(Checked(self))
    }
}
