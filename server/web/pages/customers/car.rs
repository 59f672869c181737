//! Car pages: a car with its torque curve and builds; new (under a customer) and edit.

use askama::Template;
use axum::response::{Html, Response};

use crate::db;
use crate::db::customers::Customer;
use crate::error::{AppError, AppResult};
use crate::records::stored::Build;
use crate::records::stored::Car;
use crate::records::{FieldErrors, FormData};
use crate::web::http::flash::RecordView;
use crate::web::pages::layout::Layout;

#[derive(Template)]
#[template(path = "cars/show.html")]
pub struct ShowPage {
    pub page: Layout,
    pub car: Car,
    pub customer: Customer,
    pub builds: Vec<Build>,
    /// "Saved: ..." after a save, shown once.
    pub flash: Option<String>,
}

pub async fn show(RecordView(state, user, id, flash): RecordView) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let car = db::cars::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let customer = db::customers::by_id(&mut conn, car.customer_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) =
        Layout::load(&mut conn, &user, "customers", car.data.description.clone()).await?;
    let builds = db::builds::for_car(&mut conn, id).await?;
    let page = ShowPage {
        page,
        car,
        customer,
        builds,
        flash: flash.note.clone(),
    };
    Ok(flash.respond(Html(page.render()?)))
}

#[derive(Template)]
#[template(path = "cars/form.html")]
pub struct FormPage {
    pub page: Layout,
    pub customer: Customer,
    /// The car being edited, or `None` for a new one.
    pub id: Option<i64>,
    pub form: FormData,
    pub errors: FieldErrors,
}

impl FormPage {
    pub fn action(&self) -> String {
        match self.id {
            Some(id) => format!("/cars/{id}"),
            None => format!("/customers/{}/cars", self.customer.id),
        }
    }
}
