//! Bytes through the workbook reader and `list_sheets`; a table that reads
//! must also profile without a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use plumbline::profile::{profile_table, ProfileOptions};
use plumbline::read::workbook::read_workbook;
use plumbline::read::{list_sheets, Format, ReadOptions};

fuzz_target!(|data: &[u8]| {
    match read_workbook(data, &ReadOptions::default(), Format::Workbook) {
        Ok(loaded) => {
            profile_table(&loaded.table, &ProfileOptions::default());
        }
        Err(e) => assert!(!e.to_string().is_empty(), "empty error message for {e:?}"),
    }
    if let Err(e) = list_sheets(data) {
        assert!(!e.to_string().is_empty(), "empty error message for {e:?}");
    }
});
