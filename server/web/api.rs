//! The JSON API under `/api/v1/`: every record, every calculation, the data-log analysis.

/// Calculations (`/calc/...`) and the figures of stored builds (wear, calibration).
pub mod calc;
/// The data-log analysis of a posted file or a pass's stored log.
pub mod datalogs;
/// The spreadsheet import.
pub mod import;
/// The API described (OpenAPI 3.1), from the types that serve it.
pub mod openapi;
/// List, get, create and update of the shop's records.
pub mod records;

use crate::db::customers::Customer;
use crate::error::{ApiError, AppError};
use crate::records::stored::{BenchTest, Build, Car, Height, Pass, Setup};
use crate::web::http::routes::{Access, Routes, get, post};

/// Every API route (paths under `web::API_PREFIX`); all need a bearer token.
pub fn routes() -> Routes {
    use Access::Token;
    Routes::new()
        .route(
            Token,
            "/customers",
            get(records::customers_list).post(records::customer_create),
        )
        .route(
            Token,
            "/customers/{id}",
            get(records::get::<Customer>).put(records::update::<Customer>),
        )
        .route(
            Token,
            "/customers/{id}/cars",
            get(records::of_parent::<Car>).post(records::create::<Car>),
        )
        .route(Token, "/cars", get(records::cars_list))
        .route(
            Token,
            "/cars/{id}",
            get(records::get::<Car>).put(records::update::<Car>),
        )
        .route(
            Token,
            "/cars/{id}/builds",
            get(records::of_parent::<Build>).post(records::create::<Build>),
        )
        .route(Token, "/builds", get(records::builds_list))
        .route(
            Token,
            "/builds/{id}",
            get(records::get::<Build>).put(records::update::<Build>),
        )
        .route(
            Token,
            "/builds/{id}/setups",
            get(records::of_parent::<Setup>).post(records::create::<Setup>),
        )
        .route(
            Token,
            "/setups/{id}",
            get(records::get::<Setup>).put(records::update::<Setup>),
        )
        .route(
            Token,
            "/builds/{id}/bench-tests",
            get(records::of_parent::<BenchTest>).post(records::create::<BenchTest>),
        )
        .route(
            Token,
            "/bench-tests/{id}",
            get(records::get::<BenchTest>).put(records::update::<BenchTest>),
        )
        .route(
            Token,
            "/builds/{id}/measurements",
            get(records::of_parent::<Height>).post(records::create::<Height>),
        )
        .route(
            Token,
            "/measurements/{id}",
            get(records::get::<Height>).put(records::update::<Height>),
        )
        .route(
            Token,
            "/builds/{id}/passes",
            get(records::of_parent::<Pass>).post(records::create::<Pass>),
        )
        .route(
            Token,
            "/passes/{id}",
            get(records::get::<Pass>).put(records::update::<Pass>),
        )
        .route(Token, "/builds/{id}/wear", get(calc::build_wear))
        .route(Token, "/builds/{id}/capacity", get(calc::build_capacity))
        .route(Token, "/builds/{id}/status", get(calc::build_status))
        .route(
            Token,
            "/builds/{id}/calibration",
            get(calc::build_calibration),
        )
        .route(Token, "/calc/capacity", post(calc::capacity))
        .route(Token, "/calc/recommend", post(calc::recommend))
        .route(Token, "/calc/calibrate", post(calc::calibrate))
        .route(Token, "/calc/wear", post(calc::wear))
        .route(
            Token,
            "/calc/log-analysis",
            post(datalogs::calc).body_limit(datalogs::LOG_BODY_LIMIT_BYTES),
        )
        .route(
            Token,
            "/passes/{id}/log",
            post(datalogs::api_store).body_limit(datalogs::LOG_BODY_LIMIT_BYTES),
        )
        .route(Token, "/passes/{id}/analysis", get(datalogs::api_analysis))
        .route(Token, "/calc/launch", post(calc::launch))
        // The description of every other route here (it does not describe itself).
        .route(Token, "/openapi.json", get(openapi::document))
        .route(
            Token,
            "/import/spreadsheet",
            post(import::spreadsheet).body_limit(import::IMPORT_BODY_LIMIT_BYTES),
        )
}

/// Any other path under the API: a JSON 404.
pub async fn not_found() -> ApiError {
    ApiError(AppError::NotFound)
}
