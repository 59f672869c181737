//! From a phone call to the build: the search's links and sort, the build page's summary,
//! folded forms and "Saved" notes, the disc's pass count, the customer link's round trip, and
//! the small things a tablet and a first start need.

use std::io::{BufRead, BufReader};
use std::process::{Command, Stdio};

use axum::http::{StatusCode, header};

use crate::support::{Client, Reply, TempDb, TestApp, id_from, shop_settings};

/// The flash cookie a redirect set, as `name=value` (None when it set none).
fn flash_cookie(reply: &Reply) -> Option<String> {
    reply
        .headers
        .get_all(header::SET_COOKIE)
        .iter()
        .filter_map(|v| v.to_str().ok())
        .find(|v| v.starts_with("lp_flash="))
        .map(|v| v.split(';').next().unwrap().to_string())
}

/// The `<details class="entry">` elements of a page: (is it open, its summary text).
fn folded_forms(html: &str) -> Vec<(bool, String)> {
    html.match_indices("<details class=\"entry\"")
        .map(|(i, _)| {
            let tag_end = i + html[i..].find('>').unwrap();
            let open = html[i..tag_end].contains(" open");
            let summary = html[tag_end..]
                .split("<summary>")
                .nth(1)
                .and_then(|s| s.split("</summary>").next())
                .unwrap_or("")
                .to_string();
            (open, summary)
        })
        .collect()
}

/// The `value` of the first input named `name` after `from` in the page.
fn input_value(html: &str, from: &str, name: &str) -> String {
    let start = html
        .find(from)
        .unwrap_or_else(|| panic!("{from} not on the page"));
    let tag = format!("name=\"{name}\"");
    let at = start + html[start..].find(&tag).expect("input present");
    let rest = &html[at..];
    let value = rest.split("value=\"").nth(1).unwrap();
    value.split('"').next().unwrap().to_string()
}

/// The attributes of the first `<input ... name="name" ...>` of the page.
fn input_tag<'a>(html: &'a str, name: &str) -> &'a str {
    let at = html
        .find(&format!("name=\"{name}\""))
        .unwrap_or_else(|| panic!("no input {name}"));
    let start = html[..at].rfind('<').unwrap();
    let end = at + html[at..].find('>').unwrap();
    &html[start..end]
}

async fn setup(client: &Client<'_>, build: &str, turns: &str, grams: &str) -> Reply {
    client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2024-05-01"),
                ("adjuster_turns", turns),
                ("counterweight_g", grams),
            ],
        )
        .await
}

#[tokio::test]
async fn a_save_on_the_build_page_redirects_and_says_once_what_changed() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;

    let first = setup(&client, &build, "1.5", "24").await;
    assert_eq!(first.status, StatusCode::SEE_OTHER);
    assert!(first.location().starts_with(&build), "{}", first.location());
    let shown = client.follow(&first).await;
    shown.assert_shows("Saved: the first setup, 2024-05-01: Adjuster turns 1.5 turns");
    // Shown once: the page clears the note's cookie, and a page without it says nothing.
    let cleared = shown
        .headers
        .get(header::SET_COOKIE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("");
    assert!(
        cleared.starts_with("lp_flash=;") && cleared.contains("Max-Age=0"),
        "{cleared}"
    );
    assert!(!client.get(&build).await.body.contains("Saved:"));

    // A change names what changed, and only that.
    let second = setup(&client, &build, "1.75", "24").await;
    let shown = client.follow(&second).await;
    shown.assert_shows("Adjuster turns: 1.5 turns → 1.75 turns");
    let note = shown.body.split("class=\"saved\"").nth(1).unwrap();
    let note = note.split("</p>").next().unwrap();
    assert!(!note.contains("Counterweight"), "{note}");

    // A new record's note lists what was recorded.
    assert!(flash_cookie(&second).is_some());
    let cover = client
        .post(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2024-05-02"),
                ("height", "1.905"),
                ("passes", "0"),
            ],
        )
        .await;
    let shown = client.follow(&cover).await;
    shown.assert_shows("Saved: cover height of 2024-05-02: Cover height 1.905 in");
}

#[tokio::test]
async fn the_summary_comes_first_and_the_entry_forms_are_folded_except_the_one_with_errors() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    setup(&client, &build, "1.5", "24").await;

    let page = client.get(&build).await.body;
    let summary = page.find("id=\"summary\"").expect("a summary");
    for later in ["<h2>Hardware</h2>", "<h2>Capacity", "Record a setup change"] {
        assert!(summary < page.find(later).unwrap(), "{later}");
    }
    let top = &page[summary..page.find("<h2>Hardware</h2>").unwrap()];
    for says in [
        "Status",
        "1.5 turns · 24.0 g per lever",
        "Lockup",
        "Wear",
        "Due",
    ] {
        assert!(top.contains(says), "the summary says {says:?}:\n{top}");
    }
    let forms = folded_forms(&page);
    let names: Vec<&str> = forms.iter().map(|(_, s)| s.as_str()).collect();
    for form in [
        "Record a setup change",
        "Prepare a setup sheet",
        "Record a bench test",
        "Record a cover height",
        "Record a pass",
    ] {
        assert!(names.contains(&form), "{form} folded: {names:?}");
    }
    assert!(forms.iter().all(|(open, _)| !open), "{forms:?}");

    // A refused pass opens its own form, with the message beside the field, and no other.
    let refused = client
        .post(
            &format!("{build}/passes"),
            &[("run_on", "2024-05-03"), ("launch_rpm", "lots")],
        )
        .await;
    assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY);
    let open: Vec<String> = folded_forms(&refused.body)
        .into_iter()
        .filter(|(open, _)| *open)
        .map(|(_, s)| s)
        .collect();
    assert_eq!(open, vec!["Record a pass".to_string()]);
    assert!(input_tag(&refused.body, "launch_rpm").contains("aria-invalid=\"true\""));
}

#[tokio::test]
async fn a_retired_build_shows_no_entry_forms_and_says_retired_once() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let id = id_from(&build);
    sqlx::query(
        "UPDATE builds SET status = 'retired', label = 'Old single (retired)' WHERE id = ?",
    )
    .bind(&id)
    .execute(&app.pool)
    .await
    .unwrap();
    let page = client.get(&build).await.body;
    for action in ["setups", "bench-tests", "heights", "passes", "sheets"] {
        assert!(
            !page.contains(&format!("action=\"/builds/{id}/{action}\"")),
            "{action} form on a retired build"
        );
    }
    assert!(
        page.contains("nothing: not in service"),
        "no work due on it"
    );
    let title = page
        .split("<h1>")
        .nth(1)
        .unwrap()
        .split("</h1>")
        .next()
        .unwrap();
    assert_eq!(title.matches("retired").count(), 1, "{title}");
    // An entry posted to it anyway (a form left open from before) is refused, nothing saved.
    let passes = app.count("passes").await;
    let late = client
        .post(
            &format!("{build}/passes"),
            &[("run_on", "2026-11-20"), ("launch_rpm", "4500")],
        )
        .await;
    assert_eq!(late.status, StatusCode::FORBIDDEN, "{}", late.body);
    late.assert_shows("retired");
    assert_eq!(app.count("passes").await, passes);

    // The demo shop's retired build does not put the word in its label.
    let fresh = TempDb::new();
    let pool = lockpoint::db::open(&fresh.path).await.unwrap();
    lockpoint::demo::seed_if_empty(&pool).await.unwrap();
    let labels: i64 = sqlx::query_scalar(
        "SELECT COUNT(*) FROM builds WHERE status = 'retired' AND label LIKE '%retired%'",
    )
    .fetch_one(&pool)
    .await
    .unwrap();
    assert_eq!(labels, 0);
}

#[tokio::test]
async fn logged_passes_advance_the_disc_pass_count_and_the_shim_pull_takes_its_date_and_count() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let id = id_from(&build);
    client
        .record_height(&build, "2024-05-01", "1.905", "10")
        .await;
    // One pass the day before the measurement (already in its count), three after.
    for day in ["2024-04-30", "2024-05-02", "2024-05-03", "2024-05-03"] {
        client
            .post_saved(&format!("{build}/passes"), &[("run_on", day)])
            .await;
    }
    let page = client.get(&build).await.body;
    assert_eq!(input_value(&page, "id=\"shim-pull\"", "passes"), "13");
    assert_eq!(
        input_value(&page, "<summary>Record a cover height", "passes"),
        "13"
    );
    assert!(page.contains("(10 at the last cover height + 3 logged since)"));

    // The shim pull: its date and pass count are the technician's to set.
    let shim = page.split("id=\"shim-pull\"").nth(1).unwrap();
    let shim = shim.split("</form>").next().unwrap();
    for field in ["measured_on", "passes", "height"] {
        assert!(
            !shim.contains(&format!("type=\"hidden\" name=\"{field}\"")),
            "{field} is typed, not hidden"
        );
    }
    client
        .post_saved(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2024-05-04"),
                ("passes", "15"),
                ("height", "1.897"),
                ("shims_pulled", "1"),
            ],
        )
        .await;
    let (on, passes, shims): (String, i64, i64) = sqlx::query_as(
        "SELECT measured_on, passes, shims_pulled FROM cover_heights
         WHERE build_id = ? ORDER BY id DESC LIMIT 1",
    )
    .bind(&id)
    .fetch_one(&app.pool)
    .await
    .unwrap();
    assert_eq!((on.as_str(), passes, shims), ("2024-05-04", 15, 1));
}

/// Prints a sheet of a new build with a setup; returns the sheet's path.
async fn sheet(client: &Client<'_>) -> String {
    let build = client.record_build().await;
    setup(client, &build, "1.5", "24").await;
    client
        .post(&format!("{build}/sheets"), &[])
        .await
        .location()
        .to_string()
}

#[tokio::test]
async fn a_customer_link_is_made_by_a_post_that_redirects_so_a_refresh_makes_no_second() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let sheet = sheet(&client).await;
    let made = client
        .post_saved(&format!("{sheet}/links"), &[("valid_days", "14")])
        .await;
    assert_eq!(made.location(), sheet);
    assert!(
        !made.body.contains("/s/"),
        "the secret is not in the POST's answer"
    );
    let shown = client.follow(&made).await;
    shown.assert_shows("class=\"link-address\" id=\"new-link\"");
    assert!(
        shown.body.contains("data-copy=\"new-link\""),
        "a copy button"
    );
    // Refreshing the page (the note's cookie cleared) neither shows it again nor makes a link.
    let again = client.get(&sheet).await;
    assert!(!again.body.contains("id=\"new-link\""));
    assert_eq!(app.count("sheet_links").await, 1);
}

#[tokio::test]
async fn the_link_form_keeps_what_was_typed_and_takes_whole_days_only() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let sheet = sheet(&client).await;
    for (typed, says) in [
        ("2.5", "whole number"),
        ("0", "must be"),
        ("a week", "number"),
    ] {
        let refused = client
            .post(&format!("{sheet}/links"), &[("valid_days", typed)])
            .await;
        assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY, "{typed}");
        // The message sits inside the field's label, beside the input that keeps the text.
        let label = refused
            .body
            .split("<label class=\"bad\">")
            .nth(1)
            .expect("the field is marked")
            .split("</label>")
            .next()
            .unwrap();
        assert!(label.contains(&format!("value=\"{typed}\"")), "{label}");
        assert!(label.contains(says), "{typed}: {label}");
    }
    assert_eq!(app.count("sheet_links").await, 0);
}

#[tokio::test]
async fn an_expired_or_withdrawn_link_names_the_shop_and_its_phone() {
    let app = TestApp::new().await;
    sqlx::query("UPDATE shop_settings SET name = 'Millbrook Clutch Works', phone = '555-0199'")
        .execute(&app.pool)
        .await
        .unwrap();
    let client = app.login("sam").await;
    let sheet = sheet(&client).await;
    let made = client.new_link(&sheet, "14").await;
    let link = crate::support::link_in(&made.body);
    sqlx::query("UPDATE sheet_links SET revoked_at = '2024-01-01T00:00:00Z'")
        .execute(&app.pool)
        .await
        .unwrap();
    let gone = app.get(&link, None).await;
    assert_eq!(gone.status, StatusCode::GONE);
    gone.assert_shows("Millbrook Clutch Works");
    assert!(gone.body.contains("555-0199"));
    // An address that was never a link tells a guesser nothing about the shop.
    let unknown = app.get(&format!("/s/{}", "0".repeat(64)), None).await;
    assert_eq!(unknown.status, StatusCode::NOT_FOUND);
    assert!(!unknown.body.contains("Millbrook"));
}

#[tokio::test]
async fn search_results_link_each_active_build_with_its_work_due_status() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    // Growth 0.020 in past the build's 0.015 in shimming limit: a shim is due.
    for (on, height, passes) in [("2024-05-01", "1.905", "0"), ("2024-06-01", "1.925", "40")] {
        client.record_height(&build, on, height, passes).await;
    }
    for page in ["/?q=5550101", "/customers?q=Lindqvist", "/customers?q=li"] {
        let body = client.get(page).await.body;
        let row = body.split("Avery Lindqvist").nth(1).expect("found");
        let row = row.split("</tr>").next().unwrap();
        assert!(row.contains(&format!("href=\"{build}\"")), "{page}: {row}");
        assert!(row.contains("shim due"), "{page}: {row}");
    }
    // One word for the action on both search boxes.
    for page in ["/", "/customers"] {
        let body = client.get(page).await.body;
        let form = body.split("role=\"search\"").nth(1).unwrap();
        let form = form.split("</form>").next().unwrap();
        assert!(form.contains(">Search</button>"), "{page}: {form}");
    }
}

#[tokio::test]
async fn the_customer_list_sorts_by_last_name() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    for name in [
        "Avery Lindqvist",
        "Zed Adams",
        "Mary Ann Brook",
        "Carl Zimmer",
    ] {
        client.post_saved("/customers", &[("name", name)]).await;
    }
    let order = |body: &str, names: &[&str]| -> Vec<usize> {
        names.iter().map(|n| body.find(n).unwrap()).collect()
    };
    let names = [
        "Zed Adams",
        "Mary Ann Brook",
        "Avery Lindqvist",
        "Carl Zimmer",
    ];
    let by_last = client.get("/customers?sort=last").await.body;
    let at = order(&by_last, &names);
    assert!(at.windows(2).all(|w| w[0] < w[1]), "{at:?}");
    let by_first = client.get("/customers").await.body;
    let at = order(
        &by_first,
        &[
            "Avery Lindqvist",
            "Carl Zimmer",
            "Mary Ann Brook",
            "Zed Adams",
        ],
    );
    assert!(at.windows(2).all(|w| w[0] < w[1]), "{at:?}");
    assert!(by_first.contains("href=\"/customers?sort=last\""));
    // A search keeps the sort it was asked for.
    let searched = client.get("/customers?q=a&sort=last").await.body;
    let at = order(&searched, &names);
    assert!(at.windows(2).all(|w| w[0] < w[1]), "{at:?}");
}

/// `inputmode` per the WHATWG HTML Living Standard ("Input modalities: the inputmode
/// attribute"): "numeric" for digits, "decimal" for digits with a decimal separator.
#[tokio::test]
async fn number_inputs_ask_a_tablet_for_its_number_keyboard() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let page = client.get(&build).await.body;
    for (name, mode) in [
        ("adjuster_turns", Some("decimal")),
        ("counterweight_g", Some("decimal")),
        ("mu", Some("decimal")),
        ("passes", Some("numeric")),
        ("shims_pulled", Some("numeric")),
        ("height", Some("decimal")),
        ("launch_rpm", Some("decimal")),
        ("target_lockup", Some("decimal")),
        ("free_length_1", Some("decimal")),
        ("changed_on", None),
        ("track", None),
    ] {
        let tag = input_tag(&page, name);
        match mode {
            Some(m) => assert!(tag.contains(&format!("inputmode=\"{m}\"")), "{tag}"),
            None => assert!(!tag.contains("inputmode"), "{tag}"),
        }
    }
    let car_form = client.get("/customers/1/cars/new").await.body;
    assert!(input_tag(&car_form, "launch_rpm").contains("inputmode=\"decimal\""));
}

/// A record field's input shows the label, hint and unit its declaration gives, in the shop's
/// units, and a form that asks for it in a particular case changes only the hint.
#[tokio::test]
async fn a_record_input_takes_its_label_and_unit_from_its_declaration() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let label_of = |html: &str, name: &str| -> String {
        let at = html.find(&format!("name=\"{name}\"")).expect(name);
        let start = html[..at].rfind("<label").unwrap();
        let end = at + html[at..].find("</label>").unwrap();
        html[start..end].to_string()
    };
    let form = client.get(&format!("{build}/edit")).await.body;
    let od = label_of(&form, "facing_od");
    assert!(od.contains("Facing outer diameter</span>"), "{od}");
    assert!(od.contains("<span class=\"unit\">in</span>"), "{od}");
    let travel = label_of(&form, "release_travel");
    assert!(
        travel.contains("Spring release travel (how much further"),
        "{travel}"
    );
    assert!(label_of(&form, "lever_arm_ratio").contains(">:1</span>"));
    let page = client.get(&build).await.body;
    assert!(label_of(&page, "shims_pulled").contains("Shims pulled (so far)"));
    sqlx::query("UPDATE shop_settings SET units = 'metric'")
        .execute(&app.pool)
        .await
        .unwrap();
    let form = client.get(&format!("{build}/edit")).await.body;
    let od = label_of(&form, "facing_od");
    assert!(od.contains("<span class=\"unit\">mm</span>"), "{od}");
}

#[tokio::test]
async fn demo_customers_are_not_newer_than_their_builds() {
    let fresh = TempDb::new();
    let pool = lockpoint::db::open(&fresh.path).await.unwrap();
    lockpoint::demo::seed_if_empty(&pool).await.unwrap();
    let later: Vec<(String, String, String)> = sqlx::query_as(
        "SELECT c.name, c.created_at, MIN(b.created_at) FROM customers c
         JOIN cars k ON k.customer_id = c.id JOIN builds b ON b.car_id = k.id
         GROUP BY c.id HAVING substr(c.created_at, 1, 10) > substr(MIN(b.created_at), 1, 10)",
    )
    .fetch_all(&pool)
    .await
    .unwrap();
    assert!(later.is_empty(), "{later:?}");
}

#[test]
fn serve_demo_prints_every_demo_login_and_db_help_claims_only_what_each_command_does() {
    let db = TempDb::new();
    let mut child = Command::new(env!("CARGO_BIN_EXE_lockpoint"))
        .args(["serve", "--demo", "--addr", "127.0.0.1:0", "--db"])
        .arg(&db.path)
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let lines: Vec<String> = BufReader::new(child.stdout.take().unwrap())
        .lines()
        .map_while(Result::ok)
        .take_while(|l| !l.starts_with("listening on"))
        .collect();
    let _ = child.kill();
    let _ = child.wait();
    for login in [
        "demo login: demo / lockpoint-demo",
        "demo login: bench / lockpoint-demo",
    ] {
        assert!(lines.iter().any(|l| l.starts_with(login)), "{lines:?}");
    }

    let db_help = |args: &[&str]| -> String {
        let out = Command::new(env!("CARGO_BIN_EXE_lockpoint"))
            .args(args)
            .arg("--help")
            .output()
            .unwrap();
        let text = String::from_utf8_lossy(&out.stdout).into_owned();
        text.lines()
            .find(|l| l.trim_start().starts_with("--db"))
            .unwrap_or_else(|| panic!("{args:?}: {text}"))
            .to_string()
    };
    for command in ["backup", "restore", "export", "import"] {
        let line = db_help(&[command]);
        assert!(!line.contains("created when missing"), "{command}: {line}");
        assert!(!line.contains("create it"), "{command}: {line}");
    }
    assert!(db_help(&["serve"]).contains("created when missing"));
}

#[tokio::test]
async fn the_shop_email_is_checked_like_a_customer_email() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let settings = |email: &'static str| {
        let mut form = shop_settings("imperial", "imperial", "0.015", "").to_vec();
        form.push(("email", email));
        form
    };
    let customer = boss
        .post(
            "/customers",
            &[("name", "Jo Tarrant"), ("email", "jo at home")],
        )
        .await;
    assert_eq!(customer.status, StatusCode::UNPROCESSABLE_ENTITY);
    let shop = boss.post("/settings", &settings("jo at home")).await;
    assert_eq!(shop.status, StatusCode::UNPROCESSABLE_ENTITY);
    let message = |body: &str| {
        body.split("id=\"email-msg\">")
            .nth(1)
            .and_then(|m| m.split('<').next())
            .unwrap_or("")
            .to_string()
    };
    assert!(!message(&shop.body).is_empty(), "{}", shop.body);
    assert_eq!(message(&shop.body), message(&customer.body));
    boss.post_saved("/settings", &settings("counter@millbrook.example"))
        .await;
}

/// Rates from force / compression at one test compression, so the change is the forces' ratio:
/// (188 − 190) / 190 = −1.05 % [derived], under the 3 % sag flag.
#[tokio::test]
async fn the_bench_table_shows_each_springs_change_since_its_last_test_or_a_dash() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    for (on, force) in [("2024-05-01", "190"), ("2024-06-01", "188")] {
        let mut form = vec![("tested_on", on), ("test_compression", "0.500")];
        let names: Vec<String> = (1..=6).map(|i| format!("force_{i}")).collect();
        for name in &names {
            form.push((name.as_str(), force));
        }
        client
            .post_saved(&format!("{build}/bench-tests"), &form)
            .await;
    }
    let page = client.get(&build).await.body;
    let bench = page.split("id=\"bench\"").nth(1).unwrap();
    let newest = bench
        .split("<tbody>")
        .nth(1)
        .unwrap()
        .split("</tbody>")
        .next()
        .unwrap();
    let oldest = bench
        .split("<tbody>")
        .nth(2)
        .unwrap()
        .split("</tbody>")
        .next()
        .unwrap();
    assert_eq!(newest.matches("−1.1 %").count(), 6, "{newest}");
    assert_eq!(oldest.matches("<td>–</td>").count(), 6, "{oldest}");
}

#[tokio::test]
async fn the_delete_customer_hint_says_what_happens_to_customer_links() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let saved = boss.post("/customers", &[("name", "Jo Tarrant")]).await;
    let page = boss.get(saved.location()).await.body;
    let hint = page.split("<summary>Delete this customer").nth(1).unwrap();
    assert!(hint.contains("customer links show no sheet"), "{hint}");
    assert!(hint.contains("links that were not withdrawn and have not expired work again"));
}

/// A build recorded through the forms, then `records` of one kind (`passes`, `measurements`)
/// added to it through the API with a token of `boss`; its page's path and its id.
async fn build_with(
    app: &TestApp,
    client: &Client<'_>,
    kind: &str,
    records: impl Iterator<Item = serde_json::Value>,
) -> (String, String) {
    let build = client.record_build().await;
    let id = id_from(&build).to_string();
    let token = app.token("boss").await;
    for body in records {
        let r = app
            .post_json(&format!("/api/v1/builds/{id}/{kind}"), &token, body)
            .await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    }
    (build, id)
}

#[tokio::test]
async fn the_build_page_lists_the_newest_passes_and_links_to_every_one() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    let (build, id) = build_with(
        &app,
        &client,
        "passes",
        (0..125).map(|n| {
            let day = format!("2026-{:02}-{:02}", 1 + n / 28, 1 + n % 28);
            serde_json::json!({"run_on": day, "track": format!("Strip {n}")})
        }),
    )
    .await;
    let page = client.get(&build).await.body;
    let listed = page.matches("<td>Strip ").count();
    assert_eq!(listed, 20, "the newest 20 passes on the build's page");
    assert!(page.contains("<td>Strip 124</td>"), "newest first");
    assert!(!page.contains("<td>Strip 104</td>"));
    assert!(page.contains("The latest 20 of 125 passes."));
    assert!(page.contains(&format!("href=\"/builds/{id}/passes\"")));

    let all = client.get_ok(&format!("/builds/{id}/passes")).await;
    assert_eq!(all.body.matches("<td>Strip ").count(), 100, "a page of 100");
    all.assert_shows("Page 1 of 2");
    let older = client
        .get(&format!("/builds/{id}/passes?page=1"))
        .await
        .body;
    assert_eq!(older.matches("<td>Strip ").count(), 25);
    assert!(
        older.contains("<td>Strip 0</td>"),
        "the oldest on the last page"
    );
    let heights = client.get_ok(&format!("/builds/{id}/heights")).await;
    heights.assert_shows("No cover heights recorded yet.");
    assert_eq!(
        client.get("/builds/999999/passes").await.status,
        StatusCode::NOT_FOUND
    );
}

/// The wear panel's table lists the newest 20 cover heights, oldest of them first, and says
/// how many there are in all (the analysis and the chart still use every one).
#[tokio::test]
async fn the_build_page_lists_the_newest_cover_heights_and_counts_them_all() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    let (build, id) = build_with(
        &app,
        &client,
        "measurements",
        (0..25).map(|n| {
            serde_json::json!({
                "measured_on": format!("2026-03-{:02}", 1 + n),
                "height_mm": 48.0 + 0.001 * f64::from(n),
                "passes": 4 * n,
                "shims_pulled": 0,
                "note": format!("check {n}"),
            })
        }),
    )
    .await;
    let page = client.get(&build).await.body;
    let notes: Vec<&str> = page
        .split("<td>check ")
        .skip(1)
        .map(|rest| &rest[..rest.find('<').unwrap()])
        .collect();
    let newest: Vec<String> = (5..25).map(|n| n.to_string()).collect();
    assert_eq!(notes, newest, "the newest 20, oldest of them first");
    assert!(page.contains("The latest 20 of 25 measurements."));
    assert!(page.contains(&format!("href=\"/builds/{id}/heights\"")));
}

#[tokio::test]
async fn customer_and_car_saves_say_once_what_changed() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let made = client
        .post(
            "/customers",
            &[("name", "Orla Penhallow"), ("phone", "555-0177")],
        )
        .await;
    let shown = client.follow(&made).await;
    shown.assert_shows("Saved: a new customer.");
    let customer = id_from(made.location());
    let edited = client
        .post(
            &format!("/customers/{customer}"),
            &[("name", "Orla Penhallow"), ("phone", "555-0178")],
        )
        .await;
    let shown = client.follow(&edited).await;
    shown.assert_shows("Saved: the customer: Phone: 555-0177 → 555-0178.");
    assert!(!client.get(edited.location()).await.body.contains("Saved:"));

    let car = client
        .post(
            &format!("/customers/{customer}/cars"),
            &[("description", "roadster, 5.0 L V8, 5-speed")],
        )
        .await;
    assert!(client.follow(&car).await.body.contains("Saved: a new car."));
    let again = client
        .post(
            car.location(),
            &[("description", "roadster, 5.0 L V8, 5-speed")],
        )
        .await;
    let shown = client.follow(&again).await;
    shown.assert_shows("Saved: the car, nothing changed.");
}
