//! The demo's data-log file: an invented launch, made by a small two-inertia model so that it
//! looks like a logger's export (metadata line, units line, time in ms, wheel speeds logged at
//! a quarter of the rate with blank cells between, a little sensor noise). Deterministic: the
//! same text every time.

use clutch::units::{M_S_PER_MPH, RAD_S_PER_RPM};

/// Engine inertia the demo's log settings use, kg·m² (invented).
pub const ENGINE_INERTIA_KGM2: f64 = 0.20;

/// Rows (5 ms each) logged while the car stages, before the launch's own rows.
const STAGED_ROWS: usize = 400;

/// The log of one invented pass for a car with `curve_nm` (rpm, N·m), `first`·`final_drive`
/// and a tire of `tire_mm`.
pub fn pass_log(curve_nm: &[[f64; 2]], first: f64, final_drive: f64, tire_mm: f64) -> String {
    let torque = |rpm: f64| -> f64 {
        let i = curve_nm
            .partition_point(|p| p[0] <= rpm)
            .clamp(1, curve_nm.len() - 1);
        let ([r0, t0], [r1, t1]) = (curve_nm[i - 1], curve_nm[i]);
        t0 + (t1 - t0) * ((rpm - r0) / (r1 - r0)).clamp(0.0, 1.0)
    };
    // Clutch capacity a + b·N² (static plus centrifugal), reaching full clamp 40 ms after
    // launch; driven inertia 1.9 kg·m² (the car referred to the clutch in first gear).
    let (a, b, ramp, j_driven) = (300.0, 350.0 / (4500.0f64 * 4500.0), 0.040, 1.9);
    let (launch, end, h, every): (f64, f64, f64, usize) = (0.300, 2.200, 0.0005, 10);
    let mut we = 4500.0 * RAD_S_PER_RPM;
    let mut wi = 0.0;
    let mut locked = false;
    let mut noise = 0x9E37_79B9_7F4A_7C15u64;
    let mut jitter = |scale: f64| {
        noise ^= noise << 13;
        noise ^= noise >> 7;
        noise ^= noise << 17;
        ((noise % 2001) as f64 / 1000.0 - 1.0) * scale
    };
    let wheel_mph = |w_in: f64| {
        let wheel_rad_s = w_in / (first * final_drive);
        wheel_rad_s * tire_mm / 2000.0 / M_S_PER_MPH
    };
    let mut out = String::from(
        "Session export,invented demo pass\nTime,Engine,Input shaft,Front wheel,Rear wheel,Throttle\nms,rpm,rpm,mph,mph,%\n",
    );
    // The logger runs while the car stages: two seconds held at the launch speed first, with
    // noise of its own so the launch that follows is the same as without them.
    let mut staging = 0x2545_F491_4F6C_DD1Du64;
    for row in 0..STAGED_ROWS {
        staging ^= staging << 13;
        staging ^= staging >> 7;
        staging ^= staging << 17;
        let engine = 4500.0 + ((staging % 2001) as f64 / 1000.0 - 1.0) * 6.0;
        let wheels = if row.is_multiple_of(4) {
            "0.00,0.00"
        } else {
            ","
        };
        out.push_str(&format!("{},{engine:.0},0,{wheels},35\n", row * 5));
    }
    let steps = (end / h).round() as usize;
    for k in 0..=steps {
        let t = k as f64 * h;
        if k % every == 0 {
            let row = k / every + STAGED_ROWS;
            let (ne, ni) = (we / RAD_S_PER_RPM, wi / RAD_S_PER_RPM);
            let rear = wheel_mph(wi);
            let since = t - launch;
            // The slicks work a few per cent over the front wheels, more in a short spin.
            let front = if (0.55..0.66).contains(&since) {
                rear / 1.25
            } else {
                rear / 1.05
            };
            let throttle = if t < launch { 35.0 } else { 100.0 };
            let wheels = if row.is_multiple_of(4) {
                format!("{front:.2},{rear:.2}")
            } else {
                ",".to_string()
            };
            out.push_str(&format!(
                "{},{:.0},{:.0},{wheels},{throttle:.0}\n",
                row * 5,
                ne + jitter(6.0),
                (ni + if ni > 0.0 { jitter(4.0) } else { 0.0 }).max(0.0)
            ));
        }
        if t < launch {
            continue;
        }
        let r = ((t - launch) / ramp).min(1.0);
        let ne = we / RAD_S_PER_RPM;
        let te = r * torque(ne);
        if locked {
            let acc = te / (ENGINE_INERTIA_KGM2 + j_driven);
            we += acc * h;
            wi = we;
        } else {
            let tc = r * (a + b * ne * ne);
            we += (te - tc) / ENGINE_INERTIA_KGM2 * h;
            wi += tc / j_driven * h;
            if wi >= we {
                locked = true;
                wi = we;
            }
        }
    }
    out
}
