//! Delimited text (and anything else) through `read_table` and `read_paste`;
//! a table that reads must also profile without a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use plumbline::profile::{profile_table, ProfileOptions};
use plumbline::read::{read_paste, read_table, ReadOptions};

fuzz_target!(|data: &[u8]| {
    let options = ReadOptions::default();
    match read_table(data, &options) {
        Ok(loaded) => {
            profile_table(&loaded.table, &ProfileOptions::default());
        }
        Err(e) => assert!(!e.to_string().is_empty(), "empty error message for {e:?}"),
    }
    let text = String::from_utf8_lossy(data);
    match read_paste(&text, &options) {
        Ok(loaded) => {
            profile_table(&loaded.table, &ProfileOptions::default());
        }
        Err(e) => assert!(!e.to_string().is_empty(), "empty error message for {e:?}"),
    }
});
