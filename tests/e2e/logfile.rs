//! A large invented logger file for the data-log benchmark and the memory run: `rows` rows at
//! 1 kHz of time, engine, input shaft, two wheel speeds and throttle (about 50 bytes a row, so
//! 215 000 rows make about 10 MB), with a launch at 1 s and the clutch locked about 1.3 s later.
//! Deterministic.

/// The file's text.
pub fn text(rows: usize) -> String {
    let mut out = String::with_capacity(rows * 52 + 100);
    out.push_str("time,engine,input,front,rear,throttle\n");
    let mut noise = 0x2545_F491_4F6C_DD1Du64;
    for k in 0..rows {
        noise ^= noise << 13;
        noise ^= noise >> 7;
        noise ^= noise << 17;
        let wobble = (noise % 17) as f64 - 8.0;
        let t = k as f64 * 0.001;
        let since = t - 1.0;
        let engine = if since < 0.0 {
            5200.0
        } else {
            5200.0 - 300.0 * (since / 0.4).min(1.0) + 600.0 * (since - 1.3).max(0.0)
        };
        let input = if since < 0.0 {
            0.0
        } else {
            (3800.0 * since).min(engine)
        };
        let rear = input / (2.43 * 4.11) * 0.0673;
        out.push_str(&format!(
            "{t:.4},{:.1},{:.1},{:.3},{:.3},{:.1}\n",
            engine + wobble,
            input,
            rear / 1.05,
            rear,
            if since < 0.0 { 30.0 } else { 100.0 }
        ));
    }
    out
}

/// The analysis request for a file of [`text`] (imperial, its column names, an invented car):
/// what the benchmark and the memory run ask of it, without the file's text.
pub fn request() -> clutch::datalog::request::LogAnalysisRequest {
    serde_json::from_value(serde_json::json!({
        "units": "imperial", "csv": "",
        "columns": {"time": "time", "engine_rpm": "engine", "input_rpm": "input",
                    "undriven_wheel_speed": "front", "throttle": "throttle"},
        "first_gear_ratio": 2.43, "final_drive_ratio": 4.11, "tire_diameter": 28,
        "engine": {"torque_curve": [[3000, 410], [5000, 480], [7000, 430]], "inertia": 4.7}
    }))
    .expect("request")
}
