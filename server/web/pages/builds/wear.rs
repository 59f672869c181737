//! The wear story of a build, as the page tells it: status in words, forecast, the cover-height
//! chart and the measurement table.

use crate::model::due::WorkStatus;
use crate::model::energy::{EnergyForecast, EnergyGap};
use crate::model::wear::current_disc;
use crate::records::stored::Height;
use crate::web::pages::chart::Chart;
use crate::web::pages::show::Show;
use clutch::quantity::counted;
use clutch::wear::{WearReport, WearStatus};

/// Growth, total disc wear and clamp lost at one measurement (storage units).
pub type WearFigures = (f64, f64, f64);

/// A build's wear, ready for its page and the front page.
pub struct WearView {
    pub report: WearReport,
    /// The disc's work-due status (wear alone: `model::due::WorkStatus`).
    pub status: WorkStatus,
    /// The status said in words, first.
    pub headline: String,
    /// The forecast in words ("about 35 passes to the next shim").
    pub forecast: Vec<String>,
    /// The forecast by slip energy in one line, or why there is none.
    pub by_energy: String,
    pub chart: Chart,
    /// The newest measurements the page lists, oldest of them first: the record and, on the
    /// disc in the clutch now, its (growth, total wear, clamp lost) figures.
    pub rows: Vec<(Height, Option<WearFigures>)>,
    /// How many measurements there are in all.
    pub measured: usize,
}

impl WearView {
    /// CSS class and shape for the status: a word first, a shape second, colour last.
    pub fn status_class(&self) -> &'static str {
        self.status.class()
    }
    pub fn status_word(&self) -> &'static str {
        self.status.word()
    }
}

/// The sentence a technician reads first, for the disc's work-due `status` (wear alone).
pub fn headline(u: &Show, r: &WearReport, status: WorkStatus) -> String {
    match (r.status, r.next_shim, status) {
        (WearStatus::DiscDue, _, _) => "Disc at its wear limit: replace the disc.".into(),
        (WearStatus::ShimDue, Some(shim), _) => format!("Pull the {} shim now.", u.len(shim)),
        (WearStatus::ShimDue, None, _) => "Shimming limit reached.".into(),
        (
            WearStatus::Ok,
            Some(shim),
            WorkStatus::Soon {
                passes,
                disc: false,
            },
        ) => format!(
            "Within limits; the {} shim falls due in about {}.",
            u.len(shim),
            counted(passes, "pass", "passes")
        ),
        (WearStatus::Ok, _, WorkStatus::Soon { passes, .. }) => {
            format!(
                "Within limits; the disc falls due in about {}.",
                counted(passes, "pass", "passes")
            )
        }
        (WearStatus::Ok, _, _) => "Within limits.".into(),
    }
}

/// Forecast sentences from the wear rate.
pub fn forecast(u: &Show, r: &WearReport) -> Vec<String> {
    let mut out = Vec::new();
    match r.wear_per_pass {
        None => {
            out.push("Two measurements at different pass counts are needed for a forecast.".into())
        }
        Some(rate) if rate <= 0.0 => out.push("No measurable wear yet: no forecast.".into()),
        Some(rate) => {
            out.push(format!(
                "Wearing about {} per 100 passes.",
                u.len(rate * 100.0)
            ));
            if let (Some(n), Some(shim)) = (r.passes_to_shim_due, r.next_shim)
                && r.status == WearStatus::Ok
            {
                out.push(format!(
                    "About {} to the next shim ({}).",
                    counted(n, "pass", "passes"),
                    u.len(shim)
                ));
            }
            if let Some(n) = r.passes_to_disc_due
                && r.status != WearStatus::DiscDue
            {
                out.push(format!(
                    "About {} until the disc is due.",
                    counted(n, "pass", "passes")
                ));
            }
        }
    }
    out
}

/// The forecast by slip energy in one line (`model::energy::energy_forecast`, the figures
/// `GET /api/v1/builds/{id}/wear` answers), or why there is none. Wear per 100 MJ, as the
/// per-pass rate is read per 100 passes: per MJ it rounds away at the shop's decimals.
pub fn by_energy(u: &Show, r: &WearReport, e: &Result<EnergyForecast, EnergyGap>) -> String {
    let e = match e {
        Ok(e) => e,
        Err(EnergyGap::NoWear(why)) => return format!("By slip energy: no forecast ({why})."),
        Err(EnergyGap::NoInterval) => {
            return "By slip energy: no forecast until passes are recorded between two cover \
                    heights of this disc."
                .into();
        }
        Err(EnergyGap::UnknownEnergy(Some(why))) => {
            return format!(
                "By slip energy: no forecast; passes without a data log need the launch \
                 preview: {why}"
            );
        }
        Err(EnergyGap::UnknownEnergy(None)) => {
            return "By slip energy: no forecast; no interval between cover heights has a \
                    known slip energy for every pass."
                .into();
        }
    };
    if e.fit.per_mj <= 0.0 {
        return "By slip energy: no measurable wear yet: no forecast.".into();
    }
    // One interval has no spread to give a range from: its count says so.
    let range = e.fit.ci95.map_or(String::new(), |[lo, hi]| {
        format!(" (95 %: {} to {})", u.len(lo * 100.0), u.len(hi * 100.0))
    });
    let rate = format!(
        "By slip energy: {} per 100 MJ{range}, from {}",
        u.len(e.fit.per_mj * 100.0),
        counted(e.fit.n as f64, "interval", "intervals")
    );
    // Passes the cover heights count but nobody recorded took energy the fit never saw.
    let rate = if (e.passes_recorded as i64) < e.passes_counted {
        format!(
            "{rate} ({} recorded of the {} the cover heights count: it reads high)",
            e.passes_recorded, e.passes_counted
        )
    } else {
        rate
    };
    let energy = match &e.energy_per_pass_j {
        Ok(j) => *j,
        Err(why) => return format!("{rate}; no figure per pass at the current setting: {why}"),
    };
    let shim = e
        .passes_to_shim_due
        .filter(|_| r.status == WearStatus::Ok && r.next_shim.is_some());
    let disc = e
        .passes_to_disc_due
        .filter(|_| r.status != WearStatus::DiscDue);
    let ahead = match (shim, disc) {
        (Some(s), Some(d)) => format!(
            "about {} to the next shim and {} until the disc is due",
            counted(s, "pass", "passes"),
            counted(d, "pass", "passes")
        ),
        (Some(s), None) => format!("about {} to the next shim", counted(s, "pass", "passes")),
        (None, Some(d)) => format!(
            "about {} until the disc is due",
            counted(d, "pass", "passes")
        ),
        (None, None) => "no forecast past the limit already reached".into(),
    };
    format!(
        "{rate}; at the current setting's {} a pass, {ahead}.",
        u.energy_j(energy)
    )
}

/// The wear panel of a build, from the analysed report of the current disc (storage units) and
/// all the build's measurements (earlier discs are kept as history); `window` is the shop's
/// "due within" passes (for "soon"), `listed` how many of the newest measurements its table
/// lists.
pub fn view(
    u: &Show,
    report: WearReport,
    heights: &[Height],
    limit_mm: f64,
    window: i64,
    energy: &Result<EnergyForecast, EnergyGap>,
    listed: usize,
) -> WearView {
    let status = WorkStatus::of_report(Some(&report), false, window);
    let current = current_disc(heights);
    let earlier = heights.len() - current.len();
    let rows = heights
        .iter()
        .enumerate()
        .skip(heights.len().saturating_sub(listed))
        .map(|(i, h)| {
            let figures = i
                .checked_sub(earlier)
                .and_then(|j| report.measurements.get(j))
                .map(|p| (p.growth, p.total_wear, p.clamp_loss));
            (h.clone(), figures)
        })
        .collect();
    WearView {
        headline: headline(u, &report, status),
        status,
        forecast: forecast(u, &report),
        by_energy: by_energy(u, &report, energy),
        chart: chart(u, &report, current, limit_mm),
        rows,
        measured: heights.len(),
        report,
    }
}

/// Cover height against passes: the measurements, the height at which a shim is due, each
/// shim pull, and the forecast to the next limit.
fn chart(u: &Show, r: &WearReport, heights: &[Height], limit_mm: f64) -> Chart {
    let len = |mm: f64| u.units.mm_to_length(mm);
    let h0 = heights.first().map_or(0.0, |h| h.data.height_mm.mm());
    let due_height = h0 + limit_mm;
    let points: Vec<(f64, f64)> = heights
        .iter()
        .map(|h| (h.data.passes as f64, len(h.data.height_mm.mm())))
        .collect();
    let last = heights
        .last()
        .map_or((0.0, h0), |h| (h.data.passes as f64, h.data.height_mm.mm()));
    // The forecast runs to whichever comes first, the next shim or the disc, as the report says;
    // between pulls the cover height grows as fast as the disc wears.
    let next_due = [r.passes_to_shim_due, r.passes_to_disc_due]
        .into_iter()
        .flatten()
        .min_by(f64::total_cmp);
    let forecast_end = match (r.wear_per_pass, next_due) {
        (Some(rate), Some(n)) if rate > 0.0 && n > 0.0 => Some((last.0 + n, last.1 + rate * n)),
        _ => None,
    };
    let x_max = forecast_end
        .map_or(last.0, |(x, _)| x)
        .max(last.0)
        .max(10.0);
    let y_lo = heights
        .iter()
        .map(|h| h.data.height_mm.mm())
        .fold(h0, f64::min)
        - limit_mm * 0.5;
    let y_hi = forecast_end.map_or(due_height, |(_, y)| y.max(due_height)) + limit_mm * 0.4;
    let (mut c, f) = Chart::new(
        "Cover height against passes",
        "passes on this disc",
        &format!("cover height ({})", u.length_unit()),
        (0.0, x_max * 1.05),
        (len(y_lo), len(y_hi)),
    );
    c.mark_y(
        &f,
        "limit",
        format!("shim due {}", u.len_num(due_height)),
        len(due_height),
    );
    for pair in heights.windows(2) {
        if pair[1].data.shims_pulled > pair[0].data.shims_pulled {
            c.mark_x(&f, "shim", "shim pulled".into(), pair[1].data.passes as f64);
        }
    }
    if let Some((x, y)) = forecast_end {
        c.line(
            &f,
            "forecast",
            "forecast",
            &[(last.0, len(last.1)), (x, len(y))],
        );
    }
    let tips: Vec<String> = heights
        .iter()
        .map(|h| {
            format!(
                "{}: {} at {} passes",
                h.data.measured_on,
                u.len(h.data.height_mm),
                h.data.passes
            )
        })
        .collect();
    c.line_with_dots(&f, "height", "measured", &points, &tips);
    c
}

/// The pill of a found build's kept work-due status (`build_status`) in a search result: (CSS
/// class, word with its shape). Springs are said when the wear is fine but they are flagged.
pub fn found_status(b: &crate::db::customers::FoundBuild) -> (&'static str, &'static str) {
    let wear = match b.wear.as_deref() {
        Some("disc_due") => Some(WearStatus::DiscDue),
        Some("shim_due") => Some(WearStatus::ShimDue),
        Some("ok") => Some(WearStatus::Ok),
        _ => None,
    };
    let soon = b.soon_passes.map(|p| (p, b.soon_disc));
    let s = WorkStatus::of(wear, soon, b.springs_flagged, b.due_within_passes);
    (s.class(), s.word())
}
