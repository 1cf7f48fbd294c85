//! Rate coefficients as served: the evaluation rule's prefactor against the published value,
//! and detailed balance between its excitation and de-excitation rates. Tables here are flat
//! in ln Upsilon, which the rule's cubic reproduces exactly between knots, so what is checked
//! is the rule's rate formula itself.

use ratewell_proto::rule::{LogGrid, OutsidePolicy, RateTable, TableHeader};
use ratewell_service::physics::constants::{KELVIN_PER_EV, rate_prefactor_cm3_s_k_half};
use ratewell_service::physics::units;

/// A served table of constant Upsilon on the default grid (10 K to 1e9 K, 20 per decade).
fn flat(upsilon: f64, g_lower: f64, g_upper: f64, delta_e_k: f64) -> Result<RateTable, String> {
    let grid = LogGrid::from_range(10.0, 1.0e9, 20).map_err(|e| e.to_string())?;
    let header = TableHeader {
        upper: 2,
        lower: 1,
        g_lower,
        g_upper,
        excitation_energy_k: delta_e_k,
        source_t_min_k: 10.0,
        source_t_max_k: 1.0e9,
        approximate: false,
    };
    RateTable::from_knots(header, grid, vec![upsilon.ln(); grid.knots()]).map_err(|e| e.to_string())
}

#[test]
fn prefactor_matches_published_value_to_four_figures() {
    // Osterbrock & Ferland 2006, Astrophysics of Gaseous Nebulae, eq. 3.20:
    // q_21 = 8.629e-6 Upsilon / (omega_2 T^1/2) cm^3 s^-1
    let c = rate_prefactor_cm3_s_k_half();
    assert!((c - 8.629e-6).abs() < 0.0005e-6, "C = {c:e}");
    // The served rate at T = 100 K, Upsilon = 1, g_u = 1 is C / 10, to the rounding of the
    // rule's own ln and exp (a few units in the last place of an exponent near -18).
    let table = flat(1.0, 1.0, 1.0, 0.0).unwrap();
    let v = table.evaluate(100.0, OutsidePolicy::Refuse).unwrap();
    assert!(
        (v.deexcitation_cm3_s / (c / 10.0) - 1.0).abs() < 1e-13,
        "{:e}",
        v.deexcitation_cm3_s
    );
    assert!((v.upsilon - 1.0).abs() < 1e-15, "{}", v.upsilon);
}

#[test]
fn detailed_balance_holds_to_1e_12() {
    // Osterbrock & Ferland 2006, eq. 3.21: omega_1 q_12 = omega_2 q_21 exp(-chi/kT)
    for &(g_l, g_u) in &[(1.0, 3.0), (9.0, 5.0), (2.0, 2.0), (4.0, 12.0)] {
        for &de_k in &[0.0, 100.0, 2.3e4, 1.5e5, 3.0e6] {
            let table = flat(0.731, g_l, g_u, de_k).unwrap();
            for &t in &[30.0, 1.0e3, 1.0e4, 1.0e5, 1.0e7, 1.0e9] {
                let v = table.evaluate(t, OutsidePolicy::Refuse).unwrap();
                let q_ul = 8.629e-6 * 0.731 / (g_u * f64::sqrt(t));
                assert!((v.deexcitation_cm3_s / q_ul - 1.0).abs() < 1e-4, "q_ul at {t} K");
                let expected = (g_u / g_l) * (-de_k / t).exp();
                if expected > 1e-300 {
                    let rel = (v.excitation_cm3_s / v.deexcitation_cm3_s) / expected - 1.0;
                    assert!(rel.abs() < 1e-12, "g {g_l}/{g_u}, dE {de_k}, T {t}: {rel:e}");
                }
            }
        }
    }
}

#[test]
fn kelvin_per_ev_matches_codata() {
    // CODATA 2018: 1 eV / k = 11604.518 12 K (exact definitions of e and k)
    assert!((KELVIN_PER_EV - 11_604.518_12).abs() < 1e-5);
    assert!((units::ev_to_k(1.0) - 11_604.518_12).abs() < 1e-5);
    // CODATA 2018: hc/k = 1.438 776 877e-2 m K, so 1 cm^-1 = 1.438 776 877 K
    assert!((units::cm1_to_k(1.0) - 1.438_776_877).abs() < 1e-9);
    // CODATA 2018: Rydberg energy 13.605 693 122 994 eV
    assert!((units::ry_to_ev(1.0) - 13.605_693_122_994).abs() < 1e-9);
}

#[test]
fn bad_input_is_refused_not_panicked() {
    // common practice, no source: messages name the field, value and allowed range
    let e = flat(1.0, 1.0, 3.0, -2.0).unwrap_err();
    assert!(
        e.contains("excitation_energy_k") && e.contains("-2 K: must be finite and >= 0"),
        "{e}"
    );
    let e = flat(1.0, 0.0, 3.0, 1.0).unwrap_err();
    assert!(
        e.contains("g_lower") && e.contains("must be finite and > 0"),
        "{e}"
    );
    let table = flat(1.0, 1.0, 3.0, 1.0).unwrap();
    for t in [f64::INFINITY, f64::NAN, -5.0, 0.0] {
        let e = table.evaluate(t, OutsidePolicy::Refuse).unwrap_err().to_string();
        assert!(e.contains("temperatures[0]"), "{t}: {e}");
    }
    // Upsilon = 0 has no logarithm: a table of ln Upsilon refuses it by name.
    let e = flat(0.0, 1.0, 3.0, 1.0).unwrap_err();
    assert!(e.contains("ln_upsilon") && e.contains("must be finite"), "{e}");
}
