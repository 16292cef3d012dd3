//! The `plumbline` command: argument parsing and glue. It reads files,
//! calls the library and prints; it holds no statistics.
//!
//! Exit codes: 0 success, 1 the data or the model could not be used
//! (a plain message says why), 2 the command line itself is wrong.

use plumbline::model::{fit, FitOptions};
use plumbline::read::csv::read_csv;
use plumbline::table::Table;
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use std::process::ExitCode;

const USAGE: &str = "\
plumbline: linear models from a spreadsheet, computed on this machine

Usage:
  plumbline fit FILE --response R [--terms \"T1, T2, ...\"] [options]

Options of fit:
  --response R      the column to explain; may be log(c) or sqrt(c)
  --terms \"...\"     comma-separated terms: c, log(c), sqrt(c), c^2 .. c^10,
                    cat(c), cat(c, ref=LEVEL), a*b; quote names with spaces
  --no-intercept    fit without an intercept
  --level L         confidence level of the intervals (default 0.95)
  --weights C       weighted least squares with weights from column C
  --hc3             also report HC3 heteroscedasticity-robust standard errors
  --json            print the result as JSON
  --help            show this text
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
        eprintln!("plumbline stopped on an internal error, which is a bug: {info}");
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
        Some(other) => Err(Failure::usage(format!("There is no command \"{other}\".\n\n{USAGE}"))),
    }
}

fn parse_fit_args(args: &[String]) -> Result<RawFitArgs, Failure> {
    let mut raw = RawFitArgs::default();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut value = |flag: &str| {
            it.next().cloned().ok_or_else(|| Failure::usage(format!("{flag} needs a value after it.")))
        };
        match a.as_str() {
            "--response" => raw.response = Some(value(a)?),
            "--terms" => raw.terms = Some(value(a)?),
            "--level" => raw.level = Some(value(a)?),
            "--weights" => raw.weights = Some(value(a)?),
            "--no-intercept" => raw.no_intercept = true,
            "--hc3" => raw.hc3 = true,
            "--json" => raw.json = true,
            "--help" | "-h" => return Err(Failure { code: 0, message: USAGE.to_string() }),
            s if s.starts_with("--") => {
                return Err(Failure::usage(format!("There is no option \"{s}\" for fit.\n\n{USAGE}")))
            }
            s => {
                if raw.file.is_some() {
                    return Err(Failure::usage(format!("fit takes one file, but \"{s}\" was given as well.")));
                }
                raw.file = Some(s.to_string());
            }
        }
    }
    Ok(raw)
}

fn run_fit(args: &[String]) -> Result<String, Failure> {
    let raw = parse_fit_args(args)?;
    let file = raw.file.ok_or_else(|| Failure::usage(format!("fit needs a data file.\n\n{USAGE}")))?;
    let response = raw.response.ok_or_else(|| Failure::usage("fit needs --response, the column to explain."))?;
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
    let spec = ModelSpec { response, terms, intercept: !raw.no_intercept, weights: raw.weights };
    let table = load_table(&file)?;
    let fitted = fit(&table, &spec, &options).map_err(|e| Failure::data(e.to_string()))?;
    if raw.json {
        let mut s = serde_json::to_string_pretty(&fitted.report).map_err(|e| Failure::data(e.to_string()))?;
        s.push('\n');
        Ok(s)
    } else {
        Ok(plumbline::text::render_fit(&fitted.report))
    }
}

fn load_table(path: &str) -> Result<Table, Failure> {
    let bytes = std::fs::read(path).map_err(|e| Failure::data(format!("Could not open \"{path}\": {e}.")))?;
    let lower = path.to_lowercase();
    if [".xlsx", ".xlsm", ".xlsb", ".xls", ".ods"].iter().any(|ext| lower.ends_with(ext)) {
        return Err(Failure::data(format!(
            "\"{path}\" is a workbook; this version reads comma-separated text only. Save the sheet as CSV and try again."
        )));
    }
    read_csv(&bytes).map_err(|e| Failure::data(format!("Could not read \"{path}\": {e}")))
}
