#![no_main]
//! Rule sets: YAML, parameters and their substitution, value checks.
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = holdfast::rules::load_text(
            std::path::Path::new("fuzz.yaml"),
            text,
            String::new(),
            &Default::default(),
        );
    }
});
