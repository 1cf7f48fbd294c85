//! `ratewell-bench measure`: the client-side and over-the-wire measurements.

use ratewell_client::pb;
use ratewell_client::pb::rates_client::RatesClient;
use ratewell_client::pb::transport_client::TransportClient;
use ratewell_client::{
    Client, ClientConfig, DatasetRef, Direction, EvalOptions, LocalTables, OutsidePolicy, RateBuffers,
    RateQuery, TableGrid, Transition,
};
use ratewell_proto::constants::rate_prefactor_cm3_s_k_half;
use ratewell_proto::rule::{Location, RateOutputs, checked_location};
use serde_json::{Value, json};
use std::hint::black_box;
use std::io::{BufRead, BufReader};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};
use tonic::transport::{Channel, Endpoint};

/// Boxed error for the driver (messages go to the terminal).
pub(crate) type Failure = Box<dyn std::error::Error + Send + Sync>;

/// Tables and temperatures of the evaluation comparison (2,000 tables of 64 knots at
/// 10,000 temperatures).
const EVAL_TABLES: usize = 2000;
const EVAL_TEMPERATURES: usize = 10_000;
/// 64 knots: 10^1.7 K to 10^8 K at 10 per decade.
pub(crate) const EVAL_GRID: (f64, f64, u32) = (50.118_723_362_727_23, 1.0e8, 10);
/// Species of the evaluation dataset (64 levels, 2,016 transitions; written by bench-core).
pub(crate) const EVAL_SPECIES: &str = "Bm I";
/// Batch sizes of the evaluation-cost curve (temperatures on one table).
const BATCH_SIZES: [usize; 7] = [1, 10, 100, 1000, 10_000, 100_000, 1_000_000];

/// A server child process, killed when dropped.
pub(crate) struct Server {
    child: Child,
    pub(crate) address: String,
    log: Arc<Mutex<Vec<String>>>,
    started: Instant,
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

impl Server {
    /// The child's process id.
    pub(crate) fn pid(&self) -> u32 {
        self.child.id()
    }

    /// Starts `bin` on a free loopback port with the benchmark endpoints and `extra` flags.
    pub(crate) fn start(bin: &Path, extra: &[&str]) -> Result<Self, Failure> {
        let port = std::net::TcpListener::bind("127.0.0.1:0")?.local_addr()?.port();
        let listen = format!("127.0.0.1:{port}");
        let started = Instant::now();
        let mut child = Command::new(bin)
            .args(["--listen", &listen, "--benchmark-endpoints"])
            .args(extra)
            .env("RUST_LOG", "info")
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .map_err(|e| format!("cannot start {}: {e}", bin.display()))?;
        let log = Arc::new(Mutex::new(Vec::new()));
        for stream in [
            child
                .stdout
                .take()
                .map(|s| Box::new(s) as Box<dyn std::io::Read + Send>),
            child
                .stderr
                .take()
                .map(|s| Box::new(s) as Box<dyn std::io::Read + Send>),
        ]
        .into_iter()
        .flatten()
        {
            let log = Arc::clone(&log);
            std::thread::spawn(move || {
                for line in BufReader::new(stream).lines().map_while(Result::ok) {
                    log.lock().unwrap_or_else(|p| p.into_inner()).push(line);
                }
            });
        }
        Ok(Self {
            child,
            address: format!("http://{listen}"),
            log,
            started,
        })
    }

    /// Seconds from process start until `species` of `dataset` answers a lookup.
    pub(crate) async fn wait_ready(
        &mut self,
        dataset: &str,
        species: &str,
        limit: Duration,
    ) -> Result<f64, Failure> {
        loop {
            if let Some(status) = self.child.try_wait()? {
                return Err(format!("server exited with {status}: {}", self.log_text()).into());
            }
            if self.started.elapsed() > limit {
                return Err(format!("server not ready after {limit:?}: {}", self.log_text()).into());
            }
            if let Ok(channel) = Endpoint::from_shared(self.address.clone())?.connect().await {
                let mut rates = RatesClient::new(channel);
                if rates
                    .lookup_rates(lookup_request(dataset, species, &[], &[1.0e4]))
                    .await
                    .is_ok()
                {
                    return Ok(self.started.elapsed().as_secs_f64());
                }
            }
            tokio::time::sleep(Duration::from_millis(1)).await;
        }
    }

    /// Resident and peak memory of the server process, bytes (Linux /proc).
    pub(crate) fn memory_bytes(&self) -> Value {
        let status = std::fs::read_to_string(format!("/proc/{}/status", self.child.id())).unwrap_or_default();
        let field = |name: &str| {
            status
                .lines()
                .find(|l| l.starts_with(name))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse::<u64>().ok())
                .map(|kib| kib * 1024)
        };
        json!({ "rss_bytes": field("VmRSS:"), "peak_rss_bytes": field("VmHWM:") })
    }

    /// The `table_bytes` the server logged when it started serving.
    fn logged_table_bytes(&self) -> Option<u64> {
        let log = self.log.lock().unwrap_or_else(|p| p.into_inner());
        log.iter().find_map(|line| {
            let plain = strip_ansi(line);
            let rest = &plain[plain.find("table_bytes")? + "table_bytes".len()..];
            let rest = rest.trim_start_matches(['=', '"', ':', ' ']);
            rest.split(|c: char| !c.is_ascii_digit()).next()?.parse().ok()
        })
    }

    fn log_text(&self) -> String {
        self.log.lock().unwrap_or_else(|p| p.into_inner()).join("\n")
    }
}

/// `line` without terminal colour sequences (ESC [ ... letter).
fn strip_ansi(line: &str) -> String {
    let mut out = String::with_capacity(line.len());
    let mut chars = line.chars();
    while let Some(c) = chars.next() {
        if c == '\u{1b}' {
            for d in chars.by_ref() {
                if d.is_ascii_alphabetic() {
                    break;
                }
            }
        } else {
            out.push(c);
        }
    }
    out
}

fn lookup_request(
    dataset: &str,
    species: &str,
    transitions: &[Transition],
    temps_k: &[f64],
) -> pb::LookupRatesRequest {
    pb::LookupRatesRequest {
        dataset: Some(pb::DatasetSelector {
            id: dataset.into(),
            ..Default::default()
        }),
        species: species.into(),
        transitions: transitions.iter().map(|t| t.to_wire()).collect(),
        temperatures: temps_k.to_vec(),
        temperature_unit: pb::TemperatureUnit::Kelvin as i32,
        direction: pb::Direction::Deexcitation as i32,
        rate_unit: pb::RateUnit::CubicCentimetrePerSecond as i32,
        outside_grid: pb::OutsideGrid::Refuse as i32,
        grid: None,
    }
}

/// `n` temperatures spread evenly in log T over [10^1.75, 10^7.95] K (inside the 64-knot grid).
pub(crate) fn eval_temperatures(n: usize) -> Vec<f64> {
    (0..n)
        .map(|j| 10f64.powf(1.75 + 6.2 * (j as f64 + 0.5) / n as f64))
        .collect()
}

/// Best wall time of `reps` runs of `f`, seconds.
pub(crate) fn best_of(reps: usize, mut f: impl FnMut()) -> f64 {
    (0..reps)
        .map(|_| {
            let started = Instant::now();
            f();
            started.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

/// Runs every measurement and writes `<work>/rust.json`.
pub(crate) fn run(server_bin: &Path, data_dir: &Path, work: &Path, quick: bool) -> Result<(), Failure> {
    std::fs::create_dir_all(work.join("eval"))?;
    let runtime = tokio::runtime::Builder::new_multi_thread().enable_all().build()?;
    let report = runtime.block_on(measure_all(server_bin, data_dir, work, quick))?;
    let path = work.join("rust.json");
    std::fs::write(&path, serde_json::to_string_pretty(&report)?)?;
    eprintln!("wrote {}", path.display());
    Ok(())
}

/// Only the small-call latencies, against a server on the embedded demo dataset.
pub(crate) fn run_latency_only(server_bin: &Path, quick: bool) -> Result<(), Failure> {
    let runtime = tokio::runtime::Builder::new_multi_thread().enable_all().build()?;
    runtime.block_on(async {
        let mut server = Server::start(server_bin, &[])?;
        server
            .wait_ready("demo", "Mk III", Duration::from_secs(30))
            .await?;
        eprintln!("server pid {}", server.pid());
        measure_latency(&server, quick).await?;
        Ok(())
    })
}

async fn measure_all(server_bin: &Path, data_dir: &Path, work: &Path, quick: bool) -> Result<Value, Failure> {
    // Start-up on the embedded demo dataset only: time until a lookup is answered.
    let mut demo_ready = Vec::new();
    for _ in 0..if quick { 1 } else { 3 } {
        let mut demo = Server::start(server_bin, &[])?;
        demo_ready.push(demo.wait_ready("demo", "Mk III", Duration::from_secs(30)).await?);
    }
    let demo_ready_s = demo_ready.iter().copied().fold(f64::INFINITY, f64::min);
    eprintln!(
        "demo server ready after {:.0} ms (best of {})",
        demo_ready_s * 1e3,
        demo_ready.len()
    );

    // The benchmark server: demo plus the invented evaluation and large datasets.
    let data = data_dir.to_string_lossy().to_string();
    let mut server = Server::start(server_bin, &["--data-dir", &data])?;
    let large_ready_s = server
        .wait_ready("bench-large", "Bm I", Duration::from_secs(600))
        .await?;
    tokio::time::sleep(Duration::from_millis(200)).await;
    let memory = server.memory_bytes();
    let table_bytes = server.logged_table_bytes();
    eprintln!(
        "benchmark server ready after {large_ready_s:.2} s; memory {memory}; table bytes {table_bytes:?}"
    );

    let eval = measure_local_evaluation(&server, work, quick).await?;
    let bindings = super::bindings::measure(&server.address, work, quick).await?;
    let rpc = measure_rpc(&server, quick).await?;
    let latency = measure_latency(&server, quick).await?;
    Ok(json!({
        "startup": {
            "demo_ready_seconds": demo_ready_s,
            "demo_ready_runs_seconds": demo_ready,
            "with_large_dataset_ready_seconds": large_ready_s,
        },
        "memory": {
            "server": memory,
            "table_bytes": table_bytes,
            "datasets": ["demo", "bench-eval (64 levels)", "bench-large (300 levels)"],
        },
        "evaluation": eval,
        "bindings": bindings,
        "rpc": rpc,
        "latency": latency,
    }))
}

/// Fetches the 64-knot tables, writes them for the Python baselines, and times evaluation.
async fn measure_local_evaluation(server: &Server, work: &Path, quick: bool) -> Result<Value, Failure> {
    let config = ClientConfig::new(server.address.clone()).with_dataset(DatasetRef::new("bench-eval")?);
    let client = Client::new(config)?;
    let grid = TableGrid::new(EVAL_GRID.0, EVAL_GRID.1, EVAL_GRID.2)?;
    let started = Instant::now();
    let tables = client.fetch_tables(EVAL_SPECIES, Some(grid)).await?;
    let fetch_s = started.elapsed().as_secs_f64();
    let transitions: Vec<Transition> = tables.transitions().into_iter().take(EVAL_TABLES).collect();
    if transitions.len() < EVAL_TABLES || tables.grid().knots() != 64 {
        return Err(format!(
            "expected >= {EVAL_TABLES} tables of 64 knots, got {} of {}",
            transitions.len(),
            tables.grid().knots()
        )
        .into());
    }
    write_tables_for_python(&tables, &transitions, work)?;
    let temps = eval_temperatures(EVAL_TEMPERATURES);
    let values = (EVAL_TABLES * EVAL_TEMPERATURES) as f64;
    let reps = if quick { 1 } else { 5 };
    // One thread (the library's default), like numpy on the other side; the parallel path
    // (opted into) is measured separately as a scaling figure.
    let deexcitation = EvalOptions {
        direction: Direction::Deexcitation,
        parallel: false,
        ..EvalOptions::default()
    };
    let both = EvalOptions {
        parallel: false,
        ..EvalOptions::default()
    };
    let threads = std::thread::available_parallelism().map_or(1, usize::from);

    // Through the client library: one call, every table at every temperature.
    let mut out = RateBuffers::default();
    tables.evaluate_into(&transitions, &temps, deexcitation, &mut out)?;
    let client_s = best_of(reps, || {
        tables
            .evaluate_into(&transitions, &temps, deexcitation, &mut out)
            .unwrap();
        black_box(&out.deexcitation);
    });
    write_sample_for_python(&out.deexcitation, work)?;
    let client_both_s = best_of(reps, || {
        tables
            .evaluate_into(&transitions, &temps, both, &mut out)
            .unwrap();
        black_box(&out.deexcitation);
    });
    let parallel = EvalOptions {
        parallel: true,
        ..deexcitation
    };
    let client_parallel_s = best_of(reps, || {
        tables
            .evaluate_into(&transitions, &temps, parallel, &mut out)
            .unwrap();
        black_box(&out.deexcitation);
    });
    // The rule's vectorised kernel on the same tables (temperatures located once).
    let rows: Vec<_> = transitions
        .iter()
        .map(|t| tables.table(t.upper, t.lower).unwrap())
        .collect();
    let locations: Vec<Location> = temps
        .iter()
        .enumerate()
        .map(|(j, &t)| checked_location(tables.grid(), j, t, OutsidePolicy::Refuse))
        .collect::<Result<_, _>>()?;
    let mut deexc = vec![0.0; EVAL_TABLES * EVAL_TEMPERATURES];
    let mut flags = vec![0u32; EVAL_TABLES * EVAL_TEMPERATURES];
    let kernel_s = best_of(reps, || {
        for ((table, d), f) in rows
            .iter()
            .zip(deexc.chunks_mut(EVAL_TEMPERATURES))
            .zip(flags.chunks_mut(EVAL_TEMPERATURES))
        {
            let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], d, f).unwrap();
            table.write_located(&locations, &mut out).unwrap();
        }
        black_box(&deexc);
    });
    if deexc
        .iter()
        .zip(&out.deexcitation)
        .any(|(a, b)| a.to_bits() != b.to_bits())
    {
        return Err("the rule kernel and the client library disagree".into());
    }
    // Bit-for-bit against the server: a lookup of the same values over the wire.
    let probe: Vec<f64> = temps.iter().step_by(97).copied().collect();
    let query = RateQuery::new(EVAL_SPECIES, probe.clone())
        .with_transitions(transitions[..50].to_vec())
        .with_options(deexcitation)
        .with_grid(grid);
    let served = client.lookup_rates(&query).await?;
    let mut local = RateBuffers::default();
    tables.evaluate_into(&transitions[..50], &probe, deexcitation, &mut local)?;
    let bit_identical = served.deexcitation.len() == local.deexcitation.len()
        && served
            .deexcitation
            .iter()
            .zip(&local.deexcitation)
            .all(|(a, b)| a.to_bits() == b.to_bits());

    // Cost per value against batch size: one table, n temperatures, client library.
    let mut curve = Vec::new();
    let one = &transitions[..1];
    for &n in &BATCH_SIZES {
        let temps_n = eval_temperatures(n);
        let calls = (2_000_000 / n).clamp(1, 20_000) / if quick { 10 } else { 1 };
        let calls = calls.max(1);
        let mut buf = RateBuffers::default();
        let s = best_of(reps.min(3), || {
            for _ in 0..calls {
                tables
                    .evaluate_into(one, &temps_n, deexcitation, &mut buf)
                    .unwrap();
                black_box(&buf.deexcitation);
            }
        });
        // The rule's own batched entry point on the same table (what the client could call).
        let table = rows[0];
        let (mut d, mut f) = (vec![0.0; n], vec![0u32; n]);
        let rule_s = best_of(reps.min(3), || {
            for _ in 0..calls {
                let mut out = RateOutputs::new(Direction::Deexcitation, &mut [], &mut d, &mut f).unwrap();
                table
                    .evaluate_into(&temps_n, OutsidePolicy::Refuse, &mut out)
                    .unwrap();
                black_box(&d);
            }
        });
        curve.push(json!({
            "batch": n,
            "seconds_per_value": s / (calls * n) as f64,
            "rule_seconds_per_value": rule_s / (calls * n) as f64,
        }));
    }
    eprintln!(
        "local evaluation, one thread: client {:.2} ns/value (both directions {:.2}), kernel {:.2} ns/value; \
         {threads} threads: {:.2} ns/value; served == local: {bit_identical}",
        client_s / values * 1e9,
        client_both_s / values * 1e9,
        kernel_s / values * 1e9,
        client_parallel_s / values * 1e9,
    );
    Ok(json!({
        "tables": EVAL_TABLES,
        "knots": tables.grid().knots(),
        "temperatures": EVAL_TEMPERATURES,
        "fetch_seconds": fetch_s,
        "client_seconds": client_s,
        "client_ns_per_value": client_s / values * 1e9,
        "client_both_directions_ns_per_value": client_both_s / values * 1e9,
        "kernel_ns_per_value": kernel_s / values * 1e9,
        "threads": 1,
        "client_parallel_ns_per_value": client_parallel_s / values * 1e9,
        "parallel_threads": threads,
        "server_and_local_bit_identical": bit_identical,
        "batch_curve": curve,
    }))
}

/// The fetched tables as little-endian f64 files plus a JSON index, so numpy and scipy
/// interpolate exactly the same knots.
fn write_tables_for_python(
    tables: &LocalTables,
    transitions: &[Transition],
    work: &Path,
) -> Result<(), Failure> {
    let mut ln_upsilon = Vec::new();
    let mut g_upper = Vec::new();
    for t in transitions {
        let table = tables.table(t.upper, t.lower)?;
        ln_upsilon.extend(table.ln_upsilon());
        g_upper.push(table.header().g_upper);
    }
    let dir = work.join("eval");
    write_f64(&dir.join("ln_upsilon.f64"), &ln_upsilon)?;
    write_f64(&dir.join("g_upper.f64"), &g_upper)?;
    write_f64(
        &dir.join("temperatures_k.f64"),
        &eval_temperatures(EVAL_TEMPERATURES),
    )?;
    let grid = tables.grid();
    let index = json!({
        "tables": transitions.len(),
        "knots": grid.knots(),
        "log10_t_min_k": grid.log10_t_min_k(),
        "log10_t_step": grid.log10_t_step(),
        "temperatures": EVAL_TEMPERATURES,
        "rate_prefactor_cm3_s_k_half": rate_prefactor_cm3_s_k_half(),
        "batch_sizes": BATCH_SIZES,
    });
    std::fs::write(dir.join("index.json"), serde_json::to_string_pretty(&index)?)?;
    Ok(())
}

/// Every 1000th value of the evaluation, for the baselines' agreement check.
fn write_sample_for_python(values: &[f64], work: &Path) -> Result<(), Failure> {
    let sample: Vec<f64> = values.iter().step_by(1000).copied().collect();
    write_f64(&work.join("eval").join("ratewell_sample.f64"), &sample)
}

pub(crate) fn write_f64(path: &Path, values: &[f64]) -> Result<(), Failure> {
    let bytes: Vec<u8> = values.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(path, bytes)?;
    Ok(())
}

async fn channel(server: &Server) -> Result<Channel, Failure> {
    Ok(Endpoint::from_shared(server.address.clone())?
        .tcp_nodelay(true)
        .connect()
        .await?)
}

const MAX_MESSAGE: usize = 64 * 1024 * 1024;

/// Median seconds per call of `reps` sequential calls (after two warm-up calls).
async fn median_call<F, Fut>(reps: usize, mut call: F) -> Result<f64, Failure>
where
    F: FnMut() -> Fut,
    Fut: std::future::Future<Output = Result<(), tonic::Status>>,
{
    for _ in 0..2 {
        call().await?;
    }
    let mut times = Vec::with_capacity(reps);
    for _ in 0..reps {
        let started = Instant::now();
        call().await?;
        times.push(started.elapsed().as_secs_f64());
    }
    times.sort_by(f64::total_cmp);
    Ok(times[times.len() / 2])
}

/// Batched lookups against the echo RPC carrying a payload of the same encoded size.
async fn measure_rpc(server: &Server, quick: bool) -> Result<Value, Failure> {
    let ch = channel(server).await?;
    let mut rates = RatesClient::new(ch.clone())
        .max_decoding_message_size(MAX_MESSAGE)
        .max_encoding_message_size(MAX_MESSAGE);
    let mut transport = TransportClient::new(ch)
        .max_decoding_message_size(MAX_MESSAGE)
        .max_encoding_message_size(MAX_MESSAGE);
    let all = rates
        .fetch_tables(pb::FetchTablesRequest {
            dataset: Some(pb::DatasetSelector {
                id: "bench-eval".into(),
                ..Default::default()
            }),
            species: EVAL_SPECIES.into(),
            grid: None,
        })
        .await?
        .into_inner();
    let keys: Vec<Transition> = all
        .tables
        .iter()
        .filter_map(|t| t.key)
        .map(Transition::from)
        .collect();
    let mut rows = Vec::new();
    for (n_tr, n_t) in [(20usize, 1000usize), (200, 1000), (2000, 1000)] {
        let request = lookup_request("bench-eval", EVAL_SPECIES, &keys[..n_tr], &eval_temperatures(n_t));
        let answer = rates.lookup_rates(request.clone()).await?.into_inner();
        let response_bytes = prost::Message::encoded_len(&answer);
        let request_bytes = prost::Message::encoded_len(&request);
        // Same response size: a packed repeated double costs 8 bytes per value.
        let echo = pb::EchoRequest {
            payload: vec![1.5; response_bytes / 8],
        };
        let reps = if quick {
            3
        } else {
            (40_000_000 / response_bytes.max(1)).clamp(10, 200)
        };
        let lookup_s = median_call(reps, || {
            let (mut c, r) = (rates.clone(), request.clone());
            async move { c.lookup_rates(r).await.map(|_| ()) }
        })
        .await?;
        let echo_s = median_call(reps, || {
            let (mut c, r) = (transport.clone(), echo.clone());
            async move { c.echo(r).await.map(|_| ()) }
        })
        .await?;
        let values = n_tr * n_t;
        eprintln!(
            "lookup {values} values ({response_bytes} B): {:.2} ms; echo same size: {:.2} ms; throughput ratio {:.2}",
            lookup_s * 1e3,
            echo_s * 1e3,
            echo_s / lookup_s
        );
        rows.push(json!({
            "values": values,
            "transitions": n_tr,
            "temperatures": n_t,
            "request_bytes": request_bytes,
            "response_bytes": response_bytes,
            "echo_payload_bytes": echo.payload.len() * 8,
            "lookup_seconds": lookup_s,
            "echo_seconds": echo_s,
            "throughput_ratio": echo_s / lookup_s,
            "lookup_values_per_second": values as f64 / lookup_s,
            "lookup_megabytes_per_second": response_bytes as f64 / lookup_s / 1e6,
        }));
        let _ = &mut transport;
    }
    Ok(json!({ "direction": "deexcitation", "rows": rows }))
}

/// p50 and p99 of small unary lookups and of the empty RPC, 1 and 64 calls in flight.
async fn measure_latency(server: &Server, quick: bool) -> Result<Value, Failure> {
    let ch = channel(server).await?;
    let rates = RatesClient::new(ch.clone());
    let transport = TransportClient::new(ch);
    let small = lookup_request("demo", "Mk III", &[Transition { upper: 2, lower: 1 }], &[1.0e4]);
    let per_task = if quick { 50 } else { 2000 };
    let mut rows = Vec::new();
    for in_flight in [1usize, 64] {
        let calls = if in_flight == 1 {
            per_task * 2
        } else {
            (per_task / 8).max(20)
        };
        // Warm up both, then measure them in alternating rounds to share any drift.
        let mut ping_all = Vec::new();
        let mut lookup_all = Vec::new();
        for round in 0..4 {
            let p = run_concurrent(in_flight, calls / 4, {
                let t = transport.clone();
                move || {
                    let mut t = t.clone();
                    async move { t.ping(pb::PingRequest {}).await.map(|_| ()) }
                }
            })
            .await?;
            let l = run_concurrent(in_flight, calls / 4, {
                let (r, q) = (rates.clone(), small.clone());
                move || {
                    let (mut r, q) = (r.clone(), q.clone());
                    async move { r.lookup_rates(q).await.map(|_| ()) }
                }
            })
            .await?;
            if round > 0 {
                ping_all.extend(p);
                lookup_all.extend(l);
            }
        }
        let (ping_p50, ping_p99) = percentiles(&mut ping_all);
        let (lookup_p50, lookup_p99) = percentiles(&mut lookup_all);
        eprintln!(
            "{in_flight} in flight: ping p50 {:.0} us p99 {:.0} us; lookup p50 {:.0} us p99 {:.0} us",
            ping_p50 * 1e6,
            ping_p99 * 1e6,
            lookup_p50 * 1e6,
            lookup_p99 * 1e6
        );
        rows.push(json!({
            "in_flight": in_flight,
            "samples": lookup_all.len(),
            "ping_p50_seconds": ping_p50,
            "ping_p99_seconds": ping_p99,
            "lookup_p50_seconds": lookup_p50,
            "lookup_p99_seconds": lookup_p99,
        }));
    }
    // The same small lookup through the client library (time budget, retries, stamp check).
    let client =
        Client::new(ClientConfig::new(server.address.clone()).with_dataset(DatasetRef::new("demo")?))?;
    let query = RateQuery::new("Mk III", vec![1.0e4])
        .with_transitions(vec![Transition { upper: 2, lower: 1 }])
        .with_options(EvalOptions {
            direction: Direction::Deexcitation,
            ..EvalOptions::default()
        });
    let mut lib = Vec::new();
    for i in 0..per_task + 20 {
        let started = Instant::now();
        client.lookup_rates(&query).await?;
        if i >= 20 {
            lib.push(started.elapsed().as_secs_f64());
        }
    }
    let (lib_p50, lib_p99) = percentiles(&mut lib);
    Ok(json!({ "rows": rows, "client_library_p50_seconds": lib_p50, "client_library_p99_seconds": lib_p99 }))
}

/// Runs `calls` calls on each of `in_flight` tasks at once; returns every call's seconds.
async fn run_concurrent<F, Fut>(in_flight: usize, calls: usize, make: F) -> Result<Vec<f64>, Failure>
where
    F: Fn() -> Fut + Send + Sync + 'static + Clone,
    Fut: std::future::Future<Output = Result<(), tonic::Status>> + Send + 'static,
{
    let mut tasks = Vec::with_capacity(in_flight);
    for _ in 0..in_flight {
        let make = make.clone();
        tasks.push(tokio::spawn(async move {
            let mut times = Vec::with_capacity(calls);
            for _ in 0..calls {
                let started = Instant::now();
                make().await?;
                times.push(started.elapsed().as_secs_f64());
            }
            Ok::<_, tonic::Status>(times)
        }));
    }
    let mut all = Vec::with_capacity(in_flight * calls);
    for t in tasks {
        all.extend(t.await??);
    }
    Ok(all)
}

/// (p50, p99) of `samples`, seconds.
pub(crate) fn percentiles(samples: &mut [f64]) -> (f64, f64) {
    samples.sort_by(f64::total_cmp);
    let at = |q: f64| samples[((samples.len() - 1) as f64 * q).round() as usize];
    (at(0.50), at(0.99))
}
