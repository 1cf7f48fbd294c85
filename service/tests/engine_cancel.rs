//! Abandoned population solves stop early instead of occupying the blocking pool.

use ratewell_proto::rule::OutsidePolicy;
use ratewell_service::engine::solve::{Cancel, PointLayout, SolveQuery};
use ratewell_service::engine::units::{DensityUnit, PowerUnit, TemperatureUnit};
use ratewell_service::engine::{Engine, EngineConfig, EngineError, Selector};

fn query() -> SolveQuery {
    SolveQuery {
        selector: Selector {
            id: "demo".into(),
            version: None,
            expected_hash: None,
        },
        species: "Mk II".into(),
        temperatures: (0..50).map(|i| 5.0e3 + 1.0e3 * f64::from(i)).collect(),
        temperature_unit: TemperatureUnit::Kelvin,
        densities: vec![1e2, 1e4, 1e6],
        density_unit: DensityUnit::PerCubicCentimetre,
        layout: PointLayout::Grid,
        outside: OutsidePolicy::Refuse,
        power_unit: PowerUnit::Watt,
        grid: None,
        min_line_fraction: 0.0,
    }
}

#[test]
fn a_cancelled_solve_stops_with_cancelled_and_an_uncancelled_one_completes() {
    let engine = Engine::new(EngineConfig::default());
    engine.load_demo().unwrap();
    let cancel = Cancel::default();
    cancel.cancel();
    assert!(matches!(
        engine.solve_cancellable(&query(), &cancel),
        Err(EngineError::Cancelled)
    ));
    let answer = engine.solve_cancellable(&query(), &Cancel::default()).unwrap();
    assert_eq!(answer.points.len(), 150);
}
