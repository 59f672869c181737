//! A refused entry in a real browser: the page comes back at the form with its messages, the
//! cursor in the first field to fix, and the top of the page says the save failed.

use fantoccini::Locator;

use super::harness::{self, SignedIn};

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_refused_entry_opens_at_its_form_and_says_so_at_the_top() {
    let run = SignedIn::start("entries").await;
    let (c, shots, base) = (run.c.clone(), &run.shots, run.base.clone());
    for (w, h) in [(1366, 900), (820, 1180)] {
        harness::set_viewport(&c, w, h).await;
        c.goto(&format!("{}/builds/1", base)).await.unwrap();
        harness::toggle(&c, "#height-entry summary").await;
        harness::fill(&c, "#height-form input[name=height]", "about two inches").await;
        harness::click(&c, "#height-form button[type=submit]").await;
        harness::expect_text(&c, "Not saved. The cover height has 1 field to fix").await;
        // The page opens where the message is: the refused input has the cursor and is on
        // screen, with its message beside it.
        let v = c
            .execute(
                "const a = document.activeElement; const r = a.getBoundingClientRect();
                 const m = document.getElementById(a.name + '-msg');
                 return [a.name, r.top >= 0 && r.bottom <= window.innerHeight,
                         m ? m.textContent : ''];",
                vec![],
            )
            .await
            .unwrap();
        assert_eq!(v[0], "height", "{w} px: the cursor is in the refused field");
        assert_eq!(v[1], true, "{w} px: the refused field is on screen");
        assert!(
            !v[2].as_str().unwrap_or("").is_empty(),
            "{w} px: its message shows"
        );
        shots.save(
            &format!("refused-height-at-the-form-{w}x{h}.png"),
            &c.screenshot().await.unwrap(),
        );
        // The banner at the top links to the form.
        let link = c
            .find(Locator::Css("#refused a"))
            .await
            .unwrap()
            .attr("href")
            .await
            .unwrap();
        assert_eq!(link.as_deref(), Some("#height-form"));
        shots.screen(&c, "refused-height", w, h).await;
    }
    c.close().await.unwrap();
}
