//! A blocking facade for codes that are not async: it owns a small tokio runtime (one worker
//! thread) and runs each call of the async [`crate::Client`] to completion on it.
//!
//! ```no_run
//! use ratewell_client::{blocking, ClientConfig, DatasetRef, OutsidePolicy};
//! # fn main() -> Result<(), ratewell_client::ClientError> {
//! let config = ClientConfig::new("http://127.0.0.1:50051").with_dataset(DatasetRef::new("demo")?);
//! let client = blocking::Client::new(config)?;
//! let tables = client.fetch_tables("X", None)?;
//! let v = tables.rate(2, 1, 1.0e4, OutsidePolicy::Refuse)?;
//! println!("q_lu = {:e} cm3/s", v.excitation_cm3_s);
//! # Ok(()) }
//! ```

use crate::config::ClientConfig;
use crate::dataset::DatasetRef;
use crate::error::ClientError;
use crate::health::{EndpointHealth, ServingStatus};
use crate::local::LocalTables;
use crate::populations::PopulationQuery;
use crate::rates::{RateLookup, RateQuery};
use crate::transition::TableGrid;
use crate::units::EnergyUnit;
use ratewell_proto::pb;
use std::future::Future;
use std::sync::Arc;

/// The blocking client. Clones share the runtime, connections and table cache. Create and drop
/// it outside any async runtime.
#[derive(Debug, Clone)]
pub struct Client {
    runtime: Arc<tokio::runtime::Runtime>,
    inner: crate::Client,
}

fn inside_runtime() -> ClientError {
    ClientError::Runtime(
        "blocking::Client cannot be used inside an async runtime; use ratewell_client::Client".into(),
    )
}

impl Client {
    /// A client with its own one-thread runtime. Connects lazily.
    pub fn new(config: ClientConfig) -> Result<Self, ClientError> {
        if tokio::runtime::Handle::try_current().is_ok() {
            return Err(inside_runtime());
        }
        let runtime = tokio::runtime::Builder::new_multi_thread()
            .worker_threads(1)
            .thread_name("ratewell-client")
            .enable_all()
            .build()
            .map_err(|e| ClientError::Runtime(format!("cannot start the client runtime: {e}")))?;
        let inner = {
            let _guard = runtime.enter();
            crate::Client::new(config)?
        };
        Ok(Self {
            runtime: Arc::new(runtime),
            inner,
        })
    }

    fn block<T>(&self, f: impl Future<Output = Result<T, ClientError>>) -> Result<T, ClientError> {
        if tokio::runtime::Handle::try_current().is_ok() {
            return Err(inside_runtime());
        }
        self.runtime.block_on(f)
    }

    /// The async client inside (for use from async code running on another runtime).
    pub fn as_async(&self) -> &crate::Client {
        &self.inner
    }

    /// A clone that asks about another dataset.
    pub fn with_dataset(&self, dataset: DatasetRef) -> Client {
        Client {
            runtime: self.runtime.clone(),
            inner: self.inner.with_dataset(dataset),
        }
    }

    /// See [`crate::Client::list_datasets`].
    pub fn list_datasets(&self) -> Result<Vec<pb::DatasetSummary>, ClientError> {
        self.block(self.inner.list_datasets())
    }

    /// See [`crate::Client::describe_species`].
    pub fn describe_species(
        &self,
        species: &str,
        energy_unit: EnergyUnit,
    ) -> Result<pb::DescribeSpeciesResponse, ClientError> {
        self.block(self.inner.describe_species(species, energy_unit))
    }

    /// See [`crate::Client::fetch_tables`].
    pub fn fetch_tables(
        &self,
        species: &str,
        grid: Option<TableGrid>,
    ) -> Result<Arc<LocalTables>, ClientError> {
        self.block(self.inner.fetch_tables(species, grid))
    }

    /// See [`crate::Client::lookup_rates`].
    pub fn lookup_rates(&self, query: &RateQuery) -> Result<RateLookup, ClientError> {
        self.block(self.inner.lookup_rates(query))
    }

    /// See [`crate::Client::lookup_rates_stream`].
    pub fn lookup_rates_stream(
        &self,
        query: &RateQuery,
        temperatures_per_message: usize,
    ) -> Result<RateLookup, ClientError> {
        self.block(self.inner.lookup_rates_stream(query, temperatures_per_message))
    }

    /// See [`crate::Client::solve_populations`].
    pub fn solve_populations(
        &self,
        query: &PopulationQuery,
    ) -> Result<pb::SolvePopulationsResponse, ClientError> {
        self.block(self.inner.solve_populations(query))
    }

    /// See [`crate::Client::solve_populations_chunked`].
    pub fn solve_populations_chunked(
        &self,
        query: &PopulationQuery,
        per_call: usize,
        progress: impl FnMut(usize, usize),
    ) -> Result<pb::SolvePopulationsResponse, ClientError> {
        self.block(self.inner.solve_populations_chunked(query, per_call, progress))
    }

    /// See [`crate::Client::compare_datasets`].
    pub fn compare_datasets(
        &self,
        first: &DatasetRef,
        second: &DatasetRef,
        species: &[String],
        grid: Option<TableGrid>,
    ) -> Result<pb::CompareDatasetsResponse, ClientError> {
        self.block(self.inner.compare_datasets(first, second, species, grid))
    }

    /// See [`crate::Client::load_dataset`].
    pub fn load_dataset(&self, folder: &str) -> Result<pb::LoadDatasetResponse, ClientError> {
        self.block(self.inner.load_dataset(folder))
    }

    /// See [`crate::Client::health`].
    pub fn health(&self) -> Result<ServingStatus, ClientError> {
        self.block(self.inner.health())
    }

    /// See [`crate::Client::health_all`].
    pub fn health_all(&self) -> Result<Vec<EndpointHealth>, ClientError> {
        let inner = &self.inner;
        self.block(async move { Ok(inner.health_all().await) })
    }
}
