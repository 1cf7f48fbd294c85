//! Rate coefficients: the prefactor from CODATA and detailed balance.

use ratewell_service::physics::constants::{KELVIN_PER_EV, rate_prefactor_cm3_s_k_half};
use ratewell_service::physics::rates::{deexcitation_rate_cm3_s, excitation_rate_cm3_s};
use ratewell_service::physics::units;

#[test]
fn prefactor_matches_published_value_to_four_figures() {
    // Osterbrock & Ferland 2006, Astrophysics of Gaseous Nebulae, eq. 3.20:
    // q_21 = 8.629e-6 Upsilon / (omega_2 T^1/2) cm^3 s^-1
    let c = rate_prefactor_cm3_s_k_half();
    assert!((c - 8.629e-6).abs() < 0.0005e-6, "C = {c:e}");
    let q = deexcitation_rate_cm3_s(1.0, 1.0, 1.0).unwrap();
    assert_eq!(q, c);
}

#[test]
fn detailed_balance_holds_to_1e_12() {
    // Osterbrock & Ferland 2006, eq. 3.21: omega_1 q_12 = omega_2 q_21 exp(-chi/kT)
    for &(g_l, g_u) in &[(1.0, 3.0), (9.0, 5.0), (2.0, 2.0), (4.0, 12.0)] {
        for &de_k in &[0.0, 100.0, 2.3e4, 1.5e5, 3.0e6] {
            for &t in &[30.0, 1.0e3, 1.0e4, 1.0e5, 1.0e7, 1.0e9] {
                let ups = 0.731;
                let q_ul = deexcitation_rate_cm3_s(ups, g_u, t).unwrap();
                let q_lu = excitation_rate_cm3_s(ups, g_l, g_u, de_k, t).unwrap();
                let expected = (g_u / g_l) * (-de_k / t).exp();
                if expected > 1e-300 {
                    let rel = (q_lu / q_ul) / expected - 1.0;
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
    let e = excitation_rate_cm3_s(1.0, 1.0, 3.0, -2.0, 1.0e4).unwrap_err();
    assert_eq!(e.to_string(), "delta_e_k = -2 K: must be >= 0 and finite");
    assert!(deexcitation_rate_cm3_s(1.0, 3.0, f64::INFINITY).is_err());
    assert!(deexcitation_rate_cm3_s(-1.0, 3.0, 1.0e4).is_err());
}
