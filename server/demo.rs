//! An invented demo shop for `lockpoint serve --demo`: staff, customers, cars with torque curves,
//! clutch builds with bench tests, cover-height histories and passes. Every name is made up.
//! Values are typed here in the shop's trade units (in, lbf, lbf*ft) and stored in storage units.

use crate::db::customers::Customer;
use crate::db::record::Stored;
use crate::records::measure::{
    EngineSpeed, Force, Grams, Length, Mass, Seconds, SpringRate, Temperature, Torque,
};
use crate::records::stored::{Build, Car, Height, Pass, Setup};
use sqlx::{SqliteConnection, SqlitePool};

use crate::records::bench::{BenchInput, SpringReading};
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::date::{Date, ShopZone};
use crate::records::height::{HeightContext, HeightInput};
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::user::{NewUser, Role};
use crate::records::{Ctx, FieldErrors, field};
use crate::{auth, db};
use clutch::units::Units;

mod log;

pub const DEMO_USERNAME: &str = "demo";
pub const DEMO_PASSWORD: &str = "lockpoint-demo";
/// The demo's second account, a technician (no admin pages), with the same password.
pub const DEMO_TECH_USERNAME: &str = "bench";

/// Any failure while loading the demo (a bug: the demo data must pass the same checks as input).
pub type DemoError = Box<dyn std::error::Error + Send + Sync>;

const IN: Units = Units::Imperial;

fn inch(v: f64) -> Length {
    Length::from_mm(IN.length_to_mm(v))
}
fn lbf(v: f64) -> Force {
    Force::from_n(IN.force_to_n(v))
}
fn lbf_per_in(v: f64) -> SpringRate {
    SpringRate::from_n_per_mm(IN.rate_to_n_per_mm(v))
}

/// Loads the demo shop into an empty database; returns false (and changes nothing) otherwise.
pub async fn seed_if_empty(pool: &SqlitePool) -> Result<bool, DemoError> {
    let mut tx = db::audit::begin_as(pool, None, "demo data").await?;
    let users = db::users::count(&mut tx).await?;
    let customers: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM customers")
        .fetch_one(&mut *tx)
        .await?;
    if users > 0 || customers > 0 {
        return Ok(false);
    }
    let hash = auth::hash_password(DEMO_PASSWORD.into()).await?;
    let admin = NewUser::parse(DEMO_USERNAME, DEMO_PASSWORD, Role::Admin)?;
    let admin_id = db::users::insert(&mut tx, &admin, &hash).await?;
    let tech = NewUser::parse(DEMO_TECH_USERNAME, DEMO_PASSWORD, Role::Tech)?;
    db::users::insert(&mut tx, &tech, &hash).await?;
    sqlx::query(
        "UPDATE shop_settings SET name = 'Quarry Road Clutch & Driveline',
             phone = '555-0142', email = 'counter@quarryroad.example',
             address = '18 Quarry Road, Unit 4' WHERE id = 1",
    )
    .execute(&mut *tx)
    .await?;
    for customer in demo_customers() {
        seed_customer(&mut tx, admin_id, customer).await?;
    }
    // The demo's history is set in the past: a build dates from its first setup.
    sqlx::query(
        "UPDATE builds SET created_at = (SELECT MIN(changed_on) FROM setup_changes s
             WHERE s.build_id = builds.id) || 'T09:00:00Z'",
    )
    .execute(&mut *tx)
    .await?;
    // ...and a car and its owner date from the car's first build, so "Customer since" is never
    // later than the builds on the customer's page.
    for sql in [
        "UPDATE cars SET created_at = COALESCE((SELECT MIN(b.created_at) FROM builds b
             WHERE b.car_id = cars.id), created_at)",
        "UPDATE customers SET created_at = COALESCE((SELECT MIN(k.created_at) FROM cars k
             WHERE k.customer_id = customers.id), created_at)",
    ] {
        sqlx::query(sql).execute(&mut *tx).await?;
    }
    crate::status::refresh_stale(&mut tx).await?;
    tx.commit().await?;
    Ok(true)
}

/// Whether the demo account `name` (DEMO_USERNAME or DEMO_TECH_USERNAME) is still there.
pub async fn demo_user_exists(pool: &SqlitePool, name: &str) -> Result<bool, sqlx::Error> {
    let mut conn = pool.acquire().await?;
    Ok(db::users::by_name(&mut conn, name).await?.is_some())
}

struct DemoCustomer {
    name: &'static str,
    phone: &'static str,
    cars: Vec<DemoCar>,
}

struct DemoCar {
    description: &'static str,
    engine: &'static str,
    transmission: &'static str,
    rated_lbf_ft: f64,
    launch_rpm: f64,
    curve_lbf_ft: &'static [[f64; 2]],
    builds: Vec<DemoBuild>,
}

struct DemoBuild {
    label: &'static str,
    discs: i64,
    material: &'static str,
    od_in: f64,
    id_in: f64,
    spring_rate: f64,
    /// Per-spring bench rates, lbf/in, one list per test (oldest first).
    bench_rates: Vec<Vec<f64>>,
    levers: i64,
    /// (turns, counterweight g) per setup change, oldest first.
    setups: Vec<(f64, f64)>,
    shims_in: Vec<f64>,
    /// (passes, cover height in, shims pulled, new disc fitted).
    heights: Vec<(i64, f64, i64, bool)>,
    /// (track, launch rpm, 60-ft s, ET s, lockup seen in the data log rpm).
    passes: Vec<(&'static str, f64, f64, f64, Option<f64>)>,
    status: &'static str,
}

const BIG_BLOCK: &[[f64; 2]] = &[
    [3000.0, 410.0],
    [3500.0, 435.0],
    [4000.0, 455.0],
    [4500.0, 470.0],
    [5000.0, 480.0],
    [5500.0, 478.0],
    [6000.0, 470.0],
    [6500.0, 452.0],
    [7000.0, 430.0],
];
const SMALL_BLOCK: &[[f64; 2]] = &[
    [3000.0, 330.0],
    [4000.0, 365.0],
    [5000.0, 390.0],
    [6000.0, 385.0],
    [7000.0, 360.0],
    [7500.0, 340.0],
];
const TURBO_FOUR: &[[f64; 2]] = &[
    [3000.0, 250.0],
    [4000.0, 390.0],
    [5000.0, 430.0],
    [6000.0, 420.0],
    [7000.0, 395.0],
    [8000.0, 350.0],
];

fn demo_customers() -> Vec<DemoCustomer> {
    let set = |base: f64, spread: &[f64]| spread.iter().map(|d| base + d).collect::<Vec<_>>();
    vec![
        DemoCustomer {
            name: "Dana Whitcombe",
            phone: "555-0117",
            cars: vec![DemoCar {
                description: "two-door, 7.0 L carbureted V8, 4-speed",
                engine: "7.0 L V8, carbureted",
                transmission: "4-speed manual",
                rated_lbf_ft: 600.0,
                launch_rpm: 4500.0,
                curve_lbf_ft: BIG_BLOCK,
                builds: vec![DemoBuild {
                    label: "Street/strip single",
                    discs: 1,
                    material: "organic",
                    od_in: 10.4,
                    id_in: 6.6,
                    spring_rate: 380.0,
                    bench_rates: vec![
                        set(380.0, &[2.0, -3.0, 4.0, 0.0, -1.0, 3.0]),
                        set(378.0, &[1.0, -4.0, 3.0, -1.0, -2.0, 2.0]),
                    ],
                    levers: 3,
                    setups: vec![(1.5, 24.0), (1.75, 26.0)],
                    shims_in: vec![0.010, 0.010, 0.020],
                    heights: vec![
                        (0, 1.905, 0, false),
                        (40, 1.913, 0, false),
                        (80, 1.921, 0, false),
                    ],
                    passes: vec![
                        ("County dragstrip", 4500.0, 1.42, 10.95, Some(4760.0)),
                        ("County dragstrip", 4600.0, 1.39, 10.88, Some(4720.0)),
                        ("County dragstrip", 4500.0, 1.40, 10.91, Some(4790.0)),
                        ("County dragstrip", 4550.0, 1.38, 10.86, Some(4740.0)),
                        ("County dragstrip", 4500.0, 1.41, 10.90, None),
                    ],
                    status: "active",
                }],
            }],
        },
        DemoCustomer {
            name: "Marcus Ellery",
            phone: "555-0163",
            cars: vec![DemoCar {
                description: "two-door, 7.5 L V8, 4-speed",
                engine: "7.5 L V8, aluminum heads",
                transmission: "4-speed manual, close ratio",
                rated_lbf_ft: 650.0,
                launch_rpm: 5000.0,
                curve_lbf_ft: BIG_BLOCK,
                builds: vec![
                    DemoBuild {
                        label: "Twin sintered",
                        discs: 2,
                        material: "sintered_iron",
                        od_in: 7.25,
                        id_in: 4.75,
                        spring_rate: 310.0,
                        bench_rates: vec![set(310.0, &[1.0, -2.0, 2.0, 0.0, -1.0, 1.0])],
                        levers: 6,
                        setups: vec![(2.0, 18.0)],
                        shims_in: vec![0.010, 0.010],
                        heights: vec![
                            (0, 1.850, 0, false),
                            (50, 1.866, 0, false),
                            (50, 1.856, 1, false),
                            (100, 1.868, 1, false),
                            (100, 1.858, 2, false),
                            (140, 1.874, 2, false),
                        ],
                        passes: vec![
                            ("County dragstrip", 5000.0, 1.31, 10.21, Some(4050.0)),
                            ("County dragstrip", 5000.0, 1.30, 10.18, Some(4150.0)),
                            ("County dragstrip", 5100.0, 1.29, 10.15, Some(4300.0)),
                            ("County dragstrip", 5000.0, 1.30, 10.17, Some(4420.0)),
                        ],
                        status: "active",
                    },
                    DemoBuild {
                        label: "Old single",
                        discs: 1,
                        material: "organic",
                        od_in: 10.4,
                        id_in: 6.6,
                        spring_rate: 360.0,
                        bench_rates: vec![],
                        levers: 3,
                        setups: vec![(1.0, 20.0)],
                        shims_in: vec![0.010],
                        heights: vec![(0, 1.900, 0, false), (60, 1.909, 0, false)],
                        passes: vec![],
                        status: "retired",
                    },
                ],
            }],
        },
        DemoCustomer {
            name: "Priya Castellan",
            phone: "555-0190",
            cars: vec![DemoCar {
                description: "three-door, 2.0 L turbo four, 5-speed",
                engine: "2.0 L turbocharged four",
                transmission: "5-speed manual",
                rated_lbf_ft: 450.0,
                launch_rpm: 5500.0,
                curve_lbf_ft: TURBO_FOUR,
                builds: vec![DemoBuild {
                    label: "Twin cermet",
                    discs: 2,
                    material: "cermet",
                    od_in: 7.25,
                    id_in: 5.0,
                    spring_rate: 260.0,
                    bench_rates: vec![set(260.0, &[6.0, -9.0, 4.0, -6.0, 8.0, 1.0])],
                    levers: 3,
                    setups: vec![(1.25, 14.0)],
                    shims_in: vec![0.010, 0.010],
                    heights: vec![
                        (0, 1.776, 0, false),
                        (60, 1.792, 0, false),
                        (60, 1.782, 1, false),
                        (110, 1.797, 1, false),
                        (0, 1.780, 0, true),
                        (30, 1.784, 0, false),
                    ],
                    passes: vec![("Valley eighth-mile", 5500.0, 1.55, 11.60, None)],
                    status: "active",
                }],
            }],
        },
        DemoCustomer {
            name: "Tomas Brandvold",
            phone: "555-0128",
            cars: vec![
                DemoCar {
                    description: "two-door, 5.8 L V8, 5-speed",
                    engine: "5.8 L V8",
                    transmission: "5-speed manual",
                    rated_lbf_ft: 500.0,
                    launch_rpm: 4200.0,
                    curve_lbf_ft: SMALL_BLOCK,
                    builds: vec![DemoBuild {
                        label: "",
                        discs: 1,
                        material: "molded",
                        od_in: 10.4,
                        id_in: 6.6,
                        spring_rate: 340.0,
                        bench_rates: vec![set(340.0, &[1.0, 0.0, -1.0, 2.0, -2.0, 0.0])],
                        levers: 3,
                        setups: vec![(1.0, 18.0)],
                        shims_in: vec![0.010, 0.010, 0.010],
                        heights: vec![(0, 1.910, 0, false), (25, 1.913, 0, false)],
                        passes: vec![],
                        status: "active",
                    }],
                },
                DemoCar {
                    description: "five-door long roof, 6.5 L V8, 4-speed",
                    engine: "6.5 L V8",
                    transmission: "4-speed manual, wide ratio",
                    rated_lbf_ft: 550.0,
                    launch_rpm: 4000.0,
                    curve_lbf_ft: BIG_BLOCK,
                    builds: vec![DemoBuild {
                        label: "Bracket single",
                        discs: 1,
                        material: "organic",
                        od_in: 10.4,
                        id_in: 6.6,
                        spring_rate: 350.0,
                        bench_rates: vec![set(350.0, &[0.0, 1.0, -1.0, 1.0, 0.0, -1.0])],
                        levers: 3,
                        setups: vec![(1.5, 20.0)],
                        shims_in: vec![0.010, 0.010],
                        heights: vec![(0, 1.900, 0, false)],
                        passes: vec![("Valley eighth-mile", 4000.0, 1.61, 12.05, None)],
                        status: "active",
                    }],
                },
            ],
        },
    ]
}

/// Demo records are checked in storage units like the record API; their dates are all before
/// the first of December 2026.
fn demo_ctx() -> Ctx {
    let latest = Date::parse("2026-12-01").unwrap_or(Date {
        year: 2026,
        month: 12,
        day: 1,
    });
    Ctx {
        units: Units::Metric,
        today: Date::today(&ShopZone::server()).max(latest),
    }
}

fn ok<T>(r: Result<T, FieldErrors>) -> Result<T, DemoError> {
    r.map_err(|e| format!("demo data failed its own checks: {}", e.summary()).into())
}

async fn seed_customer(
    tx: &mut SqliteConnection,
    user_id: i64,
    c: DemoCustomer,
) -> Result<(), DemoError> {
    let customer = CustomerInput {
        name: c.name.into(),
        phone: c.phone.into(),
        ..Default::default()
    };
    let customer = ok(field::check(customer, &demo_ctx(), FieldErrors::default()))?;
    let customer_id = Customer::insert(tx, 0, user_id, &customer).await?;
    for car in c.cars {
        let input = CarInput {
            description: car.description.into(),
            engine: car.engine.into(),
            transmission: car.transmission.into(),
            weight_kg: Some(Mass::from_kg(IN.weight_to_kg(3300.0))),
            rated_input_torque_nm: Some(Torque::from_nm(IN.torque_to_nm(car.rated_lbf_ft))),
            first_gear_ratio: Some(2.43),
            final_drive_ratio: Some(4.11),
            tire_diameter_mm: Some(inch(28.0)),
            launch_rpm: Some(EngineSpeed::from_rpm(car.launch_rpm)),
            torque_curve_nm: car
                .curve_lbf_ft
                .iter()
                .map(|[rpm, t]| [*rpm, IN.torque_to_nm(*t)])
                .collect(),
            notes: String::new(),
            ..Default::default()
        };
        let car_id = Car::insert(
            tx,
            customer_id,
            user_id,
            &ok(field::check(input, &demo_ctx(), FieldErrors::default()))?,
        )
        .await?;
        for b in car.builds {
            seed_build(tx, user_id, car_id, b).await?;
        }
    }
    Ok(())
}

async fn seed_build(
    tx: &mut SqliteConnection,
    user_id: i64,
    car_id: i64,
    b: DemoBuild,
) -> Result<(), DemoError> {
    let input = BuildInput {
        label: b.label.into(),
        disc_count: b.discs,
        facing_material: b.material.into(),
        facing_od_mm: inch(b.od_in),
        facing_id_mm: inch(b.id_in),
        disc_thickness_new_mm: Some(inch(0.300)),
        disc_thickness_min_mm: Some(inch(0.240)),
        spring_count: 6,
        spring_description: "chrome-silicon coil, 2.10 in free".into(),
        spring_rate_n_per_mm: Some(lbf_per_in(b.spring_rate)),
        adjuster_tpi: Some(16.0),
        base_compression_mm: Some(inch(0.220)),
        cover_height_installed_mm: None,
        lever_count: b.levers,
        lever_mass_g: Grams::from_g(12.0),
        lever_cg_radius_mm: Some(inch(if b.discs > 1 { 3.2 } else { 4.1 })),
        lever_arm_ratio: Some(2.6),
        shim_stack_mm: b.shims_in.iter().map(|s| inch(*s)).collect(),
        status: b.status.into(),
        ..Default::default()
    };
    let solid_height_mm = input.spring_solid_height_mm;
    let build_id = Build::insert(
        tx,
        car_id,
        user_id,
        &ok(field::check(input, &demo_ctx(), FieldErrors::default()))?,
    )
    .await?;
    let months = [
        "2026-03", "2026-05", "2026-07", "2026-08", "2026-09", "2026-10",
    ];
    for (i, (turns, cw)) in b.setups.iter().enumerate() {
        let s = SetupInput {
            changed_on: format!("{}-0{}", months[i], 2 + i),
            adjuster_turns: *turns,
            adjuster_turns_each: Vec::new(),
            counterweight_g: Grams::from_g(*cw),
            mu: None,
            nominal_mu: false,
            note: if i == 0 {
                "as built".into()
            } else {
                "more counterweight for an earlier lockup".into()
            },
        };
        Setup::insert(
            tx,
            build_id,
            user_id,
            &ok(field::check(s, &demo_ctx(), FieldErrors::default()))?,
        )
        .await?;
    }
    for (i, rates) in b.bench_rates.iter().enumerate() {
        let compression = inch(0.500);
        let bench = BenchInput {
            tested_on: format!("{}-1{}", months[i * 2], i),
            note: String::new(),
            springs: rates
                .iter()
                .map(|r| SpringReading {
                    position: None,
                    free_length_mm: Some(inch(2.100)),
                    compression_mm: compression,
                    force_n: lbf(r * 0.5),
                })
                .collect(),
        };
        db::bench::insert(
            tx,
            build_id,
            user_id,
            &ok(bench.check(solid_height_mm, &demo_ctx(), FieldErrors::default()))?,
        )
        .await?;
    }
    let mut hc = HeightContext {
        shims_mm: b.shims_in.iter().map(|t| inch(*t)).collect(),
        ..HeightContext::default()
    };
    for (i, (passes, height, pulled, new_disc)) in b.heights.iter().enumerate() {
        let h = HeightInput {
            measured_on: format!("{}-2{}", months[i.min(5)], i % 8),
            height_mm: inch(*height),
            passes: *passes,
            shims_pulled: *pulled,
            new_disc: *new_disc,
            note: match (new_disc, i > 0 && b.heights[i - 1].2 < *pulled) {
                (true, _) => "new disc fitted, full shim stack".into(),
                (false, true) => "pulled a shim".into(),
                _ => String::new(),
            },
            confirm: false,
        };
        let checked = ok(h.check_on(&hc, &demo_ctx(), FieldErrors::default()))?;
        Height::insert(tx, build_id, user_id, &checked).await?;
        if checked.new_disc {
            hc.before.clear();
        }
        hc.before.push(HeightInput::clone(&checked));
    }
    for (i, (track, launch, sixty, et, lockup)) in b.passes.iter().enumerate() {
        // Weekly from 2026-10-04.
        let day = 4 + 7 * i;
        let p = PassInput {
            run_on: if day <= 31 {
                format!("2026-10-{day:02}")
            } else {
                format!("2026-11-{:02}", day - 31)
            },
            track: (*track).into(),
            launch_rpm: Some(EngineSpeed::from_rpm(*launch)),
            sixty_ft_s: Some(Seconds::from_s(*sixty)),
            et_s: Some(Seconds::from_s(*et)),
            observed_lockup_rpm: lockup.map(EngineSpeed::from_rpm),
            lockup_time_s: None,
            notes: String::new(),
            // Invented times and air temperatures (one pass a day, so each launches at the
            // air temperature): too little spread for the heat fit, which the tuning page says.
            run_at: format!("{:02}:{:02}", 10 + i % 5, (i * 17) % 60),
            ambient_c: Some(Temperature::from_c(8.0 + ((i * 7) % 23) as f64)),
        };
        let pass_id = Pass::insert(
            tx,
            build_id,
            user_id,
            &ok(field::check(p, &demo_ctx(), FieldErrors::default()))?,
        )
        .await?;
        if b.label == LOGGED_BUILD && i + 1 == b.passes.len() {
            seed_log(tx, user_id, car_id, pass_id).await?;
        }
    }
    Ok(())
}

/// The build whose latest pass carries a data log.
const LOGGED_BUILD: &str = "Street/strip single";

/// Keeps the invented log with a pass, read the way the upload reads it.
async fn seed_log(
    tx: &mut SqliteConnection,
    user_id: i64,
    car_id: i64,
    pass_id: i64,
) -> Result<(), DemoError> {
    use clutch::datalog::request::{CarFacts, LogColumns, LogSettings, TimeUnit};
    let Some(car) = db::cars::by_id(tx, car_id).await? else {
        return Ok(());
    };
    let c = &car.data;
    let (Some(first), Some(fin), Some(tire)) =
        (c.first_gear_ratio, c.final_drive_ratio, c.tire_diameter_mm)
    else {
        return Ok(());
    };
    let text = log::pass_log(&c.torque_curve_nm, first, fin, tire.mm());
    let settings = LogSettings {
        columns: LogColumns {
            time: "Time".into(),
            engine_rpm: "Engine".into(),
            input_rpm: Some("Input shaft".into()),
            undriven_wheel_speed: Some("Front wheel".into()),
            throttle: Some("Throttle".into()),
            ..LogColumns::default()
        },
        time_unit: TimeUnit::Auto,
        engine_inertia_kgm2: Some(log::ENGINE_INERTIA_KGM2),
        ..LogSettings::default()
    };
    let facts = CarFacts {
        first_gear_ratio: c.first_gear_ratio,
        final_drive_ratio: c.final_drive_ratio,
        tire_diameter_mm: c.tire_diameter_mm.map(Length::mm),
        torque_curve_nm: &c.torque_curve_nm,
    };
    let result = settings
        .valid(facts, IN)
        .and_then(|v| v.run(text.as_bytes()))
        .map_err(|e| DemoError::from(format!("demo log: {e}")))?;
    let deflated = db::pass_logs::deflate(text.as_bytes());
    let log = db::pass_logs::NewLog {
        pass_id,
        car_id,
        user_id,
        file_name: "pass-2026-11-01.csv",
        file_bytes: text.len(),
        deflated: &deflated,
        settings: &settings,
        result: &result,
    };
    db::pass_logs::store(tx, &log).await?;
    Ok(())
}
