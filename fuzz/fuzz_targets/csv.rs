#![no_main]
//! CSV recordings: header, delimiters, decimal comma, timestamps, rows.
#[path = "common.rs"]
mod common;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let p = common::scratch("r.csv");
    if std::fs::write(&p, data).is_ok() {
        common::import_and_analyse(&p);
    }
});
