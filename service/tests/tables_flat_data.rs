//! Flat effective collision strengths stay flat in the served tables. The source interpolant
//! is flat to rounding between the data points for every type (physics::scaling). A served
//! table reproduces that on every grid interval lying inside the data range; the grid interval
//! that holds the first or the last tabulated temperature also spans the continuation beyond
//! the data, so there the served value may leave the flat value by up to the table's served
//! error bound (the source is still flat on the data side of that interval).

mod common;

use ratewell_proto::rule::OutsidePolicy;
use ratewell_service::dataset::CollisionData;
use ratewell_service::engine::EngineConfig;
use ratewell_service::tables::build::grid_temperature_k;
use ratewell_service::tables::build_species_tables;

#[test]
fn flat_tables_are_flat_inside_the_data_and_within_their_bound_at_its_ends() {
    let data = common::synthetic_dataset();
    let species = &data.species[0];
    let grid = EngineConfig::default().default_grid.to_grid().unwrap();
    let tables = build_species_tables(species, grid).unwrap();
    let (t_first, t_last) = (
        common::UPSILON_TEMPERATURES_K[0],
        common::UPSILON_TEMPERATURES_K[common::UPSILON_TEMPERATURES_K.len() - 1],
    );
    let mut kinds = Vec::new();
    for c in &species.collisions {
        let CollisionData::EffectiveTable { upsilon, .. } = &c.data else {
            continue;
        };
        if upsilon.iter().any(|&u| u != common::FLAT_UPSILON) {
            continue;
        }
        kinds.push(c.kind);
        let table = tables.get(c.upper, c.lower).unwrap();
        let bound = table.max_interpolation_error();
        let (mut inside, mut ends) = (0, 0);
        for i in 0..grid.knots() - 1 {
            for k in 0..50 {
                let t = grid_temperature_k(&grid, i as f64 + (f64::from(k) + 0.5) / 50.0);
                if !(t_first..=t_last).contains(&t) {
                    continue;
                }
                let v = table.evaluate(t, OutsidePolicy::Refuse).unwrap().upsilon;
                let deviation = (v / common::FLAT_UPSILON - 1.0).abs();
                let interval_inside = grid_temperature_k(&grid, i as f64) >= t_first
                    && grid_temperature_k(&grid, (i + 1) as f64) <= t_last;
                if interval_inside {
                    // a few roundings: the cubic's, the exponential's (eps = 2.2e-16)
                    assert!(deviation < 2e-15, "{:?} at {t} K: {deviation:e}", c.kind);
                    inside += 1;
                } else {
                    assert!(
                        deviation <= bound,
                        "{:?} at {t} K: {deviation:e} > bound {bound:e}",
                        c.kind
                    );
                    ends += 1;
                }
            }
        }
        assert!(inside > 1000 && ends > 0, "{inside} {ends}");
    }
    assert_eq!(kinds.len(), 4, "one flat table per type: {kinds:?}");
}
