//! The cache of tables built on non-default grids: species tables keyed by dataset content
//! hash, species and grid, weighed by their heap bytes and bounded by a byte budget
//! (quick_cache's CLOCK-Pro-style eviction). Default-grid tables are not in here: they live in
//! each loaded dataset and are never evicted, so normal traffic never rebuilds them.

use super::SpeciesTables;
use quick_cache::sync::{Cache, GuardResult};
use quick_cache::{DefaultHashBuilder, Lifecycle, OptionsBuilder, Weighter};
use ratewell_proto::rule::LogGrid;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::Duration;

/// How often a caller waiting for another caller's build of the same tables checks whether it
/// is still wanted.
pub const WAIT_POLL: Duration = Duration::from_millis(20);

/// Identifies one cache entry.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct TableKey {
    /// Dataset content hash (hex).
    pub content_hash: String,
    /// Species name.
    pub species: String,
    /// Grid identity: bits of log10 T_min and step, and knot count.
    pub grid: (u64, u64, usize),
}

impl TableKey {
    /// The key of `species` of the dataset with `content_hash` on `grid`.
    pub fn new(content_hash: &str, species: &str, grid: &LogGrid) -> Self {
        Self {
            content_hash: content_hash.to_owned(),
            species: species.to_owned(),
            grid: (
                grid.log10_t_min_k().to_bits(),
                grid.log10_t_step().to_bits(),
                grid.knots(),
            ),
        }
    }
}

/// What the cache holds, for logs and metrics.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct CacheStats {
    /// Heap bytes of the cached tables (the weight the budget bounds).
    pub bytes: u64,
    /// The byte budget.
    pub capacity_bytes: u64,
    /// Cached table sets.
    pub entries: u64,
    /// Table sets evicted to stay within the budget since start.
    pub evictions: u64,
    /// Table sets built but not kept because one alone is over the budget.
    pub uncached: u64,
}

#[derive(Clone)]
struct ByBytes;

impl Weighter<TableKey, Arc<SpeciesTables>> for ByBytes {
    fn weight(&self, key: &TableKey, tables: &Arc<SpeciesTables>) -> u64 {
        // At least 1: zero-weight entries would never be evicted.
        (tables.table_bytes() + key.species.len() + key.content_hash.len()).max(1) as u64
    }
}

#[derive(Clone, Default)]
struct CountEvictions(Arc<AtomicU64>);

impl Lifecycle<TableKey, Arc<SpeciesTables>> for CountEvictions {
    type RequestState = ();

    fn begin_request(&self) -> Self::RequestState {}

    fn on_evict(&self, _: &mut (), _: TableKey, _: Arc<SpeciesTables>) {
        self.0.fetch_add(1, Ordering::Relaxed);
    }
}

type Inner = Cache<TableKey, Arc<SpeciesTables>, ByBytes, DefaultHashBuilder, CountEvictions>;

/// Concurrent byte-bounded cache of species tables. Cheap to clone.
#[derive(Clone)]
pub struct TableCache {
    cache: Arc<Inner>,
    evictions: CountEvictions,
    uncached: Arc<AtomicU64>,
    capacity_bytes: u64,
}

impl TableCache {
    /// A cache holding at most `capacity_bytes` of tables.
    pub fn new(capacity_bytes: u64) -> Self {
        let evictions = CountEvictions::default();
        let options = OptionsBuilder::new()
            // One shard: a table set can be a large part of the budget, and sharding would
            // split the budget (an entry must fit in one shard). Builds are rare, so one lock
            // costs nothing measurable.
            .shards(1)
            .estimated_items_capacity(256)
            .weight_capacity(capacity_bytes)
            .build()
            .expect("cache options: capacity and shard count are set");
        let cache = Cache::with_options(options, ByBytes, DefaultHashBuilder::default(), evictions.clone());
        Self {
            cache: Arc::new(cache),
            evictions,
            uncached: Arc::new(AtomicU64::new(0)),
            capacity_bytes,
        }
    }

    /// The cached tables for `key`, if present.
    pub fn get(&self, key: &TableKey) -> Option<Arc<SpeciesTables>> {
        self.cache.get(key)
    }

    /// The tables under `key`, built by `build` on a miss. Concurrent callers asking for the
    /// same key wait for one build and share its result; a waiter asks `still_wanted` every
    /// [`WAIT_POLL`] and gives up with its error. A build that fails (or stops) leaves no entry:
    /// the next waiter, if any, builds in its turn. A table set heavier than the whole budget
    /// is returned but not kept.
    pub fn get_or_build<E>(
        &self,
        key: TableKey,
        build: impl FnOnce() -> Result<Arc<SpeciesTables>, E>,
        still_wanted: impl Fn() -> Result<(), E>,
    ) -> Result<Arc<SpeciesTables>, E> {
        let guard = loop {
            match self.cache.get_value_or_guard(&key, Some(WAIT_POLL)) {
                GuardResult::Value(tables) => return Ok(tables),
                GuardResult::Guard(guard) => break guard,
                GuardResult::Timeout => still_wanted()?,
            }
        };
        // On an error the guard drops uninserted, so the placeholder goes (or passes to a
        // waiter) and nothing half-built is ever visible.
        let tables = build()?;
        if ByBytes.weight(&key, &tables) > self.capacity_bytes {
            // quick_cache rejects it and reports it as an eviction; count it apart.
            self.uncached.fetch_add(1, Ordering::Relaxed);
        }
        // Err only when the placeholder was removed meanwhile (remove_dataset of a replaced
        // dataset): the caller still gets its tables.
        let _ = guard.insert(Arc::clone(&tables));
        Ok(tables)
    }

    /// Drops every entry of the dataset with `content_hash`.
    pub fn remove_dataset(&self, content_hash: &str) {
        self.cache.retain(|k, _| k.content_hash != content_hash);
    }

    /// Bytes, entries and evictions.
    pub fn stats(&self) -> CacheStats {
        let uncached = self.uncached.load(Ordering::Relaxed);
        CacheStats {
            bytes: self.cache.weight(),
            capacity_bytes: self.capacity_bytes,
            entries: self.cache.len() as u64,
            evictions: self.evictions.0.load(Ordering::Relaxed).saturating_sub(uncached),
            uncached,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_proto::rule::{RateTable, TableHeader};

    /// A table set of `knots` knots and `n` transitions on a grid from 1e3 K.
    fn tables(n: usize, knots: usize) -> Arc<SpeciesTables> {
        let grid = LogGrid::new(3.0, 0.1, knots).unwrap();
        let header = |u: u32| TableHeader {
            upper: u + 1,
            lower: 1,
            g_lower: 1.0,
            g_upper: 3.0,
            excitation_energy_k: 1e4,
            source_t_min_k: 1e3,
            source_t_max_k: 1e5,
            approximate: false,
        };
        let rows: Vec<RateTable> = (1..=n as u32)
            .map(|u| RateTable::from_knots(header(u), grid, vec![0.0; knots]).unwrap())
            .collect();
        Arc::new(SpeciesTables::new("A".into(), grid, rows, vec![]))
    }

    fn key(i: usize) -> TableKey {
        TableKey::new("h", "A", &LogGrid::new(3.0, 0.1, 10 + i).unwrap())
    }

    #[test]
    fn bytes_stay_within_the_budget_and_evictions_are_counted() {
        let one = tables(20, 100).table_bytes() as u64;
        let cache = TableCache::new(5 * one);
        for i in 0..40 {
            let t = cache
                .get_or_build::<()>(key(i), || Ok(tables(20, 100)), || Ok(()))
                .unwrap();
            assert_eq!(t.tables.len(), 20);
            let s = cache.stats();
            assert!(s.bytes <= s.capacity_bytes, "{s:?}");
        }
        let s = cache.stats();
        assert!(s.entries <= 5 && s.entries >= 1, "{s:?}");
        assert!(s.evictions >= 35, "{s:?}");
        assert_eq!(s.uncached, 0);
        cache.remove_dataset("h");
        assert_eq!(cache.stats().entries, 0);
    }

    #[test]
    fn a_hit_does_not_build_and_an_oversized_set_is_not_kept() {
        let cache = TableCache::new(1 << 20);
        cache
            .get_or_build::<()>(key(0), || Ok(tables(2, 10)), || Ok(()))
            .unwrap();
        let again = cache.get_or_build::<()>(key(0), || panic!("built twice"), || Ok(()));
        assert!(again.is_ok());
        let small = TableCache::new(100);
        small
            .get_or_build::<()>(key(1), || Ok(tables(20, 100)), || Ok(()))
            .unwrap();
        let s = small.stats();
        assert_eq!((s.entries, s.uncached, s.evictions), (0, 1, 0), "{s:?}");
    }

    #[test]
    fn a_failed_build_leaves_nothing_and_a_waiter_can_give_up() {
        let cache = TableCache::new(1 << 20);
        let failed = cache.get_or_build(key(0), || Err("stopped"), || Ok(()));
        assert!(matches!(failed, Err("stopped")));
        assert_eq!(cache.stats().entries, 0, "a failed build leaves no entry");
        cache
            .get_or_build::<()>(key(0), || Ok(tables(2, 10)), || Ok(()))
            .expect("the next caller builds");
        assert_eq!(cache.stats().entries, 1);

        // A second caller waits for the first one's build, and leaves when no longer wanted.
        let (started_tx, started_rx) = std::sync::mpsc::channel();
        let (release_tx, release_rx) = std::sync::mpsc::channel::<()>();
        let shared = &cache;
        std::thread::scope(|s| {
            let builder = s.spawn(move || {
                shared.get_or_build::<()>(
                    key(1),
                    || {
                        started_tx.send(()).expect("signal");
                        release_rx.recv().expect("release");
                        Ok(tables(2, 10))
                    },
                    || Ok(()),
                )
            });
            started_rx.recv().expect("the build started");
            let asked = AtomicU64::new(0);
            let gave_up = shared.get_or_build(
                key(1),
                || panic!("only the first caller builds"),
                || {
                    asked.fetch_add(1, Ordering::Relaxed);
                    Err("gone")
                },
            );
            assert!(matches!(gave_up, Err("gone")));
            assert_eq!(asked.load(Ordering::Relaxed), 1);
            release_tx.send(()).expect("release");
            assert!(builder.join().expect("builder thread").is_ok());
        });
        assert_eq!(cache.stats().entries, 2);
    }
}
