//! The records by the table that stores them: the one list of record tables, and what is
//! worked out across all of them (a form input's keyboard, a stored column in words). Only this
//! file knows every record; each record knows only `field`.

use serde_json::Value as Json;

use super::field::{Record, show_stored};
use super::{bench, build, car, customer, height, pass, settings, setup};
use clutch::units::Units;

/// Something done with the record type a table stores, whichever it is (see [`for_table`]).
pub trait RecordVisitor {
    type Out;
    fn visit<R: Record>(self) -> Self::Out;
}

/// Runs `v` with the record type stored in `table`; `None` for a table that holds no record
/// (ids, links, sheets, staff). The one list of record tables.
pub fn for_table<V: RecordVisitor>(table: &str, v: V) -> Option<V::Out> {
    Some(match table {
        "customers" => v.visit::<customer::CustomerInput>(),
        "cars" => v.visit::<car::CarInput>(),
        "builds" => v.visit::<build::BuildInput>(),
        "setup_changes" => v.visit::<setup::SetupInput>(),
        "bench_tests" => v.visit::<bench::BenchInput>(),
        "bench_springs" => v.visit::<bench::SpringReading>(),
        "cover_heights" => v.visit::<height::HeightInput>(),
        "passes" => v.visit::<pass::PassInput>(),
        "shop_settings" => v.visit::<settings::SettingsInput>(),
        _ => return None,
    })
}

/// A stored column of an audited table in words: its place in the record's declaration, its
/// label and its value in `units`, as the pages show it; `None` for a column no record declares
/// (ids, stamps, links).
pub fn stored_view(
    table: &str,
    column: &str,
    value: &Json,
    units: Units,
) -> Option<(usize, &'static str, String)> {
    struct View<'a> {
        column: &'a str,
        value: &'a Json,
        units: Units,
    }
    impl RecordVisitor for View<'_> {
        type Out = Option<(usize, &'static str, String)>;
        fn visit<R: Record>(self) -> Self::Out {
            let i = R::FIELDS.iter().position(|f| f.column == self.column)?;
            let f = &R::FIELDS[i];
            Some((i, f.label, show_stored(f, self.value, self.units)))
        }
    }
    for_table(
        table,
        View {
            column,
            value,
            units,
        },
    )
    .flatten()
}

/// The keyboard for the form input `form_name` of any record (see [`Value::input_mode`]);
/// None for inputs no record declares and for text, dates and lists.
pub fn input_mode(form_name: &str) -> Option<&'static str> {
    struct Find<'a>(&'a str);
    impl RecordVisitor for Find<'_> {
        type Out = Option<&'static str>;
        fn visit<R: Record>(self) -> Self::Out {
            R::FIELDS
                .iter()
                .find(|f| f.form == self.0)
                .and_then(|f| f.value.input_mode())
        }
    }
    RECORD_TABLES
        .iter()
        .find_map(|t| for_table(t, Find(form_name)).flatten())
}

/// Every table [`for_table`] knows.
pub const RECORD_TABLES: &[&str] = &[
    "customers",
    "cars",
    "builds",
    "setup_changes",
    "bench_tests",
    "bench_springs",
    "cover_heights",
    "passes",
    "shop_settings",
];

#[cfg(test)]
mod tests {
    use super::*;

    /// Every form input name declared by more than one record asks for the same keyboard, so
    /// looking the keyboard up by the input's name alone is never ambiguous.
    #[test]
    fn an_input_name_has_one_keyboard_whichever_record_declares_it() {
        struct Modes;
        impl RecordVisitor for Modes {
            type Out = Vec<(&'static str, Option<&'static str>)>;
            fn visit<R: Record>(self) -> Self::Out {
                R::FIELDS
                    .iter()
                    .map(|f| (f.form, f.value.input_mode()))
                    .collect()
            }
        }
        let mut seen = std::collections::BTreeMap::new();
        for table in RECORD_TABLES {
            for (name, mode) in for_table(table, Modes).expect("a record table") {
                let first = *seen.entry(name).or_insert(mode);
                assert_eq!(first, mode, "{name} in {table}");
                assert_eq!(input_mode(name), mode, "{name}");
            }
        }
        assert_eq!(input_mode("passes"), Some("numeric"));
        assert_eq!(input_mode("facing_od"), Some("decimal"));
        assert_eq!(input_mode("measured_on"), None);
    }
}
