//! `plumbline bench`: seeded problems generated in-process, and the time of
//! the computation alone.
//!
//! Part of the binary, not of the library: it reads the clock, which the
//! estimation core never does. The data come from the library's SplitMix64
//! ([`plumbline::select::cv::SplitMix64`]), so a seed gives the same matrix
//! on every machine, and `--write-csv` saves it for another tool (numpy, the
//! wasm build) to time on exactly the same numbers.
//!
//! - `bench fit --rows N --cols P`: a design of P columns, the intercept and
//!   P − 1 terms `x1 .. x{P-1}` uniform on (−1, 1), and
//!   y = 1 + Σ xⱼ/j + noise; times [`plumbline::model::fit`]. The flop count
//!   is that of Householder QR, 2np² − 2p³/3 (Golub and Van Loan 2013,
//!   §5.2.2), and GFLOP/s is that count over the time of the whole fit.
//! - `bench select --terms K --rows N`: K candidate terms, of which the
//!   first E (`--effects`, default K/2) carry effects of decreasing size and
//!   the rest none; times
//!   [`plumbline::select::select`] with its default options (exhaustive
//!   search, BIC, 5-fold CV of the candidates, the p-value route, the refit).
//! - `bench read FILE`: times `read_table` on the file's bytes (the bytes are
//!   read from disk first, untimed).
//!
//! `--through-read` (fit and select) writes the generated table as CSV in
//! memory and times reading it as well, which is what the page's
//! `fit_bytes` and `select_bytes` do.

use plumbline::model::{fit, FitOptions};
use plumbline::read::{read_table, ReadOptions};
use plumbline::select::cv::SplitMix64;
use plumbline::select::{select, SelectOptions, SelectRequest};
use plumbline::table::{ColumnData, Table};
use plumbline::terms::{parse_term, parse_terms, ModelSpec};
use std::fmt::Write as _;
use std::time::Instant;

pub const USAGE: &str = "\
plumbline bench: time the computation on seeded data made in-process

Usage:
  plumbline bench fit --rows N --cols P [--seed S] [--json]
  plumbline bench select --terms K --rows N [--effects E] [--seed S] [--json]
  plumbline bench read FILE [--json]

fit times one fit of N rows and P design columns (the intercept and P - 1
terms); select times a selection over K candidate terms, of which E
(default K/2) carry an effect; read times loading FILE. Numbers may be written 1e6. Options of fit and select:
  --seed S          seed of the data (default 1)
  --write-csv PATH  also write the generated data as CSV (for other tools)
  --through-read    time reading that CSV from memory as well
  --threads T       (fit) threads the fit may use (default: every core)
  --streaming       (fit) time the design and the bare streaming kernel
                    (lstsq::tsqr with its own two refinement passes, no
                    inference) instead of model::fit
  --json            print the result as JSON
";

/// A bench failure: the message, and whether it is the command line's fault.
pub struct BenchError {
    pub usage: bool,
    pub message: String,
}

fn usage(message: impl Into<String>) -> BenchError {
    BenchError { usage: true, message: message.into() }
}

fn data(message: impl Into<String>) -> BenchError {
    BenchError { usage: false, message: message.into() }
}

/// Raw flags of `bench`, before validation.
#[derive(Default)]
struct RawArgs {
    rows: Option<String>,
    cols: Option<String>,
    terms: Option<String>,
    effects: Option<String>,
    seed: Option<String>,
    write_csv: Option<String>,
    file: Option<String>,
    through_read: bool,
    streaming: bool,
    threads: Option<String>,
    json: bool,
}

fn parse_args(what: &str, args: &[String]) -> Result<RawArgs, BenchError> {
    let mut raw = RawArgs::default();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut value = |flag: &str| it.next().cloned().ok_or_else(|| usage(format!("{flag} needs a value after it.")));
        match a.as_str() {
            "--rows" => raw.rows = Some(value(a)?),
            "--cols" => raw.cols = Some(value(a)?),
            "--terms" => raw.terms = Some(value(a)?),
            "--effects" => raw.effects = Some(value(a)?),
            "--seed" => raw.seed = Some(value(a)?),
            "--write-csv" => raw.write_csv = Some(value(a)?),
            "--through-read" => raw.through_read = true,
            "--streaming" => raw.streaming = true,
            "--threads" => raw.threads = Some(value(a)?),
            "--json" => raw.json = true,
            s if s.starts_with("--") => return Err(usage(format!("There is no option \"{s}\" for bench {what}.\n\n{USAGE}"))),
            s => {
                if raw.file.replace(s.to_string()).is_some() {
                    return Err(usage(format!("bench {what} takes one file.")));
                }
            }
        }
    }
    Ok(raw)
}

/// A count such as `10000` or `1e6`.
fn count(flag: &str, v: Option<&str>, min: usize) -> Result<usize, BenchError> {
    let v = v.ok_or_else(|| usage(format!("bench needs {flag}.\n\n{USAGE}")))?;
    let x: f64 = v.trim().parse().map_err(|_| usage(format!("{flag} takes a whole number such as 10000 or 1e6, not \"{v}\".")))?;
    if !(x.fract() == 0.0 && x >= min as f64 && x <= 1e12) {
        return Err(usage(format!("{flag} takes a whole number of at least {min}, not \"{v}\".")));
    }
    Ok(x as usize)
}

fn seed_of(raw: &RawArgs) -> Result<u64, BenchError> {
    match &raw.seed {
        None => Ok(1),
        Some(s) => s.trim().parse::<u64>().map_err(|_| usage(format!("--seed takes a whole number, not \"{s}\"."))),
    }
}

/// Runs `plumbline bench ...` and returns what to print.
pub fn run(args: &[String]) -> Result<String, BenchError> {
    let what = args.first().map(String::as_str);
    let rest = args.get(1..).unwrap_or(&[]);
    match what {
        None | Some("--help") | Some("-h") => Ok(USAGE.to_string()),
        Some("fit") => run_fit(&parse_args("fit", rest)?),
        Some("select") => run_select(&parse_args("select", rest)?),
        Some("read") => run_read(&parse_args("read", rest)?),
        Some(other) => Err(usage(format!("bench has no \"{other}\"; it times fit, select or read.\n\n{USAGE}"))),
    }
}

/// Uniform on [0, 1) from the top 53 bits.
fn unit(rng: &mut SplitMix64) -> f64 {
    (rng.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
}

/// Roughly standard normal: the centred sum of four uniforms, scaled to
/// variance 1 (bounded tails; enough for timing).
fn gauss(rng: &mut SplitMix64) -> f64 {
    let s: f64 = (0..4).map(|_| unit(rng)).sum();
    (s - 2.0) * 3f64.sqrt()
}

/// The seeded fit problem: `x1 .. x{p-1}` and y, and its specification.
pub fn fit_problem(rows: usize, cols: usize, seed: u64) -> (Table, ModelSpec) {
    let mut rng = SplitMix64::new(seed);
    let terms = cols - 1;
    let mut columns: Vec<(String, Vec<f64>)> = Vec::with_capacity(cols);
    let mut y: Vec<f64> = (0..rows).map(|_| 1.0 + 0.1 * gauss(&mut rng)).collect();
    for j in 1..=terms {
        let x: Vec<f64> = (0..rows).map(|_| 2.0 * unit(&mut rng) - 1.0).collect();
        let b = 1.0 / j as f64;
        for (yi, xi) in y.iter_mut().zip(&x) {
            *yi += b * xi;
        }
        columns.push((format!("x{j}"), x));
    }
    columns.insert(0, ("y".to_string(), y));
    let names: Vec<String> = (1..=terms).map(|j| format!("x{j}")).collect();
    let spec = ModelSpec {
        response: parse_term("y").expect("a plain name"),
        terms: parse_terms(&names.join(", ")).expect("plain names"),
        intercept: true,
        weights: None,
        exclude: Vec::new(),
    };
    (Table::from_numeric(columns), spec)
}

/// The seeded selection problem: K candidates `x1 .. xK`, independent and
/// roughly standard normal; the first `effects` have effects 2^(−j/2) (from
/// 0.71 down), the rest none, with unit noise.
pub fn select_problem(rows: usize, terms: usize, effects: usize, seed: u64) -> (Table, SelectRequest) {
    let mut rng = SplitMix64::new(seed);
    let mut y: Vec<f64> = (0..rows).map(|_| gauss(&mut rng)).collect();
    let mut columns: Vec<(String, Vec<f64>)> = Vec::with_capacity(terms + 1);
    for j in 1..=terms {
        let x: Vec<f64> = (0..rows).map(|_| gauss(&mut rng)).collect();
        if j <= effects {
            let b = 2f64.powf(-(j as f64) / 2.0);
            for (yi, xi) in y.iter_mut().zip(&x) {
                *yi += b * xi;
            }
        }
        columns.push((format!("x{j}"), x));
    }
    columns.insert(0, ("y".to_string(), y));
    let names: Vec<String> = (1..=terms).map(|j| format!("x{j}")).collect();
    let req = SelectRequest {
        response: parse_term("y").expect("a plain name"),
        candidates: parse_terms(&names.join(", ")).expect("plain names"),
        forced: Vec::new(),
        intercept: true,
        weights: None,
        exclude: Vec::new(),
    };
    (Table::from_numeric(columns), req)
}

/// The table as CSV, every number in its shortest round-trip form, so that
/// reading it back gives the same doubles.
pub fn to_csv(table: &Table) -> Vec<u8> {
    let mut s = String::new();
    let names: Vec<&str> = table.columns.iter().map(|c| c.name.as_str()).collect();
    s.push_str(&names.join(","));
    s.push('\n');
    let cols: Vec<&[f64]> = table
        .columns
        .iter()
        .map(|c| match &c.data {
            ColumnData::Numeric(v) => v.as_slice(),
            _ => unreachable!("bench tables are numeric"),
        })
        .collect();
    for i in 0..table.n_rows() {
        for (k, c) in cols.iter().enumerate() {
            if k > 0 {
                s.push(',');
            }
            let _ = write!(s, "{}", c[i]);
        }
        s.push('\n');
    }
    s.into_bytes()
}

fn write_csv(path: &str, bytes: &[u8]) -> Result<(), BenchError> {
    std::fs::write(path, bytes).map_err(|e| data(format!("Could not write \"{path}\": {e}.")))
}

/// The table the timed part starts from: as generated, or (with
/// `--through-read`) the CSV bytes to read inside the timed part.
enum Input {
    Table(Table),
    Csv(Vec<u8>),
}

fn prepare(table: Table, raw: &RawArgs) -> Result<Input, BenchError> {
    if raw.write_csv.is_none() && !raw.through_read {
        return Ok(Input::Table(table));
    }
    let csv = to_csv(&table);
    if let Some(path) = &raw.write_csv {
        write_csv(path, &csv)?;
    }
    Ok(if raw.through_read { Input::Csv(csv) } else { Input::Table(table) })
}

fn load(input: &Input) -> Result<std::borrow::Cow<'_, Table>, BenchError> {
    match input {
        Input::Table(t) => Ok(std::borrow::Cow::Borrowed(t)),
        Input::Csv(bytes) => read_table(bytes, &ReadOptions::default())
            .map(|l| std::borrow::Cow::Owned(l.table))
            .map_err(|e| data(format!("The generated CSV could not be read: {e}"))),
    }
}

/// Floating-point operations of Householder QR of an n × p matrix.
pub fn qr_flops(n: usize, p: usize) -> f64 {
    let (n, p) = (n as f64, p as f64);
    2.0 * n * p * p - 2.0 * p * p * p / 3.0
}

fn run_fit(raw: &RawArgs) -> Result<String, BenchError> {
    let rows = count("--rows", raw.rows.as_deref(), 3)?;
    let cols = count("--cols", raw.cols.as_deref(), 1)?;
    if rows <= cols {
        return Err(usage(format!("bench fit needs more rows than columns ({rows} rows, {cols} columns).")));
    }
    let seed = seed_of(raw)?;
    let threads = match raw.threads.as_deref() {
        None => 0,
        Some(t) => count("--threads", Some(t), 1)?,
    };
    let (table, spec) = fit_problem(rows, cols, seed);
    let input = prepare(table, raw)?;
    let start = Instant::now();
    let table = load(&input)?;
    let (path, fitted) = if raw.streaming {
        (streaming_fit(&table, &spec)?, None)
    } else {
        let mut options = FitOptions::default();
        options.lstsq.threads = threads;
        let fitted = fit(&table, &spec, &options).map_err(|e| data(e.to_string()))?;
        (format!("{:?}", fitted.solution.path), Some(fitted))
    };
    let seconds = start.elapsed().as_secs_f64();
    // The leverages are computed on first use (diagnostics, HC3), not by
    // the fit; timed apart.
    let leverage_seconds = fitted.map(|f| {
        let t = Instant::now();
        std::hint::black_box(f.solution.leverage());
        t.elapsed().as_secs_f64()
    });
    let flops = qr_flops(rows, cols);
    let gflops = flops / seconds / 1e9;
    if raw.json {
        Ok(format!(
            "{}\n",
            serde_json::json!({
                "rows": rows, "cols": cols, "seed": seed, "seconds": seconds, "flops": flops, "gflops": gflops,
                "solver_path": path, "through_read": raw.through_read, "leverage_seconds": leverage_seconds,
                "threads": if threads == 0 { plumbline::lstsq::rows::machine_threads() } else { threads },
            })
        ))
    } else {
        Ok(format!(
            "fit of {rows} rows x {cols} columns (seed {seed}{}): {seconds:.4} s, {flops:.4e} QR flops, {gflops:.3} GFLOP/s ({path} path){}\n",
            if raw.through_read { ", reading the CSV included" } else { "" },
            leverage_seconds.map_or(String::new(), |t| format!("; leverages on first use {t:.4} s"))
        ))
    }
}

/// The design and the bare streaming kernel (`lstsq::tsqr`, which
/// `model::fit` builds on): no bound, no inference, no leverages.
fn streaming_fit(table: &Table, spec: &ModelSpec) -> Result<String, BenchError> {
    use plumbline::lstsq::tsqr::{refine_tsqr, solve_lstsq_tsqr, TsqrOptions};
    let t0 = Instant::now();
    let design = plumbline::terms::build_design(table, spec).map_err(|e| data(e.to_string()))?;
    let x: Vec<&plumbline::lstsq::DdColumn> = design.columns.iter().map(|c| &c.values).collect();
    let t1 = Instant::now();
    let mut sol = solve_lstsq_tsqr::<f64>(&x, &design.response, &TsqrOptions::default());
    let t2 = Instant::now();
    refine_tsqr::<f64>(&x, &design.response, &mut sol, 2);
    let t3 = Instant::now();
    let s = |a: Instant, b: Instant| (b - a).as_secs_f64();
    Ok(format!(
        "Streaming (rank {}; design {:.3} s, factor {:.3} s, two refinement passes {:.3} s)",
        sol.rank,
        s(t0, t1),
        s(t1, t2),
        s(t2, t3)
    ))
}

fn run_select(raw: &RawArgs) -> Result<String, BenchError> {
    let terms = count("--terms", raw.terms.as_deref(), 1)?;
    let rows = count("--rows", raw.rows.as_deref(), 3)?;
    if rows <= terms + 1 {
        return Err(usage(format!("bench select needs more rows than coefficients ({rows} rows, {} coefficients).", terms + 1)));
    }
    let seed = seed_of(raw)?;
    let effects = match raw.effects.as_deref() {
        None => terms / 2,
        Some(e) => count("--effects", Some(e), 0)?.min(terms),
    };
    let (table, req) = select_problem(rows, terms, effects, seed);
    let input = prepare(table, raw)?;
    let start = Instant::now();
    let table = load(&input)?;
    let report = select(&table, &req, &SelectOptions::default(), None).map_err(|e| data(e.to_string()))?;
    let seconds = start.elapsed().as_secs_f64();
    let (examined, complete) = (report.models_examined, report.exhaustive_complete);
    if raw.json {
        Ok(format!(
            "{}\n",
            serde_json::json!({
                "terms": terms, "rows": rows, "effects": effects, "seed": seed, "seconds": seconds, "models_examined": examined,
                "models_per_second": examined as f64 / seconds, "exhaustive_complete": complete,
                "through_read": raw.through_read,
            })
        ))
    } else {
        Ok(format!(
            "select over {terms} terms, {rows} rows (seed {seed}{}): {seconds:.4} s, {examined} models examined ({:.0} per second){}\n",
            if raw.through_read { ", reading the CSV included" } else { "" },
            examined as f64 / seconds,
            if complete { "" } else { "; the exhaustive search did not finish" }
        ))
    }
}

fn run_read(raw: &RawArgs) -> Result<String, BenchError> {
    let file = raw.file.as_deref().ok_or_else(|| usage(format!("bench read needs a file.\n\n{USAGE}")))?;
    let bytes = std::fs::read(file).map_err(|e| data(format!("Could not open \"{file}\": {e}.")))?;
    let start = Instant::now();
    let loaded = read_table(&bytes, &ReadOptions::default()).map_err(|e| data(format!("Could not read \"{file}\": {e}")))?;
    let seconds = start.elapsed().as_secs_f64();
    let (rows, cols) = (loaded.table.n_rows(), loaded.table.columns.len());
    let mb = bytes.len() as f64 / 1e6;
    if raw.json {
        Ok(format!(
            "{}\n",
            serde_json::json!({ "file": file, "bytes": bytes.len(), "rows": rows, "cols": cols, "seconds": seconds, "mb_per_second": mb / seconds })
        ))
    } else {
        Ok(format!("read {file} ({mb:.1} MB, {rows} rows x {cols} columns): {seconds:.3} s, {:.1} MB/s\n", mb / seconds))
    }
}
