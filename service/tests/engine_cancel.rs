//! Abandoned population solves stop early instead of occupying the blocking pool.

use ratewell_service::engine::solve::{Cancel, SolveQuery};
use ratewell_service::engine::{Engine, EngineConfig, EngineError, Selector};

fn query() -> SolveQuery {
    SolveQuery::grid(
        Selector::newest("demo"),
        "Mk II",
        (0..50).map(|i| 5.0e3 + 1.0e3 * f64::from(i)).collect(),
        vec![1e2, 1e4, 1e6],
    )
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
