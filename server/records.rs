//! The shop's records as they must be before they are stored. Each record declares its fields
//! once ([`field`]): it is read from a form (in the shop's display units) or from JSON (in storage
//! units), checked against the one table of limits, and only a [`Checked`] record reaches the
//! database. No IO here.

pub mod bench;
pub mod build;
pub mod car;
pub mod customer;
pub mod date;
pub mod height;
pub mod measure;
pub mod pass;
pub mod settings;
pub mod setup;
/// Records as stored (ids and stamps beside each record) and the aggregate of one build.
pub mod stored;
pub mod user;

pub mod field;
mod form;
/// The one list of record tables, and what is worked out across every record.
pub mod tables;

pub use field::{Ctx, Record};
pub use form::FormData;

/// Messages for bad fields, in the order they were found. Each is kept under the field's column
/// (its JSON name, for the API) and its form input's name (for the page), with the index of a
/// list item where there is one (`shim_stack_mm[1]` / `shim_stack[1]`).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FieldErrors(Vec<Problem>);

#[derive(Debug, Clone, PartialEq)]
struct Problem {
    column: String,
    form: String,
    index: Option<usize>,
    message: String,
}

impl Problem {
    fn path(&self) -> String {
        match self.index {
            Some(i) => format!("{}[{i}]", self.column),
            None => self.column.clone(),
        }
    }
}

impl FieldErrors {
    /// Records a message for a field whose form input has the same name as its column (forms
    /// that are not records: sign-in, sheet targets). The first message per field wins.
    pub fn add(&mut self, field: &str, message: impl Into<String>) {
        match list_item(field) {
            Some((base, index)) => self.add_at(base, base, Some(index), message),
            None => self.add_at(field, field, None, message),
        }
    }

    /// Records a message for a declared field (or one item of a list field).
    pub fn add_at(
        &mut self,
        column: &str,
        form: &str,
        index: Option<usize>,
        message: impl Into<String>,
    ) {
        if !self
            .0
            .iter()
            .any(|p| p.column == column && p.index == index)
        {
            self.0.push(Problem {
                column: column.to_string(),
                form: form.to_string(),
                index,
                message: message.into(),
            });
        }
    }

    /// Whether the field (or any of its items) already has a message, by column or form name.
    pub fn has(&self, name: &str) -> bool {
        self.get(name).is_some()
    }

    /// The first message for an input, by its form or column name; a list input shows the
    /// first message about any of its items.
    pub fn get(&self, name: &str) -> Option<&str> {
        self.0
            .iter()
            .find(|p| p.form == name || p.column == name || p.path() == name)
            .map(|p| p.message.as_str())
    }

    /// Every problem as (JSON path, message), in the order found.
    pub fn iter(&self) -> impl Iterator<Item = (String, &str)> {
        self.0.iter().map(|p| (p.path(), p.message.as_str()))
    }

    /// The first problem as (JSON path, message), for the API's answer.
    pub fn first(&self) -> Option<(String, &str)> {
        self.0.first().map(|p| (p.path(), p.message.as_str()))
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// How many inputs carry a message (several items of one list are one input).
    pub fn len(&self) -> usize {
        let mut inputs: Vec<&str> = self.0.iter().map(|p| p.form.as_str()).collect();
        inputs.sort_unstable();
        inputs.dedup();
        inputs.len()
    }

    /// One line naming every bad field.
    pub fn summary(&self) -> String {
        self.0
            .iter()
            .map(|p| format!("{}: {}", p.path(), p.message))
            .collect::<Vec<_>>()
            .join("; ")
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

/// `torque_curve[2]` → (`torque_curve`, 2): a path naming one item of a list. A deeper path
/// (`measurements[1].cover_height`) or a plain name is not one.
pub(crate) fn list_item(path: &str) -> Option<(&str, usize)> {
    path.strip_suffix(']')
        .and_then(|f| f.rsplit_once('['))
        .and_then(|(base, i)| Some((base, i.parse::<usize>().ok()?)))
        .filter(|(base, _)| !base.contains('['))
}

/// A record input that passed its checks. Only the checking functions make one, so the
/// database layer can demand it.
#[derive(Debug, Clone)]
pub struct Checked<T>(T);

impl<T> std::ops::Deref for Checked<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_message_on_a_list_item_is_found_by_the_list_input() {
        let mut errors = FieldErrors::default();
        errors.add_at("shim_stack_mm", "shim_stack", Some(1), "shim 2: too thick");
        errors.add_at("shim_stack_mm", "shim_stack", Some(2), "shim 3: too thick");
        errors.add("label", "too long");
        assert_eq!(errors.get("shim_stack"), Some("shim 2: too thick"));
        assert_eq!(errors.get("shim_stack_mm[2]"), Some("shim 3: too thick"));
        assert_eq!(errors.len(), 2);
        assert_eq!(
            errors.first().map(|(p, _)| p),
            Some("shim_stack_mm[1]".into())
        );
    }
}
