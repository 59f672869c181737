//! A build's disc wear per unit of slip energy, and the forecast that follows at the current
//! setting's slip energy per pass. No IO.

use crate::records::measure::EngineSpeed;
use std::collections::HashMap;

use super::as_of::BuildAsOf;
use super::calibration::fingerprint;
use super::wear::current_disc;
use super::{Missing, Trial};
use crate::records::settings::SettingsInput;
use crate::records::stored::{Dossier, KeptEnergy, Pass};
use clutch::launch::request::LaunchRequest;
use clutch::wear::{EnergyWear, passes_to_due};

/// A build's disc wear against the slip energy its passes took, and the forecast that follows
/// at the current setting (storage units: mm, J).
#[derive(Debug, Clone, PartialEq)]
pub struct EnergyForecast {
    /// Wear per MJ of slip energy, mm/MJ, over the intervals whose passes all have a known
    /// energy.
    pub fit: EnergyWear,
    /// The current setting's modelled slip energy per pass, J (the launch preview's, when it
    /// locks), or why there is none.
    pub energy_per_pass_j: Result<f64, Missing>,
    /// Passes until a shim is due at that energy per pass.
    pub passes_to_shim_due: Option<f64>,
    /// Passes until the disc is due at that energy per pass.
    pub passes_to_disc_due: Option<f64>,
    /// Over the intervals fitted: the passes recorded in them, and the passes their cover
    /// heights count. Fewer recorded than counted leaves energy out, so the fit reads high.
    pub passes_recorded: usize,
    pub passes_counted: i64,
}

/// Why a build has no forecast by slip energy.
#[derive(Debug, Clone, PartialEq)]
pub enum EnergyGap {
    /// The disc's wear cannot be analysed (the wear panel says why).
    NoWear(Missing),
    /// No pass is dated between two cover heights of the disc in the clutch.
    NoInterval,
    /// Every interval has a pass of unknown energy: no data log, and the launch preview of its
    /// setting could not run (the first reason it gave) or did not lock.
    UnknownEnergy(Option<Missing>),
}

/// The slip energy of a launch of `build` at `trial` from `launch_rpm` (the car's when `None`),
/// J, by the launch preview; why not when the preview cannot run or does not lock.
fn modelled_energy_j(
    build: &BuildAsOf,
    trial: Trial,
    launch_rpm: Option<f64>,
) -> Result<f64, Missing> {
    simulated_energy_j(&build.launch_request(trial, launch_rpm)?.request)
}

/// The slip energy of the launch `request` describes, J, or why there is none.
fn simulated_energy_j(request: &LaunchRequest) -> Result<f64, Missing> {
    let model = request.validate().map_err(|e| e.message)?.model;
    let run = model.simulate();
    run.lockup
        .map(|_| run.slip_energy_j)
        .ok_or_else(|| "The launch preview at this setting does not lock up.".into())
}

/// Each pass's slip energy, J: from its data log, else from the launch preview at the setting
/// of its date from its launch speed (the car's when it has none). The preview's energy is
/// the one kept with the dossier ([`KeptEnergy`]) while the fingerprint of its request still
/// matches, else simulated; the preview of one date and launch speed is worked out once.
pub struct PassEnergies<'a> {
    d: &'a Dossier,
    settings: &'a SettingsInput,
    /// By (date, launch speed bits).
    modelled: HashMap<(String, Option<u64>), Modelled>,
}

/// A launch preview's energy as [`PassEnergies`] finds it: the fingerprint of its request (0
/// when there is no request) and the energy, J, or why there is none.
type Modelled = (i64, Result<f64, Missing>);

impl<'a> PassEnergies<'a> {
    pub fn new(d: &'a Dossier, settings: &'a SettingsInput) -> Self {
        Self {
            d,
            settings,
            modelled: HashMap::new(),
        }
    }

    /// The slip energy of `pass`, J, or why it is unknown.
    pub fn of(&mut self, pass: &Pass) -> Result<f64, Missing> {
        if let Some(e) = self.d.log_of(pass.id).and_then(|l| l.slip_energy_j) {
            return Ok(e);
        }
        self.modelled(pass).1
    }

    /// The launch preview's energy of `pass` at the setting of its date: its request's
    /// fingerprint (0 without a request) and the energy or why there is none.
    fn modelled(&mut self, pass: &Pass) -> Modelled {
        let key = (
            pass.data.run_on.clone(),
            pass.data.launch_rpm.map(|r| r.rpm().to_bits()),
        );
        let (d, settings) = (self.d, self.settings);
        self.modelled
            .entry(key)
            .or_insert_with(|| {
                let at = BuildAsOf::on(d, settings, &pass.data.run_on);
                let plan = at
                    .setup
                    .ok_or_else(|| "No setup was in force on the pass's date.".to_string())
                    .and_then(|_| {
                        at.launch_request(at.trial, pass.data.launch_rpm.map(EngineSpeed::rpm))
                    });
                let request = match plan {
                    Ok(plan) => plan.request,
                    Err(why) => return (0, Err(why)),
                };
                let inputs = fingerprint(&request);
                let kept = d
                    .pass_energies
                    .iter()
                    .find(|k| k.pass_id == pass.id && k.inputs == inputs);
                let energy = match kept {
                    Some(k) => k.energy_j.ok_or_else(|| k.note.clone().unwrap_or_default()),
                    None => simulated_energy_j(&request),
                };
                (inputs, energy)
            })
            .clone()
    }
}

/// The launch preview's slip energy of every loaded pass without a data log's, as
/// `status::work_out` keeps it (the kept ones reused while they match): the passes whose
/// preview has a request, newest first.
pub fn pass_energies(d: &Dossier, settings: &SettingsInput) -> Vec<KeptEnergy> {
    let mut energies = PassEnergies::new(d, settings);
    d.passes
        .iter()
        .filter(|p| d.log_of(p.id).and_then(|l| l.slip_energy_j).is_none())
        .filter_map(|pass| {
            let (inputs, energy) = energies.modelled(pass);
            (inputs != 0).then(|| KeptEnergy {
                pass_id: pass.id,
                inputs,
                energy_j: energy.as_ref().ok().copied(),
                note: energy.err(),
            })
        })
        .collect()
}

/// Wear per unit of slip energy on the disc in the clutch (docs/engineering.md §13): between
/// consecutive cover heights, the growth in total wear against the slip energy of the passes
/// dated after the earlier measurement and on or before the later one, each from its data log,
/// else from the launch preview at the setting of its date; intervals with a pass of unknown
/// energy, or with no pass, are left out. Without an interval to fit, why. `now` is the build
/// as of today ([`BuildAsOf::now`] of `d`), which the caller has already worked out.
pub fn energy_forecast(d: &Dossier, now: &BuildAsOf) -> Result<EnergyForecast, EnergyGap> {
    let settings = now.settings;
    let req = now.wear().map_err(EnergyGap::NoWear)?;
    let report = clutch::wear::analyze(&req)
        .map_err(|e| EnergyGap::NoWear(format!("{}: {}", e.field, e.message)))?;
    let heights = current_disc(&d.heights);
    let mut energies = PassEnergies::new(d, settings);
    let mut energy_of = |pass: &Pass| energies.of(pass);
    let mut intervals = Vec::new();
    let mut with_passes = 0;
    let (mut passes_recorded, mut passes_counted) = (0, 0);
    let mut why_unknown = None;
    for (k, pair) in heights.windows(2).enumerate() {
        let (from, to) = (&pair[0].data.measured_on, &pair[1].data.measured_on);
        let passes: Vec<&Pass> = d
            .passes
            .iter()
            .filter(|p| p.data.run_on.as_str() > from.as_str() && p.data.run_on <= *to)
            .collect();
        if passes.is_empty() {
            continue;
        }
        with_passes += 1;
        let energy: Result<f64, Missing> = passes.iter().map(|p| energy_of(p)).sum();
        let growth = report.measurements[k + 1].total_wear - report.measurements[k].total_wear;
        match energy {
            Ok(e) => {
                intervals.push((growth, e));
                passes_recorded += passes.len();
                passes_counted += pair[1].data.passes - pair[0].data.passes;
            }
            Err(why) => {
                why_unknown.get_or_insert(why);
            }
        }
    }
    let gap = if with_passes == 0 {
        EnergyGap::NoInterval
    } else {
        EnergyGap::UnknownEnergy(why_unknown)
    };
    let fit = clutch::wear::wear_per_mj(&intervals).ok_or_else(|| gap.clone())?;
    let energy_per_pass_j = modelled_energy_j(now, now.trial, None);
    let last = report.measurements.last().ok_or(gap)?;
    let pulled = heights
        .last()
        .map_or(0, |h| h.data.shims_pulled.max(0) as u32);
    let (passes_to_shim_due, passes_to_disc_due) =
        energy_per_pass_j.as_ref().map_or((None, None), |e| {
            passes_to_due(&req, last, pulled, fit.per_mj * e / 1e6)
        });
    Ok(EnergyForecast {
        fit,
        energy_per_pass_j,
        passes_to_shim_due,
        passes_to_disc_due,
        passes_recorded,
        passes_counted,
    })
}
