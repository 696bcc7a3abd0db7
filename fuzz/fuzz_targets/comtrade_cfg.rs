#![no_main]
//! COMTRADE configuration files (.cfg) with a fixed small ASCII data file.
#[path = "common.rs"]
mod common;
use libfuzzer_sys::fuzz_target;

const DAT: &[u8] = b"1,0,100,-50,-50,10,-5,-5,1\n2,250,90,-40,-50,9,-4,-5,1\n3,500,80,-45,-35,8,-4,-4,0\n";

fuzz_target!(|data: &[u8]| {
    let cfg = common::scratch("r.cfg");
    let dat = common::scratch("r.dat");
    if std::fs::write(&cfg, data).is_ok() && std::fs::write(&dat, DAT).is_ok() {
        common::import_and_analyse(&cfg);
    }
});
