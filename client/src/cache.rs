//! In-process cache of fetched tables, so a job fetches each table set once. Entries are keyed
//! by what was asked: (dataset id, version, pinned content hash, species, grid), with "" for a
//! version or hash left open. A job that asks for "the newest" keeps the version it first got
//! for its whole life (consistent numbers within a job) until the cache is cleared.

use crate::error::ClientError;
use crate::local::LocalTables;
use std::collections::HashMap;
use std::future::Future;
use std::sync::{Arc, Mutex, PoisonError};
use tokio::sync::OnceCell;

/// What a table set is cached under.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub(crate) struct TableKey {
    pub(crate) id: String,
    pub(crate) version: String,
    pub(crate) content_hash: String,
    pub(crate) species: String,
    pub(crate) grid: Option<(u64, u64, u32)>,
}

type Slot = Arc<OnceCell<Arc<LocalTables>>>;

/// Shared by every clone of a client. Concurrent requests for one key wait for a single fetch.
#[derive(Debug, Default)]
pub(crate) struct TableCache {
    slots: Mutex<HashMap<TableKey, Slot>>,
}

impl TableCache {
    /// The cached tables for `key`, or the result of `fetch` (stored only when it succeeds).
    pub(crate) async fn get_or_fetch<F, Fut>(
        &self,
        key: TableKey,
        fetch: F,
    ) -> Result<Arc<LocalTables>, ClientError>
    where
        F: FnOnce() -> Fut,
        Fut: Future<Output = Result<LocalTables, ClientError>>,
    {
        let slot = {
            let mut slots = self.slots.lock().unwrap_or_else(PoisonError::into_inner);
            slots.entry(key).or_default().clone()
        };
        slot.get_or_try_init(|| async { fetch().await.map(Arc::new) })
            .await
            .cloned()
    }

    /// The tables already fetched for `key`, without fetching.
    pub(crate) fn peek(&self, key: &TableKey) -> Option<Arc<LocalTables>> {
        let slots = self.slots.lock().unwrap_or_else(PoisonError::into_inner);
        slots.get(key).and_then(|slot| slot.get().cloned())
    }

    /// Forgets every cached table set (the next fetch asks the server again).
    pub(crate) fn clear(&self) {
        self.slots.lock().unwrap_or_else(PoisonError::into_inner).clear();
    }

    /// Number of table sets held.
    pub(crate) fn len(&self) -> usize {
        self.slots
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .values()
            .filter(|s| s.initialized())
            .count()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::local::tests::invented_response;
    use std::sync::atomic::{AtomicUsize, Ordering};

    fn key(species: &str) -> TableKey {
        TableKey {
            id: "demo".into(),
            version: String::new(),
            content_hash: String::new(),
            species: species.into(),
            grid: None,
        }
    }

    // Caching behaviour: common practice, no source (a job fetches each table set once).
    #[tokio::test]
    async fn concurrent_requests_fetch_once_and_failures_are_not_kept() {
        let cache = Arc::new(TableCache::default());
        let fetches = Arc::new(AtomicUsize::new(0));
        let mut tasks = Vec::new();
        for _ in 0..8 {
            let (cache, fetches) = (cache.clone(), fetches.clone());
            tasks.push(tokio::spawn(async move {
                cache
                    .get_or_fetch(key("X"), || async move {
                        fetches.fetch_add(1, Ordering::SeqCst);
                        tokio::time::sleep(std::time::Duration::from_millis(20)).await;
                        LocalTables::from_wire(invented_response("ab"))
                    })
                    .await
                    .map(|t| t.species().to_string())
            }));
        }
        for t in tasks {
            assert_eq!(t.await.unwrap().unwrap(), "X");
        }
        assert_eq!(fetches.load(Ordering::SeqCst), 1);
        let err = cache
            .get_or_fetch(key("Y"), || async {
                Err(ClientError::invalid("species", "Y", "test failure"))
            })
            .await;
        assert!(err.is_err());
        assert_eq!(cache.len(), 1);
        let again = cache
            .get_or_fetch(key("Y"), || async {
                LocalTables::from_wire(invented_response("ab"))
            })
            .await;
        assert!(again.is_ok());
        assert_eq!(cache.len(), 2);
        cache.clear();
        assert_eq!(cache.len(), 0);
    }
}
