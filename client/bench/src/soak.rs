//! The soak run (not CI): many concurrent clients against one server process for a minute.
//!
//! Phase 1 measures the floor: every client calls the benchmark-only empty RPC (`Ping`) for a
//! few seconds, so its latency is what the transport and the runtime cost at this concurrency.
//! Phase 2 has every client, each with its own connection through the client library (time
//! budget, retries, stamp check), look up small rate batches for a warm-up and then the soak
//! duration, while the server's resident memory is sampled every second. The run fails unless
//! every lookup succeeded and resident memory stayed flat over the soak duration: the mean of
//! its last tenth of samples within 10% of the mean of its first tenth. The warm-up is excluded
//! because the allocator grows its heaps in steps while the first thousand connections' buffers
//! settle (measured: 42 to 63 MiB over the first 45 s, then flat to 0.1 MiB for 75 s).

use crate::measure::{Failure, Server, percentiles};
use ratewell_client::pb;
use ratewell_client::pb::transport_client::TransportClient;
use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery, RetryPolicy, Transition};
use serde_json::json;
use std::path::Path;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::time::{Duration, Instant};
use tonic::transport::Endpoint;

/// How long the floor phase lasts.
const FLOOR_SECONDS: u64 = 10;
/// Largest allowed growth of resident memory between the first and last tenth of the samples.
const RSS_TOLERANCE: f64 = 0.10;

/// What the soak measured.
#[derive(Debug)]
struct Phase {
    calls: u64,
    errors: u64,
    first_error: Option<String>,
    p50_s: f64,
    p99_s: f64,
}

/// Runs the soak against a fresh `server_bin` and prints a JSON report; fails on any error or
/// on memory growth.
pub(crate) fn run(server_bin: &Path, clients: usize, seconds: u64, warm_up: u64) -> Result<(), Failure> {
    tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()?
        .block_on(soak(server_bin, clients, seconds, warm_up))
}

async fn soak(server_bin: &Path, clients: usize, seconds: u64, warm_up: u64) -> Result<(), Failure> {
    let connections = (clients + 64).to_string();
    let mut server = Server::start(server_bin, &["--max-connections", &connections])?;
    server
        .wait_ready("demo", "Mk III", Duration::from_secs(120))
        .await?;
    eprintln!(
        "soak: {clients} clients, {FLOOR_SECONDS} s of empty calls, then {warm_up} s of warm-up and {seconds} s of lookups (pid {})",
        server.pid()
    );

    let floor = ping_phase(&server.address, clients, Duration::from_secs(FLOOR_SECONDS)).await?;
    eprintln!(
        "floor: {} empty calls, p50 {:.0} us, p99 {:.0} us, {} errors",
        floor.calls,
        floor.p50_s * 1e6,
        floor.p99_s * 1e6,
        floor.errors
    );

    let stop = Arc::new(AtomicBool::new(false));
    let sampler = {
        let (pid, stop) = (server.pid(), Arc::clone(&stop));
        tokio::spawn(async move {
            let mut samples = Vec::new();
            while !stop.load(Ordering::Relaxed) {
                if let Some(rss) = resident_bytes(pid) {
                    samples.push(rss);
                }
                tokio::time::sleep(Duration::from_secs(1)).await;
            }
            samples
        })
    };
    let lookups = lookup_phase(&server.address, clients, Duration::from_secs(warm_up + seconds)).await?;
    stop.store(true, Ordering::Relaxed);
    let samples = sampler.await?;
    let warm_up_samples = usize::try_from(warm_up).unwrap_or(usize::MAX);
    let (first, last, growth) = rss_growth(&samples, warm_up_samples);
    let flat = growth.abs() <= RSS_TOLERANCE;
    let report = json!({
        "clients": clients,
        "seconds": seconds,
        "warm_up_seconds": warm_up,
        "floor_empty_rpc": { "calls": floor.calls, "errors": floor.errors,
                             "p50_seconds": floor.p50_s, "p99_seconds": floor.p99_s },
        "lookups": { "calls": lookups.calls, "errors": lookups.errors,
                     "first_error": lookups.first_error,
                     "p50_seconds": lookups.p50_s, "p99_seconds": lookups.p99_s },
        "server_rss_bytes": { "first_tenth_mean": first, "last_tenth_mean": last,
                              "growth": growth, "samples": samples.len(),
                              "warm_up_samples_excluded": warm_up_samples,
                              "flat_within": RSS_TOLERANCE, "flat": flat,
                              "series_mib": samples.iter().map(|&b| (b as f64 / 1048576.0 * 10.0).round() / 10.0).collect::<Vec<_>>() },
        "memory_at_end": server.memory_bytes(),
    });
    println!("{}", serde_json::to_string_pretty(&report)?);
    if lookups.errors > 0 || floor.errors > 0 {
        return Err(format!(
            "{} lookups and {} empty calls failed; first: {:?}",
            lookups.errors, floor.errors, lookups.first_error
        )
        .into());
    }
    if !flat {
        return Err(format!(
            "server resident memory grew by {:.1}% during the soak",
            growth * 100.0
        )
        .into());
    }
    eprintln!(
        "PASS: {} lookups, p50 {:.0} us, p99 {:.0} us (floor p50 {:.0} us, p99 {:.0} us); memory {:+.1}%",
        lookups.calls,
        lookups.p50_s * 1e6,
        lookups.p99_s * 1e6,
        floor.p50_s * 1e6,
        floor.p99_s * 1e6,
        growth * 100.0
    );
    Ok(())
}

/// Every client on its own connection calls the empty RPC until `length` has passed.
async fn ping_phase(address: &str, clients: usize, length: Duration) -> Result<Phase, Failure> {
    let errors = Arc::new(AtomicU64::new(0));
    let end = Instant::now() + length;
    let mut tasks = Vec::with_capacity(clients);
    for _ in 0..clients {
        let channel = Endpoint::from_shared(address.to_string())?.connect_lazy();
        let errors = Arc::clone(&errors);
        tasks.push(tokio::spawn(async move {
            let mut client = TransportClient::new(channel);
            let mut times = Vec::new();
            while Instant::now() < end {
                let started = Instant::now();
                match client.ping(pb::PingRequest {}).await {
                    Ok(_) => times.push(started.elapsed().as_secs_f64()),
                    Err(_) => {
                        errors.fetch_add(1, Ordering::Relaxed);
                    }
                }
            }
            times
        }));
    }
    let mut phase = collect(tasks).await?;
    phase.errors = errors.load(Ordering::Relaxed);
    Ok(phase)
}

/// Every client, each a library `Client` with its own connection, looks up small batches
/// until `length` has passed. Retries are the library's own (load shedding is retried).
async fn lookup_phase(address: &str, clients: usize, length: Duration) -> Result<Phase, Failure> {
    let errors = Arc::new(AtomicU64::new(0));
    let first_error = Arc::new(std::sync::Mutex::new(None::<String>));
    let end = Instant::now() + length;
    let query = RateQuery::new("Mk III", vec![5.0e3, 1.0e4, 2.0e4]).with_transitions(vec![
        Transition { upper: 2, lower: 1 },
        Transition { upper: 3, lower: 1 },
    ]);
    let mut tasks = Vec::with_capacity(clients);
    for _ in 0..clients {
        let config = ClientConfig::new(address.to_string())
            .with_dataset(DatasetRef::new("demo")?)
            .with_retry(RetryPolicy {
                max_attempts: 20,
                ..RetryPolicy::default()
            });
        let client = Client::new(config)?;
        let (errors, first_error, query) = (Arc::clone(&errors), Arc::clone(&first_error), query.clone());
        tasks.push(tokio::spawn(async move {
            let mut times = Vec::new();
            while Instant::now() < end {
                let started = Instant::now();
                match client.lookup_rates(&query).await {
                    Ok(_) => times.push(started.elapsed().as_secs_f64()),
                    Err(e) => {
                        errors.fetch_add(1, Ordering::Relaxed);
                        first_error
                            .lock()
                            .unwrap_or_else(|p| p.into_inner())
                            .get_or_insert_with(|| e.to_string());
                    }
                }
            }
            times
        }));
    }
    let mut phase = collect(tasks).await?;
    phase.errors = errors.load(Ordering::Relaxed);
    phase.first_error = first_error.lock().unwrap_or_else(|p| p.into_inner()).clone();
    Ok(phase)
}

/// Every task's call times joined into one phase (errors are filled in by the caller).
async fn collect(tasks: Vec<tokio::task::JoinHandle<Vec<f64>>>) -> Result<Phase, Failure> {
    let mut all = Vec::new();
    for t in tasks {
        all.extend(t.await?);
    }
    if all.is_empty() {
        return Err("no call succeeded".into());
    }
    let (p50_s, p99_s) = percentiles(&mut all);
    Ok(Phase {
        calls: all.len() as u64,
        errors: 0,
        first_error: None,
        p50_s,
        p99_s,
    })
}

/// Resident memory of process `pid`, bytes (Linux /proc).
fn resident_bytes(pid: u32) -> Option<u64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    let kib: u64 = status
        .lines()
        .find(|l| l.starts_with("VmRSS:"))?
        .split_whitespace()
        .nth(1)?
        .parse()
        .ok()?;
    Some(kib * 1024)
}

/// Means of the first and last tenth of `samples` after `warm_up` samples, and the relative
/// change.
fn rss_growth(samples: &[u64], warm_up: usize) -> (f64, f64, f64) {
    let kept = samples.get(warm_up..).unwrap_or_default();
    if kept.is_empty() {
        return (0.0, 0.0, 0.0);
    }
    let tenth = (kept.len() / 10).max(1);
    let mean = |s: &[u64]| s.iter().map(|&v| v as f64).sum::<f64>() / s.len() as f64;
    let (first, last) = (mean(&kept[..tenth]), mean(&kept[kept.len() - tenth..]));
    (first, last, (last - first) / first)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn memory_growth_compares_the_first_and_last_tenth_after_warm_up() {
        // Warm-up samples (huge) are ignored; 20 kept: first two average 100, last two 110.
        let mut samples = vec![10_000; 5];
        samples.extend([100, 100]);
        samples.extend(std::iter::repeat_n(105, 16));
        samples.extend([110, 110]);
        let (first, last, growth) = rss_growth(&samples, 5);
        assert_eq!((first, last), (100.0, 110.0));
        assert!((growth - 0.10).abs() < 1e-12);
        assert_eq!(rss_growth(&[1, 2], 5), (0.0, 0.0, 0.0));
    }
}
