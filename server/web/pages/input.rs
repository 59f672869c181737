//! A record's form inputs as its field declarations describe them: the input's name, its label
//! and hint, its unit in the shop's units and the keyboard a tablet opens. A template asks a
//! record's [`Inputs`] for an input by its form name and renders it with `m::input`, so no
//! template retypes a record field's label or unit, and an input name means one field of one
//! record (a customer's `notes` and a car's `notes` are looked up in their own records).

use crate::records::field::{Field, Record, Value};
use clutch::quantity::Kind;
use clutch::units::Units;

/// One form input, ready to render.
#[derive(Debug, Clone)]
pub struct Input {
    pub name: String,
    pub label: &'static str,
    /// Words after the label, shown smaller; empty for none.
    pub hint: String,
    /// The unit the value is typed in; empty for none.
    pub unit: &'static str,
    /// The `inputmode` (a tablet's keyboard); empty for the ordinary one.
    pub mode: &'static str,
    /// Long text and lists take the form's whole width.
    pub wide: bool,
}

/// The keyboard for a number of `kind`: digits alone for a count, with a decimal point for a
/// measured value.
pub fn keyboard(kind: Kind) -> &'static str {
    match kind {
        Kind::Count => "numeric",
        _ => "decimal",
    }
}

impl Input {
    /// The input of a declared field, in `units`.
    pub fn of<R: Record>(f: &Field<R>, units: Units) -> Self {
        let (unit, mode, wide) = match &f.value {
            Value::Number { limit, .. } | Value::Whole { limit, .. } => {
                (limit.kind.symbol(units), keyboard(limit.kind), false)
            }
            // Items are separated by commas, which the number keyboards lack.
            Value::List { limit, .. } => (limit.kind.symbol(units), "", true),
            Value::Text { max_chars, .. } => ("", "", *max_chars > 40),
            Value::Curve { .. } => ("", "", true),
            Value::Date { .. } | Value::Choice { .. } | Value::Flag { .. } => ("", "", false),
        };
        Self {
            name: f.form.to_string(),
            label: f.label,
            hint: f.hint.to_string(),
            unit: if f.unit.is_empty() { unit } else { f.unit },
            mode,
            wide,
        }
    }

    /// An input that is no record's field: a number typed in `unit`, or plain text when the
    /// unit is empty.
    pub fn plain(name: &str, label: &'static str, unit: &'static str) -> Self {
        Self {
            name: name.to_string(),
            label,
            hint: String::new(),
            unit,
            mode: if unit.is_empty() { "" } else { "decimal" },
            wide: false,
        }
    }

    /// The same input with other words after its label (a form that asks for the field in a
    /// particular case: "after the pull").
    pub fn with_hint(&self, hint: impl Into<String>) -> Self {
        Self {
            hint: hint.into(),
            ..self.clone()
        }
    }

    /// The input of row `i` of a table of such values (`free_length_3`).
    pub fn row(&self, i: impl std::fmt::Display) -> Self {
        Self {
            name: format!("{}_{i}", self.name),
            ..self.clone()
        }
    }
}

/// The inputs of one record's form, in the shop's units.
#[derive(Clone, Copy)]
pub struct Inputs {
    units: Units,
    find: fn(&str, Units) -> Option<Input>,
}

impl Inputs {
    pub fn of<R: Record>(units: Units) -> Self {
        Self {
            units,
            find: |name, units| {
                R::FIELDS
                    .iter()
                    .find(|f| f.form == name)
                    .map(|f| Input::of(f, units))
            },
        }
    }

    /// The input named `name`. A name the record does not declare is a template's mistake:
    /// tests (which render every form) stop on it; a release shows the input without a label.
    pub fn get(&self, name: &str) -> Input {
        (self.find)(name, self.units).unwrap_or_else(|| {
            debug_assert!(false, "no record field has the form input {name}");
            Input {
                name: name.to_string(),
                label: "",
                hint: String::new(),
                unit: "",
                mode: "",
                wide: false,
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::records::build::BuildInput;
    use crate::records::car::CarInput;
    use crate::records::customer::CustomerInput;
    use crate::records::height::HeightInput;

    #[test]
    fn an_input_takes_its_words_unit_and_keyboard_from_its_declaration() {
        let build = Inputs::of::<BuildInput>(Units::Imperial);
        let od = build.get("facing_od");
        assert_eq!(
            (od.label, od.unit, od.mode, od.wide),
            ("Facing outer diameter", "in", "decimal", false)
        );
        assert_eq!(
            Inputs::of::<BuildInput>(Units::Metric)
                .get("facing_od")
                .unit,
            "mm"
        );
        let shims = build.get("shim_stack");
        assert_eq!((shims.unit, shims.mode, shims.wide), ("in", "", true));
        assert_eq!(build.get("lever_arm_ratio").unit, ":1");
        let passes = Inputs::of::<HeightInput>(Units::Imperial).get("passes");
        assert_eq!((passes.mode, passes.unit), ("numeric", ""));
        assert_eq!(
            Inputs::of::<HeightInput>(Units::Imperial)
                .get("height")
                .row(3)
                .name,
            "height_3"
        );
    }

    #[test]
    fn one_input_name_in_two_records_is_two_inputs() {
        let customer = Inputs::of::<CustomerInput>(Units::Metric).get("notes");
        let car = Inputs::of::<CarInput>(Units::Metric).get("notes");
        assert_eq!(
            (customer.name.as_str(), car.name.as_str()),
            ("notes", "notes")
        );
        // The car's launch speed is its typical one; the pass's is the one on that pass.
        let car_launch = Inputs::of::<CarInput>(Units::Metric).get("launch_rpm");
        assert_eq!(
            (car_launch.label, car_launch.hint.as_str()),
            ("Launch speed", "typical")
        );
    }
}
