//! Every kernel width gives the scalar rule's bits.

use super::{bits, header, spread};
use crate::rule::kernels::KernelWidth;
use crate::rule::{Direction, Location, LogGrid, OutsidePolicy, RateOutputs, RateTable};

#[test]
fn vectorised_kernel_equals_write_at_bit_for_bit() {
    // The rule's contract: every path gives the same bits.
    // Mixed sides, an approximate table and a zero-energy table cover every select.
    let g = LogGrid::from_range(1e3, 1e7, 20).unwrap();
    let mut h = header();
    h.approximate = true;
    let mut zero = header();
    zero.excitation_energy_k = 0.0;
    let y: Vec<f64> = (0..g.knots()).map(|i| (0.3 * i as f64).cos() - 1.0).collect();
    let tables = [
        RateTable::from_knots(header(), g, y.clone()).unwrap(),
        RateTable::from_knots(h, g, y.clone()).unwrap(),
        RateTable::from_knots(zero, g, y).unwrap(),
    ];
    let temps: Vec<f64> = spread(1000, 1.0, 9.0).map(|e| 10f64.powf(e)).collect();
    let locs: Vec<Location> = temps.iter().map(|&t| g.locate(t)).collect();
    let mut batch = vec![Location::default(); temps.len()];
    g.locate_into(&temps, &mut batch);
    assert_eq!(batch, locs);
    for t in &tables {
        for dir in [Direction::Both, Direction::Excitation, Direction::Deexcitation] {
            let n = locs.len();
            let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            let (mut e2, mut d2, mut f2) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            t.write_located(&locs, &mut RateOutputs::new(dir, &mut e, &mut d, &mut f).unwrap())
                .unwrap();
            let mut out2 = RateOutputs::new(dir, &mut e2, &mut d2, &mut f2).unwrap();
            for (j, loc) in locs.iter().enumerate() {
                t.write_at(loc, j, &mut out2).unwrap();
            }
            assert_eq!(bits(&e), bits(&e2));
            assert_eq!(bits(&d), bits(&d2));
            assert_eq!(f, f2);
            // Every kernel width this processor has gives the same bits again.
            for width in KernelWidth::available() {
                let (mut e4, mut d4, mut f4) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
                let mut out4 = RateOutputs::new(dir, &mut e4, &mut d4, &mut f4).unwrap();
                t.write_checked_as(width, &locs, &mut out4);
                if dir.wants_excitation() {
                    assert_eq!(bits(&e4), bits(&e2), "{width:?} {dir:?}");
                }
                if dir.wants_deexcitation() {
                    assert_eq!(bits(&d4), bits(&d2), "{width:?} {dir:?}");
                }
                assert_eq!(f4, f2, "{width:?} {dir:?}");
            }
            // Extrapolating batch evaluation from raw temperatures gives the same again.
            let (mut e3, mut d3, mut f3) = (vec![0.0; n], vec![0.0; n], vec![0; n]);
            let mut out3 = RateOutputs::new(dir, &mut e3, &mut d3, &mut f3).unwrap();
            t.evaluate_into(&temps, OutsidePolicy::Extrapolate, &mut out3)
                .unwrap();
            assert_eq!(bits(&e3), bits(&e2));
            assert_eq!(bits(&d3), bits(&d2));
            assert_eq!(f3, f2);
        }
    }
    // Wrong output lengths are refused, naming the buffer.
    let err = RateOutputs::new(Direction::Both, &mut [], &mut [0.0; 1000], &mut [0; 1000]).unwrap_err();
    assert_eq!(
        err.to_string(),
        "output buffer excitation has length 0, expected 1000"
    );
    let (mut d, mut f) = ([0.0; 999], [0; 999]);
    let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
    let err = tables[0].write_located(&locs, &mut out).unwrap_err();
    assert_eq!(
        err.to_string(),
        "output buffer flags has length 999, expected 1000"
    );
}
