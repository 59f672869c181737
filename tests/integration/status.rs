//! The counter's work-due list, read from the kept-current `build_status`, against the list
//! worked out from the full history (`model::work_due`), on random histories written through the
//! real routes (API, forms).

use axum::http::StatusCode;
use lockpoint::backup;
use lockpoint::db::export::Document;
use lockpoint::progress::Progress;
use lockpoint::{db, model, status};
use proptest::prelude::*;
use serde_json::json;
use sqlx::SqlitePool;

use crate::support::{Client, TempDb, TestApp};

/// One write, as a shop would make it.
#[derive(Debug, Clone)]
enum Op {
    /// A cover height on build `b`: growth (0.01 mm) over the last, passes since, a shim
    /// pulled, or a new disc's baseline.
    Height {
        b: usize,
        grow: u32,
        passes: i64,
        pull: bool,
        new_disc: bool,
    },
    /// Corrects the latest cover height of build `b` by `delta` (0.01 mm).
    EditHeight {
        b: usize,
        delta: i32,
    },
    /// A bench test on build `b`: each spring's rate off the nominal by up to `spread` percent,
    /// the whole set `sag` percent weaker.
    Bench {
        b: usize,
        spread: u32,
        sag: u32,
    },
    /// Edits build `b`: its own shimming limit (0.01 mm), nominal rate, retired or active.
    EditBuild {
        b: usize,
        limit: Option<u32>,
        rate: Option<u32>,
        retired: bool,
    },
    /// The shop's limits and window.
    Settings {
        limit: u32,
        spread: u32,
        sag: u32,
        window: u32,
    },
    Delete {
        c: usize,
    },
    Restore {
        c: usize,
    },
}

fn op() -> impl Strategy<Value = Op> {
    prop_oneof![
        6 => (0..3usize, 0..40u32, 0..25i64, any::<bool>(), prop::bool::weighted(0.1)).prop_map(
            |(b, grow, passes, pull, new_disc)| Op::Height { b, grow, passes, pull, new_disc }
        ),
        1 => (0..3usize, -20..20i32).prop_map(|(b, delta)| Op::EditHeight { b, delta }),
        2 => (0..3usize, 0..12u32, 0..8u32).prop_map(|(b, spread, sag)| Op::Bench { b, spread, sag }),
        1 => (0..3usize, prop::option::of(5..60u32), prop::option::of(40..90u32), prop::bool::weighted(0.2))
            .prop_map(|(b, limit, rate, retired)| Op::EditBuild { b, limit, rate, retired }),
        1 => (5..60u32, 1..10u32, 1..8u32, 0..40u32)
            .prop_map(|(limit, spread, sag, window)| Op::Settings { limit, spread, sag, window }),
        1 => (0..2usize).prop_map(|c| Op::Delete { c }),
        1 => (0..2usize).prop_map(|c| Op::Restore { c }),
    ]
}

/// One build's starting shape: shim stack (0.01 mm each), disc thickness data or not, discs.
fn build_shape() -> impl Strategy<Value = (Vec<u32>, bool, i64)> {
    (prop::collection::vec(1..5u32, 0..4), any::<bool>(), 1..3i64)
}

struct Shop {
    token: String,
    customers: Vec<i64>,
    builds: Vec<(i64, serde_json::Value)>,
    /// Per build: (height mm, passes, shims pulled, latest height id) of the latest measurement.
    last: Vec<Option<(f64, i64, i64, i64)>>,
}

async fn shop(app: &TestApp, shapes: &[(Vec<u32>, bool, i64)]) -> Shop {
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let mut customers = Vec::new();
    let mut builds = Vec::new();
    for (i, (stack, thickness, discs)) in shapes.iter().enumerate() {
        if i < 2 {
            let c = app
                .api(
                    "POST",
                    "/api/v1/customers",
                    t,
                    Some(json!({"name": format!("Customer {i}"), "phone": format!("555-01{i}0")})),
                )
                .await
                .json();
            customers.push(c["id"].as_i64().unwrap());
        }
        let owner = customers[i.min(1)];
        let car = app
            .api(
                "POST",
                &format!("/api/v1/customers/{owner}/cars"),
                t,
                Some(json!({"description": format!("two-door, car {i}")})),
            )
            .await
            .json();
        let mut body = json!({
            "label": format!("build {i}"), "disc_count": discs, "facing_material": "organic",
            "facing_od_mm": 264.0, "facing_id_mm": 168.0, "spring_count": 6,
            "spring_rate_n_per_mm": 68.0,
            "shim_stack_mm": stack.iter().map(|s| *s as f64 * 0.1).collect::<Vec<_>>(),
        });
        if *thickness {
            body["disc_thickness_new_mm"] = json!(7.6);
            body["disc_thickness_min_mm"] = json!(7.0);
        }
        let b = app
            .api_answers(
                StatusCode::CREATED,
                "POST",
                &format!("/api/v1/cars/{}/builds", car["id"]),
                t,
                Some(body.clone()),
            )
            .await;
        builds.push((b.json()["id"].as_i64().unwrap(), body));
    }
    let n = builds.len();
    Shop {
        token,
        customers,
        builds,
        last: vec![None; n],
    }
}

async fn apply(app: &TestApp, admin: &Client<'_>, shop: &mut Shop, op: &Op) {
    let t = Some(shop.token.as_str());
    match *op {
        Op::Height {
            b,
            grow,
            passes,
            pull,
            new_disc,
        } => {
            let (id, _) = &shop.builds[b];
            let prev = shop.last[b];
            let (h, p, pulled) = match (prev, new_disc) {
                (Some((h, p, pulled, _)), false) => {
                    (h + grow as f64 * 0.01, p + passes, pulled + i64::from(pull))
                }
                _ => (40.0 + grow as f64 * 0.01, 0, 0),
            };
            let r = app
                .api(
                    "POST",
                    &format!("/api/v1/builds/{id}/measurements"),
                    t,
                    Some(
                        json!({"measured_on": "2026-06-01", "height_mm": h, "passes": p,
                                "shims_pulled": pulled, "new_disc": new_disc}),
                    ),
                )
                .await;
            if r.status == StatusCode::CREATED {
                shop.last[b] = Some((h, p, pulled, r.json()["id"].as_i64().unwrap()));
            }
        }
        Op::EditHeight { b, delta } => {
            if let Some((h, p, pulled, hid)) = shop.last[b] {
                let h = h + delta as f64 * 0.01;
                let r = app
                    .api(
                        "PUT",
                        &format!("/api/v1/measurements/{hid}"),
                        t,
                        Some(
                            json!({"measured_on": "2026-06-01", "height_mm": h, "passes": p,
                                    "shims_pulled": pulled}),
                        ),
                    )
                    .await;
                if r.status == StatusCode::OK {
                    shop.last[b] = Some((h, p, pulled, hid));
                }
            }
        }
        Op::Bench { b, spread, sag } => {
            let (id, _) = &shop.builds[b];
            let springs: Vec<_> = (0..6)
                .map(|i| {
                    let off = spread as f64 / 100.0 * (i as f64 / 5.0 - 0.5);
                    let rate = 68.0 * (1.0 + off) * (1.0 - sag as f64 / 100.0);
                    json!({"compression_mm": 10.0, "force_n": rate * 10.0})
                })
                .collect();
            app.api(
                "POST",
                &format!("/api/v1/builds/{id}/bench-tests"),
                t,
                Some(json!({"tested_on": "2026-06-02", "springs": springs})),
            )
            .await;
        }
        Op::EditBuild {
            b,
            limit,
            rate,
            retired,
        } => {
            let (id, body) = &mut shop.builds[b];
            body["shimming_limit_mm"] = json!(limit.map(|l| l as f64 * 0.01));
            body["spring_rate_n_per_mm"] = json!(rate.map(f64::from));
            body["status"] = json!(if retired { "retired" } else { "active" });
            app.api(
                "PUT",
                &format!("/api/v1/builds/{id}"),
                t,
                Some(body.clone()),
            )
            .await;
        }
        Op::Settings {
            limit,
            spread,
            sag,
            window,
        } => {
            admin
                .post_saved(
                    "/settings",
                    &[
                        ("name", "Test shop"),
                        ("units", "metric"),
                        ("shown_units", "metric"),
                        ("spring_spread_pct", &spread.to_string()),
                        ("spring_sag_pct", &sag.to_string()),
                        ("shimming_limit", &format!("{:.2}", limit as f64 * 0.01)),
                        ("overclamp_factor", "1.5"),
                        ("due_within_passes", &window.to_string()),
                        ("time_zone", ""),
                    ],
                )
                .await;
        }
        Op::Delete { c } => {
            admin
                .post(&format!("/customers/{}/delete", shop.customers[c]), &[])
                .await;
        }
        Op::Restore { c } => {
            admin
                .post(&format!("/customers/{}/restore", shop.customers[c]), &[])
                .await;
        }
    }
}

/// (kept, worked out from the full history, stale rows left) as comparable text.
async fn both(app: &TestApp) -> (String, String, i64) {
    both_in(&app.pool).await
}

/// [`both`] on any database.
async fn both_in(pool: &SqlitePool) -> (String, String, i64) {
    let mut conn = pool.acquire().await.unwrap();
    let settings = db::settings::get(&mut conn).await.unwrap();
    let kept = status::work_due(&mut conn, &settings).await.unwrap();
    let full = model::due::work_due(
        &db::builds::active(&mut conn).await.unwrap(),
        &db::heights::for_active_builds(&mut conn).await.unwrap(),
        &db::bench::for_active_builds(&mut conn).await.unwrap(),
        &settings,
    );
    let stale: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM build_status WHERE stale = 1")
        .fetch_one(&mut *conn)
        .await
        .unwrap();
    (format!("{kept:#?}"), format!("{full:#?}"), stale)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn the_kept_due_list_equals_the_one_worked_out_from_the_full_history(
        shapes in prop::collection::vec(build_shape(), 3),
        ops in prop::collection::vec(op(), 1..30),
    ) {
        let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
        rt.block_on(async {
            let app = TestApp::new().await;
            let admin = app.login("boss").await;
            let mut shop = shop(&app, &shapes).await;
            for (i, op) in ops.iter().enumerate() {
                apply(&app, &admin, &mut shop, op).await;
                let (kept, full, stale) = both(&app).await;
                assert_eq!(stale, 0, "step {i} ({op:?}) left a stale status");
                assert_eq!(kept, full, "step {i}: {op:?}");
            }
        });
    }
}

/// The shop's export (streamed to a file) imported into a new database, the way `lockpoint
/// import` does it (`backup::import_into`: rows, then the derived tables worked out).
async fn exported_and_imported(app: &TestApp) -> (SqlitePool, TempDb) {
    let (json, fresh) = (TempDb::new(), TempDb::new());
    backup::export_json_file(&app.pool, &json.path, &mut Progress::none())
        .await
        .unwrap();
    let pool = db::open(&fresh.path).await.unwrap();
    backup::import_into(
        &pool,
        &Document::File(json.path.clone()),
        &mut Progress::none(),
    )
    .await
    .unwrap();
    (pool, fresh)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 8, ..ProptestConfig::default() })]

    #[test]
    fn after_an_import_the_due_list_equals_the_one_worked_out_from_the_full_history(
        shapes in prop::collection::vec(build_shape(), 3),
        ops in prop::collection::vec(op(), 1..30),
    ) {
        let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
        rt.block_on(async {
            let app = TestApp::new().await;
            let admin = app.login("boss").await;
            let mut shop = shop(&app, &shapes).await;
            for op in &ops {
                apply(&app, &admin, &mut shop, op).await;
            }
            let (before, _, _) = both(&app).await;
            let (imported, _files) = exported_and_imported(&app).await;
            let (kept, full, stale) = both_in(&imported).await;
            imported.close().await;
            assert_eq!(stale, 0, "the import left a stale status");
            assert_eq!(kept, full, "kept against full history after the import");
            assert_eq!(kept, before, "the imported shop lists what the original listed");
        });
    }
}

#[tokio::test]
async fn random_histories_do_reach_the_due_list() {
    // The property above is only worth something if its histories put builds on the list:
    // a fixed history that must list a shim due, then nothing once the build is retired.
    let app = TestApp::new().await;
    let admin = app.login("boss").await;
    let mut shop = shop(&app, &vec![(vec![2, 2], false, 1); 3]).await;
    let steps = [
        Op::Height {
            b: 0,
            grow: 0,
            passes: 0,
            pull: false,
            new_disc: true,
        },
        Op::Height {
            b: 0,
            grow: 39,
            passes: 10,
            pull: false,
            new_disc: false,
        },
    ];
    for op in &steps {
        apply(&app, &admin, &mut shop, op).await;
    }
    let (kept, full, _) = both(&app).await;
    assert!(kept.contains("ShimDue"), "{kept}");
    assert_eq!(kept, full);
    let front = admin.get("/").await.body;
    assert!(front.contains("Pull the"), "counter shows the shim due");
    // The import test above is only worth something if an imported shop can list work: this
    // one must list the same shim due.
    let (imported, _files) = exported_and_imported(&app).await;
    let (after, full, stale) = both_in(&imported).await;
    imported.close().await;
    assert!(after.contains("ShimDue"), "{after}");
    assert_eq!((after, stale), (full, 0));
    apply(
        &app,
        &admin,
        &mut shop,
        &Op::EditBuild {
            b: 0,
            limit: None,
            rate: Some(68),
            retired: true,
        },
    )
    .await;
    let (kept, full, _) = both(&app).await;
    assert_eq!(kept, "[]");
    assert_eq!(kept, full);
}

// One status everywhere: a shim falling due within the shop's window (10 passes by default)
// says "◆ shim soon" on the counter, in the search result, on the build page, on a new sheet
// and in the API, never "● ok" in one place and "soon" in another. Cover height 1.905 in new,
// 1.918 in after 40 passes: 0.013 in grown at 0.000325 in a pass, so the 0.015 in shimming
// limit is 0.002 in (about 6 passes) away (derived: linear wear rate, docs/engineering.md §13).
#[tokio::test]
async fn a_shim_due_soon_says_soon_everywhere() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let path = client.record_build().await;
    let id: i64 = crate::support::id_from(&path).parse().unwrap();
    for (day, height, passes) in [("2026-11-02", "1.905", "0"), ("2026-11-20", "1.918", "40")] {
        client
            .post_saved(
                &format!("/builds/{id}/heights"),
                &[
                    ("measured_on", day),
                    ("height", height),
                    ("passes", passes),
                    ("shims_pulled", "0"),
                ],
            )
            .await;
    }
    let word = "◆ shim soon";
    let front = client.get("/").await.body;
    assert!(front.contains(word), "counter");
    let found = client.get("/?q=Lindqvist").await.body;
    let result = &found[found.find("found-build").expect("a search result")..];
    assert!(result.contains(word), "search result");
    let build = client.get(&format!("/builds/{id}")).await.body;
    let pill = &build[build.find("id=\"work-status\"").expect("status pill")..];
    assert!(
        pill.starts_with(&format!("id=\"work-status\">{word}")),
        "build page"
    );
    assert!(
        !build.contains("● ok"),
        "no 'ok' beside 'soon' on the build page"
    );
    let made = client
        .post_saved(&format!("/builds/{id}/sheets"), &[])
        .await;
    let sheet = client.get(made.location()).await.body;
    assert!(sheet.contains(word), "sheet");
    assert!(!sheet.contains("● ok"), "sheet says ok");
    let token = app.token("sam").await;
    let api = app
        .get_json(&format!("/api/v1/builds/{id}/status"), &token)
        .await;
    assert_eq!(api.status, StatusCode::OK, "{}", api.body);
    let v = api.json();
    assert_eq!(v["status"], "shim_soon", "{v}");
    assert_eq!(v["word"], word, "{v}");
}
