//! The CSV reader on files of many regions (the reader, parser and consumer
//! stages all at work): every value equals the standard library's parse of
//! its text, one thread and all threads give the same samples, and an error
//! far into the file names its line.

use holdfast::import::{open, ChannelMap, ImportOptions};
use holdfast::model::{ChannelKey, Collected};
use std::fmt::Write as _;
use std::path::Path;

const PHASES: [ChannelKey; 6] = ChannelKey::PHASES;
const COLUMNS: [&str; 6] = ["va", "vb", "vc", "ia", "ib", "ic"];

/// About 14 MB (several 4 MB regions): numbers written in every way a
/// recorder might (decimals from 0 to 9, signs, exponents, spaces, quotes,
/// integers, CRLF on some lines), so that lines take the fast path and the
/// general one in the same region. Returns the file and the text of every
/// value (time first) per line.
fn write_mixed(dir: &Path, rows: usize) -> (std::path::PathBuf, Vec<[String; 7]>) {
    let mut text = String::from("t,va,vb,vc,ia,ib,ic\n");
    let mut fields = Vec::with_capacity(rows);
    let mut x: u64 = 0x853C_49E6_748F_EA9B;
    let mut next = move || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        x
    };
    for k in 0..rows {
        let t = format!("{:.6}", k as f64 * 1e-4);
        let mut row: [String; 7] = Default::default();
        row[0] = t;
        for field in row.iter_mut().skip(1) {
            let r = next();
            let mag = (r >> 12) % 10_000_000;
            let sign = if r & 1 == 1 { "-" } else { "" };
            *field = match (r >> 4) % 12 {
                0 => format!("{sign}{mag}"),
                1 => format!("{sign}{}e-3", mag % 100_000),
                2 => format!("{sign}{}.{:05}E+1", mag % 1000, mag % 100_000),
                3 => format!("+{}.{:03}", mag % 10_000, mag % 1000),
                d => {
                    let places = (d - 3) as u32; // 1..=8
                    let frac = (r >> 40) % 10u64.pow(places);
                    format!("{sign}{}.{frac:0w$}", mag % 100_000, w = places as usize)
                }
            };
        }
        let style = next() % 40;
        for (i, f) in row.iter().enumerate() {
            if i > 0 {
                text.push(',');
            }
            match style {
                0 if i == 3 => write!(text, " {f} ").unwrap(),
                1 if i == 5 => write!(text, "\"{f}\"").unwrap(),
                _ => text.push_str(f),
            }
        }
        text.push_str(if style == 2 { "\r\n" } else { "\n" });
        fields.push(row);
    }
    let path = dir.join("mixed.csv");
    std::fs::write(&path, text).unwrap();
    (path, fields)
}

fn map() -> ChannelMap {
    ChannelMap {
        keys: PHASES
            .iter()
            .zip(COLUMNS)
            .map(|(k, c)| (*k, c.to_string()))
            .collect(),
        voltage_unit: Some(holdfast::model::VoltageUnit::V),
        current_unit: Some(holdfast::model::CurrentUnit::A),
        ..Default::default()
    }
}

fn read(path: &Path, threads: usize) -> Result<Collected, String> {
    let opts = ImportOptions {
        threads,
        ..Default::default()
    };
    let src = open(path, &map(), &opts).map_err(|e| e.to_string())?;
    let mut c = Collected::default();
    src.stream(&mut c).map_err(|e| e.to_string())?;
    Ok(c)
}

#[test]
fn every_value_of_a_many_region_file_is_the_standard_librarys() {
    let dir = tempfile::tempdir().unwrap();
    let rows = 200_000;
    let (path, fields) = write_mixed(dir.path(), rows);
    assert!(std::fs::metadata(&path).unwrap().len() > 12 << 20);
    let all = read(&path, 0).unwrap();
    let one = read(&path, 1).unwrap();
    assert_eq!(all.time.len(), rows);
    // Oracle: Rust's `str::parse::<f64>` (correctly rounded) of each text;
    // times start at zero (the first is 0.000000 here).
    for (k, row) in fields.iter().enumerate() {
        let t: f64 = row[0].parse().unwrap();
        assert_eq!(all.time[k].to_bits(), t.to_bits(), "time, line {}", k + 2);
        for (c, key) in PHASES.iter().enumerate() {
            let want: f64 = row[c + 1].parse().unwrap();
            let got = all.channel(*key).unwrap()[k];
            assert_eq!(
                got.to_bits(),
                want.to_bits(),
                "{} on line {}: {}",
                COLUMNS[c],
                k + 2,
                row[c + 1]
            );
        }
    }
    // One thread (every stage in turn, none started): the same samples,
    // bit for bit.
    assert_eq!(one.time.len(), rows);
    assert!(all
        .time
        .iter()
        .zip(&one.time)
        .all(|(x, y)| x.to_bits() == y.to_bits()));
    for key in PHASES {
        let (a, b) = (all.channel(key).unwrap(), one.channel(key).unwrap());
        assert!(a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits()));
    }
}

#[test]
fn an_error_in_a_late_region_names_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let (path, _) = write_mixed(dir.path(), 200_000);
    let text = std::fs::read_to_string(&path).unwrap();
    // Line 180 001 (about 12.6 MB in, in the fourth region) gets a bad value.
    let bad_line = 180_001;
    let mut lines: Vec<&str> = text.lines().collect();
    let broken = lines[bad_line - 1].replacen(',', ",12.5x", 1);
    lines[bad_line - 1] = &broken;
    std::fs::write(&path, lines.join("\n") + "\n").unwrap();
    for threads in [0, 1] {
        let err = read(&path, threads).unwrap_err();
        // path:line:column, the column's name and the text.
        assert!(
            err.contains(&format!("mixed.csv:{bad_line}:2: 'va'")),
            "{err}"
        );
        assert!(err.contains("12.5x"), "{err}");
    }
}
