//! The async client: one channel per endpoint, a time budget on every call, retries of
//! idempotent calls, stamp checks on every answer, and the in-process table cache.

use crate::cache::{TableCache, TableKey};
use crate::cache_dir;
use crate::config::ClientConfig;
use crate::dataset::DatasetRef;
use crate::error::ClientError;
use crate::health::{EndpointHealth, ServingStatus};
use crate::local::LocalTables;
use crate::populations::{PopulationQuery, check_answer, merge};
use crate::rates::{RateLookup, RateQuery};
use crate::retry::{is_local_timeout, is_retryable, is_transport_failure};
use crate::transition::TableGrid;
use crate::transport::{Connection, Pool};
use crate::units::{EnergyUnit, check_temperatures};
use ratewell_proto::pb;
use ratewell_proto::pb::admin_client::AdminClient;
use ratewell_proto::pb::catalogue_client::CatalogueClient;
use ratewell_proto::pb::consistency_client::ConsistencyClient;
use ratewell_proto::pb::populations_client::PopulationsClient;
use ratewell_proto::pb::rates_client::RatesClient;
use std::future::Future;
use std::sync::Arc;
use std::time::{Duration, Instant};
use tonic::{Code, Request, Status};
use tonic_health::pb::HealthCheckRequest;
use tonic_health::pb::health_client::HealthClient;

/// Whether a call may be repeated after a transient failure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Retry {
    /// Idempotent: retried on UNAVAILABLE and RESOURCE_EXHAUSTED.
    Idempotent,
    /// Tried once.
    Once,
}

struct Inner {
    config: ClientConfig,
    pool: Pool,
    cache: TableCache,
}

/// A ratewell client. Cheap to clone (an `Arc` inside); clones share connections and the
/// table cache.
///
/// ```no_run
/// use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery};
/// # async fn demo() -> Result<(), ratewell_client::ClientError> {
/// let config = ClientConfig::new("http://127.0.0.1:50051")
///     .with_dataset(DatasetRef::new("demo")?.with_version("1.0.0"));
/// let client = Client::new(config)?;
/// let answer = client.lookup_rates(&RateQuery::new("X", vec![5.0e3, 1.0e4])).await?;
/// println!("{} values from {}", answer.flags.len(), answer.stamp.content_hash);
/// # Ok(()) }
/// ```
#[derive(Clone)]
pub struct Client {
    inner: Arc<Inner>,
    dataset: Option<DatasetRef>,
}

impl std::fmt::Debug for Client {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Client")
            .field("endpoints", &self.inner.config.endpoints)
            .field("dataset", &self.dataset)
            .finish()
    }
}

/// A request with its time budget sent as grpc-timeout.
fn request<T>(message: T, budget: Duration) -> Request<T> {
    let mut r = Request::new(message);
    r.set_timeout(budget);
    r
}

impl Client {
    /// A client for `config`. Connects lazily (on the first call); must be called inside a
    /// tokio runtime (use [`crate::blocking::Client`] elsewhere).
    pub fn new(config: ClientConfig) -> Result<Self, ClientError> {
        config.validate()?;
        tokio::runtime::Handle::try_current().map_err(|_| {
            ClientError::Runtime(
                "Client::new needs a running tokio runtime; use blocking::Client in synchronous code".into(),
            )
        })?;
        let pool = Pool::new(&config)?;
        let dataset = config.dataset.clone();
        Ok(Self {
            inner: Arc::new(Inner {
                config,
                pool,
                cache: TableCache::default(),
            }),
            dataset,
        })
    }

    /// A clone of this client that asks about another dataset (connections and cache shared).
    pub fn with_dataset(&self, dataset: DatasetRef) -> Client {
        Client {
            inner: self.inner.clone(),
            dataset: Some(dataset),
        }
    }

    /// The dataset calls are about, if set.
    pub fn dataset(&self) -> Option<&DatasetRef> {
        self.dataset.as_ref()
    }

    /// The settings in force.
    pub fn config(&self) -> &ClientConfig {
        &self.inner.config
    }

    /// Forgets every cached table set.
    pub fn clear_table_cache(&self) {
        self.inner.cache.clear();
    }

    /// Number of table sets held in the cache.
    pub fn cached_table_sets(&self) -> usize {
        self.inner.cache.len()
    }

    fn require_dataset(&self) -> Result<&DatasetRef, ClientError> {
        self.dataset.as_ref().ok_or_else(|| {
            ClientError::invalid(
                "dataset",
                "(not set)",
                "this call needs a dataset id: set ClientConfig::dataset or use with_dataset",
            )
        })
    }

    fn max_bytes(&self) -> usize {
        self.inner.config.max_message_bytes
    }

    /// Runs one call with a time budget per attempt (sent as grpc-timeout and enforced here),
    /// failing over and retrying per the policy, under the overall deadline.
    ///
    /// An attempt ends in one of four ways: an answer (returned); a status the server sent
    /// (retried only when [`is_retryable`]); a transport failure (no server answered: retried
    /// on the next endpoint); or no answer within the attempt's budget, which from here looks
    /// like a hung server (the server answers DEADLINE_EXCEEDED itself just before the budget
    /// runs out when it is merely slow): retried on the next endpoint too. With
    /// [`ClientConfig::wait_for_server`] set, failures to reach any server do not use up
    /// attempts until that long has passed.
    async fn call<T, F, Fut>(
        &self,
        operation: &'static str,
        retry: Retry,
        dataset: Option<&DatasetRef>,
        mut attempt: F,
    ) -> Result<T, ClientError>
    where
        F: FnMut(Connection, Duration) -> Fut,
        Fut: Future<Output = Result<T, Status>>,
    {
        let config = &self.inner.config;
        let policy = &config.retry;
        let overall = policy.deadline.max(config.wait_for_server);
        let started = Instant::now();
        // Failures that use up attempts, and every failure (the backoff grows with these).
        let (mut counted, mut failures) = (0u32, 0u32);
        // The last real failure, reported if the overall deadline cuts a retry short.
        let mut last: Option<ClientError> = None;
        let refine = |address: &str, status: &Status| match dataset {
            Some(d) => d.refine_status(operation, address, status),
            None => ClientError::from_status(operation, address, status),
        };
        loop {
            let remaining = overall.saturating_sub(started.elapsed());
            let budget = config.call_timeout.min(remaining);
            let cut_short = budget < config.call_timeout;
            let timed_out = |last: Option<ClientError>, after| match last {
                Some(previous) if cut_short => previous,
                _ => ClientError::Timeout { operation, after },
            };
            if budget.is_zero() {
                return Err(timed_out(last, overall));
            }
            let (index, address, channel) = self.inner.pool.current();
            let attempt_started = Instant::now();
            let (failure, retryable, unreachable) =
                match tokio::time::timeout(budget, attempt(channel, budget)).await {
                    Ok(Ok(value)) => return Ok(value),
                    // The channel's own grpc-timeout timer: no answer at all, as below.
                    Ok(Err(status)) if is_local_timeout(&status) => {
                        if cut_short {
                            return Err(timed_out(last, budget));
                        }
                        (
                            ClientError::Timeout {
                                operation,
                                after: budget,
                            },
                            true,
                            false,
                        )
                    }
                    Ok(Err(status)) => {
                        let code = status.code();
                        // A server deadline firing first: DEADLINE_EXCEEDED, or tonic's server
                        // answer CANCELLED "Timeout expired" when the budget is all but spent.
                        let budget_spent = attempt_started.elapsed() >= budget.mul_f64(0.9);
                        if code == Code::DeadlineExceeded || (code == Code::Cancelled && budget_spent) {
                            return Err(timed_out(last, budget));
                        }
                        let unreachable = code == Code::Unavailable || is_transport_failure(&status);
                        (refine(address, &status), is_retryable(&status), unreachable)
                    }
                    // No answer at all within the budget: the server is hung or the network
                    // is gone. Worth another endpoint if time is left.
                    Err(_) if cut_short => return Err(timed_out(last, budget)),
                    Err(_) => (
                        ClientError::Timeout {
                            operation,
                            after: budget,
                        },
                        true,
                        false,
                    ),
                };
            if retryable {
                self.inner.pool.fail_over(index);
            }
            failures += 1;
            let waiting = unreachable && started.elapsed() < config.wait_for_server;
            if !waiting {
                counted += 1;
            }
            let wait = policy.jittered_backoff(failures - 1);
            let may_retry = retry == Retry::Idempotent
                && retryable
                && counted < policy.max_attempts
                && started.elapsed() + wait < overall;
            if !may_retry {
                return Err(failure);
            }
            last = Some(failure);
            tokio::time::sleep(wait).await;
        }
    }

    /// Waits until some endpoint reports SERVING to standard health checking, trying each in
    /// turn with backoff, for at most `limit`. For jobs started together with (or before) the
    /// service. Returns the address that answered SERVING.
    pub async fn wait_until_serving(&self, limit: Duration) -> Result<String, ClientError> {
        let started = Instant::now();
        let policy = &self.inner.config.retry;
        let mut tries = 0u32;
        let mut last = String::from("no endpoint was tried");
        loop {
            for (address, channel) in self.inner.pool.all() {
                let left = limit.saturating_sub(started.elapsed());
                if left.is_zero() {
                    break;
                }
                let timeout = self.inner.config.call_timeout.min(left);
                match check_health(channel, address, timeout).await {
                    Ok(ServingStatus::Serving) => return Ok(address.to_string()),
                    Ok(other) => last = format!("{address}: {other:?}"),
                    Err(e) => last = e.to_string(),
                }
            }
            let wait = policy.jittered_backoff(tries);
            tries += 1;
            if started.elapsed() + wait >= limit {
                return Err(ClientError::Transport {
                    endpoint: self.inner.config.endpoints.join(", "),
                    message: format!("no endpoint was SERVING within {limit:?} (last: {last})"),
                });
            }
            tokio::time::sleep(wait).await;
        }
    }

    /// Every dataset the server holds.
    pub async fn list_datasets(&self) -> Result<Vec<pb::DatasetSummary>, ClientError> {
        let n = self.max_bytes();
        let response = self
            .call("ListDatasets", Retry::Idempotent, None, |ch, budget| async move {
                let mut c = CatalogueClient::new(ch)
                    .max_decoding_message_size(n)
                    .max_encoding_message_size(n);
                let r = c
                    .list_datasets(request(pb::ListDatasetsRequest {}, budget))
                    .await?;
                Ok(r.into_inner())
            })
            .await?;
        Ok(response.datasets)
    }

    /// Levels and transitions of a species, level energies in `energy_unit`.
    pub async fn describe_species(
        &self,
        species: &str,
        energy_unit: EnergyUnit,
    ) -> Result<pb::DescribeSpeciesResponse, ClientError> {
        let dataset = self.require_dataset()?;
        check_species(species)?;
        let message = pb::DescribeSpeciesRequest {
            dataset: Some(dataset.to_selector()),
            species: species.to_string(),
            energy_unit: energy_unit.to_wire(),
        };
        let n = self.max_bytes();
        let response = self
            .call(
                "DescribeSpecies",
                Retry::Idempotent,
                Some(dataset),
                |ch, budget| {
                    let m = message.clone();
                    async move {
                        let mut c = CatalogueClient::new(ch)
                            .max_decoding_message_size(n)
                            .max_encoding_message_size(n);
                        Ok(c.describe_species(request(m, budget)).await?.into_inner())
                    }
                },
            )
            .await?;
        dataset.check_stamp("DescribeSpecies", response.stamp.as_ref())?;
        Ok(response)
    }

    /// All rate tables of a species for local evaluation, from the in-process cache when this
    /// (dataset, version, pinned hash, species, grid) was fetched before, else from the shared
    /// cache folder when one is configured ([`ClientConfig::cache_dir`]), else from the server.
    ///
    /// ```no_run
    /// # async fn demo(client: &ratewell_client::Client) -> Result<(), ratewell_client::ClientError> {
    /// let tables = client.fetch_tables("X", None).await?;
    /// println!("{} tables from {}", tables.tables().len(), tables.stamp().content_hash);
    /// # Ok(()) }
    /// ```
    pub async fn fetch_tables(
        &self,
        species: &str,
        grid: Option<TableGrid>,
    ) -> Result<Arc<LocalTables>, ClientError> {
        let dataset = self.require_dataset()?;
        check_species(species)?;
        let key = table_key(dataset, species, grid);
        let folder = self.inner.config.cache_dir.clone();
        let wait = self.inner.config.retry.deadline + self.inner.config.call_timeout;
        let tables = self
            .inner
            .cache
            .get_or_fetch(key.clone(), || async move {
                match folder {
                    Some(dir) => {
                        cache_dir::read_or_fill(&dir, &key, dataset, wait, || {
                            self.fetch_tables_uncached(dataset, species, grid)
                        })
                        .await
                    }
                    None => self.fetch_tables_uncached(dataset, species, grid).await,
                }
            })
            .await?;
        // Cached sets too: a pin added since (a tables digest, which is not part of the cache
        // key) holds for every set handed out.
        dataset.check_stamp("FetchTables", Some(tables.stamp()))?;
        Ok(tables)
    }

    async fn fetch_tables_uncached(
        &self,
        dataset: &DatasetRef,
        species: &str,
        grid: Option<TableGrid>,
    ) -> Result<LocalTables, ClientError> {
        let message = pb::FetchTablesRequest {
            dataset: Some(dataset.to_selector()),
            species: species.to_string(),
            grid: grid.map(TableGrid::to_wire),
        };
        let n = self.max_bytes();
        let response = self
            .call("FetchTables", Retry::Idempotent, Some(dataset), |ch, budget| {
                let m = message.clone();
                async move {
                    let mut c = RatesClient::new(ch)
                        .max_decoding_message_size(n)
                        .max_encoding_message_size(n);
                    Ok(c.fetch_tables(request(m, budget)).await?.into_inner())
                }
            })
            .await?;
        dataset.check_stamp("FetchTables", response.stamp.as_ref())?;
        if response.species != species {
            return Err(ClientError::Malformed {
                operation: "FetchTables",
                message: format!("asked for species {species:?}, got {:?}", response.species),
            });
        }
        LocalTables::from_wire(response)
    }

    /// Rate coefficients looked up on the server in one call (see
    /// [`ClientConfig::fall_back_to_fetched_tables`] for what happens when no server answers).
    pub async fn lookup_rates(&self, query: &RateQuery) -> Result<RateLookup, ClientError> {
        let answer = self.lookup_rates_remote(query).await;
        self.or_fetched_tables(query, answer)
    }

    /// An answer from already fetched tables in place of `failed`, when the client is set to
    /// fall back, `failed` means no server was reached, and the tables are held.
    fn or_fetched_tables(
        &self,
        query: &RateQuery,
        answer: Result<RateLookup, ClientError>,
    ) -> Result<RateLookup, ClientError> {
        let error = match answer {
            Ok(a) => return Ok(a),
            Err(e) => e,
        };
        if !self.inner.config.fall_back_to_fetched_tables || !error.is_unreachable() {
            return Err(error);
        }
        let Some(dataset) = self.dataset.as_ref() else {
            return Err(error);
        };
        let Some(tables) = self
            .inner
            .cache
            .peek(&table_key(dataset, &query.species, query.grid))
        else {
            return Err(error);
        };
        let mut local = tables.evaluate(query)?;
        local.cautions.push(FALLBACK_CAUTION.to_string());
        Ok(local)
    }

    async fn lookup_rates_remote(&self, query: &RateQuery) -> Result<RateLookup, ClientError> {
        let dataset = self.require_dataset()?;
        check_species(&query.species)?;
        check_temperatures(&query.temperatures, query.options.temperature_unit)?;
        let message = query.to_wire(dataset, 0..query.temperatures.len());
        let n = self.max_bytes();
        let response = self
            .call("LookupRates", Retry::Idempotent, Some(dataset), |ch, budget| {
                let m = message.clone();
                async move {
                    let mut c = RatesClient::new(ch)
                        .max_decoding_message_size(n)
                        .max_encoding_message_size(n);
                    Ok(c.lookup_rates(request(m, budget)).await?.into_inner())
                }
            })
            .await?;
        let stamp = dataset.check_stamp("LookupRates", response.stamp.as_ref())?;
        RateLookup::from_wire(response, stamp, query.temperatures.len(), query.options.direction)
    }

    /// Rate coefficients for a very large batch: the temperatures are split into messages of
    /// `temperatures_per_message` (0: the configured default) and streamed; the answers are
    /// merged into one transition-major result.
    ///
    /// A stream cut part-way (a server dying or stopping) is resumed on the next endpoint from
    /// the first unanswered message, under the call's retry policy. Every part comes from one
    /// dataset: once the first answer arrives, the rest of the stream (resumed parts included)
    /// is pinned to its content hash, so a server holding another version refuses rather than
    /// mixing two versions in one result.
    pub async fn lookup_rates_stream(
        &self,
        query: &RateQuery,
        temperatures_per_message: usize,
    ) -> Result<RateLookup, ClientError> {
        let answer = self
            .lookup_rates_stream_remote(query, temperatures_per_message)
            .await;
        self.or_fetched_tables(query, answer)
    }

    async fn lookup_rates_stream_remote(
        &self,
        query: &RateQuery,
        temperatures_per_message: usize,
    ) -> Result<RateLookup, ClientError> {
        let dataset = self.require_dataset()?;
        check_species(&query.species)?;
        check_temperatures(&query.temperatures, query.options.temperature_unit)?;
        let per = match temperatures_per_message {
            0 => self.inner.config.stream_temperatures_per_message,
            p => p,
        };
        let total = query.temperatures.len();
        let ranges: Arc<Vec<std::ops::Range<usize>>> =
            Arc::new((0..total).step_by(per).map(|s| s..(s + per).min(total)).collect());
        let shared = Arc::new((query.clone(), dataset.clone()));
        // Answers received so far, kept across attempts so a retry resumes after them.
        let received: Arc<std::sync::Mutex<Vec<pb::LookupRatesResponse>>> = Arc::default();
        let n = self.max_bytes();
        self.call(
            "LookupRatesStream",
            Retry::Idempotent,
            Some(dataset),
            |ch, budget| {
                let (shared, ranges, received) = (shared.clone(), ranges.clone(), received.clone());
                async move {
                    let (from, resumed_on) = {
                        let got = received.lock().expect("stream answers");
                        (got.len(), got.first().and_then(|r| r.stamp.clone()))
                    };
                    if from == ranges.len() {
                        return Ok(());
                    }
                    // After the first answer, the rest is pinned to its content hash.
                    let selector_dataset = match &resumed_on {
                        Some(stamp) if shared.1.pinned_content_hash().is_none() => shared
                            .1
                            .clone()
                            .with_version(stamp.version.clone())
                            .pinned(&stamp.content_hash)
                            .map_err(|e| Status::internal(e.to_string()))?,
                        _ => shared.1.clone(),
                    };
                    let messages: Vec<_> = ranges[from..]
                        .iter()
                        .map(|r| shared.0.to_wire(&selector_dataset, r.clone()))
                        .collect();
                    let mut c = RatesClient::new(ch)
                        .max_decoding_message_size(n)
                        .max_encoding_message_size(n);
                    let mut incoming = c
                        .lookup_rates_stream(request(futures::stream::iter(messages), budget))
                        .await?
                        .into_inner();
                    while let Some(m) = incoming.message().await? {
                        let mut got = received.lock().expect("stream answers");
                        if got.len() == ranges.len() {
                            return Err(Status::internal("more answers than request messages"));
                        }
                        got.push(m);
                    }
                    let got = received.lock().expect("stream answers").len();
                    if got < ranges.len() {
                        return Err(Status::internal(format!(
                            "stream ended after {got} answers for {} request messages",
                            ranges.len()
                        )));
                    }
                    Ok(())
                }
            },
        )
        .await?;
        let responses = std::mem::take(&mut *received.lock().expect("stream answers"));
        let mut parts = Vec::with_capacity(responses.len());
        for (response, range) in responses.into_iter().zip(ranges.iter()) {
            let stamp = dataset.check_stamp("LookupRatesStream", response.stamp.as_ref())?;
            parts.push(RateLookup::from_wire(
                response,
                stamp,
                range.len(),
                query.options.direction,
            )?);
        }
        // Every part must carry the same stamp (checked there): one result, one dataset.
        RateLookup::concat_temperatures(parts)
    }

    /// Level populations, emissivities and critical densities in one call.
    pub async fn solve_populations(
        &self,
        query: &PopulationQuery,
    ) -> Result<pb::SolvePopulationsResponse, ClientError> {
        let dataset = self.require_dataset()?;
        check_species(&query.species)?;
        query.validate()?;
        let message = query.to_wire(dataset);
        let n = self.max_bytes();
        let response = self
            .call(
                "SolvePopulations",
                Retry::Idempotent,
                Some(dataset),
                |ch, budget| {
                    let m = message.clone();
                    async move {
                        let mut c = PopulationsClient::new(ch)
                            .max_decoding_message_size(n)
                            .max_encoding_message_size(n);
                        Ok(c.solve_populations(request(m, budget)).await?.into_inner())
                    }
                },
            )
            .await?;
        dataset.check_stamp("SolvePopulations", response.stamp.as_ref())?;
        check_answer(&response, query.point_count())?;
        Ok(response)
    }

    /// Level populations for long work, in calls of at most `per_call` temperatures (grid:
    /// each with every density) or points (pairs); `progress(done_points, total_points)` is
    /// called after each. Answers are merged in order; every part must come from one dataset.
    pub async fn solve_populations_chunked(
        &self,
        query: &PopulationQuery,
        per_call: usize,
        mut progress: impl FnMut(usize, usize),
    ) -> Result<pb::SolvePopulationsResponse, ClientError> {
        query.validate()?;
        let total = query.point_count();
        let mut merged: Option<pb::SolvePopulationsResponse> = None;
        let mut done = 0;
        for part in query.chunks(per_call) {
            let answer = self.solve_populations(&part).await?;
            done += part.point_count();
            match &mut merged {
                None => merged = Some(answer),
                Some(m) => merge(m, answer)?,
            }
            progress(done, total);
        }
        merged.ok_or_else(|| ClientError::invalid("temperatures", "[]", "at least one is needed"))
    }

    /// Rate consistency between two datasets (or versions) held by the server.
    pub async fn compare_datasets(
        &self,
        first: &DatasetRef,
        second: &DatasetRef,
        species: &[String],
        grid: Option<TableGrid>,
    ) -> Result<pb::CompareDatasetsResponse, ClientError> {
        let message = pb::CompareDatasetsRequest {
            first: Some(first.to_selector()),
            second: Some(second.to_selector()),
            species: species.to_vec(),
            grid: grid.map(TableGrid::to_wire),
        };
        let pinned = if first.pinned_content_hash().is_some() {
            first
        } else {
            second
        };
        let n = self.max_bytes();
        let response = self
            .call(
                "CompareDatasets",
                Retry::Idempotent,
                Some(pinned),
                |ch, budget| {
                    let m = message.clone();
                    async move {
                        let mut c = ConsistencyClient::new(ch)
                            .max_decoding_message_size(n)
                            .max_encoding_message_size(n);
                        Ok(c.compare_datasets(request(m, budget)).await?.into_inner())
                    }
                },
            )
            .await?;
        first.check_stamp("CompareDatasets", response.first.as_ref())?;
        second.check_stamp("CompareDatasets", response.second.as_ref())?;
        Ok(response)
    }

    /// Loads (or reloads) a dataset folder under the server's data folder. Not retried: a
    /// load is expensive, and a failed one leaves the previous version serving.
    pub async fn load_dataset(&self, folder: &str) -> Result<pb::LoadDatasetResponse, ClientError> {
        if folder.is_empty() || folder.contains(['/', '\\']) || folder.contains("..") {
            return Err(ClientError::invalid(
                "folder",
                format!("{folder:?}"),
                "must be a folder name under the server's data folder (no path separators or \"..\")",
            ));
        }
        let message = pb::LoadDatasetRequest {
            folder: folder.to_string(),
        };
        let n = self.max_bytes();
        let response = self
            .call("LoadDataset", Retry::Once, None, |ch, budget| {
                let m = message.clone();
                async move {
                    let mut c = AdminClient::new(ch)
                        .max_decoding_message_size(n)
                        .max_encoding_message_size(n);
                    Ok(c.load_dataset(request(m, budget)).await?.into_inner())
                }
            })
            .await?;
        if response.stamp.is_none() {
            return Err(ClientError::StampMismatch {
                operation: "LoadDataset",
                message: "answer carries no dataset stamp".into(),
            });
        }
        Ok(response)
    }

    /// Serving status of the endpoint in use (one attempt, no retry, so the answer is current).
    pub async fn health(&self) -> Result<ServingStatus, ClientError> {
        let (_, address, channel) = self.inner.pool.current();
        check_health(channel, address, self.inner.config.call_timeout).await
    }

    /// Serving status of every configured endpoint.
    pub async fn health_all(&self) -> Vec<EndpointHealth> {
        let timeout = self.inner.config.call_timeout;
        let checks = self.inner.pool.all().map(|(address, channel)| async move {
            EndpointHealth {
                endpoint: address.to_string(),
                status: check_health(channel, address, timeout).await,
            }
        });
        futures::future::join_all(checks).await
    }
}

async fn check_health(
    channel: Connection,
    address: &str,
    timeout: Duration,
) -> Result<ServingStatus, ClientError> {
    let mut c = HealthClient::new(channel);
    let call = c.check(request(
        HealthCheckRequest {
            service: String::new(),
        },
        timeout,
    ));
    match tokio::time::timeout(timeout, call).await {
        Ok(Ok(r)) => Ok(ServingStatus::from_wire(r.into_inner().status)),
        Ok(Err(s)) => Err(ClientError::from_status("Health.Check", address, &s)),
        Err(_) => Err(ClientError::Timeout {
            operation: "Health.Check",
            after: timeout,
        }),
    }
}

/// What a table set is cached under: what was asked, not what was answered.
fn table_key(dataset: &DatasetRef, species: &str, grid: Option<TableGrid>) -> TableKey {
    TableKey {
        id: dataset.id().to_string(),
        version: dataset.version().unwrap_or_default().to_string(),
        content_hash: dataset.pinned_content_hash().unwrap_or_default().to_string(),
        species: species.to_string(),
        grid: grid.map(TableGrid::key),
    }
}

/// The caution added to an answer evaluated from fetched tables because no server answered.
pub const FALLBACK_CAUTION: &str = "answered on this client from tables fetched earlier, because no \
     server could be reached (same evaluation rule and dataset stamp; fall_back_to_fetched_tables)";

fn check_species(species: &str) -> Result<(), ClientError> {
    if species.trim().is_empty() {
        Err(ClientError::invalid("species", "\"\"", "must be a species name"))
    } else {
        Ok(())
    }
}
