//! Prints the tables with the largest interpolation-error bound and where, sampling every
//! interval at 16 points, the error peaks (developer probe).
use ratewell_service::tables::sources::transition_source;
fn main() {
    let engine = ratewell_service::engine::Engine::new(Default::default());
    engine.load_demo().unwrap();
    for d in engine.datasets() {
        for species in &d.dataset.species {
            let t = &d.tables[&species.name];
            let mut v: Vec<_> = t
                .tables
                .iter()
                .map(|x| (x.max_interpolation_error(), x))
                .collect();
            v.sort_by(|a, b| b.0.total_cmp(&a.0));
            for (e, table) in v.iter().take(3) {
                let h = table.header();
                let c = species.collisional_transition(h.upper, h.lower).unwrap();
                let src = transition_source(species, c, (10.0, 1e9)).unwrap();
                let g = table.grid();
                let mut worst = (0.0, 0.0);
                for i in 0..(g.knots() - 1) * 16 {
                    let position = (i as f64 + 0.5) / 16.0;
                    let tk = ratewell_service::tables::build::grid_temperature_k(g, position);
                    let direct = src.source.upsilon(tk).unwrap();
                    let tab = table.evaluate_at(&g.locate(tk)).upsilon;
                    let r = ((tab - direct) / direct).abs();
                    if r > worst.0 {
                        worst = (r, tk);
                    }
                }
                println!(
                    "{} {}-{} {:?} err {e:.2e} at T={:.3e} dE_k={:.3e}",
                    species.name, h.upper, h.lower, c.kind, worst.1, h.excitation_energy_k
                );
            }
        }
    }
}
