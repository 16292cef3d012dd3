//! Exports through the CLI: the results workbook read back by two
//! independent readers (calamine here, openpyxl through
//! tests/reference/workbook_readback.py) to the values the JSON results
//! hold; tab-separated text; the report's decision trail; session files
//! that reproduce the fit and explain data that do not match; and the
//! session format's round trip as a property.

mod common;

use calamine::{Data, Reader, Xlsx};
use common::{data_dir, json_f64, run_cli};
use plumbline::export::session::{ModelChoice, SelectionChoice, Session, SessionSource, FORMAT, VERSION};
use proptest::prelude::*;
use serde_json::Value;
use std::path::PathBuf;

const RESPONSE: &str = "log(y)";
const TERMS: &str = "a, b, cat(g), a*b";
const CANDIDATES: &str = "a, b, cat(g), a*b, a^2";

fn train() -> String {
    data_dir().join("reference/predict/logresp_train.csv").display().to_string()
}

fn new_cases() -> String {
    data_dir().join("reference/predict/logresp_new.csv").display().to_string()
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("plumbline-exports-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

fn cli_json(args: &[&str]) -> Value {
    let (code, out, err) = run_cli(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{args:?}: {e}\n{out}"))
}

fn model_args<'a>(command: &'a str, file: &'a str) -> Vec<&'a str> {
    vec![command, file, "--response", RESPONSE, "--terms", TERMS]
}

/// The results of each command as JSON, and the workbook made from them.
struct Made {
    fit: Value,
    check: Value,
    select: Value,
    predict: Value,
    xlsx: PathBuf,
}

fn made() -> Made {
    let (t, n) = (train(), new_cases());
    let xlsx = tmp("results.xlsx");
    let x = xlsx.display().to_string();
    let mut args = model_args("export", &t);
    args.extend(["--new", &n, "--candidates", CANDIDATES, "--xlsx", &x]);
    let (code, _, err) = run_cli(&args);
    assert_eq!(code, 0, "{err}");
    let mut fit = model_args("fit", &t);
    fit.push("--json");
    let mut check = model_args("check", &t);
    check.push("--json");
    let mut predict = model_args("predict", &t);
    predict.extend(["--new", &n, "--json"]);
    Made {
        fit: cli_json(&fit),
        check: cli_json(&check),
        select: cli_json(&["select", &t, "--response", RESPONSE, "--candidates", CANDIDATES, "--json"]),
        predict: cli_json(&predict),
        xlsx,
    }
}

/// The expected cells of a sheet: JSON values of `list`'s items under `keys`.
fn expected(result: &Value, list: &str, keys: &[&str]) -> Vec<Vec<Value>> {
    result[list]
        .as_array()
        .unwrap()
        .iter()
        .map(|item| keys.iter().map(|k| k.split('.').fold(item.clone(), |v, p| v.get(p).cloned().unwrap_or(Value::Null))).collect())
        .collect()
}

/// Compares a read-back cell with a JSON value: numbers exactly (same
/// double), missing as empty, text as text.
fn same(sheet: &str, row: usize, key: &str, got: &Value, want: &Value) {
    match want {
        Value::Number(_) => {
            let g = got.as_f64().unwrap_or_else(|| panic!("{sheet} row {row} {key}: {got} is not a number"));
            assert_eq!(g.to_bits(), json_f64(want).to_bits(), "{sheet} row {row} {key}: {g} against {want}");
        }
        Value::Null => assert!(got.is_null() || got == "", "{sheet} row {row} {key}: {got} should be empty"),
        Value::Bool(b) => assert!(got == &Value::Bool(*b) || got.as_f64() == Some(f64::from(u8::from(*b))), "{sheet} row {row} {key}: {got}"),
        Value::String(s) => assert_eq!(got.as_str(), Some(s.as_str()), "{sheet} row {row} {key}"),
        Value::Array(a) if a.is_empty() && key == "terms" => assert_eq!(got.as_str(), Some("(intercept only)"), "{sheet} row {row}"),
        Value::Array(a) if a.is_empty() => assert!(got.is_null() || got == "", "{sheet} row {row} {key}: {got} should be empty"),
        Value::Array(a) => {
            let text: Vec<String> = a.iter().map(|x| x.as_str().map_or_else(|| x.to_string(), str::to_string)).collect();
            assert_eq!(got.as_str(), Some(text.join(" + ").as_str()), "{sheet} row {row} {key}");
        }
        Value::Object(_) => panic!("objects are not cells"),
    }
}

const SHEETS: [(&str, &str, &[&str]); 4] = [
    ("Coefficients", "coefficients", &["term", "estimate", "std_error", "t", "p_value", "ci_low", "ci_high", "standardized", "aliased"]),
    (
        "Candidates",
        "comparison",
        &["terms", "k", "rss", "r_squared", "adj_r_squared", "aic", "bic", "cp", "cv_rmse", "cv_mae", "press", "loo_rmse", "stability", "wins"],
    ),
    ("Rows", "rows", &["row", "fitted", "residual", "standardized", "studentized", "leverage", "cooks_distance", "dffits"]),
    (
        "Predictions",
        "predictions",
        &[
            "row", "estimate", "ci_low", "ci_high", "pi_low", "pi_high", "original.estimate", "original.ci_low", "original.ci_high",
            "original.pi_low", "original.pi_high", "leverage", "extrapolation", "extrapolation_reasons", "problem",
        ],
    ),
];

fn source<'a>(m: &'a Made, sheet: &str) -> &'a Value {
    match sheet {
        "Coefficients" => &m.fit,
        "Candidates" => &m.select,
        "Rows" => &m.check,
        _ => &m.predict,
    }
}

/// Checks every sheet's body against the JSON results.
fn check_sheets(m: &Made, read: &dyn Fn(&str) -> Vec<Vec<Value>>) {
    for (sheet, list, keys) in SHEETS {
        let cells = read(sheet);
        let want = expected(source(m, sheet), list, keys);
        assert_eq!(cells.len(), want.len() + 1, "{sheet}: rows");
        for (i, row) in want.iter().enumerate() {
            for (j, w) in row.iter().enumerate() {
                let got = cells[i + 1].get(j).cloned().unwrap_or(Value::Null);
                same(sheet, i + 2, keys[j], &got, w);
            }
        }
    }
}

#[test]
fn the_workbook_reads_back_with_calamine_to_the_json_values() {
    let m = made();
    let mut book: Xlsx<_> = calamine::open_workbook(&m.xlsx).unwrap();
    assert_eq!(book.sheet_names(), ["Model", "Coefficients", "Candidates", "Rows", "Predictions"]);
    let mut ranges = std::collections::BTreeMap::new();
    for s in book.sheet_names() {
        ranges.insert(s.clone(), book.worksheet_range(&s).unwrap());
    }
    let read = |sheet: &str| -> Vec<Vec<Value>> {
        ranges[sheet]
            .rows()
            .map(|r| {
                r.iter()
                    .map(|c| match c {
                        Data::Float(v) => serde_json::json!(*v),
                        Data::Int(v) => serde_json::json!(*v as f64),
                        Data::String(s) => Value::String(s.clone()),
                        Data::Bool(b) => Value::Bool(*b),
                        _ => Value::Null,
                    })
                    .collect()
            })
            .collect()
    };
    check_sheets(&m, &read);
    // The summary sheet holds the fit figures as numbers.
    let model = read("Model");
    let r2 = model.iter().find(|r| r[0] == "R²").unwrap();
    assert_eq!(r2[1].as_f64().unwrap().to_bits(), json_f64(&m.fit["r_squared"]).to_bits());
    assert!(model.iter().any(|r| r[0] == "caution"), "the cautions are in the summary");
}

#[test]
fn the_workbook_reads_back_with_openpyxl_to_the_json_values() {
    let m = made();
    let script = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/workbook_readback.py");
    let out = std::process::Command::new("python3").arg(&script).arg(&m.xlsx).output().expect("python3 runs (tests/setup.sh installs it with openpyxl)");
    assert!(out.status.success(), "openpyxl could not read the workbook: {}", String::from_utf8_lossy(&out.stderr));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let sheets = v["sheets"].clone();
    let read = |sheet: &str| -> Vec<Vec<Value>> {
        sheets[sheet].as_array().unwrap().iter().map(|r| r.as_array().unwrap().clone()).collect()
    };
    check_sheets(&m, &read);
    // Numbers carry number formats, not the General default.
    let formats = &v["formats"]["Coefficients"];
    assert_eq!(formats[0], "General", "the term column is text");
    for j in 1..7 {
        let f = formats[j].as_str().unwrap();
        assert!(f.contains('0'), "coefficient column {j} has format {f}");
    }
}

#[test]
fn tab_separated_text_keeps_every_digit() {
    let t = train();
    let mut args = model_args("export", &t);
    args.extend(["--tsv", "coefficients"]);
    let (code, out, err) = run_cli(&args);
    assert_eq!(code, 0, "{err}");
    let mut fit = model_args("fit", &t);
    fit.push("--json");
    let fit = cli_json(&fit);
    let lines: Vec<&str> = out.lines().collect();
    let coefs = fit["coefficients"].as_array().unwrap();
    assert_eq!(lines.len(), coefs.len() + 1);
    for (line, c) in lines[1..].iter().zip(coefs) {
        let cells: Vec<&str> = line.split('\t').collect();
        assert_eq!(cells.len(), 9);
        assert_eq!(cells[0], c["term"].as_str().unwrap());
        assert_eq!(cells[1].parse::<f64>().unwrap().to_bits(), json_f64(&c["estimate"]).to_bits());
        assert_eq!(cells[4].parse::<f64>().unwrap().to_bits(), json_f64(&c["p_value"]).to_bits());
    }
    let (code, _, err) = run_cli(&["export", &t, "--response", RESPONSE, "--terms", TERMS, "--tsv", "candidates"]);
    assert_eq!(code, 2);
    assert!(err.contains("--candidates"), "{err}");
}

#[test]
fn the_report_records_the_decision_trail() {
    let t = train();
    let html_path = tmp("report.html");
    let h = html_path.display().to_string();
    let mut args = model_args("report", &t);
    args.extend(["--candidates", CANDIDATES, "--out", &h, "--exclude-rows", "3"]);
    let (code, out, err) = run_cli(&args);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("figures"), "{out}");
    let html = std::fs::read_to_string(&html_path).unwrap();
    let sha = plumbline::export::sha256_hex(&std::fs::read(&t).unwrap());
    assert!(html.contains(&sha), "the file's SHA-256");
    assert!(html.contains("logresp_train.csv"));
    assert!(html.contains("left out by the user") || html.contains("Rows left out by choice: 3"), "the excluded row");
    assert!(html.contains("is treated as a category"), "the coding");
    assert!(html.contains("Candidate models compared") && html.contains("Mallows"), "the candidates");
    assert!(html.contains("Removing terms by p-value alone"), "the p-value route");
    for c in plumbline::schema::CAUTIONS {
        assert!(html.contains(&c.replace('\'', "&#39;")), "caution: {c}");
    }
    let today = &plumbline::export::now_utc()[..10];
    assert!(html.contains(today), "the date");
    // Every figure is an embedded PNG, and nothing is fetched.
    let pngs = html.matches("src=\"data:image/png;base64,iVBORw0KGgo").count();
    assert!(pngs >= 5, "{pngs} figures");
    assert!(!html.contains("<script") && !html.contains("http://") && !html.contains("https://"));
}

#[test]
fn a_session_file_reproduces_every_number() {
    let t = train();
    let s_path = tmp("session.json");
    let s = s_path.display().to_string();
    let mut args = model_args("export", &t);
    args.extend(["--session", &s, "--exclude-rows", "4,9", "--level", "0.9"]);
    let (code, _, err) = run_cli(&args);
    assert_eq!(code, 0, "{err}");
    let mut fit = model_args("fit", &t);
    fit.extend(["--exclude-rows", "4,9", "--level", "0.9", "--json"]);
    let want = cli_json(&fit);
    let got = cli_json(&["reopen", &s, &t, "--json"]);
    assert_eq!(got["mismatches"], serde_json::json!([]));
    assert_eq!(got["fit"], want, "the reopened fit equals the original, number for number");

    // With the data kept inside, the session needs no data file.
    let sd = tmp("session-data.json").display().to_string();
    let mut args = model_args("export", &t);
    args.extend(["--session", &sd, "--with-data", "--exclude-rows", "4,9", "--level", "0.9"]);
    assert_eq!(run_cli(&args).0, 0);
    assert_eq!(cli_json(&["reopen", &sd, "--json"])["fit"], want);
    // Without it, the message says what to give.
    let (code, _, err) = run_cli(&["reopen", &s]);
    assert_eq!(code, 2);
    assert!(err.contains("give the data file"), "{err}");
}

#[test]
fn a_session_and_data_that_do_not_match_are_explained() {
    let t = train();
    let s = tmp("session-mismatch.json").display().to_string();
    let mut args = model_args("export", &t);
    args.extend(["--session", &s]);
    assert_eq!(run_cli(&args).0, 0);
    // Other data without a column the model uses: refused, naming it.
    let other = tmp("other.csv");
    std::fs::write(&other, "y,a,g\n1,2,mill\n2,3,farm\n3,1,mill\n4,5,farm\n").unwrap();
    let (code, _, err) = run_cli(&["reopen", &s, &other.display().to_string()]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("fingerprints differ") && err.contains("\"b\""), "{err}");
    // The same columns with a row more: fitted, with the differences noted.
    let mut text = std::fs::read_to_string(&t).unwrap();
    let last = text.lines().last().unwrap().to_string();
    text.push_str(&last);
    text.push('\n');
    let more = tmp("more.csv");
    std::fs::write(&more, text).unwrap();
    let got = cli_json(&["reopen", &s, &more.display().to_string(), "--json"]);
    let notes: Vec<&str> = got["mismatches"].as_array().unwrap().iter().map(|m| m["message"].as_str().unwrap()).collect();
    assert!(notes.iter().any(|n| n.contains("fingerprints differ")), "{notes:?}");
    assert!(notes.iter().any(|n| n.contains("rows; the saved data had")), "{notes:?}");
    assert!(got["fit"]["coefficients"].is_array());
    // A file that is not a session, and one from a later version.
    let bad = tmp("bad.json");
    std::fs::write(&bad, "{\"format\": \"something else\"}").unwrap();
    let (code, _, err) = run_cli(&["reopen", &bad.display().to_string(), &t]);
    assert_eq!(code, 1);
    assert!(err.contains("not a plumbline session"), "{err}");
    let later = std::fs::read_to_string(&s).unwrap().replace("\"version\": 1", "\"version\": 99");
    std::fs::write(&bad, later).unwrap();
    let (code, _, err) = run_cli(&["reopen", &bad.display().to_string(), &t]);
    assert_eq!(code, 1);
    assert!(err.contains("version 99"), "{err}");
}

#[test]
fn export_commands_refuse_what_they_cannot_do() {
    let t = train();
    let cases: [(&[&str], i32, &str); 5] = [
        (&["export", &t, "--response", RESPONSE, "--terms", TERMS], 2, "say what to write"),
        (&["export", &t, "--response", RESPONSE, "--terms", TERMS, "--tsv", "coefficients", "--with-data"], 2, "goes with --session"),
        (&["formula", &t, "--response", RESPONSE, "--terms", TERMS], 2, "--cells"),
        (&["formula", &t, "--response", RESPONSE, "--terms", TERMS, "--cells", "a=B,b=C,g=9"], 1, "not a spreadsheet column"),
        (&["fit", &t, "--response", RESPONSE, "--terms", TERMS, "--xlsx", "x.xlsx"], 2, "does not take --xlsx"),
    ];
    for (args, want, text) in cases {
        let (code, _, err) = run_cli(args);
        assert_eq!(code, want, "{args:?}: {err}");
        assert!(err.contains(text), "{args:?}: {err}");
    }
    let (code, _, err) = run_cli(&["formula", &t, "--response", RESPONSE, "--terms", TERMS, "--cells", "a=B,b=C"]);
    assert_eq!(code, 1);
    assert!(err.contains("\"g\""), "names the input without a column: {err}");
}

fn text() -> impl Strategy<Value = String> {
    "[ -~éλ²\\n\"\\\\]{0,12}"
}

fn session() -> impl Strategy<Value = Session> {
    let source = (text(), "[0-9a-f]{64}", proptest::option::of(text()), proptest::option::of(1usize..50), any::<bool>(), proptest::collection::vec(text(), 0..5), 0usize..10_000)
        .prop_map(|(file_name, sha256, sheet, header_row, paste, columns, rows)| SessionSource { file_name, sha256, sheet, header_row, paste, columns, rows });
    let model = proptest::option::of(
        (text(), text(), any::<bool>(), proptest::option::of(text()), proptest::collection::vec(1usize..100_000, 0..4), 0.0001f64..0.9999, any::<bool>())
            .prop_map(|(response, terms, intercept, weights, exclude_rows, level, hc3)| ModelChoice { response, terms, intercept, weights, exclude_rows, level, hc3 }),
    );
    let selection = proptest::option::of(
        (text(), text(), text(), text(), 2usize..20, any::<u64>(), proptest::option::of(1usize..500))
            .prop_map(|(candidates, force, by, search, folds, seed, stability)| SelectionChoice { candidates, force, by, search, folds, seed, stability }),
    );
    let names = proptest::collection::btree_map(text(), proptest::collection::btree_map(text(), text(), 0..3), 0..3);
    (text(), source, proptest::collection::btree_map(text(), text(), 0..4), names, proptest::collection::vec(text(), 0..3), model, selection, proptest::option::of("[A-Za-z0-9+/]{0,40}"))
        .prop_map(|(saved, source, kinds, level_names, excluded_columns, model, selection, data)| Session {
            format: FORMAT.into(),
            version: VERSION,
            saved,
            source,
            kinds,
            level_names,
            excluded_columns,
            model,
            selection,
            data,
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Writing a session and reading it back gives the same session.
    #[test]
    fn session_files_round_trip(s in session()) {
        let back = Session::from_json(&s.to_json()).unwrap();
        prop_assert_eq!(back, s);
    }
}
