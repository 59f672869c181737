//! The shop's records as they must be before they are stored: each input type is read from a
//! form (in the shop's display units) or from JSON (in storage units, named with their unit), and
//! checked against physically sensible ranges. No IO here; the database layer only takes checked
//! inputs.

pub mod bench;
pub mod build;
pub mod car;
pub mod customer;
pub mod date;
pub mod height;
pub mod pass;
pub mod settings;
pub mod setup;
pub mod user;

mod form;

pub use form::{FormData, FormReader, form_key, length_decimals};

/// Messages for bad fields, in the order they were found, keyed by field name.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FieldErrors(Vec<(String, String)>);

impl FieldErrors {
    /// Records a message for a field (the first message per field wins).
    pub fn add(&mut self, field: &str, message: impl Into<String>) {
        if self.get(field).is_none() {
            self.0.push((field.to_string(), message.into()));
        }
    }

    /// The message for a field, if any. Looks the key up as given and as a form key.
    pub fn get(&self, field: &str) -> Option<&str> {
        self.0
            .iter()
            .find(|(f, _)| f == field || form_key(f) == field)
            .map(|(_, m)| m.as_str())
    }

    pub fn first(&self) -> Option<(&str, &str)> {
        self.0.first().map(|(f, m)| (f.as_str(), m.as_str()))
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    pub fn len(&self) -> usize {
        self.0.len()
    }

    /// One line naming every bad field.
    pub fn summary(&self) -> String {
        self.0
            .iter()
            .map(|(f, m)| format!("{f}: {m}"))
            .collect::<Vec<_>>()
            .join("; ")
    }

    /// The same messages under other field names (a form whose inputs are named differently
    /// from the JSON fields).
    pub fn renamed(self, rename: impl Fn(&str) -> String) -> FieldErrors {
        let mut out = FieldErrors::default();
        for (field, message) in self.0 {
            out.add(&rename(&field), message);
        }
        out
    }

    /// `Ok(value)` when nothing was recorded.
    pub fn into_result<T>(self, value: T) -> Result<T, FieldErrors> {
        if self.is_empty() {
            Ok(value)
        } else {
            Err(self)
        }
    }
}

/// A record input that passed its checks. Only the checking function makes one, so the
/// database layer can demand it.
#[derive(Debug, Clone)]
pub struct Checked<T>(T);

impl<T> std::ops::Deref for Checked<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.0
    }
}

/// Shared range checks, so every record says the same thing about the same kind of value.
pub(crate) struct Rules<'a> {
    pub errors: &'a mut FieldErrors,
}

impl Rules<'_> {
    pub fn text(&mut self, field: &str, value: &str, required: bool, max_chars: usize) {
        if required && value.trim().is_empty() {
            self.errors.add(field, "required");
        } else if value.chars().count() > max_chars {
            self.errors
                .add(field, format!("too long (at most {max_chars} characters)"));
        }
    }

    /// A finite number inside `[min, max]` (either bound may be exclusive).
    pub fn range(&mut self, field: &str, value: f64, min: Bound, max: Bound) -> bool {
        let ok = value.is_finite() && min.below(value) && max.above(value);
        if !ok {
            self.errors.add(field, range_message(min, max));
        }
        ok
    }

    pub fn opt_range(&mut self, field: &str, value: Option<f64>, min: Bound, max: Bound) {
        if let Some(v) = value {
            self.range(field, v, min, max);
        }
    }

    pub fn date(&mut self, field: &str, value: &str) {
        if let Err(message) = date::Date::parse(value) {
            self.errors.add(field, message);
        }
    }
}

/// A range bound: inclusive or exclusive.
#[derive(Debug, Clone, Copy)]
pub enum Bound {
    Incl(f64),
    Excl(f64),
}

impl Bound {
    fn below(self, v: f64) -> bool {
        match self {
            Self::Incl(b) => v >= b,
            Self::Excl(b) => v > b,
        }
    }
    fn above(self, v: f64) -> bool {
        match self {
            Self::Incl(b) => v <= b,
            Self::Excl(b) => v < b,
        }
    }
}

fn range_message(min: Bound, max: Bound) -> String {
    let show = |b: f64| {
        let s = format!("{b:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    };
    match (min, max) {
        (Bound::Excl(0.0), Bound::Incl(hi)) => format!("must be above 0 and at most {}", show(hi)),
        (Bound::Incl(lo), Bound::Incl(hi)) => {
            format!("must be between {} and {}", show(lo), show(hi))
        }
        (Bound::Excl(lo), Bound::Incl(hi)) => {
            format!("must be above {} and at most {}", show(lo), show(hi))
        }
        (Bound::Incl(lo), Bound::Excl(hi)) => {
            format!("must be at least {} and below {}", show(lo), show(hi))
        }
        (Bound::Excl(lo), Bound::Excl(hi)) => {
            format!("must be between {} and {} (exclusive)", show(lo), show(hi))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn range_checks_name_the_field_and_reject_non_finite_values() {
        let mut errors = FieldErrors::default();
        let mut rules = Rules {
            errors: &mut errors,
        };
        assert!(rules.range("a", 5.0, Bound::Incl(1.0), Bound::Incl(24.0)));
        assert!(!rules.range("b", f64::NAN, Bound::Incl(1.0), Bound::Incl(24.0)));
        assert!(!rules.range("c", 0.0, Bound::Excl(0.0), Bound::Incl(10.0)));
        assert_eq!(errors.len(), 2);
        assert_eq!(errors.get("c"), Some("must be above 0 and at most 10"));
    }
}
