//! The `plumbline` command: argument parsing and glue. It reads files,
//! calls the library and prints; it holds no statistics.
//!
//! Exit codes: 0 success, 1 the data or the model could not be used
//! (a plain message says why), 2 the command line itself is wrong.

use plumbline::model::{fit, FitOptions};
use plumbline::read::{read_table, Loaded, ReadOptions};
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use std::process::ExitCode;

const USAGE: &str = "\
plumbline: linear models from a spreadsheet, computed on this machine

Usage:
  plumbline fit FILE --response R [--terms \"T1, T2, ...\"] [options]
  plumbline check FILE --response R [--terms \"...\"] [fit options] [--plots DIR]
  plumbline select FILE --response R [--candidates \"...\"] [--force \"...\"]
                 [--by adj-r2|aic|bic|cp|cv|p-value] [select options]
  plumbline predict FILE --response R --terms \"...\" --new NEWFILE [fit options]
  plumbline profile FILE [--kind COLUMN=KIND ...] [--json]
  plumbline sheets FILE

FILE may be CSV or other delimited text (the delimiter, decimal mark and
encoding are found), or a workbook: xlsx, xlsm, xlsb, xls, ods. FILE \"-\"
reads cells pasted from a spreadsheet on standard input.
Every command that reads FILE accepts:
  --sheet NAME      the sheet of a workbook (default: the first with data)
  --header-row N    the row that holds the column names (default: found)

Options of fit:
  --response R      the column to explain; may be log(c) or sqrt(c)
  --terms \"...\"     comma-separated terms: c, log(c), sqrt(c), c^2 .. c^10,
                    cat(c), cat(c, ref=LEVEL), a*b; quote names with spaces
  --no-intercept    fit without an intercept
  --level L         confidence level of the intervals (default 0.95)
  --weights C       weighted least squares with weights from column C
  --hc3             also report HC3 heteroscedasticity-robust standard errors
  --exclude-rows N,M  leave these rows (numbered as in the file) out of the fit
  --new NEWFILE     (predict) the new cases, with the same columns
  --new-sheet NAME  (predict) the sheet of NEWFILE
  --json            print the result as JSON
  --help            show this text

check fits the model as fit does, then reports per-row influence,
collinearity, tests of the assumptions and findings in plain words;
--plots DIR also writes every diagnostic plot there as PNG.

Options of select (candidates default to the profile's suggestions):
  --by C            what picks the winner (default bic)
  --search S        exhaustive (default), forward, backward or both (stepwise)
  --alpha A         level of the p-value route (default 0.05)
  --folds K         folds of the cross-validation (default 5)
  --repeats R       repeat the cross-validation with R fold draws (default 1)
  --seed S          seed of the folds and resamples (default 1)
  --stability B     refit the selection on B bootstrap resamples
  --no-intercept, --weights C, --json as for fit

Options of profile:
  --kind C=K        set the kind of column C, overriding what was found; K is
                    numeric, coded_category, text_category, binary, identifier
  --json            print the profile as JSON
";

/// Raw flags as typed, before validation.
#[derive(Default)]
struct RawFitArgs {
    file: Option<String>,
    response: Option<String>,
    terms: Option<String>,
    no_intercept: bool,
    level: Option<String>,
    weights: Option<String>,
    hc3: bool,
    json: bool,
    plots: Option<String>,
    exclude: Vec<usize>,
    new: Option<String>,
    new_sheet: Option<String>,
    read: RawReadArgs,
}

/// Flags every command that reads a file accepts.
#[derive(Default)]
struct RawReadArgs {
    sheet: Option<String>,
    header_row: Option<String>,
}

impl RawReadArgs {
    /// Takes `--sheet` and `--header-row`; false when `flag` is neither.
    fn take(&mut self, flag: &str, value: &mut dyn FnMut(&str) -> Result<String, Failure>) -> Result<bool, Failure> {
        match flag {
            "--sheet" => self.sheet = Some(value(flag)?),
            "--header-row" => self.header_row = Some(value(flag)?),
            _ => return Ok(false),
        }
        Ok(true)
    }

    fn options(&self) -> Result<ReadOptions, Failure> {
        let header_row = match &self.header_row {
            None => None,
            Some(h) => Some(h.trim().parse::<usize>().ok().filter(|&r| r >= 1).ok_or_else(|| {
                Failure::usage(format!("--header-row must be a row number (1 or more), not \"{h}\"."))
            })?),
        };
        Ok(ReadOptions { sheet: self.sheet.clone(), header_row, ..ReadOptions::default() })
    }
}

/// A failure, with the exit code it maps to.
struct Failure {
    code: u8,
    message: String,
}

impl Failure {
    fn usage(message: impl Into<String>) -> Failure {
        Failure { code: 2, message: message.into() }
    }
    fn data(message: impl Into<String>) -> Failure {
        Failure { code: 1, message: message.into() }
    }
}

fn main() -> ExitCode {
    std::panic::set_hook(Box::new(|info| {
        if !plumbline::read::workbook::panics_are_caught() {
            eprintln!("plumbline stopped on an internal error, which is a bug: {info}");
        }
    }));
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(out) => {
            print!("{out}");
            ExitCode::SUCCESS
        }
        Err(f) => {
            eprintln!("{}", f.message);
            ExitCode::from(f.code)
        }
    }
}

fn run(args: &[String]) -> Result<String, Failure> {
    match args.first().map(String::as_str) {
        None | Some("--help") | Some("-h") | Some("help") => Ok(USAGE.to_string()),
        Some("fit") => run_fit(&args[1..]),
        Some("check") => run_check(&args[1..]),
        Some("select") => run_select(&args[1..]),
        Some("predict") => run_predict(&args[1..]),
        Some("profile") => run_profile(&args[1..]),
        Some("sheets") => run_sheets(&args[1..]),
        Some(other) => Err(Failure::usage(format!("There is no command \"{other}\".\n\n{USAGE}"))),
    }
}

fn parse_fit_args(args: &[String], command: &str) -> Result<RawFitArgs, Failure> {
    let mut raw = RawFitArgs::default();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut value = |flag: &str| {
            it.next().cloned().ok_or_else(|| Failure::usage(format!("{flag} needs a value after it.")))
        };
        if raw.read.take(a, &mut value)? {
            continue;
        }
        match a.as_str() {
            "--response" => raw.response = Some(value(a)?),
            "--terms" => raw.terms = Some(value(a)?),
            "--level" => raw.level = Some(value(a)?),
            "--weights" => raw.weights = Some(value(a)?),
            "--no-intercept" => raw.no_intercept = true,
            "--hc3" => raw.hc3 = true,
            "--json" => raw.json = true,
            "--plots" => raw.plots = Some(value(a)?),
            "--new" => raw.new = Some(value(a)?),
            "--new-sheet" => raw.new_sheet = Some(value(a)?),
            "--exclude-rows" => {
                let v = value(a)?;
                for part in v.split(',').map(str::trim).filter(|x| !x.is_empty()) {
                    let row = part.parse::<usize>().map_err(|_| {
                        Failure::usage(format!("--exclude-rows takes row numbers separated by commas, such as 12,40; \"{part}\" is not one."))
                    })?;
                    raw.exclude.push(row);
                }
            }
            "--help" | "-h" => return Err(Failure { code: 0, message: USAGE.to_string() }),
            s if s.starts_with("--") => {
                return Err(Failure::usage(format!("There is no option \"{s}\" for {command}.\n\n{USAGE}")))
            }
            s => {
                if raw.file.is_some() {
                    return Err(Failure::usage(format!("{command} takes one file, but \"{s}\" was given as well.")));
                }
                raw.file = Some(s.to_string());
            }
        }
    }
    Ok(raw)
}

/// A validated model request: what `fit` and `check` share.
struct ModelRequest {
    spec: ModelSpec,
    options: FitOptions,
    loaded: Loaded,
    json: bool,
    plots: Option<String>,
    new: Option<(String, Option<String>)>,
}

fn model_request(args: &[String], command: &str) -> Result<ModelRequest, Failure> {
    let raw = parse_fit_args(args, command)?;
    let file = raw.file.ok_or_else(|| Failure::usage(format!("{command} needs a data file.\n\n{USAGE}")))?;
    let response =
        raw.response.ok_or_else(|| Failure::usage(format!("{command} needs --response, the column to explain.")))?;
    let response = parse_term(&response).map_err(|e| Failure::usage(format!("In --response: {e}")))?;
    let terms = parse_terms(raw.terms.as_deref().unwrap_or("")).map_err(|e| Failure::usage(format!("In --terms: {e}")))?;
    let mut options = FitOptions { hc3: raw.hc3, ..FitOptions::default() };
    if let Some(l) = raw.level {
        options.level = l
            .trim()
            .parse::<f64>()
            .ok()
            .filter(|v| *v > 0.0 && *v < 1.0)
            .ok_or_else(|| Failure::usage(format!("--level must be a number between 0 and 1, such as 0.95, not \"{l}\".")))?;
    }
    if raw.plots.is_some() && command != "check" {
        return Err(Failure::usage(format!("--plots belongs to check, not {command}.")));
    }
    if raw.new.is_some() != (command == "predict") {
        return Err(Failure::usage(if command == "predict" {
            "predict needs --new NEWFILE, the cases to predict.".to_string()
        } else {
            format!("--new belongs to predict, not {command}.")
        }));
    }
    let spec = ModelSpec { response, terms, intercept: !raw.no_intercept, weights: raw.weights, exclude: raw.exclude };
    let loaded = load_table(&file, &raw.read)?;
    Ok(ModelRequest { spec, options, loaded, json: raw.json, plots: raw.plots, new: raw.new.map(|n| (n, raw.new_sheet)) })
}

fn to_json<T: serde::Serialize>(v: &T) -> Result<String, Failure> {
    let mut s = serde_json::to_string_pretty(v).map_err(|e| Failure::data(e.to_string()))?;
    s.push('\n');
    Ok(s)
}

fn run_fit(args: &[String]) -> Result<String, Failure> {
    let req = model_request(args, "fit")?;
    let fitted = fit(&req.loaded.table, &req.spec, &req.options).map_err(|e| Failure::data(e.to_string()))?;
    if req.json {
        to_json(&fitted.report)
    } else {
        Ok(plumbline::text::render_fit(&fitted.report))
    }
}

fn run_check(args: &[String]) -> Result<String, Failure> {
    let req = model_request(args, "check")?;
    let table = &req.loaded.table;
    let fitted = fit(table, &req.spec, &req.options).map_err(|e| Failure::data(e.to_string()))?;
    let report = plumbline::diagnostics::check(&fitted, &req.spec, table.sheet.as_deref());
    let mut out = if req.json { to_json(&report)? } else { plumbline::text::render_check(&report, table.sheet.as_deref()) };
    if let Some(dir) = &req.plots {
        let written = write_plots(&report, table, &fitted, dir)?;
        if !req.json {
            out.push_str(&format!("\nPlots written to {dir}: {}\n", written.join(", ")));
        }
    }
    Ok(out)
}

fn write_plots(
    report: &plumbline::diagnostics::CheckReport,
    table: &plumbline::table::Table,
    fitted: &plumbline::model::Fitted,
    dir: &str,
) -> Result<Vec<String>, Failure> {
    std::fs::create_dir_all(dir).map_err(|e| Failure::data(format!("Could not create the folder \"{dir}\": {e}.")))?;
    let plots = plumbline::plot::data::all_plots(report, fitted, table);
    let mut written = Vec::new();
    for p in &plots {
        let png = plumbline::plot::png::render_png(p, 900, 640).map_err(|e| Failure::data(e.to_string()))?;
        let name = format!("{}.png", p.file_stem());
        let path = std::path::Path::new(dir).join(&name);
        std::fs::write(&path, png).map_err(|e| Failure::data(format!("Could not write \"{}\": {e}.", path.display())))?;
        written.push(name);
    }
    Ok(written)
}

/// Reads FILE, or with "-" a block pasted on standard input.
fn load_table(path: &str, read: &RawReadArgs) -> Result<Loaded, Failure> {
    let options = read.options()?;
    if path == "-" {
        let mut text = String::new();
        std::io::Read::read_to_string(&mut std::io::stdin(), &mut text)
            .map_err(|e| Failure::data(format!("Could not read the pasted cells from standard input: {e}.")))?;
        return plumbline::read::read_paste(&text, &options)
            .map_err(|e| Failure::data(format!("Could not read the pasted cells: {e}")));
    }
    let bytes = std::fs::read(path).map_err(|e| Failure::data(format!("Could not open \"{path}\": {e}.")))?;
    read_table(&bytes, &options).map_err(|e| Failure::data(format!("Could not read \"{path}\": {e}")))
}

fn run_profile(args: &[String]) -> Result<String, Failure> {
    let mut read = RawReadArgs::default();
    let mut file = None;
    let mut json = false;
    let mut kinds = Vec::new();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut value = |flag: &str| {
            it.next().cloned().ok_or_else(|| Failure::usage(format!("{flag} needs a value after it.")))
        };
        if read.take(a, &mut value)? {
            continue;
        }
        match a.as_str() {
            "--json" => json = true,
            "--kind" => {
                let v = value(a)?;
                let (col, kind) = v.rsplit_once('=').ok_or_else(|| {
                    Failure::usage(format!("--kind takes COLUMN=KIND, such as zone=coded_category, not \"{v}\"."))
                })?;
                let kind = plumbline::profile::Kind::parse(kind.trim()).ok_or_else(|| {
                    Failure::usage(format!(
                        "\"{kind}\" is not a kind; use numeric, coded_category, text_category, binary or identifier."
                    ))
                })?;
                kinds.push((col.trim().to_string(), kind));
            }
            s if s.starts_with("--") => {
                return Err(Failure::usage(format!("There is no option \"{s}\" for profile.\n\n{USAGE}")))
            }
            s => {
                if file.replace(s.to_string()).is_some() {
                    return Err(Failure::usage("profile takes one file."));
                }
            }
        }
    }
    let file = file.ok_or_else(|| Failure::usage(format!("profile needs a data file.\n\n{USAGE}")))?;
    let loaded = load_table(&file, &read)?;
    for (c, _) in &kinds {
        if loaded.table.column(c).is_none() {
            return Err(Failure::data(format!("--kind names \"{c}\", but there is no such column.")));
        }
    }
    let profile = plumbline::profile::profile_table(&loaded.table, &plumbline::profile::ProfileOptions { kinds });
    let report = plumbline::schema::ProfileReport {
        load: plumbline::schema::LoadSummary::of(&loaded),
        rows: profile.rows,
        columns: profile.columns,
    };
    if json {
        let mut s = serde_json::to_string_pretty(&report).map_err(|e| Failure::data(e.to_string()))?;
        s.push('\n');
        Ok(s)
    } else {
        Ok(plumbline::text::render_profile(&report))
    }
}

fn run_sheets(args: &[String]) -> Result<String, Failure> {
    let [file] = args else {
        return Err(Failure::usage(format!("sheets takes one file.\n\n{USAGE}")));
    };
    let bytes = std::fs::read(file).map_err(|e| Failure::data(format!("Could not open \"{file}\": {e}.")))?;
    let sheets = plumbline::read::list_sheets(&bytes).map_err(|e| Failure::data(format!("Could not read \"{file}\": {e}")))?;
    if sheets.is_empty() {
        return Ok(format!("\"{file}\" is text, with one table and no sheets.\n"));
    }
    Ok(sheets.iter().map(|s| format!("{s}\n")).collect())
}

fn run_select(args: &[String]) -> Result<String, Failure> {
    use plumbline::select::{select, Criterion, Search, SelectOptions};
    use plumbline::select::stepwise::Direction;
    let mut read = RawReadArgs::default();
    let (mut file, mut response, mut candidates, mut force) = (None, None, None, None);
    let mut o = SelectOptions::default();
    let (mut json, mut intercept, mut weights) = (false, true, None);
    let number = |flag: &str, v: &str| -> Result<f64, Failure> {
        v.trim().parse::<f64>().ok().filter(|x| x.is_finite()).ok_or_else(|| Failure::usage(format!("{flag} takes a number, not \"{v}\".")))
    };
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut value = |flag: &str| it.next().cloned().ok_or_else(|| Failure::usage(format!("{flag} needs a value after it.")));
        if read.take(a, &mut value)? {
            continue;
        }
        match a.as_str() {
            "--response" => response = Some(value(a)?),
            "--candidates" => candidates = Some(value(a)?),
            "--force" => force = Some(value(a)?),
            "--by" => {
                let v = value(a)?;
                o.by = Criterion::parse(&v).ok_or_else(|| Failure::usage(format!("--by takes adj-r2, aic, bic, cp, cv or p-value, not \"{v}\".")))?;
            }
            "--search" => {
                let v = value(a)?;
                o.search = match v.as_str() {
                    "exhaustive" => Search::Exhaustive,
                    "forward" => Search::Stepwise(Direction::Forward),
                    "backward" => Search::Stepwise(Direction::Backward),
                    "both" => Search::Stepwise(Direction::Both),
                    _ => return Err(Failure::usage(format!("--search takes exhaustive, forward, backward or both, not \"{v}\"."))),
                };
            }
            "--alpha" => {
                let v = number(a, &value(a)?)?;
                if !(v > 0.0 && v < 1.0) {
                    return Err(Failure::usage("--alpha must be between 0 and 1, such as 0.05."));
                }
                o.alpha = v;
            }
            "--folds" => o.folds = (number(a, &value(a)?)? as usize).max(2),
            "--repeats" => o.cv_repeats = (number(a, &value(a)?)? as usize).max(1),
            "--seed" => o.seed = number(a, &value(a)?)? as u64,
            "--stability" => o.stability = Some((number(a, &value(a)?)? as usize).max(1)),
            "--no-intercept" => intercept = false,
            "--weights" => weights = Some(value(a)?),
            "--json" => json = true,
            s if s.starts_with("--") => return Err(Failure::usage(format!("There is no option \"{s}\" for select.\n\n{USAGE}"))),
            s => {
                if file.replace(s.to_string()).is_some() {
                    return Err(Failure::usage("select takes one file."));
                }
            }
        }
    }
    let file = file.ok_or_else(|| Failure::usage(format!("select needs a data file.\n\n{USAGE}")))?;
    let response = response.ok_or_else(|| Failure::usage("select needs --response, the column to explain."))?;
    let response = parse_term(&response).map_err(|e| Failure::usage(format!("In --response: {e}")))?;
    let forced = parse_terms(force.as_deref().unwrap_or("")).map_err(|e| Failure::usage(format!("In --force: {e}")))?;
    let loaded = load_table(&file, &read)?;
    let candidate_terms = match candidates {
        Some(c) => parse_terms(&c).map_err(|e| Failure::usage(format!("In --candidates: {e}")))?,
        None => {
            let profile = plumbline::profile::profile_table(&loaded.table, &Default::default());
            let exclude: Vec<&str> = response.columns();
            let texts = plumbline::profile::default_terms(&profile, &exclude);
            parse_terms(&texts.join(", ")).map_err(|e| Failure::data(format!("The suggested candidates could not be read: {e}")))?
        }
    };
    if candidate_terms.is_empty() && forced.is_empty() {
        return Err(Failure::data("There are no candidate terms to choose from; give --candidates."));
    }
    let req = plumbline::select::SelectRequest { response, candidates: candidate_terms, forced, intercept, weights, exclude: Vec::new() };
    let report = select(&loaded.table, &req, &o, None).map_err(|e| Failure::data(e.to_string()))?;
    if json {
        to_json(&report)
    } else {
        Ok(plumbline::text::render_select(&report))
    }
}

fn run_predict(args: &[String]) -> Result<String, Failure> {
    let req = model_request(args, "predict")?;
    let table = &req.loaded.table;
    let fitted = fit(table, &req.spec, &req.options).map_err(|e| Failure::data(e.to_string()))?;
    let (path, sheet) = req.new.clone().expect("checked in model_request");
    let read = RawReadArgs { sheet, header_row: None };
    let new = load_table(&path, &read)?.table;
    let report = plumbline::predict::predict(&fitted, &req.spec, table, &new, req.options.level)
        .map_err(|e| Failure::data(format!("In the new cases: {e}")))?;
    if req.json {
        to_json(&report)
    } else {
        Ok(plumbline::text::render_predict(&report))
    }
}
