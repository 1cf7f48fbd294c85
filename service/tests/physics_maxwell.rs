//! Maxwellian averages of collision strengths: closed forms and mpmath quadrature.

use ratewell_service::physics::constants::KELVIN_PER_RYDBERG;
use ratewell_service::physics::expint::e1_scaled;
use ratewell_service::physics::maxwell::{BelowFirstPoint, CollisionStrengthTable};
use ratewell_service::physics::transition::TransitionType;
use serde_json::Value;

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/physics_reference.json")).unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

const TEMPERATURES_K: [f64; 7] = [10.0, 1.0e3, 1.0e4, 1.0e5, 1.0e6, 1.0e8, 1.0e10];

#[test]
fn constant_omega_averages_to_itself() {
    // Osterbrock & Ferland 2006, eq. 3.22: Upsilon = integral Omega e^(-E/kT) d(E/kT),
    // so a constant Omega gives Upsilon = Omega
    let table = CollisionStrengthTable::new(
        &[0.0, 0.3, 1.0, 7.0],
        &[2.5, 2.5, 2.5, 2.5],
        0.2,
        TransitionType::Forbidden,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap();
    for t in TEMPERATURES_K {
        let u = table.effective_collision_strength(t).unwrap();
        assert!(rel(u, 2.5) < 1e-12, "T {t}: {u}");
    }
}

#[test]
fn linear_omega_averages_to_a_plus_b_kt() {
    // Osterbrock & Ferland 2006, eq. 3.22 with Omega = a + b E_f:
    // integral (a + b kT x) e^-x dx = a + b kT
    let (a, b) = (0.7, 0.35); // b per Rydberg
    // the table is linear up to E = 1e4 Ry and constant beyond: the tail is negligible while
    // kT << 1e4 Ry / 700
    let energies = [0.0, 1.0e-4, 0.02, 0.5, 3.0, 40.0, 1.0e4];
    let omega: Vec<f64> = energies.iter().map(|e| a + b * e).collect();
    let table = CollisionStrengthTable::new(
        &energies,
        &omega,
        0.1,
        TransitionType::Forbidden,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap();
    for t in [10.0, 1.0e3, 1.0e4, 1.0e5, 1.0e6, 1.0e7] {
        let kt_ry = t / KELVIN_PER_RYDBERG;
        let u = table.effective_collision_strength(t).unwrap();
        assert!(rel(u, a + b * kt_ry) < 1e-12, "T {t}: {u} vs {}", a + b * kt_ry);
    }
}

#[test]
fn bethe_form_from_threshold_gives_e_to_a_e1() {
    // integral_0^inf ln(1 + x/a) e^-x dx = e^a E_1(a) (Abramowitz & Stegun 1964, 5.1.4 by parts);
    // exercised through the allowed tail starting at threshold, against mpmath
    let data = reference();
    for row in data["bethe_from_threshold"].as_array().unwrap() {
        let de = row["delta_e_ry"].as_f64().unwrap();
        let gf = row["gf"].as_f64().unwrap();
        let t = row["t_k"].as_f64().unwrap();
        let expected = row["upsilon"].as_f64().unwrap();
        let table = CollisionStrengthTable::new(
            &[0.0],
            &[0.0],
            de,
            TransitionType::Allowed,
            Some(gf),
            BelowFirstPoint::ConstantToThreshold,
        )
        .unwrap();
        let u = table.effective_collision_strength(t).unwrap();
        assert!(rel(u, expected) < 1e-12, "dE {de}, T {t}: {u} vs {expected}");
        // and the closed form itself, with our E_1
        let a = de * KELVIN_PER_RYDBERG / t;
        assert!(rel(u, 4.0 * gf / de * e1_scaled(a)) < 1e-13);
    }
}

fn kind_of(code: u64) -> TransitionType {
    TransitionType::from_burgess_tully_number(code as u8).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn piecewise_tables_with_tails_match_mpmath_quadrature() {
    // reference: mpmath.quad of the same piecewise model (40 digits), make_physics_reference.py
    let data = reference();
    let mut worst: f64 = 0.0;
    for t in data["maxwell_tables"].as_array().unwrap() {
        let below = match t["below"].as_str().unwrap() {
            "linear" => BelowFirstPoint::LinearFromZeroAtThreshold,
            _ => BelowFirstPoint::ConstantToThreshold,
        };
        let table = CollisionStrengthTable::new(
            &floats(&t["energies_ry"]),
            &floats(&t["omega"]),
            t["delta_e_ry"].as_f64().unwrap(),
            kind_of(t["kind"].as_u64().unwrap()),
            t["gf"].as_f64(),
            below,
        )
        .unwrap();
        for (tk, expected) in floats(&t["temperatures_k"])
            .into_iter()
            .zip(floats(&t["upsilon"]))
        {
            let u = table.effective_collision_strength(tk).unwrap();
            let r = rel(u, expected);
            worst = worst.max(r);
            assert!(r < 1e-12, "{} at {tk} K: {u} vs {expected}", t["name"]);
        }
    }
    eprintln!("worst relative deviation from mpmath quadrature: {worst:e}");
}

#[test]
fn model_is_continuous_at_the_last_point() {
    // common practice, no source: each tail is matched to the last tabulated value
    for (kind, gf) in [
        (TransitionType::Allowed, Some(0.4)),
        (TransitionType::Allowed, None),
        (TransitionType::Forbidden, None),
        (TransitionType::SpinChange, None),
        (TransitionType::WeakAllowed, Some(0.01)),
    ] {
        let table = CollisionStrengthTable::new(
            &[0.0, 0.5, 2.0],
            &[1.0, 1.4, 1.9],
            0.3,
            kind,
            gf,
            BelowFirstPoint::ConstantToThreshold,
        )
        .unwrap();
        let just_above = table.omega_at(2.0 * (1.0 + 1e-12)).unwrap();
        assert!(rel(just_above, 1.9) < 1e-10, "{kind:?}");
    }
}

#[test]
fn bad_tables_and_temperatures_are_refused() {
    // common practice, no source
    let err = CollisionStrengthTable::new(
        &[0.0],
        &[1.0],
        0.3,
        TransitionType::Allowed,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap_err();
    assert!(err.to_string().contains("cannot be matched"));
    let err = CollisionStrengthTable::new(
        &[-0.1, 1.0],
        &[1.0, 1.0],
        0.3,
        TransitionType::Forbidden,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap_err();
    assert_eq!(
        err.to_string(),
        "final_energies_ry[0] = -0.1 Ry: must be >= 0 and finite"
    );
    let ok = CollisionStrengthTable::new(
        &[0.0, 1.0],
        &[1.0, 1.0],
        0.3,
        TransitionType::Forbidden,
        None,
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap();
    let err = ok.effective_collision_strength(0.0).unwrap_err();
    assert_eq!(err.to_string(), "temperature_k = 0 K: must be > 0 and finite");
}
