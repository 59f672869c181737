//! Facing materials and the friction coefficient μ used for clutch capacity.
//!
//! Values are dry, against cast iron or steel. Sources: Juvinall & Marshek, Fundamentals of
//! Machine Component Design, 5th ed., p. 750 (representative properties of friction materials
//! operating dry); The Tribology Handbook (Neale, ed.), section B7, Table 7.4; Shigley,
//! Mechanical Engineering Design, Table 16-3 (cermet values from memory, not checked against
//! the book). Real μ varies with composition, speed, pressure and temperature: Juvinall advises
//! designing with 50–75 % of test values.

use crate::InputError;
use serde::{Deserialize, Serialize};

/// A clutch facing material.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum FacingMaterial {
    /// Woven organic facing.
    Organic,
    /// Molded (resin-bonded) facing.
    Molded,
    /// Ceramic-metallic buttons.
    Cermet,
    /// Sintered iron.
    SinteredIron,
}

/// How μ behaves as the facing heats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum HeatTrend {
    /// Roughly steady, then falls badly past the material's temperature limit
    /// (Tribology Handbook, section B7: "If the maximum temperatures in the tables are exceeded
    /// the μ may fall badly").
    FallsPastLimit,
    /// Rises as the facing heats (common shop practice for sintered iron, no published source).
    RisesWithHeat,
}

/// Friction and temperature data of one facing material.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct FacingData {
    /// Default μ for capacity estimates (low, conservative end of the cited values).
    pub mu_nominal: f64,
    /// Lowest μ reported by the cited sources.
    pub mu_min: f64,
    /// Highest μ reported by the cited sources.
    pub mu_max: f64,
    /// Maximum (short-time) facing temperature, °C.
    pub max_temp_c: f64,
    /// Temperature for continuous running, °C.
    pub continuous_temp_c: f64,
    /// Behaviour of μ with temperature.
    pub heat_trend: HeatTrend,
}

impl FacingMaterial {
    /// Every material, in display order.
    pub const ALL: [FacingMaterial; 4] = [
        FacingMaterial::Organic,
        FacingMaterial::Molded,
        FacingMaterial::Cermet,
        FacingMaterial::SinteredIron,
    ];

    /// Friction and temperature data (see module docs for the sources of each value).
    pub fn data(self) -> FacingData {
        match self {
            // μ range: Juvinall & Marshek 5th ed. p. 750 "woven" 0.25–0.45; nominal and
            // temperatures: Tribology Handbook B7 Table 7.4 "woven" 0.35–0.40, 250 / 150 °C.
            FacingMaterial::Organic => FacingData {
                mu_nominal: 0.35,
                mu_min: 0.25,
                mu_max: 0.45,
                max_temp_c: 250.0,
                continuous_temp_c: 150.0,
                heat_trend: HeatTrend::FallsPastLimit,
            },
            // μ range: Juvinall & Marshek p. 750 "molded" 0.25–0.45; nominal and temperatures:
            // Tribology Handbook B7 Table 7.4 "moulded" 0.35, 350 / 200 °C.
            FacingMaterial::Molded => FacingData {
                mu_nominal: 0.35,
                mu_min: 0.25,
                mu_max: 0.45,
                max_temp_c: 350.0,
                continuous_temp_c: 200.0,
                heat_trend: HeatTrend::FallsPastLimit,
            },
            // Nominal and temperatures: Shigley Table 16-3 "cermet" 0.32, 815 / 400 °C (from
            // memory); upper μ: Tribology Handbook B7 Table 7.4 "cermet" 0.40.
            FacingMaterial::Cermet => FacingData {
                mu_nominal: 0.32,
                mu_min: 0.32,
                mu_max: 0.40,
                max_temp_c: 815.0,
                continuous_temp_c: 400.0,
                heat_trend: HeatTrend::FallsPastLimit,
            },
            // μ range: Juvinall & Marshek p. 750 "sintered metal" 0.15–0.45; nominal (dynamic)
            // and temperatures: Tribology Handbook B7 Table 7.4 "sintered" 0.30, 500 / 300 °C.
            FacingMaterial::SinteredIron => FacingData {
                mu_nominal: 0.30,
                mu_min: 0.15,
                mu_max: 0.45,
                max_temp_c: 500.0,
                continuous_temp_c: 300.0,
                heat_trend: HeatTrend::RisesWithHeat,
            },
        }
    }

    /// Display name in plain words.
    pub const fn label(self) -> &'static str {
        match self {
            FacingMaterial::Organic => "Organic (woven)",
            FacingMaterial::Molded => "Molded",
            FacingMaterial::Cermet => "Ceramic-metallic",
            FacingMaterial::SinteredIron => "Sintered iron",
        }
    }
}

/// Friction surfaces of a dry stack with `discs` driven discs between iron plates: 2 per disc.
/// Same as Bhandari's z = n1 + n2 − 1 with n1 = discs + 1 iron members. Valid for 1–3 discs.
pub fn friction_surfaces(discs: u32) -> Result<u32, InputError> {
    if !(1..=3).contains(&discs) {
        return Err(InputError::new("disc.count", "must be 1, 2 or 3 discs"));
    }
    Ok(2 * discs)
}

/// Friction pairs of a multi-plate clutch: z = n1 + n2 − 1, with n1 plates on the driving and
/// n2 on the driven member. Source: Bhandari, Design of Machine Elements, ch. 11 (Ex. 11.8).
/// Both counts ≥ 1.
pub fn friction_pairs(driving_plates: u32, driven_plates: u32) -> Result<u32, InputError> {
    if driving_plates == 0 || driven_plates == 0 {
        return Err(InputError::new(
            "plates",
            "each member needs at least one plate",
        ));
    }
    Ok(driving_plates + driven_plates - 1)
}

impl FacingMaterial {
    /// The name used in storage and JSON ("organic", "molded", "cermet", "sintered_iron").
    pub const fn key(self) -> &'static str {
        match self {
            FacingMaterial::Organic => "organic",
            FacingMaterial::Molded => "molded",
            FacingMaterial::Cermet => "cermet",
            FacingMaterial::SinteredIron => "sintered_iron",
        }
    }

    /// Every material as (stored name, words), in display order, for a choice on a form.
    pub const CHOICES: [(&'static str, &'static str); 4] = {
        let m = Self::ALL;
        [
            (m[0].key(), m[0].label()),
            (m[1].key(), m[1].label()),
            (m[2].key(), m[2].label()),
            (m[3].key(), m[3].label()),
        ]
    };

    /// Parses a stored name.
    pub fn from_key(key: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|m| m.key() == key)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Bhandari, Design of Machine Elements, Ex. 11.8 (via FOSSEE Scilab TBC 764):
    // 5 steel + 4 bronze plates → z = 8 friction pairs.
    #[test]
    fn friction_pairs_match_bhandari_ex_11_8() {
        assert_eq!(friction_pairs(5, 4).ok(), Some(8));
    }

    // Twin disc: 3 iron members (flywheel, floater, pressure plate) + 2 discs − 1 = 4 surfaces
    // by Bhandari's z = n1 + n2 − 1; our 2-per-disc rule must agree for 1–3 discs.
    #[test]
    fn two_surfaces_per_disc_agrees_with_bhandari_pairs_rule() {
        for discs in 1..=3 {
            let pairs = friction_pairs(discs + 1, discs).ok();
            assert_eq!(friction_surfaces(discs).ok(), pairs);
        }
        assert!(friction_surfaces(0).is_err() && friction_surfaces(4).is_err());
    }

    // Juvinall & Marshek 5th ed. p. 750: dry friction materials span f = 0.15–0.45 (molded,
    // woven, sintered metal); every nominal must lie inside its own range and that span,
    // or the Tribology Handbook Table 7.4 upper value 0.40 for cermet.
    #[test]
    fn nominal_mu_lies_inside_each_range_and_the_published_span() {
        for m in FacingMaterial::ALL {
            let d = m.data();
            assert!(
                d.mu_min <= d.mu_nominal && d.mu_nominal <= d.mu_max,
                "{m:?}"
            );
            assert!(d.mu_min >= 0.15 && d.mu_max <= 0.45, "{m:?}");
            assert!(d.continuous_temp_c < d.max_temp_c, "{m:?}");
        }
    }

    // Tribology Handbook B7 Table 7.4: maximum temperature rises from woven (250 °C) to moulded
    // (350 °C) to sintered (500 °C).
    #[test]
    fn temperature_limits_follow_the_tribology_handbook_order() {
        let t = |m: FacingMaterial| m.data().max_temp_c;
        assert!(t(FacingMaterial::Organic) < t(FacingMaterial::Molded));
        assert!(t(FacingMaterial::Molded) < t(FacingMaterial::SinteredIron));
        assert_eq!(
            FacingMaterial::SinteredIron.data().heat_trend,
            HeatTrend::RisesWithHeat
        );
    }

    #[test]
    fn serde_names_are_snake_case() {
        let m: Result<FacingMaterial, _> = serde_json::from_str("\"sintered_iron\"");
        assert_eq!(m.ok(), Some(FacingMaterial::SinteredIron));
        let s = serde_json::to_string(&FacingMaterial::Cermet).ok();
        assert_eq!(s.as_deref(), Some("\"cermet\""));
        assert_eq!(FacingMaterial::Organic.label(), "Organic (woven)");
    }
}
