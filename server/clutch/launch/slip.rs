//! Slip energy while the clutch engages, and the temperature rise it causes.
//!
//! E = ∫ T·Δω dt. All energy is taken to go into the named mass with no cooling during the
//! event (lumped, adiabatic), which over-estimates the rise for a long slip.

use crate::InputError;

/// Energy, J, of a slip at constant clutch torque whose slip speed falls linearly from
/// `slip_rad_s` to zero over `time_s`: E = T·Δω0·t/2. Torque N·m ≥ 0, speed rad/s ≥ 0,
/// time s ≥ 0. Source: integral of T·Δω(t) with Δω linear in t (Shigley ch. 16, "Energy
/// Considerations"); agrees with Bhandari Ex. 11.14 (see tests).
pub fn linear_slip_energy_j(
    torque_nm: f64,
    slip_rad_s: f64,
    time_s: f64,
) -> Result<f64, InputError> {
    let t = crate::require_range("torque", torque_nm, 0.0, f64::MAX)?;
    let w = crate::require_range("slip_speed", slip_rad_s, 0.0, f64::MAX)?;
    let s = crate::require_range("time", time_s, 0.0, f64::MAX)?;
    Ok(t * w * s / 2.0)
}

/// Engagement of two free inertias at constant clutch torque.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoInertiaSlip {
    /// Energy turned into heat, J: I1·I2·(ω1 − ω2)²/(2·(I1 + I2)).
    pub energy_j: f64,
    /// Time to lock up, s: I1·I2·(ω1 − ω2)/((I1 + I2)·T).
    pub time_s: f64,
}

/// Slip of two free inertias I1, I2 (kg·m², > 0) running at ω1, ω2 (rad/s) joined by a clutch
/// carrying constant torque T (N·m, > 0). Source: Bhandari, Design of Machine Elements,
/// Ex. 11.14; Shigley ch. 16, "Energy Considerations".
pub fn two_inertia_slip(
    i1_kg_m2: f64,
    i2_kg_m2: f64,
    w1_rad_s: f64,
    w2_rad_s: f64,
    torque_nm: f64,
) -> Result<TwoInertiaSlip, InputError> {
    let i1 = crate::require_positive("inertia_1", i1_kg_m2, f64::MAX)?;
    let i2 = crate::require_positive("inertia_2", i2_kg_m2, f64::MAX)?;
    let dw =
        crate::require_finite("speed_1", w1_rad_s)? - crate::require_finite("speed_2", w2_rad_s)?;
    let t = crate::require_positive("torque", torque_nm, f64::MAX)?;
    let i = i1 * i2 / (i1 + i2);
    Ok(TwoInertiaSlip {
        energy_j: i * dw * dw / 2.0,
        time_s: i * dw.abs() / t,
    })
}

/// Bulk temperature rise, K (= °C difference): ΔT = E/(m·c), energy J ≥ 0, mass kg > 0,
/// specific heat J/(kg·K) > 0 (gray iron ≈ 460, steel ≈ 486). Source: Shigley ch. 16,
/// "Temperature Rise".
pub fn temperature_rise_k(
    energy_j: f64,
    mass_kg: f64,
    specific_heat_j_per_kg_k: f64,
) -> Result<f64, InputError> {
    let e = crate::require_range("energy", energy_j, 0.0, f64::MAX)?;
    let m = crate::require_positive("mass", mass_kg, f64::MAX)?;
    let c = crate::require_positive("specific_heat", specific_heat_j_per_kg_k, f64::MAX)?;
    Ok(e / (m * c))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::rpm_to_rad_s;

    // Bhandari, Design of Machine Elements, Ex. 11.14 (via FOSSEE Scilab TBC 764): 10 kW at
    // 2000 rpm → T = 47.746 N·m; I1 = 20 kg × (75 mm)², I2 = 35 kg × (125 mm)², I2 at rest:
    // t = 0.409285 s, E = 2046.4227 J.
    #[test]
    fn two_inertias_match_bhandari_ex_11_14() {
        let w = rpm_to_rad_s(2000.0);
        let t = 10_000.0 / w;
        assert!((t - 47.746).abs() < 5e-4);
        let s = two_inertia_slip(20.0 * 0.075f64.powi(2), 35.0 * 0.125f64.powi(2), w, 0.0, t)
            .expect("valid");
        assert!((s.energy_j - 2046.4227).abs() < 5e-4, "{}", s.energy_j);
        assert!((s.time_s - 0.409285).abs() < 5e-7, "{}", s.time_s);
        // [D] the linear-slip formula gives the same energy for the same torque and time.
        let e = linear_slip_energy_j(t, w, s.time_s).expect("valid");
        assert!((e - 2046.4227).abs() < 5e-4);
    }

    // [D] 700 N·m, 5000 rpm slip falling linearly to 0 in 1 s → 183 259.6 J; into 8 kg of gray
    // iron at c = 460 J/(kg·K) (Engineering ToolBox, "Metals – Specific Heats") → 49.80 K.
    #[test]
    fn drag_launch_slip_heats_eight_kilograms_of_iron() {
        let e = linear_slip_energy_j(700.0, rpm_to_rad_s(5000.0), 1.0).expect("valid");
        assert!((e - 183_259.6).abs() < 0.05, "{e}");
        let dt = temperature_rise_k(e, 8.0, 460.0).expect("valid");
        assert!((dt - 49.80).abs() < 5e-3, "{dt}");
    }

    #[test]
    fn bad_inputs_name_their_field() {
        assert_eq!(
            temperature_rise_k(1.0, 0.0, 460.0).err().map(|e| e.field),
            Some("mass".into())
        );
        assert!(two_inertia_slip(1.0, 1.0, f64::NAN, 0.0, 1.0).is_err());
    }
}
