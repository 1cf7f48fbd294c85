//! Helpers shared by the service benchmarks: the invented benchmark datasets, loaded through
//! the real loader into a real engine.
#![allow(dead_code)] // each benchmark uses a different part

#[path = "synthetic.rs"]
pub(crate) mod synthetic;

use ratewell_service::dataset::{Dataset, load_dataset_from_texts};
use ratewell_service::engine::{Engine, EngineConfig, GridSpec};

/// A dataset `id` with one invented species per level count (ion charges 0, 1, ...).
pub(crate) fn dataset(id: &str, level_counts: &[usize]) -> Dataset {
    let files = synthetic::dataset_files(id, level_counts, synthetic::Mix::default());
    let refs: Vec<(&str, &str)> = files.iter().map(|(n, t)| (n.as_str(), t.as_str())).collect();
    load_dataset_from_texts(&refs).expect("the invented benchmark dataset loads")
}

/// The benchmark precompute grid: 1e3 to 1e8 K at 20 points per decade (101 knots).
pub(crate) const PRECOMPUTE_GRID: GridSpec = GridSpec {
    t_min_k: 1e3,
    t_max_k: 1e8,
    points_per_decade: 20,
};

/// An engine with `dataset` installed on the default engine grid.
pub(crate) fn engine_with(dataset: Dataset) -> Engine {
    let engine = Engine::new(EngineConfig::default());
    engine
        .install(dataset)
        .expect("the invented benchmark dataset installs");
    engine
}
