//! Charts a technician can read, on the demo shop at a tablet's 820 px and a laptop's 1366 px:
//! nothing wider than its card, chart text at least 11 px on screen and 7 pt on the printed
//! sheet, a pass's charts opening on its launch with the whole file a link away, and the
//! two-pass chart's labels kept off the traces.

use std::path::Path;
use std::process::Command;

use fantoccini::{Client, Locator};
use serde_json::Value;

use crate::harness::{self, Artifacts, SignedIn, pdf_pages};

/// The demo's logged pass (the newest of the logged build) and the one before it, which gets a
/// second log here so two passes can be drawn together.
const LOGGED: u32 = 5;
const SECOND: u32 = 4;

/// The pages checked at each width: the build page, the tuning page plain and with a
/// recommendation that lists other settings nearby, the logged pass alone and beside another.
fn pages() -> Vec<String> {
    vec![
        "/builds/1".into(),
        "/builds/4".into(),
        "/builds/1/tune".into(),
        "/builds/4/tune?recommend=1&target_lockup=3300".into(),
        format!("/passes/{LOGGED}"),
        format!("/passes/{LOGGED}?compare={SECOND}"),
        format!("/passes/{LOGGED}?compare={SECOND}&window=all"),
    ]
}

/// A second invented pass in the demo logger's layout (time in ms, a units line): staged at
/// 4600 rpm for 1.5 s, launched, the engine pulled down to 4200 rpm while the input shaft
/// rises at 3360 rpm/s, locked at about 2.71 s, then both rising to the end at 3.5 s.
fn second_log() -> String {
    let mut s = String::from(
        "Session export,second invented pass\nTime,Engine,Input shaft,Front wheel,Rear wheel,Throttle\nms,rpm,rpm,mph,mph,%\n",
    );
    for k in 0..=700u32 {
        let t = f64::from(k) * 0.005;
        let (engine, input, throttle) = if t < 1.5 {
            (4600.0, 0.0, 35)
        } else if t < 2.75 {
            let since = t - 1.5;
            let engine = 4600.0 - 400.0 * (since / 0.5).min(1.0);
            ((engine), (3360.0 * since).min(engine), 100)
        } else {
            let engine = 4200.0 + 2600.0 * (t - 2.75);
            (engine, engine, 100)
        };
        let mph = input * 0.0068;
        let wheels = if k.is_multiple_of(4) {
            format!("{:.2},{mph:.2}", mph / 1.05)
        } else {
            ",".into()
        };
        s.push_str(&format!(
            "{},{engine:.0},{input:.0},{wheels},{throttle}\n",
            k * 5
        ));
    }
    s
}

/// Every element inside a card (`.panel`) that reaches past the card's edges, and every
/// element (the page included) whose content is wider than its box: "tag.class +N px".
async fn overflowing(c: &Client) -> Vec<String> {
    let v = c
        .execute(
            "const out = [];
             const name = e => e.tagName.toLowerCase() + '.' + String(e.className.baseVal ?? e.className).split(' ')[0];
             document.querySelectorAll('.panel').forEach(card => {
               const box = card.getBoundingClientRect();
               if (box.width === 0) return;
               card.querySelectorAll('*').forEach(e => {
                 const r = e.getBoundingClientRect();
                 if (r.width === 0) return;
                 const past = Math.max(r.right - box.right, box.left - r.left);
                 if (past > 0.5) out.push(name(e) + ' past its card by ' + past.toFixed(1) + ' px');
                 if (e.scrollWidth > e.clientWidth + 1 && getComputedStyle(e).overflowX !== 'visible')
                   out.push(name(e) + ' scrolls ' + (e.scrollWidth - e.clientWidth) + ' px');
               });
             });
             const doc = document.documentElement;
             if (doc.scrollWidth > doc.clientWidth) out.push('page scrolls ' + (doc.scrollWidth - doc.clientWidth) + ' px');
             return out;",
            vec![],
        )
        .await
        .unwrap();
    strings(&v)
}

/// The smallest text, CSS px as drawn on screen, in each chart on the page (its font size
/// times the scale the SVG is drawn at), with the chart's caption.
async fn chart_text_px(c: &Client) -> Vec<(String, f64)> {
    let v = c
        .execute(
            "return [...document.querySelectorAll('figure.chart')]
               .filter(f => f.getBoundingClientRect().width > 0)
               .map(f => {
                 const sizes = [...f.querySelectorAll('svg text')].map(t => {
                   const m = t.getScreenCTM(); // the scale, whatever the rotation
                   return parseFloat(getComputedStyle(t).fontSize) * Math.hypot(m.a, m.b);
                 });
                 return [f.querySelector('figcaption').textContent, Math.min(...sizes)];
               });",
            vec![],
        )
        .await
        .unwrap();
    v.as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_str().unwrap().to_string(), p[1].as_f64().unwrap()))
        .collect()
}

fn strings(v: &Value) -> Vec<String> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|s| s.as_str().unwrap().to_string())
        .collect()
}

/// The time span a chart's x axis covers, read from its drawing: two tick labels and their
/// positions give the scale, the axis line's ends the span. `n` counts the page's charts.
async fn x_span(c: &Client, n: usize) -> (f64, f64) {
    let v = c
        .execute(
            "const svg = document.querySelectorAll('figure.chart svg')[arguments[0]];
             const axis = svg.querySelector('.axis line');
             const ticks = [...svg.querySelectorAll('text.tick[text-anchor=middle]')];
             const [a, b] = [ticks[0], ticks[ticks.length - 1]];
             const at = t => parseFloat(t.getAttribute('x'));
             const per = (parseFloat(b.textContent) - parseFloat(a.textContent)) / (at(b) - at(a));
             const value = x => parseFloat(a.textContent) + (x - at(a)) * per;
             return [value(parseFloat(axis.getAttribute('x1'))), value(parseFloat(axis.getAttribute('x2')))];",
            vec![Value::from(n)],
        )
        .await
        .unwrap();
    (v[0].as_f64().unwrap(), v[1].as_f64().unwrap())
}

/// A figure of the pass page's "What the log says", as its first number ("2.321 s, engine
/// 4500 rpm" gives 2.321).
async fn log_figure(c: &Client, label: &str) -> f64 {
    let text = harness::figure(c, label).await;
    text.split([' ', ','])
        .next()
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("{label}: {text:?}"))
}

/// A full-length screenshot at `width` CSS px.
async fn whole_page(c: &Client, shots: &Artifacts, name: &str, width: u32) {
    harness::set_viewport(c, width, 900).await;
    let height = harness::page_height(c, 600, 7000).await as u32;
    harness::set_viewport(c, width, height).await;
    shots.save(
        &format!("{name}-{width}.png"),
        &c.screenshot().await.unwrap(),
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn charts_and_tables_fit_their_cards_and_stay_readable_at_820_and_1366_px() {
    let run = SignedIn::start("charts").await;
    let (c, shots, base) = (run.c.clone(), &run.shots, run.base.clone());

    // A second log, sent through the pass page and mapped with the car's remembered columns.
    let file = shots.save("second-pass.csv", second_log().as_bytes());
    c.goto(&format!("{base}/passes/{SECOND}")).await.unwrap();
    c.find(Locator::Css("input[type=file]"))
        .await
        .unwrap()
        .send_keys(&file.display().to_string())
        .await
        .unwrap();
    harness::click(&c, "form[data-upload] button.primary").await;
    harness::expect_text(&c, "Read the log and keep it with the pass").await;
    harness::click(&c, "button.primary").await;
    harness::expect_text(&c, "What the log says").await;

    for (w, h) in [(820, 1180), (1366, 900)] {
        for path in pages() {
            harness::set_viewport(&c, w, h).await;
            c.goto(&format!("{base}{path}")).await.unwrap();
            harness::expect_text(&c, "Lockpoint").await;
            let name = path
                .trim_start_matches('/')
                .replace(['/', '?', '&', '='], "-");
            whole_page(&c, shots, &name, w).await;
            harness::set_viewport(&c, w, h).await;
            let past = overflowing(&c).await;
            assert!(past.is_empty(), "{path} at {w} px: {past:#?}");
            let charts = chart_text_px(&c).await;
            assert!(!charts.is_empty(), "{path} has charts");
            for (caption, px) in charts {
                assert!(px >= 10.99, "{path} at {w} px: {caption:?} text {px:.2} px");
            }
        }
        // The counter (its due list carries the forecasts by slip energy) keeps to its cards.
        harness::set_viewport(&c, w, h).await;
        c.goto(&format!("{base}/")).await.unwrap();
        harness::expect_text(&c, "Lockpoint").await;
        whole_page(&c, shots, "counter", w).await;
        harness::set_viewport(&c, w, h).await;
        let past = overflowing(&c).await;
        assert!(past.is_empty(), "the counter at {w} px: {past:#?}");
        // The tuning page's recommendation lists other settings, and the pass page compares.
        c.goto(&format!(
            "{base}/builds/4/tune?recommend=1&target_lockup=3300"
        ))
        .await
        .unwrap();
        harness::expect_text(&c, "Other settings nearby").await;
    }

    // The pass's charts open on its launch: the x axis runs from 1 s before the launch (the
    // figure the log analysis gives) to the file's end, less than a second after the lockup
    // in the demo's log.
    c.goto(&format!("{base}/passes/{LOGGED}")).await.unwrap();
    let launch = log_figure(&c, "Launch").await;
    let lockup = log_figure(&c, "Lockup").await;
    // "841 at 200 Hz (time read in ms)": the file's clock runs from 0 in even steps.
    let samples = log_figure(&c, "Samples").await;
    let rate: f64 = harness::figure(&c, "Samples")
        .await
        .split(" at ")
        .nth(1)
        .and_then(|r| r.split(' ').next()?.parse().ok())
        .expect("a sample rate");
    let file_end = (samples - 1.0) / rate;
    let (from, to) = x_span(&c, 0).await;
    assert!((from - (launch - 1.0)).abs() < 0.01, "{from} vs {launch}");
    assert!(
        (to - (lockup + 1.0).min(file_end)).abs() < 0.01,
        "{to} vs {lockup}"
    );
    let caption = harness::text_of(&c, "figure.chart figcaption").await;
    assert!(
        caption.contains(&format!(
            "{:.2}–{file_end:.2} s: from 1 s before the launch",
            launch - 1.0
        )),
        "{caption}"
    );
    // The whole file is a plain link away (no script needed), and a link leads back.
    harness::click_link(&c, "Show the whole file").await;
    let (from, to) = x_span(&c, 0).await;
    assert!(
        from.abs() < 0.01 && (to - file_end).abs() < 0.01,
        "{from}..{to}"
    );
    harness::expect_text(&c, "the whole file").await;
    harness::click_link(&c, "Back to the launch").await;
    let (from, _) = x_span(&c, 0).await;
    assert!((from - (launch - 1.0)).abs() < 0.01, "{from}");

    // Two passes on one chart: every line's and mark's label sits in the legend below the
    // plot, none on the area where the traces run.
    c.goto(&format!("{base}/passes/{LOGGED}?compare={SECOND}"))
        .await
        .unwrap();
    let placed = c
        .execute(
            "const svg = document.querySelector('figure.chart svg');
             const plot = svg.querySelector('#plot-area rect');
             const edge = svg.querySelector('.axis line').getBoundingClientRect().bottom;
             const labels = [...svg.querySelectorAll('.series > text, .mark > text')];
             return [svg.getAttribute('aria-label'), labels.length,
                     labels.filter(t => t.getBoundingClientRect().top <= edge).map(t => t.textContent),
                     plot !== null];",
            vec![],
        )
        .await
        .unwrap();
    assert!(
        placed[0]
            .as_str()
            .unwrap()
            .starts_with("Two passes, time from each launch"),
        "{placed}"
    );
    assert_eq!(placed[1], 6, "four lines and two lockups: {placed}");
    assert!(
        strings(&placed[2]).is_empty(),
        "labels on the plot: {placed}"
    );

    // The sheet, printed on Letter and A4: one page, the chart's text at 7 pt or more.
    c.goto(&format!("{base}/builds/1")).await.unwrap();
    harness::toggle(&c, "#sheets details.entry summary").await;
    harness::click(&c, "#sheets button.primary").await;
    harness::expect_text(&c, "Clutch setup sheet").await;
    let ticks = strings(
        &c.execute(
            "return [...document.querySelectorAll('figure.chart text.tick')].map(t => t.textContent);",
            vec![],
        )
        .await
        .unwrap(),
    );
    assert!(ticks.len() >= 6, "{ticks:?}");
    for (name, size) in [
        ("letter", fantoccini::wd::PrintSize::US_LETTER),
        ("a4", fantoccini::wd::PrintSize::A4),
    ] {
        let pdf = harness::print(&c, size).await;
        let path = shots.save(&format!("sheet-{name}.pdf"), &pdf);
        assert_eq!(pdf_pages(&path), 1, "the sheet fits one {name} page");
        let smallest = smallest_pt(&path, &ticks, "Counterweight");
        assert!(
            smallest >= 7.0,
            "{name}: chart ticks print at {smallest:.2} pt"
        );
        shots.pdf_first_page(&path, &format!("sheet-{name}"));
    }
    c.close().await.unwrap();
}

/// The smallest of `words` printed in `pdf`, in points: each word's height against the height
/// of `reference`, a label the sheet sets in its 9 pt body text (same typeface, so the ratio of
/// heights is the ratio of sizes).
fn smallest_pt(pdf: &Path, words: &[String], reference: &str) -> f64 {
    let out = Command::new("pdftotext")
        .args(["-bbox", "-f", "1", "-l", "1"])
        .arg(pdf)
        .arg("-")
        .output()
        .expect("pdftotext (poppler-utils) is installed");
    let html = String::from_utf8_lossy(&out.stdout);
    let boxes: Vec<(String, f64)> = html
        .lines()
        .filter_map(|l| {
            let l = l.trim().strip_prefix("<word ")?;
            let (attrs, rest) = l.split_once('>')?;
            let text = rest.strip_suffix("</word>")?.to_string();
            let num = |k: &str| -> Option<f64> {
                attrs
                    .split(&format!("{k}=\""))
                    .nth(1)?
                    .split('"')
                    .next()?
                    .parse()
                    .ok()
            };
            Some((text, num("yMax")? - num("yMin")?))
        })
        .collect();
    let heights =
        |w: &str| -> Vec<f64> { boxes.iter().filter(|b| b.0 == w).map(|b| b.1).collect() };
    let body = *heights(reference)
        .first()
        .unwrap_or_else(|| panic!("{reference} printed"));
    let sizes: Vec<f64> = words
        .iter()
        .flat_map(|w| heights(w))
        .map(|h| 9.0 * h / body)
        .collect();
    assert!(!sizes.is_empty(), "no tick label found in the PDF");
    sizes.into_iter().fold(f64::INFINITY, f64::min)
}
