//! The scale generator: a shop grown to 10,000 customers (one car and one build each),
//! 1,000,000 cover-height measurements and 200,000 passes, all invented, from a fixed seed (the
//! same seed gives the same database). Used by `tests/load/scale.sh`.
//!
//! `cargo run --release --example scale -- --db FILE [--seed N] [--customers N]
//!  [--heights-per-build N] [--passes-per-build N]`
//!
//! The database is created and migrated by `db::open`; the rows are then loaded the way an
//! import loads them: in one transaction with the triggers set aside (so the audit log does not
//! record a million new edits) and put back unchanged, after which the derived tables (work-due
//! status, search index) are worked out with `status::rebuild_derived`. A sign-in `loadtest`
//! (admin, password `load-test-password`) is added for the load script.

use std::path::PathBuf;
use std::time::Instant;

use lockpoint::records::user::{NewUser, Role};
use lockpoint::{auth, db, status};
use sqlx::{AssertSqlSafe, SqliteConnection};

/// The sign-in the load script uses.
const USER: &str = "loadtest";
const PASSWORD: &str = "load-test-password";

/// A small deterministic generator (SplitMix64): no dependency, same numbers on every machine.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
    /// Uniform in [lo, hi).
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn pick<'a>(&mut self, from: &[&'a str]) -> &'a str {
        from[self.below(from.len() as u64) as usize]
    }
}

// Invented names and generic car descriptions only.
const FIRST: &[&str] = &[
    "Odile", "Torvald", "Ines", "Avery", "Marek", "Sunniva", "Edvin", "Halla", "Jory", "Kestrel",
    "Linnea", "Bram", "Corin", "Dagny", "Emrys", "Fenna", "Gideon", "Hesper", "Ivo", "Juno",
    "Kaspar", "Liesel", "Mato", "Nerys", "Orrin", "Pella", "Quill", "Rosalind", "Soren", "Tamsin",
];
const LAST: &[&str] = &[
    "Rask",
    "Halvorsen",
    "Lindqvist",
    "Brennemark",
    "Okonkwo-Vale",
    "Threlkeld",
    "Marchetti",
    "Osei",
    "Vantongeren",
    "Quarrier",
    "Ashdown",
    "Belknap",
    "Corvell",
    "Dunmore",
    "Eskerud",
    "Farrowby",
    "Gullstrand",
    "Hollenbeck",
    "Iverholt",
    "Jessup",
    "Kettering",
    "Lowrance",
    "Mirabeau",
    "Norrland",
    "Oakhurst",
    "Pemberley",
    "Quennell",
    "Rutherby",
    "Stavik",
    "Tolland",
    "Underhay",
    "Vossberg",
    "Whitlock",
    "Yarrow",
    "Zellweg",
    "Arkwood",
    "Birchall",
    "Crowther",
    "Dalbeck",
    "Eldridge",
];
const BODY: &[&str] = &[
    "two-door",
    "four-door",
    "roadster",
    "wagon",
    "pickup",
    "hatchback",
];
const LAYOUT: &[&str] = &["V8", "V6", "inline-six", "flat-four", "inline-four"];
const ENGINE: &[&str] = &[
    "carbureted big block",
    "injected small block",
    "turbocharged inline-six",
    "supercharged V8",
    "naturally aspirated flat-four",
    "twin-turbo V6",
];
const MATERIAL: &[&str] = &["organic", "molded", "cermet", "sintered_iron"];

struct Args {
    db: PathBuf,
    seed: u64,
    customers: u64,
    heights_per_build: u64,
    passes_per_build: u64,
}

fn args() -> Result<Args, String> {
    let mut a = Args {
        db: PathBuf::new(),
        seed: 13,
        customers: 10_000,
        heights_per_build: 100,
        passes_per_build: 20,
    };
    let mut it = std::env::args().skip(1);
    while let Some(flag) = it.next() {
        let value = it.next().ok_or(format!("{flag} needs a value"))?;
        let number = || value.parse::<u64>().map_err(|e| format!("{flag}: {e}"));
        match flag.as_str() {
            "--db" => a.db = PathBuf::from(&value),
            "--seed" => a.seed = number()?,
            "--customers" => a.customers = number()?,
            "--heights-per-build" => a.heights_per_build = number()?,
            "--passes-per-build" => a.passes_per_build = number()?,
            _ => return Err(format!("unknown option {flag}")),
        }
    }
    if a.db.as_os_str().is_empty() {
        return Err("--db FILE is required".into());
    }
    Ok(a)
}

/// A date `day` days after 2016-01-01 (a plain day count, months of 30 days is close enough
/// for invented history but must stay a valid date: 28-day months).
fn date(day: u64) -> String {
    let (y, rest) = (2016 + day / 336, day % 336);
    format!("{y}-{:02}-{:02}", rest / 28 + 1, rest % 28 + 1)
}

#[tokio::main(flavor = "current_thread")]
async fn main() -> Result<(), Box<dyn std::error::Error>> {
    let a = args().map_err(|e| format!("{e}\nusage: scale --db FILE [--seed N] [--customers N] [--heights-per-build N] [--passes-per-build N]"))?;
    if a.db.exists() {
        return Err(format!("{} exists: give a new file", a.db.display()).into());
    }
    let started = Instant::now();
    let pool = db::open(&a.db).await?;
    let hash = auth::hash_password(PASSWORD.into()).await?;
    let mut tx = db::audit::begin_as(&pool, None, "scale generator").await?;
    db::users::insert(
        &mut tx,
        &NewUser::parse(USER, PASSWORD, Role::Admin)?,
        &hash,
    )
    .await?;

    let triggers: Vec<(String, String)> =
        sqlx::query_as("SELECT name, sql FROM sqlite_master WHERE type = 'trigger' ORDER BY name")
            .fetch_all(&mut *tx)
            .await?;
    for (name, _) in &triggers {
        sqlx::query(AssertSqlSafe(format!("DROP TRIGGER \"{name}\"")))
            .execute(&mut *tx)
            .await?;
    }
    fill(&mut tx, &a).await?;
    for (_, sql) in &triggers {
        sqlx::raw_sql(AssertSqlSafe(sql.clone()))
            .execute(&mut *tx)
            .await?;
    }
    let loaded = started.elapsed();
    let builds = status::rebuild_derived(&mut tx).await?;
    tx.commit().await?;
    sqlx::query("PRAGMA optimize").execute(&pool).await?;
    pool.close().await;
    eprintln!(
        "{}: {} customers, {} measurements, {} passes; rows in {:.1} s, status of {builds} builds and the search index in {:.1} s",
        a.db.display(),
        a.customers,
        a.customers * a.heights_per_build,
        a.customers * a.passes_per_build,
        loaded.as_secs_f64(),
        (started.elapsed() - loaded).as_secs_f64()
    );
    Ok(())
}

async fn fill(conn: &mut SqliteConnection, a: &Args) -> sqlx::Result<()> {
    let mut r = Rng(a.seed);
    for id in 1..=a.customers as i64 {
        let (first, last) = (r.pick(FIRST), r.pick(LAST));
        sqlx::query("INSERT INTO customers (id, name, phone, email) VALUES (?, ?, ?, ?)")
            .bind(id)
            .bind(format!("{first} {last}"))
            .bind(format!("{:03}-555-{:04}", 200 + r.below(700), id % 10_000))
            .bind(format!(
                "{}.{}{id}@example.test",
                first.to_lowercase(),
                last.to_lowercase()
            ))
            .execute(&mut *conn)
            .await?;
        let scale = r.range(0.8, 1.4);
        let curve: Vec<[f64; 2]> = [410.0, 455.0, 480.0, 470.0, 430.0]
            .iter()
            .enumerate()
            .map(|(i, t)| [3000.0 + 1000.0 * i as f64, (t * scale).round()])
            .collect();
        sqlx::query(
            "INSERT INTO cars (id, customer_id, description, engine, weight_kg, transmission,
                 launch_rpm, torque_curve_nm)
             VALUES (?, ?, ?, ?, ?, ?, 4500, ?)",
        )
        .bind(id)
        .bind(id)
        .bind(format!(
            "{}, {:.1} L {}, {}-speed",
            r.pick(BODY),
            r.range(1.6, 8.0),
            r.pick(LAYOUT),
            4 + r.below(3)
        ))
        .bind(r.pick(ENGINE))
        .bind(r.range(1100.0, 1800.0).round())
        .bind("manual")
        .bind(serde_json::to_string(&curve).unwrap_or_default())
        .execute(&mut *conn)
        .await?;
        let rate = r.range(55.0, 80.0);
        sqlx::query(
            "INSERT INTO builds (id, car_id, label, disc_count, facing_material, facing_od_mm,
                 facing_id_mm, disc_thickness_new_mm, disc_thickness_min_mm, spring_count,
                 spring_rate_n_per_mm, adjuster_tpi, base_compression_mm, lever_count,
                 lever_mass_g, lever_cg_radius_mm, lever_arm_ratio, shim_stack_mm, status)
             VALUES (?, ?, ?, ?, ?, 264.16, 167.64, 7.62, 6.1, 6, ?, 16, 5.59, 3, 12, 104.1, 2.6,
                 '[0.254,0.254,0.508]', ?)",
        )
        .bind(id)
        .bind(id)
        .bind(format!("Build {id}"))
        .bind(1 + r.below(2) as i64)
        .bind(r.pick(MATERIAL))
        .bind(rate)
        .bind(if r.below(20) == 0 {
            "retired"
        } else {
            "active"
        })
        .execute(&mut *conn)
        .await?;
        let mut day = r.below(2000);
        for turns in [2.0, 2.5] {
            sqlx::query(
                "INSERT INTO setup_changes (build_id, changed_on, adjuster_turns, counterweight_g)
                 VALUES (?, ?, ?, ?)",
            )
            .bind(id)
            .bind(date(day))
            .bind(turns)
            .bind(r.range(10.0, 40.0).round())
            .execute(&mut *conn)
            .await?;
            day += 1 + r.below(30);
        }
        let test: i64 = sqlx::query_scalar(
            "INSERT INTO bench_tests (build_id, tested_on) VALUES (?, ?) RETURNING id",
        )
        .bind(id)
        .bind(date(day))
        .fetch_one(&mut *conn)
        .await?;
        let spread = if r.below(100) == 0 { 0.12 } else { 0.03 };
        for position in 1..=6 {
            sqlx::query(
                "INSERT INTO bench_springs (bench_test_id, position, compression_mm, force_n)
                 VALUES (?, ?, 10, ?)",
            )
            .bind(test)
            .bind(position)
            .bind(rate * 10.0 * r.range(1.0 - spread / 2.0, 1.0 + spread / 2.0))
            .execute(&mut *conn)
            .await?;
        }
        heights(conn, &mut r, id, day, a.heights_per_build).await?;
        for n in 0..a.passes_per_build {
            sqlx::query(
                "INSERT INTO passes (build_id, run_on, track, launch_rpm, sixty_ft_s, et_s,
                     observed_lockup_rpm)
                 VALUES (?, ?, 'Test strip', ?, ?, ?, ?)",
            )
            .bind(id)
            .bind(date(day + n * 3))
            .bind(r.range(4200.0, 4800.0).round())
            .bind(r.range(1.2, 1.6))
            .bind(r.range(9.5, 12.0))
            .bind(r.range(5200.0, 6400.0).round())
            .execute(&mut *conn)
            .await?;
        }
    }
    Ok(())
}

/// A build's cover heights: a new disc's baseline, then wear with the passes. Like a shop that
/// keeps up with its work, a shim is pulled well before the shimming limit and a new disc is
/// fitted before the wear allowance or once the stack is gone, so most builds end with nothing
/// due and a few percent with something due or due soon (the history still holds several discs
/// and shim pulls per build).
async fn heights(
    conn: &mut SqliteConnection,
    r: &mut Rng,
    build_id: i64,
    mut day: u64,
    count: u64,
) -> sqlx::Result<()> {
    let shims = [0.254, 0.254, 0.508];
    let per_pass = r.range(0.001, 0.006);
    // Wear since the new disc, and the thickness of the shims pulled since.
    let (mut passes, mut pulled, mut wear, mut pulled_mm) = (0_i64, 0_usize, 0.0, 0.0);
    let mut new_disc = true;
    for _ in 0..count {
        let height: f64 = 40.0 + wear - pulled_mm;
        sqlx::query(
            "INSERT INTO cover_heights (build_id, measured_on, height_mm, passes, shims_pulled,
                 new_disc)
             VALUES (?, ?, ?, ?, ?, ?)",
        )
        .bind(build_id)
        .bind(date(day))
        .bind((height * 1000.0).round() / 1000.0)
        .bind(passes)
        .bind(pulled as i64)
        .bind(new_disc)
        .execute(&mut *conn)
        .await?;
        new_disc = false;
        day += 1 + r.below(4);
        let more = 2 + r.below(8) as i64;
        passes += more;
        wear += per_pass * more as f64;
        let growth = wear - pulled_mm;
        if wear >= 1.2 || (pulled == shims.len() && growth >= 0.2) {
            (passes, pulled, wear, pulled_mm, new_disc) = (0, 0, 0.0, 0.0, true);
        } else if growth >= 0.2 && pulled < shims.len() {
            pulled_mm += shims[pulled];
            pulled += 1;
        }
    }
    Ok(())
}
