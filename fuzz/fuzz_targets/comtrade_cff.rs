#![no_main]
//! COMTRADE 2013 single files (.cff): sections, markers and data together.
#[path = "common.rs"]
mod common;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let p = common::scratch("r.cff");
    if std::fs::write(&p, data).is_ok() {
        common::import_and_analyse(&p);
    }
});
