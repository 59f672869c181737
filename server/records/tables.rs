//! The records by the table that stores them: the one list of record tables, and what is
//! worked out across all of them (a stored column in words). Only this
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
    use crate::records::field::Value;

    /// A number declared `required` keeps a blank as NaN, which its check refuses; an optional
    /// one keeps it as nothing or its declared default. So `required` agrees with how the
    /// record holds the value (a required counterweight held as grams would read a blank as 0 g
    /// and let it through).
    #[test]
    fn a_required_number_keeps_a_blank_as_a_refusal() {
        struct Blanks;
        impl RecordVisitor for Blanks {
            type Out = Vec<(&'static str, bool, Option<f64>)>;
            fn visit<R: Record>(self) -> Self::Out {
                R::FIELDS
                    .iter()
                    .filter_map(|f| match &f.value {
                        Value::Number {
                            required, get, set, ..
                        } => {
                            let mut r = R::default();
                            set(&mut r, None);
                            Some((f.column, *required, get(&r)))
                        }
                        _ => None,
                    })
                    .collect()
            }
        }
        for table in RECORD_TABLES {
            for (column, required, blank) in for_table(table, Blanks).expect("a record table") {
                if required {
                    assert!(
                        blank.is_some_and(f64::is_nan),
                        "{table}.{column}: {blank:?}"
                    );
                } else {
                    assert!(
                        blank.is_none_or(f64::is_finite),
                        "{table}.{column}: {blank:?}"
                    );
                }
            }
        }
    }
}
