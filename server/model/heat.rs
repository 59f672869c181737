//! Friction against the facing's temperature at launch, over a season (docs/engineering.md §27).
//! No IO: it works on a loaded build and its calibration, which it does not run again.

use super::calibration::BuildCalibration;
use crate::records::measure::{Mass, Temperature};
use crate::records::stored::Dossier;
use clutch::capacity::friction::FacingMaterial;
use clutch::heat::{
    DEFAULT_TAU_S, HeatFit, HeatPass, NotFitted, bulk_rise_k, fit_mu_vs_temperature,
    launch_temperatures, time_of_day_s,
};
use clutch::launch::request::default_plate_share;

use super::energy::PassEnergies;
use super::launch::{ESTIMATES, PLATE_SPECIFIC_HEAT};
use crate::records::settings::SettingsInput;
use clutch::units::Units;

/// Each calibrated pass's launch temperature and μ, and the line through them or why not.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatStudy {
    /// (launch temperature °C, μ) of the calibrated passes with a known launch temperature.
    pub points: Vec<(f64, f64)>,
    /// The line, or why there is none, in words.
    pub fit: Result<HeatFit, String>,
}

/// The launch temperatures of a build's passes and μ against them, from its calibration.
///
/// Only days on which every pass has its time of day and air temperature are used (a pass
/// without them would hide heat); a pass's bulk rise is its slip energy (its data log's, else
/// the launch preview's at the setting of its date, [`PassEnergies`]) × the plate's share /
/// (pressure plate mass × specific heat), the mass the car's or the launch preview's estimate;
/// τ is the shop default ([`DEFAULT_TAU_S`], from memory), as the car's record has no cooling
/// figure.
pub fn study(d: &Dossier, settings: &SettingsInput, cal: &BuildCalibration) -> HeatStudy {
    let share = default_plate_share(FacingMaterial::from_key(&d.build.data.facing_material));
    let plate_kg = d.car.data.pressure_plate_mass_kg.map(Mass::kg).or_else(|| {
        ESTIMATES
            .iter()
            .find(|e| e.column == "pressure_plate_mass_kg")
            .map(|e| e.value)
    });
    let mut energies = PassEnergies::new(d, settings);
    let mut passes: Vec<(i64, &str, HeatPass)> = Vec::new();
    let mut broken_days: Vec<&str> = Vec::new();
    for pass in d.passes.iter().rev() {
        let p = &pass.data;
        let day = p.run_on.replace('-', "").parse::<i64>().unwrap_or_default();
        let (Some(at_s), Some(ambient_c)) =
            (time_of_day_s(&p.run_at), p.ambient_c.map(Temperature::c))
        else {
            broken_days.push(&p.run_on);
            continue;
        };
        let energy = energies.of(pass).ok();
        let rise_k = energy
            .zip(plate_kg)
            .map(|(e, m)| bulk_rise_k(e, share, m, PLATE_SPECIFIC_HEAT));
        let heat = HeatPass {
            day,
            at_s,
            ambient_c,
            rise_k,
        };
        passes.push((pass.id, &p.run_on, heat));
    }
    passes.retain(|(_, run_on, _)| !broken_days.contains(run_on));
    passes.sort_by(|a, b| {
        (a.2.day, a.2.at_s)
            .partial_cmp(&(b.2.day, b.2.at_s))
            .expect("finite")
    });
    let heat: Vec<HeatPass> = passes.iter().map(|p| p.2).collect();
    let temps = launch_temperatures(&heat, DEFAULT_TAU_S);
    let points: Vec<(f64, f64)> = cal
        .pass_ids
        .iter()
        .zip(&cal.report.passes)
        .filter_map(|(id, r)| {
            let i = passes.iter().position(|p| p.0 == *id)?;
            temps[i].map(|t| (t, r.mu))
        })
        .collect();
    let fit = fit_mu_vs_temperature(&points).map_err(|why| match why {
        NotFitted::TooFewPasses { n } => format!(
            "{n} calibrated pass(es) have a launch temperature (time of day and air \
                 temperature recorded for every pass of their day); {} are needed.",
            clutch::heat::MIN_PASSES
        ),
        NotFitted::TooLittleSpread { spread_k, more_k } => {
            // A temperature difference in the shop's scale: kelvin, or °F (1 K = 1.8 °F).
            let apart = |k: f64| match settings.units() {
                Units::Imperial => format!("{:.0} °F", k * 1.8),
                Units::Metric => format!("{k:.0} K"),
            };
            format!(
                "The launch temperatures span {}; {} more spread is needed (passes closer \
                 together, or a cold first pass and hot later ones).",
                apart(spread_k),
                apart(more_k)
            )
        }
    });
    HeatStudy { points, fit }
}
