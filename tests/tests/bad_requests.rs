//! Bad input end to end: each refusal has the exact status code, a message naming the field,
//! the value and what is allowed, and for batches the tonic-types BadRequest field violations
//! of every bad element. None of them takes the server down.

use ratewell_e2e::requests::{
    MK_III, assert_status, demo, field_violations, key, log_spaced, lookup, refused, selector, solve,
};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;
use ratewell_proto::rule::flags;
use tonic::Code;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn non_finite_and_non_positive_temperatures_are_each_named() {
    let server = TestServer::start().await;
    let req = lookup(
        MK_III,
        vec![1e4, f64::NAN, -5.0, 2e4, f64::INFINITY, 0.0, f64::NEG_INFINITY],
    );
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["temperatures[1] = NaN K", "must be finite and > 0"],
    );
    let fields: Vec<String> = field_violations(&status).into_iter().map(|(f, _)| f).collect();
    assert_eq!(
        fields,
        [
            "temperatures[1]",
            "temperatures[2]",
            "temperatures[4]",
            "temperatures[5]",
            "temperatures[6]"
        ],
        "one violation per bad element, none for the good ones"
    );
    let violations = field_violations(&status);
    assert!(violations[1].1.contains("-5 K"), "{violations:?}");
    assert!(violations[2].1.contains("inf K"), "{violations:?}");

    // The same in eV names the unit given.
    let mut req = lookup(MK_III, vec![-5.0]);
    req.temperature_unit = pb::TemperatureUnit::ElectronVolt as i32;
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::InvalidArgument, &["temperatures[0] = -5 eV"]);

    // A solve refuses them the same way.
    let req = solve(MK_III, vec![f64::NAN], vec![1e3], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(&status, Code::InvalidArgument, &["temperatures[0] = NaN K"]);
    assert_eq!(field_violations(&status).len(), 1);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn zero_and_negative_densities_are_refused() {
    let server = TestServer::start().await;
    let req = solve(MK_III, vec![1e4, 1e4, 1e4], vec![1e3, 0.0, -1e2], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["densities[1] = 0 cm-3", "must be finite and > 0"],
    );
    let fields: Vec<String> = field_violations(&status).into_iter().map(|(f, _)| f).collect();
    assert_eq!(fields, ["densities[1]", "densities[2]"]);

    let mut req = solve(MK_III, vec![1e4], vec![-3e6], false);
    req.density_unit = pb::DensityUnit::PerCubicMetre as i32;
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(&status, Code::InvalidArgument, &["densities[0] = -3000000 m-3"]);

    // Pairs need equal lengths.
    let req = solve(MK_III, vec![1e4, 2e4], vec![1e3], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["densities", "as many values as temperatures (2)"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn unknown_dataset_species_and_transition_are_not_found() {
    let server = TestServer::start().await;
    let mut req = lookup(MK_III, vec![1e4]);
    req.dataset = Some(selector("no-such-set", ""));
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::NotFound,
        &["dataset no-such-set", "not loaded", "demo@1.0.0"],
    );

    let mut req = lookup(MK_III, vec![1e4]);
    req.dataset = Some(selector("demo", "9.9.9"));
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::NotFound, &["demo@9.9.9", "not loaded"]);

    let req = lookup("Mk IX", vec![1e4]);
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::NotFound, &["species \"Mk IX\"", "Mk II", "Mk III"]);
    let req = pb::FetchTablesRequest {
        dataset: Some(demo()),
        species: "Mk IX".into(),
        grid: None,
    };
    let status = refused(server.rates().fetch_tables(req).await);
    assert_status(&status, Code::NotFound, &["species \"Mk IX\""]);
    let req = solve("Mk IX", vec![1e4], vec![1e3], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(&status, Code::NotFound, &["species \"Mk IX\""]);

    let mut req = lookup(MK_III, vec![1e4]);
    req.transitions = vec![key(2, 1), key(6, 1)];
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::NotFound,
        &["transitions[1] = 6-1", "no collisional transition", "Mk III"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn empty_batches_and_missing_names_are_invalid() {
    let server = TestServer::start().await;
    let status = refused(server.rates().lookup_rates(lookup(MK_III, vec![])).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["temperatures = []", "at least one temperature"],
    );
    assert_eq!(field_violations(&status)[0].0, "temperatures");

    let req = solve(MK_III, vec![1e4], vec![], true);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(&status, Code::InvalidArgument, &["densities = []"]);

    let mut req = lookup(MK_III, vec![1e4]);
    req.dataset = None;
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["dataset", "must name a dataset"],
    );

    let mut req = lookup("", vec![1e4]);
    req.dataset = Some(demo());
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::InvalidArgument, &["species = \"\""]);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn oversized_batches_are_resource_exhausted() {
    // Small limits, so an oversized request stays a small message.
    let config = ratewell_service::config::Config {
        max_lookup_values: 1000,
        max_solve_points: 50,
        ..test_config()
    };
    let server = TestServer::start_with(config).await;
    // Mk III has 10 transitions: 10 x 100 values is at the limit, 10 x 101 over it.
    let at_limit = lookup(MK_III, log_spaced(1e3, 1e6, 100));
    server.rates().lookup_rates(at_limit).await.expect("at the limit");
    let over = lookup(MK_III, log_spaced(1e3, 1e6, 101));
    let status = refused(server.rates().lookup_rates(over).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &[
            "transitions x temperatures of the lookup = 1010",
            "limit of 1000",
            "max_lookup_values",
        ],
    );

    let req = solve(MK_III, log_spaced(1e3, 1e5, 8), log_spaced(1e2, 1e6, 7), true);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &["points of the solve = 56", "limit of 50", "max_solve_points"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn outside_the_grid_is_refused_or_extrapolated_and_flagged() {
    let server = TestServer::start().await;
    // The default grid is 10 K .. 1e9 K.
    let status = refused(server.rates().lookup_rates(lookup(MK_III, vec![1e4, 5.0])).await);
    assert_status(
        &status,
        Code::OutOfRange,
        // named by the request's own field: temperatures[1]
        &[
            "temperatures[1] = 5 K",
            "outside the table grid",
            "extrapolation was not allowed",
        ],
    );
    // Unspecified means refuse.
    let mut req = lookup(MK_III, vec![2e9]);
    req.outside_grid = pb::OutsideGrid::Unspecified as i32;
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::OutOfRange,
        &["2000000000 K", "outside the table grid"],
    );
    let req = solve(MK_III, vec![5.0], vec![1e3], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::OutOfRange,
        &["temperatures[0] = 5 K", "outside the table grid"],
    );

    let mut req = lookup(MK_III, vec![1e4, 5.0, 2e9]);
    req.outside_grid = pb::OutsideGrid::Extrapolate as i32;
    let answer = server
        .rates()
        .lookup_rates(req)
        .await
        .expect("extrapolation allowed")
        .into_inner();
    let tables = server
        .rates()
        .fetch_tables(pb::FetchTablesRequest {
            dataset: Some(demo()),
            species: MK_III.into(),
            grid: None,
        })
        .await
        .expect("fetch")
        .into_inner()
        .tables;
    for t in 0..answer.transitions.len() {
        let f = &answer.flags[t * 3..t * 3 + 3];
        assert_eq!(f[0] & flags::OUTSIDE_GRID, 0, "1e4 K is inside");
        assert_eq!(f[1] & flags::OUTSIDE_GRID, flags::OUTSIDE_GRID);
        assert_eq!(f[2] & flags::OUTSIDE_GRID, flags::OUTSIDE_GRID);
        // Outside the grid and outside the table's source range is beyond the source; a
        // collision-strength table from threshold covers every low temperature, so 5 K is
        // within its source range although outside the grid.
        let table = tables
            .iter()
            .find(|x| x.key == Some(answer.transitions[t]))
            .expect("table");
        let beyond_at_5_k = if table.source_t_min_k > 5.0 {
            flags::BEYOND_SOURCE
        } else {
            0
        };
        assert_eq!(f[1] & flags::BEYOND_SOURCE, beyond_at_5_k);
        assert_eq!(f[2] & flags::BEYOND_SOURCE, flags::BEYOND_SOURCE);
        for v in &answer.deexcitation[t * 3..t * 3 + 3] {
            assert!(v.is_finite() && *v > 0.0, "extrapolated values stay positive");
        }
    }
    assert!(
        answer.cautions.iter().any(|c| c.contains("OUTSIDE_GRID")),
        "{:?}",
        answer.cautions
    );
}

/// A change that makes a good lookup request bad.
type Spoil = fn(&mut pb::LookupRatesRequest);

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn unspecified_or_unknown_units_are_invalid() {
    let server = TestServer::start().await;
    let cases: [(&str, Spoil); 5] = [
        ("temperature_unit", |r| r.temperature_unit = 0),
        ("rate_unit", |r| r.rate_unit = 0),
        ("direction", |r| r.direction = 0),
        ("temperature_unit", |r| r.temperature_unit = 7),
        ("outside_grid", |r| r.outside_grid = 9),
    ];
    for (field, spoil) in cases {
        let mut req = lookup(MK_III, vec![1e4]);
        spoil(&mut req);
        let status = refused(server.rates().lookup_rates(req).await);
        assert_status(&status, Code::InvalidArgument, &[field, "must be"]);
        assert_eq!(field_violations(&status)[0].0, field);
    }
    let mut req = solve(MK_III, vec![1e4], vec![1e3], false);
    req.density_unit = 0;
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["density_unit", "DENSITY_UNIT_PER_CUBIC_CENTIMETRE"],
    );
    let mut req = solve(MK_III, vec![1e4], vec![1e3], false);
    req.power_unit = 0;
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(&status, Code::InvalidArgument, &["power_unit", "POWER_UNIT_WATT"]);
    let mut req = solve(MK_III, vec![1e4], vec![1e3], false);
    req.min_line_fraction = 1.5;
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::InvalidArgument,
        &["min_line_fraction = 1.5", "[0, 1]"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn bad_grids_are_invalid() {
    let server = TestServer::start().await;
    let mut req = lookup(MK_III, vec![1e4]);
    req.grid = Some(pb::GridSpec {
        t_min_k: -1.0,
        t_max_k: 1e6,
        points_per_decade: 10,
    });
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::InvalidArgument, &["t_min_k = -1", "> 0 K"]);
    let req = pb::FetchTablesRequest {
        dataset: Some(demo()),
        species: MK_III.into(),
        grid: Some(pb::GridSpec {
            t_min_k: 1e3,
            t_max_k: 1e6,
            points_per_decade: 0,
        }),
    };
    let status = refused(server.rates().fetch_tables(req).await);
    assert_status(&status, Code::InvalidArgument, &["points_per_decade = 0"]);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_server_keeps_serving_after_bad_input() {
    let server = TestServer::start().await;
    for bad in [f64::NAN, -1.0, 0.0, 1e300, f64::MIN_POSITIVE] {
        let _ = server.rates().lookup_rates(lookup(MK_III, vec![bad])).await;
        let _ = server
            .populations()
            .solve_populations(solve(MK_III, vec![1e4], vec![bad], false))
            .await;
    }
    let answer = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("a good request after bad ones")
        .into_inner();
    assert_eq!(answer.deexcitation.len(), 10);
    server.shutdown().await.expect("clean stop");
}
