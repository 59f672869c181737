//! The counter's work-due list: every active build's disc, shims and springs, most urgent first.
//! No IO.

use crate::records::measure::SpringRate;
use std::collections::HashMap;

use super::as_of::bench_review;
use super::wear::wear_request;
use crate::records::height::HeightInput;
use crate::records::settings::SettingsInput;
use crate::records::stored::{ActiveBuild, BenchTest, BuildOwner, Height};

/// Why a build is on the work-due list, most urgent first.
#[derive(Debug, Clone, PartialEq)]
pub enum DueReason {
    DiscDue,
    /// A shim is due now; the thickness of the next one (mm).
    ShimDue(Option<f64>),
    /// A forecast falls within the shop's window: passes to go, and whether it is the disc.
    Soon {
        passes: f64,
        disc: bool,
    },
    /// The latest bench test found the set out of tolerance, a spring sagged, or (a spring's
    /// first test) a spring low on load against its set.
    Springs {
        spread_pct: f64,
        out_of_tolerance: bool,
        sagged: usize,
        low: usize,
    },
}

impl DueReason {
    /// Sort key: smaller is more urgent.
    pub fn urgency(&self) -> f64 {
        match self {
            Self::DiscDue => 0.0,
            Self::ShimDue(_) => 1.0,
            Self::Soon { passes, .. } => 2.0 + passes / 1e6,
            Self::Springs { .. } => 3.0,
        }
    }
}

/// A build's work-due status in one word: THE ONE STATUS the counter, the search results, the
/// build page, the setup sheet and the API show (see [`WorkStatus::of`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WorkStatus {
    DiscDue,
    ShimDue,
    /// The latest bench test flagged the springs.
    Springs,
    /// A shim (or, with `disc`, the disc) falls due within the shop's window of passes.
    Soon {
        passes: f64,
        disc: bool,
    },
    Ok,
    /// No wear figures yet (no cover height, or the build lacks what the wear needs).
    NoData,
}

impl WorkStatus {
    /// The rule: a disc or shim due now first, then flagged springs, then a shim or disc due
    /// within `window` passes (the shop's "due within" setting), then ok. `wear` is the wear
    /// analysis's status, `soon` the nearer forecast (passes, whether it is the disc; see
    /// [`soonest`]).
    pub fn of(
        wear: Option<clutch::wear::WearStatus>,
        soon: Option<(f64, bool)>,
        springs_flagged: bool,
        window: i64,
    ) -> Self {
        use clutch::wear::WearStatus as W;
        match wear {
            Some(W::DiscDue) => Self::DiscDue,
            Some(W::ShimDue) => Self::ShimDue,
            _ if springs_flagged => Self::Springs,
            Some(W::Ok) => match soon.filter(|(p, _)| *p <= window as f64) {
                Some((passes, disc)) => Self::Soon { passes, disc },
                None => Self::Ok,
            },
            None => Self::NoData,
        }
    }

    /// The status of a wear report (`None`: no wear figures) with the springs' flag.
    pub fn of_report(
        report: Option<&clutch::wear::WearReport>,
        springs_flagged: bool,
        window: i64,
    ) -> Self {
        Self::of(
            report.map(|r| r.status),
            report.and_then(soonest),
            springs_flagged,
            window,
        )
    }

    /// The word with its shape (a word first, a shape second, colour last).
    pub fn word(&self) -> &'static str {
        match self {
            Self::DiscDue => "■ disc due",
            Self::ShimDue => "▲ shim due",
            Self::Springs => "▲ springs",
            Self::Soon { disc: false, .. } => "◆ shim soon",
            Self::Soon { disc: true, .. } => "◆ disc soon",
            Self::Ok => "● ok",
            Self::NoData => "– no wear data",
        }
    }

    /// The CSS class of the word's pill.
    pub fn class(&self) -> &'static str {
        match self {
            Self::DiscDue => "bad",
            Self::ShimDue | Self::Springs => "warn",
            Self::Soon { .. } => "soon",
            Self::Ok => "ok",
            Self::NoData => "",
        }
    }

    /// The name the API answers with ("disc_due", "shim_due", "springs", "shim_soon",
    /// "disc_soon", "ok", "no_data").
    pub fn key(&self) -> &'static str {
        match self {
            Self::DiscDue => "disc_due",
            Self::ShimDue => "shim_due",
            Self::Springs => "springs",
            Self::Soon { disc: false, .. } => "shim_soon",
            Self::Soon { disc: true, .. } => "disc_soon",
            Self::Ok => "ok",
            Self::NoData => "no_data",
        }
    }
}

/// The nearer wear forecast of a report within limits: (passes to go, whether it is the disc),
/// the shim's on a tie; `None` when nothing is due now or there is no forecast.
pub fn soonest(report: &clutch::wear::WearReport) -> Option<(f64, bool)> {
    if report.status != clutch::wear::WearStatus::Ok {
        return None;
    }
    let shim = report.passes_to_shim_due.map(|p| (p, false));
    let disc = report.passes_to_disc_due.map(|p| (p, true));
    [shim, disc]
        .into_iter()
        .flatten()
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// One line of the counter's work-due list.
#[derive(Debug, Clone)]
pub struct Due {
    pub build_id: i64,
    pub build_label: String,
    pub owner: BuildOwner,
    pub reason: DueReason,
}

/// The work due across the shop: builds with a disc or shim due, forecasts within
/// `settings.due_within_passes`, and spring sets flagged by their latest bench test; most
/// urgent first. Inputs are grouped by build id (any order within the slices is kept).
pub fn work_due(
    builds: &[ActiveBuild],
    heights: &[Height],
    bench: &[BenchTest],
    settings: &SettingsInput,
) -> Vec<Due> {
    let window = settings.due_within_passes as f64;
    let mut tests_of: HashMap<i64, Vec<BenchTest>> = HashMap::new();
    for t in bench {
        tests_of.entry(t.build_id).or_default().push(t.clone());
    }
    let mut heights_of: HashMap<i64, Vec<&HeightInput>> = HashMap::new();
    for h in heights {
        heights_of.entry(h.build_id).or_default().push(&h.data);
    }
    let mut out = Vec::new();
    for ab in builds {
        let b = &ab.build;
        let review = bench_review(
            tests_of.get(&b.id).map_or(&[], |t| t.as_slice()),
            &b.data,
            settings,
        );
        let tested = review
            .as_ref()
            .and_then(|r| r.last().map(|t| t.spread.mean));
        let own = heights_of.get(&b.id).map_or(&[][..], |h| h.as_slice());
        let line = |reason| Due {
            build_id: b.id,
            build_label: b.data.label.clone(),
            owner: ab.owner.clone(),
            reason,
        };
        let rate = tested
            .map(SpringRate::from_n_per_mm)
            .or(b.data.spring_rate_n_per_mm);
        if let Ok(req) = wear_request(&b.data, settings, rate, own)
            && let Ok(report) = clutch::wear::analyze(&req)
        {
            use clutch::wear::WearStatus;
            let reason = match report.status {
                WearStatus::DiscDue => Some(DueReason::DiscDue),
                WearStatus::ShimDue => Some(DueReason::ShimDue(report.next_shim)),
                WearStatus::Ok => soonest(&report)
                    .filter(|(p, _)| *p <= window)
                    .map(|(passes, disc)| DueReason::Soon { passes, disc }),
            };
            out.extend(reason.map(line));
        }
        if let Some(last) = review.as_ref().and_then(|r| r.last())
            && last.flagged()
        {
            out.push(line(DueReason::Springs {
                spread_pct: last.spread.spread_pct,
                out_of_tolerance: last.spread.out_of_tolerance,
                sagged: last.sagged.len(),
                low: last.low.len(),
            }));
        }
    }
    out.sort_by(|a, b| a.reason.urgency().total_cmp(&b.reason.urgency()));
    out
}
