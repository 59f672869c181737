//! Torque capacity of a dry plate clutch: T = n·μ·F·r_eff.
//!
//! Two classic pressure assumptions give r_eff. Uniform wear (p·r constant; a worn-in clutch)
//! gives the lower, conservative torque and is the default, as Shigley (Mechanical Engineering
//! Design, ch. 16) advises for disk clutches; uniform pressure (a new clutch) is an option.

use crate::InputError;
use serde::{Deserialize, Serialize};

/// Pressure-distribution assumption for the effective friction radius.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum Theory {
    /// p·r constant (worn-in facing): r_eff = (ro + ri)/2. Default.
    #[default]
    UniformWear,
    /// p constant (new facing): r_eff = (2/3)·(ro³ − ri³)/(ro² − ri²).
    UniformPressure,
}

/// Effective friction radius, mm, of an annular facing with outer and inner diameters in mm.
///
/// Uniform wear: (ro + ri)/2; uniform pressure: (2/3)·(ro³ − ri³)/(ro² − ri²).
/// Source: Bhandari, Design of Machine Elements, ch. 11 (Ex. 11.1, 11.2); Shigley ch. 16.
/// Valid for 0 < inner < outer; errors name "disc.outer_diameter" / "disc.inner_diameter".
pub fn effective_radius_mm(
    outer_diameter_mm: f64,
    inner_diameter_mm: f64,
    theory: Theory,
) -> Result<f64, InputError> {
    let od = crate::require_positive("disc.outer_diameter", outer_diameter_mm, f64::MAX)?;
    let id = crate::require_positive("disc.inner_diameter", inner_diameter_mm, f64::MAX)?;
    if id >= od {
        return Err(InputError::new(
            "disc.inner_diameter",
            "must be smaller than the outer diameter",
        ));
    }
    let (ro, ri) = (od / 2.0, id / 2.0);
    Ok(match theory {
        Theory::UniformWear => (ro + ri) / 2.0,
        Theory::UniformPressure => {
            2.0 / 3.0 * (ro.powi(3) - ri.powi(3)) / (ro.powi(2) - ri.powi(2))
        }
    })
}

/// Torque capacity, N·m: T = n·μ·F·r_eff, with n friction surfaces, clamp F in N and
/// r_eff in mm. Source: Bhandari, Design of Machine Elements, ch. 11; Shigley ch. 16.
/// Inputs must be validated (n ≥ 1, 0 < μ < 1, F ≥ 0, r_eff > 0).
pub fn torque_capacity_nm(surfaces: u32, mu: f64, clamp_n: f64, effective_radius_mm: f64) -> f64 {
    torque_capacity_faces_nm(f64::from(surfaces), mu, clamp_n, effective_radius_mm)
}

/// [`torque_capacity_nm`] with a fractional number of working faces (see
/// [`effective_faces`]); the same arithmetic, so whole faces give the same bits.
pub fn torque_capacity_faces_nm(
    faces: f64,
    mu: f64,
    clamp_n: f64,
    effective_radius_mm: f64,
) -> f64 {
    faces * mu * clamp_n * effective_radius_mm / 1000.0
}

/// Working friction faces of a stack with `surfaces` faces when each face beyond the first two
/// carries only `extra_efficiency` (0–1) of its share: 2 + (n − 2)·η (n itself below 2).
///
/// Why: in a twin or triple disc the floater plates slide on drive lugs or pins, and the
/// friction there takes part of the clamp before it reaches the faces further along the stack.
/// From memory; no published value for η was found, so the default is 1.0 (every face counts
/// fully, the textbook T = n·μ·F·r_eff) and the shop sets its own. η is per face beyond the
/// first two, not per disc or per stack: a figure for a whole stack ("a twin holds 1.8 times a
/// single") maps as η = ratio − 1 for a twin and η = (ratio − 1)/2 for a triple.
pub fn effective_faces(surfaces: u32, extra_efficiency: f64) -> f64 {
    let n = f64::from(surfaces);
    if n <= 2.0 {
        n
    } else {
        2.0 + (n - 2.0) * extra_efficiency
    }
}

/// Clamp force, N, needed to carry `torque_nm`: F = T/(n·μ·r_eff); inverse of
/// [`torque_capacity_nm`]. Inputs as there, torque ≥ 0.
pub fn clamp_for_torque_n(surfaces: u32, mu: f64, effective_radius_mm: f64, torque_nm: f64) -> f64 {
    torque_nm * 1000.0 / (f64::from(surfaces) * mu * effective_radius_mm)
}

/// Axial force, N, for a facing at maximum pressure `p_max` N/mm² under uniform wear:
/// F = 2π·p_max·ri·(ro − ri) (p_max acts at the inner radius). Radii in mm, 0 < ri < ro.
/// Source: Bhandari, Design of Machine Elements, ch. 11 (Ex. 11.1).
pub fn uniform_wear_force_n(
    p_max_n_per_mm2: f64,
    inner_radius_mm: f64,
    outer_radius_mm: f64,
) -> f64 {
    2.0 * std::f64::consts::PI
        * p_max_n_per_mm2
        * inner_radius_mm
        * (outer_radius_mm - inner_radius_mm)
}

/// Axial force, N, for a facing at uniform pressure `p` N/mm²: F = π·p·(ro² − ri²).
/// Radii in mm, 0 ≤ ri < ro. Source: Bhandari, Design of Machine Elements, ch. 11 (Ex. 11.2).
pub fn uniform_pressure_force_n(
    p_n_per_mm2: f64,
    inner_radius_mm: f64,
    outer_radius_mm: f64,
) -> f64 {
    std::f64::consts::PI * p_n_per_mm2 * (outer_radius_mm.powi(2) - inner_radius_mm.powi(2))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn r_eff(od: f64, id: f64, t: Theory) -> f64 {
        effective_radius_mm(od, id, t).unwrap_or(f64::NAN)
    }

    // Bhandari, Design of Machine Elements, Ex. 11.1 (via FOSSEE Scilab TBC 764):
    // d = 100, D = 200 mm, μ = 0.2, pa = 1 N/mm², uniform wear, one face:
    // P = 15 707.96 N, T = 235 619.45 N·mm.
    #[test]
    fn uniform_wear_disc_matches_bhandari_ex_11_1() {
        let p = uniform_wear_force_n(1.0, 50.0, 100.0);
        assert!((p - 15_707.96).abs() < 0.01, "{p}");
        let t = torque_capacity_nm(1, 0.2, p, r_eff(200.0, 100.0, Theory::UniformWear));
        assert!((t - 235.619).abs() < 5e-4, "{t}");
    }

    // Bhandari, Ex. 11.2 (via FOSSEE Scilab TBC 764): same disc, uniform pressure:
    // P = 23 561.94 N, T = 366 519.14 N·mm, r_eff = 77.778 mm.
    #[test]
    fn uniform_pressure_disc_matches_bhandari_ex_11_2() {
        let r = r_eff(200.0, 100.0, Theory::UniformPressure);
        assert!((r - 77.778).abs() < 5e-4, "{r}");
        let p = uniform_pressure_force_n(1.0, 50.0, 100.0);
        assert!((p - 23_561.94).abs() < 0.01, "{p}");
        assert!((torque_capacity_nm(1, 0.2, p, r) - 366.519).abs() < 5e-4);
    }

    // Bhandari, Ex. 11.6 (via FOSSEE Scilab TBC 764): car clutch, 2 faces, μ = 0.35,
    // d = 175, D = 250 mm, 9 springs × 800 N at 5 mm. Printed per-face torques 270 529.4 (new,
    // uniform pressure) and 267 750 N·mm (worn, uniform wear) → 541.06 and 535.50 N·m total;
    // to carry 250 N·m the worn clutch needs 3361.34 N, so the allowable wear is 2.66573 mm.
    #[test]
    fn car_clutch_new_and_worn_match_bhandari_ex_11_6() {
        let clamp = 9.0 * 800.0;
        let new = torque_capacity_nm(2, 0.35, clamp, r_eff(250.0, 175.0, Theory::UniformPressure));
        let worn = torque_capacity_nm(2, 0.35, clamp, r_eff(250.0, 175.0, Theory::UniformWear));
        assert!((new - 541.06).abs() < 0.005, "{new}");
        assert!((worn - 535.50).abs() < 0.005, "{worn}");
        let need = clamp_for_torque_n(2, 0.35, r_eff(250.0, 175.0, Theory::UniformWear), 250.0);
        assert!((need - 3361.34).abs() < 0.005, "{need}");
        let rate = 800.0 / 5.0;
        let wear = 5.0 - need / 9.0 / rate;
        assert!((wear - 2.66573).abs() < 5e-5, "{wear}");
    }

    // Bhandari, Ex. 11.8 (via FOSSEE Scilab TBC 764): z = 8 pairs, d = 75, D = 150 mm,
    // μ = 0.1, pa = 0.3 N/mm², uniform wear: P = 2650.72 N, T = 119 282.35 N·mm.
    #[test]
    fn multi_plate_matches_bhandari_ex_11_8() {
        let p = uniform_wear_force_n(0.3, 37.5, 75.0);
        assert!((p - 2650.72).abs() < 0.005, "{p}");
        let t = torque_capacity_nm(8, 0.1, p, r_eff(150.0, 75.0, Theory::UniformWear));
        assert!((t * 1000.0 - 119_282.35).abs() < 0.05, "{t}");
    }

    // [D] Grieve, "Clutch Calculation" problem (mechengdesign.co.uk, rev. 2010); answer derived
    // from the uniform-wear formulas, not printed: 2 faces, pmax 1 N/mm², ID 140, OD 200 mm,
    // μ 0.5 → F = 13 194.69 N, T = 1121.55 N·m.
    #[test]
    fn grieve_problem_derived_answer() {
        let f = uniform_wear_force_n(1.0, 70.0, 100.0);
        assert!((f - 13_194.69).abs() < 0.005, "{f}");
        let t = torque_capacity_nm(2, 0.5, f, r_eff(200.0, 140.0, Theory::UniformWear));
        assert!((t - 1121.55).abs() < 0.005, "{t}");
    }

    // [D] r_eff(uniform pressure)/r_eff(uniform wear) = 1.037037 for D/d = 2 (formula check).
    #[test]
    fn pressure_to_wear_radius_ratio_for_d_over_d_two() {
        let ratio = r_eff(2.0, 1.0, Theory::UniformPressure) / r_eff(2.0, 1.0, Theory::UniformWear);
        assert!((ratio - 1.037037).abs() < 5e-7);
    }

    // [D] from the formula 2 + (n − 2)·η: a twin said to hold 1.8 times a single disc is
    // 2 + 2η = 3.6 faces, η = 0.8; a triple said to hold 2.6 times is 2 + 4η = 5.2, η = 0.8.
    #[test]
    fn a_whole_stack_figure_maps_onto_the_per_face_share() {
        assert!((effective_faces(4, 1.8 - 1.0) / 2.0 - 1.8).abs() < 1e-12);
        assert!((effective_faces(6, (2.6 - 1.0) / 2.0) / 2.0 - 2.6).abs() < 1e-12);
    }

    // [D] from the formula 2 + (n − 2)·η (the η itself is from memory): a twin disc (4 faces)
    // at η = 0.9 works like 3.8 faces; η = 1 is the textbook n, bit for bit; a single disc
    // has no extra faces.
    #[test]
    fn extra_faces_count_by_their_efficiency() {
        assert!((effective_faces(4, 0.9) - 3.8).abs() < 1e-15);
        assert!((effective_faces(6, 0.8) - 5.2).abs() < 1e-15);
        assert_eq!(effective_faces(2, 0.5), 2.0);
        let full = torque_capacity_faces_nm(effective_faces(4, 1.0), 0.3, 4000.0, 100.0);
        assert_eq!(
            full.to_bits(),
            torque_capacity_nm(4, 0.3, 4000.0, 100.0).to_bits()
        );
    }

    #[test]
    fn inner_not_below_outer_names_the_inner_diameter() {
        let e = effective_radius_mm(100.0, 100.0, Theory::UniformWear).err();
        assert_eq!(e.map(|e| e.field), Some("disc.inner_diameter".to_string()));
        let e = effective_radius_mm(f64::INFINITY, 100.0, Theory::UniformWear).err();
        assert_eq!(e.map(|e| e.field), Some("disc.outer_diameter".to_string()));
    }
}
