//! Limits end to end: requests over a work or answer-size limit are refused with
//! RESOURCE_EXHAUSTED naming the setting before any table is built; a dataset over a load limit
//! is refused naming the setting while the version before it keeps serving; many bad values
//! give a small INVALID_ARGUMENT; malformed bodies give INVALID_ARGUMENT; inputs that make a
//! solve degenerate give OUT_OF_RANGE naming the stable range, never INTERNAL.

use ratewell_e2e::raw::RawCodec;
use ratewell_e2e::requests::{MK_II, MK_III, assert_status, demo, lookup, refused, solve};
use ratewell_e2e::{TempDataDir, TestServer, repo_path, test_config};
use ratewell_proto::pb;
use std::time::Duration;
use tonic::Code;
use tonic::codegen::http::uri::PathAndQuery;
use tonic_types::StatusExt;

/// A grid over 1e3..1e6 K with `points_per_decade` knots per decade.
fn grid(points_per_decade: u32) -> pb::GridSpec {
    pb::GridSpec {
        t_min_k: 1e3,
        t_max_k: 1e6,
        points_per_decade,
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn oversized_requests_are_refused_before_any_work() {
    let mut config = test_config();
    config.limits.max_table_values_per_request = 100_000;
    config.limits.max_solve_work = 10_000;
    config.limits.max_compare_transitions = 100;
    config.max_message_bytes = 1 << 20;
    let (server, engine) = TestServer::start_sharing_engine(config).await;

    // Mk II has 561 collisional transitions (service/data/demo/mk-ii.toml): 301 knots on
    // 1e3..1e6 K at 100 per decade make 168,861 values, over 100,000.
    let mut req = lookup(MK_II, vec![1e4]);
    req.grid = Some(grid(100));
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &[
            "grid knots x transitions",
            "168861",
            "max_table_values_per_request",
        ],
    );
    let quota = status.get_details_quota_failure().expect("quota failure details");
    assert_eq!(quota.violations[0].subject, "max_table_values_per_request");
    assert!(
        status.get_details_retry_info().is_none(),
        "no retry hint: retrying cannot help"
    );
    let stats = engine.cache_stats();
    assert_eq!(
        (stats.entries, stats.uncached),
        (0, 0),
        "no table was built: {stats:?}"
    );

    // 34 levels (mk-ii.toml): 10 points x 34^2 = 11,560 > 10,000, refused the same way.
    let req = solve(MK_II, vec![1e4; 10], vec![1e3; 10], false);
    let status = refused(server.populations().solve_populations(req).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &[
            "points x levels^2",
            "11560",
            "max_solve_work",
            "split the request",
        ],
    );

    // 561 transitions x 200 temperatures, both directions: at least 561*200*16 = 1.8 MB of
    // packed doubles, over the 1 MiB message limit: refused up front, not encoded and dropped.
    let req = lookup(MK_II, vec![1e4; 200]);
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &["estimated answer size", "max_message_bytes", "split the request"],
    );

    // Comparing demo with itself covers 2 x (561 + 10) transitions, over 100.
    let req = pb::CompareDatasetsRequest {
        first: Some(demo()),
        second: Some(demo()),
        species: Vec::new(),
        grid: None,
    };
    let status = refused(server.consistency().compare_datasets(req).await);
    assert_status(
        &status,
        Code::ResourceExhausted,
        &["transitions compared", "1142", "max_compare_transitions"],
    );
    assert_eq!(engine.cache_stats().entries, 0);

    // A small request on a custom grid still works and is cached.
    let mut req = lookup(MK_III, vec![1e4]);
    req.grid = Some(grid(30));
    server
        .rates()
        .lookup_rates(req)
        .await
        .expect("small custom-grid lookup");
    assert_eq!(engine.cache_stats().entries, 1);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_dataset_over_a_limit_is_refused_by_name_and_the_previous_keeps_serving() {
    let data = TempDataDir::new("limits");
    let folder = data.copy_dataset(&repo_path("service/data/demo"), "demo-copy");
    let biggest = std::fs::read_dir(&folder)
        .unwrap()
        .map(|e| e.unwrap().metadata().unwrap().len())
        .max()
        .unwrap();
    let mut config = test_config();
    config.demo = false;
    config.data_dir = Some(data.path().to_path_buf());
    config.limits.max_file_bytes = biggest + 1000;
    let server = TestServer::start_with(config).await;
    let before = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("the copy serves")
        .into_inner();

    // Grow one species file past the limit with a comment (the content would be unchanged).
    let file = folder.join("mk-iii.toml");
    let mut text = std::fs::read_to_string(&file).unwrap();
    text.push_str(&format!("# {}\n", "x".repeat(biggest as usize + 2000)));
    std::fs::write(&file, text).unwrap();
    let status = refused(
        server
            .admin()
            .load_dataset(pb::LoadDatasetRequest {
                folder: "demo-copy".into(),
            })
            .await,
    );
    assert_status(
        &status,
        Code::FailedPrecondition,
        &["mk-iii.toml", "max_file_bytes", "previous data keep serving"],
    );
    let after = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("the previous version keeps serving")
        .into_inner();
    assert_eq!(after.stamp, before.stamp);
    assert_eq!(after.excitation, before.excitation);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_species_over_the_level_limit_is_refused_at_load() {
    let data = TempDataDir::new("levels");
    data.copy_dataset(&repo_path("service/data/demo"), "demo-copy");
    let mut config = test_config();
    config.data_dir = Some(data.path().to_path_buf());
    // Mk II has 34 levels.
    config.limits.max_levels_per_species = 33;
    let err = TestServer::try_start(config.clone()).await.err();
    // The embedded demo holds Mk II too, so start-up itself refuses it by name.
    let text = err.expect("the demo is over the limit").to_string();
    assert!(text.contains("levels of species \"Mk II\" = 34"), "{text}");
    assert!(text.contains("max_levels_per_species"), "{text}");

    config.demo = false;
    let server = TestServer::start_with(config).await;
    let status = refused(
        server
            .admin()
            .load_dataset(pb::LoadDatasetRequest {
                folder: "demo-copy".into(),
            })
            .await,
    );
    assert_status(
        &status,
        Code::FailedPrecondition,
        &["max_levels_per_species", "34"],
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn many_bad_values_give_a_small_invalid_argument() {
    let server = TestServer::start().await;
    // 200,000 bad temperatures, the worst printed with hundreds of digits by f64's Display.
    let req = lookup(MK_III, vec![-1e300; 200_000]);
    let status = refused(server.rates().lookup_rates(req).await);
    assert_status(&status, Code::InvalidArgument, &["200000 bad values", "-1e300 K"]);
    assert!(status.message().len() <= 1024, "{} bytes", status.message().len());
    // Far below the 16 KiB header block clients accept (base64 adds a third).
    assert!(status.details().len() < 4096, "{} bytes", status.details().len());
    let violations = status.get_details_bad_request().unwrap().field_violations;
    assert!(violations.len() <= 9, "{}", violations.len());
    assert!(violations.last().unwrap().description.contains("more bad values"));

    // A species name of 100 kB is not echoed in full.
    let req = lookup(&"Q".repeat(100_000), vec![1e4]);
    let status = refused(server.rates().lookup_rates(req).await);
    assert_eq!(status.code(), Code::NotFound);
    assert!(status.message().len() <= 1024, "{} bytes", status.message().len());
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn degenerate_solves_are_out_of_range_naming_the_stable_range() {
    let server = TestServer::start().await;
    // Mk II at these inputs: n_e = 1e-300 cm^-3 makes the balance matrix singular (collisional
    // rates vanish beside the radiative ones and a metastable group is cut off); 1e300 K,
    // extrapolated far beyond the grid, gives a negative population. Both were INTERNAL.
    let cold = solve(MK_II, vec![1e4], vec![1e-300], false);
    let mut hot = solve(MK_II, vec![1e300], vec![1e4], false);
    hot.outside_grid = pb::OutsideGrid::Extrapolate as i32;
    for (req, words) in [
        (cold, ["n_e = 1e-300 cm^-3", "singular"]),
        (hot, ["T = 1e300 K", "negative"]),
    ] {
        let status = refused(server.populations().solve_populations(req).await);
        assert_status(&status, Code::OutOfRange, &words);
        assert_status(
            &status,
            Code::OutOfRange,
            &["n_e from 1 to 1e20 cm^-3", "[10, 1000000000] K"],
        );
        assert!(status.message().len() < 1024);
    }
    // Mk III has a solution at both (level fractions summing to 1): only a degenerate
    // solve is refused.
    let mut hot = solve(MK_III, vec![1e300], vec![1e4], false);
    hot.outside_grid = pb::OutsideGrid::Extrapolate as i32;
    for req in [solve(MK_III, vec![1e4], vec![1e-300], false), hot] {
        let answer = server.populations().solve_populations(req).await.expect("solved");
        let sum: f64 = answer.into_inner().points[0].fractions.iter().sum();
        assert!((sum - 1.0).abs() < 1e-9, "{sum}");
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn malformed_bodies_are_invalid_argument_on_every_rpc() {
    let server = TestServer::start().await;
    // Protobuf encoding guide: tag byte 0x0f is field 1 with wire type 7, which does not exist;
    // 0x0a then ten 0xff bytes is a length varint longer than 64 bits.
    let bodies: [Vec<u8>; 2] = [vec![0x0f, 0x01], {
        let mut b = vec![0x0a];
        b.extend([0xff; 10]);
        b
    }];
    let unary = [
        "/ratewell.v1.Rates/LookupRates",
        "/ratewell.v1.Rates/FetchTables",
        "/ratewell.v1.Populations/SolvePopulations",
        "/ratewell.v1.Catalogue/ListDatasets",
        "/ratewell.v1.Catalogue/DescribeSpecies",
        "/ratewell.v1.Consistency/CompareDatasets",
        "/ratewell.v1.Admin/LoadDataset",
    ];
    for path in unary {
        for body in &bodies {
            let mut grpc = tonic::client::Grpc::new(server.channel());
            grpc.ready().await.expect("channel ready");
            let mut request = tonic::Request::new(body.clone());
            // Admin needs a token before its body is even decoded.
            let bearer = format!("Bearer {}", ratewell_e2e::server::TEST_TOKEN);
            request
                .metadata_mut()
                .insert("authorization", bearer.parse().expect("ascii"));
            let status = grpc
                .unary(request, PathAndQuery::from_static(path), RawCodec)
                .await
                .expect_err("a malformed body is refused");
            assert_eq!(status.code(), Code::InvalidArgument, "{path}: {status:?}");
            assert!(
                status.message().contains("malformed request body"),
                "{path}: {status:?}"
            );
        }
    }
    // The streamed lookup: the status arrives in the trailers.
    let mut grpc = tonic::client::Grpc::new(server.channel());
    grpc.ready().await.expect("channel ready");
    let answer = grpc
        .streaming(
            tonic::Request::new(tokio_stream::iter(vec![bodies[0].clone()])),
            PathAndQuery::from_static("/ratewell.v1.Rates/LookupRatesStream"),
            RawCodec,
        )
        .await;
    let status = match answer {
        Err(status) => status,
        Ok(stream) => stream
            .into_inner()
            .message()
            .await
            .expect_err("a malformed stream message is refused"),
    };
    assert_eq!(status.code(), Code::InvalidArgument, "{status:?}");
    // The server keeps serving.
    server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("still serving");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn idle_connections_that_never_speak_do_not_lock_callers_out() {
    use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery, RetryPolicy};
    let mut config = test_config();
    config.limits.handshake_timeout_s = 1.0;
    let server = TestServer::start_with(config).await;
    // More idle sockets than the connection limit (1,000), none sending the HTTP/2 preface.
    let mut idle = Vec::with_capacity(1100);
    for _ in 0..1100 {
        idle.push(
            tokio::net::TcpStream::connect(server.addr())
                .await
                .expect("connect"),
        );
    }
    // A real caller gets answers: the sockets over the limit were closed at accept, the others
    // at the handshake timeout.
    let client = Client::new(
        ClientConfig::new(server.url())
            .with_dataset(DatasetRef::new("demo").expect("id"))
            .with_retry(RetryPolicy {
                max_attempts: 50,
                initial_backoff: Duration::from_millis(20),
                max_backoff: Duration::from_millis(200),
                deadline: Duration::from_secs(20),
                ..RetryPolicy::default()
            }),
    )
    .expect("client");
    let started = std::time::Instant::now();
    let answer = client
        .lookup_rates(&RateQuery::new(MK_III, vec![1e4]))
        .await
        .expect("answered despite 1,100 idle sockets");
    assert_eq!(answer.temperature_count, 1);
    // Within a few handshake timeouts, not the request timeout.
    assert!(
        started.elapsed() < Duration::from_secs(10),
        "{:?}",
        started.elapsed()
    );
    // The idle sockets were closed by the server: reading (past the server's own HTTP/2
    // settings frame) ends, with the end of the stream or a reset, instead of waiting.
    let mut closed = 0;
    for socket in idle.iter_mut().take(50) {
        let mut buf = [0u8; 16];
        let read = async {
            loop {
                socket.readable().await?;
                match socket.try_read(&mut buf) {
                    Ok(0) => return Ok(0),
                    Ok(_) => continue,
                    Err(e) if e.kind() == std::io::ErrorKind::WouldBlock => continue,
                    Err(e) => return Err(e),
                }
            }
        };
        if tokio::time::timeout(Duration::from_secs(3), read).await.is_ok() {
            closed += 1;
        }
    }
    assert_eq!(closed, 50, "idle sockets closed by the server");
}
