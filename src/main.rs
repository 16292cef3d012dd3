//! The `plumbline` command: argument parsing and glue. It reads files,
//! calls the library and prints; it holds no statistics.
//!
//! Exit codes: 0 success, 1 the data or the model could not be used
//! (a plain message says why), 2 the command line itself is wrong.

use plumbline::model::{fit, FitOptions};
use plumbline::read::{read_table, Loaded, ReadOptions};
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use std::process::ExitCode;

mod bench;

const USAGE: &str = "\
plumbline: linear models from a spreadsheet, computed on this machine

Usage:
  plumbline fit FILE --response R [--terms \"T1, T2, ...\"] [options]
  plumbline check FILE --response R [--terms \"...\"] [fit options] [--plots DIR]
  plumbline select FILE --response R [--candidates \"...\"] [--force \"...\"]
                 [--by adj-r2|aic|bic|cp|cv|p-value] [select options]
  plumbline predict FILE --response R --terms \"...\" --new NEWFILE [fit options]
  plumbline formula FILE --response R --terms \"...\" --cells C=LETTERS,...
                 [--first-row N] [--separator ;|,] [--decimal-comma]
  plumbline export FILE --response R --terms \"...\" [--candidates \"...\"]
                 [--new NEWFILE] [--xlsx OUT] [--session OUT [--with-data]]
                 [--tsv coefficients|candidates|predictions]
  plumbline report FILE --response R --terms \"...\" [--candidates \"...\"]
                 [--new NEWFILE] --out OUT.html
  plumbline reopen SESSION [FILE] [--json]
  plumbline profile FILE [--kind COLUMN=KIND ...] [--json]
  plumbline sheets FILE
  plumbline bench fit|select|read ...   (timings; plumbline bench --help)

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

formula writes a spreadsheet formula that reproduces the model's prediction
from the cells of one row: --cells says which spreadsheet column holds each
input (area=B,zone=C), --first-row the row of the first case (default 2),
--separator the argument separator (default ;, the OpenDocument standard's).
export writes the results workbook (--xlsx), a session file (--session, with
the data too given --with-data) or a table as tab-separated text (--tsv);
--candidates adds a selection over those terms, --new predictions.
report writes the report, one self-contained HTML file, to --out.
reopen fits a session file's model again, on FILE or on the data it keeps,
and explains any difference between those data and the saved ones.

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
    /// Flags of export, report and formula; checked per command.
    out: OutputArgs,
}

/// What export, report and formula write.
#[derive(Default)]
struct OutputArgs {
    candidates: Option<String>,
    xlsx: Option<String>,
    out: Option<String>,
    session: Option<String>,
    with_data: bool,
    tsv: Option<String>,
    cells: Option<String>,
    first_row: Option<String>,
    separator: Option<String>,
    decimal_comma: bool,
}

impl OutputArgs {
    fn take(&mut self, flag: &str, value: &mut dyn FnMut(&str) -> Result<String, Failure>) -> Result<bool, Failure> {
        match flag {
            "--candidates" => self.candidates = Some(value(flag)?),
            "--xlsx" => self.xlsx = Some(value(flag)?),
            "--out" => self.out = Some(value(flag)?),
            "--session" => self.session = Some(value(flag)?),
            "--with-data" => self.with_data = true,
            "--tsv" => self.tsv = Some(value(flag)?),
            "--cells" => self.cells = Some(value(flag)?),
            "--first-row" => self.first_row = Some(value(flag)?),
            "--separator" => self.separator = Some(value(flag)?),
            "--decimal-comma" => self.decimal_comma = true,
            _ => return Ok(false),
        }
        Ok(true)
    }

    /// The flags given, by name, for refusing those a command does not take.
    fn given(&self) -> Vec<&'static str> {
        let mut g = Vec::new();
        let flags: [(&'static str, bool); 10] = [
            ("--candidates", self.candidates.is_some()),
            ("--xlsx", self.xlsx.is_some()),
            ("--out", self.out.is_some()),
            ("--session", self.session.is_some()),
            ("--with-data", self.with_data),
            ("--tsv", self.tsv.is_some()),
            ("--cells", self.cells.is_some()),
            ("--first-row", self.first_row.is_some()),
            ("--separator", self.separator.is_some()),
            ("--decimal-comma", self.decimal_comma),
        ];
        for (f, on) in flags {
            if on {
                g.push(f);
            }
        }
        g
    }
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
        Some("formula") => run_formula(&args[1..]),
        Some("export") => run_export(&args[1..], "export"),
        Some("report") => run_export(&args[1..], "report"),
        Some("reopen") => run_reopen(&args[1..]),
        Some("bench") => run_bench(&args[1..]),
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
        if raw.read.take(a, &mut value)? || raw.out.take(a, &mut value)? {
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
    /// The data file as given, its bytes, and how it was read.
    file: String,
    bytes: Vec<u8>,
    read: RawReadArgs,
    out: OutputArgs,
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
    if command == "predict" && raw.new.is_none() {
        return Err(Failure::usage("predict needs --new NEWFILE, the cases to predict."));
    }
    if raw.new.is_some() && !matches!(command, "predict" | "export" | "report") {
        return Err(Failure::usage(format!("--new belongs to predict, export and report, not {command}.")));
    }
    let allowed: &[&str] = match command {
        "formula" => &["--cells", "--first-row", "--separator", "--decimal-comma"],
        "export" => &["--candidates", "--xlsx", "--session", "--with-data", "--tsv", "--cells", "--first-row", "--separator", "--decimal-comma"],
        "report" => &["--candidates", "--out", "--cells", "--first-row", "--separator", "--decimal-comma"],
        _ => &[],
    };
    if let Some(f) = raw.out.given().into_iter().find(|f| !allowed.contains(f)) {
        return Err(Failure::usage(format!("{command} does not take {f}.\n\n{USAGE}")));
    }
    let spec = ModelSpec { response, terms, intercept: !raw.no_intercept, weights: raw.weights, exclude: raw.exclude };
    let (loaded, bytes) = load_table_bytes(&file, &raw.read)?;
    Ok(ModelRequest {
        spec,
        options,
        loaded,
        json: raw.json,
        plots: raw.plots,
        new: raw.new.map(|n| (n, raw.new_sheet)),
        file,
        bytes,
        read: raw.read,
        out: raw.out,
    })
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
    load_table_bytes(path, read).map(|(l, _)| l)
}

/// As [`load_table`], keeping the bytes read.
fn load_table_bytes(path: &str, read: &RawReadArgs) -> Result<(Loaded, Vec<u8>), Failure> {
    let options = read.options()?;
    if path == "-" {
        let mut text = String::new();
        std::io::Read::read_to_string(&mut std::io::stdin(), &mut text)
            .map_err(|e| Failure::data(format!("Could not read the pasted cells from standard input: {e}.")))?;
        let loaded = plumbline::read::read_paste(&text, &options)
            .map_err(|e| Failure::data(format!("Could not read the pasted cells: {e}")))?;
        return Ok((loaded, text.into_bytes()));
    }
    let bytes = std::fs::read(path).map_err(|e| Failure::data(format!("Could not open \"{path}\": {e}.")))?;
    let loaded = read_table(&bytes, &options).map_err(|e| Failure::data(format!("Could not read \"{path}\": {e}")))?;
    Ok((loaded, bytes))
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

/// `plumbline bench`: timings on seeded data (src/bench.rs).
fn run_bench(args: &[String]) -> Result<String, Failure> {
    bench::run(args).map_err(|e| Failure { code: if e.usage { 2 } else { 1 }, message: e.message })
}

/// The formula options from `--cells`, `--first-row` and `--separator`;
/// `None` without `--cells`.
fn formula_options(out: &OutputArgs) -> Result<Option<plumbline::export::formula::FormulaOptions>, Failure> {
    let Some(cells) = &out.cells else {
        if out.first_row.is_some() || out.separator.is_some() || out.decimal_comma {
            return Err(Failure::usage("--first-row, --separator and --decimal-comma go with --cells, which says where each input is."));
        }
        return Ok(None);
    };
    let mut o = plumbline::export::formula::FormulaOptions::default();
    for part in cells.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let (name, letters) = part.rsplit_once('=').ok_or_else(|| {
            Failure::usage(format!("--cells takes COLUMN=LETTERS pairs separated by commas, such as area=B,zone=C; \"{part}\" is not one."))
        })?;
        o.cells.insert(name.trim().trim_matches('"').to_string(), letters.trim().to_string());
    }
    if let Some(r) = &out.first_row {
        o.first_row = r.trim().parse::<usize>().ok().filter(|&r| r >= 1).ok_or_else(|| {
            Failure::usage(format!("--first-row must be a row number (1 or more), not \"{r}\"."))
        })?;
    }
    if let Some(sep) = &out.separator {
        o.separator = match sep.trim() {
            ";" => ';',
            "," => ',',
            other => return Err(Failure::usage(format!("--separator takes ; or , (not \"{other}\")."))),
        };
    }
    o.decimal_comma = out.decimal_comma;
    Ok(Some(o))
}

fn run_formula(args: &[String]) -> Result<String, Failure> {
    let req = model_request(args, "formula")?;
    let o = formula_options(&req.out)?
        .ok_or_else(|| Failure::usage("formula needs --cells, the spreadsheet column of each input, such as --cells area=B,zone=C."))?;
    let table = &req.loaded.table;
    let fitted = fit(table, &req.spec, &req.options).map_err(|e| Failure::data(e.to_string()))?;
    let f = plumbline::export::formula::formula(&fitted, &req.spec, table, &o).map_err(|e| Failure::data(e.to_string()))?;
    if req.json {
        return to_json(&f);
    }
    let mut out = format!("{}\n\n", f.formula);
    for (c, cell) in &f.inputs {
        out.push_str(&format!("  {c}: {cell}\n"));
    }
    out.push('\n');
    for n in &f.notes {
        out.push_str(&format!("{n}\n"));
    }
    Ok(out)
}

/// The model's terms as one text, as the session keeps them.
fn terms_text(spec: &ModelSpec) -> String {
    spec.terms.iter().map(|t| t.to_string()).collect::<Vec<_>>().join(", ")
}

fn write_file(path: &str, bytes: &[u8]) -> Result<(), Failure> {
    std::fs::write(path, bytes).map_err(|e| Failure::data(format!("Could not write \"{path}\": {e}.")))
}

fn run_export(args: &[String], command: &str) -> Result<String, Failure> {
    use plumbline::export::{self, session, Bundle, Source};
    let req = model_request(args, command)?;
    let o = &req.out;
    if command == "export" && o.xlsx.is_none() && o.session.is_none() && o.tsv.is_none() {
        return Err(Failure::usage("export needs --xlsx FILE, --session FILE or --tsv TABLE: say what to write."));
    }
    if command == "report" && o.out.is_none() {
        return Err(Failure::usage("report needs --out FILE, where to write the report."));
    }
    if o.with_data && o.session.is_none() {
        return Err(Failure::usage("--with-data goes with --session: it keeps the data in the session file."));
    }
    let tsv_table = match &o.tsv {
        None => None,
        Some(t) => Some(export::tsv::Table::parse(t).ok_or_else(|| {
            Failure::usage(format!("--tsv takes coefficients, candidates or predictions, not \"{t}\"."))
        })?),
    };
    let table = &req.loaded.table;
    let spec = &req.spec;
    let fitted = fit(table, spec, &req.options).map_err(|e| Failure::data(e.to_string()))?;
    let check = plumbline::diagnostics::check(&fitted, spec, table.sheet.as_deref());
    let value = |v: &dyn erased::Json| v.value();
    let select = match &o.candidates {
        None => None,
        Some(c) => {
            let candidates = parse_terms(c).map_err(|e| Failure::usage(format!("In --candidates: {e}")))?;
            let sreq = plumbline::select::SelectRequest {
                response: spec.response.clone(),
                candidates,
                forced: Vec::new(),
                intercept: spec.intercept,
                weights: spec.weights.clone(),
                exclude: spec.exclude.clone(),
            };
            let r = plumbline::select::select(table, &sreq, &Default::default(), None).map_err(|e| Failure::data(e.to_string()))?;
            Some(value(&r)?)
        }
    };
    let predict = match &req.new {
        None => None,
        Some((path, sheet)) => {
            let new = load_table(path, &RawReadArgs { sheet: sheet.clone(), header_row: None })?.table;
            let r = plumbline::predict::predict(&fitted, spec, table, &new, req.options.level)
                .map_err(|e| Failure::data(format!("In the new cases: {e}")))?;
            Some(value(&r)?)
        }
    };
    let formula = match formula_options(o)? {
        None => None,
        Some(fo) => Some(plumbline::export::formula::formula(&fitted, spec, table, &fo).map_err(|e| Failure::data(e.to_string()))?.formula),
    };
    let file_name = std::path::Path::new(&req.file).file_name().map_or(req.file.clone(), |n| n.to_string_lossy().into_owned());
    let read = req.read.options()?;
    let mut bundle = Bundle {
        source: Source { file_name: file_name.clone(), sha256: export::sha256_hex(&req.bytes), sheet: table.sheet.clone(), header_row: read.header_row },
        choices: export::term_choices(spec),
        fit: value(&fitted.report)?,
        check: Some(value(&check)?),
        select,
        predict,
        formula,
        plots: Vec::new(),
        date: export::now_utc(),
    };
    let mut said = String::new();
    if command == "report" {
        for p in plumbline::plot::data::all_plots(&check, &fitted, table) {
            let png = plumbline::plot::png::render_png(&p, 900, 640).map_err(|e| Failure::data(e.to_string()))?;
            bundle.plots.push(export::Plot { title: p.title.clone(), png_base64: export::base64_encode(&png) });
        }
        let html = export::report::report_html(&bundle).map_err(Failure::data)?;
        let path = o.out.as_deref().expect("checked above");
        write_file(path, html.as_bytes())?;
        said.push_str(&format!("Wrote the report to {path} ({} figures).\n", bundle.plots.len()));
    }
    if let Some(path) = &o.xlsx {
        let bytes = export::workbook::results_workbook(&bundle).map_err(Failure::data)?;
        write_file(path, &bytes)?;
        said.push_str(&format!("Wrote the results workbook to {path}.\n"));
    }
    if let Some(path) = &o.session {
        let mut s = session::Session::new(&file_name, &req.bytes, table, &read, req.file == "-");
        s.saved = bundle.date.clone();
        s.model = Some(session::ModelChoice {
            response: spec.response.to_string(),
            terms: terms_text(spec),
            intercept: spec.intercept,
            weights: spec.weights.clone(),
            exclude_rows: spec.exclude.clone(),
            level: req.options.level,
            hc3: req.options.hc3,
        });
        if let Some(c) = &o.candidates {
            s.selection = Some(session::SelectionChoice { candidates: c.clone(), ..Default::default() });
        }
        if o.with_data {
            s.keep_data(&req.bytes);
        }
        write_file(path, s.to_json().as_bytes())?;
        said.push_str(&format!("Wrote the session to {path}{}.\n", if o.with_data { ", with the data" } else { " (choices only; the data stay in their file)" }));
    }
    if let Some(t) = tsv_table {
        let source = match t {
            export::tsv::Table::Coefficients => Some(&bundle.fit),
            export::tsv::Table::Candidates => bundle.select.as_ref(),
            export::tsv::Table::Predictions => bundle.predict.as_ref(),
        };
        let source = source.ok_or_else(|| {
            Failure::usage(match t {
                export::tsv::Table::Candidates => "--tsv candidates needs --candidates, the terms to compare.",
                _ => "--tsv predictions needs --new NEWFILE, the cases to predict.",
            })
        })?;
        // The table goes to standard output; what was written goes to stderr.
        eprint!("{said}");
        return export::tsv::tsv(t, source).map_err(Failure::data);
    }
    Ok(said)
}

/// Serialising any result to a JSON value, for the bundle.
mod erased {
    pub trait Json {
        fn value(&self) -> Result<serde_json::Value, super::Failure>;
    }
    impl<T: serde::Serialize> Json for T {
        fn value(&self) -> Result<serde_json::Value, super::Failure> {
            serde_json::to_value(self).map_err(|e| super::Failure::data(format!("A result could not be encoded: {e}")))
        }
    }
}

fn run_reopen(args: &[String]) -> Result<String, Failure> {
    use plumbline::export::session::Session;
    let mut files = Vec::new();
    let mut json = false;
    for a in args {
        match a.as_str() {
            "--json" => json = true,
            s if s.starts_with("--") => return Err(Failure::usage(format!("There is no option \"{s}\" for reopen.\n\n{USAGE}"))),
            s => files.push(s.to_string()),
        }
    }
    let (session_path, data_path) = match files.as_slice() {
        [s] => (s.clone(), None),
        [s, d] => (s.clone(), Some(d.clone())),
        _ => return Err(Failure::usage(format!("reopen takes a session file, and the data file unless the session keeps the data.\n\n{USAGE}"))),
    };
    let text = std::fs::read_to_string(&session_path).map_err(|e| Failure::data(format!("Could not open \"{session_path}\": {e}.")))?;
    let s = Session::from_json(&text).map_err(|e| Failure::data(e.to_string()))?;
    let bytes = match &data_path {
        Some(p) if p == "-" => {
            let mut t = Vec::new();
            std::io::Read::read_to_end(&mut std::io::stdin(), &mut t).map_err(|e| Failure::data(format!("Could not read standard input: {e}.")))?;
            t
        }
        Some(p) => std::fs::read(p).map_err(|e| Failure::data(format!("Could not open \"{p}\": {e}.")))?,
        None => s.data_bytes().map_err(|e| Failure::data(e.to_string()))?.ok_or_else(|| {
            Failure::usage(format!(
                "The session does not keep the data; give the data file as well: plumbline reopen {session_path} {}",
                s.source.file_name
            ))
        })?,
    };
    let options = s.read_options();
    let loaded = if s.source.paste {
        plumbline::read::read_paste(&String::from_utf8_lossy(&bytes), &options)
    } else {
        read_table(&bytes, &options)
    }
    .map_err(|e| Failure::data(format!("Could not read the data: {e}")))?;
    let table = &loaded.table;
    let mismatches = s.compare(&bytes, table);
    if let Some(block) = mismatches.iter().find(|m| m.blocking) {
        let all: Vec<&str> = mismatches.iter().map(|m| m.message.as_str()).collect();
        return Err(Failure::data(format!("The session's model cannot be fitted to these data. {}\n{}", block.message, all.join("\n"))));
    }
    let (spec, options) = s
        .model_spec()
        .map_err(|e| Failure::data(e.to_string()))?
        .ok_or_else(|| Failure::data("The session holds no model yet; there is nothing to fit."))?;
    let fitted = fit(table, &spec, &options).map_err(|e| Failure::data(e.to_string()))?;
    if json {
        #[derive(serde::Serialize)]
        struct Reopened<'a> {
            mismatches: &'a [plumbline::export::session::Mismatch],
            fit: &'a plumbline::schema::FitReport,
        }
        return to_json(&Reopened { mismatches: &mismatches, fit: &fitted.report });
    }
    let mut out = String::new();
    for m in &mismatches {
        out.push_str(&format!("Note: {}\n", m.message));
    }
    if !mismatches.is_empty() {
        out.push('\n');
    }
    out.push_str(&plumbline::text::render_fit(&fitted.report));
    Ok(out)
}
