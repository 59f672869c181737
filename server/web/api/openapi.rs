//! `GET /api/v1/openapi.json`: the API described in OpenAPI 3.1. Each operation names the Rust
//! types its handler reads and answers, and their schemas are derived from those very types
//! (`utoipa::ToSchema`), so the description cannot drift from what is served. Record fields are
//! described from their declarations (`records::field`): label and storage unit. The test
//! `tests/integration/openapi.rs` checks the document with an outside validator and that every
//! route of `api::routes()` is described and every described path is served.

use std::borrow::Cow;

use axum::Json;
use serde_json::Value as JsonValue;
use utoipa::ToSchema;
use utoipa::openapi::path::{
    HttpMethod, OperationBuilder, ParameterBuilder, ParameterIn, PathItem, PathsBuilder,
};
use utoipa::openapi::request_body::RequestBodyBuilder;
use utoipa::openapi::schema::{ArrayBuilder, ComponentsBuilder, ObjectBuilder, OneOfBuilder, Type};
use utoipa::openapi::security::{HttpAuthScheme, HttpBuilder, SecurityRequirement, SecurityScheme};
use utoipa::openapi::{
    ContentBuilder, InfoBuilder, OpenApiBuilder, Ref, RefOr, Required, ResponseBuilder, Schema,
};

use crate::error::{ApiError, ErrorBody};
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::field::{Record, Value};
use crate::records::height::HeightInput;
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::stored;
use crate::web::http::extract::ApiUser;
use clutch::calibration::CalibrationReport;
use clutch::capacity::recommend::{RecommendRequest, Recommendation};
use clutch::capacity::report::CapacityReport;
use clutch::capacity::request::CapacityRequest;
use clutch::datalog::request::{LogAnalysisReport, LogAnalysisRequest};
use clutch::launch::request::{LaunchReport, LaunchRequest};
use clutch::units::Units;
use clutch::wear::{WearReport, WearRequest};

/// The security scheme's name in the document.
const BEARER: &str = "bearer";

/// What an operation reads or answers: a named type, or a list of one.
#[derive(Clone)]
enum Body {
    None,
    One(Cow<'static, str>),
    List(Cow<'static, str>),
    /// One of several named types (a body that chooses its shape, as by `method`).
    OneOf(Vec<Cow<'static, str>>),
}

/// The document being built: its paths and every schema the operations reach.
struct Doc {
    paths: PathsBuilder,
    schemas: Vec<(String, RefOr<Schema>)>,
}

impl Doc {
    /// Registers `T` (and every type it reaches) as a component.
    fn one<T: ToSchema>(&mut self) -> Body {
        self.schemas.push((T::name().into_owned(), T::schema()));
        T::schemas(&mut self.schemas);
        Body::One(T::name())
    }

    fn list<T: ToSchema>(&mut self) -> Body {
        match self.one::<T>() {
            Body::One(n) => Body::List(n),
            other => other,
        }
    }

    fn schema(body: &Body) -> Option<RefOr<Schema>> {
        match body {
            Body::None => None,
            Body::One(n) => Some(Ref::from_schema_name(n.as_ref()).into()),
            Body::List(n) => Some(
                ArrayBuilder::new()
                    .items(Ref::from_schema_name(n.as_ref()))
                    .build()
                    .into(),
            ),
            Body::OneOf(names) => {
                let mut one_of = OneOfBuilder::new();
                for n in names {
                    one_of = one_of.item(Ref::from_schema_name(n.as_ref()));
                }
                Some(RefOr::T(Schema::OneOf(one_of.build())))
            }
        }
    }

    /// Registers each of `bodies`' types and describes them as one of them.
    fn one_of(bodies: &[Body]) -> Body {
        Body::OneOf(
            bodies
                .iter()
                .filter_map(|b| match b {
                    Body::One(n) => Some(n.clone()),
                    _ => None,
                })
                .collect(),
        )
    }

    /// One operation: `path` as the route table writes it, with its request and answer.
    #[allow(clippy::too_many_arguments)]
    fn op(
        &mut self,
        method: HttpMethod,
        path: &str,
        id: &str,
        summary: &str,
        request: Body,
        status: &str,
        answer: Body,
    ) {
        let mut op = OperationBuilder::new()
            .operation_id(Some(id))
            .summary(Some(summary))
            .tag(path.trim_start_matches('/').split('/').next().unwrap_or(""));
        if path.contains("{id}") {
            op = op.parameter(
                ParameterBuilder::new()
                    .name("id")
                    .parameter_in(ParameterIn::Path)
                    .required(Required::True)
                    .description(Some("the record's id"))
                    .schema(Some(ObjectBuilder::new().schema_type(Type::Integer))),
            );
        }
        if let Some(schema) = Self::schema(&request) {
            op = op.request_body(Some(
                RequestBodyBuilder::new()
                    .required(Some(Required::True))
                    .content(
                        "application/json",
                        ContentBuilder::new().schema(Some(schema)).build(),
                    )
                    .build(),
            ));
        }
        let mut ok = ResponseBuilder::new().description(match status {
            "201" => "created",
            _ => "done",
        });
        if let Some(schema) = Self::schema(&answer) {
            ok = ok.content(
                "application/json",
                ContentBuilder::new().schema(Some(schema)).build(),
            );
        }
        let error = |words: &str| {
            ResponseBuilder::new().description(words).content(
                "application/json",
                ContentBuilder::new()
                    .schema(Some(Ref::from_schema_name("ErrorBody")))
                    .build(),
            )
        };
        op = op
            .response(status, ok)
            .response("401", error("no valid bearer token"))
            .response(
                "422",
                error("input breaks a rule; `field` names it by its JSON path"),
            );
        if path.contains("{id}") {
            op = op.response("404", error("no such record"));
        }
        let paths = std::mem::take(&mut self.paths);
        self.paths = paths.path(path, PathItem::new(method, op));
    }
}

/// Every described operation as (method, path under `/api/v1`), for the test against the route
/// table.
pub fn described() -> Vec<(String, String)> {
    let doc = document_json();
    let mut out = Vec::new();
    if let Some(paths) = doc["paths"].as_object() {
        for (path, item) in paths {
            for method in ["get", "put", "post", "delete", "patch"] {
                if item.get(method).is_some() {
                    out.push((method.to_uppercase(), path.clone()));
                }
            }
        }
    }
    out
}

/// The whole document as JSON.
pub fn document_json() -> JsonValue {
    use HttpMethod::{Get, Post, Put};
    let mut d = Doc {
        paths: PathsBuilder::new(),
        schemas: Vec::new(),
    };
    d.one::<ErrorBody>();
    // Records: list, read, create, update. Bodies in storage units (named in each field).
    let customer = d.one::<CustomerInput>();
    let stored_customer = d.one::<crate::db::customers::Customer>();
    let customer_list = d.one::<super::records::CustomerList>();
    d.op(
        Get,
        "/customers",
        "listCustomers",
        "Customers, searched with `q`, paged with `page`",
        Body::None,
        "200",
        customer_list,
    );
    d.op(
        Post,
        "/customers",
        "createCustomer",
        "Add a customer",
        customer.clone(),
        "201",
        stored_customer.clone(),
    );
    d.op(
        Get,
        "/customers/{id}",
        "getCustomer",
        "One customer",
        Body::None,
        "200",
        stored_customer.clone(),
    );
    d.op(
        Put,
        "/customers/{id}",
        "updateCustomer",
        "Change a customer",
        customer,
        "200",
        stored_customer,
    );
    macro_rules! record {
        ($input:ty, $stored:ty, $owner:literal, $list:literal, $own:literal, $what:literal, $name:literal) => {{
            let input = d.one::<$input>();
            let one = d.one::<$stored>();
            let list = d.list::<$stored>();
            d.op(
                Get,
                concat!($owner, "/{id}/", $list),
                concat!("list", $name, "Of", $own),
                concat!("The ", $what, "s of one ", $own),
                Body::None,
                "200",
                list.clone(),
            );
            d.op(
                Post,
                concat!($owner, "/{id}/", $list),
                concat!("create", $name),
                concat!("Add a ", $what),
                input.clone(),
                "201",
                one.clone(),
            );
            (input, one, list)
        }};
    }
    let (car_in, car, cars) = record!(
        CarInput,
        stored::Car,
        "/customers",
        "cars",
        "Customer",
        "car",
        "Car"
    );
    d.op(
        Get,
        "/cars",
        "listCars",
        "Every car, paged with `page`",
        Body::None,
        "200",
        cars,
    );
    d.op(
        Get,
        "/cars/{id}",
        "getCar",
        "One car",
        Body::None,
        "200",
        car.clone(),
    );
    d.op(
        Put,
        "/cars/{id}",
        "updateCar",
        "Change a car",
        car_in,
        "200",
        car,
    );
    let (build_in, build, builds) = record!(
        BuildInput,
        stored::Build,
        "/cars",
        "builds",
        "Car",
        "build",
        "Build"
    );
    d.op(
        Get,
        "/builds",
        "listBuilds",
        "Every build, paged with `page`",
        Body::None,
        "200",
        builds,
    );
    d.op(
        Get,
        "/builds/{id}",
        "getBuild",
        "One build",
        Body::None,
        "200",
        build.clone(),
    );
    d.op(
        Put,
        "/builds/{id}",
        "updateBuild",
        "Change a build",
        build_in,
        "200",
        build,
    );
    let (setup_in, setup, _) = record!(
        SetupInput,
        stored::Setup,
        "/builds",
        "setups",
        "Build",
        "setup change",
        "Setup"
    );
    d.op(
        Get,
        "/setups/{id}",
        "getSetup",
        "One setup change",
        Body::None,
        "200",
        setup.clone(),
    );
    d.op(
        Put,
        "/setups/{id}",
        "updateSetup",
        "Correct a setup change",
        setup_in,
        "200",
        setup,
    );
    let (bench_in, bench, _) = record!(
        crate::records::bench::BenchInput,
        stored::BenchTest,
        "/builds",
        "bench-tests",
        "Build",
        "bench test",
        "BenchTest"
    );
    d.op(
        Get,
        "/bench-tests/{id}",
        "getBenchTest",
        "One bench test with its springs",
        Body::None,
        "200",
        bench.clone(),
    );
    d.op(
        Put,
        "/bench-tests/{id}",
        "updateBenchTest",
        "Correct a bench test",
        bench_in,
        "200",
        bench,
    );
    let (height_in, height, _) = record!(
        HeightInput,
        stored::Height,
        "/builds",
        "measurements",
        "Build",
        "cover height measurement",
        "Measurement"
    );
    d.op(
        Get,
        "/measurements/{id}",
        "getMeasurement",
        "One cover height measurement",
        Body::None,
        "200",
        height.clone(),
    );
    d.op(
        Put,
        "/measurements/{id}",
        "updateMeasurement",
        "Correct a cover height measurement",
        height_in,
        "200",
        height,
    );
    let (pass_in, pass, _) = record!(
        PassInput,
        stored::Pass,
        "/builds",
        "passes",
        "Build",
        "track pass",
        "Pass"
    );
    d.op(
        Get,
        "/passes/{id}",
        "getPass",
        "One track pass",
        Body::None,
        "200",
        pass.clone(),
    );
    d.op(
        Put,
        "/passes/{id}",
        "updatePass",
        "Correct a track pass",
        pass_in,
        "200",
        pass,
    );
    // Figures of stored builds and the calculations (units as the request's `units` says).
    let wear = d.one::<WearReport>();
    let calibration = d.one::<CalibrationReport>();
    let build_wear = d.one::<super::calc::BuildWear>();
    d.op(
        Get,
        "/builds/{id}/wear",
        "buildWear",
        "The disc wear of a stored build (metric), with the forecast by slip energy",
        Body::None,
        "200",
        build_wear,
    );
    let capacity = d.one::<super::calc::BuildCapacity>();
    d.op(
        Get,
        "/builds/{id}/capacity",
        "buildCapacity",
        "The capacity of a stored build's setting in force, with the friction in force (metric)",
        Body::None,
        "200",
        capacity,
    );
    let status = d.one::<super::calc::StatusAnswer>();
    d.op(
        Get,
        "/builds/{id}/status",
        "buildStatus",
        "A stored build's work-due status, in the words every page uses",
        Body::None,
        "200",
        status,
    );
    let build_calibration = d.one::<super::calc::BuildCalibrationAnswer>();
    d.op(
        Get,
        "/builds/{id}/calibration",
        "buildCalibration",
        "The friction coefficient fitted to a stored build's passes, and against the facing's \
         temperature at launch (mu_vs_temperature)",
        Body::None,
        "200",
        build_calibration,
    );
    let (req, rep) = (d.one::<CapacityRequest>(), d.one::<CapacityReport>());
    d.op(
        Post,
        "/calc/capacity",
        "capacity",
        "Clamp and torque capacity of a setting, and its lockup",
        req,
        "200",
        rep,
    );
    let (req, rep) = (d.one::<RecommendRequest>(), d.one::<Recommendation>());
    d.op(
        Post,
        "/calc/recommend",
        "recommend",
        "The adjuster turns and counterweight for target figures",
        req,
        "200",
        rep,
    );
    let req = Doc::one_of(&[
        d.one::<clutch::calibration::CalibrateRequest>(),
        d.one::<clutch::calibration::launch::LaunchCalibrateRequest>(),
    ]);
    let calibration = Doc::one_of(&[
        calibration,
        d.one::<clutch::calibration::launch::LaunchCalibration>(),
    ]);
    d.op(
        Post,
        "/calc/calibrate",
        "calibrate",
        "Fit the friction coefficient to passes with a seen lockup (torque balance; with \
         \"method\": \"launch\" the body of /calc/launch without friction.mu, plus passes)",
        req,
        "200",
        calibration,
    );
    let req = d.one::<WearRequest>();
    d.op(
        Post,
        "/calc/wear",
        "wear",
        "Disc wear from cover heights and the shim stack",
        req,
        "200",
        wear,
    );
    let (req, rep) = (d.one::<LogAnalysisRequest>(), d.one::<LogAnalysisReport>());
    d.op(
        Post,
        "/calc/log-analysis",
        "logAnalysis",
        "Analyse a data log (CSV text) of a pass",
        req,
        "200",
        rep.clone(),
    );
    let body = d.one::<super::datalogs::PassLogBody>();
    d.op(
        Post,
        "/passes/{id}/log",
        "storePassLog",
        "Keep a data log with a pass and analyse it with the car's data",
        body,
        "200",
        rep.clone(),
    );
    d.op(
        Get,
        "/passes/{id}/analysis",
        "passAnalysis",
        "The analysis of a pass's stored data log",
        Body::None,
        "200",
        rep,
    );
    let (req, rep) = (d.one::<LaunchRequest>(), d.one::<LaunchReport>());
    d.op(
        Post,
        "/calc/launch",
        "launch",
        "Simulate a launch: slip, lockup, heat",
        req,
        "200",
        rep,
    );
    let (req, rep) = (
        d.one::<super::import::ImportRequest>(),
        d.one::<super::import::ImportAnswer>(),
    );
    d.op(Post, "/import/spreadsheet", "importSpreadsheet", "Import a spreadsheet (CSV) of customers, cars and builds (admin); a dry run unless `dry_run` is false. A commit with problems left answers 422 with the same answer", req, "200", rep);
    d.one::<Units>();

    let mut components = ComponentsBuilder::new().security_scheme(
        BEARER,
        SecurityScheme::Http(
            HttpBuilder::new()
                .scheme(HttpAuthScheme::Bearer)
                .description(Some("a token from `lockpoint token create NAME`"))
                .build(),
        ),
    );
    for (name, schema) in std::mem::take(&mut d.schemas) {
        components = components.schema(name, schema);
    }
    let doc = OpenApiBuilder::new()
        .info(
            InfoBuilder::new()
                .title("Lockpoint API")
                .version(env!("CARGO_PKG_VERSION"))
                .description(Some(
                    "Every path is under /api/v1 and needs `Authorization: Bearer <token>`. \
                     Record values are in storage units (mm, N, N/mm, N·m, kg, g), named in each \
                     field; calculations use the request's `units` (imperial: in, lbf, lbf/in, \
                     lbf·ft; metric: mm, N, N/mm, N·m; grams in both). Errors are \
                     `{\"error\", \"field\"}`.",
                ))
                .build(),
        )
        .servers(Some([utoipa::openapi::server::Server::new("/api/v1")]))
        .paths(d.paths.build())
        .components(Some(components.build()))
        .security(Some([SecurityRequirement::new(
            BEARER,
            Vec::<String>::new(),
        )]))
        .build();
    let mut json = serde_json::to_value(&doc).unwrap_or_default();
    describe_records(&mut json);
    drop_null_defaults(&mut json);
    json
}

/// Leaves out `"default": null`: an absent value (or a number not yet typed, NaN) says nothing,
/// and a null default of a number is not valid JSON Schema.
fn drop_null_defaults(v: &mut JsonValue) {
    match v {
        JsonValue::Object(map) => {
            if map.get("default").is_some_and(JsonValue::is_null) {
                map.remove("default");
            }
            map.values_mut().for_each(drop_null_defaults);
        }
        JsonValue::Array(items) => items.iter_mut().for_each(drop_null_defaults),
        _ => {}
    }
}

/// Each record field's description from its declaration: its label and its storage unit.
fn describe_records(doc: &mut JsonValue) {
    fn fill<R: Record>(doc: &mut JsonValue) {
        let name = std::any::type_name::<R>().rsplit("::").next().unwrap_or("");
        let Some(props) = doc["components"]["schemas"][name]["properties"].as_object_mut() else {
            return;
        };
        for f in R::FIELDS {
            let unit = match &f.value {
                Value::Number { limit, .. } | Value::List { limit, .. } => {
                    limit.kind.symbol(Units::Metric)
                }
                Value::Curve { .. } => "[rpm, N·m] pairs",
                Value::Date { .. } => "YYYY-MM-DD",
                _ => "",
            };
            if let Some(p) = props.get_mut(f.column).and_then(JsonValue::as_object_mut) {
                let words = if unit.is_empty() {
                    f.label.to_string()
                } else {
                    format!("{}, {unit}", f.label)
                };
                p.insert("description".into(), JsonValue::String(words));
            }
        }
    }
    fill::<CustomerInput>(doc);
    fill::<CarInput>(doc);
    fill::<BuildInput>(doc);
    fill::<SetupInput>(doc);
    fill::<HeightInput>(doc);
    fill::<PassInput>(doc);
    fill::<crate::records::bench::SpringReading>(doc);
}

/// GET /api/v1/openapi.json (with a token, like the rest of the API).
pub async fn document(_: ApiUser) -> Result<Json<JsonValue>, ApiError> {
    Ok(Json(document_json()))
}
