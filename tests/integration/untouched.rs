//! Issue 21, item 6: saving a form the person did not touch stores exactly what was stored.
//! Every numeric field of every edit form (build, car, shop settings) holds a value that the
//! display rounds (each one 1.000037 times a plain figure), in both unit systems: open the
//! form, post it back as it came, and the stored values are the same, bit for bit.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::{Client, TestApp};

/// A value the forms' display rounds: `v` × 1.000037.
fn awkward(v: f64) -> f64 {
    v * 1.000037
}

/// Every named control of the `<form>` whose action is `action`, as it would be posted
/// (inputs with their value, checked boxes only, each select's selected option, textareas).
fn form_pairs(html: &str, action: &str) -> Vec<(String, String)> {
    let start = html
        .find(&format!("action=\"{action}\""))
        .unwrap_or_else(|| panic!("no form for {action}"));
    let end = start + html[start..].find("</form>").expect("form closes");
    let form = &html[start..end];
    let attr = |tag: &str, name: &str| -> Option<String> {
        let key = format!(" {name}=\"");
        let at = tag.find(&key)? + key.len();
        Some(unescape(&tag[at..at + tag[at..].find('"')?]))
    };
    let mut pairs = Vec::new();
    let mut rest = form;
    while let Some(lt) = rest.find('<') {
        rest = &rest[lt..];
        let gt = rest.find('>').expect("tag closes");
        let tag = &rest[..gt];
        if tag.starts_with("<input") {
            if let Some(name) = attr(tag, "name")
                && (!tag.contains("type=\"checkbox\"") || tag.contains(" checked"))
                && name != "_csrf"
            {
                pairs.push((name, attr(tag, "value").unwrap_or_default()));
            }
        } else if tag.starts_with("<textarea") {
            let name = attr(tag, "name").expect("named textarea");
            let body = &rest[gt + 1..];
            let text = &body[..body.find("</textarea>").expect("textarea closes")];
            pairs.push((name, unescape(text)));
        } else if tag.starts_with("<select") {
            let name = attr(tag, "name").expect("named select");
            let body = &rest[gt + 1..];
            let body = &body[..body.find("</select>").expect("select closes")];
            let chosen = body
                .split("<option")
                .skip(1)
                .find(|o| o[..o.find('>').unwrap_or(0)].contains("selected"))
                .or_else(|| body.split("<option").nth(1))
                .expect("an option");
            let value = attr(&format!("<option{chosen}"), "value").unwrap_or_default();
            pairs.push((name, value));
        }
        rest = &rest[gt..];
    }
    pairs
}

fn unescape(s: &str) -> String {
    s.replace("&quot;", "\"")
        .replace("&#34;", "\"")
        .replace("&#39;", "'")
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&amp;", "&")
}

/// Opens `page` and posts its form back to `action` as shown, but for the `changed` inputs;
/// checks the redirect (a save).
async fn save_as_shown(client: &Client<'_>, page: &str, action: &str, changed: &[(&str, &str)]) {
    let shown = client.get(page).await;
    assert_eq!(shown.status, StatusCode::OK, "{page}");
    let mut pairs = form_pairs(&shown.body, action);
    for (k, v) in &mut pairs {
        if let Some((_, new)) = changed.iter().find(|(name, _)| name == k) {
            *v = new.to_string();
        }
    }
    let refs: Vec<(&str, &str)> = pairs
        .iter()
        .map(|(k, v)| (k.as_str(), v.as_str()))
        .collect();
    let saved = client.post(action, &refs).await;
    assert_eq!(
        saved.status,
        StatusCode::SEE_OTHER,
        "{action}: {}",
        saved.body
    );
}

/// Opens `page`, posts its form back to `action` untouched and checks the redirect.
async fn save_untouched(client: &Client<'_>, page: &str, action: &str) {
    save_as_shown(client, page, action, &[]).await;
}

async fn put(app: &TestApp, token: &str, path: &str, change: &dyn Fn(&mut Value)) -> Value {
    let mut body = app.get_json(path, token).await.json();
    change(&mut body);
    let r = app.put_json(path, token, body).await;
    assert_eq!(r.status, StatusCode::OK, "{path}: {}", r.body);
    app.get_json(path, token).await.json()
}

async fn settings_row(app: &TestApp) -> Vec<f64> {
    let row: (f64, f64, f64, f64, f64, f64, i64) = sqlx::query_as(
        "SELECT spring_spread_pct, spring_sag_pct, shimming_limit_mm, overclamp_factor,
                extra_face_efficiency, bind_margin_mm, due_within_passes
         FROM shop_settings WHERE id = 1",
    )
    .fetch_one(&app.pool)
    .await
    .unwrap();
    vec![row.0, row.1, row.2, row.3, row.4, row.5, row.6 as f64]
}

#[tokio::test]
async fn saving_any_form_untouched_keeps_every_stored_number() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    let token = app.token("sam").await;
    let build = client.record_build().await;
    let id: i64 = build.trim_start_matches("/builds/").parse().unwrap();
    let b = app
        .get_json(&format!("/api/v1/builds/{id}"), &token)
        .await
        .json();
    let car_id = b["car_id"].as_i64().unwrap();

    // The car: every number filled, each one rounded by the display.
    let car = put(&app, &token, &format!("/api/v1/cars/{car_id}"), &|c| {
        for (k, v) in [
            ("weight_kg", 1496.85),
            ("rated_input_torque_nm", 881.28),
            ("first_gear_ratio", 2.43),
            ("final_drive_ratio", 4.11),
            ("tire_diameter_mm", 711.2),
            ("launch_rpm", 4500.0),
            ("engine_inertia_kg_m2", 0.2),
            ("input_inertia_kg_m2", 0.01),
            ("driveshaft_inertia_kg_m2", 0.02),
            ("rear_axle_inertia_kg_m2", 1.2),
            ("front_axle_inertia_kg_m2", 0.8),
            ("wheelbase_mm", 2700.0),
            ("cg_to_front_axle_mm", 1300.0),
            ("cg_height_mm", 500.0),
            ("drag_area_m2", 0.6),
            ("tire_grip", 1.5),
            ("tire_grip_spinning", 1.1),
            ("flywheel_mass_kg", 7.0),
            ("pressure_plate_mass_kg", 5.0),
        ] {
            c[k] = json!(awkward(v));
        }
        c["torque_curve_nm"] = json!([
            [3000.0, awkward(555.9)],
            [4000.0, awkward(616.9)],
            [5000.0, awkward(650.8)],
            [6000.0, awkward(637.2)],
            [7000.0, awkward(583.0)]
        ]);
    })
    .await;

    // Build A: adjuster thread in TPI, lever geometry with the body's radius, cover heights.
    let build_a = put(&app, &token, &format!("/api/v1/builds/{id}"), &|b| {
        for (k, v) in [
            ("facing_od_mm", 264.16),
            ("facing_id_mm", 167.64),
            ("disc_thickness_new_mm", 8.4),
            ("disc_thickness_min_mm", 6.9),
            ("spring_rate_n_per_mm", 66.5),
            ("spring_solid_height_mm", 30.5),
            ("release_travel_mm", 1.27),
            ("adjuster_tpi", 16.0),
            ("base_compression_mm", 5.588),
            ("cover_height_free_mm", 50.8),
            ("cover_height_installed_mm", 45.2),
            ("lever_mass_g", 12.0),
            ("lever_cg_radius_mm", 104.14),
            ("lever_arm_ratio", 2.6),
            ("lever_body_cg_radius_mm", 52.07),
            ("shimming_limit_mm", 0.381),
        ] {
            b[k] = json!(awkward(v));
        }
        b["shim_stack_mm"] = json!([awkward(0.254), awkward(0.254), awkward(0.508)]);
    })
    .await;

    // The shop's settings, straight into the table (there is no settings API).
    sqlx::query(
        "UPDATE shop_settings SET spring_spread_pct = ?, spring_sag_pct = ?,
         shimming_limit_mm = ?, overclamp_factor = ?, extra_face_efficiency = ?,
         bind_margin_mm = ?",
    )
    .bind(awkward(5.0))
    .bind(awkward(8.0))
    .bind(0.015 * 25.4)
    .bind(awkward(1.5))
    .bind(awkward(0.9))
    .bind(awkward(0.5))
    .execute(&app.pool)
    .await
    .unwrap();
    let settings = settings_row(&app).await;

    for units in ["imperial", "metric"] {
        sqlx::query("UPDATE shop_settings SET units = ?")
            .bind(units)
            .execute(&app.pool)
            .await
            .unwrap();
        save_untouched(&client, "/settings", "/settings").await;
        assert_eq!(settings_row(&app).await, settings, "settings in {units}");
        save_untouched(
            &client,
            &format!("/cars/{car_id}/edit"),
            &format!("/cars/{car_id}"),
        )
        .await;
        let now = app
            .get_json(&format!("/api/v1/cars/{car_id}"), &token)
            .await
            .json();
        assert_eq!(now, car, "car in {units}");
        save_untouched(&client, &format!("{build}/edit"), &build).await;
        let now = app
            .get_json(&format!("/api/v1/builds/{id}"), &token)
            .await
            .json();
        assert_eq!(now, build_a, "build A in {units}");
    }

    // Build B: a metric pitch and a measured lever gain (the other side of both choices).
    let build_b = put(&app, &token, &format!("/api/v1/builds/{id}"), &|b| {
        b["adjuster_tpi"] = Value::Null;
        b["adjuster_pitch_mm"] = json!(awkward(1.5));
        b["lever_cg_radius_mm"] = Value::Null;
        b["lever_arm_ratio"] = Value::Null;
        b["lever_body_cg_radius_mm"] = Value::Null;
        b["lever_gain_n_per_g"] = json!(awkward(1.67));
    })
    .await;
    for units in ["imperial", "metric"] {
        sqlx::query("UPDATE shop_settings SET units = ?")
            .bind(units)
            .execute(&app.pool)
            .await
            .unwrap();
        save_untouched(&client, &format!("{build}/edit"), &build).await;
        let now = app
            .get_json(&format!("/api/v1/builds/{id}"), &token)
            .await
            .json();
        assert_eq!(now, build_b, "build B in {units}");
    }
}

/// The case the issue reports: a shimming limit typed as 0.015 in (0.381 mm) shows as 0.38 mm
/// once the shop works in metric; saving the settings untouched keeps 0.381 mm, and a value
/// that was changed is still stored as typed.
#[tokio::test]
async fn a_limit_typed_in_inches_survives_a_metric_save() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    sqlx::query("UPDATE shop_settings SET shimming_limit_mm = ?, units = 'metric'")
        .bind(0.015 * 25.4)
        .execute(&app.pool)
        .await
        .unwrap();
    let page = client.get("/settings").await;
    page.assert_shows("name=\"shimming_limit\" value=\"0.38\"");
    save_untouched(&client, "/settings", "/settings").await;
    assert_eq!(settings_row(&app).await[2], 0.015 * 25.4);
    save_as_shown(
        &client,
        "/settings",
        "/settings",
        &[("shimming_limit", "0.39")],
    )
    .await;
    assert_eq!(settings_row(&app).await[2], 0.39);
}

/// A form saved as it was shown changes nothing, its "last updated" stamp included; a change
/// moves the stamp. (Before, every save moved it, so the test above failed whenever its save
/// crossed a second.)
#[tokio::test]
async fn saving_a_form_untouched_keeps_its_stamp_and_a_change_moves_it() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    let build = client.record_build().await;
    let id: i64 = build.trim_start_matches("/builds/").parse().unwrap();
    let stamp = || async {
        sqlx::query_scalar::<_, String>("SELECT updated_at FROM builds WHERE id = ?")
            .bind(id)
            .fetch_one(&app.pool)
            .await
            .unwrap()
    };
    let old = "2020-01-01T00:00:00Z";
    sqlx::query("UPDATE builds SET updated_at = ? WHERE id = ?")
        .bind(old)
        .bind(id)
        .execute(&app.pool)
        .await
        .unwrap();
    save_untouched(&client, &format!("{build}/edit"), &build).await;
    assert_eq!(stamp().await, old, "untouched");
    sqlx::query("UPDATE builds SET notes = 'changed behind the form' WHERE id = ?")
        .bind(id)
        .execute(&app.pool)
        .await
        .unwrap();
    // The form now shows the changed note; saving it with the note put back is a change.
    save_as_shown(&client, &format!("{build}/edit"), &build, &[("notes", "")]).await;
    assert_ne!(stamp().await, old, "changed");
}
