//! The evaluation rule against an independent implementation: scipy's PchipInterpolator on the
//! same knots (script and stored output in tests/reference/).

use ratewell_proto::rule::{LogGrid, RateTable, TableHeader};

#[derive(serde::Deserialize)]
struct Reference {
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    log10_t_min_k: f64,
    log10_t_step: f64,
    ln_upsilon: Vec<f64>,
    eval_log10_t: Vec<f64>,
    expected_ln_upsilon: Vec<f64>,
    expected_slopes: Vec<f64>,
}

#[test]
fn rule_matches_scipy_pchip() {
    let reference: Reference = serde_json::from_str(include_str!("reference/rule_reference.json")).unwrap();
    for case in reference.cases {
        let grid = LogGrid::new(case.log10_t_min_k, case.log10_t_step, case.ln_upsilon.len()).unwrap();
        let header = TableHeader {
            upper: 2,
            lower: 1,
            g_lower: 1.0,
            g_upper: 3.0,
            excitation_energy_k: 1e4,
            source_t_min_k: grid.t_min_k(),
            source_t_max_k: grid.t_max_k(),
            approximate: false,
        };
        let table = RateTable::from_knots(header, grid, case.ln_upsilon.clone()).unwrap();
        // Knot slopes: same algorithm, so equal to rounding (relative 1e-12 of the data scale).
        for (i, (ours, &theirs)) in table.slopes().zip(&case.expected_slopes).enumerate() {
            assert!(
                (ours - theirs).abs() <= 1e-10 * (1.0 + theirs.abs()),
                "{} slope[{i}]: {ours} vs {theirs}",
                case.name
            );
        }
        // Values between knots: the same cubic Hermite; differences are rounding only.
        for (&x, &expected) in case.eval_log10_t.iter().zip(&case.expected_ln_upsilon) {
            let loc = grid.locate(10f64.powf(x));
            let ours = table.ln_upsilon_at(&loc);
            assert!(
                (ours - expected).abs() <= 1e-10 * (1.0 + expected.abs()),
                "{} at log10 T = {x}: {ours} vs {expected}",
                case.name
            );
        }
    }
}
