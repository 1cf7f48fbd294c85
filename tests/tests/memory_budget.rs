//! Resident memory under many distinct table grids stays within the table-cache budget: 50
//! lookups, each on its own grid (each building a new table set of 1.1 to 3.7 MB, about
//! 115 MB in all), leave the cache within its byte budget with the rest evicted, and the
//! process's resident memory grows by no more than the budget plus a fixed allowance. Alone
//! in its test binary so no other test's memory is counted.

use ratewell_e2e::requests::{MK_II, lookup};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;

/// Resident set size of this process, bytes (`VmRSS` of /proc/self/status, proc(5)).
fn resident_bytes() -> u64 {
    let status = std::fs::read_to_string("/proc/self/status").expect("read /proc/self/status");
    let kib: u64 = status
        .lines()
        .find_map(|l| l.strip_prefix("VmRSS:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
        .expect("VmRSS in kB");
    kib * 1024
}

const BUDGET: u64 = 8 << 20;
/// Room for what is not table memory: one table set being built beside the cache (up to
/// 3.7 MB), the answers and request buffers, and the allocator keeping freed pages. Without
/// eviction the growth would be about 115 MB.
const ALLOWANCE: u64 = 32 << 20;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn fifty_distinct_grids_stay_within_the_cache_budget() {
    let mut config = test_config();
    config.limits.table_cache_bytes = BUDGET;
    let (server, engine) = TestServer::start_sharing_engine(config).await;
    let ask = |points_per_decade: u32| {
        let mut req = lookup(MK_II, vec![1e4]);
        req.grid = Some(pb::GridSpec {
            t_min_k: 1e3,
            t_max_k: 1e9,
            points_per_decade,
        });
        req
    };
    // Warm up the thread pools and the allocator's arenas with one build.
    server
        .rates()
        .lookup_rates(ask(19))
        .await
        .expect("warm-up lookup");
    let before = resident_bytes();
    let mut built_bytes = 0u64;
    for i in 0..50 {
        let answer = server
            .rates()
            .lookup_rates(ask(20 + i))
            .await
            .expect("custom-grid lookup")
            .into_inner();
        assert_eq!(answer.excitation.len(), 561);
        let stats = engine.cache_stats();
        assert!(stats.bytes <= BUDGET, "after {i}: {stats:?}");
        // 6 decades at 20 + i per decade: 121 + 6i knots, each table 16 bytes per knot
        // (`SpeciesTables::table_bytes`).
        let knots = 121 + 6 * u64::from(i);
        built_bytes += 561 * 16 * knots;
    }
    let grown = resident_bytes().saturating_sub(before);
    let stats = engine.cache_stats();
    eprintln!(
        "resident growth {:.1} MiB over 50 grids ({:.0} MiB of tables built); cache {stats:?}",
        grown as f64 / (1 << 20) as f64,
        built_bytes as f64 / (1 << 20) as f64
    );
    assert!(
        built_bytes > 2 * (BUDGET + ALLOWANCE),
        "the test must build far more than it may keep"
    );
    assert!(stats.evictions >= 40, "{stats:?}");
    assert!(stats.entries >= 1, "{stats:?}");
    assert!(
        grown <= BUDGET + ALLOWANCE,
        "resident memory grew by {grown} bytes, over {BUDGET} + {ALLOWANCE}"
    );
}
