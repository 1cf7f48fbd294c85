//! Exponential integrals against mpmath (reference/physics_reference.json).

use ratewell_service::physics::expint::{e1, e1_scaled, en, en_scaled};
use serde_json::Value;

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/physics_reference.json")).unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn scaled_and_plain_exponential_integrals_match_mpmath() {
    // reference: mpmath.expint(n, x) at 40 digits (make_physics_reference.py)
    let data = reference();
    let mut worst: f64 = 0.0;
    for row in data["exponential_integrals"].as_array().unwrap() {
        let x = row["x"].as_f64().unwrap();
        for n in [1u32, 2, 3, 5] {
            let scaled = row[format!("e{n}_scaled")].as_f64().unwrap();
            let got = en_scaled(n, x);
            let r = rel(got, scaled);
            worst = worst.max(r);
            assert!(
                r < 1e-14,
                "e^x E_{n}({x}) = {got:e}, mpmath {scaled:e}, rel {r:e}"
            );
            if let Some(plain) = row[format!("e{n}")].as_f64().filter(|&p| p > 1e-290) {
                let r = rel(en(n, x), plain);
                assert!(r < 1e-14, "E_{n}({x}): rel {r:e}");
            }
        }
        if let Some(plain) = row["e1"].as_f64() {
            assert!(rel(e1(x), plain) < 1e-14);
        }
        assert!(rel(e1_scaled(x), row["e1_scaled"].as_f64().unwrap()) < 1e-14);
    }
    eprintln!("worst relative error of e^x E_n(x): {worst:e}");
}

#[test]
fn scaled_form_survives_where_plain_underflows() {
    // Abramowitz & Stegun 1964, 5.1.51: e^x E_1(x) ~ 1/x (1 - 1/x + 2/x^2 - ...) for large x
    let x = 1.0e6;
    let asymptotic = (1.0 - 1.0 / x + 2.0 / (x * x)) / x;
    assert!(rel(e1_scaled(x), asymptotic) < 1e-15);
    assert_eq!(e1(x), 0.0);
}
