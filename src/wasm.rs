//! The WebAssembly binding: converts and calls, holds no statistics.
//!
//! Every export takes bytes or text and a JSON request, and returns JSON
//! text: `{"ok": ...}` or `{"error": "plain words", "kind": K}` with K one
//! of `request` (the request itself is malformed), `read` (the file), `terms`
//! (the response or terms text) and `model` (the data cannot give this
//! model). No error and no panic crosses into JavaScript as an exception.

use crate::model::{fit, FitOptions};
use crate::profile::{profile_table, profile_table_progress, Kind, ProfileOptions};
use crate::read::{read_paste_progress, read_table_progress, Loaded, Progress, ReadOptions};
use crate::schema::LoadSummary;
use crate::terms::{parse_term, parse_terms, ModelSpec};
use serde::{Deserialize, Serialize};
use std::cell::RefCell;
use wasm_bindgen::prelude::*;

thread_local! {
    static LAST_PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

/// Installs a panic hook that keeps the message for [`last_panic`].
#[wasm_bindgen(start)]
pub fn start() {
    std::panic::set_hook(Box::new(|info| {
        let msg = format!("plumbline stopped on an internal error, which is a bug: {info}");
        LAST_PANIC.with(|p| *p.borrow_mut() = Some(msg));
    }));
}

/// The message of the last panic, if one happened (the worker reports it).
#[wasm_bindgen]
pub fn last_panic() -> Option<String> {
    LAST_PANIC.with(|p| p.borrow().clone())
}

/// How to read the bytes, as the page sends it.
#[derive(Deserialize, Default)]
#[serde(default)]
pub(crate) struct ReadRequest {
    pub(crate) sheet: Option<String>,
    pub(crate) header_row: Option<usize>,
    /// The bytes are cells pasted from a spreadsheet.
    pub(crate) paste: bool,
    /// Source row numbers the user has left out of the model.
    exclude_rows: Vec<usize>,
    /// `point` or `comma`, when the page knows the decimal mark (the
    /// one-case form of Predict writes numbers with a point).
    decimal: Option<String>,
}

impl ReadRequest {
    pub(crate) fn options(&self) -> ReadOptions {
        let decimal = match self.decimal.as_deref() {
            Some("point") => Some(crate::read::cells::Decimal::Point),
            Some("comma") => Some(crate::read::cells::Decimal::Comma),
            _ => None,
        };
        ReadOptions { sheet: self.sheet.clone(), header_row: self.header_row, decimal, ..ReadOptions::default() }
    }

    pub(crate) fn load(&self, bytes: &[u8]) -> Result<Loaded, String> {
        self.load_progress(bytes, &mut |_| true)
    }

    /// As [`ReadRequest::load`], telling `progress` the share read so far;
    /// when it answers false the reading stops (`ReadError::Stopped`).
    pub(crate) fn load_progress(&self, bytes: &[u8], progress: Progress) -> Result<Loaded, String> {
        let options = self.options();
        let loaded = if self.paste {
            read_paste_progress(&String::from_utf8_lossy(bytes), &options, progress)
        } else {
            read_table_progress(bytes, &options, progress)
        };
        loaded.map_err(|e| e.to_string())
    }
}

/// A fit request.
#[derive(Deserialize)]
struct FitRequest {
    response: String,
    #[serde(default)]
    terms: String,
    #[serde(default = "yes")]
    intercept: bool,
    #[serde(default = "default_level")]
    level: f64,
    #[serde(default)]
    weights: Option<String>,
    #[serde(default)]
    hc3: bool,
    #[serde(flatten)]
    read: ReadRequest,
}

/// An inspect request: how to read, and the kinds the user has set.
#[derive(Deserialize, Default)]
#[serde(default)]
struct InspectRequest {
    #[serde(flatten)]
    read: ReadRequest,
    /// Column name → kind (`numeric`, `coded_category`, ...).
    kinds: std::collections::BTreeMap<String, String>,
    /// Rows of the preview (default 50).
    preview_rows: Option<usize>,
}

fn yes() -> bool {
    true
}

fn default_level() -> f64 {
    0.95
}

#[derive(Serialize)]
struct Ok<'a, T: Serialize> {
    ok: &'a T,
}

#[derive(Serialize)]
struct Error<'a> {
    error: &'a str,
    kind: &'a str,
}

pub(crate) fn ok<T: Serialize>(v: &T) -> String {
    serde_json::to_string(&Ok { ok: v }).unwrap_or_else(|e| error("model", &format!("The result could not be encoded: {e}")))
}

pub(crate) fn error(kind: &str, message: &str) -> String {
    serde_json::to_string(&Error { error: message, kind })
        .unwrap_or_else(|_| r#"{"error":"An error could not be encoded.","kind":"request"}"#.to_string())
}

/// The first rows of the table as text, for the page's preview.
#[derive(Serialize)]
struct Preview {
    header: Vec<String>,
    source_rows: Vec<usize>,
    rows: Vec<Vec<Option<String>>>,
}

#[derive(Serialize)]
struct Inspection {
    load: LoadSummary,
    columns: Vec<crate::profile::ColumnProfile>,
    preview: Preview,
    /// Column → its codes, for each coded category with at most
    /// [`MAX_CODES_TO_NAME`] of them: the values the user may give names to
    /// on the page, written as the design labels a category's levels.
    codes: std::collections::BTreeMap<String, Vec<String>>,
}

/// The most codes a coded category may have for the page to offer naming them.
const MAX_CODES_TO_NAME: usize = 60;

/// The distinct values of a column, written and ordered as the design
/// writes and orders a category's levels (`terms::design`: numbers as
/// numbers, including text cells that all read as numbers; text as text),
/// or None when there are more than [`MAX_CODES_TO_NAME`].
fn category_codes(data: &crate::table::ColumnData) -> Option<Vec<String>> {
    use crate::table::{parse_number, ColumnData};
    let numbers = |mut v: Vec<f64>| {
        v.sort_by(|a, b| a.total_cmp(b));
        v.dedup();
        v
    };
    let labels: Vec<String> = match data {
        ColumnData::Numeric(v) => numbers(v.iter().copied().filter(|x| !x.is_nan()).collect()).iter().map(|x| format!("{x}")).collect(),
        ColumnData::Date(v) => numbers(v.iter().copied().filter(|x| !x.is_nan()).collect())
            .iter()
            .map(|&x| crate::read::cells::format_date(x))
            .collect(),
        ColumnData::Text(cells) => {
            let texts: Vec<&str> = cells.iter().flatten().map(String::as_str).collect();
            if texts.iter().all(|s| parse_number(s).is_some()) {
                numbers(texts.iter().filter_map(|s| parse_number(s)).collect()).iter().map(|x| format!("{x}")).collect()
            } else {
                let mut t: Vec<&str> = texts;
                t.sort_unstable();
                t.dedup();
                t.into_iter().map(String::from).collect()
            }
        }
    };
    (labels.len() <= MAX_CODES_TO_NAME).then_some(labels)
}

fn cell_text(data: &crate::table::ColumnData, i: usize) -> Option<String> {
    use crate::table::ColumnData;
    match data {
        ColumnData::Numeric(v) => (!v[i].is_nan()).then(|| format!("{}", v[i])),
        ColumnData::Date(v) => (!v[i].is_nan()).then(|| crate::read::cells::format_date(v[i])),
        ColumnData::Text(v) => v[i].clone(),
    }
}

/// Reads the bytes and returns how they were read, the column profile, the
/// first rows and the codes of the coded categories; `request` is the JSON
/// of an inspect request.
#[wasm_bindgen]
pub fn inspect(bytes: &[u8], request: &str) -> String {
    inspect_with(bytes, request, &mut |_, _| true)
}

/// As [`inspect`], calling `progress(share, phase)` now and then with the
/// share of the whole inspection done (0 to 1) and what it is doing:
/// `"read"` while the file is read (the first [`READ_PART`] of the share;
/// both passes over delimited text, the rows of an .xlsx sheet, other
/// workbooks only before and after their sheet), then `"columns"` while the columns are profiled, one step per
/// column. When `progress` returns `false` the inspection stops and the
/// answer is the error of kind `read` that says so. The page's worker uses
/// it to move a progress bar; the page cancels a load by ending the
/// worker, since a running call cannot hear a message.
#[wasm_bindgen]
pub fn inspect_progress(bytes: &[u8], request: &str, progress: &js_sys::Function) -> String {
    let mut report = |share: f64, phase: &str| {
        // Anything but an explicit `false` (undefined, a throw) goes on.
        progress
            .call2(&JsValue::NULL, &JsValue::from_f64(share), &JsValue::from_str(phase))
            .map(|v| v.as_bool() != Some(false))
            .unwrap_or(true)
    };
    inspect_with(bytes, request, &mut report)
}

/// The share of an inspection's progress given to reading the file; the
/// rest is the column profile (about a third of the time for a large CSV,
/// measured on the 100 MB file of BENCHMARKS.md).
pub const READ_PART: f64 = 0.7;

fn inspect_with(bytes: &[u8], request: &str, progress: &mut dyn FnMut(f64, &str) -> bool) -> String {
    let req: InspectRequest = match serde_json::from_str(if request.trim().is_empty() { "{}" } else { request }) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The request is not valid: {e}")),
    };
    let loaded = match req.read.load_progress(bytes, &mut |share| progress(share * READ_PART, "read")) {
        Ok(l) => l,
        Err(e) => return error("read", &format!("Could not read the file: {e}")),
    };
    let mut kinds = Vec::new();
    for (col, k) in &req.kinds {
        match Kind::parse(k) {
            Some(kind) => kinds.push((col.clone(), kind)),
            None => return error("request", &format!("\"{k}\" is not a kind of column.")),
        }
    }
    let profile = match profile_table_progress(&loaded.table, &ProfileOptions { kinds }, &mut |share| {
        progress(READ_PART + (1.0 - READ_PART) * share, "columns")
    }) {
        Some(p) => p,
        None => return error("read", "Looking at the columns was stopped before it finished; the data loaded before are unchanged."),
    };
    let t = &loaded.table;
    let n = t.n_rows().min(req.preview_rows.unwrap_or(50));
    let preview = Preview {
        header: t.columns.iter().map(|c| c.name.clone()).collect(),
        source_rows: t.source_rows[..n].to_vec(),
        rows: (0..n).map(|i| t.columns.iter().map(|c| cell_text(&c.data, i)).collect()).collect(),
    };
    let codes = profile
        .columns
        .iter()
        .zip(&t.columns)
        .filter(|(p, _)| p.kind == Kind::CodedCategory)
        .filter_map(|(p, c)| category_codes(&c.data).map(|codes| (p.name.clone(), codes)))
        .collect();
    ok(&Inspection { load: LoadSummary::of(&loaded), columns: profile.columns, preview, codes })
}

/// A fitted model with its table and specification, or the error JSON.
pub(crate) struct FittedRequest {
    pub(crate) table: crate::table::Table,
    pub(crate) spec: ModelSpec,
    pub(crate) fitted: crate::model::Fitted,
}

/// Reads the bytes, parses the request's model and fits it; `what` names
/// the request in the message when it is malformed.
pub(crate) fn fit_request(bytes: &[u8], request: &str, what: &str) -> Result<FittedRequest, String> {
    let req: FitRequest = serde_json::from_str(request).map_err(|e| error("request", &format!("The {what} request is not valid: {e}")))?;
    let table = req.read.load(bytes).map_err(|e| error("read", &format!("Could not read the file: {e}")))?.table;
    let response = parse_term(&req.response).map_err(|e| error("terms", &format!("In the response: {e}")))?;
    let terms = parse_terms(&req.terms).map_err(|e| error("terms", &format!("In the terms: {e}")))?;
    let spec = ModelSpec { response, terms, intercept: req.intercept, weights: req.weights, exclude: req.read.exclude_rows.clone() };
    let options = FitOptions { level: req.level, hc3: req.hc3, ..FitOptions::default() };
    let fitted = fit(&table, &spec, &options).map_err(|e| error("model", &e.to_string()))?;
    Ok(FittedRequest { table, spec, fitted })
}

/// Fits a model; `request` is the JSON of a fit request (with the reading
/// options `sheet`, `header_row`, `paste` and `exclude_rows`).
#[wasm_bindgen]
pub fn fit_bytes(bytes: &[u8], request: &str) -> String {
    match fit_request(bytes, request, "fit") {
        Ok(f) => ok(&f.fitted.report),
        Err(e) => e,
    }
}

/// The same as [`fit_bytes`], under the name the first page used.
#[wasm_bindgen]
pub fn fit_csv(bytes: &[u8], request: &str) -> String {
    fit_bytes(bytes, request)
}

/// The checks of a model and the data of its figures.
#[derive(Serialize)]
struct Checked<'a> {
    check: &'a crate::diagnostics::CheckReport,
    figures: Vec<crate::plot::data::Figure>,
}

/// Fits a model and runs every check on it; `request` is as for
/// [`fit_bytes`]. Returns `{ok: {check, figures}}`.
#[wasm_bindgen]
pub fn check_bytes(bytes: &[u8], request: &str) -> String {
    let FittedRequest { table, spec, fitted } = match fit_request(bytes, request, "check") {
        Ok(f) => f,
        Err(e) => return e,
    };
    let check = crate::diagnostics::check(&fitted, &spec, table.sheet.as_deref());
    let figures = crate::plot::data::all_plots(&check, &fitted, &table);
    ok(&Checked { check: &check, figures })
}

/// Draws a figure (the JSON of one element of `figures`) on the canvas
/// with the given element id, on the page's main thread. Returns an empty
/// string, or the problem in plain words.
#[wasm_bindgen]
pub fn draw_figure(canvas_id: &str, figure: &str) -> String {
    let fig: crate::plot::data::Figure = match serde_json::from_str(figure) {
        Ok(f) => f,
        Err(e) => return format!("The figure is not valid: {e}"),
    };
    let Some(backend) = plotters_canvas::CanvasBackend::new(canvas_id) else {
        return format!("There is no canvas called \"{canvas_id}\" on the page.");
    };
    use plotters::prelude::IntoDrawingArea;
    let root = backend.into_drawing_area();
    match crate::plot::draw::draw_figure(&root, &fig) {
        Ok(()) => String::new(),
        Err(e) => format!("The figure could not be drawn: {e}"),
    }
}

/// A selection request, as the page sends it.
#[derive(Deserialize)]
struct SelectRequestJson {
    response: String,
    #[serde(default)]
    candidates: Option<String>,
    #[serde(default)]
    force: String,
    #[serde(default = "yes")]
    intercept: bool,
    #[serde(default)]
    weights: Option<String>,
    /// adj-r2, aic, bic, cp, cv or p-value.
    #[serde(default)]
    by: Option<String>,
    /// exhaustive, forward, backward or both.
    #[serde(default)]
    search: Option<String>,
    #[serde(default)]
    stability: Option<usize>,
    #[serde(default)]
    seed: Option<u64>,
    #[serde(default)]
    folds: Option<usize>,
    #[serde(flatten)]
    read: ReadRequest,
}

/// Runs a selection; `progress` is called with the share of subsets
/// covered by the exhaustive search (the page stops a search by ending
/// the worker). Without `candidates` the profile's suggestions are used.
#[wasm_bindgen]
pub fn select_bytes(bytes: &[u8], request: &str, progress: &js_sys::Function) -> String {
    use crate::select::stepwise::Direction;
    use crate::select::{select, Criterion, Search, SelectOptions, SelectRequest};
    let req: SelectRequestJson = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The selection request is not valid: {e}")),
    };
    let table = match req.read.load(bytes) {
        Ok(l) => l.table,
        Err(e) => return error("read", &format!("Could not read the file: {e}")),
    };
    let response = match parse_term(&req.response) {
        Ok(t) => t,
        Err(e) => return error("terms", &format!("In the response: {e}")),
    };
    let candidates = match &req.candidates {
        Some(c) => match parse_terms(c) {
            Ok(t) => t,
            Err(e) => return error("terms", &format!("In the candidates: {e}")),
        },
        None => {
            let profile = profile_table(&table, &ProfileOptions::default());
            let texts = crate::profile::default_terms(&profile, &response.columns());
            parse_terms(&texts.join(", ")).unwrap_or_default()
        }
    };
    let forced = match parse_terms(&req.force) {
        Ok(t) => t,
        Err(e) => return error("terms", &format!("In the terms always in: {e}")),
    };
    let mut o = SelectOptions::default();
    if let Some(b) = &req.by {
        match Criterion::parse(b) {
            Some(c) => o.by = c,
            None => return error("request", &format!("\"{b}\" is not a way to choose; use adj-r2, aic, bic, cp, cv or p-value.")),
        }
    }
    o.search = match req.search.as_deref() {
        None | Some("exhaustive") => Search::Exhaustive,
        Some("forward") => Search::Stepwise(Direction::Forward),
        Some("backward") => Search::Stepwise(Direction::Backward),
        Some("both") => Search::Stepwise(Direction::Both),
        Some(other) => return error("request", &format!("\"{other}\" is not a search; use exhaustive, forward, backward or both.")),
    };
    o.stability = req.stability;
    if let Some(s) = req.seed {
        o.seed = s;
    }
    if let Some(k) = req.folds {
        o.folds = k.max(2);
    }
    let sreq = SelectRequest { response, candidates, forced, intercept: req.intercept, weights: req.weights, exclude: req.read.exclude_rows.clone() };
    let mut report = |share: f64| {
        let _ = progress.call1(&JsValue::NULL, &JsValue::from_f64(share));
        true
    };
    match select(&table, &sreq, &o, Some(&mut report)) {
        Ok(r) => ok(&r),
        Err(e) => error("model", &e.to_string()),
    }
}

/// The part of a predict request that says how to read the new cases.
#[derive(Deserialize, Default)]
#[serde(default)]
struct NewCasesRequest {
    new: ReadRequest,
}

/// Predicts new cases from the model of the request: `bytes` are the data
/// the model is fitted to, `new_bytes` the new cases (a file, a paste, or
/// the one row the page's form writes), and `request` a fit request with
/// `"new": {"paste", "sheet", "header_row", "decimal"}` for reading them.
/// Returns `{ok: PredictReport}` with `original_scale`, the column the
/// response transforms (when it does); a row that cannot be predicted carries its
/// reason in `problem`, and only a new table that cannot be used at all
/// (unreadable, or without a column the model needs) is an error.
#[wasm_bindgen]
pub fn predict_bytes(bytes: &[u8], new_bytes: &[u8], request: &str) -> String {
    let FittedRequest { table, spec, fitted } = match fit_request(bytes, request, "predict") {
        Ok(f) => f,
        Err(e) => return e,
    };
    let new_req: NewCasesRequest = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The predict request is not valid: {e}")),
    };
    let new_table = match new_req.new.load(new_bytes) {
        Ok(l) => l.table,
        Err(e) => return error("read", &format!("Could not read the new cases: {e}")),
    };
    match crate::predict::predict(&fitted, &spec, &table, &new_table, fitted.report.level) {
        Ok(report) => {
            let original_scale =
                report.back_transform.as_ref().and_then(|_| spec.response.columns().first().map(|c| c.to_string()));
            ok(&Predicted { report: &report, original_scale })
        }
        Err(e) => error("model", &format!("In the new cases: {e}")),
    }
}

/// A prediction report with the name of the response's own column when
/// the response is transformed (the scale of the `original` values).
#[derive(Serialize)]
struct Predicted<'a> {
    #[serde(flatten)]
    report: &'a crate::predict::PredictReport,
    original_scale: Option<String>,
}

/// One column the model reads, as the page's one-case form asks for it.
#[derive(Serialize)]
struct ModelInput {
    column: String,
    /// `number`, `date` or `category`.
    kind: &'static str,
    /// The levels the model was fitted with (a category), in sorted order.
    levels: Vec<String>,
    /// The level the others are compared with (a category).
    reference: Option<String>,
}

/// What the one-case form of Predict needs to know about a model.
#[derive(Serialize)]
struct ModelInputs {
    response: String,
    /// How the original scale is reached, when the response is transformed.
    transformed: bool,
    inputs: Vec<ModelInput>,
}

/// The columns a term reads as numbers (not inside `cat`), and as categories.
fn input_columns<'a>(t: &'a crate::terms::Term, numbers: &mut Vec<&'a str>, categories: &mut Vec<&'a str>) {
    use crate::terms::Term;
    match t {
        Term::Column(c) => {
            if !numbers.contains(&c.as_str()) {
                numbers.push(c)
            }
        }
        Term::Cat { column, .. } => {
            if !categories.contains(&column.as_str()) {
                categories.push(column)
            }
        }
        Term::Log(x) | Term::Sqrt(x) | Term::Power(x, _) | Term::BoxCox(x, _) | Term::YeoJohnson(x, _) => {
            input_columns(x, numbers, categories)
        }
        Term::Product(a, b) => {
            input_columns(a, numbers, categories);
            input_columns(b, numbers, categories);
        }
    }
}

/// The columns the model of a fit request reads, in the order of its
/// terms, each with what a new case must give: a number, a date, or one of
/// the levels the model was fitted with. Returns `{ok: ModelInputs}`.
#[wasm_bindgen]
pub fn model_inputs(bytes: &[u8], request: &str) -> String {
    use crate::table::ColumnData;
    let FittedRequest { table, spec, fitted } = match fit_request(bytes, request, "model inputs") {
        Ok(f) => f,
        Err(e) => return e,
    };
    let (mut numbers, mut categories) = (Vec::new(), Vec::new());
    for t in &spec.terms {
        input_columns(t, &mut numbers, &mut categories);
    }
    let mut order: Vec<&str> = Vec::new();
    for t in &spec.terms {
        for c in t.columns() {
            if !order.contains(&c) {
                order.push(c);
            }
        }
    }
    let inputs = order
        .into_iter()
        .map(|c| {
            // A column read as a number anywhere needs a number, even if a
            // category of it is in the model too.
            if numbers.contains(&c) || !categories.contains(&c) {
                let date = table.column(c).is_some_and(|col| matches!(col.data, ColumnData::Date(_)));
                return ModelInput { column: c.to_string(), kind: if date { "date" } else { "number" }, levels: Vec::new(), reference: None };
            }
            let coded = fitted.design.levels.iter().find(|l| l.column == c);
            ModelInput {
                column: c.to_string(),
                kind: "category",
                levels: coded.map(|l| l.levels.clone()).unwrap_or_default(),
                reference: coded.and_then(|l| l.levels.get(l.ref_index).cloned()),
            }
        })
        .collect();
    let transformed = !matches!(spec.response, crate::terms::Term::Column(_));
    ok(&ModelInputs { response: fitted.report.response.clone(), transformed, inputs })
}

/// Panics on purpose, so that the browser tests can check that a real
/// panic inside Rust reaches the page as a message (through the hook of
/// [`start`] and [`last_panic`]) and that the worker is started again.
/// The page itself never calls it.
#[wasm_bindgen]
pub fn panic_for_test() -> String {
    panic!("a panic on purpose, from the test hook panic_for_test")
}

/// The codings and transforms of the model of a fit request, in plain
/// words (`crate::export::term_choices`), for the report the page asks
/// for. Returns `{ok: ["…", …]}`.
#[wasm_bindgen]
pub fn model_choices(request: &str) -> String {
    let req: FitRequest = match serde_json::from_str(request) {
        Ok(r) => r,
        Err(e) => return error("request", &format!("The request is not valid: {e}")),
    };
    let response = match parse_term(&req.response) {
        Ok(t) => t,
        Err(e) => return error("terms", &format!("In the response: {e}")),
    };
    let terms = match parse_terms(&req.terms) {
        Ok(t) => t,
        Err(e) => return error("terms", &format!("In the terms: {e}")),
    };
    let spec = ModelSpec { response, terms, intercept: req.intercept, weights: req.weights, exclude: req.read.exclude_rows };
    ok(&crate::export::term_choices(&spec))
}

/// The model of a fit result in plain algebra
/// (`crate::export::report::equation`, the report's own), for the page's
/// Result. `fit_json` is the `ok` payload of a fit, or the part of it the
/// equation reads (`response`, and each coefficient's `term`, `estimate`
/// and `aliased`); the page sends the coefficients' labels with the names
/// the user gave their codes. Returns `{ok: "log(y) = 1.2 + …"}`.
#[wasm_bindgen]
pub fn equation_text(fit_json: &str) -> String {
    match serde_json::from_str::<serde_json::Value>(fit_json) {
        Ok(v) => ok(&crate::export::report::equation(&v)),
        Err(e) => error("request", &format!("The result for the equation is not valid: {e}")),
    }
}
