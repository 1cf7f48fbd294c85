//! The scalar rule: grid construction, the interpolant, the analytic factors, the grid policy
//! and refused tables.

use super::header;
use crate::rule::{LogGrid, OutsidePolicy, RateTable, RuleError, flags};
use approx::assert_relative_eq;

#[test]
fn grid_from_range_covers_the_range() {
    let g = LogGrid::from_range(1e3, 1e8, 20).unwrap();
    assert_eq!(g.knots(), 101);
    assert_relative_eq!(g.t_max_k(), 1e8, max_relative = 1e-12);
}

#[test]
fn knots_are_reproduced_and_values_stay_between_neighbours() {
    let g = LogGrid::from_range(1e3, 1e6, 4).unwrap();
    let y: Vec<f64> = [0.1, 0.5, 0.4, 0.4, 1.5, 1.6, 3.0, 2.0, 1.0, 0.9, 0.95, 1.0, 1.0]
        .iter()
        .map(|v: &f64| v.ln())
        .collect();
    let t = RateTable::from_knots(header(), g, y.clone()).unwrap();
    for (i, &yi) in y.iter().enumerate() {
        let loc = g.locate(g.temperature_k(i));
        assert_relative_eq!(t.ln_upsilon_at(&loc), yi, epsilon = 1e-12);
    }
    // Monotone-preserving: between two knots the interpolant stays within their values
    // (Fritsch & Carlson 1980, Theorem 2 on the sufficient region).
    for i in 0..y.len() - 1 {
        let (lo, hi) = (y[i].min(y[i + 1]), y[i].max(y[i + 1]));
        for s in 1..50 {
            let x = g.log10_t_min_k() + (i as f64 + s as f64 / 50.0) * g.log10_t_step();
            let v = t.ln_upsilon_at(&g.locate(10f64.powf(x)));
            assert!(
                v >= lo - 1e-12 && v <= hi + 1e-12,
                "interval {i}: {v} not in [{lo}, {hi}]"
            );
        }
    }
}

#[test]
fn detailed_balance_holds_in_the_rule() {
    let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
    let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
    let v = t.evaluate(1.234e4, OutsidePolicy::Refuse).unwrap();
    // q_lu / q_ul = (g_u/g_l) exp(-dE/kT): detailed balance (Osterbrock & Ferland 2006, eq. 3.21).
    let expected = 2.0 * (-2.0e4_f64 / 1.234e4).exp();
    assert_relative_eq!(
        v.excitation_cm3_s / v.deexcitation_cm3_s,
        expected,
        max_relative = 1e-12
    );
    // q_ul = 8.629e-6 Upsilon / (g_u sqrt T) (Osterbrock & Ferland 2006, eq. 3.20).
    assert_relative_eq!(
        v.deexcitation_cm3_s,
        8.629e-6 * 0.3f64.exp() / (4.0 * 1.234e4f64.sqrt()),
        max_relative = 1e-4
    );
}

#[test]
fn outside_grid_is_refused_or_flagged() {
    let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
    let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
    let err = t.evaluate(5e2, OutsidePolicy::Refuse).unwrap_err();
    assert!(matches!(err, RuleError::OutsideGrid { .. }));
    assert!(err.to_string().contains("500 K"));
    let v = t.evaluate(5e2, OutsidePolicy::Extrapolate).unwrap();
    assert_eq!(v.flags & flags::OUTSIDE_GRID, flags::OUTSIDE_GRID);
    assert_eq!(v.flags & flags::BEYOND_SOURCE, flags::BEYOND_SOURCE);
    assert!(matches!(
        t.evaluate(f64::NAN, OutsidePolicy::Extrapolate),
        Err(RuleError::TemperatureNotPositive { .. })
    ));
    assert!(t.evaluate(-1.0, OutsidePolicy::Extrapolate).is_err());
    // The grid ends themselves are inside.
    assert_eq!(
        t.evaluate(g.t_max_k(), OutsidePolicy::Refuse).unwrap().flags & flags::OUTSIDE_GRID,
        0
    );
    assert_eq!(
        t.evaluate(g.t_min_k(), OutsidePolicy::Refuse).unwrap().flags & flags::OUTSIDE_GRID,
        0
    );
}

#[test]
fn bad_tables_are_refused() {
    let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
    assert!(RateTable::from_knots(header(), g, vec![0.3; 3]).is_err());
    let mut y = vec![0.3; g.knots()];
    y[4] = f64::NAN;
    assert!(RateTable::from_knots(header(), g, y).is_err());
    let mut h = header();
    h.g_upper = 0.0;
    assert!(RateTable::from_knots(h, g, vec![0.3; g.knots()]).is_err());
    assert!(LogGrid::from_range(-1.0, 1e6, 10).is_err());
    assert!(LogGrid::from_range(1e4, 1e3, 10).is_err());
    assert!(LogGrid::from_range(1e3, 1e4, 0).is_err());
}
