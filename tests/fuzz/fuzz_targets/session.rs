//! Session files through `Session::from_json`: any text either opens or is
//! refused with a message; a session that opens writes back to text that
//! opens to an equal session, and its kept data and model are checked
//! without a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use plumbline::export::session::Session;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    match Session::from_json(text) {
        Ok(s) => {
            let back = Session::from_json(&s.to_json()).unwrap_or_else(|e| panic!("a session from {text:?} does not read back: {e}"));
            assert_eq!(back, s, "a session from {text:?} reads back different");
            let _ = s.data_bytes();
            let _ = s.model_spec();
        }
        Err(e) => assert!(!e.to_string().is_empty(), "empty error message for {e:?}"),
    }
});
