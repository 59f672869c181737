//! The test shop's clutch build as the build form takes it (imperial units): a single organic
//! disc 10.4 × 6.6 in, six springs of 380 lbf/in at 0.220 in of base compression on 16 TPI
//! adjusters, three levers of 12 g at 4.1 in with a 2.6:1 arm, three shims. Invented test data,
//! shared by the integration tests and the browser tests (each includes this file).

/// The fields every test build fills; each test adds what its case needs.
pub const BUILD_FORM: &[(&str, &str)] = &[
    ("facing_od", "10.4"),
    ("facing_id", "6.6"),
    ("spring_count", "6"),
    ("spring_rate", "380"),
    ("adjuster_tpi", "16"),
    ("base_compression", "0.220"),
    ("lever_count", "3"),
    ("lever_mass_g", "12"),
    ("lever_cg_radius", "4.1"),
    ("lever_arm_ratio", "2.6"),
    ("shim_stack", "0.010, 0.010, 0.020"),
];
