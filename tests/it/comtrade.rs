//! COMTRADE reading and writing: an independent reader, round trips, a
//! hand-written file from the standard's text, malformed files, and the same
//! verdicts as CSV.

use crate::common::{self, holdfast};
use holdfast::import::comtrade::cfg::{DataType, Revision};
use holdfast::import::{open, ChannelMap, ImportOptions};
use holdfast::model::{ChannelKey, Collected};
use holdfast::synth::comtrade::{ct_ratio, vt_ratio, write_comtrade};
use holdfast::synth::{generate, SynthSpec};
use predicates::prelude::*;
use serde_json::Value;
use std::path::{Path, PathBuf};

fn fixtures() -> PathBuf {
    common::fixture("comtrade")
}

fn read(path: &Path, map: &ChannelMap) -> (holdfast::model::RecordingInfo, Collected) {
    let src = open(path, map, &ImportOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let mut c = Collected::default();
    let info = src.stream(&mut c).unwrap_or_else(|e| panic!("{e}"));
    (info, c)
}

const PHASES: [ChannelKey; 6] = ChannelKey::PHASES;

#[test]
fn same_values_as_the_independent_reader() {
    // Reference: PyPI `comtrade` 0.2.0 (tests/fixtures/comtrade/make.sh
    // regenerates reference.json; .ci/run checks it reproduces). That reader
    // returns a·x + b as stored (no primary/secondary conversion) as 32-bit
    // floats, and time as 32-bit floats.
    let reference: Value =
        serde_json::from_str(&std::fs::read_to_string(fixtures().join("reference.json")).unwrap())
            .unwrap();
    assert_eq!(reference["reader"], "comtrade 0.2.0 (PyPI)");
    let files = reference["files"].as_object().unwrap();
    assert_eq!(files.len(), 11);
    let map = ChannelMap {
        keys: vec![(ChannelKey::Status, "status".into())],
        ..Default::default()
    };
    for (name, r) in files {
        let (info, c) = read(&fixtures().join(name), &map);
        assert_eq!(info.samples, r["total_samples"].as_u64().unwrap(), "{name}");
        let every = r["every"].as_u64().unwrap() as usize;
        for (k, t) in r["time"].as_array().unwrap().iter().enumerate() {
            let t = t.as_f64().unwrap();
            assert!(
                (c.time[k * every] - t).abs() <= 1e-7 * t.max(1.0),
                "{name}: time {k}"
            );
        }
        for (ch, key) in PHASES.iter().enumerate() {
            let meta = &r["analog"][ch];
            // Primary values: secondary ones × primary/secondary (PS = S).
            let ratio = if meta["ps"].as_str().unwrap().eq_ignore_ascii_case("s") {
                meta["primary"].as_f64().unwrap() / meta["secondary"].as_f64().unwrap()
            } else {
                1.0
            };
            let ours = c.channel(*key).unwrap();
            for (k, v) in r["values"][ch].as_array().unwrap().iter().enumerate() {
                let want = v.as_f64().unwrap() * ratio;
                let got = ours[k * every];
                // f32 precision of the reference: 2^-23 relative, plus one
                // float32 step of the channel's full scale for values near 0.
                let tol =
                    want.abs() * 2.4e-7 + meta["a"].as_f64().unwrap().abs() * ratio * 1e-6 + 1e-9;
                assert!(
                    (got - want).abs() <= tol,
                    "{name} {}: sample {}: {got} vs {want}",
                    key.name(),
                    k * every
                );
            }
        }
        let status = c.channel(ChannelKey::Status).unwrap();
        for (k, v) in r["status_values"][0].as_array().unwrap().iter().enumerate() {
            assert_eq!(status[k * every], v.as_f64().unwrap(), "{name}: status {k}");
        }
    }
}

#[test]
fn every_type_and_revision_round_trips_within_quantisation() {
    let mut spec = SynthSpec::example();
    spec.sample_rate_hz = 4000.0;
    spec.duration_s = 0.3;
    spec.fault_start_s = 0.1;
    spec.fault_duration_s = 0.1;
    spec.residual_pu = [0.2, 0.5, 0.9];
    spec.noise_pu = 0.01;
    spec.status_column = true;
    spec.trip_at_s = Some(0.25);
    let mut source: Vec<[f64; 7]> = Vec::new();
    generate(&spec, |_, _, v| {
        source.push(*v);
        Ok(())
    })
    .unwrap();
    let dir = tempfile::tempdir().unwrap();
    let combos = [
        (Revision::R1991, DataType::Ascii, "cfg"),
        (Revision::R1991, DataType::Binary, "cfg"),
        (Revision::R1999, DataType::Ascii, "cfg"),
        (Revision::R1999, DataType::Binary, "cfg"),
        (Revision::R2013, DataType::Ascii, "cfg"),
        (Revision::R2013, DataType::Binary, "cfg"),
        (Revision::R2013, DataType::Binary32, "cfg"),
        (Revision::R2013, DataType::Float32, "cfg"),
        (Revision::R2013, DataType::Ascii, "cff"),
        (Revision::R2013, DataType::Binary, "cff"),
        (Revision::R2013, DataType::Binary32, "cff"),
        (Revision::R2013, DataType::Float32, "cff"),
    ];
    let map = ChannelMap {
        keys: vec![(ChannelKey::Status, "status".into())],
        ..Default::default()
    };
    for (rev, dt, ext) in combos {
        let p = dir
            .path()
            .join(format!("rt-{}-{}.{ext}", rev.year(), dt.name()));
        write_comtrade(&spec, &p, dt, rev).unwrap();
        let (info, c) = read(&p, &map);
        assert_eq!(info.samples as usize, source.len());
        assert!((info.sample_rate_hz - 4000.0).abs() < 1e-9);
        for (ch, key) in PHASES.iter().enumerate() {
            let got = c.channel(*key).unwrap();
            let peak = source.iter().map(|v| v[ch].abs()).fold(0.0, f64::max);
            // Quantisation: half a step of a = peak/full-scale (integer types),
            // or the float32 rounding of the stored secondary value.
            let step = match dt {
                DataType::Binary => peak / 32_000.0,
                DataType::Binary32 => peak / 2.0e9,
                DataType::Ascii => peak / 1.0e6,
                DataType::Float32 => 0.0,
            };
            for (k, v) in source.iter().enumerate() {
                let tol = step / 2.0 * 1.000001 + v[ch].abs() * 1.2e-7 + 1e-9;
                assert!(
                    (got[k] - v[ch]).abs() <= tol,
                    "{p:?} {} sample {k}: {} vs {}",
                    key.name(),
                    got[k],
                    v[ch]
                );
            }
        }
        let st = c.channel(ChannelKey::Status).unwrap();
        assert!(
            source.iter().zip(st).all(|(v, s)| v[6] == *s),
            "{p:?} status"
        );
        // Secondary storage from 1999 on: the reader says it converted.
        let converted = info
            .header
            .iter()
            .any(|(k, v)| k == "values" && v.contains("converted from secondary"));
        assert_eq!(converted, rev != Revision::R1991, "{p:?}");
    }
}

#[test]
fn instrument_transformer_ratios_follow_the_ratings() {
    // 0.69 kV, 4.2 MVA: In = 4.2e6/(√3·690) = 3514.3 A (by hand), the next
    // standard primary current is 4000 A (IEC 61869-2 series 10, 12.5, 15,
    // 20, 25, 30, 40, 50, 60, 75 × 10^n, from memory); VT 690 V : 100 V.
    assert_eq!(vt_ratio(0.69), (690.0, 100.0));
    assert_eq!(ct_ratio(3514.3), (4000.0, 1.0));
    // 33 kV, 50 MVA: In = 874.8 A → 1000 A; exactly on a step stays there.
    assert_eq!(vt_ratio(33.0), (33000.0, 100.0));
    assert_eq!(ct_ratio(874.8), (1000.0, 1.0));
    assert_eq!(ct_ratio(750.0), (750.0, 1.0));
    assert_eq!(ct_ratio(12.6), (15.0, 1.0));
    // A written file states them, and the neutral station and device names.
    let dir = tempfile::tempdir().unwrap();
    let cfg = crate::common::synth(
        dir.path(),
        "r.cfg",
        &[
            "--rated-kv",
            "33",
            "--rated-mva",
            "50",
            "--sample-rate",
            "2000",
            "--duration",
            "0.3",
        ],
        &[],
    );
    let text = std::fs::read_to_string(&cfg).unwrap();
    let first = text.lines().next().unwrap();
    assert_eq!(first, "SYNTHETIC STATION,HOLDFAST SYNTH,2013");
    let va = text.lines().find(|l| l.starts_with("1,VA,")).unwrap();
    assert!(va.ends_with(",33000,100,S"), "{va}");
    let ia = text.lines().find(|l| l.starts_with("4,IA,")).unwrap();
    assert!(ia.ends_with(",1000,1,S"), "{ia}");
}

#[test]
fn a_per_unit_mapping_overrides_the_unit_the_channel_states() {
    // A per-unit recording whose voltage channels are labelled kV: with the
    // mapping's voltage unit pu the values stay per unit (the importer said
    // so in a note, but once handed the samples over as volts, so the
    // analysis divided them by the voltage base a second time). Check
    // value: the generator's own residual voltage, 0.2 pu.
    let mut spec = SynthSpec::example();
    spec.voltage_unit = holdfast::model::VoltageUnit::Pu;
    spec.current_unit = holdfast::model::CurrentUnit::Pu;
    spec.duration_s = 1.0;
    spec.fault_start_s = 0.5;
    spec.fault_duration_s = 0.2;
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("pu-labelled-kv.cfg");
    write_comtrade(&spec, &p, DataType::Ascii, Revision::R2013).unwrap();
    let cfg = std::fs::read_to_string(&p).unwrap();
    let relabelled: Vec<String> = cfg
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if (2..5).contains(&i) {
                l.replacen(",pu,", ",kV,", 1)
            } else {
                l.to_string()
            }
        })
        .collect();
    std::fs::write(&p, relabelled.join("\n") + "\n").unwrap();
    let out = holdfast()
        .arg("inspect")
        .arg(&p)
        .args([
            "--voltage-unit",
            "pu",
            "--rated-kv",
            "0.69",
            "--rated-mva",
            "4.2",
            "--json",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let ch = &v["recording"]["channels"][0];
    assert_eq!(ch["unit"], "kV (P)");
    assert_eq!(ch["canonical_unit"], "pu");
    let d = &v["disturbances"][0];
    assert!(
        (d["extreme_pu"].as_f64().unwrap() - 0.2).abs() < 0.01,
        "{d}"
    );
    assert!((d["start_s"].as_f64().unwrap() - 0.5).abs() < 0.01, "{d}");
    let notes = v["recording"]["notes"].to_string();
    assert!(notes.contains("the mapping's unit pu is used"), "{notes}");
}

/// A configuration and data written by hand from IEEE C37.111-2013 (= IEC
/// 60255-24:2013) clause 7 (configuration) and clause 8 (data), with values
/// that follow from the scaling formula a·x + b and the PS flag.
fn hand_written_cfg(ft: &str) -> String {
    [
        "HAND STATION,REC 1,2013", // 7.4.2 station, device, rev_year
        "4,3A,1D",                 // 7.4.3 TT = ##A + ##D
        "1,UA,A,LINE 1,kV,0.5,1,0,-32767,32767,20,0.1,S", // 7.4.4 analog: a = 0.5, b = 1, secondary, ratio 20/0.1
        "2,UB,B,LINE 1,kV,0.5,1,0,-32767,32767,20,0.1,S",
        "3,IA ,,Line123, A,0.1138916015625,0.05694580078125,0,-32768,32767,933,1,s", // scaling of a published example reader's sample
        "1,CB,,LINE 1,1",             // 7.4.5 digital: Dn, ch_id, ph, ccbm, y
        "50",                         // 7.4.6 line frequency
        "1",                          // 7.4.7 nrates
        "1000,3",                     //       samp, endsamp
        "14/03/2026,10:00:00.000000", // 7.4.8 first sample
        "14/03/2026,10:00:00.001000", //       trigger
        ft,                           // 7.4.9 file type
        "1",                          // 7.4.10 timemult
        "-1h,-1h",                    // 7.4.11 time_code, local_code
        "A,0",                        // 7.4.12 tmq_code, leapsec
    ]
    .join("\r\n")
        + "\r\n"
}

#[test]
fn hand_written_file_from_the_standard() {
    let dir = tempfile::tempdir().unwrap();
    // Raw values per sample: UA, UB, IA, CB.
    let raw: [(i16, i16, i16, u16); 3] = [(10, -4, -83, 1), (0, 2, 68, 1), (-32767, 32767, 7, 0)];
    // Expected primary values (clause 7.4.4: value = a·x + b; S values × primary/secondary):
    // UA: (0.5·10 + 1) kV · 200 = 1200 kV = 1.2e6 V; IA: (0.11389·(−83) + 0.05695) A · 933.
    let ua = |x: i16| (0.5 * x as f64 + 1.0) * 200.0 * 1e3;
    let ia = |x: i16| (0.1138916015625 * x as f64 + 0.05694580078125) * 933.0;
    assert!((ia(-83) - (-9.39605712890625 * 933.0)).abs() < 1e-9); // −8766.5213 A
    let map = ChannelMap {
        keys: vec![
            (ChannelKey::Va, "UA".into()),
            (ChannelKey::Vb, "UB".into()),
            (ChannelKey::Vc, "UB".into()),
            (ChannelKey::Ia, "IA".into()),
            (ChannelKey::Ib, "IA".into()),
            (ChannelKey::Ic, "IA".into()),
            (ChannelKey::Status, "CB".into()),
        ],
        ..Default::default()
    };
    // ASCII (clause 8.2): n, timestamp, analog values, status values.
    std::fs::write(dir.path().join("h.cfg"), hand_written_cfg("ASCII")).unwrap();
    let dat: String = raw
        .iter()
        .enumerate()
        .map(|(k, r)| format!("{},{},{},{},{},{}\r\n", k + 1, k * 1000, r.0, r.1, r.2, r.3))
        .collect();
    std::fs::write(dir.path().join("h.dat"), dat).unwrap();
    // BINARY (clause 8.3): u32 n, u32 timestamp, i16 per analog, u16 per 16 status bits.
    std::fs::write(dir.path().join("b.cfg"), hand_written_cfg("BINARY")).unwrap();
    let mut bin = Vec::new();
    for (k, r) in raw.iter().enumerate() {
        bin.extend_from_slice(&(k as u32 + 1).to_le_bytes());
        bin.extend_from_slice(&(k as u32 * 1000).to_le_bytes());
        for x in [r.0, r.1, r.2] {
            bin.extend_from_slice(&x.to_le_bytes());
        }
        bin.extend_from_slice(&r.3.to_le_bytes());
    }
    std::fs::write(dir.path().join("b.dat"), bin).unwrap();
    for name in ["h.cfg", "b.cfg"] {
        let (info, c) = read(&dir.path().join(name), &map);
        assert_eq!(info.samples, 3);
        assert_eq!(c.time, vec![0.0, 0.001, 0.002]);
        for (k, r) in raw.iter().enumerate() {
            assert!(
                (c.channel(ChannelKey::Va).unwrap()[k] - ua(r.0)).abs() < 1e-6,
                "{name} UA {k}"
            );
            assert!(
                (c.channel(ChannelKey::Ia).unwrap()[k] - ia(r.2)).abs() < 1e-9,
                "{name} IA {k}"
            );
            assert_eq!(c.channel(ChannelKey::Status).unwrap()[k], r.3 as f64);
        }
        let h = |k: &str| {
            info.header
                .iter()
                .find(|(a, _)| a == k)
                .map(|(_, v)| v.clone())
                .unwrap()
        };
        assert_eq!(h("station"), "HAND STATION");
        assert_eq!(h("revision"), "2013");
        assert_eq!(h("time quality"), "A, leap second 0");
        assert!(h("trigger").ends_with("00.001000"));
    }
}

/// A one-off check of `p` (inspect tolerates a truncated file and shows
/// what is there; a check refuses it).
fn inspect(p: &Path) -> assert_cmd::assert::Assert {
    let rules = p.with_file_name("rules.yaml");
    std::fs::write(
        &rules,
        "id: t\ntitle: t\nsource: s\nchecks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [1, 0.85]] }\n",
    )
    .unwrap();
    holdfast()
        .args(["check", "--rules"])
        .arg(&rules)
        .arg("--out")
        .arg(p.with_file_name("pack"))
        .arg(p)
        .args([
            "--rated-kv",
            "0.69",
            "--rated-mva",
            "4.2",
            "--frequency",
            "50",
        ])
        .args([
            "--map", "va=UA", "--map", "vb=UB", "--map", "vc=UB", "--map", "ia=IA", "--map",
            "ib=IA", "--map", "ic=IA",
        ])
        .assert()
}

#[test]
fn malformed_files_exit_2_and_name_the_place() {
    let dir = tempfile::tempdir().unwrap();
    let good = hand_written_cfg("BINARY");
    let put = |name: &str, cfg: &str, dat: Option<&[u8]>| {
        std::fs::write(dir.path().join(format!("{name}.cfg")), cfg).unwrap();
        if let Some(d) = dat {
            std::fs::write(dir.path().join(format!("{name}.dat")), d).unwrap();
        }
        dir.path().join(format!("{name}.cfg"))
    };
    let record = |n: u32| {
        let mut b = Vec::new();
        b.extend_from_slice(&n.to_le_bytes());
        b.extend_from_slice(&0u32.to_le_bytes());
        b.extend_from_slice(&[0u8; 8]);
        b
    };
    let three: Vec<u8> = (1..=3).flat_map(record).collect();
    // Wrong channel count: TT ≠ A + D.
    let p = put("count", &good.replace("4,3A,1D", "5,3A,1D"), Some(&three));
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("count.cfg:2").and(predicate::str::contains("TT = 5")));
    // Fewer channel lines than announced: the next line is read as a channel.
    let p = put("lines", &good.replace("4,3A,1D", "5,4A,1D"), Some(&three));
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("lines.cfg:6"));
    // Missing data file.
    let p = put("nodat", &good, None);
    inspect(&p).code(2).stderr(
        predicate::str::contains("nodat.dat").and(predicate::str::contains("does not exist")),
    );
    // Truncated binary record: the third record lacks 5 bytes.
    let p = put("trunc", &good, Some(&three[..three.len() - 5]));
    inspect(&p).code(2).stderr(
        predicate::str::contains("trunc.dat")
            .and(predicate::str::contains("sample 3 is truncated")),
    );
    // Fewer records than endsamp.
    let p = put("short", &good, Some(&three[..16 * 2]));
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("ends after 2 samples"));
    // Bad number on line N of the configuration.
    let p = put(
        "num",
        &good.replace(
            "0.5,1,0,-32767,32767,20,0.1,S\r\n2,",
            "0.5x,1,0,-32767,32767,20,0.1,S\r\n2,",
        ),
        Some(&three),
    );
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("num.cfg:3:6").and(predicate::str::contains("'0.5x'")));
    // Bad number on line N of ASCII data.
    let p = put(
        "adat",
        &hand_written_cfg("ASCII"),
        Some(b"1,0,1,2,3,1\r\n2,1000,1,zz,3,1\r\n3,2000,1,2,3,1\r\n"),
    );
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("adat.dat:2:4").and(predicate::str::contains("'zz'")));
    // Unknown file type.
    let p = put(
        "ft",
        &good.replace("\r\nBINARY\r\n", "\r\nBINARY64\r\n"),
        Some(&three),
    );
    inspect(&p)
        .code(2)
        .stderr(predicate::str::contains("ft.cfg:12").and(predicate::str::contains("BINARY64")));
    // Missing value sentinel in a used channel (BINARY 0x8000).
    let mut gap = three.clone();
    gap[16 + 8..16 + 10].copy_from_slice(&i16::MIN.to_le_bytes());
    let p = put("gap", &good, Some(&gap));
    inspect(&p).code(2).stderr(predicate::str::contains(
        "sample 2 of channel 'UA' is missing",
    ));
}

#[test]
fn same_verdicts_from_csv_and_every_comtrade_type() {
    let dir = tempfile::tempdir().unwrap();
    let mut spec = SynthSpec::example();
    spec.sample_rate_hz = 5000.0;
    spec.duration_s = 2.0;
    spec.fault_start_s = 0.5;
    spec.fault_duration_s = 0.3;
    spec.residual_pu = [0.3; 3];
    spec.iq_tau_s = 0.005;
    spec.noise_pu = 0.002;
    let csv = dir.path().join("rec.csv");
    let mut buf = Vec::new();
    holdfast::synth::write_csv(&spec, &mut buf).unwrap();
    std::fs::write(&csv, buf).unwrap();
    let mut files = vec![csv];
    for dt in [
        DataType::Ascii,
        DataType::Binary,
        DataType::Binary32,
        DataType::Float32,
    ] {
        let p = dir.path().join(format!("rec-{}.cfg", dt.name()));
        write_comtrade(&spec, &p, dt, Revision::R2013).unwrap();
        files.push(p);
    }
    let rules = Path::new(env!("CARGO_MANIFEST_DIR")).join("rules/eu-rfg-ppm-type-d-example.yaml");
    let mut verdicts = Vec::new();
    for f in &files {
        let out = dir
            .path()
            .join(format!("out-{}", f.file_name().unwrap().to_string_lossy()));
        holdfast()
            .args(["check", "--rules"])
            .arg(&rules)
            .args([
                "--rated-kv",
                "0.69",
                "--rated-mva",
                "4.2",
                "--frequency",
                "50",
                "--out",
            ])
            .arg(&out)
            .arg(f)
            .assert()
            .code(0);
        let r: Value =
            serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap())
                .unwrap();
        let v: Vec<(String, String)> = r["tests"][0]["checks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| {
                (
                    c["id"].as_str().unwrap().to_string(),
                    c["verdict"].as_str().unwrap().to_string(),
                )
            })
            .collect();
        verdicts.push(v);
    }
    for v in &verdicts[1..] {
        assert_eq!(v, &verdicts[0]);
    }
    assert!(verdicts[0]
        .iter()
        .any(|(id, v)| id == "lvrt" && v == "pass"));
}

#[test]
fn errors_of_binary_records_come_in_record_order() {
    // Values are decoded and scaled a block at a time: the first problem in
    // record order is still the one reported (a missing value before a
    // sample-number jump, and the reverse; of two channels missing in one
    // record, the first mapped).
    let dir = tempfile::tempdir().unwrap();
    let cfg = hand_written_cfg("BINARY").replace("1000,3\r\n", "1000,40\r\n");
    let record = |n: u32, ua: i16, ub: i16| {
        let mut r = Vec::new();
        r.extend_from_slice(&n.to_le_bytes());
        r.extend_from_slice(&((n - 1) * 1000).to_le_bytes());
        for x in [ua, ub, 7i16] {
            r.extend_from_slice(&x.to_le_bytes());
        }
        r.extend_from_slice(&1u16.to_le_bytes());
        r
    };
    let case = |name: &str, edit: &dyn Fn(u32) -> (u32, i16, i16), want: &str| {
        let dat: Vec<u8> = (1..=40)
            .flat_map(|n| {
                let (m, ua, ub) = edit(n);
                record(m, ua, ub)
            })
            .collect();
        std::fs::write(dir.path().join(format!("{name}.cfg")), &cfg).unwrap();
        std::fs::write(dir.path().join(format!("{name}.dat")), dat).unwrap();
        inspect(&dir.path().join(format!("{name}.cfg")))
            .code(2)
            .stderr(predicate::str::contains(want));
    };
    let missing = i16::MIN;
    case(
        "gap-first",
        &|n| match n {
            10 => (n, 5, missing),
            20.. => (n + 5, 5, 5),
            _ => (n, 5, 5),
        },
        "sample 10 of channel 'UB' is missing",
    );
    case(
        "jump-first",
        &|n| match n {
            10.. => (n + 89, if n == 20 { missing } else { 5 }, 5),
            _ => (n, 5, 5),
        },
        "sample number jumps from 9 to 99 at sample 10",
    );
    case(
        "two-missing",
        &|n| {
            if n == 12 {
                (n, missing, missing)
            } else {
                (n, 5, 5)
            }
        },
        "sample 12 of channel 'UA' is missing",
    );
}

/// Keeps the sample times, the values of Va and the status, and where the
/// breaks fall.
#[derive(Default)]
struct Timed {
    time: Vec<f64>,
    va: Vec<f64>,
    status: Vec<f64>,
    gaps: Vec<usize>,
}

impl holdfast::model::FrameSink for Timed {
    fn block(&mut self, b: &holdfast::model::Block<'_>) {
        self.time.extend_from_slice(b.time);
        self.va
            .extend_from_slice(b.channels[ChannelKey::Va.index()].unwrap());
        self.status
            .extend_from_slice(b.channels[ChannelKey::Status.index()].unwrap());
    }
    fn gap(&mut self) {
        self.gaps.push(self.time.len());
    }
}

#[test]
fn several_rates_are_timed_by_their_segments_across_blocks() {
    // Three rate segments (IEEE C37.111-2013 7.4.7: samp, endsamp counted
    // over the whole file) long enough to span blocks of records: 20 000
    // samples at 1000 Hz, 30 at 50 Hz (skipped: one DFT needs one rate),
    // 20 000 at 1000 Hz. Sample n of segment k lies at the sum of the
    // earlier segments' counts / rates plus (n − its first) / its rate.
    let dir = tempfile::tempdir().unwrap();
    let cfg = hand_written_cfg("BINARY").replace(
        "1\r\n1000,3\r\n",
        "3\r\n1000,20000\r\n50,20030\r\n1000,40030\r\n",
    );
    let raw_ua = |n: u32| ((n * 7) % 20_001) as i16 - 10_000;
    let mut bin = Vec::new();
    for n in 1..=40_030u32 {
        bin.extend_from_slice(&n.to_le_bytes());
        bin.extend_from_slice(&0u32.to_le_bytes());
        for x in [raw_ua(n), 3, -5] {
            bin.extend_from_slice(&x.to_le_bytes());
        }
        bin.extend_from_slice(&((n % 3 == 0) as u16).to_le_bytes());
    }
    std::fs::write(dir.path().join("m.cfg"), cfg).unwrap();
    std::fs::write(dir.path().join("m.dat"), bin).unwrap();
    let map = ChannelMap {
        keys: vec![
            (ChannelKey::Va, "UA".into()),
            (ChannelKey::Vb, "UB".into()),
            (ChannelKey::Vc, "UB".into()),
            (ChannelKey::Status, "CB".into()),
        ],
        ..Default::default()
    };
    let analysed: Vec<u32> = (1..=20_000).chain(20_031..=40_030).collect();
    let time = |n: u32| {
        if n <= 20_000 {
            (n - 1) as f64 / 1000.0
        } else {
            20_000.0 / 1000.0 + 30.0 / 50.0 + (n - 20_031) as f64 / 1000.0
        }
    };
    // Clause 7.4.4: a·x + b, secondary values × primary/secondary.
    let ua = |x: i16| (0.5 * x as f64 + 1.0) * 200.0 * 1e3;
    for threads in [1, 0] {
        let opts = ImportOptions {
            threads,
            ..Default::default()
        };
        let src = open(&dir.path().join("m.cfg"), &map, &opts).unwrap_or_else(|e| panic!("{e}"));
        let mut got = Timed::default();
        let info = src.stream(&mut got).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(info.samples, 40_030, "threads {threads}");
        assert_eq!(got.gaps, vec![20_000], "threads {threads}");
        assert_eq!(got.time.len(), analysed.len(), "threads {threads}");
        for (k, n) in analysed.iter().enumerate() {
            assert!(
                (got.time[k] - time(*n)).abs() < 1e-9,
                "threads {threads}: sample {n} at {} s, not {} s",
                got.time[k],
                time(*n)
            );
            assert!((got.va[k] - ua(raw_ua(*n))).abs() < 1e-6, "sample {n}");
            assert_eq!(got.status[k], (n % 3 == 0) as u8 as f64, "sample {n}");
        }
    }
    // A sample-number jump deep in the second block is still found where
    // it is.
    let mut bin = std::fs::read(dir.path().join("m.dat")).unwrap();
    let rec = 8 + 3 * 2 + 2;
    let at = 30_000 - 1;
    bin[at * rec..at * rec + 4].copy_from_slice(&31_000u32.to_le_bytes());
    std::fs::write(dir.path().join("m.dat"), bin).unwrap();
    inspect(&dir.path().join("m.cfg"))
        .code(2)
        .stderr(predicate::str::contains(
            "sample number jumps from 29999 to 31000 at sample 30000",
        ));
}
