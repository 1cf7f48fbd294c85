//! The shared table-file folder ([`crate::ClientConfig::cache_dir`]): the first process on a
//! node that asks for a table set fetches it and writes its table file; the others wait on a
//! lock file beside it and read the file, so a thousand ranks on ten nodes make about ten
//! fetches. Files are written atomically (temporary name, then rename), and every file read is
//! checked in full (format, checksum, table-set digest) and against the dataset asked for; a
//! file that fails a check is fetched again and replaced.

use crate::cache::TableKey;
use crate::dataset::DatasetRef;
use crate::error::ClientError;
use crate::local::LocalTables;
use crate::table_file::{TABLE_FILE_EXTENSION, name_part, write_atomically};
use std::fs::{File, TryLockError};
use std::future::Future;
use std::path::Path;
use std::time::{Duration, Instant};

/// How often a waiting process tries the lock again.
const LOCK_POLL: Duration = Duration::from_millis(20);

/// The file name a request is kept under in the folder: what was asked, not what came back,
/// so a process can find it before asking a server.
pub(crate) fn entry_name(key: &TableKey) -> String {
    let version = if key.version.is_empty() {
        "newest"
    } else {
        &key.version
    };
    let pin = if key.content_hash.is_empty() {
        "unpinned".to_string()
    } else {
        key.content_hash
            .get(..16)
            .unwrap_or(&key.content_hash)
            .to_ascii_lowercase()
    };
    let grid = match key.grid {
        None => "server-grid".to_string(),
        Some((t_min, t_max, per_decade)) => format!("grid-{t_min:016x}-{t_max:016x}-{per_decade}"),
    };
    format!(
        "{}_{}_{}_{}_{}.{TABLE_FILE_EXTENSION}",
        name_part(&key.id),
        name_part(version),
        name_part(&key.species),
        grid,
        name_part(&pin),
    )
}

fn folder_error(dir: &Path, message: String) -> ClientError {
    ClientError::TableFile {
        path: dir.display().to_string(),
        message,
    }
}

/// The folder's file for `key` if it is whole and answers the request.
fn read_valid(path: &Path, key: &TableKey, dataset: &DatasetRef) -> Option<LocalTables> {
    if !path.is_file() {
        return None;
    }
    let tables = LocalTables::load(path).ok()?;
    dataset.check_stamp("cache folder", Some(tables.stamp())).ok()?;
    (tables.species() == key.species).then_some(tables)
}

/// The tables for `key` from folder `dir`, or fetched (by `fetch`) and written there. Waits at
/// most `wait` for another process that holds the lock; after that it fetches by itself.
pub(crate) async fn read_or_fill<F, Fut>(
    dir: &Path,
    key: &TableKey,
    dataset: &DatasetRef,
    wait: Duration,
    fetch: F,
) -> Result<LocalTables, ClientError>
where
    F: FnOnce() -> Fut,
    Fut: Future<Output = Result<LocalTables, ClientError>>,
{
    let name = entry_name(key);
    let path = dir.join(&name);
    if let Some(tables) = read_valid(&path, key, dataset) {
        return Ok(tables);
    }
    std::fs::create_dir_all(dir)
        .map_err(|e| folder_error(dir, format!("cannot create the cache folder: {e}")))?;
    let lock_path = dir.join(format!(".{name}.lock"));
    let lock = File::options()
        .create(true)
        .truncate(false)
        .write(true)
        .open(&lock_path)
        .map_err(|e| folder_error(&lock_path, format!("cannot open the lock file: {e}")))?;
    let give_up = Instant::now() + wait;
    loop {
        match lock.try_lock() {
            Ok(()) => break,
            Err(TryLockError::WouldBlock) if Instant::now() < give_up => {
                tokio::time::sleep(LOCK_POLL).await;
            }
            // Waited long enough, or the file system has no locks: go on without the lock
            // (correct, only possibly one more fetch).
            Err(_) => break,
        }
    }
    if let Some(tables) = read_valid(&path, key, dataset) {
        return Ok(tables);
    }
    let tables = fetch().await?;
    write_atomically(dir, &name, &tables.to_file_bytes())?;
    // The lock is released when `lock` is dropped (closed).
    drop(lock);
    Ok(tables)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::local::tests::invented_response;
    use std::sync::Arc;
    use std::sync::atomic::{AtomicUsize, Ordering};

    fn key() -> TableKey {
        TableKey {
            id: "demo".into(),
            version: String::new(),
            content_hash: String::new(),
            species: "X".into(),
            grid: None,
        }
    }

    fn scratch() -> std::path::PathBuf {
        std::env::temp_dir().join(format!(
            "ratewell-cache-dir-{}-{:x}",
            std::process::id(),
            rand::random::<u32>()
        ))
    }

    #[test]
    fn entry_names_say_what_was_asked() {
        assert_eq!(entry_name(&key()), "demo_newest_X_server-grid_unpinned.rwtables");
        let k = TableKey {
            version: "1.0.0".into(),
            content_hash: "ABCDEF0123456789ffff".into(),
            grid: Some((1, 2, 20)),
            ..key()
        };
        assert_eq!(
            entry_name(&k),
            "demo_1.0.0_X_grid-0000000000000001-0000000000000002-20_abcdef0123456789.rwtables"
        );
    }

    // Many processes sharing one folder: common practice, no source. Eight concurrent
    // requests (each with its own lock-file handle, as separate processes have) make one
    // fetch, leave one whole file and no temporary files, and all get the same tables.
    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn racing_requests_fetch_once_and_leave_one_file() {
        let dir = scratch();
        let dataset = DatasetRef::new("demo").unwrap();
        let fetches = Arc::new(AtomicUsize::new(0));
        let mut tasks = Vec::new();
        for _ in 0..8 {
            let (dir, dataset, fetches) = (dir.clone(), dataset.clone(), fetches.clone());
            tasks.push(tokio::spawn(async move {
                read_or_fill(&dir, &key(), &dataset, Duration::from_secs(10), || async move {
                    fetches.fetch_add(1, Ordering::SeqCst);
                    tokio::time::sleep(Duration::from_millis(50)).await;
                    LocalTables::from_wire(invented_response(&"cd".repeat(32)))
                })
                .await
                .map(|t| t.digest().to_string())
            }));
        }
        let mut digests = Vec::new();
        for t in tasks {
            digests.push(t.await.unwrap().unwrap());
        }
        assert!(digests.iter().all(|d| d == &digests[0]));
        assert_eq!(fetches.load(Ordering::SeqCst), 1);
        let mut names: Vec<String> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        names.sort();
        assert_eq!(
            names,
            [
                ".demo_newest_X_server-grid_unpinned.rwtables.lock",
                "demo_newest_X_server-grid_unpinned.rwtables"
            ]
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[tokio::test]
    async fn a_damaged_or_foreign_file_is_fetched_again_and_replaced() {
        let dir = scratch();
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join(entry_name(&key()));
        std::fs::write(&path, b"RWTABLES garbage").unwrap();
        let dataset = DatasetRef::new("demo").unwrap();
        let t = read_or_fill(&dir, &key(), &dataset, Duration::from_secs(1), || async {
            LocalTables::from_wire(invented_response(&"cd".repeat(32)))
        })
        .await
        .unwrap();
        assert_eq!(LocalTables::load(&path).unwrap().digest(), t.digest());
        // A file from another dataset id under this name is not used.
        let other = DatasetRef::new("other").unwrap();
        let fetched = AtomicUsize::new(0);
        read_or_fill(&dir, &key(), &other, Duration::from_secs(1), || async {
            fetched.fetch_add(1, Ordering::SeqCst);
            let mut r = invented_response(&"cd".repeat(32));
            r.stamp.as_mut().unwrap().id = "other".into();
            LocalTables::from_wire(r)
        })
        .await
        .unwrap();
        assert_eq!(fetched.load(Ordering::SeqCst), 1);
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
