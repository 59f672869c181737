//! At the counter in a real browser, on the demo shop: from a phone number to the build in one
//! click, the build page's first screen on a tablet and on a desktop, a folded form's "Saved"
//! note, and the customer link's copy button, refresh and withdrawn page.

use fantoccini::{Client, Locator};
use serde_json::Value;

use super::harness::{self, SignedIn};

/// The two screens the shop uses: a desktop and a 10-inch tablet held upright.
const SCREENS: [(u32, u32); 2] = [(1366, 900), (820, 1180)];

/// How far down the page the summary's answers for `labels` reach, and the screen's height.
async fn summary_bottom(c: &Client, labels: &[&str]) -> (usize, f64, f64) {
    let script = "const want = arguments[0];
        const dds = [...document.querySelectorAll('#summary dt')]
            .filter(d => want.includes(d.textContent.trim()))
            .map(d => d.nextElementSibling.getBoundingClientRect().bottom);
        return [dds.length, Math.max(...dds), window.innerHeight];";
    let labels = Value::Array(
        labels
            .iter()
            .map(|l| Value::String(l.to_string()))
            .collect(),
    );
    let v = c.execute(script, vec![labels]).await.unwrap();
    (
        v[0].as_u64().unwrap_or(0) as usize,
        v[1].as_f64().unwrap_or(f64::MAX),
        v[2].as_f64().unwrap_or(0.0),
    )
}

async fn body(c: &Client) -> String {
    harness::text_of(c, "body").await
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_phone_number_leads_to_the_build_in_one_click_and_its_first_screen_shows_the_status() {
    let run = SignedIn::start("counter").await;
    let (c, shots) = (run.c.clone(), &run.shots);

    // The phone number as the caller says it: the result names the build and what is due.
    harness::fill(&c, "input[name=q]", "(555) 0117").await;
    harness::click(&c, "form.search button[type=submit]").await;
    harness::expect_text(&c, "Dana Whitcombe").await;
    harness::expect_text(&c, "Street/strip single ▲ shim due").await;
    for (w, h) in SCREENS {
        shots.screen(&c, "counter-search", w, h).await;
    }
    harness::click_link(&c, "Street/strip single").await;
    harness::expect_text(&c, "Passes on this disc").await;

    // The first screen shows the status and the current setting without scrolling.
    for (w, h) in SCREENS {
        harness::set_viewport(&c, w, h).await;
        c.execute("window.scrollTo(0, 0)", vec![]).await.unwrap();
        let (found, bottom, screen) =
            summary_bottom(&c, &["Status", "Current setting", "Lockup", "Due"]).await;
        assert_eq!(found, 4, "the summary's answers at {w}x{h}");
        assert!(
            bottom <= screen,
            "at {w}x{h} the summary ends at {bottom}px, below the first screen ({screen}px)"
        );
        shots.screen(&c, "build", w, h).await;
    }
    let text = body(&c).await;
    assert!(text.contains("▲ shim due"), "{text}");
    assert!(text.contains("1.75 turns · 26.0 g per lever"), "{text}");

    // The summary's links open the folded form they point to.
    c.find(Locator::Css("#summary a[href='#pass-form']"))
        .await
        .unwrap()
        .click()
        .await
        .unwrap();
    let opened = c
        .execute("return document.getElementById('pass-entry').open", vec![])
        .await
        .unwrap();
    assert_eq!(opened, Value::Bool(true), "the pass form opened");
    assert!(
        c.find(Locator::Css("#pass-form input[name=run_on]"))
            .await
            .unwrap()
            .is_displayed()
            .await
            .unwrap()
    );

    // A folded form opens, saves, and the page says what changed, once.
    harness::toggle(&c, "#setup details.entry summary").await;
    harness::fill(&c, "#setup input[name=adjuster_turns]", "2").await;
    harness::click(&c, "#setup button.primary").await;
    harness::expect_text(&c, "Saved: setup change of").await;
    harness::expect_text(&c, "Adjuster turns: 1.75 turns → 2 turns").await;
    assert!(body(&c).await.contains("2 turns · 26.0 g per lever"));
    shots.screen(&c, "build-saved", 820, 1180).await;
    c.refresh().await.unwrap();
    harness::expect_text(&c, "Passes on this disc").await;
    assert!(!body(&c).await.contains("Saved:"), "the note is shown once");

    c.close().await.unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_customer_link_has_a_copy_button_a_refresh_makes_no_second_and_a_withdrawn_one_names_the_shop()
 {
    let run = SignedIn::start("link").await;
    let (c, shots, base) = (run.c.clone(), &run.shots, run.base.clone());
    c.goto(&format!("{}/builds/1", base)).await.unwrap();
    harness::toggle(&c, "#sheets details.entry summary").await;
    harness::click(&c, "#sheets button.primary").await;
    harness::expect_text(&c, "Clutch setup sheet").await;

    // A refused number stays in the field with its message beside it.
    harness::toggle(&c, "details.links summary").await;
    harness::fill(&c, "input[name=valid_days]", "2.5").await;
    harness::click(&c, "details.links button[type=submit]").await;
    harness::expect_text(&c, "enter a whole number").await;
    let kept = c
        .find(Locator::Css("input[name=valid_days]"))
        .await
        .unwrap()
        .prop("value")
        .await
        .unwrap();
    assert_eq!(kept.as_deref(), Some("2.5"));

    harness::fill(&c, "input[name=valid_days]", "14").await;
    harness::click(&c, "details.links button[type=submit]").await;
    harness::expect_text(&c, "New read-only link").await;
    let url = c.current_url().await.unwrap();
    assert!(
        !url.path().ends_with("/links"),
        "the POST redirected back to the sheet: {url}"
    );
    let address = harness::text_of(&c, ".link-address").await;
    let copy = c.find(Locator::Css("button[data-copy]")).await.unwrap();
    assert!(copy.is_displayed().await.unwrap(), "the script shows Copy");
    copy.click().await.unwrap();
    let mut said = String::new();
    for _ in 0..50 {
        said = copy.text().await.unwrap();
        if said != "Copy" {
            break;
        }
        tokio::time::sleep(std::time::Duration::from_millis(100)).await;
    }
    assert!(
        said == "Copied" || said.starts_with("Selected"),
        "the button says what it did: {said:?}"
    );
    shots.screen(&c, "sheet-link", 1366, 900).await;

    // A refresh shows the sheet again, without the address and without another link.
    c.refresh().await.unwrap();
    harness::expect_text(&c, "Customer link (1)").await;
    assert!(c.find(Locator::Css(".link-address")).await.is_err());

    // Withdrawn: the customer's page names the shop and its phone.
    harness::toggle(&c, "details.links summary").await;
    harness::click(&c, "details.links form[action^='/links/'] button").await;
    let customer = run.browser.session().await;
    customer.goto(&address).await.unwrap();
    harness::expect_text(&customer, "Setup sheet not available").await;
    harness::expect_text(&customer, "Quarry Road Clutch & Driveline · 555-0142").await;
    shots.screen(&customer, "link-withdrawn", 820, 1180).await;

    customer.close().await.unwrap();
    c.close().await.unwrap();
}
