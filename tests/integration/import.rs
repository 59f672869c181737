//! The spreadsheet import through the API: a messy sheet checked, refused, fixed and committed
//! all at once; the records read back through the API equal the sheet's values converted with
//! the exact factors.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::TestApp;

/// An invented shop's sheet, as people keep them: a blank line, trailing spaces, units in the
/// cells, a phone written two ways, a quoted cell with a comma, a formula-looking note, a
/// `0.5"` cell, and a date in another order than the rest.
const MESSY: &str = "Customer,Tel,E-mail,Vehicle,Weight,Build,Disc OD,Disc ID,Springs,Spring rate,Shims,Release,Checked on,Cover height,Passes,Notes\n\
Dana Testwell ,555-0142,dana@example.test,Orange fastback ,3150,Spring 2019,7.25 in,4.75 in,6,300,0.010 0.010 0.020,0.5\",3/14/2019,2.100 in,12,=SUM(A1:A3)\n\
\n\
Dana Testwell,(555) 0142,,Orange fastback,3150,Autumn 2019,184 mm,4.75 in,6,310,,12 mm,2019-10-02,53 mm,3,\n\
Eli Sample,555 0199,,\"Green wagon, long roof\",2900,,,,,,,,,,,from the card index\n\
Fay Example,555-0177,fay@example.test,Grey coupe,3300,Race,7.25 in,4.75 in,6,280,,0.45 in,07/04/2019,2.05 in,0,\n";

fn columns() -> Value {
    json!({
        "customer_name": "Customer", "customer_phone": "Tel", "customer_email": "E-mail",
        "customer_notes": "Notes", "car_description": "Vehicle", "car_weight_kg": "Weight",
        "build_label": "Build", "build_facing_od_mm": "Disc OD", "build_facing_id_mm": "Disc ID",
        "build_spring_count": "Springs", "build_spring_rate_n_per_mm": "Spring rate",
        "build_shim_stack_mm": "Shims", "build_release_travel_mm": "Release",
        "measurement_measured_on": "Checked on", "measurement_height_mm": "Cover height",
        "measurement_passes": "Passes"
    })
}

fn units() -> Value {
    json!({ "Weight": "lb", "Disc OD": "cell", "Disc ID": "cell", "Spring rate": "lbf/in",
            "Shims": "in", "Release": "cell", "Cover height": "cell" })
}

fn request(csv: &str, duplicates: Option<&str>, dry_run: bool) -> Value {
    let mut body = json!({ "file_name": "messy-shop.csv", "csv": csv, "columns": columns(),
        "units": units(), "date_order": "mdy", "dry_run": dry_run });
    if let Some(d) = duplicates {
        body["duplicates"] = json!(d);
    }
    body
}

fn at(problems: &Value) -> Vec<(u64, String)> {
    problems
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            (
                p["line"].as_u64().unwrap(),
                p["column"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

/// A number of the JSON answer `body` as the server wrote it, read with Rust's correctly
/// rounded parser (serde_json's default float parsing may land one step away).
fn raw(body: &str, key: &str) -> f64 {
    let at = body
        .find(&format!("\"{key}\":"))
        .unwrap_or_else(|| panic!("no {key} in {body}"));
    let rest = &body[at + key.len() + 3..];
    let end = rest.find([',', '}', ']']).unwrap_or(rest.len());
    rest[..end].trim().parse().unwrap()
}

/// A list of numbers of the answer, each read as [`raw`] does.
fn raw_list(body: &str, key: &str) -> Vec<f64> {
    let at = body.find(&format!("\"{key}\":[")).unwrap();
    let rest = &body[at + key.len() + 4..];
    rest[..rest.find(']').unwrap()]
        .split(',')
        .map(|x| x.trim().parse().unwrap())
        .collect()
}

#[tokio::test]
async fn a_messy_sheet_is_checked_refused_fixed_and_imported_exactly() {
    let app = TestApp::new().await;
    let token = app.token("boss").await;
    let api = |m: &'static str, p: String, b: Option<Value>| {
        let (app, token) = (&app, token.clone());
        async move { app.api(m, &p, Some(&token), b).await }
    };
    // A customer already in the shop, her phone written another way.
    let fay = api(
        "POST",
        "/api/v1/customers".into(),
        Some(json!({"name": "Fay Example", "phone": "555.0177"})),
    )
    .await;
    assert_eq!(fay.status, StatusCode::CREATED, "{}", fay.body);
    let fay_id = fay.json()["id"].as_i64().unwrap();

    // Dry run: the date written in another order and the customer already here are problems.
    let dry = api(
        "POST",
        "/api/v1/import/spreadsheet".into(),
        Some(request(MESSY, None, true)),
    )
    .await;
    assert_eq!(dry.status, StatusCode::OK, "{}", dry.body);
    let answer = dry.json();
    assert_eq!(answer["rows"], 4);
    assert_eq!(
        at(&answer["problems"]),
        vec![(4, "Checked on".to_string()), (6, "Tel".to_string())],
        "{}",
        answer["problems"]
    );
    assert_eq!(
        answer["problems"][0]["message"],
        "“2019-10-02” is not a date written month, day, year (as chosen for this file)"
    );
    assert_eq!(answer["duplicates"][0]["line"], 6);
    assert_eq!(answer["duplicates"][0]["customer_id"], fay_id);

    // A commit with problems left writes nothing and answers them.
    let refused = api(
        "POST",
        "/api/v1/import/spreadsheet".into(),
        Some(request(MESSY, None, false)),
    )
    .await;
    assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(at(&refused.json()["problems"]).len(), 2);
    assert_eq!(app.count("customers").await, 1);
    assert_eq!(app.count("cars").await, 0);
    assert_eq!(app.count("import_mappings").await, 0);

    // Fixed: the date in the file's order, the duplicate attached.
    let fixed = MESSY.replace("2019-10-02", "10/2/2019");
    let dry = api(
        "POST",
        "/api/v1/import/spreadsheet".into(),
        Some(request(&fixed, Some("attach"), true)),
    )
    .await;
    let answer = dry.json();
    assert_eq!(answer["problems"], json!([]), "{}", dry.body);
    for (k, v) in [
        ("customers_created", 2),
        ("cars_created", 3),
        ("builds_created", 3),
        ("measurements_created", 3),
        ("attached", 1),
        ("skipped", 0),
    ] {
        assert_eq!(answer[k], v, "{k}");
    }
    assert_eq!(answer["preview"].as_array().unwrap().len(), 4);
    assert_eq!(answer["preview"][3]["customer_id"], fay_id);
    // A dry run remembers nothing and writes nothing.
    assert_eq!(app.count("import_mappings").await, 0);
    assert_eq!(app.count("customers").await, 1);

    let done = api(
        "POST",
        "/api/v1/import/spreadsheet".into(),
        Some(request(&fixed, Some("attach"), false)),
    )
    .await;
    assert_eq!(done.status, StatusCode::OK, "{}", done.body);
    assert_eq!(done.json()["builds_created"], 3);
    assert_eq!(app.count("customers").await, 3);
    assert_eq!(app.count("cars").await, 3);
    assert_eq!(app.count("builds").await, 3);
    assert_eq!(app.count("cover_heights").await, 3);

    // Read back through the API: the sheet's values converted exactly.
    let found = api("GET", "/api/v1/customers?q=Testwell".into(), None).await;
    let dana = found.json()["customers"][0]["id"].as_i64().unwrap();
    let customer = api("GET", format!("/api/v1/customers/{dana}"), None)
        .await
        .json();
    assert_eq!(customer["name"], "Dana Testwell");
    assert_eq!(customer["phone"], "555-0142");
    assert_eq!(
        customer["notes"], "=SUM(A1:A3)",
        "a formula-looking cell is text"
    );
    let cars = api("GET", format!("/api/v1/customers/{dana}/cars"), None)
        .await
        .json();
    assert_eq!(cars.as_array().unwrap().len(), 1, "one car for both rows");
    assert_eq!(cars[0]["description"], "Orange fastback");
    let car_id = cars[0]["id"].as_i64().unwrap();
    let car = api("GET", format!("/api/v1/cars/{car_id}"), None)
        .await
        .body;
    // NIST SP 811 B.8: 1 lb = 0.45359237 kg.
    assert_eq!(raw(&car, "weight_kg"), 3150.0 * 0.45359237);
    let builds = api("GET", format!("/api/v1/cars/{car_id}/builds"), None)
        .await
        .json();
    let builds = builds.as_array().unwrap();
    assert_eq!(builds.len(), 2);
    let id_of = |label: &str| {
        builds.iter().find(|b| b["label"] == label).unwrap()["id"]
            .as_i64()
            .unwrap()
    };
    let (spring_id, autumn_id) = (id_of("Spring 2019"), id_of("Autumn 2019"));
    let spring = api("GET", format!("/api/v1/builds/{spring_id}"), None)
        .await
        .body;
    let autumn = api("GET", format!("/api/v1/builds/{autumn_id}"), None)
        .await
        .body;
    // NIST SP 811 B.8: 1 in = 25.4 mm.
    assert_eq!(raw(&spring, "facing_od_mm"), 7.25 * 25.4);
    assert_eq!(raw(&spring, "facing_id_mm"), 4.75 * 25.4);
    assert_eq!(raw(&autumn, "facing_od_mm"), 184.0);
    // 1 lbf/in = 0.175126835246476 N/mm (NIST SP 811 B.8: lbf and in).
    assert_eq!(
        raw(&spring, "spring_rate_n_per_mm"),
        300.0 * 0.175126835246476
    );
    assert_eq!(
        raw(&autumn, "spring_rate_n_per_mm"),
        310.0 * 0.175126835246476
    );
    // The 0.5" cell: 1 in = 25.4 mm.
    assert_eq!(raw(&spring, "release_travel_mm"), 0.5 * 25.4);
    assert_eq!(raw(&autumn, "release_travel_mm"), 12.0);
    assert_eq!(
        raw_list(&spring, "shim_stack_mm"),
        vec![0.010 * 25.4, 0.010 * 25.4, 0.020 * 25.4]
    );
    assert_eq!(raw(&spring, "spring_count"), 6.0);
    let heights = api(
        "GET",
        format!("/api/v1/builds/{spring_id}/measurements"),
        None,
    )
    .await
    .body;
    assert!(
        heights.contains("\"measured_on\":\"2019-03-14\""),
        "{heights}"
    );
    assert_eq!(raw(&heights, "height_mm"), 2.1 * 25.4);
    assert_eq!(raw(&heights, "passes"), 12.0);
    let heights = api(
        "GET",
        format!("/api/v1/builds/{autumn_id}/measurements"),
        None,
    )
    .await
    .body;
    assert!(
        heights.contains("\"measured_on\":\"2019-10-02\""),
        "{heights}"
    );
    assert_eq!(raw(&heights, "height_mm"), 53.0);

    // The customer already here got the car; no second Fay.
    let fay_cars = api("GET", format!("/api/v1/customers/{fay_id}/cars"), None)
        .await
        .json();
    assert_eq!(fay_cars[0]["description"], "Grey coupe");
    let fays: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM customers WHERE name = 'Fay Example'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    assert_eq!(fays, 1);

    // Every record made names the import, the file and who, in its history.
    let named: Vec<(String, String)> = sqlx::query_as(
        "SELECT table_name, username FROM audit_log WHERE action = 'create'
           AND table_name IN ('customers', 'cars', 'builds', 'cover_heights')
           AND NOT (table_name = 'customers' AND record_id = ?)",
    )
    .bind(fay_id)
    .fetch_all(&app.pool)
    .await
    .unwrap();
    assert_eq!(named.len(), 2 + 3 + 3 + 3, "{named:?}");
    for (table, who) in &named {
        assert_eq!(
            who, "boss (spreadsheet import of “messy-shop.csv”)",
            "{table}"
        );
    }

    // The mapping is remembered for the next file with this header.
    let again = api(
        "POST",
        "/api/v1/import/spreadsheet".into(),
        Some(json!({"file_name": "again.csv", "csv": fixed, "duplicates": "skip"})),
    )
    .await
    .json();
    assert_eq!(again["mapping"]["columns"], columns());
    assert_eq!(again["mapping"]["date_order"], "mdy");
    assert_eq!(again["dry_run"], true);
    assert_eq!(again["problems"], json!([]), "{again}");
    assert_eq!(again["skipped"], 4, "every row now meets a customer here");
}

#[tokio::test]
async fn limits_and_access_of_the_import() {
    let app = TestApp::new().await;
    let boss = app.token("boss").await;
    let sam = app.token("sam").await;
    let small = json!({"csv": "Name,Car\nAda Example,red\n",
        "columns": {"customer_name": "Name", "car_description": "Car"}});
    let tech = app
        .post_json("/api/v1/import/spreadsheet", &sam, small.clone())
        .await;
    assert_eq!(tech.status, StatusCode::FORBIDDEN);
    let ok = app
        .post_json("/api/v1/import/spreadsheet", &boss, small)
        .await;
    assert_eq!(ok.status, StatusCode::OK, "{}", ok.body);
    assert_eq!(ok.json()["customers_created"], 1);
    // Past 20 MB: refused with the limit named.
    let mut big = String::from("Name,Car\n");
    while big.len() <= 20 * 1024 * 1024 {
        big.push_str("Ada Example,a long enough car description to fill the file quickly\n");
    }
    let reply = app
        .post_json("/api/v1/import/spreadsheet", &boss, json!({"csv": big}))
        .await;
    assert_eq!(reply.status, StatusCode::PAYLOAD_TOO_LARGE);
    assert_eq!(reply.json()["field"], "csv");
    assert!(
        reply.json()["error"]
            .as_str()
            .unwrap()
            .contains("larger than 20 MB"),
        "{}",
        reply.body
    );
}
