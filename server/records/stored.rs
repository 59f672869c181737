//! Records as they are stored: each checked record with its id, its parent's id and its stamps
//! beside it, and the aggregate of one build (`Dossier`). `db` reads and writes these; the model,
//! the sheet and the pages read them. No IO here.

use serde::Serialize;
use sqlx::FromRow;

use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::height::HeightInput;
use crate::records::measure::{EngineSpeed, Force, Length, Seconds};
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;

/// A clutch build as stored: its record with its id, its car and its stamps.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Build {
    pub id: i64,
    pub car_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: BuildInput,
    pub created_at: String,
    pub updated_at: String,
}

/// Who and what a build belongs to, for headings and links.
#[derive(Debug, Clone, Serialize, FromRow)]
pub struct BuildOwner {
    pub customer_id: i64,
    pub customer_name: String,
    pub customer_phone: String,
    pub car_id: i64,
    pub car_description: String,
}

/// An active build of a live customer, with who it belongs to (for the work-due list).
#[derive(Debug, Clone, FromRow)]
pub struct ActiveBuild {
    #[sqlx(flatten)]
    pub build: Build,
    #[sqlx(flatten)]
    pub owner: BuildOwner,
}

/// A car as stored: its record with its id and its customer.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Car {
    pub id: i64,
    pub customer_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: CarInput,
    pub created_at: String,
    pub updated_at: String,
}

/// A setup change as stored (turns, counterweight, friction from a date on).
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Setup {
    pub id: i64,
    pub build_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: SetupInput,
    pub user_id: Option<i64>,
    pub created_at: String,
    pub updated_at: String,
}

/// A spring bench test as stored, with its readings by spring position.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct BenchTest {
    pub id: i64,
    pub build_id: i64,
    pub tested_on: String,
    pub note: String,
    pub created_at: String,
    #[sqlx(skip)]
    pub springs: Vec<BenchSpring>,
}

/// One spring's reading in a bench test (storage units: mm, N).
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct BenchSpring {
    #[serde(skip)]
    pub bench_test_id: i64,
    pub position: i64,
    pub free_length_mm: Option<Length>,
    pub compression_mm: Length,
    pub force_n: Force,
}

/// A cover-height measurement as stored.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Height {
    pub id: i64,
    pub build_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: HeightInput,
    pub user_id: Option<i64>,
    pub created_at: String,
    pub updated_at: String,
}

impl AsRef<HeightInput> for Height {
    fn as_ref(&self) -> &HeightInput {
        &self.data
    }
}

/// A track pass as stored.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Pass {
    pub id: i64,
    pub build_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: PassInput,
    pub user_id: Option<i64>,
    pub created_at: String,
    pub updated_at: String,
}

/// What the pages and the calibration read of a stored log (the file stays in the table).
#[derive(Debug, Clone, Serialize, FromRow)]
pub struct LogSummary {
    pub pass_id: i64,
    pub file_name: String,
    pub file_bytes: i64,
    pub sample_rate_hz: f64,
    pub launch_s: Seconds,
    pub lockup_s: Seconds,
    pub lockup_engine_rpm: EngineSpeed,
    pub slip_energy_j: Option<f64>,
    pub peak_slip_power_w: Option<f64>,
    /// JSON [[rpm, N·m], ...].
    pub slip_window: String,
    pub created_at: String,
}

impl LogSummary {
    /// Time from launch to lockup, s.
    pub fn lockup_after_launch_s(&self) -> f64 {
        (self.lockup_s - self.launch_s).s()
    }

    /// (engine rpm, clutch torque N·m) over the calibration window.
    pub fn window(&self) -> Vec<[f64; 2]> {
        serde_json::from_str(&self.slip_window).unwrap_or_default()
    }
}

/// Everything recorded on one build, loaded together for its page, its sheet and the API:
/// what `db::dossier::load` hands the model.
#[derive(Debug)]
pub struct Dossier {
    pub build: Build,
    pub owner: BuildOwner,
    pub car: Car,
    /// Oldest first; the last one is in force.
    pub setups: Vec<Setup>,
    /// Oldest first.
    pub bench: Vec<BenchTest>,
    /// In pass order.
    pub heights: Vec<Height>,
    /// The newest passes, newest first: at most `db::dossier::PASSES_LOADED` (what a calibration uses).
    pub passes: Vec<Pass>,
    /// How many passes the build has in all.
    pub passes_total: i64,
    /// The data logs of those passes (figures only; the files stay in the table).
    pub logs: Vec<LogSummary>,
    /// The kept whole-launch friction of those passes (`pass_launch_fits`, derived).
    pub launch_fits: Vec<KeptLaunchFit>,
    /// The kept slip energies of those passes' launch previews (`pass_energies`, derived).
    pub pass_energies: Vec<KeptEnergy>,
}

/// The slip energy of one pass's launch preview, as kept (`pass_energies`, migration 0028):
/// valid only while `inputs` matches the fingerprint of the preview's request today.
#[derive(Debug, Clone, PartialEq, sqlx::FromRow)]
pub struct KeptEnergy {
    pub pass_id: i64,
    /// Fingerprint of the preview's request (`model::calibration::fingerprint`).
    pub inputs: i64,
    /// The preview's slip energy, J; `None` with `note`.
    pub energy_j: Option<f64>,
    /// Why the preview gives none.
    pub note: Option<String>,
}

/// What the whole launch said of one pass, as kept (`pass_launch_fits`, migration 0025): valid
/// only while `inputs` matches the fingerprint of what the fit would read today.
#[derive(Debug, Clone, PartialEq, sqlx::FromRow)]
pub struct KeptLaunchFit {
    pub pass_id: i64,
    /// Fingerprint of the fit's request (`model::calibration::fingerprint`).
    pub inputs: i64,
    /// The friction whose simulated launch locks when the pass did; `None` with `note`.
    pub mu: Option<f64>,
    /// The simulated lockup engine speed at `mu`, rpm.
    pub lockup_rpm: Option<EngineSpeed>,
    /// Why no friction reproduces the pass.
    pub note: Option<String>,
}

impl Dossier {
    /// The data log of pass `pass_id`, if it has one.
    pub fn log_of(&self, pass_id: i64) -> Option<&LogSummary> {
        self.logs.iter().find(|l| l.pass_id == pass_id)
    }
}
