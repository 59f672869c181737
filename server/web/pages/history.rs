//! A build's History view: the audit rows of the build and its records, read back in words.

use askama::Template;
use axum::extract::State;
use axum::response::Html;
use serde_json::{Map, Value};

use crate::db;
use crate::db::audit::Entry;
use crate::error::{AppError, AppResult};
use crate::records::date::ShopZone;
use crate::records::tables;
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId};
use crate::web::pages::layout::Layout;
use crate::web::pages::passes::role_label;
use crate::web::pages::show::Show;
use clutch::datalog::request::{LogSettings, TimeUnit};
use clutch::quantity::Kind;
use clutch::units::Units;

/// One line of history in words.
pub struct Line {
    pub at: String,
    pub who: String,
    pub what: String,
    pub details: Vec<String>,
}

#[derive(Template)]
#[template(path = "builds/history.html")]
pub struct HistoryPage {
    pub page: Layout,
    pub build_id: i64,
    pub title: String,
    pub lines: Vec<Line>,
}

pub async fn history(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let build = db::builds::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let owner = db::builds::owner(&mut conn, id).await?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "History").await?;
    let entries = db::audit::for_build(&mut conn, id).await?;
    let lines = entries
        .iter()
        .map(|e| describe(&page.u, &page.zone, e))
        .collect();
    let title = format!(
        "{} · {} · {}",
        owner.customer_name,
        owner.car_description,
        crate::web::pages::builds::show::build_title(&build)
    );
    Ok(Html(
        HistoryPage {
            page,
            build_id: id,
            title,
            lines,
        }
        .render()?,
    ))
}

fn noun(table: &str) -> &'static str {
    match table {
        "builds" => "the build's hardware",
        "setup_changes" => "a setup change",
        "bench_tests" => "a spring bench test",
        "bench_springs" => "a spring reading",
        "cover_heights" => "a cover-height measurement",
        "passes" => "a track pass",
        "pass_logs" => "a pass's data log",
        "sheets" => "a setup sheet",
        "sheet_links" => "a customer link",
        "customers" => "the customer",
        "cars" => "the car",
        _ => "a record",
    }
}

/// Puts one audit row into words: who did what, and each value before and after, with the
/// labels, units and rounding the rest of the pages use, at the shop's local time.
pub fn describe(u: &Show, zone: &ShopZone, e: &Entry) -> Line {
    let parse = |s: &Option<String>| -> Map<String, Value> {
        s.as_deref()
            .and_then(|t| serde_json::from_str::<Value>(t).ok())
            .and_then(|v| v.as_object().cloned())
            .unwrap_or_default()
    };
    let (before, after) = (parse(&e.before), parse(&e.after));
    let verb = match e.action.as_str() {
        "create" => "recorded",
        "update" => "changed",
        _ => "deleted",
    };
    let mut details = Vec::new();
    // In the order the record declares its fields; other columns after them.
    let mut keys: Vec<&String> = after
        .keys()
        .chain(before.keys().filter(|k| !after.contains_key(*k)))
        .collect();
    keys.sort_by_key(|k| {
        tables::stored_view(&e.table_name, k, &Value::Null, u.units)
            .map(|v| v.0)
            .or_else(|| LOG_COLUMNS.iter().position(|c| c == k))
            .unwrap_or(usize::MAX)
    });
    for key in keys {
        if LINK_COLUMNS.contains(&key.as_str()) {
            continue;
        }
        let show = |v: Option<&Value>| shown(u.units, &e.table_name, key, v);
        let (old, new) = (before.get(key), after.get(key));
        match e.action.as_str() {
            "update" if old == new => {}
            "update" => {
                let (label, old) = show(old);
                details.push(format!("{label}: {old} → {}", show(new).1));
            }
            "create" => {
                let (label, value) = show(new);
                let flag_off = value == "no" && new.is_some_and(|v| v == 0 || v == false);
                let empty = new.is_none_or(|v| v.is_null() || v == "" || v == "[]");
                if !empty && !flag_off {
                    details.push(format!("{label}: {value}"));
                }
            }
            _ => {
                let (label, value) = show(old);
                details.push(format!("{label}: {value}"));
            }
        }
    }
    let what =
        if e.table_name == "customers" && after.get("deleted_at").is_some_and(|v| !v.is_null()) {
            "deleted the customer (restorable by an admin)".to_string()
        } else {
            format!("{verb} {} (#{})", noun(&e.table_name), e.record_id)
        };
    Line {
        at: zone.local_stamp(&e.at),
        who: e.username.clone(),
        what,
        details,
    }
}

/// Columns that only link rows together; the line names its record already.
const LINK_COLUMNS: [&str; 8] = [
    "id",
    "pass_id",
    "build_id",
    "car_id",
    "customer_id",
    "bench_test_id",
    "sheet_id",
    "user_id",
];

/// Yes/no columns of tables that are not records (staff accounts), stored as 0 or 1.
const ACCOUNT_FLAGS: [&str; 2] = ["disabled", "password_changed"];

/// A stored value with its label: a declared record field as the pages show it, anything else
/// (ids, stamps, staff flags) in plain words.
fn shown(units: Units, table: &str, column: &str, v: Option<&Value>) -> (String, String) {
    let Some(v) = v else {
        return (column.replace('_', " "), "–".into());
    };
    if let Some((_, label, text)) = tables::stored_view(table, column, v, units) {
        return (label.to_string(), text);
    }
    if let Some(words) = log_value(units, column, v) {
        return words;
    }
    let text = match v {
        Value::Null => "–".into(),
        Value::Number(n) if ACCOUNT_FLAGS.contains(&column) => {
            if n.as_i64() == Some(1) { "yes" } else { "no" }.into()
        }
        Value::Bool(b) => if *b { "yes" } else { "no" }.into(),
        Value::String(s) if s.is_empty() => "(empty)".into(),
        Value::String(s) => s.clone(),
        other => other.to_string(),
    };
    (column.replace('_', " "), text)
}

/// A data log's audited columns, in the order they are told.
const LOG_COLUMNS: [&str; 6] = [
    "file_name",
    "file_bytes",
    "settings",
    "lockup_s",
    "lockup_engine_rpm",
    "slip_energy_j",
];

/// A data log's stored values (a pass's log, a car's remembered mapping) in words and the
/// shop's units: the reading settings as the mapping form puts them, not their JSON.
fn log_value(units: Units, column: &str, v: &Value) -> Option<(String, String)> {
    let u = Show::new(units);
    let number = v.as_f64();
    let (label, text) = match column {
        "file_name" => ("file", v.as_str()?.to_string()),
        "file_bytes" => ("file size", format!("{:.0} KB", number? / 1024.0)),
        "lockup_s" => ("lockup", format!("{:.3} s", number?)),
        "lockup_engine_rpm" => ("lockup engine speed", u.rpm(number?)),
        "slip_energy_j" => ("slip energy", u.energy_j(number?)),
        "settings" => {
            let s: LogSettings = serde_json::from_str(v.as_str()?).ok()?;
            let columns: Vec<String> = s
                .columns
                .mapped()
                .into_iter()
                .map(|(key, name)| format!("{} “{name}”", role_label(key).to_lowercase()))
                .collect();
            let time = match s.time_unit {
                TimeUnit::Auto => "time unit found from the steps",
                TimeUnit::S => "time in seconds",
                TimeUnit::Ms => "time in milliseconds",
            };
            let inertia = s.engine_inertia_kgm2.map_or(String::new(), |i| {
                format!("; engine inertia {}", Kind::Inertia.show(units, i))
            });
            let text = format!(
                "{}; {time}; locked below {} % slip for {} ms{inertia}",
                columns.join(", "),
                s.slip_on_pct,
                s.hold_ms
            );
            ("reading", text)
        }
        _ => return None,
    };
    Some((label.to_string(), text))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn entry(table: &str, action: &str, before: Option<&str>, after: Option<&str>) -> Entry {
        Entry {
            id: 1,
            at: "2026-11-02T10:00:00Z".into(),
            username: "sam".into(),
            action: action.into(),
            table_name: table.into(),
            record_id: 7,
            before: before.map(str::to_string),
            after: after.map(str::to_string),
        }
    }

    fn utc() -> ShopZone {
        ShopZone::parse("UTC").unwrap()
    }

    #[test]
    fn a_changed_measurement_reads_as_before_and_after_in_the_shop_units() {
        let e = entry(
            "cover_heights",
            "update",
            Some(r#"{"id":7,"height_mm":48.387,"passes":40,"note":""}"#),
            Some(r#"{"id":7,"height_mm":48.59,"passes":40,"note":"recheck"}"#),
        );
        let line = describe(&Show::new(Units::Imperial), &utc(), &e);
        assert_eq!(line.what, "changed a cover-height measurement (#7)");
        assert_eq!(
            line.details,
            vec![
                "Cover height: 1.905 in → 1.913 in".to_string(),
                "Note: (empty) → recheck".to_string()
            ]
        );
        assert_eq!(line.at, "2026-11-02 10:00");
    }

    // 0.200 kg·m² = 4.746 lb·ft² (1 lb·ft² = 0.0421401 kg·m², NIST SP 811 B.9).
    #[test]
    fn a_data_log_reads_in_words_and_shop_units_not_json() {
        let settings = r#"{\"columns\":{\"time\":\"t\",\"engine_rpm\":\"engine\",\"input_rpm\":\"input\"},\"time_unit\":\"auto\",\"slip_on_pct\":3.0,\"hold_ms\":100.0,\"engine_inertia_kgm2\":0.2}"#;
        let after = format!(
            r#"{{"pass_id":9,"file_name":"run3.csv","file_bytes":20480,"settings":"{settings}","lockup_s":1.07000000000001,"lockup_engine_rpm":4800.000000000001,"slip_energy_j":30512.12345678901}}"#
        );
        let e = entry("pass_logs", "create", None, Some(&after));
        let line = describe(&Show::new(Units::Imperial), &utc(), &e);
        assert_eq!(line.what, "recorded a pass's data log (#7)");
        assert_eq!(
            line.details,
            vec![
                "file: run3.csv",
                "file size: 20 KB",
                "reading: time “t”, engine speed (rpm) “engine”, input shaft speed (rpm) “input”; time unit found from the steps; locked below 3 % slip for 100 ms; engine inertia 4.746 lb·ft²",
                "lockup: 1.070 s",
                "lockup engine speed: 4800 rpm",
                "slip energy: 31 kJ",
            ]
        );
    }

    #[test]
    fn history_shows_lists_times_and_speeds_as_the_pages_do() {
        // 0.254 mm = 0.010 in exactly (1 in = 25.4 mm).
        let build = entry(
            "builds",
            "create",
            None,
            Some(
                r#"{"id":7,"shim_stack_mm":"[0.254,0.254,0.508]","facing_material":"sintered_iron"}"#,
            ),
        );
        let line = describe(&Show::new(Units::Imperial), &utc(), &build);
        assert!(
            line.details
                .contains(&"Shim stack: 0.010 in, 0.010 in, 0.020 in".to_string()),
            "{:?}",
            line.details
        );
        assert!(
            line.details
                .contains(&"Facing material: Sintered iron".to_string()),
            "{:?}",
            line.details
        );
        let setup = entry(
            "setup_changes",
            "update",
            Some(r#"{"adjuster_turns_each":"[]","adjuster_turns":1.5}"#),
            Some(r#"{"adjuster_turns_each":"[1.5,1.5]","adjuster_turns":1.5}"#),
        );
        let line = describe(&Show::new(Units::Imperial), &utc(), &setup);
        assert_eq!(
            line.details,
            vec!["Turns of each adjuster: none → 1.500 turns, 1.500 turns".to_string()]
        );
        let pass = entry(
            "passes",
            "create",
            None,
            Some(r#"{"et_s":10.88,"launch_rpm":4600.0,"run_on":"2026-10-04"}"#),
        );
        let line = describe(&Show::new(Units::Metric), &utc(), &pass);
        assert_eq!(
            line.details,
            vec![
                "Date: 2026-10-04".to_string(),
                "Launch speed: 4600 rpm".to_string(),
                "ET: 10.880 s".to_string()
            ]
        );
    }

    #[test]
    fn stored_times_are_read_in_the_shop_zone() {
        let e = entry("passes", "create", None, Some("{}"));
        let chicago = ShopZone::parse("America/Chicago").unwrap();
        // IANA tz database: America/Chicago is UTC-6 on 2 November 2026 (CST).
        assert_eq!(
            describe(&Show::new(Units::Imperial), &chicago, &e).at,
            "2026-11-02 04:00"
        );
    }
}
