//! Browser tests in real headless Chromium, driven through chromedriver (WebDriver), against the
//! real server binary with the demo shop on a temporary database. Run explicitly:
//! `cargo test -p lockpoint-e2e --test browser` (needs chromium, chromium-driver and
//! poppler-utils).
//! Screenshots and the printed PDFs are saved under `target/tmp/browser-artifacts/<test>/`.

#[path = "../../shared/build_form.rs"]
mod build_form;
mod charts;
mod counter;
mod entries;
mod harness;
mod tuning;

use fantoccini::Locator;
use harness::{Artifacts, Browser, Server, pdf_pages, pdf_text};

const CURVE: &str = "rpm,torque\n3000,410\n4000,455\n5000,480\n6000,470\n7000,430";

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_technician_records_a_build_prints_the_sheet_and_shares_a_revocable_link() {
    let server = Server::start().await;
    let browser = Browser::start().await;
    let shots = Artifacts::new();
    let c = browser.session().await;
    let base = server.base.clone();

    // Sign in.
    c.goto(&format!("{base}/login")).await.unwrap();
    harness::fill(&c, "input[name=username]", "demo").await;
    harness::fill(&c, "input[name=password]", "lockpoint-demo").await;
    harness::click(&c, "button[type=submit]").await;
    harness::expect_text(&c, "Work due").await;
    shots.page(&c, "01-counter").await;

    // A new customer, a car with a pasted torque curve, a build.
    harness::click(&c, "a[href='/customers/new']").await;
    harness::fill(&c, "input[name=name]", "Wren Castellanos").await;
    harness::fill(&c, "input[name=phone]", "555-0150").await;
    harness::click(&c, "button.primary").await;
    harness::expect_text(&c, "Wren Castellanos").await;
    harness::click_link(&c, "Add a car").await;
    harness::fill(&c, "input[name=description]", "two-door, 7.2 L V8, 4-speed").await;
    harness::fill(&c, "input[name=launch_rpm]", "4500").await;
    harness::fill(&c, "input[name=rated_input_torque]", "650").await;
    harness::fill(&c, "textarea[name=torque_curve]", CURVE).await;
    harness::click(&c, "button.primary").await;
    harness::expect_text(&c, "Engine torque curve").await;
    harness::expect_text(&c, "480 lbf·ft").await;
    shots.page(&c, "02-car").await;

    harness::click_link(&c, "New build").await;
    let own = [
        ("label", "Bracket single"),
        ("disc_thickness_new", "0.300"),
        ("disc_thickness_min", "0.240"),
        ("spring_description", "coil, 2.10 in free"),
    ];
    for &(name, value) in own.iter().chain(build_form::BUILD_FORM) {
        harness::fill(&c, &format!("input[name={name}]"), value).await;
    }
    shots.page(&c, "03-build-form").await;
    harness::click(&c, "button.primary").await;
    harness::expect_text(&c, "Record a setup change").await;

    // Setup, bench test, two cover heights, through the build page's quick forms (folded until
    // opened).
    harness::toggle(&c, "#setup details.entry summary").await;
    harness::fill(&c, "#setup input[name=adjuster_turns]", "1.5").await;
    harness::fill(&c, "#setup input[name=counterweight_g]", "24").await;
    harness::click(&c, "#setup button.primary").await;
    harness::expect_text(&c, "Saved: the first setup").await;
    harness::toggle(&c, "#bench details.entry summary").await;
    harness::fill(&c, "#bench input[name=test_height]", "1.600").await;
    for i in 1..=6 {
        harness::fill(&c, &format!("#bench input[name=free_length_{i}]"), "2.100").await;
        harness::fill(&c, &format!("#bench input[name=force_{i}]"), "190").await;
    }
    harness::click(&c, "#bench button.primary").await;
    harness::expect_text(&c, "set within tolerance").await;
    for (height, passes) in [("1.905", "0"), ("1.913", "40")] {
        harness::toggle(&c, "#height-entry summary").await;
        harness::fill(&c, "#height-entry input[name=height]", height).await;
        harness::fill(&c, "#height-entry input[name=passes]", passes).await;
        harness::click(&c, "#height-entry button.primary").await;
    }
    harness::expect_text(&c, "Within limits.").await;
    harness::expect_text(&c, "About 35 passes to the next shim").await;
    let charts = c.find_all(Locator::Css("figure.chart svg")).await.unwrap();
    assert_eq!(charts.len(), 2, "capacity chart and cover-height chart");
    shots.page(&c, "04-build").await;

    // A recommendation on the tuning page.
    harness::click_link(&c, "Try settings / recommend").await;
    harness::fill(&c, "input[name=target_lockup]", "5600").await;
    harness::click(&c, "#recommend button.primary").await;
    harness::expect_text(&c, "Recommended:").await;
    harness::expect_text(&c, "Before you change a setting").await;
    shots.page(&c, "05-tune").await;

    // The setup sheet, printed to PDF on Letter and on A4.
    c.back().await.unwrap();
    c.back().await.unwrap();
    harness::expect_text(&c, "Prepare a setup sheet").await;
    harness::toggle(&c, "#sheets details.entry summary").await;
    harness::fill(&c, "#sheets input[name=target_lockup]", "5600").await;
    harness::click(&c, "#sheets button.primary").await;
    harness::expect_text(&c, "Clutch setup sheet").await;
    let lockup = harness::figure(&c, "Lockup speed").await;
    assert!(lockup.ends_with(" rpm"), "{lockup}");
    shots.page(&c, "06-sheet").await;
    for (name, size) in [
        ("letter", fantoccini::wd::PrintSize::US_LETTER),
        ("a4", fantoccini::wd::PrintSize::A4),
    ] {
        let pdf = harness::print(&c, size).await;
        let path = shots.save(&format!("07-sheet-{name}.pdf"), &pdf);
        assert_eq!(pdf_pages(&path), 1, "the sheet fits one {name} page");
        // Headings print in capitals (CSS), so compare without case.
        let text = pdf_text(&path).to_lowercase();
        for expected in [
            "Clutch setup sheet",
            "Wren Castellanos",
            "1.5 turns",
            "24.0 g per lever",
            "Lockup speed",
            &lockup,
            "Safety",
            "sanctioning body",
            "springs are loaded",
            "estimates",
            "Quarry Road Clutch",
        ] {
            assert!(
                text.contains(&expected.to_lowercase()),
                "{name} PDF has {expected:?}:\n{text}"
            );
        }
        shots.pdf_first_page(&path, &format!("07-sheet-{name}"));
    }

    // The customer's link, opened in a fresh browser without a login.
    harness::toggle(&c, "details.links summary").await;
    harness::click(&c, "details.links button[type=submit]").await;
    let link = harness::text_of(&c, ".link-address").await;
    assert!(link.contains("/s/"), "{link}");
    let customer = browser.session().await;
    customer.goto(&link).await.unwrap();
    harness::expect_text(&customer, "Clutch setup sheet").await;
    harness::expect_text(&customer, "Wren Castellanos").await;
    assert!(
        customer.find(Locator::Css(".topbar")).await.is_err(),
        "no shop navigation on the customer's sheet"
    );
    assert!(
        customer.find(Locator::Css(".toolbar")).await.is_err(),
        "no shop tools on the customer's sheet"
    );
    shots.page(&customer, "08-customer-link").await;

    // Withdrawn: the link no longer shows the sheet.
    harness::click(&c, "details.links form[action^='/links/'] button").await;
    customer.goto(&link).await.unwrap();
    harness::expect_text(&customer, "Setup sheet not available").await;
    assert!(
        !customer
            .source()
            .await
            .unwrap()
            .contains("Wren Castellanos")
    );
    shots.page(&customer, "09-link-withdrawn").await;

    customer.close().await.unwrap();
    c.close().await.unwrap();
    println!("browser artifacts: {}", shots.dir.display());
}
