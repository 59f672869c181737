//! Imperial and metric display units, converted to the module's internal units
//! (mm, N, N/mm, N·m, °C; masses stay in grams in both systems).
//!
//! Factors are the exact definitions of the international inch and pound (1959) and standard
//! gravity (CGPM 1901), as tabulated in NIST SP 811, Appendix B.8.

use serde::{Deserialize, Serialize};

/// Millimetres per inch, exact (international inch, 1959).
pub const MM_PER_IN: f64 = 25.4;
/// Newtons per pound-force, exact: 0.45359237 kg × 9.80665 m/s².
pub const N_PER_LBF: f64 = 4.4482216152605;
/// Newton-metres per pound-force foot, exact: [`N_PER_LBF`] × 0.3048 m.
pub const NM_PER_LBFFT: f64 = N_PER_LBF * 0.3048;
/// Radians per second per rev/min: 2π/60.
pub const RAD_S_PER_RPM: f64 = std::f64::consts::PI / 30.0;

/// The unit system the shop works in. Counterweights are grams in both.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "lowercase")]
pub enum Units {
    /// in, lbf, lbf/in, lbf·ft, °F.
    #[default]
    Imperial,
    /// mm, N, N/mm, N·m, °C.
    Metric,
}

impl Units {
    /// Length in this system → mm. Imperial: × 25.4.
    pub fn length_to_mm(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * MM_PER_IN,
            Units::Metric => v,
        }
    }

    /// mm → length in this system.
    pub fn mm_to_length(self, mm: f64) -> f64 {
        match self {
            Units::Imperial => mm / MM_PER_IN,
            Units::Metric => mm,
        }
    }

    /// Force in this system → N. Imperial: × 4.4482216152605.
    pub fn force_to_n(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * N_PER_LBF,
            Units::Metric => v,
        }
    }

    /// N → force in this system.
    pub fn n_to_force(self, n: f64) -> f64 {
        match self {
            Units::Imperial => n / N_PER_LBF,
            Units::Metric => n,
        }
    }

    /// Spring rate in this system → N/mm. Imperial: lbf/in × 4.4482216152605 / 25.4.
    pub fn rate_to_n_per_mm(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * N_PER_LBF / MM_PER_IN,
            Units::Metric => v,
        }
    }

    /// N/mm → spring rate in this system.
    pub fn n_per_mm_to_rate(self, k: f64) -> f64 {
        match self {
            Units::Imperial => k * MM_PER_IN / N_PER_LBF,
            Units::Metric => k,
        }
    }

    /// Torque in this system → N·m. Imperial: lbf·ft × 1.3558179483314004.
    pub fn torque_to_nm(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * NM_PER_LBFFT,
            Units::Metric => v,
        }
    }

    /// N·m → torque in this system.
    pub fn nm_to_torque(self, nm: f64) -> f64 {
        match self {
            Units::Imperial => nm / NM_PER_LBFFT,
            Units::Metric => nm,
        }
    }

    /// Temperature in this system → °C. Imperial: (°F − 32) × 5/9.
    pub fn temperature_to_c(self, v: f64) -> f64 {
        match self {
            Units::Imperial => (v - 32.0) * 5.0 / 9.0,
            Units::Metric => v,
        }
    }

    /// °C → temperature in this system.
    pub fn c_to_temperature(self, c: f64) -> f64 {
        match self {
            Units::Imperial => c * 9.0 / 5.0 + 32.0,
            Units::Metric => c,
        }
    }

    /// Label for lengths: "in" or "mm".
    pub fn length_label(self) -> &'static str {
        match self {
            Units::Imperial => "in",
            Units::Metric => "mm",
        }
    }

    /// Label for forces: "lbf" or "N".
    pub fn force_label(self) -> &'static str {
        match self {
            Units::Imperial => "lbf",
            Units::Metric => "N",
        }
    }

    /// Label for spring rates: "lbf/in" or "N/mm".
    pub fn rate_label(self) -> &'static str {
        match self {
            Units::Imperial => "lbf/in",
            Units::Metric => "N/mm",
        }
    }

    /// Label for torques: "lbf·ft" or "N·m".
    pub fn torque_label(self) -> &'static str {
        match self {
            Units::Imperial => "lbf·ft",
            Units::Metric => "N·m",
        }
    }

    /// Label for temperatures: "°F" or "°C".
    pub fn temperature_label(self) -> &'static str {
        match self {
            Units::Imperial => "°F",
            Units::Metric => "°C",
        }
    }
}

/// kg·m² per lb·ft², exact: 0.45359237 kg × (0.3048 m)².
pub const KG_M2_PER_LB_FT2: f64 = 0.45359237 * 0.3048 * 0.3048;
/// m² per ft², exact: (0.3048 m)².
pub const M2_PER_FT2: f64 = 0.3048 * 0.3048;
/// kg/m³ per lb/ft³, exact: 0.45359237 kg / (0.3048 m)³.
pub const KG_M3_PER_LB_FT3: f64 = 0.45359237 / (0.3048 * 0.3048 * 0.3048);
/// J/(kg·K) per BTU/(lb·°F), exact for the International Table BTU: 4186.8 (NIST SP 811,
/// App. B.8, "British thermal unit_IT per pound degree Fahrenheit").
pub const J_KG_K_PER_BTU_LB_F: f64 = 4186.8;
/// Metres per second per km/h, exact: 1000/3600.
pub const M_S_PER_KMH: f64 = 1000.0 / 3600.0;
/// Metres per second per mile per hour, exact: 1609.344/3600.
pub const M_S_PER_MPH: f64 = 1609.344 / 3600.0;

impl Units {
    /// Moment of inertia in this system (lb·ft² or kg·m²) → kg·m².
    pub fn inertia_to_kg_m2(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * KG_M2_PER_LB_FT2,
            Units::Metric => v,
        }
    }

    /// kg·m² → moment of inertia in this system.
    pub fn kg_m2_to_inertia(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v / KG_M2_PER_LB_FT2,
            Units::Metric => v,
        }
    }

    /// Area in this system (ft² or m²) → m².
    pub fn area_to_m2(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * M2_PER_FT2,
            Units::Metric => v,
        }
    }

    /// m² → area in this system.
    pub fn m2_to_area(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v / M2_PER_FT2,
            Units::Metric => v,
        }
    }

    /// Density in this system (lb/ft³ or kg/m³) → kg/m³.
    pub fn density_to_kg_m3(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * KG_M3_PER_LB_FT3,
            Units::Metric => v,
        }
    }

    /// kg/m³ → density in this system.
    pub fn kg_m3_to_density(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v / KG_M3_PER_LB_FT3,
            Units::Metric => v,
        }
    }

    /// Specific heat in this system (BTU/(lb·°F) or J/(kg·K)) → J/(kg·K).
    pub fn specific_heat_to_si(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * J_KG_K_PER_BTU_LB_F,
            Units::Metric => v,
        }
    }

    /// J/(kg·K) → specific heat in this system.
    pub fn si_to_specific_heat(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v / J_KG_K_PER_BTU_LB_F,
            Units::Metric => v,
        }
    }

    /// A temperature difference in K → this system (K or °F difference: × 9/5).
    pub fn k_to_temperature_rise(self, k: f64) -> f64 {
        match self {
            Units::Imperial => k * 9.0 / 5.0,
            Units::Metric => k,
        }
    }

    /// Road speed m/s → this system (mph or km/h).
    pub fn m_s_to_road_speed(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v / M_S_PER_MPH,
            Units::Metric => v / M_S_PER_KMH,
        }
    }

    /// Label for road speeds: "mph" or "km/h".
    pub fn road_speed_label(self) -> &'static str {
        match self {
            Units::Imperial => "mph",
            Units::Metric => "km/h",
        }
    }

    /// Label for moments of inertia: "lb·ft²" or "kg·m²".
    pub fn inertia_label(self) -> &'static str {
        match self {
            Units::Imperial => "lb·ft²",
            Units::Metric => "kg·m²",
        }
    }
}

/// Engine speed rev/min → angular speed rad/s: ω = 2π·n/60.
pub fn rpm_to_rad_s(rpm: f64) -> f64 {
    rpm * RAD_S_PER_RPM
}

/// Kilograms per pound (mass), exact (international pound, 1959).
pub const KG_PER_LB: f64 = 0.45359237;

impl Units {
    /// The name used in settings and JSON: "imperial" or "metric".
    pub fn key(self) -> &'static str {
        match self {
            Units::Imperial => "imperial",
            Units::Metric => "metric",
        }
    }

    /// Parses "imperial" / "metric".
    pub fn from_key(key: &str) -> Option<Self> {
        match key {
            "imperial" => Some(Units::Imperial),
            "metric" => Some(Units::Metric),
            _ => None,
        }
    }

    /// Vehicle weight in this system (lb or kg) → kg.
    pub fn weight_to_kg(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * KG_PER_LB,
            Units::Metric => v,
        }
    }

    /// kg → vehicle weight in this system.
    pub fn kg_to_weight(self, kg: f64) -> f64 {
        match self {
            Units::Imperial => kg / KG_PER_LB,
            Units::Metric => kg,
        }
    }

    /// Label for vehicle weight: "lb" or "kg".
    pub fn weight_label(self) -> &'static str {
        match self {
            Units::Imperial => "lb",
            Units::Metric => "kg",
        }
    }

    /// Road speed in this system (mph or km/h) → m/s.
    pub fn road_speed_to_m_s(self, v: f64) -> f64 {
        match self {
            Units::Imperial => v * M_S_PER_MPH,
            Units::Metric => v * M_S_PER_KMH,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol
    }

    // NIST SP 811, App. B.8: 1 lbf·ft = 1.355 818 N·m (exact value from the 1959 pound and foot).
    #[test]
    fn hundred_lbf_ft_is_135_5818_nm_per_nist_sp_811() {
        assert!(close(Units::Imperial.torque_to_nm(100.0), 135.5818, 5e-5));
    }

    // NIST SP 811, App. B.8: 1 lbf = 4.448 222 N.
    #[test]
    fn thousand_lbf_is_4448_222_n_per_nist_sp_811() {
        assert!(close(Units::Imperial.force_to_n(1000.0), 4448.222, 5e-4));
    }

    // International yard and pound agreement (1959): 1 in = 25.4 mm exactly.
    #[test]
    fn one_inch_is_exactly_25_4_mm() {
        assert_eq!(Units::Imperial.length_to_mm(1.0), 25.4);
        assert_eq!(Units::Metric.length_to_mm(1.0), 1.0);
    }

    // NIST SP 811, App. B.8 (factor from memory): lbf/in = 1.751 268 E+02 N/m, i.e. 0.1751268 N/mm.
    #[test]
    fn one_lbf_per_in_is_0_1751268_n_per_mm_per_nist_sp_811() {
        assert!(close(
            Units::Imperial.rate_to_n_per_mm(1.0),
            0.1751268,
            5e-8
        ));
    }

    // NIST SP 811, App. B.9 (from memory): t/°C = (t/°F − 32)/1.8.
    #[test]
    fn fahrenheit_fixed_points_convert() {
        assert!(close(Units::Imperial.temperature_to_c(212.0), 100.0, 1e-12));
        assert!(close(Units::Imperial.c_to_temperature(0.0), 32.0, 1e-12));
    }

    #[test]
    fn round_trips_return_the_input() {
        for u in [Units::Imperial, Units::Metric] {
            assert!(close(u.mm_to_length(u.length_to_mm(1.905)), 1.905, 1e-12));
            assert!(close(u.n_to_force(u.force_to_n(380.0)), 380.0, 1e-9));
            assert!(close(
                u.n_per_mm_to_rate(u.rate_to_n_per_mm(380.0)),
                380.0,
                1e-9
            ));
            assert!(close(u.nm_to_torque(u.torque_to_nm(455.0)), 455.0, 1e-9));
        }
    }

    #[test]
    fn serde_names_are_lowercase() {
        assert_eq!(
            serde_json::to_string(&Units::Metric).ok().as_deref(),
            Some("\"metric\"")
        );
        let u: Result<Units, _> = serde_json::from_str("\"imperial\"");
        assert_eq!(u.ok(), Some(Units::Imperial));
    }

    #[test]
    fn labels_name_each_system() {
        assert_eq!(Units::Imperial.torque_label(), "lbf·ft");
        assert_eq!(Units::Metric.rate_label(), "N/mm");
    }
}
