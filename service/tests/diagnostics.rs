//! Published nebular diagnostics reproduced from real ions built from published atomic data
//! (service/tests/data/real-ions: [O III], [S II], [O II]; values recalled from the cited
//! texts, see each file). The whole chain is exercised: file -> tables (Burgess & Tully
//! scaling) -> the evaluation rule -> statistical equilibrium -> emissivities.

use ratewell_service::engine::solve::{SolveAnswer, SolveQuery};
use ratewell_service::engine::units::PowerUnit;
use ratewell_service::engine::{Engine, EngineConfig, Selector};
use std::path::Path;

fn engine() -> Engine {
    let engine = Engine::new(EngineConfig::default());
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/real-ions");
    engine.load_path(&dir).expect("real-ion dataset loads");
    engine
}

fn solve(engine: &Engine, species: &str, temperatures: Vec<f64>, densities: Vec<f64>) -> SolveAnswer {
    engine
        .solve(&SolveQuery {
            power_unit: PowerUnit::ErgPerSecond,
            ..SolveQuery::grid(
                Selector::newest("reference-ions"),
                species,
                temperatures,
                densities,
            )
        })
        .expect("solve succeeds")
}

fn line(point: &ratewell_service::engine::solve::PointAnswer, upper: u32, lower: u32) -> f64 {
    point
        .lines
        .iter()
        .find(|l| l.upper == upper && l.lower == lower)
        .unwrap_or_else(|| panic!("line {upper}-{lower} present"))
        .emissivity
}

#[test]
fn oxygen_iii_temperature_ratio_follows_the_published_formula() {
    // (j4959 + j5007) / j4363 = 7.90 exp(3.29e4 / T) / (1 + 4.5e-4 ne / T^1/2)
    // (Osterbrock & Ferland 2006, Astrophysics of Gaseous Nebulae, eq. 5.4; from memory).
    // Tolerance 8 %: the formula is the authors' fit to their own atomic data, whose A values
    // and collision strengths carry about 10 % uncertainty (stated in the data file); its
    // temperature dependence, a factor of 20 over this range, must hold to that level.
    let engine = engine();
    let temps = vec![7000.0, 8000.0, 10000.0, 12000.0, 15000.0, 18000.0];
    let answer = solve(&engine, "O III", temps.clone(), vec![100.0]);
    for (point, &t) in answer.points.iter().zip(&temps) {
        let ours = (line(point, 4, 2) + line(point, 4, 3)) / line(point, 5, 4);
        let published = 7.90 * (3.29e4 / t).exp() / (1.0 + 4.5e-4 * 100.0 / t.sqrt());
        let rel = (ours - published).abs() / published;
        assert!(
            rel < 0.08,
            "T = {t} K: ours {ours:.1}, published {published:.1} ({:.1} %)",
            rel * 100.0
        );
    }
}

#[test]
fn sulphur_ii_doublet_reaches_its_low_and_high_density_limits() {
    let engine = engine();
    let answer = solve(&engine, "S II", vec![1.0e4], vec![1.0, 1.0e8]);
    let ratio = |p| line(p, 3, 1) / line(p, 2, 1);
    let low = ratio(&answer.points[0]);
    let high = ratio(&answer.points[1]);
    // Published limits of j6716/j6731 at 1e4 K: about 1.45 at low density and about 0.44 at
    // high density (Osterbrock & Ferland 2006, section 5.6 and fig. 5.8; from memory).
    // Tolerance 5 %: the data file splits the term collision strength by statistical weight
    // and takes A values to two or three figures.
    assert!((low - 1.45).abs() / 1.45 < 0.05, "low-density ratio {low:.3}");
    assert!((high - 0.44).abs() / 0.44 < 0.05, "high-density ratio {high:.3}");
    // Closed-form high-density limit (Osterbrock & Ferland 2006, section 5.6): Boltzmann
    // populations give (g3 / g2) exp(-dE23 / kT) (A31 nu31) / (A21 nu21). (The low-density
    // limit has no such closed form here: cascades from 2P feed both 2D levels.)
    let (e2, e3) = (14852.94_f64, 14884.73_f64);
    let c2 = 1.438_776_877; // second radiation constant hc/k, cm K (CODATA 2018)
    let high_closed = (6.0 / 4.0) * (-(e3 - e2) * c2 / 1.0e4).exp() * (2.6e-4 * e3) / (8.8e-4 * e2);
    assert!(
        (high - high_closed).abs() / high_closed < 0.01,
        "high {high:.4} vs closed form {high_closed:.4}"
    );
}

#[test]
fn oxygen_ii_doublet_reaches_its_limits() {
    // j3729/j3726 ([O II] 2D5/2 and 2D3/2 to 4S3/2): about 1.5 at low density and about 0.35
    // at high density (Osterbrock & Ferland 2006, fig. 5.8; from memory). Tolerance 10 %:
    // both limits depend on A values known to about 10 %.
    let engine = engine();
    let answer = solve(&engine, "O II", vec![1.0e4], vec![1.0, 1.0e8]);
    let ratio = |p| line(p, 2, 1) / line(p, 3, 1);
    let (low, high) = (ratio(&answer.points[0]), ratio(&answer.points[1]));
    assert!((low - 1.5).abs() / 1.5 < 0.10, "low-density ratio {low:.3}");
    assert!((high - 0.35).abs() / 0.35 < 0.10, "high-density ratio {high:.3}");
}

#[test]
fn critical_densities_match_published_values() {
    // Critical densities at 1e4 K (Osterbrock & Ferland 2006, table 3.15; from memory):
    // [O III] 1D2 6.4e5 cm^-3, [S II] 2D3/2 3.9e3 cm^-3 and 2D5/2 1.5e3 cm^-3.
    // Tolerance 25 %: n_c = A / q scales with both the A values and collision strengths.
    // The recalled 2D3/2 value is met only when the collisional transfer up to the close
    // 2D5/2 level (32 cm^-1 above) counts, i.e. by the all-exits ratio: with these data the
    // downward-only value is 1.48e4 (tests/critical_densities.rs checks that one). So it is
    // compared with the all-exits value; the other two are checked in both forms.
    let engine = engine();
    let o3 = solve(&engine, "O III", vec![1.0e4], vec![100.0]);
    let s2 = solve(&engine, "S II", vec![1.0e4], vec![100.0]);
    let check = |got: f64, want: f64, what: &str| {
        assert!(
            (got - want).abs() / want < 0.25,
            "{what}: {got:.3e} vs {want:.3e}"
        );
    };
    check(o3.points[0].critical_densities_per_cm3[3], 6.4e5, "O III 1D2");
    check(
        o3.points[0].critical_densities_all_exits_per_cm3[3],
        6.4e5,
        "O III 1D2, all exits",
    );
    check(
        s2.points[0].critical_densities_all_exits_per_cm3[1],
        3.9e3,
        "S II 2D3/2, all exits",
    );
    check(s2.points[0].critical_densities_per_cm3[2], 1.5e3, "S II 2D5/2");
    check(
        s2.points[0].critical_densities_all_exits_per_cm3[2],
        1.5e3,
        "S II 2D5/2, all exits",
    );
    // the downward-only 2D3/2 value leaves the recalled one far behind (see above)
    assert!(s2.points[0].critical_densities_per_cm3[1] > 3.0 * 3.9e3);
}

#[test]
fn tables_of_real_ions_and_demo_interpolate_to_1e_3_at_20_per_decade() {
    // The acceptance level for served tables (our own requirement): relative interpolation
    // error below 1e-3 over the whole grid with 20 points per decade, as bounded by each table
    // itself (tables_error_bound.rs checks the bounds against dense sampling).
    let engine = engine();
    engine.load_demo().expect("demo loads");
    for loaded in engine.datasets() {
        for (name, tables) in &loaded.tables {
            let err = tables.max_interpolation_error();
            assert!(
                err < 1e-3,
                "{} {name}: max interpolation error {err:.2e}",
                loaded.stamp.label()
            );
        }
    }
}
