//! The scale generator: a shop grown to 10,000 customers (one car and one build each),
//! 1,000,000 cover-height measurements and 200,000 passes, all invented, from a fixed seed (the
//! same seed gives the same shop). Used by `tests/load/scale.sh` and
//! `tests/load/import_scale.sh`.
//!
//! `cargo run --release --example scale -- --db FILE [--seed N] [--json FILE] [--customers N]
//!  [--heights-per-build N] [--passes-per-build N]`
//!
//! The shop is written as an export document (the JSON `lockpoint export` writes, streamed row
//! by row: `db::export::JsonWriter`), and the database is then built from it by the project's
//! own import, `backup::import_file`, the function `lockpoint import` runs (rows checked and
//! loaded with the triggers set aside, then the work-due status and the search index worked
//! out). The rows every shop starts with (the shop settings, the audit actor) and a sign-in
//! `loadtest` (admin, password `load-test-password`, for the load scripts) come from a small
//! seed database made by `db::open` and the usual user insert, copied into the document as an
//! export copies them. With `--json FILE` the document is kept there (without `--db`, only the
//! document is written); otherwise it is staged beside the database and removed.
//!
//! `--check-due FILE` generates nothing: it compares the counter's work-due list of the
//! database FILE, read from the kept per-build status (`status::work_due`), with the list
//! worked out from the full history (`model::work_due`), and fails when they differ
//! (`tests/load/import_scale.sh` runs it on the database `lockpoint import` made).

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::time::Instant;

use lockpoint::backup::{self, TempPath};
use lockpoint::db::export::{self, Cell, JsonWriter, Plan};
use lockpoint::progress::Progress;
use lockpoint::records::user::{NewUser, Role};
use lockpoint::{auth, db, model, status};

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
    db: Option<PathBuf>,
    json: Option<PathBuf>,
    check_due: Option<PathBuf>,
    seed: u64,
    customers: u64,
    heights_per_build: u64,
    passes_per_build: u64,
}

fn args() -> Result<Args, String> {
    let mut a = Args {
        db: None,
        json: None,
        check_due: None,
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
            "--db" => a.db = Some(PathBuf::from(&value)),
            "--json" => a.json = Some(PathBuf::from(&value)),
            "--check-due" => a.check_due = Some(PathBuf::from(&value)),
            "--seed" => a.seed = number()?,
            "--customers" => a.customers = number()?,
            "--heights-per-build" => a.heights_per_build = number()?,
            "--passes-per-build" => a.passes_per_build = number()?,
            _ => return Err(format!("unknown option {flag}")),
        }
    }
    if a.db.is_none() && a.json.is_none() && a.check_due.is_none() {
        return Err("--db FILE (or --json FILE, or --check-due FILE) is required".into());
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
    let a = args().map_err(|e| format!("{e}\nusage: scale --db FILE [--seed N] [--json FILE] [--customers N] [--heights-per-build N] [--passes-per-build N] | scale --check-due FILE"))?;
    if let Some(path) = &a.check_due {
        return check_due(path).await;
    }
    for path in a.db.iter().chain(&a.json) {
        if path.exists() {
            return Err(format!("{} exists: give a new file", path.display()).into());
        }
    }
    let started = Instant::now();
    let beside =
        a.db.as_ref()
            .or(a.json.as_ref())
            .map_or(PathBuf::from("."), |p| backup::folder_of(p));
    let staged = TempPath::unique_in(&beside, ".scale-export", ".json");
    let json = a
        .json
        .clone()
        .unwrap_or_else(|| staged.path().to_path_buf());
    let rows = write_document(&a, &json, &beside).await?;
    let written = started.elapsed();
    eprintln!(
        "{}: {} customers, {} measurements, {} passes; {rows} rows written in {:.1} s",
        json.display(),
        a.customers,
        a.customers * a.heights_per_build,
        a.customers * a.passes_per_build,
        written.as_secs_f64()
    );
    if let Some(db_path) = &a.db {
        let done = backup::import_file(db_path, &json, &mut Progress::on_terminal()).await?;
        let pool = db::open(db_path).await?;
        sqlx::query("PRAGMA optimize").execute(&pool).await?;
        pool.close().await;
        eprintln!(
            "{}: imported {} rows into {} tables in {:.1} s (work-due status and search index \
             included)",
            db_path.display(),
            done.imported.rows,
            done.imported.tables,
            (started.elapsed() - written).as_secs_f64()
        );
    }
    drop(staged);
    Ok(())
}

/// The kept due list of the database at `path` against the one from the full history.
async fn check_due(path: &Path) -> Result<(), Box<dyn std::error::Error>> {
    let pool = backup::open_existing(path).await?;
    let mut conn = pool.acquire().await?;
    let settings = db::settings::get(&mut conn).await?;
    let kept = status::work_due(&mut conn, &settings).await?;
    let full = model::due::work_due(
        &db::builds::active(&mut conn).await?,
        &db::heights::for_active_builds(&mut conn).await?,
        &db::bench::for_active_builds(&mut conn).await?,
        &settings,
    );
    drop(conn);
    pool.close().await;
    if format!("{kept:?}") != format!("{full:?}") {
        return Err(format!(
            "{}: the kept due list ({} lines) differs from the full history's ({} lines)",
            path.display(),
            kept.len(),
            full.len()
        )
        .into());
    }
    println!(
        "due list: {} lines, equal to the one worked out from the full history",
        kept.len()
    );
    Ok(())
}

/// Whether the generator fills `table`: every record table but the shop's settings; every other
/// table is copied from the seed database.
fn generated(table: &str) -> bool {
    table != "shop_settings" && lockpoint::records::tables::RECORD_TABLES.contains(&table)
}

/// Writes the export document of the invented shop to `json`: the tables in the order an
/// export of the seed database has them, each generated table written row by row.
async fn write_document(
    a: &Args,
    json: &Path,
    beside: &Path,
) -> Result<u64, Box<dyn std::error::Error>> {
    let seed_file = TempPath::unique_in(beside, ".scale-seed", ".db");
    let pool = db::open(seed_file.path()).await?;
    let hash = auth::hash_password(PASSWORD.into()).await?;
    let mut tx = db::audit::begin_as(&pool, None, "scale generator").await?;
    db::users::insert(
        &mut tx,
        &NewUser::parse(USER, PASSWORD, Role::Admin)?,
        &hash,
    )
    .await?;
    tx.commit().await?;

    let mut progress = Progress::on_terminal();
    let mut tx = pool.begin().await?;
    let plan = export::plan(&mut tx).await?;
    let file = File::create_new(json)?;
    let mut out = JsonWriter::begin(BufWriter::with_capacity(1 << 16, file), plan.version)?;
    let mut rows = 0;
    for table in &plan.tables {
        if generated(&table.name) {
            out.table(&table.name)?;
            let columns = columns(&table.name);
            let mut n = 0;
            fill(a, &table.name, &mut |cells| {
                n += 1;
                progress.rows("writing", &table.name, n, None);
                out.row(&columns, cells)
            })?;
            out.end_table()?;
            rows += n;
        } else {
            let one = Plan {
                version: plan.version,
                tables: vec![table.clone()],
            };
            rows += export::write(&mut tx, &one, &mut out, None, &mut progress).await?;
        }
    }
    progress.done();
    tx.rollback().await?;
    pool.close().await;
    let mut file = out.finish()?.into_inner().map_err(|e| e.into_error())?;
    file.flush()?;
    file.sync_all()?;
    Ok(rows)
}

/// The columns the generator writes for each of its tables (the rest keep their defaults).
fn columns(table: &str) -> Vec<String> {
    let names: &[&str] = match table {
        "customers" => &["id", "name", "phone", "email"],
        "cars" => &[
            "id",
            "customer_id",
            "description",
            "engine",
            "weight_kg",
            "transmission",
            "launch_rpm",
            "torque_curve_nm",
        ],
        "builds" => &[
            "id",
            "car_id",
            "label",
            "disc_count",
            "facing_material",
            "facing_od_mm",
            "facing_id_mm",
            "disc_thickness_new_mm",
            "disc_thickness_min_mm",
            "spring_count",
            "spring_rate_n_per_mm",
            "adjuster_tpi",
            "base_compression_mm",
            "lever_count",
            "lever_mass_g",
            "lever_cg_radius_mm",
            "lever_arm_ratio",
            "shim_stack_mm",
            "status",
        ],
        "setup_changes" => &[
            "id",
            "build_id",
            "changed_on",
            "adjuster_turns",
            "counterweight_g",
        ],
        "bench_tests" => &["id", "build_id", "tested_on"],
        "bench_springs" => &[
            "id",
            "bench_test_id",
            "position",
            "compression_mm",
            "force_n",
        ],
        "cover_heights" => &[
            "id",
            "build_id",
            "measured_on",
            "height_mm",
            "passes",
            "shims_pulled",
            "new_disc",
        ],
        "passes" => &[
            "id",
            "build_id",
            "run_on",
            "track",
            "launch_rpm",
            "sixty_ft_s",
            "et_s",
            "observed_lockup_rpm",
        ],
        _ => &[],
    };
    names.iter().map(|n| n.to_string()).collect()
}

type Emit<'a> = dyn FnMut(&[Cell]) -> std::io::Result<()> + 'a;

fn text(s: impl Into<String>) -> Cell {
    Cell::Text(s.into())
}

/// The whole invented shop, customer by customer, with every random draw in the same order
/// whichever table is asked for; the rows of table `want` are handed to `emit`. Ids are given
/// in order from 1, as the database numbers rows inserted into an empty table.
fn fill(a: &Args, want: &str, emit: &mut Emit<'_>) -> std::io::Result<()> {
    let mut r = Rng(a.seed);
    let (mut setup_id, mut spring_id, mut height_id, mut pass_id) = (0, 0, 0, 0);
    for id in 1..=a.customers as i64 {
        let (first, last) = (r.pick(FIRST), r.pick(LAST));
        let area = 200 + r.below(700);
        if want == "customers" {
            emit(&[
                Cell::Integer(id),
                text(format!("{first} {last}")),
                text(format!("{area:03}-555-{:04}", id % 10_000)),
                text(format!(
                    "{}.{}{id}@example.test",
                    first.to_lowercase(),
                    last.to_lowercase()
                )),
            ])?;
        }
        let scale = r.range(0.8, 1.4);
        let (body, litres, layout, speeds) = (
            r.pick(BODY),
            r.range(1.6, 8.0),
            r.pick(LAYOUT),
            4 + r.below(3),
        );
        let engine = r.pick(ENGINE);
        let weight = r.range(1100.0, 1800.0).round();
        if want == "cars" {
            let curve: Vec<[f64; 2]> = [410.0, 455.0, 480.0, 470.0, 430.0]
                .iter()
                .enumerate()
                .map(|(i, t)| [3000.0 + 1000.0 * i as f64, (t * scale).round()])
                .collect();
            emit(&[
                Cell::Integer(id),
                Cell::Integer(id),
                text(format!("{body}, {litres:.1} L {layout}, {speeds}-speed")),
                text(engine),
                Cell::Real(weight),
                text("manual"),
                Cell::Real(4500.0),
                text(serde_json::to_string(&curve).unwrap_or_default()),
            ])?;
        }
        let rate = r.range(55.0, 80.0);
        let discs = 1 + r.below(2) as i64;
        let material = r.pick(MATERIAL);
        let status = if r.below(20) == 0 {
            "retired"
        } else {
            "active"
        };
        if want == "builds" {
            emit(&[
                Cell::Integer(id),
                Cell::Integer(id),
                text(format!("Build {id}")),
                Cell::Integer(discs),
                text(material),
                Cell::Real(264.16),
                Cell::Real(167.64),
                Cell::Real(7.62),
                Cell::Real(6.1),
                Cell::Integer(6),
                Cell::Real(rate),
                Cell::Real(16.0),
                Cell::Real(5.59),
                Cell::Integer(3),
                Cell::Real(12.0),
                Cell::Real(104.1),
                Cell::Real(2.6),
                text("[0.254,0.254,0.508]"),
                text(status),
            ])?;
        }
        let mut day = r.below(2000);
        for turns in [2.0, 2.5] {
            let counterweight = r.range(10.0, 40.0).round();
            setup_id += 1;
            if want == "setup_changes" {
                emit(&[
                    Cell::Integer(setup_id),
                    Cell::Integer(id),
                    text(date(day)),
                    Cell::Real(turns),
                    Cell::Real(counterweight),
                ])?;
            }
            day += 1 + r.below(30);
        }
        // One bench test per build: its id is the build's.
        if want == "bench_tests" {
            emit(&[Cell::Integer(id), Cell::Integer(id), text(date(day))])?;
        }
        let spread = if r.below(100) == 0 { 0.12 } else { 0.03 };
        for position in 1..=6 {
            let force = rate * 10.0 * r.range(1.0 - spread / 2.0, 1.0 + spread / 2.0);
            spring_id += 1;
            if want == "bench_springs" {
                emit(&[
                    Cell::Integer(spring_id),
                    Cell::Integer(id),
                    Cell::Integer(position),
                    Cell::Real(10.0),
                    Cell::Real(force),
                ])?;
            }
        }
        heights(&mut r, id, day, a.heights_per_build, &mut |cells| {
            height_id += 1;
            if want == "cover_heights" {
                let mut row = vec![Cell::Integer(height_id)];
                row.extend_from_slice(cells);
                emit(&row)?;
            }
            Ok(())
        })?;
        for n in 0..a.passes_per_build {
            let launch = r.range(4200.0, 4800.0).round();
            let (sixty, et) = (r.range(1.2, 1.6), r.range(9.5, 12.0));
            let lockup = r.range(5200.0, 6400.0).round();
            pass_id += 1;
            if want == "passes" {
                emit(&[
                    Cell::Integer(pass_id),
                    Cell::Integer(id),
                    text(date(day + n * 3)),
                    text("Test strip"),
                    Cell::Real(launch),
                    Cell::Real(sixty),
                    Cell::Real(et),
                    Cell::Real(lockup),
                ])?;
            }
        }
    }
    Ok(())
}

/// A build's cover heights (each row without its id): a new disc's baseline, then wear with
/// the passes. Like a shop that keeps up with its work, a shim is pulled well before the
/// shimming limit and a new disc is fitted before the wear allowance or once the stack is gone,
/// so most builds end with nothing due and a few percent with something due or due soon (the
/// history still holds several discs and shim pulls per build).
fn heights(
    r: &mut Rng,
    build_id: i64,
    mut day: u64,
    count: u64,
    emit: &mut Emit<'_>,
) -> std::io::Result<()> {
    let shims = [0.254, 0.254, 0.508];
    let per_pass = r.range(0.001, 0.006);
    // Wear since the new disc, and the thickness of the shims pulled since.
    let (mut passes, mut pulled, mut wear, mut pulled_mm) = (0_i64, 0_usize, 0.0, 0.0);
    let mut new_disc = true;
    for _ in 0..count {
        let height: f64 = 40.0 + wear - pulled_mm;
        emit(&[
            Cell::Integer(build_id),
            text(date(day)),
            Cell::Real((height * 1000.0).round() / 1000.0),
            Cell::Integer(passes),
            Cell::Integer(pulled as i64),
            Cell::Integer(i64::from(new_disc)),
        ])?;
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
