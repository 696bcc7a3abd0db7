#![no_main]
//! COMTRADE data files (.dat) in the four data types: the first byte picks
//! the type of a fixed, valid configuration, the rest is the data.
#[path = "common.rs"]
mod common;
use libfuzzer_sys::fuzz_target;

fn cfg(data_type: &str) -> String {
    format!(
        "Fuzz,1,2013\n7,6A,1D\n1,va,A,,V,1,0,0,-32767,32767,1,1,P\n2,vb,B,,V,1,0,0,-32767,32767,1,1,P\n3,vc,C,,V,1,0,0,-32767,32767,1,1,P\n4,ia,A,,A,1,0,0,-32767,32767,1,1,P\n5,ib,B,,A,1,0,0,-32767,32767,1,1,P\n6,ic,C,,A,1,0,0,-32767,32767,1,1,P\n1,status,,,0\n50\n1\n4000,0\n01/01/2026,00:00:00.000000\n01/01/2026,00:00:00.000000\n{data_type}\n1\n0,0\n0,0\n"
    )
}

fuzz_target!(|data: &[u8]| {
    let Some((&pick, rest)) = data.split_first() else {
        return;
    };
    let ty = ["ASCII", "BINARY", "BINARY32", "FLOAT32"][pick as usize % 4];
    let c = common::scratch("d.cfg");
    let d = common::scratch("d.dat");
    if std::fs::write(&c, cfg(ty)).is_ok() && std::fs::write(&d, rest).is_ok() {
        common::import_and_analyse(&c);
    }
});
