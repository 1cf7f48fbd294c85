//! A tiny in-test fake of the ratewell server: Catalogue, Rates, Populations and Admin over a
//! fixed invented table set (demo numbers, not real atomic data), evaluated with the shared rule.
//! It exists to test the client's plumbing: retries, time budgets, pinning, failover, chunking
//! and local-versus-remote evaluation. The real server is tested end to end in /tests.

#![allow(dead_code, unreachable_pub)]

use ratewell_proto::constants::KELVIN_PER_EV;
use ratewell_proto::pb;
use ratewell_proto::pb::admin_server::{Admin, AdminServer};
use ratewell_proto::pb::catalogue_server::{Catalogue, CatalogueServer};
use ratewell_proto::pb::populations_server::{Populations, PopulationsServer};
use ratewell_proto::pb::rates_server::{Rates, RatesServer};
use ratewell_proto::rule::{
    Direction, LogGrid, OutsidePolicy, RateOutputs, RateTable, TableHeader, checked_location,
};
use ratewell_proto::wire::{grid_to_wire, table_to_wire};
use std::net::SocketAddr;
use std::pin::Pin;
use std::sync::Arc;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Duration;
use tokio_stream::wrappers::TcpListenerStream;
use tonic::{Code, Request, Response, Status, Streaming};

/// An invented content hash of the fake dataset.
pub const HASH_A: &str = "aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa";
/// Another invented content hash.
pub const HASH_B: &str = "bbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbb";

/// How the fake behaves and what it saw.
#[derive(Default)]
pub struct FakeState {
    /// Content hash in every stamp.
    pub content_hash: Mutex<String>,
    /// Fail this many calls (of any method) with `fail_code` before answering.
    pub fail_first: AtomicUsize,
    /// Code used for the forced failures.
    pub fail_code: Mutex<Option<Code>>,
    /// Sleep this long before answering.
    pub delay: Mutex<Duration>,
    /// Answer as if the expected_content_hash field were unknown (no server-side refusal).
    pub ignore_pin: std::sync::atomic::AtomicBool,
    /// Calls seen, per method name.
    pub calls: Mutex<Vec<String>>,
    /// Messages received in streaming calls.
    pub stream_messages: AtomicUsize,
    /// Last selector received.
    pub last_selector: Mutex<Option<pb::DatasetSelector>>,
    /// Last grpc-timeout header received.
    pub last_grpc_timeout: Mutex<Option<String>>,
}

impl FakeState {
    pub fn count(&self, method: &str) -> usize {
        self.calls.lock().unwrap().iter().filter(|m| *m == method).count()
    }
    pub fn fail(&self, n: usize, code: Code) {
        *self.fail_code.lock().unwrap() = Some(code);
        self.fail_first.store(n, Ordering::SeqCst);
    }
    fn stamp(&self) -> pb::DatasetStamp {
        pb::DatasetStamp {
            id: "demo".into(),
            version: "1.0.0".into(),
            content_hash: self.content_hash.lock().unwrap().clone(),
            ..Default::default()
        }
    }
    /// Records the call, applies forced failures and delay, checks the selector like the
    /// contract says (NOT_FOUND for another id, FAILED_PRECONDITION for another hash).
    async fn enter<T>(
        &self,
        method: &str,
        request: &Request<T>,
        selector: Option<&pb::DatasetSelector>,
    ) -> Result<(), Status> {
        self.calls.lock().unwrap().push(method.to_string());
        *self.last_grpc_timeout.lock().unwrap() = request
            .metadata()
            .get("grpc-timeout")
            .and_then(|v| v.to_str().ok())
            .map(str::to_string);
        let delay = *self.delay.lock().unwrap();
        if !delay.is_zero() {
            tokio::time::sleep(delay).await;
        }
        let failing = self
            .fail_first
            .fetch_update(Ordering::SeqCst, Ordering::SeqCst, |n| n.checked_sub(1))
            .is_ok();
        if failing {
            let code = self.fail_code.lock().unwrap().unwrap_or(Code::Unavailable);
            if code == Code::ResourceExhausted {
                // Load shedding, as the real server does it: with a retry hint.
                use tonic_types::{ErrorDetails, StatusExt};
                return Err(Status::with_error_details(
                    code,
                    format!("forced failure of {method}"),
                    ErrorDetails::with_retry_info(Some(std::time::Duration::from_millis(10))),
                ));
            }
            return Err(Status::new(code, format!("forced failure of {method}")));
        }
        if let Some(s) = selector {
            *self.last_selector.lock().unwrap() = Some(s.clone());
            if s.id != "demo" {
                return Err(Status::not_found(format!("dataset {:?}: not loaded", s.id)));
            }
            let hash = self.content_hash.lock().unwrap().clone();
            if !s.expected_content_hash.is_empty()
                && s.expected_content_hash != hash
                && !self.ignore_pin.load(Ordering::SeqCst)
            {
                return Err(Status::failed_precondition(format!(
                    "expected_content_hash {} differs from {hash}",
                    s.expected_content_hash
                )));
            }
        }
        Ok(())
    }
}

/// The invented table set of species "X": three levels, three transitions, 1e3..1e6 K.
pub fn invented_tables() -> (LogGrid, Vec<RateTable>) {
    let grid = LogGrid::from_range(1e3, 1e6, 10).unwrap();
    let mk = |upper, lower, g_u: f64, de_k: f64, approximate, scale: f64| {
        let header = TableHeader {
            upper,
            lower,
            g_lower: 2.0,
            g_upper: g_u,
            excitation_energy_k: de_k,
            source_t_min_k: 3e3,
            source_t_max_k: 3e5,
            approximate,
        };
        let y = (0..grid.knots())
            .map(|i| scale * (0.3 + 0.1 * (i as f64 * 0.7).sin()))
            .collect();
        RateTable::from_knots(header, grid, y)
            .unwrap()
            .with_max_interpolation_error(1e-4)
    };
    let tables = vec![
        mk(2, 1, 4.0, 2.0e4, false, 1.0),
        mk(3, 1, 6.0, 3.5e4, false, 0.5),
        mk(3, 2, 6.0, 1.5e4, true, -1.0),
    ];
    (grid, tables)
}

#[derive(Clone)]
pub struct Fake {
    pub state: Arc<FakeState>,
    grid: LogGrid,
    tables: Arc<Vec<RateTable>>,
}

impl Fake {
    fn new(state: Arc<FakeState>) -> Self {
        let (grid, tables) = invented_tables();
        Self {
            state,
            grid,
            tables: Arc::new(tables),
        }
    }

    fn lookup(&self, r: &pb::LookupRatesRequest) -> Result<pb::LookupRatesResponse, Status> {
        if r.species != "X" {
            return Err(Status::not_found(format!(
                "species {:?}: not in dataset",
                r.species
            )));
        }
        let direction = match pb::Direction::try_from(r.direction) {
            Ok(pb::Direction::Excitation) => Direction::Excitation,
            Ok(pb::Direction::Deexcitation) => Direction::Deexcitation,
            _ => Direction::Both,
        };
        let outside = if r.outside_grid == pb::OutsideGrid::Extrapolate as i32 {
            OutsidePolicy::Extrapolate
        } else {
            OutsidePolicy::Refuse
        };
        let ev = r.temperature_unit == pb::TemperatureUnit::ElectronVolt as i32;
        let m3 = r.rate_unit == pb::RateUnit::CubicMetrePerSecond as i32;
        let mut locations = Vec::new();
        for (j, &t) in r.temperatures.iter().enumerate() {
            let t_k = if ev { t * KELVIN_PER_EV } else { t };
            locations.push(
                checked_location(&self.grid, j, t_k, outside)
                    .map_err(|e| Status::out_of_range(e.to_string()))?,
            );
        }
        let chosen: Vec<&RateTable> = if r.transitions.is_empty() {
            self.tables.iter().collect()
        } else {
            r.transitions
                .iter()
                .map(|k| {
                    self.tables
                        .iter()
                        .find(|t| t.header().upper == k.upper && t.header().lower == k.lower)
                        .ok_or_else(|| Status::not_found(format!("transition {}-{}", k.upper, k.lower)))
                })
                .collect::<Result<_, _>>()?
        };
        let n = r.temperatures.len();
        let total = n * chosen.len();
        let mut exc = vec![0.0; if direction.wants_excitation() { total } else { 0 }];
        let mut de = vec![0.0; if direction.wants_deexcitation() { total } else { 0 }];
        let mut flags = vec![0u32; total];
        for (row, table) in chosen.iter().enumerate() {
            let span = row * n..(row + 1) * n;
            let e: &mut [f64] = if exc.is_empty() {
                &mut []
            } else {
                &mut exc[span.clone()]
            };
            let d: &mut [f64] = if de.is_empty() {
                &mut []
            } else {
                &mut de[span.clone()]
            };
            let f = &mut flags[span];
            let mut out =
                RateOutputs::new(direction, e, d, f).map_err(|err| Status::internal(err.to_string()))?;
            for (j, loc) in locations.iter().enumerate() {
                table
                    .write_at(loc, j, &mut out)
                    .map_err(|err| Status::internal(err.to_string()))?;
            }
        }
        if m3 {
            for v in exc.iter_mut().chain(de.iter_mut()) {
                *v *= 1e-6;
            }
        }
        Ok(pb::LookupRatesResponse {
            stamp: Some(self.state.stamp()),
            species: "X".into(),
            transitions: chosen
                .iter()
                .map(|t| pb::TransitionKey {
                    upper: t.header().upper,
                    lower: t.header().lower,
                })
                .collect(),
            temperature_count: n as u32,
            rate_unit: if m3 { 2 } else { 1 },
            excitation: exc,
            deexcitation: de,
            flags,
            cautions: vec!["3-2: approximate collision data".into()],
        })
    }
}

#[tonic::async_trait]
impl Catalogue for Fake {
    async fn list_datasets(
        &self,
        request: Request<pb::ListDatasetsRequest>,
    ) -> Result<Response<pb::ListDatasetsResponse>, Status> {
        self.state.enter("ListDatasets", &request, None).await?;
        Ok(Response::new(pb::ListDatasetsResponse {
            datasets: vec![pb::DatasetSummary {
                stamp: Some(self.state.stamp()),
                description: "invented demo data".into(),
                provenance: "made up for tests".into(),
                species: vec!["X".into()],
                default_grid: Some(pb::GridSpec {
                    t_min_k: 1e3,
                    t_max_k: 1e6,
                    points_per_decade: 10,
                }),
                loaded_at_unix_s: 1_700_000_000,
            }],
        }))
    }

    async fn describe_species(
        &self,
        request: Request<pb::DescribeSpeciesRequest>,
    ) -> Result<Response<pb::DescribeSpeciesResponse>, Status> {
        let sel = request.get_ref().dataset.clone();
        self.state
            .enter("DescribeSpecies", &request, sel.as_ref())
            .await?;
        let level = |index, label: &str, g, e| pb::LevelInfo {
            index,
            label: label.into(),
            statistical_weight: g,
            energy: e,
            energy_unit: 1,
        };
        Ok(Response::new(pb::DescribeSpeciesResponse {
            stamp: Some(self.state.stamp()),
            species: "X".into(),
            element: "X".into(),
            nuclear_charge: 8,
            ion_charge: 1,
            levels: vec![
                level(1, "ground", 2.0, 0.0),
                level(2, "first", 4.0, 13_900.0),
                level(3, "second", 6.0, 24_300.0),
            ],
            transitions: self
                .tables
                .iter()
                .map(|t| pb::TransitionInfo {
                    key: Some(pb::TransitionKey {
                        upper: t.header().upper,
                        lower: t.header().lower,
                    }),
                    a_per_s: 1e-3,
                    wavelength_vacuum_angstrom: 7000.0,
                    has_collision_data: true,
                    collision_source: 1,
                    scaling_type: "forbidden".into(),
                    source_t_min_k: 3e3,
                    source_t_max_k: 3e5,
                    source: "invented".into(),
                    ..Default::default()
                })
                .collect(),
        }))
    }
}

type LookupStream = Pin<Box<dyn tokio_stream::Stream<Item = Result<pb::LookupRatesResponse, Status>> + Send>>;

#[tonic::async_trait]
impl Rates for Fake {
    async fn fetch_tables(
        &self,
        request: Request<pb::FetchTablesRequest>,
    ) -> Result<Response<pb::FetchTablesResponse>, Status> {
        let sel = request.get_ref().dataset.clone();
        self.state.enter("FetchTables", &request, sel.as_ref()).await?;
        if request.get_ref().species != "X" {
            return Err(Status::not_found("species not in dataset"));
        }
        Ok(Response::new(pb::FetchTablesResponse {
            stamp: Some(self.state.stamp()),
            species: "X".into(),
            grid: Some(grid_to_wire(&self.grid)),
            tables: self.tables.iter().map(table_to_wire).collect(),
            cautions: vec!["3-2: approximate collision data".into()],
            table_set_digest: ratewell_proto::digest::table_set_digest("X", &self.grid, &self.tables),
        }))
    }

    async fn lookup_rates(
        &self,
        request: Request<pb::LookupRatesRequest>,
    ) -> Result<Response<pb::LookupRatesResponse>, Status> {
        let sel = request.get_ref().dataset.clone();
        self.state.enter("LookupRates", &request, sel.as_ref()).await?;
        self.lookup(request.get_ref()).map(Response::new)
    }

    type LookupRatesStreamStream = LookupStream;

    async fn lookup_rates_stream(
        &self,
        request: Request<Streaming<pb::LookupRatesRequest>>,
    ) -> Result<Response<LookupStream>, Status> {
        self.state.enter("LookupRatesStream", &request, None).await?;
        let mut incoming = request.into_inner();
        let mut answers = Vec::new();
        while let Some(m) = incoming.message().await? {
            self.state.stream_messages.fetch_add(1, Ordering::SeqCst);
            answers.push(self.lookup(&m));
        }
        Ok(Response::new(Box::pin(tokio_stream::iter(answers))))
    }
}

#[tonic::async_trait]
impl Populations for Fake {
    async fn solve_populations(
        &self,
        request: Request<pb::SolvePopulationsRequest>,
    ) -> Result<Response<pb::SolvePopulationsResponse>, Status> {
        let sel = request.get_ref().dataset.clone();
        self.state
            .enter("SolvePopulations", &request, sel.as_ref())
            .await?;
        let r = request.get_ref();
        let pairs: Vec<(f64, f64)> = if r.grid {
            r.temperatures
                .iter()
                .flat_map(|&t| r.densities.iter().map(move |&n| (t, n)))
                .collect()
        } else {
            r.temperatures
                .iter()
                .copied()
                .zip(r.densities.iter().copied())
                .collect()
        };
        // Echo points with fixed fractions: this fake tests plumbing, not physics.
        let points: Vec<pb::PopulationPoint> = pairs
            .iter()
            .map(|&(t, n)| pb::PopulationPoint {
                temperature_k: t,
                density_per_cm3: n,
                fractions: vec![0.75, 0.2, 0.05],
                ..Default::default()
            })
            .collect();
        Ok(Response::new(pb::SolvePopulationsResponse {
            stamp: Some(self.state.stamp()),
            species: r.species.clone(),
            power_unit: 1,
            critical_densities_per_cm3: points.iter().flat_map(|_| [0.0, 1e3, 1e4]).collect(),
            critical_density_definition: String::new(),
            critical_densities_all_exits_per_cm3: vec![],
            points,
            level_count: 3,
            cautions: vec![],
        }))
    }
}

#[tonic::async_trait]
impl Admin for Fake {
    async fn load_dataset(
        &self,
        request: Request<pb::LoadDatasetRequest>,
    ) -> Result<Response<pb::LoadDatasetResponse>, Status> {
        self.state.enter("LoadDataset", &request, None).await?;
        Ok(Response::new(pb::LoadDatasetResponse {
            stamp: Some(self.state.stamp()),
            replaced: None,
            species_count: 1,
            table_count: 3,
            precompute_seconds: 0.01,
        }))
    }
}

/// A running fake: its address, its state, and shutdown on drop.
pub struct FakeServer {
    pub addr: SocketAddr,
    pub state: Arc<FakeState>,
    shutdown: Option<tokio::sync::oneshot::Sender<()>>,
}

impl FakeServer {
    pub fn url(&self) -> String {
        format!("http://{}", self.addr)
    }
}

impl Drop for FakeServer {
    fn drop(&mut self) {
        if let Some(tx) = self.shutdown.take() {
            let _ = tx.send(());
        }
    }
}

/// Starts the fake on 127.0.0.1:0 on the current runtime.
pub async fn start(content_hash: &str) -> FakeServer {
    let listener = tokio::net::TcpListener::bind("127.0.0.1:0").await.unwrap();
    let addr = listener.local_addr().unwrap();
    let state = Arc::new(FakeState::default());
    *state.content_hash.lock().unwrap() = content_hash.to_string();
    let fake = Fake::new(state.clone());
    let (_reporter, health) = tonic_health::server::health_reporter();
    let (tx, rx) = tokio::sync::oneshot::channel();
    tokio::spawn(async move {
        tonic::transport::Server::builder()
            .add_service(health)
            .add_service(CatalogueServer::new(fake.clone()))
            .add_service(RatesServer::new(fake.clone()))
            .add_service(PopulationsServer::new(fake.clone()))
            .add_service(AdminServer::new(fake))
            .serve_with_incoming_shutdown(TcpListenerStream::new(listener), async {
                let _ = rx.await;
            })
            .await
            .unwrap();
    });
    FakeServer {
        addr,
        state,
        shutdown: Some(tx),
    }
}

/// Starts the fake on its own runtime thread (for blocking-client and command-line tests).
pub fn start_in_background(content_hash: &str) -> FakeServer {
    let (tx, rx) = std::sync::mpsc::channel();
    let hash = content_hash.to_string();
    std::thread::spawn(move || {
        let rt = tokio::runtime::Builder::new_multi_thread()
            .worker_threads(1)
            .enable_all()
            .build()
            .unwrap();
        rt.block_on(async move {
            let server = start(&hash).await;
            let (done_tx, done_rx) = tokio::sync::oneshot::channel::<()>();
            tx.send((server, done_tx)).unwrap();
            let _ = done_rx.await;
        });
    });
    let (server, done) = rx.recv().unwrap();
    // The runtime thread lives until the test process ends.
    std::mem::forget(done);
    server
}

/// An address nothing listens on (bound, then released).
pub fn dead_address() -> String {
    let l = std::net::TcpListener::bind("127.0.0.1:0").unwrap();
    let a = l.local_addr().unwrap();
    drop(l);
    format!("http://{a}")
}
