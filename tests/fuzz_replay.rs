//! Replays the fuzzing corpora (`tests/fuzz/corpus/<target>/`) and the saved
//! regressions (`tests/fuzz/regressions/`) through the same calls as the
//! fuzz targets, on the stable toolchain, so that `cargo test` catches a
//! reader, the profile or the term parser panicking on any input the fuzzer
//! has kept. Every `Err` must also display a non-empty message.
//!
//! The targets themselves live in `tests/fuzz/` (see its README).

use plumbline::profile::{profile_table, ProfileOptions};
use plumbline::read::workbook::read_workbook;
use plumbline::read::{list_sheets, read_paste, read_table, Format, ReadOptions};
use plumbline::terms::{parse_term, parse_terms};
use std::alloc::{GlobalAlloc, Layout, System};
use std::io::Write;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

/// An allocator that refuses any single allocation of 1 GiB or more and
/// more than 2 GiB live in all, so that an input that makes a reader
/// allocate without bound (as libFuzzer's `-rss_limit_mb=2048` would flag)
/// stops this test with a message naming the file, not the machine.
/// No input of the corpora needs anything like that much.
struct Capped;

const MAX_ONE: usize = 1 << 30;
const MAX_LIVE: usize = 2 << 30;
static LIVE: AtomicUsize = AtomicUsize::new(0);
/// The file being replayed by each test, for the message.
static CURRENT: Mutex<Vec<String>> = Mutex::new(Vec::new());

unsafe impl GlobalAlloc for Capped {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        if !reserve(layout.size()) {
            return std::ptr::null_mut();
        }
        let p = System.alloc(layout);
        if p.is_null() {
            LIVE.fetch_sub(layout.size(), Ordering::Relaxed);
        }
        p
    }
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        if !reserve(layout.size()) {
            return std::ptr::null_mut();
        }
        let p = System.alloc_zeroed(layout);
        if p.is_null() {
            LIVE.fetch_sub(layout.size(), Ordering::Relaxed);
        }
        p
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        System.dealloc(ptr, layout);
        LIVE.fetch_sub(layout.size(), Ordering::Relaxed);
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        let old = layout.size();
        if new_size > old && !reserve_growth(new_size, new_size - old) {
            return std::ptr::null_mut();
        }
        let p = System.realloc(ptr, layout, new_size);
        if p.is_null() {
            if new_size > old {
                LIVE.fetch_sub(new_size - old, Ordering::Relaxed);
            }
        } else if new_size < old {
            LIVE.fetch_sub(old - new_size, Ordering::Relaxed);
        }
        p
    }
}

fn reserve(size: usize) -> bool {
    reserve_growth(size, size)
}

/// Counts `growth` more live bytes for an allocation of `size`, or says no.
fn reserve_growth(size: usize, growth: usize) -> bool {
    let live = LIVE.fetch_add(growth, Ordering::Relaxed) + growth;
    if size < MAX_ONE && live <= MAX_LIVE {
        return true;
    }
    LIVE.fetch_sub(growth, Ordering::Relaxed);
    // Written straight to stderr (not captured by the test harness, which
    // is lost when the process aborts); nothing here allocates.
    let mut err = std::io::stderr();
    let _ = writeln!(err, "\nfuzz_replay: refused an allocation of {size} bytes ({live} bytes live)");
    if let Ok(files) = CURRENT.try_lock() {
        for f in files.iter() {
            let _ = writeln!(err, "fuzz_replay: while replaying {f}");
        }
    }
    false
}

#[global_allocator]
static ALLOC: Capped = Capped;

fn fuzz_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("fuzz")
}

/// The files of a directory, sorted; hidden files and READMEs are skipped.
/// A missing directory has no files.
fn files(dir: &Path) -> Vec<PathBuf> {
    let Ok(entries) = std::fs::read_dir(dir) else { return Vec::new() };
    let mut out: Vec<PathBuf> = entries
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.is_file())
        .filter(|p| {
            let name = p.file_name().unwrap().to_string_lossy();
            !name.starts_with('.') && !name.eq_ignore_ascii_case("README.md")
        })
        .collect();
    out.sort();
    out
}

fn check_message(what: &str, message: String) -> Result<(), String> {
    if message.trim().is_empty() {
        Err(format!("{what} returned an error with an empty message"))
    } else {
        Ok(())
    }
}

/// The `read_text` target: `read_table` and `read_paste`, then the profile.
fn read_text(data: &[u8]) -> Result<(), String> {
    let options = ReadOptions::default();
    match read_table(data, &options) {
        Ok(loaded) => drop(profile_table(&loaded.table, &ProfileOptions::default())),
        Err(e) => check_message("read_table", e.to_string())?,
    }
    let text = String::from_utf8_lossy(data);
    match read_paste(&text, &options) {
        Ok(loaded) => drop(profile_table(&loaded.table, &ProfileOptions::default())),
        Err(e) => check_message("read_paste", e.to_string())?,
    }
    Ok(())
}

/// The `read_workbook` target: `read_workbook` and `list_sheets`, then the profile.
fn read_workbook_target(data: &[u8]) -> Result<(), String> {
    match read_workbook(data, &ReadOptions::default(), Format::Workbook) {
        Ok(loaded) => drop(profile_table(&loaded.table, &ProfileOptions::default())),
        Err(e) => check_message("read_workbook", e.to_string())?,
    }
    if let Err(e) = list_sheets(data) {
        check_message("list_sheets", e.to_string())?;
    }
    Ok(())
}

/// The `terms` target: every parsed term's text parses back to an equal term.
fn terms(data: &[u8]) -> Result<(), String> {
    let Ok(text) = std::str::from_utf8(data) else { return Ok(()) };
    match parse_terms(text) {
        Ok(terms) => {
            for term in &terms {
                let shown = term.to_string();
                match parse_terms(&shown) {
                    Ok(back) if back.len() == 1 && back[0] == *term => {}
                    Ok(back) => return Err(format!("{shown:?} parses back to {back:?}, not {term:?}")),
                    Err(e) => return Err(format!("{shown:?} does not parse back: {e}")),
                }
                match parse_term(&shown) {
                    Ok(single) if single == *term => {}
                    Ok(single) => return Err(format!("{shown:?} parses back as one term to {single:?}, not {term:?}")),
                    Err(e) => return Err(format!("{shown:?} does not parse back as one term: {e}")),
                }
            }
            Ok(())
        }
        Err(e) => check_message("parse_terms", e.to_string()),
    }
}

type Target = fn(&[u8]) -> Result<(), String>;

/// Runs `target` on each file under `catch_unwind`; returns the failures.
fn replay(paths: &[PathBuf], name: &str, target: Target) -> Vec<String> {
    let mut failures = Vec::new();
    for path in paths {
        let data = std::fs::read(path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
        let shown = format!("{} ({name})", path.display());
        CURRENT.lock().unwrap_or_else(|e| e.into_inner()).push(shown.clone());
        let outcome = catch_unwind(AssertUnwindSafe(|| target(&data)));
        let mut current = CURRENT.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(i) = current.iter().position(|f| *f == shown) {
            current.remove(i);
        }
        drop(current);
        match outcome {
            Ok(Ok(())) => {}
            Ok(Err(why)) => failures.push(format!("{} ({name}): {why}", path.display())),
            Err(panic) => {
                let why = panic
                    .downcast_ref::<String>()
                    .cloned()
                    .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
                    .unwrap_or_else(|| "a panic".into());
                failures.push(format!("{} ({name}) panicked: {why}", path.display()))
            }
        }
    }
    failures
}

fn corpus(target: &str) -> Vec<PathBuf> {
    let paths = files(&fuzz_dir().join("corpus").join(target));
    assert!(!paths.is_empty(), "the corpus tests/fuzz/corpus/{target} has no files to replay");
    paths
}

fn assert_none(failures: Vec<String>) {
    assert!(failures.is_empty(), "{} input(s) failed:\n{}", failures.len(), failures.join("\n"));
}

#[test]
fn read_text_corpus_replays() {
    assert_none(replay(&corpus("read_text"), "read_text", read_text));
}

#[test]
fn read_workbook_corpus_replays() {
    assert_none(replay(&corpus("read_workbook"), "read_workbook", read_workbook_target));
}

#[test]
fn terms_corpus_replays() {
    assert_none(replay(&corpus("terms"), "terms", terms));
}

/// A regression named `<target>-<short-name>` replays through its target;
/// one with another name goes through all three.
#[test]
fn regressions_replay() {
    let mut failures = Vec::new();
    let targets: [(&str, Target); 3] =
        [("read_text", read_text), ("read_workbook", read_workbook_target), ("terms", terms)];
    for path in files(&fuzz_dir().join("regressions")) {
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        let own: Vec<_> = targets.iter().filter(|(t, _)| name.starts_with(&format!("{t}-"))).collect();
        let run = if own.is_empty() { targets.iter().collect() } else { own };
        for (t, f) in run {
            failures.extend(replay(std::slice::from_ref(&path), t, *f));
        }
    }
    assert_none(failures);
}
