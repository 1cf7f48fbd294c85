//! Statistical equilibrium: closed forms, limits, mpmath reference, and a wide sweep.

mod common;
use common::{closed_form_q_lu, closed_form_q_ul};

use ratewell_service::physics::emission::critical_densities_cm3;
use ratewell_service::physics::populations::{
    BLOCKED_LU_MIN_LEVELS, CollisionalRate, Factorisation, PopulationWorkspace, RadiativeRate,
    solve_populations,
};
use rayon::prelude::*;
use serde_json::Value;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// A two-level atom (invented numbers of forbidden-line size) at T = 1e4 K.
fn two_level() -> (f64, f64, f64, f64, f64, f64) {
    let (g1, g2, de_k, t, ups, a21) = (4.0, 6.0, 2.6e4, 1.0e4, 1.7, 3.5e-2);
    let q21 = closed_form_q_ul(ups, g2, t);
    let q12 = closed_form_q_lu(ups, g1, g2, de_k, t);
    (g1, g2, (-de_k / t).exp(), q12, q21, a21)
}

#[test]
fn two_level_atom_matches_its_closed_form() {
    // Osterbrock & Ferland 2006, eq. 3.28: n2/n1 = n_e q12 / (A21 + n_e q21)
    let (g1, g2, boltzmann, q12, q21, a21) = two_level();
    let rad = [RadiativeRate {
        upper: 1,
        lower: 0,
        a_s: a21,
    }];
    let coll = [CollisionalRate {
        upper: 1,
        lower: 0,
        excitation_cm3_s: q12,
        deexcitation_cm3_s: q21,
    }];
    for i in 0..=40 {
        let ne = 10f64.powf(0.5 * f64::from(i)); // 1 .. 1e20 cm^-3
        let p = solve_populations(2, &rad, &coll, ne).unwrap();
        let ratio = p.fractions[1] / p.fractions[0];
        let expected = ne * q12 / (a21 + ne * q21);
        assert!(rel(ratio, expected) < 1e-12, "ne {ne}: {ratio:e} vs {expected:e}");
    }
    // at the critical density n_c = A21/q21 (Osterbrock & Ferland 2006, eq. 3.30) the upper
    // level holds half its Boltzmann share: n2/n1 = q12/(2 q21) = (1/2)(g2/g1) e^(-dE/kT)
    let n_crit = critical_densities_cm3(2, &rad, &coll).unwrap()[1].unwrap();
    assert!(rel(n_crit, a21 / q21) < 1e-15);
    let p = solve_populations(2, &rad, &coll, n_crit).unwrap();
    let ratio = p.fractions[1] / p.fractions[0];
    assert!(rel(ratio, 0.5 * (g2 / g1) * boltzmann) < 1e-12);
}

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/physics_reference.json")).unwrap()
}

/// The invented 5-level system stored in the reference file.
fn five_level() -> (Vec<f64>, Vec<f64>, f64, Vec<RadiativeRate>, Vec<CollisionalRate>) {
    let data = reference();
    let p = &data["populations"];
    let floats = |v: &Value| -> Vec<f64> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    let rad = p["radiative"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| RadiativeRate {
            upper: r["upper"].as_u64().unwrap() as usize,
            lower: r["lower"].as_u64().unwrap() as usize,
            a_s: r["a_s"].as_f64().unwrap(),
        })
        .collect();
    let coll = p["collisional"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| CollisionalRate {
            upper: c["upper"].as_u64().unwrap() as usize,
            lower: c["lower"].as_u64().unwrap() as usize,
            excitation_cm3_s: c["excitation_cm3_s"].as_f64().unwrap(),
            deexcitation_cm3_s: c["deexcitation_cm3_s"].as_f64().unwrap(),
        })
        .collect();
    (
        floats(&p["energies_k"]),
        floats(&p["g"]),
        p["t_k"].as_f64().unwrap(),
        rad,
        coll,
    )
}

#[test]
fn five_level_populations_match_mpmath_at_every_density() {
    // reference: mpmath.lu_solve of the same balance equations at 40 digits
    // (both LU kernels, each against the same independent reference)
    let (_, _, _, rad, coll) = five_level();
    let data = reference();
    for factorisation in [Factorisation::Unblocked, Factorisation::Blocked] {
        let mut ws = PopulationWorkspace::with_factorisation(5, factorisation).unwrap();
        ws.set_rates(&rad, &coll).unwrap();
        let mut worst: f64 = 0.0;
        for sol in data["populations"]["solutions"].as_array().unwrap() {
            let ne = sol["ne_cm3"].as_f64().unwrap();
            let view = ws.solve(ne).unwrap();
            for (j, expected) in sol["fractions"].as_array().unwrap().iter().enumerate() {
                let expected = expected.as_f64().unwrap();
                let r = rel(view.fractions[j], expected);
                worst = worst.max(r);
                // relative accuracy even for populations far below 1 (down to ~1e-13 here)
                assert!(
                    r < 1e-13,
                    "{factorisation:?}, ne {ne}, level {j}: {} vs {expected:e}",
                    view.fractions[j]
                );
            }
            assert!(view.max_relative_imbalance < 1e-12, "ne {ne}");
        }
        eprintln!("{factorisation:?}: worst relative deviation from mpmath: {worst:e}");
    }
}

#[test]
fn high_density_limit_is_boltzmann() {
    // Osterbrock & Ferland 2006, sec. 3.5 (from memory): at n_e >> n_c collisions set LTE,
    // n_j / n_0 = (g_j / g_0) exp(-E_j / kT)
    let (energies, g, t, rad, coll) = five_level();
    // the 2e8 s^-1 decay of level 4 would need n_e >> 1e16 cm^-3 to thermalise; without it
    // every A/(n_e q) is below 1e-9 at 1e20 cm^-3, so LTE must hold to 1e-6
    let rad: Vec<RadiativeRate> = rad.into_iter().filter(|r| r.a_s < 1.0e4).collect();
    let ne = 1.0e20;
    for r in &rad {
        let q_out: f64 = coll
            .iter()
            .filter(|c| c.upper == r.upper)
            .map(|c| c.deexcitation_cm3_s)
            .sum();
        assert!(r.a_s / (ne * q_out) < 1e-9);
    }
    let p = solve_populations(5, &rad, &coll, ne).unwrap();
    let weights: Vec<f64> = (0..5).map(|j| g[j] * (-energies[j] / t).exp()).collect();
    let z: f64 = weights.iter().sum();
    for (j, (fraction, weight)) in p.fractions.iter().zip(&weights).enumerate() {
        assert!(rel(*fraction, weight / z) < 1e-6, "level {j}");
    }
}

#[test]
fn low_density_limit_is_coronal() {
    // Osterbrock & Ferland 2006, sec. 3.5 (from memory): at n_e << n_c every excitation is
    // followed by a radiative decay: n_j / n_0 = n_e q_0j / sum_k A_jk (no cascades here)
    let t = 1.0e4;
    let g = [1.0, 3.0, 5.0];
    let de_k = [0.0, 3.0e4, 5.5e4];
    let a = [0.0, 2.0e2, 8.0e1];
    let ups = [0.0, 0.9, 1.4];
    let mut rad = Vec::new();
    let mut coll = Vec::new();
    for j in 1..3 {
        rad.push(RadiativeRate {
            upper: j,
            lower: 0,
            a_s: a[j],
        });
        coll.push(CollisionalRate {
            upper: j,
            lower: 0,
            excitation_cm3_s: closed_form_q_lu(ups[j], g[0], g[j], de_k[j], t),
            deexcitation_cm3_s: closed_form_q_ul(ups[j], g[j], t),
        });
    }
    let ne = 1.0;
    let p = solve_populations(3, &rad, &coll, ne).unwrap();
    for j in 1..3 {
        let coronal = ne * coll[j - 1].excitation_cm3_s / a[j];
        assert!(rel(p.fractions[j] / p.fractions[0], coronal) < 1e-6, "level {j}");
    }
}

/// A reproducible pseudo-random sequence in [0, 1) (64-bit LCG, Knuth MMIX constants).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// An invented 36-level system with A values from 1e-3 to 1e9 s^-1 and Upsilon 0.01 to 10.
fn synthetic_system(n: usize, t: f64) -> (Vec<RadiativeRate>, Vec<CollisionalRate>) {
    let mut rng = Lcg(0x5eed);
    let energies: Vec<f64> = (0..n).map(|j| 2.0e3 * (j as f64).powf(1.6)).collect();
    let g: Vec<f64> = (0..n).map(|j| 1.0 + (j % 7) as f64).collect();
    let mut rad = Vec::new();
    let mut coll = Vec::new();
    for u in 1..n {
        for l in 0..u {
            if l == u - 1 || rng.next() < 0.5 {
                rad.push(RadiativeRate {
                    upper: u,
                    lower: l,
                    a_s: 10f64.powf(-3.0 + 12.0 * rng.next()),
                });
            }
            let ups = 10f64.powf(-2.0 + 3.0 * rng.next());
            let de = energies[u] - energies[l];
            coll.push(CollisionalRate {
                upper: u,
                lower: l,
                excitation_cm3_s: closed_form_q_lu(ups, g[l], g[u], de, t),
                deexcitation_cm3_s: closed_form_q_ul(ups, g[u], t),
            });
        }
    }
    (rad, coll)
}

#[test]
fn wide_density_sweeps_are_clean_with_either_lu_kernel() {
    // common practice, no source: populations are fractions (>= 0, sum 1) and balance holds;
    // the two LU kernels come from independent crates, so their agreement is a cross-check.
    for n in [36, 120] {
        let (rad, coll) = synthetic_system(n, 2.0e4);
        let mut unblocked = PopulationWorkspace::with_factorisation(n, Factorisation::Unblocked).unwrap();
        let mut blocked = PopulationWorkspace::with_factorisation(n, Factorisation::Blocked).unwrap();
        unblocked.set_rates(&rad, &coll).unwrap();
        blocked.set_rates(&rad, &coll).unwrap();
        let (mut worst_imbalance, mut worst_disagreement): (f64, f64) = (0.0, 0.0);
        for i in 0..=80 {
            let ne = 10f64.powf(0.25 * f64::from(i)); // 1 .. 1e20 cm^-3
            let first = unblocked.solve(ne).unwrap();
            let first_fractions = first.fractions.to_vec();
            worst_imbalance = worst_imbalance.max(first.max_relative_imbalance);
            let second = blocked.solve(ne).unwrap();
            worst_imbalance = worst_imbalance.max(second.max_relative_imbalance);
            for v in [&first_fractions[..], second.fractions] {
                let sum: f64 = v.iter().sum();
                assert!((sum - 1.0).abs() < 1e-12, "{n} levels, ne {ne}: sum {sum}");
                assert!(v.iter().all(|&x| x >= 0.0));
            }
            for (a, b) in first_fractions.iter().zip(second.fractions) {
                if a.max(*b) > 1e-280 {
                    worst_disagreement = worst_disagreement.max(rel(*a, *b));
                }
            }
        }
        eprintln!(
            "{n} levels: worst imbalance {worst_imbalance:e}, kernels differ by {worst_disagreement:e}"
        );
        assert!(worst_imbalance < 1e-12, "{n} levels: {worst_imbalance:e}");
        assert!(worst_disagreement < 1e-10, "{n} levels: {worst_disagreement:e}");
    }
}

#[test]
fn default_kernel_follows_system_size() {
    // common practice, no source: the faster kernel for each size (see BLOCKED_LU_MIN_LEVELS)
    for (n, expected) in [
        (1, Factorisation::Unblocked),
        (BLOCKED_LU_MIN_LEVELS - 1, Factorisation::Unblocked),
        (BLOCKED_LU_MIN_LEVELS, Factorisation::Blocked),
        (300, Factorisation::Blocked),
    ] {
        assert_eq!(
            PopulationWorkspace::new(n).unwrap().factorisation(),
            expected,
            "{n}"
        );
    }
}

#[test]
fn parallel_batch_with_one_workspace_per_worker_matches_serial() {
    // common practice, no source: the workspace is Send and a solve depends only on its input
    let n = 32;
    let (rad, coll) = synthetic_system(n, 1.0e4);
    let densities: Vec<f64> = (0..24).map(|i| 10f64.powf(0.8 * f64::from(i))).collect();
    let parallel: Vec<Vec<f64>> = densities
        .par_iter()
        .map_init(
            || {
                let mut ws = PopulationWorkspace::new(n).unwrap();
                ws.set_rates(&rad, &coll).unwrap();
                ws
            },
            |ws, &ne| ws.solve(ne).unwrap().fractions.to_vec(),
        )
        .collect();
    for (ne, p) in densities.iter().zip(&parallel) {
        let serial = solve_populations(n, &rad, &coll, *ne).unwrap();
        assert_eq!(&serial.fractions, p);
    }
}
