//! Served critical densities: the downward-only definition
//! n_c(i) = sum_(j<i) A_ij / sum_(j<i) q_ij (downward rates only; common practice, no source),
//! checked against the two-level closed form and against an independent computation from the
//! real-ion data files (tests/reference/make_critical_density_reference.py, mpmath).

use ratewell_service::dataset::load_dataset_from_texts;
use ratewell_service::engine::solve::{SolveAnswer, SolveQuery};
use ratewell_service::engine::{Engine, EngineConfig, Selector};
use serde_json::Value;
use std::path::Path;

fn solve(engine: &Engine, id: &str, species: &str, t_k: f64, densities: Vec<f64>) -> SolveAnswer {
    engine
        .solve(&SolveQuery::grid(
            Selector::newest(id),
            species,
            vec![t_k],
            densities,
        ))
        .expect("solve succeeds")
}

const TWO_LEVEL: &str = r#"
[species]
name = "Tw II"
element = "Tw"
nuclear_charge = 20
ion_charge = 1
source = "two-level test atom"
[units]
energy = "cm-1"
temperature = "K"
[[level]]
index = 1
label = "g"
weight = 2
energy = 0.0
source = "test"
[[level]]
index = 2
label = "u"
weight = 4
energy = 5000.0
source = "test"
[[radiative]]
upper = 2
lower = 1
a_per_s = 0.05
source = "test"
[[collision]]
upper = 2
lower = 1
type = "forbidden"
temperatures = [2000.0, 10000.0, 50000.0]
upsilon = [1.7, 1.7, 1.7]
source = "test"
"#;

#[test]
fn a_two_level_atom_follows_the_closed_form() {
    // Two levels: n_c = A21 / q21 with q21 = 8.629e-6 Upsilon / (g2 sqrt T) cm^3 s^-1
    // (Osterbrock & Ferland 2006, eq. 3.20; the constant to four figures). At n_e = n_c the
    // balance n1 n_e q12 = n2 (A21 + n_e q21) gives n2/n1 = (q12/q21)/2, half the Boltzmann
    // ratio (g2/g1) exp(-dE/kT) (detailed balance, same equation).
    let manifest = "format = 1\nid = \"two\"\nversion = \"1.0.0\"\ndescription = \"d\"\nprovenance = \"p\"\n";
    let data = load_dataset_from_texts(&[("dataset.toml", manifest), ("tw.toml", TWO_LEVEL)]).expect("loads");
    let engine = Engine::new(EngineConfig::default());
    engine.install(data).expect("installs");
    let t_k: f64 = 1.0e4;
    let q21 = 8.629e-6 * 1.7 / (4.0 * t_k.sqrt());
    let n_c = 0.05 / q21;
    let answer = solve(&engine, "two", "Tw II", t_k, vec![n_c]);
    let served = answer.points[0].critical_densities_per_cm3[1];
    assert!((served / n_c - 1.0).abs() < 2e-4, "{served} vs {n_c}");
    assert_eq!(answer.points[0].critical_densities_per_cm3[0], 0.0);
    // With two levels there is no excitation out of the upper level: both forms agree.
    assert_eq!(served, answer.points[0].critical_densities_all_exits_per_cm3[1]);
    // 1 cm^-1 = 1.438777 K (h c / k, CODATA 2018)
    let boltzmann = 2.0 * (-5000.0 * 1.438_776_877 / t_k).exp();
    let at_served = solve(&engine, "two", "Tw II", t_k, vec![served]);
    let f = &at_served.points[0].fractions;
    assert!((f[1] / f[0] / (0.5 * boltzmann) - 1.0).abs() < 1e-9, "{f:?}");
}

#[test]
fn real_ions_match_an_independent_computation() {
    let reference: Value =
        serde_json::from_str(include_str!("reference/critical_density_reference.json")).expect("json");
    let engine = Engine::new(EngineConfig::default());
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/real-ions");
    engine.load_path(&dir).expect("real ions load");
    let t_k = reference["temperature_k"].as_f64().unwrap();
    for (species, values) in reference["species"].as_object().unwrap() {
        let answer = solve(&engine, "reference-ions", species, t_k, vec![100.0, 1.0e6]);
        for point in &answer.points {
            for (j, want) in values.as_array().unwrap().iter().enumerate() {
                let got = point.critical_densities_per_cm3[j];
                match want.as_f64() {
                    None => assert_eq!(got, f64::INFINITY, "{species} level {}", j + 1),
                    Some(0.0) => assert_eq!(got, 0.0, "{species} level {}", j + 1),
                    // the tables reproduce Upsilon at their own 1e4 K node to rounding, and
                    // the prefactors agree to ~1e-15: 1e-9 leaves room for neither to matter
                    Some(w) => assert!(
                        (got / w - 1.0).abs() < 1e-9,
                        "{species} level {}: {got} vs {w}",
                        j + 1
                    ),
                }
                let all = point.critical_densities_all_exits_per_cm3[j];
                assert!(
                    all <= got,
                    "{species} level {}: all exits {all} above downward {got}",
                    j + 1
                );
            }
        }
    }
}
