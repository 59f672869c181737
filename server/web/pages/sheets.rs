//! Setup sheets: printing one (a stored snapshot), viewing and reprinting it, and the
//! customer's read-only link to it.

use crate::records::measure::{EngineSpeed, Grams};
use crate::web::pages::builds::tune::typed_targets;
use askama::Template;
use axum::extract::State;
use axum::http::{HeaderMap, StatusCode, header};
use axum::response::{Html, IntoResponse, Redirect, Response};

use crate::auth;
use crate::db;
use crate::db::sheets::{Link, LinkState, Sheet};
use crate::error::{AppError, AppResult};
use crate::model::due::WorkStatus;
use crate::model::{Trial, TuningTargets};
use crate::records::{FieldErrors, field};
use crate::sheet::{self, SheetFigures, SheetInputs};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm};
use crate::web::http::flash::{self, RecordView};
use crate::web::pages::builds::show::{EntryForm, EntryForms, render_page};
use crate::web::pages::builds::tune::{capacity_chart, curve_start, figure_lines};
use crate::web::pages::builds::wear;
use crate::web::pages::chart::{Chart, Size};
use crate::web::pages::show::Show;
use clutch::capacity::friction::{FacingMaterial, HeatTrend};
use clutch::capacity::recommend::Recommendation;
use clutch::quantity::limits;
use clutch::units::Units;
use clutch::wear::WearReport;

/// Days a customer's link lasts unless the shop says otherwise.
pub const DEFAULT_LINK_DAYS: i64 = 30;

/// The sheet itself, as printed; `staff` adds the toolbar for the shop.
#[derive(Template)]
#[template(path = "sheets/sheet.html")]
pub struct SheetPage {
    pub i: SheetInputs,
    pub f: SheetFigures,
    pub u: Show,
    pub chart: Option<Chart>,
    pub staff: Option<StaffTools>,
}

/// What the shop sees around its own copy of the sheet.
pub struct StaffTools {
    pub sheet_id: i64,
    pub build_id: i64,
    pub csrf: String,
    pub links: Vec<Link>,
    /// A link just made: its full address, shown once.
    pub new_link: Option<String>,
    /// The days typed into the link form (kept when it is refused).
    pub valid_days: String,
    pub errors: FieldErrors,
}

impl SheetPage {
    fn new(inputs: SheetInputs, staff: Option<StaffTools>) -> Self {
        let f = sheet::figures(&inputs);
        let u = Show::new(inputs.units());
        let chart = f
            .capacity
            .as_ref()
            .ok()
            .map(|c| capacity_chart(Size::Paper, &u, &c.report, None));
        Self {
            i: inputs,
            f,
            u,
            chart,
            staff,
        }
    }

    pub fn figure_lines(&self) -> Vec<(&'static str, String)> {
        self.f
            .capacity
            .as_ref()
            .map(|c| figure_lines(&self.u, c))
            .unwrap_or_default()
    }

    pub fn warnings(&self) -> Vec<String> {
        let w = self
            .f
            .capacity
            .as_ref()
            .map(|c| c.report.warnings.clone())
            .unwrap_or_default();
        crate::model::launch::beside_launch_warning(w, self.f.launch_slip.as_deref())
    }

    pub fn material(&self) -> String {
        crate::web::pages::show::material_text(&self.i.build)
    }

    /// The first speed of the car's torque curve (where "at or below" lockups sit).
    pub fn curve_start(&self) -> f64 {
        curve_start(&self.f.capacity)
    }

    /// The setting in force when the sheet was printed.
    pub fn current(&self) -> Trial {
        let mut t = Trial::from_setup(self.i.setup.as_ref());
        if let Some(f) = &self.i.friction {
            t.mu = f.mu;
        }
        t
    }

    /// The disc's work-due status as printed: the shop's one status (wear alone, "soon"
    /// included) on sheets that carry it; without "soon" on sheets printed before.
    pub fn work_status(&self) -> Option<WorkStatus> {
        let r = self.wear()?;
        Some(if self.i.soon_status {
            WorkStatus::of_report(Some(r), false, self.i.settings.due_within_passes)
        } else {
            WorkStatus::of(Some(r.status), None, false, 0)
        })
    }

    /// The recommended setting, friction as in the current setting.
    pub fn suggested(&self, r: &Recommendation) -> Trial {
        Trial {
            adjuster_turns: r.recommended.adjuster_turns,
            counterweight_g: Grams::from_g(r.recommended.counterweight_g),
            mu: self.current().mu,
        }
    }

    /// Whether the recommendation moves both the adjusters and the counterweight, so "one
    /// thing at a time" would be the wrong advice beside it.
    pub fn suggestion_moves_both(&self) -> bool {
        match &self.f.recommendation {
            Some(Ok(r)) => self.current().moves_both(&self.suggested(r)),
            _ => false,
        }
    }

    /// What heat does to this facing's grip, in words.
    pub fn heat_note(&self) -> &'static str {
        match FacingMaterial::from_key(&self.i.build.facing_material).map(|m| m.data().heat_trend) {
            Some(HeatTrend::RisesWithHeat) => {
                "Sintered iron tends to grip harder as it heats: a hot clutch can lock up earlier than these figures."
            }
            _ => {
                "This facing loses grip when it runs past its temperature limit: a hot clutch slips more than these figures."
            }
        }
    }

    pub fn wear(&self) -> Option<&WearReport> {
        self.f.wear.as_ref().ok()
    }

    pub fn wear_headline(&self) -> String {
        self.wear().map_or_else(
            || "No cover-height measurement yet.".into(),
            |r| wear::headline(&self.u, r, self.work_status().unwrap_or(WorkStatus::NoData)),
        )
    }

    pub fn wear_forecast(&self) -> Vec<String> {
        self.wear()
            .map(|r| wear::forecast(&self.u, r))
            .unwrap_or_default()
    }

    pub fn wear_word(&self) -> &'static str {
        self.wear().map_or("– no data", |_| {
            self.work_status().unwrap_or(WorkStatus::NoData).word()
        })
    }

    pub fn wear_class(&self) -> &'static str {
        self.work_status().map_or("", |s| s.class())
    }

    /// The shims still in the clutch, in the order they come out.
    pub fn shims_in_place(&self) -> String {
        let pulled = self
            .i
            .heights
            .last()
            .map_or(0, |h| h.shims_pulled.max(0) as usize);
        let left: Vec<String> = self
            .i
            .build
            .shim_stack_mm
            .iter()
            .skip(pulled)
            .map(|s| self.u.len_num(s))
            .collect();
        if left.is_empty() {
            "none".into()
        } else {
            format!("{} {}", left.join(", "), self.u.length_unit())
        }
    }

    pub fn spring_rate_line(&self) -> String {
        match (self.f.tested_rate_n_per_mm, &self.i.bench) {
            (Some(k), Some(b)) => format!("{} (bench test {})", self.u.rate(k), b.tested_on),
            _ => format!(
                "{} (nominal, not bench tested)",
                self.u.opt_rate(&self.i.build.spring_rate_n_per_mm)
            ),
        }
    }

    pub fn thread_line(&self) -> String {
        crate::web::pages::show::thread_text(&self.i.build)
    }

    pub fn lever_line(&self) -> String {
        let b = &self.i.build;
        if b.lever_count == 0 {
            return "none (springs only)".into();
        }
        let how = match (
            b.lever_gain_n_per_g,
            b.lever_cg_radius_mm,
            b.lever_arm_ratio,
        ) {
            (Some(g), _, _) => format!(
                "gain {:.3} {}/g at 1000 rpm",
                self.u.units.n_to_force(g.n_per_g()),
                self.u.force_unit()
            ),
            (None, Some(r), Some(a)) => format!("CG radius {}, arm ratio {a}", self.u.len(r)),
            _ => String::new(),
        };
        format!(
            "{} × {} each; {how}",
            b.lever_count,
            self.u.grams(b.lever_mass_g)
        )
    }

    pub fn curve_line(&self) -> String {
        let c = &self.i.car.torque_curve_nm;
        let peak = c.iter().fold(
            (0.0, 0.0),
            |best, p| if p[1] > best.1 { (p[0], p[1]) } else { best },
        );
        match (c.first(), c.last()) {
            (Some(lo), Some(hi)) => format!(
                "{} dyno points, {:.0}–{:.0} rpm, peak {} at {:.0} rpm",
                c.len(),
                lo[0],
                hi[0],
                self.u.torque(peak.1),
                peak.0
            ),
            _ => "not entered".into(),
        }
    }
}

/// POST /builds/{id}/sheets: stores a snapshot and shows it, ready to print.
pub async fn create(
    State(state): State<AppState>,
    PathId(build_id): PathId,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    let mut tx = state.write(&user).await?;
    let d = db::dossier::load(&mut tx, build_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let settings = db::settings::get(&mut tx).await?;
    let units = settings.units();
    let mut errors = FieldErrors::default();
    let (lockup, ratio) = typed_targets(&form, limits::ENGINE_SPEED, units, &mut errors);
    if ratio.is_some() && lockup.is_none() {
        errors.add(
            "target_lockup",
            "a launch ratio target needs a lockup target too",
        );
    }
    if !errors.is_empty() {
        drop(tx);
        let forms = EntryForms {
            sheet: Some(EntryForm { form, errors }),
            ..Default::default()
        };
        let html = render_page(&state, &user.viewer(), build_id, forms)
            .await?
            .0;
        return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response());
    }
    let targets = lockup.map(|l| TuningTargets {
        lockup_rpm: EngineSpeed::from_rpm(l),
        launch_ratio: ratio,
    });
    // Customers see a display name (or the shop's name), never a login name.
    let prepared_by = db::users::by_id(&mut tx, user.id).await?.map_or_else(
        || settings.name.clone(),
        |u| u.shown_to_customers(&settings.name),
    );
    let inputs = SheetInputs::capture(
        &d,
        &settings,
        &prepared_by,
        &settings.ctx().today.to_string(),
        targets,
    );
    let snapshot = serde_json::to_string(&inputs)?;
    let id = db::sheets::insert(&mut tx, build_id, user.id, &inputs.prepared_on, &snapshot).await?;
    tx.commit().await?;
    Ok(Redirect::to(&format!("/sheets/{id}")).into_response())
}

async fn staff_page(
    state: &AppState,
    user: &CurrentUser,
    sheet_id: i64,
    new_link: Option<String>,
    link_form: (String, FieldErrors),
) -> AppResult<String> {
    let (valid_days, errors) = link_form;
    let mut conn = state.pool.acquire().await?;
    let sheet: Sheet = db::sheets::by_id(&mut conn, sheet_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let links = db::sheets::links(&mut conn, sheet_id).await?;
    let tools = StaffTools {
        sheet_id,
        build_id: sheet.build_id,
        csrf: user.csrf.clone(),
        links,
        new_link,
        valid_days,
        errors,
    };
    let inputs: SheetInputs = serde_json::from_str(&sheet.inputs)?;
    Ok(SheetPage::new(inputs, Some(tools)).render()?)
}

/// GET /sheets/{id}: the shop's copy, with Print and the customer-link tools; a link just made
/// (left by the POST that made it) is shown this once.
pub async fn show(RecordView(state, user, id, flash): RecordView) -> AppResult<Response> {
    let new_link = flash.note.clone().filter(|a| a.contains("/s/"));
    let form = (DEFAULT_LINK_DAYS.to_string(), FieldErrors::default());
    let html = staff_page(&state, &user, id, new_link, form).await?;
    Ok(flash.respond(Html(html)))
}

/// POST /sheets/{id}/links: makes a read-only link, then redirects to the sheet, which shows
/// its address once (a refresh there makes no second link).
pub async fn create_link(
    State(state): State<AppState>,
    PathId(sheet_id): PathId,
    headers: HeaderMap,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    let mut errors = FieldErrors::default();
    let days = field::number(
        &form,
        "valid_days",
        limits::LINK_DAYS,
        Units::Metric,
        &mut errors,
    )
    .unwrap_or(DEFAULT_LINK_DAYS as f64);
    if !errors.is_empty() {
        let typed = (form.get("valid_days").to_string(), errors);
        let html = staff_page(&state, &user, sheet_id, None, typed).await?;
        return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response());
    }
    let mut tx = state.write(&user).await?;
    db::sheets::by_id(&mut tx, sheet_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let secret = auth::new_secret("");
    db::sheets::insert_link(
        &mut tx,
        sheet_id,
        user.id,
        &auth::hash_secret(&secret),
        days as i64,
    )
    .await?;
    tx.commit().await?;
    // The configured public address when there is one: the Host header is the client's word.
    let address = match &state.public_url {
        Some(base) => format!("{base}/s/{secret}"),
        None => {
            let host = headers
                .get(header::HOST)
                .and_then(|h| h.to_str().ok())
                .filter(|h| {
                    h.chars().all(|c| {
                        c.is_ascii_alphanumeric() || matches!(c, '.' | ':' | '-' | '[' | ']')
                    })
                })
                .unwrap_or("localhost");
            format!("http://{host}/s/{secret}")
        }
    };
    Ok(flash::redirect(
        &state,
        &format!("/sheets/{sheet_id}"),
        &address,
    ))
}

/// POST /links/{id}/revoke
pub async fn revoke_link(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut tx = state.write(&signed.user).await?;
    let link = db::sheets::link_by_id(&mut tx, id)
        .await?
        .ok_or(AppError::NotFound)?;
    db::sheets::revoke_link(&mut tx, id).await?;
    tx.commit().await?;
    Ok(Redirect::to(&format!("/sheets/{}", link.sheet_id)).into_response())
}

#[derive(Template)]
#[template(path = "sheets/gone.html")]
struct GonePage {
    status: u16,
    message: &'static str,
    /// The shop's name and phone, so the customer knows whom to ask (expired or withdrawn).
    shop: Option<(String, String)>,
}

/// GET /s/{secret}: the customer's read-only sheet, no login. Unknown links answer 404,
/// revoked or expired ones 410, each with a plain page that leads nowhere else.
pub async fn public(
    State(state): State<AppState>,
    params: axum::extract::RawPathParams,
) -> AppResult<Response> {
    let secret = params
        .iter()
        .next()
        .map(|(_, v)| v.to_string())
        .unwrap_or_default();
    let mut conn = state.pool.acquire().await?;
    let state = if secret.len() == 64 && secret.bytes().all(|b| b.is_ascii_hexdigit()) {
        db::sheets::by_link(&mut conn, &auth::hash_secret(&secret)).await?
    } else {
        LinkState::Unknown
    };
    let (status, message) = match state {
        LinkState::Live(sheet) => {
            let mut inputs: SheetInputs = serde_json::from_str(&sheet.inputs)?;
            // Sheets printed before display names stored the login name: show the display
            // name (or the shop's name) instead.
            if let Some(staff) = db::users::by_name(&mut conn, &inputs.prepared_by).await? {
                inputs.prepared_by = staff.shown_to_customers(&inputs.settings.name);
            }
            let html = SheetPage::new(inputs, None).render()?;
            return Ok((
                [
                    (header::CACHE_CONTROL, "no-store"),
                    (header::REFERRER_POLICY, "no-referrer"),
                ],
                Html(html),
            )
                .into_response());
        }
        LinkState::Gone => (
            StatusCode::GONE,
            "This setup sheet link has expired or was withdrawn by the shop. Ask the shop for a new one.",
        ),
        LinkState::Unknown => (
            StatusCode::NOT_FOUND,
            "There is no setup sheet at this address. Check the link the shop gave you.",
        ),
    };
    let shop = if status == StatusCode::GONE {
        let settings = db::settings::get(&mut conn).await?;
        Some((settings.name, settings.phone))
    } else {
        None
    };
    let page = GonePage {
        status: status.as_u16(),
        message,
        shop,
    };
    Ok((status, Html(page.render()?)).into_response())
}
