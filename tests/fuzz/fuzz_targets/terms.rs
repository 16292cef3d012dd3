//! Term text through `parse_terms`; the canonical text (`Display`) of every
//! parsed term must parse back to an equal term.
#![no_main]

use libfuzzer_sys::fuzz_target;
use plumbline::terms::{parse_term, parse_terms};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    match parse_terms(text) {
        Ok(terms) => {
            for term in &terms {
                let shown = term.to_string();
                let back = parse_terms(&shown)
                    .unwrap_or_else(|e| panic!("{shown:?} (from {text:?}) does not parse back: {e}"));
                assert_eq!(back.len(), 1, "{shown:?} (from {text:?}) parses back to {back:?}");
                assert_eq!(&back[0], term, "{shown:?} (from {text:?}) parses back to a different term");
                let single = parse_term(&shown)
                    .unwrap_or_else(|e| panic!("{shown:?} (from {text:?}) does not parse back as one term: {e}"));
                assert_eq!(&single, term, "{shown:?} (from {text:?}) parses back to a different term");
            }
        }
        Err(e) => assert!(!e.to_string().is_empty(), "empty error message for {e:?}"),
    }
});
