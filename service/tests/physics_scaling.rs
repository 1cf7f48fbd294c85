//! Burgess & Tully scaling: transforms, the scaled-plane interpolator, and PCHIP vs scipy.

use ratewell_service::physics::constants::KELVIN_PER_RYDBERG;
use ratewell_service::physics::maxwell::{BelowFirstPoint, CollisionStrengthTable};
use ratewell_service::physics::pchip::Pchip;
use ratewell_service::physics::scaling::{
    BurgessTullyScaling, Coverage, ScaledUpsilon, default_scaling_parameter,
};
use ratewell_service::physics::transition::TransitionType;
use serde_json::Value;

const ALL_TYPES: [TransitionType; 4] = [
    TransitionType::Allowed,
    TransitionType::Forbidden,
    TransitionType::SpinChange,
    TransitionType::WeakAllowed,
];

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn transforms_round_trip_to_1e_12_for_all_types() {
    // Burgess & Tully 1992, A&A 254, 436, sec. 3 (from memory): x and y are invertible maps
    let delta_e_k = 2.7e4;
    for kind in ALL_TYPES {
        let cs = [None, Some(1.5), Some(10.0)];
        for c in cs {
            let s = BurgessTullyScaling::new(kind, delta_e_k, c).unwrap();
            for i in 0..=70 {
                let u = 10f64.powf(-4.0 + 0.1 * f64::from(i)); // kT/dE from 1e-4 to 1e3
                let t = u * delta_e_k;
                let x = s.scaled_temperature(t).unwrap();
                assert!((0.0..1.0).contains(&x));
                let back = s.temperature_from_scaled(x).unwrap();
                assert!(rel(back, t) < 1e-12, "{kind:?} C={c:?} u={u}: {back} vs {t}");
                let ups = 0.37 + u;
                let y = s.scaled_upsilon(ups, t).unwrap();
                let ups_back = s.upsilon_from_scaled(y, t).unwrap();
                assert!(rel(ups_back, ups) < 1e-14);
            }
        }
    }
}

#[test]
fn scaled_temperature_limits_and_midpoint() {
    // Burgess & Tully 1992 (from memory): x runs from 0 at T -> 0 to 1 at T -> inf;
    // types 2 and 3: x = u/(u + C), so x = 1/(1 + C) at kT = dE
    for kind in ALL_TYPES {
        let s = BurgessTullyScaling::new(kind, 1.0e4, None).unwrap();
        assert!(s.scaled_temperature(1.0e-6).unwrap() < 1e-8);
        assert!(s.scaled_temperature(1.0e300).unwrap() > 0.99);
    }
    let s = BurgessTullyScaling::new(TransitionType::Forbidden, 1.0e4, Some(3.0)).unwrap();
    assert!((s.scaled_temperature(1.0e4).unwrap() - 0.25).abs() < 1e-15);
    // type 1: x = 1 - ln C / ln(u + C); at u = 1, C = e: 1 - 1/ln(1 + e)
    let s = BurgessTullyScaling::new(TransitionType::Allowed, 1.0e4, None).unwrap();
    let expected = 1.0 - 1.0 / (1.0 + std::f64::consts::E).ln();
    assert!((s.scaled_temperature(1.0e4).unwrap() - expected).abs() < 1e-15);
    assert_eq!(
        default_scaling_parameter(TransitionType::Allowed),
        std::f64::consts::E
    );
}

/// An allowed transition's exact Upsilon(T) from an (invented) collision-strength table.
fn allowed_table(gf: f64, de_ry: f64) -> CollisionStrengthTable {
    CollisionStrengthTable::new(
        &[0.0, 0.05, 0.2, 0.6, 1.5, 4.0],
        &[1.1, 1.3, 1.8, 2.6, 3.6, 4.9],
        de_ry,
        TransitionType::Allowed,
        Some(gf),
        BelowFirstPoint::ConstantToThreshold,
    )
    .unwrap()
}

#[test]
fn interpolator_reproduces_its_points_and_flags_coverage() {
    // common practice, no source: an interpolant passes through its nodes
    let temps = [2.0e3, 5.0e3, 1.0e4, 3.0e4, 1.0e5, 3.0e5];
    let ups = [0.81, 0.92, 1.05, 1.31, 1.62, 2.1];
    for kind in ALL_TYPES {
        let s = BurgessTullyScaling::new(kind, 3.3e4, None).unwrap();
        let interp = ScaledUpsilon::new(s, &temps, &ups, Some(0.2)).unwrap();
        for (t, u) in temps.iter().zip(&ups) {
            let v = interp.evaluate(*t).unwrap();
            assert!(rel(v.upsilon, *u) < 1e-12, "{kind:?} T {t}");
            assert_eq!(v.coverage, Coverage::Inside);
        }
        assert_eq!(interp.evaluate(10.0).unwrap().coverage, Coverage::BelowData);
        let above = interp.evaluate(1.0e7).unwrap().coverage;
        let expected = if kind.is_dipole_allowed() {
            Coverage::AboveDataTowardLimit
        } else {
            Coverage::AboveData
        };
        assert_eq!(above, expected, "{kind:?}");
        // positivity everywhere (PCHIP of positive data, Fritsch & Carlson 1980)
        for i in 0..200 {
            let t = 10f64.powf(1.0 + 0.05 * f64::from(i));
            assert!(interp.evaluate(t).unwrap().upsilon > 0.0);
        }
    }
}

#[test]
fn interpolator_approaches_the_type_1_high_temperature_limit() {
    // Burgess & Tully 1992 (from memory): for type 1, y(1) = 4 g_l f / dE_Ry, i.e.
    // Upsilon / ln(kT/dE + e) -> 4 g_l f / dE_Ry as T -> inf (the Bethe limit)
    let (gf, de_ry) = (0.6, 0.4);
    let de_k = de_ry * KELVIN_PER_RYDBERG;
    let exact = allowed_table(gf, de_ry);
    let temps: Vec<f64> = [0.05, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|u| u * de_k)
        .collect();
    let ups: Vec<f64> = temps
        .iter()
        .map(|&t| exact.effective_collision_strength(t).unwrap())
        .collect();
    let s = BurgessTullyScaling::new(TransitionType::Allowed, de_k, None).unwrap();
    let interp = ScaledUpsilon::new(s, &temps, &ups, Some(gf)).unwrap();
    let limit = 4.0 * gf / de_ry;
    // the approach is linear in 1 - x = 1/ln(u + C) (the Bethe form's own ln(u) + const),
    // so the gap shrinks slowly; the exact average of the table shares the same law
    let mut previous_gap = f64::INFINITY;
    for u in [1.0e2, 1.0e4, 1.0e8, 1.0e16, 1.0e64, 1.0e256] {
        let t = u * de_k;
        let interpolated = interp.evaluate(t).unwrap().upsilon;
        let y = interpolated / (u + std::f64::consts::E).ln();
        let gap = rel(y, limit);
        assert!(gap < previous_gap, "u {u}: gap {gap} not shrinking");
        previous_gap = gap;
        let exact_u = exact.effective_collision_strength(t).unwrap();
        eprintln!(
            "u {u:e}: y/limit - 1 = {:e}, vs exact average {:e}",
            y / limit - 1.0,
            interpolated / exact_u - 1.0
        );
        assert!(rel(interpolated, exact_u) < 0.05, "u {u}");
    }
    assert!(
        previous_gap < 0.01,
        "y at u = 1e256 is {previous_gap} from the limit"
    );
    // between and beyond the nodes the interpolant follows the exact average closely
    // (measured: the worst deviation is printed)
    let mut worst: f64 = 0.0;
    for i in 0..60 {
        let u = 10f64.powf(-1.3 + 0.05 * f64::from(i)); // 0.05 .. 50
        let t = u * de_k;
        let d = rel(
            interp.evaluate(t).unwrap().upsilon,
            exact.effective_collision_strength(t).unwrap(),
        );
        worst = worst.max(d);
    }
    eprintln!("worst deviation of scaled interpolation from the exact average: {worst:e}");
    assert!(worst < 0.02);
}

#[test]
fn pchip_matches_scipy() {
    // reference: scipy.interpolate.PchipInterpolator (make_physics_reference.py)
    let data: Value = serde_json::from_str(include_str!("reference/physics_reference.json")).unwrap();
    let p = &data["pchip"];
    let f = |k: &str| -> Vec<f64> {
        p[k].as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect()
    };
    let interp = Pchip::new(&f("x"), &f("y")).unwrap();
    for (x, y) in f("x_eval").into_iter().zip(f("y_eval")) {
        assert!((interp.evaluate(x) - y).abs() < 1e-14, "x {x}");
    }
}

#[test]
fn flat_data_stay_flat_between_their_points_for_every_type() {
    // A constant Upsilon between its tabulated points must come back constant to rounding
    // (its interpolation plane is one where a constant is a straight line, see
    // physics::scaling; PCHIP reproduces straight lines, Fritsch & Carlson 1980). With the
    // type-1/4 limit point present (g_l f given) it must not bend the last interval either.
    let temps = [2.0e3, 5.0e3, 1.0e4, 3.0e4, 1.0e5, 3.0e5];
    let flat = [0.61; 6];
    for kind in ALL_TYPES {
        for gf in [None, Some(0.05), Some(5.0)] {
            let s = BurgessTullyScaling::new(kind, 2.16e3, None).unwrap();
            let interp = ScaledUpsilon::new(s, &temps, &flat, gf).unwrap();
            let mut worst: f64 = 0.0;
            for i in 0..=2000 {
                let t = 2.0e3 * 150f64.powf(f64::from(i) / 2000.0);
                let v = interp.evaluate(t).unwrap();
                assert_eq!(v.coverage, Coverage::Inside);
                worst = worst.max(rel(v.upsilon, 0.61));
            }
            // a few roundings of numbers near 1 (eps = 2.2e-16)
            assert!(worst < 2e-15, "{kind:?} gf {gf:?}: flat data bent by {worst:e}");
        }
    }
}

#[test]
fn above_the_data_the_type_1_curve_joins_the_limit_smoothly() {
    // The continuation above the data matches value and slope at the last node and reaches
    // the Bethe limit y(1) = 4 g_l f / dE_Ry (Burgess & Tully 1992, from memory) at x = 1;
    // checked by finite differences across the node (common practice, no source).
    let temps = [2.0e3, 5.0e3, 1.0e4, 3.0e4, 1.0e5, 3.0e5];
    let ups = [0.81, 0.92, 1.05, 1.31, 1.62, 2.1];
    let de_k = 3.3e4;
    let s = BurgessTullyScaling::new(TransitionType::Allowed, de_k, None).unwrap();
    let interp = ScaledUpsilon::new(s, &temps, &ups, Some(0.2)).unwrap();
    let t = 3.0e5;
    let h = 1e-4 * t;
    let f = |t: f64| interp.evaluate(t).unwrap().upsilon;
    let left = (f(t) - f(t - h)) / h;
    let right = (f(t + h) - f(t)) / h;
    assert!(
        (left - right).abs() < 2e-3 * left.abs().max(right.abs()),
        "{left} vs {right}"
    );
    let limit = 4.0 * 0.2 * KELVIN_PER_RYDBERG / de_k;
    let far = 1.0e250 * de_k;
    let y_far = f(far) / (far / de_k + std::f64::consts::E).ln();
    assert!(rel(y_far, limit) < 0.01, "{y_far} vs {limit}");
}
