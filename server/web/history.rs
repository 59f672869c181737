//! A build's History view: the audit rows of the build and its records, read back in words.

use askama::Template;
use axum::extract::State;
use axum::response::Html;
use serde_json::{Map, Value};

use super::AppState;
use super::extract::{CurrentUser, PathId};
use super::layout::Layout;
use super::show::Show;
use crate::db;
use crate::db::audit::Entry;
use crate::error::{AppError, AppResult};

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
    let lines = entries.iter().map(|e| describe(&page.u, e)).collect();
    let title = format!(
        "{} · {} · {}",
        owner.customer_name,
        owner.car_description,
        super::builds::build_title(&build)
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
        "sheets" => "a setup sheet",
        "sheet_links" => "a customer link",
        "customers" => "the customer",
        "cars" => "the car",
        _ => "a record",
    }
}

/// Puts one audit row into words: who did what, and each value before and after.
pub fn describe(u: &Show, e: &Entry) -> Line {
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
    let keys: Vec<&String> = after
        .keys()
        .chain(before.keys().filter(|k| !after.contains_key(*k)))
        .collect();
    for key in keys {
        if key == "id" || key.ends_with("_id") {
            continue;
        }
        let (old, new) = (before.get(key), after.get(key));
        match e.action.as_str() {
            "update" if old == new => {}
            "update" => details.push(format!(
                "{}: {} → {}",
                label(key),
                value(u, key, old),
                value(u, key, new)
            )),
            "create" => {
                let flag_off =
                    FLAGS.contains(&key.as_str()) && new.and_then(Value::as_i64) == Some(0);
                if new.is_some_and(|v| !v.is_null() && v != "") && !flag_off {
                    details.push(format!("{}: {}", label(key), value(u, key, new)));
                }
            }
            _ => details.push(format!("{}: {}", label(key), value(u, key, old))),
        }
    }
    let what =
        if e.table_name == "customers" && after.get("deleted_at").is_some_and(|v| !v.is_null()) {
            "deleted the customer (restorable by an admin)".to_string()
        } else {
            format!("{verb} {} (#{})", noun(&e.table_name), e.record_id)
        };
    Line {
        at: e.at.replace('T', " ").trim_end_matches('Z').to_string(),
        who: e.username.clone(),
        what,
        details,
    }
}

/// Yes/no columns (stored as 0 or 1).
const FLAGS: [&str; 3] = ["new_disc", "disabled", "password_changed"];

fn label(key: &str) -> String {
    crate::records::form_key(key).replace('_', " ")
}

/// A stored value in the shop's units where the field name carries a storage unit.
fn value(u: &Show, key: &str, v: Option<&Value>) -> String {
    let Some(v) = v else { return "–".into() };
    if FLAGS.contains(&key) {
        return if v.as_i64() == Some(1) {
            "yes".into()
        } else {
            "no".into()
        };
    }
    match (v.as_f64(), key) {
        (Some(x), k) if k.ends_with("_n_per_mm") => u.rate(x),
        (Some(x), k) if k.ends_with("_mm") => u.len(x),
        (Some(x), k) if k.ends_with("_nm") => {
            format!("{:.0} {}", u.units.nm_to_torque(x), u.torque_unit())
        }
        (Some(x), k) if k.ends_with("_n") => format!("{} {}", u.force_num(x), u.force_unit()),
        (Some(x), k) if k.ends_with("_g") => u.grams(x),
        (Some(_), _) => v.to_string(),
        (None, _) => match v {
            Value::Null => "–".into(),
            Value::String(s) if s.is_empty() => "(empty)".into(),
            Value::String(s) => s.clone(),
            other => other.to_string(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::clutch::units::Units;

    #[test]
    fn a_changed_setup_reads_as_before_and_after_in_the_shop_units() {
        let e = Entry {
            id: 1,
            at: "2026-11-02T10:00:00Z".into(),
            username: "sam".into(),
            action: "update".into(),
            table_name: "cover_heights".into(),
            record_id: 7,
            before: Some(r#"{"id":7,"height_mm":48.387,"passes":40,"note":""}"#.into()),
            after: Some(r#"{"id":7,"height_mm":48.59,"passes":40,"note":"recheck"}"#.into()),
        };
        let line = describe(&Show::new(Units::Imperial), &e);
        assert_eq!(line.what, "changed a cover-height measurement (#7)");
        assert_eq!(
            line.details,
            vec![
                "height: 1.905 in → 1.913 in".to_string(),
                "note: (empty) → recheck".to_string()
            ]
        );
        assert_eq!(line.at, "2026-11-02 10:00:00");
    }
}
