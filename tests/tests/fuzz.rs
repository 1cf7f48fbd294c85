//! Bounded fuzz runs: every RPC's request bytes and the dataset files, mutated from valid
//! inputs by a seeded mutator (`ratewell_e2e::fuzz`).
//!
//! Every RPC must answer every body with a status that tells the client what to do: never
//! INTERNAL, UNKNOWN or DATA_LOSS (a body that does not decode is INVALID_ARGUMENT), and the
//! server keeps serving with its resident memory bounded. Every dataset text must load or be
//! refused with problems naming one of the given files, never panic.
//!
//! CI runs a short run (`RATEWELL_FUZZ_CASES` unset: a few hundred cases per target). The long
//! run, at least a million cases per target, is
//! `RATEWELL_FUZZ_CASES=1000000 cargo test --release -p ratewell-e2e --test fuzz -- --nocapture`;
//! `RATEWELL_FUZZ_SEED` picks another sequence of cases.

use prost::Message;
use ratewell_e2e::fuzz::Mutator;
use ratewell_e2e::raw::RawCodec;
use ratewell_e2e::requests::{MK_III, demo, key, lookup, solve};
use ratewell_e2e::server::TEST_TOKEN;
use ratewell_e2e::{TestServer, repo_path, test_config};
use ratewell_proto::pb;
use std::time::{Duration, Instant};
use tonic::Code;
use tonic::codegen::http::uri::PathAndQuery;

/// Cases per target: `RATEWELL_FUZZ_CASES`, or `default` for the CI run.
fn cases(default: usize) -> usize {
    std::env::var("RATEWELL_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn seed() -> u64 {
    std::env::var("RATEWELL_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20_261_203)
}

/// Resident set size of this process (which runs the server), bytes (proc(5)).
fn rss_bytes() -> u64 {
    let status = std::fs::read_to_string("/proc/self/status").expect("/proc/self/status");
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmRSS:"))
        .and_then(|v| v.split_whitespace().next())
        .and_then(|kib| kib.parse::<u64>().ok())
        .expect("VmRSS in kB")
        * 1024
}

/// The valid request each unary method's cases start from.
fn seeds() -> Vec<(&'static str, Vec<u8>)> {
    let mut with_grid = lookup(MK_III, vec![5.0e3, 1.0e4, 4.0e4]);
    with_grid.transitions = vec![key(2, 1), key(3, 1)];
    with_grid.grid = Some(pb::GridSpec {
        t_min_k: 1.0e3,
        t_max_k: 1.0e6,
        points_per_decade: 8,
    });
    vec![
        (
            "/ratewell.v1.Rates/LookupRates",
            lookup(MK_III, vec![1.0e4, 2.0e4]).encode_to_vec(),
        ),
        ("/ratewell.v1.Rates/LookupRates", with_grid.encode_to_vec()),
        (
            "/ratewell.v1.Rates/FetchTables",
            pb::FetchTablesRequest {
                dataset: Some(demo()),
                species: MK_III.into(),
                grid: None,
            }
            .encode_to_vec(),
        ),
        (
            "/ratewell.v1.Populations/SolvePopulations",
            solve(MK_III, vec![1.0e4, 2.0e4], vec![1.0e3, 1.0e5], true).encode_to_vec(),
        ),
        (
            "/ratewell.v1.Catalogue/ListDatasets",
            pb::ListDatasetsRequest {}.encode_to_vec(),
        ),
        (
            "/ratewell.v1.Catalogue/DescribeSpecies",
            pb::DescribeSpeciesRequest {
                dataset: Some(demo()),
                species: MK_III.into(),
                energy_unit: 0,
            }
            .encode_to_vec(),
        ),
        (
            "/ratewell.v1.Consistency/CompareDatasets",
            pb::CompareDatasetsRequest {
                first: Some(demo()),
                second: Some(demo()),
                species: vec![MK_III.into()],
                grid: None,
            }
            .encode_to_vec(),
        ),
        (
            "/ratewell.v1.Admin/LoadDataset",
            pb::LoadDatasetRequest {
                folder: "demo".into(),
            }
            .encode_to_vec(),
        ),
    ]
}

/// The codes that would mean the server failed rather than answered.
fn is_server_failure(code: Code) -> bool {
    matches!(code, Code::Internal | Code::Unknown | Code::DataLoss)
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn every_rpc_answers_mutated_bodies_with_a_meaningful_status() {
    let mut config = test_config();
    // A small budget for tables on requests' own grids, so the memory bound below means
    // something however many grids the cases ask for.
    config.limits.table_cache_bytes = 32 << 20;
    let server = TestServer::start_with(config).await;
    let per_target = cases(300);
    let mut mutator = Mutator::new(seed());
    let bearer: tonic::metadata::MetadataValue<_> = format!("Bearer {TEST_TOKEN}").parse().expect("ascii");
    let rss_before = rss_bytes();
    let started = Instant::now();
    let mut seen = std::collections::BTreeMap::<(&str, String), usize>::new();
    for (path, seed_body) in seeds() {
        for case in 0..per_target {
            let body = mutator.bytes(&seed_body);
            let mut grpc = tonic::client::Grpc::new(server.channel());
            grpc.ready().await.expect("the server keeps accepting calls");
            let mut request = tonic::Request::new(body.clone());
            request.metadata_mut().insert("authorization", bearer.clone());
            request.set_timeout(Duration::from_secs(20));
            let code = match grpc
                .unary(request, PathAndQuery::from_static(path), RawCodec)
                .await
            {
                Ok(_) => Code::Ok,
                Err(status) => {
                    assert!(
                        !is_server_failure(status.code()),
                        "{path} case {case} (seed {}): {status:?}; body {body:02x?}",
                        seed()
                    );
                    assert!(status.message().len() <= 4096, "{path}: unbounded message");
                    status.code()
                }
            };
            *seen.entry((path, format!("{code:?}"))).or_default() += 1;
        }
    }
    // The stream: one to three mutated lookups per call.
    let lookup_seed = lookup(MK_III, vec![1.0e4]).encode_to_vec();
    for case in 0..per_target {
        let messages: Vec<Vec<u8>> = (0..=mutator.below(3))
            .map(|_| mutator.bytes(&lookup_seed))
            .collect();
        let mut grpc = tonic::client::Grpc::new(server.channel());
        grpc.ready().await.expect("ready");
        let mut request = tonic::Request::new(tokio_stream::iter(messages.clone()));
        request.set_timeout(Duration::from_secs(20));
        let answer = grpc
            .streaming(
                request,
                PathAndQuery::from_static("/ratewell.v1.Rates/LookupRatesStream"),
                RawCodec,
            )
            .await;
        let status = match answer {
            Err(status) => Some(status),
            Ok(response) => {
                let mut incoming = response.into_inner();
                loop {
                    match incoming.message().await {
                        Ok(Some(_)) => continue,
                        Ok(None) => break None,
                        Err(status) => break Some(status),
                    }
                }
            }
        };
        if let Some(status) = status {
            assert!(
                !is_server_failure(status.code()),
                "stream case {case} (seed {}): {status:?}; messages {messages:02x?}",
                seed()
            );
        }
    }
    let grown = rss_bytes().saturating_sub(rss_before);
    eprintln!(
        "{} cases per target in {:?}; resident memory grew {} MiB; codes {seen:?}",
        per_target,
        started.elapsed(),
        grown >> 20
    );
    // Bounded: the 32 MiB grid-table budget, the allocator's reuse and the runtime's buffers.
    assert!(grown < 256 << 20, "resident memory grew by {} MiB", grown >> 20);
    // Still serving, correctly.
    let answer = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1.0e4]))
        .await
        .expect("a valid lookup after the fuzz run")
        .into_inner();
    assert!(answer.stamp.is_some() && !answer.excitation.is_empty());
    // The mutations reached past decoding: some cases were answered, some refused by value.
    assert!(seen.keys().any(|(_, c)| c == "Ok"), "{seen:?}");
    assert!(seen.keys().any(|(_, c)| c == "InvalidArgument"), "{seen:?}");
}

#[test]
fn mutated_dataset_files_load_or_are_refused_naming_a_file() {
    let dir = repo_path("service/data/demo");
    let manifest = std::fs::read_to_string(dir.join("dataset.toml")).expect("manifest");
    let species = std::fs::read_to_string(dir.join("mk-iii.toml")).expect("species file");
    let per_target = cases(3000);
    let mut mutator = Mutator::new(seed());
    let (mut loaded, mut refused) = (0usize, 0usize);
    for case in 0..per_target {
        // Mostly the species file (where the physics is), sometimes the manifest.
        let (m, s) = if mutator.below(5) == 0 {
            (mutator.text(&manifest), species.clone())
        } else {
            (manifest.clone(), mutator.text(&species))
        };
        let files = [("dataset.toml", m.as_str()), ("mk-iii.toml", s.as_str())];
        let result = std::panic::catch_unwind(|| ratewell_service::dataset::load_dataset_from_texts(&files));
        match result {
            Err(_) => {
                let path = std::env::temp_dir().join(format!("ratewell-fuzz-case-{case}.toml"));
                let _ = std::fs::write(&path, format!("# dataset.toml\n{m}\n# mk-iii.toml\n{s}\n"));
                panic!(
                    "case {case} (seed {}) panicked; its files are in {}",
                    seed(),
                    path.display()
                );
            }
            Ok(Ok(_)) => loaded += 1,
            Ok(Err(e)) => {
                refused += 1;
                for p in e.problems() {
                    assert!(
                        p.file == "dataset.toml" || p.file == "mk-iii.toml",
                        "case {case}: a problem names {:?}: {e}",
                        p.file
                    );
                    assert!(!p.message.is_empty(), "case {case}: an empty problem message");
                }
                assert!(!e.to_string().is_empty());
            }
        }
    }
    eprintln!("{per_target} mutated datasets: {loaded} loaded, {refused} refused");
    // Both outcomes occur, so the cases reach the checks behind the parser.
    assert!(loaded > 0 && refused > 0, "{loaded} loaded, {refused} refused");
}
