#![no_main]
//! Test plans: YAML, channel blocks, expectations, paths.
#[path = "common.rs"]
mod common;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let p = common::scratch("plan.yaml");
    if std::fs::write(&p, data).is_ok() {
        let _ = holdfast::plan::load(&p);
    }
});
