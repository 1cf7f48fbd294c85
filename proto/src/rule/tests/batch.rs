//! The batched entry points give the scalar rule's bits, and refuse bad batches with a message.

use super::{bits, header, spread, varied_tables};
use crate::rule::kernels::KernelWidth;
use crate::rule::{
    Direction, Location, LogGrid, OutsidePolicy, RateOutputs, RateTable, RuleError, Threads, exp, write_rows,
    write_tables_at,
};

#[test]
fn batched_equals_scalar_bit_for_bit() {
    let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
    let y: Vec<f64> = (0..g.knots())
        .map(|i| (0.2 + 0.05 * i as f64).sin() * 0.7)
        .collect();
    let t = RateTable::from_knots(header(), g, y).unwrap();
    let temps: Vec<f64> = (0..500).map(|i| 1e3 * 10f64.powf(i as f64 * 0.008)).collect();
    let (mut e, mut d, mut f) = (vec![0.0; 500], vec![0.0; 500], vec![0; 500]);
    let mut out = RateOutputs::new(Direction::Both, &mut e, &mut d, &mut f).unwrap();
    t.evaluate_into(&temps, OutsidePolicy::Refuse, &mut out).unwrap();
    for (j, &tk) in temps.iter().enumerate() {
        let v = t.evaluate(tk, OutsidePolicy::Refuse).unwrap();
        assert_eq!(v.excitation_cm3_s.to_bits(), e[j].to_bits());
        assert_eq!(v.deexcitation_cm3_s.to_bits(), d[j].to_bits());
        assert_eq!(v.flags, f[j]);
    }
}

#[test]
fn many_tables_equal_one_table_at_a_time_bit_for_bit() {
    // The rule's contract: the many-table entry point, on the calling thread and spread over
    // the pool (which it uses for the large batch), gives each row the same bits as that
    // table alone.
    let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
    let tables = varied_tables(g, 300);
    let refs: Vec<&RateTable> = tables.iter().collect();
    for (rows, n) in [(3usize, 5usize), (300, 256)] {
        let temps: Vec<f64> = spread(n, 2.5, 7.5).map(|e| 10f64.powf(e)).collect();
        let locs: Vec<Location> = temps.iter().map(|&t| g.locate(t)).collect();
        for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
            let total = rows * n;
            let sized = |wanted: bool| vec![0.0; if wanted { total } else { 0 }];
            let (mut e, mut d, mut f) = (
                sized(dir.wants_excitation()),
                sized(dir.wants_deexcitation()),
                vec![0u32; total],
            );
            let mut out = RateOutputs::new(dir, &mut e, &mut d, &mut f).unwrap();
            write_rows(&refs[..rows], &locs, Threads::Caller, &mut out).unwrap();
            // The pool path (used from 65,536 values: the 300 x 256 case) gives the same bits
            // as the calling-thread path.
            let (mut ep, mut dp, mut fp) = (e.clone(), d.clone(), f.clone());
            ep.fill(0.0);
            dp.fill(0.0);
            fp.fill(0);
            let mut out = RateOutputs::new(dir, &mut ep, &mut dp, &mut fp).unwrap();
            write_rows(&refs[..rows], &locs, Threads::Pool, &mut out).unwrap();
            assert_eq!(bits(&ep), bits(&e));
            assert_eq!(bits(&dp), bits(&d));
            assert_eq!(fp, f);
            for (r, t) in refs[..rows].iter().enumerate() {
                let (mut e1, mut d1, mut f1) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
                let mut out = RateOutputs::new(dir, &mut e1, &mut d1, &mut f1).unwrap();
                t.write_located(&locs, &mut out).unwrap();
                let span = r * n..(r + 1) * n;
                if dir.wants_excitation() {
                    assert_eq!(bits(&e[span.clone()]), bits(&e1));
                }
                if dir.wants_deexcitation() {
                    assert_eq!(bits(&d[span.clone()]), bits(&d1));
                }
                assert_eq!(&f[span], &f1[..]);
            }
        }
    }
    // Tables on another grid, and buffers of the wrong size, are refused with a message.
    let coarse = LogGrid::from_range(1e3, 1e7, 10).unwrap();
    let other = RateTable::from_knots(header(), coarse, vec![0.0; coarse.knots()]).unwrap();
    let locs = [g.locate(1e4)];
    let (mut d, mut f) = ([0.0; 2], [0; 2]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
    let err = write_rows(&[&tables[0], &other], &locs, Threads::Caller, &mut out).unwrap_err();
    assert_eq!(
        err.to_string(),
        "table 2-1 grid: differs from the grid of the other tables in the batch"
    );
    let err = RateOutputs::new(Direction::Deexcitation, &mut [], &mut [0.0; 1], &mut [0; 2]).unwrap_err();
    assert_eq!(
        err.to_string(),
        "output buffer deexcitation has length 1, expected 2"
    );
    let (mut d, mut f) = ([0.0; 3], [0; 3]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
    let err = write_rows(&refs[..2], &locs, Threads::Caller, &mut out).unwrap_err();
    assert_eq!(err.to_string(), "output buffer flags has length 3, expected 2");
}

#[test]
fn many_tables_at_one_temperature_equal_write_at_bit_for_bit() {
    // The rule's contract: every path gives the same bits.
    // Temperatures below, inside and above the grid cover every select.
    let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
    let tables = varied_tables(g, 257);
    let n = tables.len();
    for t_k in [300.0, 1e3, 2.2e4, 9.9e6, 1e7, 4e8] {
        let loc = g.locate(t_k);
        for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
            let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            write_tables_at(
                &tables,
                &loc,
                &mut RateOutputs::new(dir, &mut e, &mut d, &mut f).unwrap(),
            )
            .unwrap();
            let (mut e1, mut d1, mut f1) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            let mut out1 = RateOutputs::new(dir, &mut e1, &mut d1, &mut f1).unwrap();
            for (r, t) in tables.iter().enumerate() {
                t.write_at(&loc, r, &mut out1).unwrap();
            }
            assert_eq!(bits(&e), bits(&e1), "{t_k} {dir:?}");
            assert_eq!(bits(&d), bits(&d1), "{t_k} {dir:?}");
            assert_eq!(f, f1, "{t_k} {dir:?}");
        }
    }
    // Every exponential width gives the rule's exp bit for bit.
    let xs: Vec<f64> = spread(1001, -745.5, 709.5).collect();
    for width in KernelWidth::available() {
        let mut v = xs.clone();
        width.exp_in_place(&mut v);
        let expected: Vec<f64> = xs.iter().map(|&x| exp(x)).collect();
        assert_eq!(bits(&v), bits(&expected), "{width:?}");
    }
    // A table on another grid, and a short buffer, are refused with a message.
    let coarse = LogGrid::from_range(1e3, 1e7, 10).unwrap();
    let other = RateTable::from_knots(header(), coarse, vec![0.0; coarse.knots()]).unwrap();
    let loc = g.locate(1e4);
    let mixed = [tables[0].clone(), other];
    let (mut d, mut f) = ([0.0; 2], [0; 2]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
    let err = write_tables_at(&mixed, &loc, &mut out).unwrap_err();
    assert_eq!(
        err.to_string(),
        "table 2-1 grid: differs from the grid of the other tables in the batch"
    );
    let err =
        RateOutputs::new(Direction::Both, &mut [0.0; 3], &mut vec![0.0; n], &mut vec![0; n]).unwrap_err();
    assert_eq!(
        err.to_string(),
        format!("output buffer excitation has length 3, expected {n}")
    );
    let (mut d, mut f) = (vec![0.0; n - 1], vec![0; n - 1]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
    let err = write_tables_at(&tables, &loc, &mut out).unwrap_err();
    assert_eq!(
        err.to_string(),
        format!("output buffer flags has length {}, expected {n}", n - 1)
    );
    // A slot past the end is refused, not written.
    let err = tables[0].write_at(&loc, n - 1, &mut out).unwrap_err();
    assert_eq!(
        err.to_string(),
        format!("output buffer flags has length {}, expected {n}", n - 1)
    );
}

#[test]
fn unwanted_directions_are_left_untouched() {
    // An unwanted direction's buffer is never written, whatever its length.
    let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
    let tables = varied_tables(g, 3);
    let locs: Vec<Location> = spread(7, 3.0, 6.0).map(|e| g.locate(10f64.powf(e))).collect();
    let (mut e, mut d, mut f) = (vec![-1.0; 2], vec![0.0; 7], vec![0; 7]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut e, &mut d, &mut f).unwrap();
    tables[0].write_located(&locs, &mut out).unwrap();
    tables[1].write_at(&locs[0], 0, &mut out).unwrap();
    assert_eq!(e, [-1.0; 2]);
    assert!(d.iter().all(|&v| v > 0.0));
}

#[test]
fn batched_errors_name_the_first_bad_temperature() {
    let g = LogGrid::from_range(1e3, 1e6, 10).unwrap();
    let t = RateTable::from_knots(header(), g, vec![0.3; g.knots()]).unwrap();
    let mut temps = vec![2e4; 700];
    temps[600] = 5e2;
    temps[650] = -1.0;
    let (mut e, mut d, mut f) = (vec![0.0; 700], vec![0.0; 700], vec![0; 700]);
    let mut out = RateOutputs::new(Direction::Both, &mut e, &mut d, &mut f).unwrap();
    let err = t
        .evaluate_into(&temps, OutsidePolicy::Refuse, &mut out)
        .unwrap_err();
    assert!(matches!(err, RuleError::OutsideGrid { index: 600, .. }), "{err}");
    let err = t
        .evaluate_into(&temps, OutsidePolicy::Extrapolate, &mut out)
        .unwrap_err();
    assert_eq!(
        err,
        RuleError::TemperatureNotPositive {
            index: 650,
            value_k: -1.0
        }
    );
}
