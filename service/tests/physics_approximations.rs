//! Approximate collision strengths: Van Regemorter and the semi-classical estimate.

mod common;
use common::closed_form_q_lu;

use ratewell_service::physics::approximations::{
    ApproximationMethod, SemiClassicalEstimate, TargetCharge, hydrogenic_mean_radius_bohr,
    van_regemorter_gaunt_factor, van_regemorter_upsilon,
};
use ratewell_service::physics::constants::{
    ELECTRON_MASS_KG, ELEMENTARY_CHARGE_C, FINE_STRUCTURE, PLANCK_J_S, SPEED_OF_LIGHT_M_S,
};
use ratewell_service::physics::maxwell::{BelowFirstPoint, CollisionStrengthTable};
use ratewell_service::physics::transition::TransitionType;
use ratewell_service::physics::units;
use serde_json::Value;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/physics_reference.json")).unwrap()
}

#[test]
fn gaunt_factor_and_upsilon_match_mpmath() {
    // reference: the same formula evaluated with mpmath.e1 (make_physics_reference.py)
    let data = reference();
    for row in data["van_regemorter"]["gaunt_factor"].as_array().unwrap() {
        let y = row["y"].as_f64().unwrap();
        let neutral = van_regemorter_gaunt_factor(y, TargetCharge::Neutral);
        let ion = van_regemorter_gaunt_factor(y, TargetCharge::PositiveIon);
        assert!(rel(neutral, row["neutral"].as_f64().unwrap()) < 1e-13, "y {y}");
        assert!(rel(ion, row["ion"].as_f64().unwrap()) < 1e-13, "y {y}");
    }
    for row in data["van_regemorter"]["upsilon"].as_array().unwrap() {
        let gf = row["gf"].as_f64().unwrap();
        let de = row["delta_e_ry"].as_f64().unwrap();
        let t = row["t_k"].as_f64().unwrap();
        for (target, key) in [
            (TargetCharge::Neutral, "neutral"),
            (TargetCharge::PositiveIon, "ion"),
        ] {
            let v = van_regemorter_upsilon(gf, de, t, target).unwrap();
            assert_eq!(v.method, ApproximationMethod::VanRegemorter);
            assert!(rel(v.value, row[key].as_f64().unwrap()) < 1e-13);
        }
    }
}

#[test]
fn ion_gaunt_factor_follows_van_regemorters_table() {
    // Van Regemorter 1962, ApJ 136, 906, table of P(y) for positive ions (values from memory);
    // the analytic form with its smooth join to the 0.2 floor stays within 7% of the table
    let table = [
        (0.01, 1.16),
        (0.02, 0.977),
        (0.04, 0.788),
        (0.1, 0.554),
        (0.2, 0.403),
        (0.4, 0.290),
        (1.0, 0.214),
        (2.0, 0.201),
        (4.0, 0.200),
        (10.0, 0.200),
    ];
    for (y, p) in table {
        let ours = van_regemorter_gaunt_factor(y, TargetCharge::PositiveIon);
        assert!(rel(ours, p) < 0.07, "y {y}: {ours} vs {p}");
    }
    // same table, neutral atoms (from memory): the Bethe form holds at small y only
    for (y, p) in [(0.01, 1.16), (0.02, 0.956), (0.04, 0.758), (0.1, 0.493)] {
        let ours = van_regemorter_gaunt_factor(y, TargetCharge::Neutral);
        assert!(rel(ours, p) < 0.13, "y {y}: {ours} vs {p}");
    }
}

#[test]
fn rate_form_has_van_regemorters_coefficient() {
    // Van Regemorter 1962 (from memory): C_ul = 20.6 lambda^3 T^-1/2 A_ul P(y) cm^3 s^-1 with
    // lambda in cm, equivalently C_lu = 3.16e-7 f (Ry/dE)^3/2 y^1/2 e^-y P(y)
    let (g_l, g_u, f, de_ry, t) = (2.0, 6.0, 0.3, 0.75, 1.2e4);
    let ups = van_regemorter_upsilon(g_l * f, de_ry, t, TargetCharge::PositiveIon).unwrap();
    let de_k = units::ry_to_k(de_ry);
    let q_lu = closed_form_q_lu(ups.value, g_l, g_u, de_k, t);
    let y = de_k / t;
    let p = van_regemorter_gaunt_factor(y, TargetCharge::PositiveIon);
    let form = 3.16e-7 * f * de_ry.powf(-1.5) * y.sqrt() * (-y).exp() * p;
    assert!(rel(q_lu, form) < 0.005, "{q_lu:e} vs {form:e}");
    // A_ul from f: A = (2 pi e^2 nu^2 / (eps0 m_e c^3)) (g_l/g_u) f, eps0 = e^2 / (2 alpha h c)
    let eps0 = ELEMENTARY_CHARGE_C.powi(2) / (2.0 * FINE_STRUCTURE * PLANCK_J_S * SPEED_OF_LIGHT_M_S);
    let nu = units::ry_to_j(de_ry) / PLANCK_J_S;
    let a_ul = 2.0 * std::f64::consts::PI * ELEMENTARY_CHARGE_C.powi(2) * nu * nu
        / (eps0 * ELECTRON_MASS_KG * SPEED_OF_LIGHT_M_S.powi(3))
        * (g_l / g_u)
        * f;
    let lambda_cm = SPEED_OF_LIGHT_M_S / nu * 100.0;
    let q_ul = q_lu * (g_l / g_u) * y.exp();
    let coefficient = q_ul * t.sqrt() / (lambda_cm.powi(3) * a_ul * p);
    assert!((coefficient - 20.6).abs() < 0.05, "coefficient {coefficient}");
}

#[test]
fn hydrogen_ground_state_mean_radius() {
    // Bethe & Salpeter 1957, Quantum Mechanics of One- and Two-Electron Atoms, sec. 3 (from
    // memory): <r> = (a0 / 2Z)(3 n^2 - l(l+1)); 1s hydrogen: 1.5 a0
    let r = hydrogenic_mean_radius_bohr(1.0, 1.0).unwrap();
    assert!((r - 1.5).abs() < 1e-15);
    // n = 2 of He+ (Z = 2, binding 1 Ry): (1/4)(12) = 3 a0
    assert!((hydrogenic_mean_radius_bohr(1.0, 2.0).unwrap() - 3.0).abs() < 1e-15);
}

#[test]
fn semi_classical_average_is_the_exact_maxwell_average_of_its_omega() {
    // Osterbrock & Ferland 2006, eq. 3.22 (the Maxwell average), applied to the linear
    // Omega(E) of the estimate and integrated by our exact piecewise-linear averager
    let (de, z) = (0.35, 2.0);
    let r = hydrogenic_mean_radius_bohr(1.9, z + 1.0).unwrap();
    let est = SemiClassicalEstimate::new(de, r, z, 0.8).unwrap();
    let e_max = 5.0e3;
    let energies = [0.0, 1.0, e_max];
    let omega: Vec<f64> = energies
        .iter()
        .map(|&e| est.collision_strength(e).unwrap().value)
        .collect();
    let table = CollisionStrengthTable::new(
        &energies,
        &omega,
        de,
        TransitionType::Forbidden,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap();
    for t in [1.0e3, 1.0e4, 1.0e5, 1.0e6] {
        let closed = est.effective_collision_strength(t).unwrap();
        assert_eq!(closed.method, ApproximationMethod::SemiClassical);
        let numeric = table.effective_collision_strength(t).unwrap();
        assert!(rel(closed.value, numeric) < 1e-12, "T {t}");
    }
    // The scale is the collision strength s at threshold, for ions and neutrals alike (our
    // normalisation); Coulomb focusing flattens the energy dependence for ions (common
    // practice, no source): at 10 dE above threshold the ion's Omega has grown less than the
    // neutral's, which grows exactly like E/dE.
    let neutral = SemiClassicalEstimate::new(de, r, 0.0, 0.8).unwrap();
    assert!(rel(est.collision_strength(0.0).unwrap().value, 0.8) < 1e-14);
    assert!(rel(neutral.collision_strength(0.0).unwrap().value, 0.8) < 1e-14);
    let above = 9.0 * de;
    let neutral_growth = neutral.collision_strength(above).unwrap().value / 0.8;
    assert!(rel(neutral_growth, 10.0) < 1e-12);
    assert!(est.collision_strength(above).unwrap().value / 0.8 < neutral_growth);
}
