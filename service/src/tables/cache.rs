//! The table cache: species tables keyed by dataset content hash, species and grid, shared by
//! every request. Tables for a dataset's default grid are built at load; other grids on first
//! use, with a cap on how many such extra entries are kept.

use super::SpeciesTables;
use dashmap::DashMap;
use ratewell_proto::rule::LogGrid;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};

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

struct Entry {
    tables: Arc<SpeciesTables>,
    pinned: bool,
    last_used: AtomicU64,
}

/// Concurrent cache of species tables. Cheap to clone.
#[derive(Clone)]
pub struct TableCache {
    map: Arc<DashMap<TableKey, Entry>>,
    clock: Arc<AtomicU64>,
    max_extra_entries: usize,
}

impl TableCache {
    /// A cache that keeps at most `max_extra_entries` entries beyond the pinned default-grid ones.
    pub fn new(max_extra_entries: usize) -> Self {
        Self {
            map: Arc::new(DashMap::new()),
            clock: Arc::new(AtomicU64::new(0)),
            max_extra_entries,
        }
    }

    /// The cached tables for `key`, if present.
    pub fn get(&self, key: &TableKey) -> Option<Arc<SpeciesTables>> {
        self.map.get(key).map(|e| {
            e.last_used
                .store(self.clock.fetch_add(1, Ordering::Relaxed), Ordering::Relaxed);
            Arc::clone(&e.tables)
        })
    }

    /// Stores tables; `pinned` entries (a dataset's default grid) are never evicted until
    /// [`Self::remove_dataset`]. Returns the tables now cached under `key` (an earlier insert
    /// by a concurrent builder wins, so every caller sees one table set).
    pub fn insert(&self, key: TableKey, tables: Arc<SpeciesTables>, pinned: bool) -> Arc<SpeciesTables> {
        let tick = self.clock.fetch_add(1, Ordering::Relaxed);
        let stored = {
            let entry = self.map.entry(key).or_insert_with(|| Entry {
                tables,
                pinned,
                last_used: AtomicU64::new(tick),
            });
            Arc::clone(&entry.tables)
        };
        self.evict_extras();
        stored
    }

    /// Drops every entry of the dataset with `content_hash`.
    pub fn remove_dataset(&self, content_hash: &str) {
        self.map.retain(|k, _| k.content_hash != content_hash);
    }

    /// Number of cached entries.
    pub fn len(&self) -> usize {
        self.map.len()
    }

    /// Whether the cache is empty.
    pub fn is_empty(&self) -> bool {
        self.map.is_empty()
    }

    /// Approximate heap bytes held by all cached tables.
    pub fn table_bytes(&self) -> usize {
        self.map.iter().map(|e| e.tables.table_bytes()).sum()
    }

    fn evict_extras(&self) {
        loop {
            let extras: Vec<(TableKey, u64)> = self
                .map
                .iter()
                .filter(|e| !e.pinned)
                .map(|e| (e.key().clone(), e.last_used.load(Ordering::Relaxed)))
                .collect();
            if extras.len() <= self.max_extra_entries {
                return;
            }
            if let Some((oldest, _)) = extras.into_iter().min_by_key(|(_, t)| *t) {
                self.map.remove(&oldest);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tables(name: &str) -> Arc<SpeciesTables> {
        let grid = LogGrid::from_range(1e3, 1e4, 2).unwrap();
        Arc::new(SpeciesTables::new(name.into(), grid, vec![], vec![]))
    }

    #[test]
    fn extra_entries_are_capped_and_pinned_ones_kept() {
        let cache = TableCache::new(2);
        let g = |n: u32| LogGrid::from_range(1e3, 1e5, n).unwrap();
        cache.insert(TableKey::new("h", "A", &g(1)), tables("A"), true);
        for n in 2..6 {
            cache.insert(TableKey::new("h", "A", &g(n)), tables("A"), false);
        }
        assert_eq!(cache.len(), 3);
        assert!(cache.get(&TableKey::new("h", "A", &g(1))).is_some());
        assert!(cache.get(&TableKey::new("h", "A", &g(5))).is_some());
        assert!(cache.get(&TableKey::new("h", "A", &g(2))).is_none());
        cache.remove_dataset("h");
        assert!(cache.is_empty());
    }

    #[test]
    fn the_first_insert_wins() {
        let cache = TableCache::new(4);
        let grid = LogGrid::from_range(1e3, 1e5, 3).unwrap();
        let first = cache.insert(TableKey::new("h", "A", &grid), tables("first"), true);
        let second = cache.insert(TableKey::new("h", "A", &grid), tables("second"), true);
        assert_eq!(first.species, "first");
        assert_eq!(second.species, "first");
    }
}
