//! Query plans of the busiest pages: every statement the counter, the search, the build page
//! (with its lists of every pass and cover height) and the tuning page run (captured from
//! sqlx's own statement log, and the pages' synchronous reads' log (`db::read::prepare`), while
//! the real router answers) is put through EXPLAIN QUERY PLAN, and none may read a whole table
//! of records.

use std::collections::{BTreeMap, BTreeSet};
use std::sync::{Arc, Mutex};

use axum::http::StatusCode;
use sqlx::{Executor, Statement};
use tracing::field::{Field, Visit};
use tracing_subscriber::layer::{Context, Layer, SubscriberExt};

use crate::support::TestApp;

/// Collects the SQL of every statement sqlx runs (its `sqlx::query` events) and every one the
/// pages' synchronous reads prepare (`lockpoint::read`).
#[derive(Clone, Default)]
struct Statements(Arc<Mutex<BTreeSet<String>>>);

struct SqlField {
    summary: String,
    statement: String,
}

impl Visit for SqlField {
    fn record_str(&mut self, field: &Field, value: &str) {
        match field.name() {
            "summary" => self.summary = value.to_string(),
            "db.statement" => self.statement = value.to_string(),
            _ => {}
        }
    }
    fn record_debug(&mut self, field: &Field, value: &dyn std::fmt::Debug) {
        self.record_str(field, &format!("{value:?}"));
    }
}

impl<S: tracing::Subscriber> Layer<S> for Statements {
    fn on_event(&self, event: &tracing::Event<'_>, _: Context<'_, S>) {
        if !["sqlx::query", "lockpoint::read"].contains(&event.metadata().target()) {
            return;
        }
        let mut f = SqlField {
            summary: String::new(),
            statement: String::new(),
        };
        event.record(&mut f);
        let sql = if f.statement.trim().is_empty() {
            f.summary
        } else {
            f.statement
        };
        self.0.lock().unwrap().insert(sql.trim().to_string());
    }
}

/// Tables that grow with the shop's history: none may be read whole by a page. The record
/// tables but the shop's settings, and the history, status and sheets kept beside them.
fn grows(table: &str) -> bool {
    let records = lockpoint::records::tables::RECORD_TABLES;
    (table != "shop_settings" && records.contains(&table))
        || ["audit_log", "build_status", "sheets"].contains(&table)
}

/// The biggest tables: never walked, even through an index, except newest first with a LIMIT.
const HISTORY: &[&str] = &["cover_heights", "passes", "bench_springs", "audit_log"];

/// `alias -> table` for the `FROM t a` / `JOIN t a` of a statement (and `t -> t`).
fn aliases(sql: &str) -> BTreeMap<String, String> {
    let words: Vec<&str> = sql
        .split(|c: char| c.is_whitespace() || c == ',' || c == '(' || c == ')')
        .filter(|w| !w.is_empty())
        .collect();
    let mut out = BTreeMap::new();
    for (i, w) in words.iter().enumerate() {
        if (w.eq_ignore_ascii_case("FROM") || w.eq_ignore_ascii_case("JOIN"))
            && let Some(table) = words.get(i + 1)
        {
            out.insert(table.to_string(), table.to_string());
            let mut next = words.get(i + 2).copied();
            if next.is_some_and(|n| n.eq_ignore_ascii_case("AS")) {
                next = words.get(i + 3).copied();
            }
            if let Some(alias) = next {
                out.insert(alias.to_string(), table.to_string());
            }
        }
    }
    out
}

/// The plan lines of a statement that read a record table whole (a SCAN with no index).
async fn full_scans(conn: &mut sqlx::SqliteConnection, sql: &str) -> (Vec<String>, String) {
    let params = match conn
        .prepare(sqlx::SqlSafeStr::into_sql_str(sqlx::AssertSqlSafe(
            sql.to_string(),
        )))
        .await
        .unwrap()
        .parameters()
    {
        Some(sqlx::Either::Right(n)) => n,
        _ => 0,
    };
    let mut q = sqlx::query_as::<_, (i64, i64, i64, String)>(sqlx::AssertSqlSafe(format!(
        "EXPLAIN QUERY PLAN {sql}"
    )));
    for _ in 0..params {
        q = q.bind(1_i64);
    }
    let plan: Vec<String> = q
        .fetch_all(&mut *conn)
        .await
        .unwrap_or_else(|e| panic!("{e}: {sql}"))
        .into_iter()
        .map(|r| r.3)
        .collect();
    let names = aliases(sql);
    let scans = plan
        .iter()
        .filter(|line| {
            let mut w = line.split_whitespace();
            if w.next() != Some("SCAN") || line.contains("VIRTUAL TABLE") {
                return false;
            }
            let Some(table) = w.next().and_then(|name| names.get(name)) else {
                return false;
            };
            let indexed = line.contains("USING INDEX") || line.contains("USING COVERING INDEX");
            if HISTORY.contains(&table.as_str()) {
                // The history tables are walked only newest first, for a LIMITed feed.
                !(line.contains("_recent") && sql.contains("LIMIT"))
            } else {
                grows(table) && !indexed
            }
        })
        .cloned()
        .collect();
    (scans, plan.join("\n"))
}

/// Set for the child process that captures the statements.
const CHILD: &str = "LOCKPOINT_PLANS_CHILD";

#[test]
fn the_busiest_pages_read_no_table_of_records_whole() {
    // sqlx runs each SQLite connection on a thread of its own, so its statement log is only
    // seen by a process-wide subscriber: the capture runs in a test process of its own.
    let out = std::process::Command::new(std::env::current_exe().unwrap())
        .args([
            "plans::captured_in_a_process_of_its_own",
            "--exact",
            "--ignored",
            "--nocapture",
            "--test-threads=1",
        ])
        .env(CHILD, "1")
        .output()
        .unwrap();
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(out.status.success(), "{text}");
    assert!(text.contains("query plans checked:"), "{text}");
    assert!(text.contains("1 passed"), "{text}");
}

#[tokio::test]
#[ignore = "run by the_busiest_pages_read_no_table_of_records_whole, in a process of its own"]
async fn captured_in_a_process_of_its_own() {
    if std::env::var_os(CHILD).is_none() {
        return;
    }
    let seen = Statements::default();
    tracing::subscriber::set_global_default(tracing_subscriber::registry().with(seen.clone()))
        .expect("the only subscriber of this process");
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    for passes in ["0", "5", "10"] {
        assert_eq!(
            client
                .post(
                    &format!("{build}/heights"),
                    &[
                        ("measured_on", "2026-06-01"),
                        ("height", "1.5"),
                        ("passes", passes),
                        ("shims_pulled", "0"),
                    ],
                )
                .await
                .status,
            StatusCode::SEE_OTHER
        );
    }

    seen.0.lock().unwrap().clear();
    for path in [
        "/".to_string(),
        "/?q=Lindqvist".into(),
        "/customers?q=Lindqvist".into(),
        "/customers?q=5550101".into(),
        "/customers?q=Lindqvist&sort=last".into(),
        build.clone(),
        format!("{build}/tune"),
        format!("{build}/passes"),
        format!("{build}/heights?page=1"),
    ] {
        let reply = client.get(&path).await;
        assert_eq!(reply.status, StatusCode::OK, "{path}");
    }

    let statements: Vec<String> = seen.0.lock().unwrap().iter().cloned().collect();
    let reads: Vec<&String> = statements
        .iter()
        .filter(|s| {
            let first = s.split_whitespace().next().unwrap_or("").to_uppercase();
            first == "SELECT" || first == "WITH"
        })
        .collect();
    // The capture works: the counter's status read, the search and the build's dossier (the
    // last two read synchronously, `db::read`) are among them.
    assert!(
        reads.iter().any(|s| s.contains("FROM builds x")),
        "{reads:#?}"
    );
    assert!(
        reads.iter().any(|s| s.contains("FROM build_status s")),
        "{reads:#?}"
    );
    assert!(
        reads.iter().any(|s| s.contains("customer_search MATCH")),
        "{reads:#?}"
    );
    assert!(
        reads.iter().any(|s| s.contains("FROM cover_heights")),
        "{reads:#?}"
    );

    let mut conn = app.pool.acquire().await.unwrap();
    let mut failures = Vec::new();
    for sql in reads {
        let (scans, plan) = full_scans(&mut conn, sql).await;
        if !scans.is_empty() {
            failures.push(format!("{sql}\n-- plan:\n{plan}"));
        }
    }
    assert!(
        failures.is_empty(),
        "full scans:\n\n{}",
        failures.join("\n\n")
    );
    println!("query plans checked: {} statements", statements.len());
}

#[tokio::test]
async fn the_scan_check_itself_flags_a_full_scan() {
    let app = TestApp::new().await;
    let mut conn = app.pool.acquire().await.unwrap();
    let (scans, _) = full_scans(&mut conn, "SELECT * FROM cover_heights h WHERE h.note = ?").await;
    assert_eq!(
        scans.len(),
        1,
        "a filter on an unindexed column is a full scan"
    );
    let (scans, plan) = full_scans(
        &mut conn,
        "SELECT * FROM cover_heights WHERE build_id = ? ORDER BY id",
    )
    .await;
    assert!(scans.is_empty(), "{plan}");
}
