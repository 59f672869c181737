//! Hostile input: thousands of generated requests spread over every form POST and every API
//! write (wrong types, missing and extra fields, extreme numbers, NaN and infinities spelled out,
//! 100 KB strings, invalid UTF-8, markup, SQL fragments, deep nesting, empty and oversized bodies,
//! wrong content types, missing or wrong tokens, cross-site posts, bad path ids).
//!
//! For every answer: no 5xx; a refused request leaves the database as it was; a 422 names the
//! field (JSON `field`, or a message / alert on the page); markup never comes back unescaped in
//! a page. The generator is a fixed-seed xorshift, so a failure reproduces: the seed and every
//! failing request are printed. `LOCKPOINT_HOSTILE_SEED` and `LOCKPOINT_HOSTILE_CASES` override
//! the seed and the number of requests.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::sync::LazyLock;
use std::time::Instant;

use axum::body::Body;
use axum::http::{Method, Request, StatusCode, header};
use lockpoint::web::http::routes::Access;
use lockpoint::web::route_table;
use serde_json::{Value, json};
use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{AssertSqlSafe, Connection, SqliteConnection};

use crate::support::{Reply, TestApp};

const DEFAULT_SEED: u64 = 0x4C50_5F48_4F53_5431;
const DEFAULT_CASES: usize = 6000;
/// Just over the server's 256 KiB body limit.
const OVERSIZED: usize = 256 * 1024 + 512;

// ---------------------------------------------------------------------------------------------
// A small deterministic generator.

pub(crate) struct Rng(u64);

impl Rng {
    pub(crate) fn new(seed: u64) -> Self {
        Self(seed.max(1))
    }

    /// xorshift64* (Marsaglia's xorshift with Vigna's multiplier).
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    pub(crate) fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }

    fn chance(&mut self, percent: u64) -> bool {
        self.next() % 100 < percent
    }

    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

// ---------------------------------------------------------------------------------------------
// Hostile values.

/// Markup that must never come back raw in a page, and the raw fragments to look for.
const MARKUP: &[&str] = &[
    "<script>alert(1)</script>",
    "\"><img src=x onerror=alert(1)>",
    "</textarea><script>alert(1)</script>",
    "'><svg onload=alert(1)>",
    "<b>bold</b>",
];
const MARKUP_MARKERS: &[&str] = &[
    "<script>alert(1)",
    "<img src=x onerror",
    "<svg onload",
    "<b>bold</b>",
];

const SQL: &[&str] = &[
    "'; DROP TABLE customers; --",
    "x'); DROP TABLE cars; --",
    "1; DELETE FROM builds",
    "' OR '1'='1",
    "\"; UPDATE users SET role = 'admin' WHERE '1'='1",
];

/// A hostile value for a form field, as typed text.
fn hostile_text(rng: &mut Rng) -> String {
    const FIXED: &[&str] = &[
        "abc",
        "NaN",
        "nan",
        "inf",
        "-inf",
        "Infinity",
        "-Infinity",
        "1e308",
        "-1e308",
        "1e309",
        "-1e309",
        "1e-400",
        "4.9e-324",
        "0",
        "-0",
        "-1",
        "-0.001",
        "0x1A",
        "1,5",
        "1_000",
        "\u{ff11}\u{ff12}",
        "  7  ",
        "+5",
        ".5",
        "5.",
        "e",
        "--1",
        "1.2.3",
        "9999999999999999999999999",
        "-9223372036854775809",
        "2026-02-30",
        "0000-00-00",
        "2026-13-01",
        "99999-01-01",
        "2026-1-1",
        "",
        " ",
        "\0",
        "\u{202e}evil",
        "\u{1F600}\u{1F600}",
        "\r\n\r\n",
        "%00",
        "../../etc/passwd",
        "{{7*7}}",
        "on",
        "true",
        "metric",
        "retired",
        "sintered_iron",
        "admin",
    ];
    match rng.below(12) {
        0 => "x".repeat(100 * 1024),
        1 => "y".repeat(*rng.pick(&[121, 201, 401, 2001, 4001])),
        2 | 3 => rng.pick(MARKUP).to_string(),
        4 => rng.pick(SQL).to_string(),
        5 => match rng.below(3) {
            0 => "0.010, ".repeat(3000),
            1 => "3000,400\n".repeat(5000),
            _ => "rpm,torque\n3000,abc\n4000,NaN".to_string(),
        },
        _ => rng.pick(FIXED).to_string(),
    }
}

/// A JSON string holding `s`.
fn text(s: &str) -> String {
    Value::String(s.to_string()).to_string()
}

/// A hostile JSON value, as JSON text (some of it deliberately not valid JSON).
fn hostile_json(rng: &mut Rng) -> String {
    const FIXED: &[&str] = &[
        "\"abc\"",
        "\"\"",
        "true",
        "false",
        "null",
        "[]",
        "{}",
        "0",
        "-0",
        "-1",
        "0.0",
        "-0.5",
        "1e308",
        "-1e308",
        "1.7976931348623157e308",
        "5e-324",
        "1e309",
        "-1e309",
        "123456789012345678901234567890",
        "18446744073709551616",
        "-9223372036854775809",
        "9223372036854775807",
        "4294967296",
        "NaN",
        "Infinity",
        "-Infinity",
        "\"NaN\"",
        "\"inf\"",
        "\"-Infinity\"",
        "\"1e308\"",
        "\"12\"",
        "0x10",
        "01",
        "1.",
        ".5",
        "+1",
        "[1, 2]",
        "[[1]]",
        "[[\"a\", \"b\"]]",
        "{\"a\": 1}",
        "\"\\u0000\"",
        "\"\\ud800\"",
        "\"\\u202eevil\"",
        "\"2026-02-30\"",
        "\"metric\"",
        "\"retired\"",
    ];
    match rng.below(14) {
        0 => text(&"x".repeat(100 * 1024)),
        1 => text(&"y".repeat(*rng.pick(&[121, 201, 2001, 4001]))),
        2 | 3 => text(rng.pick::<&str>(MARKUP)),
        4 => text(rng.pick::<&str>(SQL)),
        5 => {
            let depth = *rng.pick(&[20, 100, 127, 129, 200, 5000]);
            format!("{}{}", "[".repeat(depth), "]".repeat(depth))
        }
        6 => match rng.below(3) {
            0 => format!("[{}]", vec!["0"; 5000].join(",")),
            1 => {
                let points: Vec<String> = (0..3000)
                    .map(|i| format!("[{}, {}]", 500 + i * 5, 300 + i % 7))
                    .collect();
                format!("[{}]", points.join(","))
            }
            _ => "[[3000, 400], [3000, 400], [2000, -5]]".to_string(),
        },
        _ => rng.pick(FIXED).to_string(),
    }
}

// ---------------------------------------------------------------------------------------------
// Routes and their valid base payloads.

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Kind {
    Form,
    Api,
}

struct Route {
    method: &'static str,
    template: &'static str,
    kind: Kind,
    /// Declared for admins only.
    admin: bool,
}

/// Every form POST and every API write, from the route table the router is built from.
static ROUTES: LazyLock<Vec<Route>> = LazyLock::new(|| {
    // Leaked once per run: the cases keep `&'static` references into the table.
    let leak = |s: String| -> &'static str { Box::leak(s.into_boxed_str()) };
    route_table()
        .into_iter()
        .filter(|r| r.method != Method::GET)
        .map(|r| Route {
            method: leak(r.method.to_string()),
            template: leak(r.path),
            kind: if r.access == Access::Token {
                Kind::Api
            } else {
                Kind::Form
            },
            admin: r.access == Access::Admin,
        })
        .collect()
});

/// The records the requests aim at.
struct Fixture {
    customer: i64,
    /// The customer that delete and restore requests hide and bring back (no cars).
    spare_customer: i64,
    car: i64,
    /// The build that update requests change.
    build_edit: i64,
    /// The build that setups, bench tests, measurements and passes are added to (6 springs,
    /// 3 shims), kept apart so an accepted build update cannot make its entries invalid.
    build_entries: i64,
    setup: i64,
    height: i64,
    bench: i64,
    pass: i64,
    sheet: i64,
    link: i64,
    spare_user: i64,
}

impl Fixture {
    fn id_for(&self, template: &str) -> i64 {
        let t = template.trim_start_matches("/api/v1");
        match t {
            "/customers/{id}/delete" | "/customers/{id}/restore" => return self.spare_customer,
            "/builds/{id}" | "/builds/{id}/sheets" => return self.build_edit,
            _ => {}
        }
        match t.split('/').nth(1).unwrap_or("") {
            "customers" => self.customer,
            "cars" => self.car,
            "builds" => self.build_entries,
            "setups" => self.setup,
            "measurements" => self.height,
            "bench-tests" => self.bench,
            "passes" => self.pass,
            "sheets" => self.sheet,
            "links" => self.link,
            "users" => self.spare_user,
            _ => panic!("no id for {template}"),
        }
    }

    /// The id a route's `{id}` is filled with, if it has one.
    fn id_text(&self, route: &Route) -> Option<String> {
        route
            .template
            .contains("{id}")
            .then(|| self.id_for(route.template).to_string())
    }
}

const TORQUE_CURVE: &str = "rpm,torque\n3000,410\n4000,455\n5000,480\n6000,470\n7000,430";

fn pairs(items: &[(&str, &str)]) -> Vec<(String, String)> {
    items
        .iter()
        .map(|(k, v)| (k.to_string(), v.to_string()))
        .collect()
}

/// A valid form for the route (imperial units, as the shop is set up).
fn base_form(template: &str, n: u64, rng: &mut Rng) -> Vec<(String, String)> {
    let passes = n.to_string();
    match template {
        "/login" => vec![
            ("username".into(), format!("nobody-{n}")),
            ("password".into(), format!("not the password {n}")),
            ("next".into(), "/customers".into()),
        ],
        "/logout"
        | "/users/{id}/disable"
        | "/users/{id}/enable"
        | "/links/{id}/revoke"
        | "/customers/{id}/delete"
        | "/customers/{id}/restore" => Vec::new(),
        "/builds/{id}/sheets" => pairs(&[("target_lockup", "5600"), ("target_ratio", "1.1")]),
        "/sheets/{id}/links" => pairs(&[("valid_days", "30")]),
        "/customers" | "/customers/{id}" => vec![
            ("name".into(), format!("Test Customer {n}")),
            ("phone".into(), "555-0100".into()),
            ("email".into(), format!("customer{n}@example.test")),
            ("notes".into(), "Brings the car on a trailer.".into()),
        ],
        "/customers/{id}/cars" | "/cars/{id}" => pairs(&[
            ("description", "two-door, 7.2 L V8, 4-speed"),
            ("engine", "7.2 L V8"),
            ("weight", "3500"),
            ("transmission", "4-speed manual"),
            ("rated_input_torque", "600"),
            ("first_gear_ratio", "2.64"),
            ("final_drive_ratio", "4.10"),
            ("tire_diameter", "28"),
            ("launch_rpm", "4500"),
            ("torque_curve", TORQUE_CURVE),
            ("notes", "Street and strip."),
        ]),
        "/cars/{id}/builds" | "/builds/{id}" => pairs(
            &[
                &[
                    ("label", "Test build"),
                    ("disc_count", "1"),
                    ("facing_material", "organic"),
                    ("disc_thickness_new", "0.320"),
                    ("disc_thickness_min", "0.260"),
                    ("spring_description", "six blue"),
                ],
                crate::build_form::BUILD_FORM,
                &[
                    ("shimming_limit", "0.015"),
                    ("status", "active"),
                    ("notes", ""),
                ],
            ]
            .concat(),
        ),
        "/builds/{id}/setups" => pairs(&[
            ("changed_on", "2026-11-02"),
            ("adjuster_turns", "1.5"),
            ("counterweight_g", "24"),
            ("mu", "0.32"),
            ("note", "base setting"),
        ]),
        "/builds/{id}/bench-tests" => {
            let mut f = pairs(&[
                ("tested_on", "2026-11-02"),
                ("test_height", "1.600"),
                ("note", "bench"),
            ]);
            for i in 1..=6 {
                f.push((format!("free_length_{i}"), "2.100".into()));
                f.push((format!("force_{i}"), "190".into()));
            }
            f
        }
        "/builds/{id}/heights" => {
            let new_disc = rng.chance(50);
            let mut f = pairs(&[
                ("measured_on", "2026-11-03"),
                ("height", "1.905"),
                ("passes", &passes),
                ("shims_pulled", "0"),
                ("note", "checked"),
            ]);
            if new_disc {
                f.push(("new_disc".into(), "on".into()));
            }
            f
        }
        "/builds/{id}/passes" => pairs(&[
            ("run_on", "2026-11-08"),
            ("track", "Test strip"),
            ("launch_rpm", "4500"),
            ("sixty_ft", "1.41"),
            ("et", "10.9"),
            ("observed_lockup_rpm", "5600"),
            ("notes", "clean pass"),
        ]),
        "/settings" => pairs(&[
            ("name", "Test Clutch Shop"),
            ("phone", "555-0199"),
            ("email", "shop@example.test"),
            ("address", "1 Test Road"),
            ("units", "imperial"),
            ("spring_spread_pct", "5"),
            ("spring_sag_pct", "3"),
            ("shimming_limit", "0.015"),
            ("overclamp_factor", "1.5"),
            ("due_within_passes", "10"),
        ]),
        "/users" => vec![
            ("username".into(), format!("fuzz-user-{n}")),
            ("password".into(), "long enough password".into()),
            ("role".into(), "tech".into()),
        ],
        // No folder: a valid schedule that starts no copies during the test.
        "/backup/schedule" => pairs(&[("dir", ""), ("every", "1d"), ("keep", "14")]),
        // No folder chosen: answered with a note saying so.
        "/backup/now" => Vec::new(),
        "/users/{id}/password" => pairs(&[("password", "another long password")]),
        "/users/{id}/display-name" => pairs(&[("display_name", "Counter staff")]),
        // The upload is multipart: a form body here is refused as not from the upload form.
        "/passes/{id}/log" => Vec::new(),
        // No upload waits under this token: the pass page says so (422).
        "/passes/{id}/log/map" => pairs(&crate::logs::map_form("up-none", "4.7")),
        // The spreadsheet upload is multipart: a form body is refused as not from the form.
        "/import" => Vec::new(),
        // No file waits under this token: the upload page says so.
        "/import/map" => pairs(&[
            ("upload", "im-none"),
            ("map_0", "customer_name"),
            ("map_1", "car_description"),
            ("date_order", "ymd"),
            ("action", "check"),
        ]),
        other => panic!("no base form for {other}"),
    }
}

fn capacity_example() -> Value {
    let mut example = crate::calc::example();
    example["driveline"] = json!({"rated_torque": 600});
    example["overclamp_factor"] = json!(1.5);
    example
}

fn build_json() -> Value {
    json!({"label": "Test build", "disc_count": 1, "facing_material": "organic",
      "facing_od_mm": 264.16, "facing_id_mm": 167.64, "disc_thickness_new_mm": 8.1,
      "disc_thickness_min_mm": 6.6, "spring_count": 6, "spring_description": "six blue",
      "spring_rate_n_per_mm": 66.5, "adjuster_tpi": 16.0, "base_compression_mm": 5.6,
      "lever_count": 3, "lever_mass_g": 12.0, "lever_cg_radius_mm": 104.1, "lever_arm_ratio": 2.6,
      "shim_stack_mm": [0.254, 0.254, 0.508], "shimming_limit_mm": 0.381, "status": "active",
      "notes": ""})
}

/// A short launch log: engine 4800 rpm, input rising to it in 0.5 s, 100 Hz.
fn log_csv() -> String {
    let mut s = String::from("t,engine,input\n");
    for k in 0..=80 {
        let t = k as f64 * 0.01;
        s.push_str(&format!(
            "{t:.2},4800,{:.0}\n",
            (9600.0 * (t - 0.05)).clamp(0.0, 4800.0)
        ));
    }
    s
}

/// A valid JSON body for the route (storage units).
fn base_json(template: &str, n: u64, rng: &mut Rng) -> Value {
    match template.trim_start_matches("/api/v1") {
        "/customers" | "/customers/{id}" => json!({"name": format!("Test Customer {n}"),
            "phone": "555-0100", "email": format!("customer{n}@example.test"), "notes": "API"}),
        "/customers/{id}/cars" | "/cars/{id}" => json!({
            "description": "two-door, 7.2 L V8, 4-speed", "engine": "7.2 L V8", "weight_kg": 1600.0,
            "transmission": "4-speed manual", "rated_input_torque_nm": 800.0,
            "first_gear_ratio": 2.64, "final_drive_ratio": 4.10, "tire_diameter_mm": 720.0,
            "launch_rpm": 4500.0,
            "torque_curve_nm": [[3000, 556], [4000, 617], [5000, 651], [6000, 637], [7000, 583]],
            "notes": ""}),
        "/cars/{id}/builds" | "/builds/{id}" => build_json(),
        "/builds/{id}/setups" | "/setups/{id}" => json!({"changed_on": "2026-11-02",
            "adjuster_turns": 1.5, "counterweight_g": 24.0, "mu": 0.32, "note": "API setting"}),
        "/builds/{id}/bench-tests" | "/bench-tests/{id}" => {
            let springs: Vec<Value> = (0..6)
                .map(|_| json!({"free_length_mm": 53.34, "compression_mm": 12.7, "force_n": 845.0}))
                .collect();
            json!({"tested_on": "2026-11-02", "note": "API bench", "springs": springs})
        }
        "/builds/{id}/measurements" | "/measurements/{id}" => json!({"measured_on": "2026-11-03",
            "height_mm": 48.387, "passes": n, "shims_pulled": 0, "new_disc": rng.chance(50),
            "note": ""}),
        "/builds/{id}/passes" | "/passes/{id}" => json!({"run_on": "2026-11-08",
            "track": "Test strip", "launch_rpm": 4500.0, "sixty_ft_s": 1.41, "et_s": 10.9,
            "observed_lockup_rpm": 5600.0, "notes": ""}),
        "/calc/capacity" => capacity_example(),
        "/calc/recommend" => {
            let mut v = capacity_example();
            v["targets"] = json!({"lockup_rpm": 5600});
            if rng.chance(30) {
                v["targets"]["launch_ratio"] = json!(1.1);
            }
            v["steps"] = json!({"adjuster_turns": 0.25, "counterweight_g": 1.0});
            v["limits"] = json!({"max_adjuster_turns": 6.0, "max_counterweight_g": 120.0});
            v
        }
        "/calc/calibrate" => {
            let mut v = capacity_example();
            if let Some(o) = v.as_object_mut() {
                for key in ["friction", "launch_rpm", "driveline", "overclamp_factor"] {
                    o.remove(key);
                }
            }
            v["fit"] = json!(if rng.chance(30) { "mu_and_gain" } else { "mu" });
            v["passes"] = json!([
                {"lockup_rpm": 5600, "clutch_torque": 470.0, "adjuster_turns": 1.5,
                 "counterweight_g": 20.0, "clamp_loss": 0.0},
                {"lockup_rpm": 5900, "counterweight_g": 28.0},
                {"lockup_rpm": 6200, "clutch_torque": 455.0, "counterweight_g": 36.0,
                 "clamp_loss": 20.0}]);
            v
        }
        "/calc/launch" => {
            let mut v = capacity_example();
            if let Some(o) = v.as_object_mut() {
                for key in ["driveline", "overclamp_factor"] {
                    o.remove(key);
                }
            }
            v["engine"]["inertia"] = json!(4.7);
            v["driveline"] = json!({"first_gear_ratio": 2.2, "final_drive_ratio": 4.1,
                "efficiency": 0.95, "input_inertia": 0.5, "driveshaft_inertia": 1.2,
                "rear_axle_inertia": 71.0, "front_axle_inertia": 24.0});
            v["vehicle"] = json!({"mass": 3200, "tire_diameter": 30, "wheelbase": 108,
                "cg_to_front_axle": 58, "cg_height": 20, "drag_height": 20,
                "rolling_resistance": 0.015, "drag_area": 6.5, "tire_grip": 1.8,
                "tire_grip_spinning": 1.4});
            v["duration_s"] = json!(1.0);
            v
        }
        "/calc/wear" => json!({"units": "imperial", "baseline_cover_height": 1.905,
            "shimming_limit": 0.015, "shims": [0.010, 0.010, 0.020], "spring_count": 6,
            "spring_rate": 390.0, "disc_wear_allowance": 0.060,
            "measurements": [{"passes": 0, "cover_height": 1.905, "shims_pulled": 0},
                             {"passes": 40, "cover_height": 1.913, "shims_pulled": 0}]}),
        "/calc/log-analysis" => json!({"units": "imperial", "csv": log_csv(),
            "columns": {"time": "t", "engine_rpm": "engine", "input_rpm": "input"},
            "time_unit": "auto", "slip_on_pct": 3, "hold_ms": 100,
            "engine": {"torque_curve": [[3000, 410], [5000, 480], [7000, 430]], "inertia": 4.7}}),
        "/passes/{id}/log" => json!({"csv": log_csv(), "file_name": "run.csv",
            "columns": {"time": "t", "engine_rpm": "engine", "input_rpm": "input"},
            "engine_inertia_kgm2": 0.2}),
        "/import/spreadsheet" => json!({"file_name": "fuzz.csv",
            "csv": format!("Name,Car,Built\nTest Customer {n},two-door,2026-11-02\n"),
            "columns": {"customer_name": "Name", "car_description": "Car"},
            "units": {}, "date_order": "ymd", "duplicates": "skip", "dry_run": rng.chance(50)}),
        other => panic!("no base JSON for {other}"),
    }
}

// ---------------------------------------------------------------------------------------------
// One generated request.

/// What the request's mutations alone make certain about the answer.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Expect {
    Status(u16),
    LoginRedirect,
}

struct Case {
    route: &'static Route,
    uri: String,
    headers: Vec<(String, String)>,
    body: Vec<u8>,
    mutations: Vec<String>,
    /// Set when one mutation decides the answer on its own.
    expect: Option<Expect>,
    /// The request carries a live session (forms) or token (API).
    authenticated: bool,
}

impl Case {
    fn describe(&self) -> String {
        let mut s = format!(
            "{} {} ({:?})\n  mutations: {}\n",
            self.route.method,
            self.uri,
            self.route.kind,
            self.mutations.join("; ")
        );
        for (k, v) in &self.headers {
            let v = if k.eq_ignore_ascii_case("cookie") || k.eq_ignore_ascii_case("authorization") {
                format!("{}...", v.chars().take(24).collect::<String>())
            } else {
                v.clone()
            };
            let _ = writeln!(s, "  {k}: {v}");
        }
        let shown = String::from_utf8_lossy(&self.body[..self.body.len().min(700)]).into_owned();
        let _ = write!(s, "  body ({} bytes): {shown:?}", self.body.len());
        s
    }
}

fn form_encode_bytes(pairs: &[(String, String)]) -> Vec<u8> {
    let mut out = Vec::new();
    for (i, (k, v)) in pairs.iter().enumerate() {
        if i > 0 {
            out.push(b'&');
        }
        encode_into(&mut out, k);
        out.push(b'=');
        encode_into(&mut out, v);
    }
    out
}

fn encode_into(out: &mut Vec<u8>, s: &str) {
    for b in s.bytes() {
        match b {
            b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'-' | b'_' | b'.' | b'~' => out.push(b),
            b' ' => out.push(b'+'),
            _ => out.extend_from_slice(format!("%{b:02X}").as_bytes()),
        }
    }
}

/// Path ids that name nothing; every one must be a 404.
const BAD_IDS: &[&str] = &[
    "0",
    "-1",
    "999999999",
    "abc",
    "1.5",
    "1e3",
    "99999999999999999999999",
    "%00",
    "1%20OR%201%3D1",
    "%27%3B%20DROP%20TABLE%20customers%3B%20--",
    "%3Cscript%3Ealert(1)%3C%2Fscript%3E",
    "%FF%FE",
];

const CROSS_SITE: &[(&str, &str)] = &[
    ("sec-fetch-site", "cross-site"),
    ("origin", "http://attacker.example"),
];

/// Credentials the generator hands out.
struct Creds {
    boss_cookie: String,
    boss_csrf: String,
    sam_cookie: String,
    sam_csrf: String,
    token: String,
}

/// Generates one form request from the route's base form.
fn form_case(
    route: &'static Route,
    fx: &Fixture,
    creds: &Creds,
    session: Option<(String, String)>,
    n: u64,
    rng: &mut Rng,
) -> Case {
    let mut fields = base_form(route.template, n, rng);
    let is_login = route.template == "/login";
    let is_admin = route.admin;
    let mut d = Draft::new(
        fx.id_text(route),
        Some("application/x-www-form-urlencoded".to_string()),
        !is_login,
    );

    let (mut cookie, mut csrf) = match session {
        Some(s) => (Some(s.0), Some(s.1)),
        None if !is_login => (
            Some(creds.boss_cookie.clone()),
            Some(creds.boss_csrf.clone()),
        ),
        None => (None, None),
    };
    let mut raw_body: Option<Vec<u8>> = None;
    let mut token_first = true;

    let rounds = 1 + rng.below(3);
    for _ in 0..rounds {
        let op = rng.below(100);
        match op {
            // a field's value
            0..=39 if !fields.is_empty() => {
                let i = rng.below(fields.len());
                let value = hostile_text(rng);
                d.mutations.push(format!(
                    "{} = {:?}",
                    fields[i].0,
                    value.chars().take(60).collect::<String>()
                ));
                fields[i].1 = value;
            }
            // a field missing
            40..=49 if !fields.is_empty() => {
                let i = rng.below(fields.len());
                d.mutations.push(format!("without {}", fields[i].0));
                fields.remove(i);
            }
            // an extra or a repeated field, placed first so it is the one read
            50..=57 => {
                let value = hostile_text(rng);
                let key = if !fields.is_empty() && rng.chance(50) {
                    fields[rng.below(fields.len())].0.clone()
                } else {
                    match rng.below(4) {
                        0 => "name[]".to_string(),
                        1 => "<script>alert(1)</script>".to_string(),
                        2 => "z".repeat(2000),
                        _ => "is_admin".to_string(),
                    }
                };
                d.mutations.push(format!(
                    "extra {:?} = {:?}",
                    key.chars().take(40).collect::<String>(),
                    value.chars().take(40).collect::<String>()
                ));
                fields.insert(0, (key, value));
                token_first = false;
            }
            // the CSRF token
            58..=63 if !is_login => {
                match rng.below(4) {
                    0 => csrf = None,
                    1 => csrf = Some(String::new()),
                    2 => csrf = csrf.map(|t| t.to_uppercase() + "0"),
                    _ => csrf = Some("'; DROP TABLE sessions; --".into()),
                }
                d.mutations.push(format!("csrf token {csrf:?}"));
                d.expect = Some(Expect::Status(403));
            }
            // the session cookie
            64..=66 if !is_login => {
                cookie = match rng.below(3) {
                    0 => None,
                    1 => Some("lockpoint_session=forged".into()),
                    _ => Some(format!("lockpoint_session={}", "A".repeat(4000))),
                };
                d.authenticated = false;
                d.mutations.push("no valid session".into());
                d.expect = Some(Expect::LoginRedirect);
            }
            // a tech on an admin page
            67..=69 if is_admin => {
                cookie = Some(creds.sam_cookie.clone());
                csrf = Some(creds.sam_csrf.clone());
                d.mutations.push("as a tech".into());
                d.expect = Some(Expect::Status(403));
            }
            // a bad path id
            70..=74 if d.id_text.is_some() => {
                d.bad_path_id(rng);
            }
            // cross-site
            75..=76 => {
                d.cross_site(rng);
            }
            // a hostile Host header
            77 => {
                let host = match rng.below(4) {
                    0 => "evil\"><script>alert(1)</script>".to_string(),
                    1 => "a b".to_string(),
                    2 => String::new(),
                    _ => "x".repeat(300),
                };
                d.mutations.push(format!("host {host:?}"));
                d.extra_headers.push(("host".into(), host));
            }
            // the content type
            78..=83 => {
                d.other_content_type(
                    rng,
                    &[
                        None,
                        Some("application/json"),
                        Some("text/plain"),
                        Some("multipart/form-data; boundary=xyz"),
                        Some("application/x-www-form-urlencoded-junk"),
                    ],
                );
            }
            // the whole body
            84..=99 => {
                let kind = rng.below(8);
                let body = match kind {
                    0 => Vec::new(),
                    1 => b"&&&===&=&".to_vec(),
                    2 => b"%ZZ%%%=%".to_vec(),
                    3 => {
                        let mut b = b"name=".to_vec();
                        b.extend_from_slice(&[0xff, 0xfe, 0xc3, 0x28, 0xa0, 0xa1]);
                        b.extend_from_slice(b"&description=%FF%FE%C3%28");
                        b
                    }
                    4 => vec![b'a'; OVERSIZED],
                    5 => b"{\"name\": \"json in a form\"}".to_vec(),
                    6 => "a=1&".repeat(30_000).into_bytes(),
                    _ => {
                        let mut b = form_encode_bytes(&fields);
                        b.extend(std::iter::repeat_n(b'&', OVERSIZED));
                        b
                    }
                };
                d.mutations
                    .push(format!("whole body #{kind} ({} bytes)", body.len()));
                raw_body = Some(body);
            }
            _ => {
                d.mutations.push("unchanged".into());
            }
        }
    }

    let mut all = Vec::new();
    if let Some(t) = &csrf
        && !is_login
    {
        all.push(("_csrf".to_string(), t.clone()));
    }
    if token_first {
        all.extend(fields);
    } else {
        let mut f = fields;
        f.extend(all);
        all = f;
    }
    let mut body = form_encode_bytes(&all);
    if let Some(raw) = raw_body {
        // A replaced body still carries the token in front, so it reaches the form reader.
        let mut b = Vec::new();
        if let Some(t) = &csrf
            && !is_login
        {
            b.extend_from_slice(b"_csrf=");
            b.extend_from_slice(t.as_bytes());
            b.push(b'&');
        }
        b.extend(raw);
        body = b;
    }
    let credential = cookie.map(|c| ("cookie".to_string(), c));
    d.finish(route, credential, body, rng)
}

/// What a generated request has come to so far: its path id, content type and extra headers,
/// its mutations and the answer they call for; form and API cases alike.
struct Draft {
    id_text: Option<String>,
    content_type: Option<String>,
    extra_headers: Vec<(String, String)>,
    mutations: Vec<String>,
    expect: Option<Expect>,
    authenticated: bool,
}

impl Draft {
    fn new(id_text: Option<String>, content_type: Option<String>, authenticated: bool) -> Self {
        Self {
            id_text,
            content_type,
            extra_headers: Vec::new(),
            mutations: Vec::new(),
            expect: None,
            authenticated,
        }
    }

    /// A bad path id in place of the route's own: not found.
    fn bad_path_id(&mut self, rng: &mut Rng) {
        let bad = rng.pick(BAD_IDS).to_string();
        self.mutations.push(format!("path id {bad}"));
        self.id_text = Some(bad);
        self.expect = Some(Expect::Status(404));
    }

    /// A cross-site request header: forbidden.
    fn cross_site(&mut self, rng: &mut Rng) {
        let (k, v) = *rng.pick(CROSS_SITE);
        self.extra_headers.push((k.into(), v.into()));
        self.mutations.push(format!("cross-site {k}: {v}"));
        self.expect = Some(Expect::Status(403));
    }

    /// One of `choices` in place of the request's content type.
    fn other_content_type(&mut self, rng: &mut Rng, choices: &[Option<&str>]) {
        self.content_type = rng.pick(choices).map(str::to_string);
        self.mutations
            .push(format!("content type {:?}", self.content_type));
    }

    /// The request line and headers of the case.
    fn finish(
        self,
        route: &'static Route,
        credential: Option<(String, String)>,
        body: Vec<u8>,
        rng: &mut Rng,
    ) -> Case {
        let uri = match &self.id_text {
            Some(id) => route.template.replace("{id}", id),
            None => route.template.to_string(),
        };
        let mut headers = Vec::new();
        if let Some(ct) = self.content_type {
            headers.push(("content-type".into(), ct));
        }
        headers.extend(credential);
        if rng.chance(50) {
            headers.push(("content-length".into(), body.len().to_string()));
        }
        headers.extend(self.extra_headers);
        // Only a request changed in one way has a certain answer.
        let expect = self.expect.filter(|_| self.mutations.len() == 1);
        Case {
            route,
            uri,
            headers,
            body,
            mutations: self.mutations,
            expect,
            authenticated: self.authenticated,
        }
    }
}

/// A path into a JSON value.
#[derive(Clone, Debug)]
enum Seg {
    Key(String),
    Idx(usize),
}

fn json_paths(v: &Value, prefix: &mut Vec<Seg>, out: &mut Vec<Vec<Seg>>) {
    match v {
        Value::Object(map) => {
            for (k, child) in map {
                prefix.push(Seg::Key(k.clone()));
                out.push(prefix.clone());
                json_paths(child, prefix, out);
                prefix.pop();
            }
        }
        Value::Array(items) => {
            for (i, child) in items.iter().enumerate() {
                prefix.push(Seg::Idx(i));
                out.push(prefix.clone());
                json_paths(child, prefix, out);
                prefix.pop();
            }
        }
        _ => {}
    }
}

fn show_path(path: &[Seg]) -> String {
    path.iter()
        .map(|s| match s {
            Seg::Key(k) => format!(".{k}"),
            Seg::Idx(i) => format!("[{i}]"),
        })
        .collect()
}

fn node<'a>(v: &'a Value, path: &[Seg]) -> Option<&'a Value> {
    let mut cur = v;
    for seg in path {
        cur = match seg {
            Seg::Key(k) => cur.get(k.as_str())?,
            Seg::Idx(i) => cur.get(*i)?,
        };
    }
    Some(cur)
}

fn node_mut<'a>(v: &'a mut Value, path: &[Seg]) -> Option<&'a mut Value> {
    let mut cur = v;
    for seg in path {
        cur = match seg {
            Seg::Key(k) => cur.get_mut(k.as_str())?,
            Seg::Idx(i) => cur.get_mut(*i)?,
        };
    }
    Some(cur)
}

const PLACEHOLDER: &str = "\u{1}hostile\u{1}";

/// Generates one API request from the route's base JSON.
fn api_case(route: &'static Route, fx: &Fixture, creds: &Creds, n: u64, rng: &mut Rng) -> Case {
    let mut value = base_json(route.template, n, rng);
    let mut d = Draft::new(
        fx.id_text(route),
        Some("application/json".to_string()),
        true,
    );
    let mut raws: Vec<String> = Vec::new();
    let mut auth = Some(format!("Bearer {}", creds.token));
    let mut raw_body: Option<Vec<u8>> = None;

    let rounds = 1 + rng.below(3);
    for _ in 0..rounds {
        let mut paths = Vec::new();
        json_paths(&value, &mut Vec::new(), &mut paths);
        let op = rng.below(100);
        match op {
            // a value replaced by a hostile one
            0..=44 if !paths.is_empty() => {
                let path = rng.pick(&paths).clone();
                let raw = hostile_json(rng);
                d.mutations.push(format!(
                    "{} = {}",
                    show_path(&path),
                    raw.chars().take(60).collect::<String>()
                ));
                if let Some(node) = node_mut(&mut value, &path) {
                    *node = Value::String(format!("{PLACEHOLDER}{}", raws.len()));
                    raws.push(raw);
                }
            }
            // a value removed
            45..=56 if !paths.is_empty() => {
                let path = rng.pick(&paths).clone();
                d.mutations.push(format!("without {}", show_path(&path)));
                let (last, parent) = path.split_last().unwrap();
                if let Some(p) = node_mut(&mut value, parent) {
                    match (last, p) {
                        (Seg::Key(k), Value::Object(map)) => {
                            map.remove(k);
                        }
                        (Seg::Idx(i), Value::Array(items)) if *i < items.len() => {
                            items.remove(*i);
                        }
                        _ => {}
                    }
                }
            }
            // an extra field
            57..=64 => {
                let key = rng
                    .pick(&[
                        "zzz",
                        "id",
                        "created_at",
                        "user_id",
                        "<script>",
                        "__proto__",
                    ])
                    .to_string();
                let raw = hostile_json(rng);
                d.mutations.push(format!(
                    "extra {key} = {}",
                    raw.chars().take(40).collect::<String>()
                ));
                let mut objects = vec![Vec::new()];
                objects.extend(
                    paths
                        .iter()
                        .filter(|p| node(&value, p).is_some_and(Value::is_object))
                        .cloned(),
                );
                let at = rng.pick(&objects).clone();
                if let Some(Value::Object(map)) = node_mut(&mut value, &at) {
                    map.insert(key, Value::String(format!("{PLACEHOLDER}{}", raws.len())));
                    raws.push(raw);
                }
            }
            // the bearer token
            65..=69 => {
                auth = rng
                    .pick(&[
                        None,
                        Some("Bearer ".to_string()),
                        Some("Bearer lp_forged".to_string()),
                        Some(format!("bearer {}", creds.token)),
                        Some(format!("Basic {}", creds.token)),
                        Some(format!("Bearer {}x", creds.token)),
                        Some(format!("Bearer {}", "A".repeat(5000))),
                    ])
                    .clone();
                d.authenticated = false;
                d.mutations.push("no valid token".into());
                d.expect = Some(Expect::Status(401));
            }
            // a bad path id
            70..=73 if d.id_text.is_some() => {
                d.bad_path_id(rng);
            }
            // cross-site
            74..=75 => {
                d.cross_site(rng);
            }
            // the content type
            76..=81 => {
                d.other_content_type(
                    rng,
                    &[
                        None,
                        Some("text/plain"),
                        Some("application/x-www-form-urlencoded"),
                        Some("text/json"),
                        Some("multipart/form-data; boundary=xyz"),
                    ],
                );
                d.expect = Some(Expect::Status(422));
            }
            // the whole body
            82..=99 => {
                let kind = rng.below(14);
                let body: Vec<u8> = match kind {
                    0 => Vec::new(),
                    1 => b"null".to_vec(),
                    2 => b"[]".to_vec(),
                    3 => b"\"a string\"".to_vec(),
                    4 => b"{".to_vec(),
                    5 => {
                        let text = value.to_string();
                        let cut = rng.below(text.len().max(1));
                        text.as_bytes()[..cut].to_vec()
                    }
                    6 => {
                        let mut b = value.to_string().into_bytes();
                        b.extend_from_slice(b" trailing garbage");
                        b
                    }
                    7 => {
                        let mut b = b"{\"name\": \"".to_vec();
                        b.extend_from_slice(&[0xff, 0xfe, 0xc3, 0x28]);
                        b.extend_from_slice(b"\", \"description\": \"x\"}");
                        b
                    }
                    8 => format!("{}{}", "[".repeat(100_000), "]".repeat(100_000)).into_bytes(),
                    9 => json!({"name": "x".repeat(OVERSIZED), "description": "x"})
                        .to_string()
                        .into_bytes(),
                    10 => b"name=Test+Customer&description=x".to_vec(),
                    11 => {
                        let mut b = b"\xef\xbb\xbf".to_vec();
                        b.extend_from_slice(value.to_string().as_bytes());
                        b
                    }
                    12 => {
                        // every key twice, the second time hostile
                        let text = value.to_string();
                        let inner = text.trim_start_matches('{').trim_end_matches('}');
                        format!("{{{inner}, {}}}", dup_keys(&value, rng)).into_bytes()
                    }
                    _ => vec![0u8; 1024],
                };
                d.mutations
                    .push(format!("whole body #{kind} ({} bytes)", body.len()));
                raw_body = Some(body);
            }
            _ => d.mutations.push("unchanged".into()),
        }
    }

    let body = match raw_body {
        Some(b) => b,
        None => {
            let mut text = value.to_string();
            for (i, raw) in raws.iter().enumerate() {
                let quoted = Value::String(format!("{PLACEHOLDER}{i}")).to_string();
                text = text.replace(&quoted, raw);
            }
            text.into_bytes()
        }
    };
    let credential = auth.map(|a| ("authorization".to_string(), a));
    d.finish(route, credential, body, rng)
}

fn dup_keys(value: &Value, rng: &mut Rng) -> String {
    let Value::Object(map) = value else {
        return "\"x\": 1".into();
    };
    map.keys()
        .map(|k| format!("{}: {}", Value::String(k.clone()), hostile_json(rng)))
        .collect::<Vec<_>>()
        .join(", ")
}

async fn send(app: &TestApp, case: &Case) -> Reply {
    let mut req = Request::builder().method(case.route.method).uri(&case.uri);
    for (k, v) in &case.headers {
        req = req.header(k.as_str(), v.as_str());
    }
    let req = req
        .body(Body::from(case.body.clone()))
        .unwrap_or_else(|e| panic!("request builds ({e}): {}", case.describe()));
    app.send(req).await
}

// ---------------------------------------------------------------------------------------------
// The database's state.

/// A separate connection to the test database: `PRAGMA data_version` on it changes exactly when
/// another connection commits, and a digest of every row of every table shows what changed (the
/// search index, a virtual table with shadow tables, is left out: it is derived from customers
/// and cars, which are digested).
struct Probe {
    conn: SqliteConnection,
    tables: Vec<(String, String)>,
}

type Digest = Vec<(String, Option<String>)>;

impl Probe {
    async fn open(app: &TestApp) -> Self {
        let file: String =
            sqlx::query_scalar("SELECT file FROM pragma_database_list WHERE name = 'main'")
                .fetch_one(&app.pool)
                .await
                .unwrap();
        let options = SqliteConnectOptions::new().filename(&file);
        let mut conn = SqliteConnection::connect_with(&options).await.unwrap();
        let names: Vec<String> = sqlx::query_scalar(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'
               AND name NOT IN (SELECT name FROM pragma_table_list
                                WHERE type IN ('shadow', 'virtual'))
             ORDER BY name",
        )
        .fetch_all(&mut conn)
        .await
        .unwrap();
        let mut tables = Vec::new();
        for name in names {
            let cols: Vec<String> = sqlx::query_scalar(AssertSqlSafe(format!(
                "SELECT name FROM pragma_table_info('{name}') ORDER BY cid"
            )))
            .fetch_all(&mut conn)
            .await
            .unwrap();
            let row = cols
                .iter()
                .map(|c| format!("quote(\"{c}\")"))
                .collect::<Vec<_>>()
                .join(" || char(31) || ");
            let sql = format!(
                "SELECT group_concat(r, char(30)) FROM \
                 (SELECT rowid || char(31) || {row} AS r FROM \"{name}\" ORDER BY rowid)"
            );
            tables.push((name, sql));
        }
        Self { conn, tables }
    }

    async fn data_version(&mut self) -> i64 {
        sqlx::query_scalar("PRAGMA data_version")
            .fetch_one(&mut self.conn)
            .await
            .unwrap()
    }

    async fn digest(&mut self) -> Digest {
        let mut out = Vec::with_capacity(self.tables.len());
        for (name, sql) in &self.tables {
            let rows: Option<String> = sqlx::query_scalar(AssertSqlSafe(sql.clone()))
                .fetch_one(&mut self.conn)
                .await
                .unwrap();
            out.push((name.clone(), rows));
        }
        out
    }

    async fn count(&mut self, table: &str) -> i64 {
        sqlx::query_scalar(AssertSqlSafe(format!("SELECT COUNT(*) FROM \"{table}\"")))
            .fetch_one(&mut self.conn)
            .await
            .unwrap()
    }
}

/// The tables whose content differs, ignoring `except`.
fn changed_tables(before: &Digest, after: &Digest, except: &[&str]) -> Vec<String> {
    let mut out = Vec::new();
    for ((name, a), (name2, b)) in before.iter().zip(after) {
        assert_eq!(name, name2, "the schema changed under the test");
        if a != b && !except.contains(&name.as_str()) {
            out.push(name.clone());
        }
    }
    if before.len() != after.len() {
        out.push("(table list)".into());
    }
    out
}

// ---------------------------------------------------------------------------------------------
// The run.

#[derive(Default)]
struct Tally {
    requests: usize,
    accepted: BTreeMap<u16, usize>,
    rejected: BTreeMap<u16, usize>,
    per_route: BTreeMap<String, (usize, usize)>,
    expectations_checked: usize,
    digests_compared: usize,
    form_422_without_field_message: usize,
    /// Form 422s whose message is not beside any field: route and mutations of the first few.
    alert_only: Vec<String>,
    /// Failures grouped by route and kind: how many, and the first two in full.
    failures: BTreeMap<String, (usize, Vec<String>)>,
    failure_count: usize,
}

impl Tally {
    fn fail(&mut self, seed: u64, index: usize, case: &Case, why: String) {
        let kind: String = why
            .split(':')
            .next()
            .unwrap_or("")
            .chars()
            .take(90)
            .collect();
        let key = format!("{} {}: {kind}", case.route.method, case.route.template);
        self.note(
            key,
            format!(
                "case {index} (seed {seed:#x}): {why}\n  {}",
                case.describe()
            ),
        );
    }

    fn note(&mut self, key: String, detail: String) {
        self.failure_count += 1;
        let group = self.failures.entry(key).or_default();
        group.0 += 1;
        if group.1.len() < 2 {
            group.1.push(detail);
        }
    }

    fn report(&self) -> String {
        let mut out = String::new();
        for (key, (n, examples)) in &self.failures {
            let _ = writeln!(out, "== {n} x {key}");
            for e in examples {
                let _ = writeln!(out, "{e}\n");
            }
        }
        out
    }
}

fn env_or<T: std::str::FromStr>(name: &str, default: T) -> T {
    std::env::var(name)
        .ok()
        .and_then(|v| {
            let v = v.trim();
            match v.strip_prefix("0x") {
                Some(hex) => u64::from_str_radix(hex, 16).ok()?.to_string().parse().ok(),
                None => v.parse().ok(),
            }
        })
        .unwrap_or(default)
}

fn content_type(reply: &Reply) -> &str {
    reply
        .headers
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("")
}

fn raw_markup(body: &str) -> Option<&'static str> {
    MARKUP_MARKERS.iter().copied().find(|m| body.contains(m))
}

async fn created_id(app: &TestApp, token: &str, path: &str, body: Value) -> i64 {
    let r = app.post_json(path, token, body).await;
    assert_eq!(r.status, StatusCode::CREATED, "{path}: {}", r.body);
    r.json()["id"].as_i64().unwrap()
}

#[tokio::test]
async fn thousands_of_hostile_requests_change_nothing_they_are_refused() {
    let seed: u64 = env_or("LOCKPOINT_HOSTILE_SEED", DEFAULT_SEED);
    let cases: usize = env_or("LOCKPOINT_HOSTILE_CASES", DEFAULT_CASES);
    println!("hostile input: seed {seed:#x}, {cases} requests");
    let started = Instant::now();

    // Every write route in the route table has a generator (each panics naming a route it lacks).
    assert!(ROUTES.len() >= 30, "{} write routes", ROUTES.len());
    for route in ROUTES.iter() {
        let mut rng = Rng::new(seed);
        match route.kind {
            Kind::Form => drop(base_form(route.template, 0, &mut rng)),
            Kind::Api => drop(base_json(route.template, 0, &mut rng)),
        }
    }

    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let sam = app.login("sam").await;
    let token = app.token("sam").await;
    let creds = Creds {
        boss_cookie: boss.cookie.clone(),
        boss_csrf: boss.csrf.clone(),
        sam_cookie: sam.cookie.clone(),
        sam_csrf: sam.csrf.clone(),
        token: token.clone(),
    };
    let mut rng = Rng::new(seed);

    // The records the requests aim at.
    let t = token.as_str();
    let customer = created_id(
        &app,
        t,
        "/api/v1/customers",
        base_json("/customers", 0, &mut rng),
    )
    .await;
    let car = created_id(
        &app,
        t,
        &format!("/api/v1/customers/{customer}/cars"),
        base_json("/cars/{id}", 0, &mut rng),
    )
    .await;
    let build_edit = created_id(&app, t, &format!("/api/v1/cars/{car}/builds"), build_json()).await;
    let build_entries =
        created_id(&app, t, &format!("/api/v1/cars/{car}/builds"), build_json()).await;
    let b = build_entries;
    let setup = created_id(
        &app,
        t,
        &format!("/api/v1/builds/{b}/setups"),
        base_json("/setups/{id}", 0, &mut rng),
    )
    .await;
    let mut first_height = base_json("/measurements/{id}", 0, &mut rng);
    first_height["new_disc"] = json!(true);
    let height = created_id(
        &app,
        t,
        &format!("/api/v1/builds/{b}/measurements"),
        first_height,
    )
    .await;
    let bench = created_id(
        &app,
        t,
        &format!("/api/v1/builds/{b}/bench-tests"),
        base_json("/bench-tests/{id}", 0, &mut rng),
    )
    .await;
    let pass = created_id(
        &app,
        t,
        &format!("/api/v1/builds/{b}/passes"),
        base_json("/passes/{id}", 0, &mut rng),
    )
    .await;
    boss.post_saved(
        "/users",
        &[
            ("username", "spare-tech"),
            ("password", "long enough password"),
            ("role", "tech"),
        ],
    )
    .await;
    let spare_user: i64 = sqlx::query_scalar("SELECT id FROM users WHERE username = 'spare-tech'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let printed = boss
        .post_saved(&format!("/builds/{build_edit}/sheets"), &[])
        .await;
    let sheet: i64 = crate::support::id_from(printed.location()).parse().unwrap();
    boss.post_saved(&format!("/sheets/{sheet}/links"), &[("valid_days", "30")])
        .await;
    let link: i64 = sqlx::query_scalar("SELECT id FROM sheet_links")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let boss_id: i64 = sqlx::query_scalar("SELECT id FROM users WHERE username = 'boss'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let spare_customer = created_id(
        &app,
        t,
        "/api/v1/customers",
        base_json("/customers", 0, &mut rng),
    )
    .await;
    let fx = Fixture {
        customer,
        spare_customer,
        car,
        build_edit,
        build_entries,
        setup,
        height,
        bench,
        pass,
        sheet,
        link,
        spare_user,
    };

    // The detector sees a write, and sees nothing when nothing is written.
    let mut probe = Probe::open(&app).await;
    let v0 = probe.data_version().await;
    let d0 = probe.digest().await;
    let v1 = probe.data_version().await;
    assert_eq!(v0, v1, "reading changes nothing");
    sqlx::query("UPDATE shop_settings SET phone = phone || '1'")
        .execute(&app.pool)
        .await
        .unwrap();
    let v2 = probe.data_version().await;
    let d2 = probe.digest().await;
    assert_ne!(v1, v2, "data_version sees a commit from the app's pool");
    let changed = changed_tables(&d0, &d2, &[]);
    assert!(
        changed.iter().any(|t| t == "shop_settings"),
        "the digest sees the change: {changed:?}"
    );

    let mut tally = Tally::default();
    let mut cached: Option<(i64, Digest)> = None;
    for index in 0..cases {
        let route = &ROUTES[index % ROUTES.len()];
        let n = index as u64 + 1;
        let is_login = route.template == "/login";
        let is_logout = route.template == "/logout";

        // The sign-in throttle is not under test: forget earlier failures so nothing waits.
        if is_login {
            sqlx::query("DELETE FROM login_throttle")
                .execute(&app.pool)
                .await
                .unwrap();
        }
        // Signing out ends a session: give each attempt a fresh one of its own.
        let session = if is_logout {
            let secret = lockpoint::auth::new_secret("");
            let csrf = lockpoint::auth::new_secret("");
            let mut conn = app.pool.acquire().await.unwrap();
            lockpoint::db::sessions::create(
                &mut conn,
                &lockpoint::auth::hash_secret(&secret),
                boss_id,
                &csrf,
            )
            .await
            .unwrap();
            Some((format!("lockpoint_session={secret}"), csrf))
        } else {
            None
        };
        let case = match route.kind {
            Kind::Form => form_case(route, &fx, &creds, session, n, &mut rng),
            Kind::Api => api_case(route, &fx, &creds, n, &mut rng),
        };

        let version_before = probe.data_version().await;
        // A content digest before: always for sign-in (a refused sign-in is logged), and for
        // every route's request in one round of twelve besides, so the exact commit check is
        // backed by content.
        let round = index / ROUTES.len();
        let full = is_login || round % 12 == (index % ROUTES.len()) % 12;
        let digest_before = if full {
            match cached.take() {
                Some((v, d)) if v == version_before => Some(d),
                _ => Some(probe.digest().await),
            }
        } else {
            None
        };
        let failures_before = if is_login {
            probe.count("login_throttle").await
        } else {
            0
        };

        let reply = send(&app, &case).await;
        tally.requests += 1;
        let status = reply.status.as_u16();
        let location = reply.location().to_string();
        let to_login = reply.status == StatusCode::SEE_OTHER && location.starts_with("/login");
        let refused = reply.status.is_client_error() || (to_login && !case.authenticated);
        let entry = tally
            .per_route
            .entry(format!("{} {}", route.method, route.template));
        let e = entry.or_default();
        if refused {
            e.1 += 1;
            *tally.rejected.entry(status).or_default() += 1;
        } else {
            e.0 += 1;
            *tally.accepted.entry(status).or_default() += 1;
        }

        if reply.status.is_server_error() {
            tally.fail(
                seed,
                index,
                &case,
                format!("server error {status}: {}", reply.body),
            );
        }
        if reply.status.is_informational() || status >= 600 {
            tally.fail(seed, index, &case, format!("odd status {status}"));
        }
        if to_login && case.authenticated && !is_logout {
            tally.fail(
                seed,
                index,
                &case,
                "a live session was sent to sign in".into(),
            );
        }
        if let Some(expect) = case.expect {
            tally.expectations_checked += 1;
            let ok = match expect {
                Expect::Status(s) => status == s,
                Expect::LoginRedirect => to_login,
            };
            if !ok {
                tally.fail(
                    seed,
                    index,
                    &case,
                    format!(
                        "expected {expect:?}, got {status} {location}: {}",
                        reply.body.chars().take(300).collect::<String>()
                    ),
                );
            }
        }

        // Markup comes back only inside JSON, never in a page.
        let ct = content_type(&reply).to_string();
        if let Some(marker) = raw_markup(&reply.body)
            && !ct.starts_with("application/json")
        {
            tally.fail(
                seed,
                index,
                &case,
                format!("raw markup {marker:?} in a {ct:?} answer ({status})"),
            );
        }
        if let Some(marker) = raw_markup(&location) {
            tally.fail(
                seed,
                index,
                &case,
                format!("raw markup {marker:?} in Location"),
            );
        }

        // A 422 names the field.
        if reply.status == StatusCode::UNPROCESSABLE_ENTITY {
            match route.kind {
                Kind::Api => {
                    let named = serde_json::from_str::<Value>(&reply.body)
                        .ok()
                        .is_some_and(|v| {
                            v["field"].as_str().is_some_and(|f| !f.is_empty())
                                && v["error"].as_str().is_some_and(|e| !e.is_empty())
                        });
                    if !named || !ct.starts_with("application/json") {
                        tally.fail(
                            seed,
                            index,
                            &case,
                            format!("422 without a named field: {ct} {}", reply.body),
                        );
                    }
                }
                Kind::Form => {
                    let msg = reply.body.contains("class=\"msg");
                    let alert = reply.body.contains("class=\"alert")
                        || reply.body.contains("role=\"alert\"");
                    if !msg && !alert {
                        tally.fail(seed, index, &case, "422 page names no field".into());
                    } else if !msg {
                        tally.form_422_without_field_message += 1;
                        if tally.alert_only.len() < 10 {
                            tally.alert_only.push(format!(
                                "{} {}: {}",
                                route.method,
                                case.uri,
                                case.mutations.join("; ")
                            ));
                        }
                    }
                }
            }
        }

        // A refused request leaves the database as it was: it commits nothing (a refused
        // sign-in only logs the failure), and where a digest was taken the content agrees.
        let version_after = probe.data_version().await;
        let committed = version_after != version_before;
        let after = match &digest_before {
            Some(_) if committed => Some(probe.digest().await),
            _ => None,
        };
        if refused {
            let except: &[&str] = if is_login { &["login_throttle"] } else { &[] };
            let changed = digest_before.as_ref().map(|before| {
                tally.digests_compared += 1;
                changed_tables(before, after.as_ref().unwrap_or(before), except)
            });
            if let Some(changed) = changed.as_ref().filter(|c| !c.is_empty()) {
                tally.fail(
                    seed,
                    index,
                    &case,
                    format!("refused with {status} but changed {changed:?}"),
                );
            } else if committed && !is_login {
                tally.fail(
                    seed,
                    index,
                    &case,
                    format!("refused with {status} but committed a write"),
                );
            }
            if is_login {
                // A failure counts against the client and the name: at most two new rows.
                let logged = probe.count("login_throttle").await - failures_before;
                if !(0..=2).contains(&logged) {
                    tally.fail(
                        seed,
                        index,
                        &case,
                        format!("{logged} failed sign-ins logged"),
                    );
                }
            }
        }
        if let Some(before) = digest_before {
            cached = Some((version_after, after.unwrap_or(before)));
        }
    }
    let fuzz_time = started.elapsed();

    // Everything stored since shows escaped wherever it is displayed.
    let mut pages = vec![
        "/".to_string(),
        "/settings".to_string(),
        "/users".to_string(),
        "/customers/deleted".to_string(),
        "/customers?q=%3Cscript%3Ealert(1)%3C%2Fscript%3E".to_string(),
        format!("/sheets/{}", fx.sheet),
    ];
    for (table, path) in [
        ("customers", "/customers/"),
        ("cars", "/cars/"),
        ("builds", "/builds/"),
    ] {
        let ids: Vec<i64> = sqlx::query_scalar(AssertSqlSafe(format!(
            "SELECT id FROM {table} ORDER BY id DESC LIMIT 40"
        )))
        .fetch_all(&app.pool)
        .await
        .unwrap();
        for id in ids {
            pages.push(format!("{path}{id}"));
            pages.push(format!("{path}{id}/edit"));
        }
    }
    pages.push(format!("/builds/{}", fx.build_entries));
    pages.push(format!("/builds/{}/tune", fx.build_entries));
    pages.push(format!("/builds/{}/history", fx.build_entries));
    pages.push(format!("/builds/{}/history", fx.build_edit));
    let mut pages_checked = 0;
    for path in &pages {
        let r = boss.get(path).await;
        pages_checked += 1;
        if r.status.is_server_error() {
            tally.note(
                format!("GET {path}: server error"),
                format!("{} {}", r.status, r.body),
            );
        }
        if let Some(marker) = raw_markup(&r.body) {
            tally.note(
                format!("GET {path}: raw markup"),
                format!("raw markup {marker:?}"),
            );
        }
    }
    let stored_markup: i64 = sqlx::query_scalar(
        "SELECT (SELECT COUNT(*) FROM customers WHERE name LIKE '%<%' OR notes LIKE '%<%')
              + (SELECT COUNT(*) FROM cars WHERE description LIKE '%<%' OR notes LIKE '%<%')
              + (SELECT COUNT(*) FROM builds WHERE label LIKE '%<%' OR notes LIKE '%<%')",
    )
    .fetch_one(&app.pool)
    .await
    .unwrap();

    // What was accepted obeys the records' rules, and no SQL fragment ran.
    let broken: i64 = sqlx::query_scalar(
        "SELECT (SELECT COUNT(*) FROM builds WHERE facing_id_mm >= facing_od_mm
                    OR disc_count NOT BETWEEN 1 AND 3 OR spring_count NOT BETWEEN 1 AND 24)
              + (SELECT COUNT(*) FROM customers WHERE trim(name) = '' OR length(name) > 120)
              + (SELECT COUNT(*) FROM cover_heights WHERE passes < 0 OR height_mm <= 0)
              + (SELECT COUNT(*) FROM setup_changes WHERE adjuster_turns < 0)
              + (SELECT COUNT(*) FROM users WHERE role NOT IN ('admin', 'tech'))",
    )
    .fetch_one(&app.pool)
    .await
    .unwrap();
    if broken != 0 {
        tally.note(
            "stored records".into(),
            format!("{broken} stored rows break the records' rules"),
        );
    }
    for table in ["customers", "cars", "builds", "users", "sessions"] {
        let n = app.count(table).await;
        assert!(n > 0, "{table} is still there and not empty");
    }
    let roles: Vec<String> =
        sqlx::query_scalar("SELECT role FROM users WHERE username IN ('boss', 'sam') ORDER BY id")
            .fetch_all(&app.pool)
            .await
            .unwrap();
    assert_eq!(
        roles,
        ["admin", "tech"],
        "no request changed who may do what"
    );

    let accepted: usize = tally.accepted.values().sum();
    let rejected: usize = tally.rejected.values().sum();
    println!(
        "hostile input: {} requests over {} routes in {:.1} s (seed {seed:#x})",
        tally.requests,
        tally.per_route.len(),
        fuzz_time.as_secs_f64()
    );
    println!("  accepted {accepted}: {:?}", tally.accepted);
    println!("  rejected {rejected}: {:?}", tally.rejected);
    println!(
        "  single-cause answers checked {}, refusals with a content digest compared {}, \
         form 422s with only the summary alert {}",
        tally.expectations_checked, tally.digests_compared, tally.form_422_without_field_message
    );
    println!(
        "  pages checked for escaping {pages_checked} (stored records with markup: {stored_markup})"
    );
    for line in &tally.alert_only {
        println!("  422 with only the summary alert: {line}");
    }
    for (route, (ok, no)) in &tally.per_route {
        println!("    {route:<40} accepted {ok:>4}  rejected {no:>4}");
    }
    assert!(
        tally.failures.is_empty(),
        "{} failures (seed {seed:#x}) in {} groups:\n\n{}",
        tally.failure_count,
        tally.failures.len(),
        tally.report()
    );
    assert!(tally.requests >= 5000 || cases < 5000);
    assert!(
        accepted > 0 && rejected > 0,
        "the mix has both accepted and refused requests"
    );
}

/// `next` values that try to leave the site or break the `Location` header after sign-in.
const HOSTILE_NEXT: &[&str] = &[
    "/\t/evil.example",
    "/%09/evil.example",
    "/\n/evil.example",
    "/\r/evil.example",
    "/\x0b/evil.example",
    "/\x7f/evil.example",
    "/\0/evil.example",
    "/\\evil.example",
    "/\\/evil.example",
    "//evil.example",
    "///evil.example",
    "https://evil.example/",
    "http:/evil.example",
    "javascript:alert(1)",
    " /evil.example",
    "/ /evil.example",
    "/\u{2028}/evil.example",
    "/é",
    "/customers\r\nSet-Cookie: x=1",
    "",
];

/// What a browser may be sent to after sign-in: a path on this site and nothing a browser could
/// read as another host.
#[track_caller]
fn assert_local(location: &str, next: &str) {
    let plain = location.bytes().all(|b| {
        b.is_ascii_alphanumeric()
            || matches!(
                b,
                b'/' | b'_' | b'.' | b'~' | b'%' | b'?' | b'&' | b'=' | b'#' | b'-'
            )
    });
    assert!(
        plain && location.starts_with('/') && !location.starts_with("//"),
        "next={next:?} sent the browser to {location:?}"
    );
}

#[tokio::test]
async fn sign_ins_with_hostile_next_values_stay_on_the_site_and_never_fail() {
    let app = TestApp::new().await;
    for next in HOSTILE_NEXT {
        // Signing in with the right password: the session is made and the browser stays here.
        let reply = app
            .post_login("boss", crate::support::PASSWORD, Some(next))
            .await;
        assert_eq!(
            reply.status,
            StatusCode::SEE_OTHER,
            "next={next:?}: {}",
            reply.body
        );
        assert!(reply.headers.get(header::SET_COOKIE).is_some(), "{next:?}");
        assert_local(reply.location(), next);
        // `%09` as three characters is a plain path on this site (no browser reads it as a tab).
        // A form value is trimmed, so " /evil.example" is the local path "/evil.example".
        let expected = match *next {
            "/%09/evil.example" => next,
            " /evil.example" => "/evil.example",
            _ => "/",
        };
        assert_eq!(reply.location(), expected, "next={next:?}");

        // A signed-in browser following a crafted sign-in link goes nowhere else either.
        let cookie = reply.headers[header::SET_COOKIE]
            .to_str()
            .unwrap()
            .split(';')
            .next()
            .unwrap()
            .to_string();
        let query = crate::support::form_encode(&[("next", next)]);
        let followed = app.get(&format!("/login?{query}"), Some(&cookie)).await;
        assert_eq!(followed.status, StatusCode::SEE_OTHER, "{next:?}");
        // The query string is not trimmed: " /evil.example" is not a plain path there.
        let expected = if *next == "/%09/evil.example" {
            next
        } else {
            "/"
        };
        assert_eq!(followed.location(), expected, "GET /login?{query}");
    }

    // A plain local path is still followed, query and fragment included.
    let reply = app
        .post_login(
            "sam",
            crate::support::PASSWORD,
            Some("/customers?q=a%20b&page=2"),
        )
        .await;
    assert_eq!(reply.status, StatusCode::SEE_OTHER);
    assert_eq!(reply.location(), "/customers?q=a%20b&page=2");
}
