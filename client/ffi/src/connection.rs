//! Connections: a client with its own current-thread runtime. Every call runs on the calling
//! thread (`block_on`), so the library starts no threads; several threads may call through one
//! connection at once.

use crate::status::{Failure, guard};
use crate::strings::{optional, required};
use crate::tables::RatewellTables;
use ratewell_client::{Client, ClientConfig, DatasetRef};
use std::ffi::c_char;
use std::time::Duration;

/// A connection to one or more ratewell servers for one dataset (opaque).
pub struct RatewellConnection {
    pub(crate) runtime: tokio::runtime::Runtime,
    pub(crate) client: Client,
}

/// Largest time budget accepted, seconds (one day).
const MAX_BUDGET_S: f64 = 86_400.0;

fn open(
    endpoints: &str,
    dataset_id: &str,
    version: Option<&str>,
    pinned_hash: Option<&str>,
    time_budget_s: f64,
    cache_dir: Option<&str>,
    options: Option<&str>,
) -> Result<RatewellConnection, Failure> {
    let list: Vec<String> = endpoints
        .split(',')
        .map(str::trim)
        .filter(|e| !e.is_empty())
        .map(String::from)
        .collect();
    if list.is_empty() {
        return Err(Failure::invalid(
            "endpoints",
            format!("{endpoints:?}"),
            "one or more server addresses, comma-separated (e.g. \"http://127.0.0.1:50051\")",
        ));
    }
    let mut dataset = DatasetRef::new(dataset_id)?;
    if let Some(v) = version {
        dataset = dataset.with_version(v);
    }
    if let Some(h) = pinned_hash {
        dataset = dataset.pinned(h)?;
    }
    let mut config = ClientConfig::new(list[0].clone())
        .with_endpoints(list)
        .with_dataset(dataset);
    if !(time_budget_s.is_finite() && (0.0..=MAX_BUDGET_S).contains(&time_budget_s)) {
        return Err(Failure::invalid(
            "time_budget_s",
            time_budget_s,
            "must be within [0, 86400] s (0: the library's defaults)",
        ));
    }
    if time_budget_s > 0.0 {
        let budget = Duration::from_secs_f64(time_budget_s);
        config.retry.deadline = budget;
        config.call_timeout = config.call_timeout.min(budget);
        config.connect_timeout = config.connect_timeout.min(budget);
    }
    if let Some(dir) = cache_dir {
        config = config.with_cache_dir(dir);
    }
    if let Some(text) = options {
        config = ratewell_client::apply_options(config, text)?;
    }
    let runtime = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .build()
        .map_err(|e| Failure {
            status: crate::status::RATEWELL_INTERNAL,
            message: format!("cannot set up the client's event loop: {e}"),
        })?;
    let client = {
        let _inside = runtime.enter();
        Client::new(config)?
    };
    Ok(RatewellConnection { runtime, client })
}

/// Opens a connection (lazily: nothing is sent until the first call).
///
/// - `endpoints`: one or more server addresses, comma-separated, tried in turn (failover).
/// - `dataset_id`: the dataset every call is about (required).
/// - `version`: a dataset version, or NULL/"" for the newest loaded.
/// - `pinned_hash`: a content hash that every answer must carry, or NULL/"" for none.
/// - `time_budget_s`: the most one call may take over all its retries, seconds; 0 for the
///   defaults (10 s per attempt, retries within 30 s).
/// - `cache_dir`: a folder of table files shared by the processes of a node, or NULL/"".
///
/// On success `*out` holds a handle to free with `ratewell_close`. Equivalent to
/// `ratewell_open_with_options` with no options.
///
/// # Safety
/// String arguments are NULL or NUL-terminated; `out` points to writable memory.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_open(
    endpoints: *const c_char,
    dataset_id: *const c_char,
    version: *const c_char,
    pinned_hash: *const c_char,
    time_budget_s: f64,
    cache_dir: *const c_char,
    out: *mut *mut RatewellConnection,
) -> i32 {
    // SAFETY: the caller's promises, passed on unchanged; no options.
    unsafe {
        ratewell_open_with_options(
            endpoints,
            dataset_id,
            version,
            pinned_hash,
            time_budget_s,
            cache_dir,
            std::ptr::null(),
            out,
        )
    }
}

/// `ratewell_open` with further settings in `options`: NULL/"" or `key=value` pairs separated
/// by `;` or new lines. Keys: `token_file` (a file holding the bearer token for servers that
/// require one), `tls_ca_file` (connect with TLS trusting this PEM certificate authority;
/// addresses become https://), `tls_server_name` (the name on the server certificate when it
/// differs from the host), `wait_for_server_s` (keep trying this long while no server can be
/// reached: jobs started before their server), `call_timeout_s` (per attempt; a hung server
/// is left for the next endpoint after this), `fall_back_to_fetched_tables` (`1`: answer from
/// tables already fetched when no server answers). A bad pair is refused naming the key.
///
/// # Safety
/// String arguments are NULL or NUL-terminated; `out` points to writable memory.
#[unsafe(no_mangle)]
#[allow(clippy::too_many_arguments)]
pub unsafe extern "C" fn ratewell_open_with_options(
    endpoints: *const c_char,
    dataset_id: *const c_char,
    version: *const c_char,
    pinned_hash: *const c_char,
    time_budget_s: f64,
    cache_dir: *const c_char,
    options: *const c_char,
    out: *mut *mut RatewellConnection,
) -> i32 {
    guard(|| {
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: the caller's promises on every string argument.
        let (endpoints, id, version, pin, dir, options) = unsafe {
            (
                required("endpoints", endpoints)?,
                required("dataset_id", dataset_id)?,
                optional("version", version)?,
                optional("pinned_hash", pinned_hash)?,
                optional("cache_dir", cache_dir)?,
                optional("options", options)?,
            )
        };
        let connection = open(endpoints, id, version, pin, time_budget_s, dir, options)?;
        // SAFETY: `out` is non-null and writable.
        unsafe { *out = Box::into_raw(Box::new(connection)) };
        Ok(())
    })
}

/// Closes a connection (NULL: nothing to do). Table sets fetched through it stay valid.
///
/// # Safety
/// `connection` came from `ratewell_open` and is not used afterwards.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_close(connection: *mut RatewellConnection) {
    if !connection.is_null() {
        crate::status::guard_value((), || {
            // SAFETY: made by Box::into_raw in ratewell_open, freed once.
            drop(unsafe { Box::from_raw(connection) });
        });
    }
}

/// Fetches every rate table of `species` on the server's grid (once per process: later calls
/// for the same species come from the in-process cache, or from the cache folder). On success
/// `*out` holds an immutable table set to free with `ratewell_tables_free`.
///
/// # Safety
/// `connection` is a live handle; `species` is NUL-terminated; `out` is writable.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ratewell_fetch_tables(
    connection: *const RatewellConnection,
    species: *const c_char,
    out: *mut *mut RatewellTables,
) -> i32 {
    guard(|| {
        // SAFETY: the caller's promises.
        let connection = unsafe { connection.as_ref() }.ok_or_else(|| Failure::null("connection"))?;
        if out.is_null() {
            return Err(Failure::null("out"));
        }
        // SAFETY: as above.
        let species = unsafe { required("species", species) }?;
        let tables = connection
            .runtime
            .block_on(connection.client.fetch_tables(species, None))?;
        // SAFETY: `out` is non-null and writable.
        unsafe { *out = Box::into_raw(Box::new(RatewellTables { tables })) };
        Ok(())
    })
}
