//! Property (docs/rules.md): a duration table and its equivalent
//! envelope curve give the same verdict on monotone dips.
//!
//! Rows "below x_i for up to d_i" (continuous) are equivalent to the lower
//! envelope C(τ) = max{x_i : d_i ≤ τ} (a staircase of vertical steps) for a
//! dip that steps down at t0 below every row it reaches and then recovers
//! monotonically: the voltage has been below x_i for τ − 0 exactly while
//! V(t0 + τ) < x_i, so "r_i ≥ d_i" ⇔ "V(t0 + d_i) < x_i" ⇔ "V < C at τ = d_i".
//! The upper side is the mirror image. Checked on both verdict inputs: the
//! first time outside the zone, and the verdict given a trip time. The
//! staircase is the one the figures draw (`zone::table_boundary`).

use holdfast::rules::result::{CheckKind, CheckResult, Unit, Verdict};
use holdfast::rules::spec::{Bound, Cessation, Side, TableMode, TableRow};
use holdfast::rules::zone::{
    scan_envelope, scan_table, table_boundary, zone_verdict, ConnectionFacts, Timing,
};
use proptest::prelude::*;

fn verdict(scan: &holdfast::rules::zone::ZoneScan, trip: Option<f64>) -> Verdict {
    let conn = ConnectionFacts {
        trip_s: trip,
        tripped_before_s: None,
        trip_visible: true,
        cessations: vec![],
    };
    let r = CheckResult::new("x", CheckKind::Envelope, Some(0), Unit::Pu);
    let timing = Timing {
        t0: 1.0,
        end_s: Some(2.0),
        cycle_s: 0.02,
        recording_end_s: 10.0,
        needs_until_s: f64::NEG_INFINITY,
    };
    zone_verdict(r, scan, None, &conn, &timing, Cessation::Allowed).verdict
}

prop_compose! {
    fn rows_strategy(side: Side)(n in 1usize..5, seed in prop::collection::vec((0.0f64..1.0, 1u32..200), 5)) -> Vec<TableRow> {
        seed.into_iter().take(n).map(|(x, d)| TableRow {
            beyond_pu: match side { Side::Below => 0.05 + 0.85 * x, Side::Above => 1.1 + 0.3 * x },
            max_s: d as f64 * 0.01, // on the 1 ms grid
        }).collect()
    }
}

fn check(
    side: Side,
    rows: Vec<TableRow>,
    depth: f64,
    hold_ms: u32,
    rate: f64,
    trip_ms: Option<u32>,
) -> Result<(), TestCaseError> {
    // Time grid 1 ms; the dip starts at t0 = 1 s, holds `depth` for
    // `hold_ms`, then recovers linearly at `rate` pu/s (monotone).
    let dt = 0.001;
    let t: Vec<f64> = (0..4000).map(|k| k as f64 * dt).collect();
    let nominal = 1.0;
    let v: Vec<f64> = t
        .iter()
        .enumerate()
        .map(|(k, _)| {
            if k < 1000 {
                return nominal;
            }
            let since = (k - 1000) as f64 * dt;
            let hold = hold_ms as f64 * dt;
            let dev = (depth - nominal) * (1.0 - ((since - hold).max(0.0) * rate).min(1.0));
            nominal + dev
        })
        .collect();
    // Exact grid times for the start: index 1000.
    let t0 = t[1000];
    let envelope = table_boundary(&rows, side);
    let bound = match side {
        Side::Below => Bound::Lower,
        Side::Above => Bound::Upper,
    };
    let trip = trip_ms.map(|m| t[1000 + m as usize]);
    let end = trip.unwrap_or(t[t.len() - 1]);
    let a = scan_table(&t, &v, t0, end, side, &rows, TableMode::Continuous);
    let b = scan_envelope(&t, &v, t0, end, bound, &envelope);
    // Same first exit (on the grid) and the same verdict.
    match (a.first_outside, b.first_outside) {
        (None, None) => {}
        (Some(x), Some(y)) => prop_assert!((x - y).abs() < 1e-9, "table {x} envelope {y}"),
        (x, y) => prop_assert!(
            false,
            "table {x:?} envelope {y:?}, rows {rows:?}, pts {envelope:?}"
        ),
    }
    prop_assert_eq!(verdict(&a, trip), verdict(&b, trip));
    // Cumulative equals continuous for a single monotone excursion.
    let c = scan_table(&t, &v, t0, end, side, &rows, TableMode::Cumulative);
    prop_assert_eq!(c.first_outside, a.first_outside);
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn lower_table_equals_staircase_envelope(rows in rows_strategy(Side::Below), depth in 0.0f64..0.9,
        hold in 0u32..1500, rate in 0.2f64..20.0, trip in prop::option::of(0u32..2500)) {
        check(Side::Below, rows, depth, hold, rate, trip)?;
    }

    #[test]
    fn upper_table_equals_staircase_envelope(rows in rows_strategy(Side::Above), depth in 1.1f64..1.5,
        hold in 0u32..1500, rate in 0.2f64..20.0, trip in prop::option::of(0u32..2500)) {
        check(Side::Above, rows, depth, hold, rate, trip)?;
    }
}
