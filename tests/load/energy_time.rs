//! How long `model::energy::energy_forecast` (the wear forecast by slip energy) takes: for each
//! demo build, and for one with 20 passes on 20 dates between its cover heights, none logged (so
//! 21 launch previews). Then how long the whole-launch friction of a build's passes
//! (`model::calibration::launch_fits`) takes worked out (cold) and read back kept (warm), for
//! the demo's logged build and for 20 passes with a typed lock time.
//! `cargo run --release --example energy_time`; best of 9 runs each.

use std::time::{Duration, Instant};

use lockpoint::model::as_of::BuildAsOf;
use lockpoint::model::calibration::launch_fits;
use lockpoint::model::energy::energy_forecast;
use lockpoint::model::wear::current_disc;
use lockpoint::records::measure::{EngineSpeed, Seconds};
use lockpoint::records::settings::SettingsInput;
use lockpoint::records::stored::Dossier;
use lockpoint::{db, demo};

fn best_of(d: &Dossier, settings: &SettingsInput) -> Duration {
    time(|| energy_forecast(d, &BuildAsOf::now(d, settings)).is_ok())
}

fn time<T>(f: impl Fn() -> T) -> Duration {
    (0..9)
        .map(|_| {
            let t = Instant::now();
            std::hint::black_box(f());
            t.elapsed()
        })
        .min()
        .unwrap_or_default()
}

/// The whole-launch fits of `d`'s passes worked out (cold) and kept (warm).
fn fits_time(label: &str, d: &mut Dossier, settings: &SettingsInput) {
    d.launch_fits.clear();
    let cold = time(|| launch_fits(d, settings).len());
    d.launch_fits = launch_fits(d, settings);
    let warm = time(|| launch_fits(d, settings).len());
    println!(
        "{label}: {} passes fitted: cold {cold:?}, kept {warm:?}",
        d.launch_fits.len()
    );
}

#[tokio::main(flavor = "current_thread")]
async fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = std::env::temp_dir().join(format!("lockpoint-energy-{}", std::process::id()));
    std::fs::create_dir_all(&dir)?;
    let pool = db::open(&dir.join("demo.db")).await?;
    demo::seed_if_empty(&pool)
        .await
        .map_err(|e| e.to_string())?;
    let mut conn = pool.acquire().await?;
    let settings = db::settings::get(&mut conn).await?;
    let mut twenty = None;
    for id in 1.. {
        let Some(mut d) = db::dossier::load(&mut conn, id).await? else {
            break;
        };
        let f = energy_forecast(&d, &BuildAsOf::now(&d, &settings));
        println!(
            "build {id}: {} passes, {} heights, {} logs: {:?} ({})",
            d.passes.len(),
            d.heights.len(),
            d.logs.len(),
            best_of(&d, &settings),
            f.as_ref()
                .map_or_else(|e| format!("{e:?}"), |_| "forecast".into())
        );
        if !d.logs.is_empty() {
            fits_time(&format!("build {id}, whole launch"), &mut d, &settings);
        }
        if f.is_ok() && twenty.is_none() && d.heights.len() >= 2 {
            twenty = Some(d);
        }
    }
    if let Some(mut d) = twenty {
        // 20 passes, one a day from the day after the current disc's first cover height, none
        // logged, and its last cover height moved to the day after the last pass.
        let first = current_disc(&d.heights)[0].data.measured_on.clone();
        let start = jiff::civil::Date::strptime("%Y-%m-%d", &first)?;
        let template = d.passes.first().cloned().ok_or("a pass")?;
        d.passes = (1..=20)
            .map(|k| {
                let mut p = template.clone();
                p.id = 1_000_000 + k;
                p.data.run_on = (start + jiff::Span::new().days(k)).to_string();
                p
            })
            .collect();
        let last = d.heights.len() - 1;
        d.heights[last].data.measured_on = (start + jiff::Span::new().days(21)).to_string();
        d.logs.clear();
        println!(
            "20 passes on 20 dates, no logs: {:?} ({})",
            best_of(&d, &settings),
            energy_forecast(&d, &BuildAsOf::now(&d, &settings))
                .map_or_else(|e| format!("{e:?}"), |f| format!("{} intervals", f.fit.n))
        );
        // The same 20 passes, each with its launch speed and a typed lock time.
        for p in &mut d.passes {
            p.data.launch_rpm = p.data.launch_rpm.or(Some(EngineSpeed::from_rpm(4500.0)));
            p.data.lockup_time_s = Some(Seconds::from_s(1.3));
        }
        fits_time("20 passes, typed lock times", &mut d, &settings);
    }
    drop(conn);
    pool.close().await;
    std::fs::remove_dir_all(&dir)?;
    Ok(())
}
