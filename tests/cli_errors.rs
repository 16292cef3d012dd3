//! Bad input through the CLI: each gets a plain message naming what is
//! wrong and where, a non-zero exit, and never a panic.

mod common;

use common::run_cli;
use std::path::PathBuf;

/// Writes `content` to a fresh file under target/ and returns its path.
fn file(name: &str, content: &[u8]) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("target").join("cli-error-inputs");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, content).unwrap();
    p
}

/// Runs the CLI and checks the exit code and that stderr holds each fragment.
fn check(args: &[&str], code: i32, fragments: &[&str]) {
    let (got, out, err) = run_cli(args);
    assert_eq!(got, code, "exit code of {args:?}; stderr: {err}");
    assert!(out.is_empty(), "nothing on stdout for a failure: {out}");
    for f in fragments {
        assert!(err.contains(f), "{args:?}: expected {f:?} in the message:\n{err}");
    }
    assert!(!err.contains("panicked") && !err.contains("internal error"), "{args:?} panicked:\n{err}");
}

const GOOD: &[u8] = b"energy,floor_area,zone,label\n10,100,1,a\n12,120,2,b\n15,160,1,c\n11,105,3,d\n19,210,2,e\n";

#[test]
fn unknown_column_suggests_the_nearest_names() {
    let f = file("good.csv", GOOD);
    check(&["fit", f.to_str().unwrap(), "--response", "energy", "--terms", "floor_aera"], 1, &[
        "There is no column called \"floor_aera\"",
        "Did you mean \"floor_area\"?",
    ]);
    check(&["fit", f.to_str().unwrap(), "--response", "enrgy", "--terms", "zone"], 1, &["\"enrgy\"", "\"energy\""]);
}

#[test]
fn non_numeric_cell_names_its_row_and_column() {
    let f = file("text-cell.csv", b"y,x\n1,2\n2,3\n3,three\n4,5\n");
    check(&["fit", f.to_str().unwrap(), "--response", "y", "--terms", "x"], 1, &["Column \"x\"", "row 4", "\"three\""]);
    let f = file("good2.csv", GOOD);
    check(&["fit", f.to_str().unwrap(), "--response", "energy", "--terms", "label"], 1, &["\"label\"", "row 2", "cat(label)"]);
}

#[test]
fn too_few_rows_for_the_parameters() {
    let f = file("small.csv", b"y,a,b\n1,2,3\n2,3,1\n3,5,2\n");
    check(&["fit", f.to_str().unwrap(), "--response", "y", "--terms", "a, b"], 1, &["3 coefficients", "only 3 complete rows", "at least 4"]);
}

#[test]
fn no_complete_rows() {
    let f = file("holes.csv", b"y,x\n1,\n,2\nNA,3\n");
    check(&["fit", f.to_str().unwrap(), "--response", "y", "--terms", "x"], 1, &["No row has a value in every column", "\"y\" is missing in 2 rows", "\"x\" is missing in 1 rows"]);
}

#[test]
fn log_of_non_positive_values_says_how_many_rows() {
    let f = file("nonpos.csv", b"y,x\n1,2\n2,0\n3,-4\n4,5\n5,6\n");
    check(&["fit", f.to_str().unwrap(), "--response", "y", "--terms", "log(x)"], 1, &["log() needs values above zero", "in 2 rows", "row 3"]);
    check(&["fit", f.to_str().unwrap(), "--response", "log(x)", "--terms", "y"], 1, &["in 2 rows"]);
}

#[test]
fn unreadable_files_and_command_lines() {
    let good = file("good3.csv", GOOD);
    let g = good.to_str().unwrap();
    check(&["fit", "no/such/file.csv", "--response", "y"], 1, &["Could not open \"no/such/file.csv\""]);
    check(&["fit", file("empty.csv", b"").to_str().unwrap(), "--response", "y"], 1, &["The file is empty"]);
    check(&["fit", file("ragged.csv", b"y,x\n1,2\n3\n").to_str().unwrap(), "--response", "y"], 1, &["Line 3 has 1 cells but the header has 2"]);
    check(&["fit", file("book.xlsx", b"PK\x03\x04").to_str().unwrap(), "--response", "y"], 1, &["looks like a workbook but could not be read"]);
    check(&["fit", g, "--response", "energy", "--terms", "floor_area +"], 2, &["In --terms", "character 12"]);
    check(&["fit", g, "--response", "energy", "--level", "95"], 2, &["--level must be a number between 0 and 1"]);
    check(&["fit", g, "--response", "energy", "--terms", "zone", "--frobnicate"], 2, &["There is no option \"--frobnicate\""]);
    check(&["fit", g, "--terms", "zone"], 2, &["fit needs --response"]);
    check(&["fit", g, "--response"], 2, &["--response needs a value"]);
    check(&["fit", g, "--response", "energy", "--no-intercept"], 1, &["nothing to estimate"]);
    check(&["fit", g, "--response", "energy", "--terms", "cat(zone, ref=9)"], 1, &["\"9\" is not a value of \"zone\"", "1, 2, 3"]);
    check(&["summarise", g], 2, &["There is no command \"summarise\""]);
}

#[test]
fn a_good_fit_still_succeeds_next_to_the_failures() {
    let f = file("good4.csv", GOOD);
    let (code, out, err) = run_cli(&["fit", f.to_str().unwrap(), "--response", "energy", "--terms", "floor_area, cat(zone)"]);
    assert_eq!(code, 0, "{err}");
    for heading in ["Model of energy", "Coefficients, with 95% confidence intervals", "zone=2", "Before you rely on this", "Every number at full precision"] {
        assert!(out.contains(heading), "missing {heading:?} in:\n{out}");
    }
}
