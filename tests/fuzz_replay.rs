//! Replays the fuzzing corpora (`tests/fuzz/corpus/<target>/`) and the saved
//! regressions (`tests/fuzz/regressions/`) through the same calls and checks
//! as the fuzz targets, on the stable toolchain, so that `cargo test` catches
//! a reader, the profile or the term parser failing on any input the fuzzer
//! has kept. A failure is a panic (also one the library catches itself, which
//! libFuzzer counts as a crash and which aborts in wasm), a runaway
//! allocation, a term whose text does not read back, or an `Err` with an
//! empty message. Each corpus must hold at least one file.
//!
//! The targets themselves live in `tests/fuzz/` (see its README).

use plumbline::profile::{profile_table, ProfileOptions};
use plumbline::read::workbook::read_workbook;
use plumbline::read::{list_sheets, read_paste, read_table, Format, ReadOptions};
use plumbline::terms::{parse_term, parse_terms};
use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::{Cell, RefCell};
use std::io::Write;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Mutex, Once};

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

thread_local! {
    /// True while this thread replays an input.
    static REPLAYING: Cell<bool> = const { Cell::new(false) };
    /// The panics of the input being replayed, caught or not.
    static PANICS: RefCell<Vec<String>> = const { RefCell::new(Vec::new()) };
}

/// Records every panic during a replay, including one that the reader
/// catches itself: under libFuzzer any panic is a crash, and in wasm a
/// panic aborts whoever catches it. Other panics go to the usual hook.
fn install_panic_hook() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if REPLAYING.with(|r| r.get()) {
                let payload = info
                    .payload()
                    .downcast_ref::<String>()
                    .cloned()
                    .or_else(|| info.payload().downcast_ref::<&str>().map(|s| s.to_string()))
                    .unwrap_or_else(|| "a panic".into());
                let at = info.location().map(|l| format!(" at {}:{}", l.file(), l.line())).unwrap_or_default();
                PANICS.with(|p| p.borrow_mut().push(format!("{payload}{at}")));
            } else {
                previous(info)
            }
        }));
    });
}

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

/// The `session` target: a session that opens writes back to an equal one;
/// one that does not is refused with a message.
fn session(data: &[u8]) -> Result<(), String> {
    use plumbline::export::session::Session;
    let Ok(text) = std::str::from_utf8(data) else { return Ok(()) };
    match Session::from_json(text) {
        Ok(s) => {
            match Session::from_json(&s.to_json()) {
                Ok(back) if back == s => {}
                Ok(_) => return Err("the session reads back different".into()),
                Err(e) => return Err(format!("the session does not read back: {e}")),
            }
            if let Err(e) = s.data_bytes() {
                check_message("data_bytes", e.to_string())?;
            }
            if let Err(e) = s.model_spec() {
                check_message("model_spec", e.to_string())?;
            }
            Ok(())
        }
        Err(e) => check_message("Session::from_json", e.to_string()),
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
        install_panic_hook();
        REPLAYING.with(|r| r.set(true));
        let outcome = catch_unwind(AssertUnwindSafe(|| target(&data)));
        REPLAYING.with(|r| r.set(false));
        let panics = PANICS.with(|p| std::mem::take(&mut *p.borrow_mut()));
        let mut current = CURRENT.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(i) = current.iter().position(|f| *f == shown) {
            current.remove(i);
        }
        drop(current);
        // Overflow checks exist only in debug builds: the release and wasm
        // builds wrap and the reader returns an error (checked by running the
        // release CLI on the file). A caught overflow panic in a debug build
        // is therefore accepted; any other caught panic is a failure, since
        // in wasm a panic aborts.
        let panics: Vec<String> = panics
            .into_iter()
            .filter(|p| !(cfg!(debug_assertions) && p.contains("with overflow")))
            .collect();
        match outcome {
            Ok(Ok(())) if panics.is_empty() => {}
            Ok(Ok(())) => failures
                .push(format!("{shown} panicked, and the panic was caught inside the library: {}", panics.join("; "))),
            Ok(Err(why)) => failures.push(format!("{shown}: {why}")),
            Err(_) => failures.push(format!("{shown} panicked: {}", panics.join("; "))),
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

#[test]
fn session_corpus_replays() {
    assert_none(replay(&corpus("session"), "session", session));
}

const ONE_FILE: &str = "PLUMBLINE_FUZZ_REPLAY_FILE";

/// The targets a regression replays through: `<target>-<short-name>`
/// through that target, any other name through all four.
fn targets_for(name: &str) -> Vec<(&'static str, Target)> {
    let all: [(&'static str, Target); 4] =
        [("read_text", read_text), ("read_workbook", read_workbook_target), ("terms", terms), ("session", session)];
    let own: Vec<_> = all.iter().copied().filter(|(t, _)| name.starts_with(&format!("{t}-"))).collect();
    if own.is_empty() {
        all.to_vec()
    } else {
        own
    }
}

/// Each regression replays in a child process (this test binary, running
/// only [`replay_one_file`]), so that one that aborts, as a runaway
/// allocation does, is reported by name and the others still run.
#[test]
fn regressions_replay() {
    let files = files(&fuzz_dir().join("regressions"));
    let exe = std::env::current_exe().expect("the test binary");
    let mut failures = Vec::new();
    for path in &files {
        let out = std::process::Command::new(&exe)
            .args(["--exact", "replay_one_file", "--nocapture", "--test-threads=1"])
            .env(ONE_FILE, path)
            .output()
            .expect("run the test binary");
        if !out.status.success() {
            let text = String::from_utf8_lossy(&out.stderr).into_owned() + &String::from_utf8_lossy(&out.stdout);
            let lines: Vec<&str> = text
                .lines()
                .filter(|l| {
                    l.contains("fuzz_replay:")
                        || l.contains(".rs:")
                        || l.starts_with("memory allocation")
                        || l.contains("failed")
                        || l.contains("panicked")
                })
                .filter(|l| !l.trim_start().starts_with("at ") && !l.starts_with("test "))
                .collect();
            failures.push(format!("{} ({}):\n    {}", path.display(), out.status, lines.join("\n    ")));
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} regression(s) failed:\n{}",
        failures.len(),
        files.len(),
        failures.join("\n")
    );
}

/// Replays the one file named by `PLUMBLINE_FUZZ_REPLAY_FILE`, for
/// [`regressions_replay`]; without it, does nothing.
#[test]
fn replay_one_file() {
    let Some(path) = std::env::var_os(ONE_FILE).map(PathBuf::from) else { return };
    let name = path.file_name().unwrap().to_string_lossy().into_owned();
    let mut failures = Vec::new();
    for (t, f) in targets_for(&name) {
        failures.extend(replay(std::slice::from_ref(&path), t, f));
    }
    assert_none(failures);
}
