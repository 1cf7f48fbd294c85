//! The real server on an ephemeral loopback port, driven the way `main` drives it: bind a
//! listener, call [`ratewell_service::server::run`] with a configuration and a shutdown future
//! (here a oneshot), and await its end.

use ratewell_proto::pb::{
    admin_client::AdminClient, catalogue_client::CatalogueClient, consistency_client::ConsistencyClient,
    populations_client::PopulationsClient, rates_client::RatesClient, transport_client::TransportClient,
};
use ratewell_service::config::Config;
use ratewell_service::engine::Engine;
use ratewell_service::server::{self, ServerError};
use std::net::SocketAddr;
use std::time::{Duration, Instant};
use tokio::net::TcpListener;
use tokio::sync::oneshot;
use tokio::task::JoinHandle;
use tonic::transport::{Channel, Endpoint};
use tonic_health::pb::health_check_response::ServingStatus;
use tonic_health::pb::{HealthCheckRequest, health_client::HealthClient};

/// Largest message the test clients send or accept, bytes: the server's default limit
/// (64 MiB), since tonic's own client default of 4 MiB is smaller than a large answer.
pub const CLIENT_MAX_MESSAGE_BYTES: usize = 64 * 1024 * 1024;

/// Longest wait for a freshly spawned server to report SERVING (debug builds precompute the
/// demo tables in well under a second; the margin covers a loaded 2-core machine).
const START_TIMEOUT: Duration = Duration::from_secs(60);

/// The server's default configuration with the listen address set to an ephemeral loopback
/// port (the listener is bound by [`TestServer`], so the address is informational).
pub fn test_config() -> Config {
    Config {
        listen: SocketAddr::from(([127, 0, 0, 1], 0)),
        tokens_file: Some(test_tokens_file().to_owned()),
        ..Config::default()
    }
}

/// The caller name of [`TEST_TOKEN`] in [`test_tokens_file`].
pub const TEST_CALLER: &str = "e2e-operator";
/// The one bearer token the test servers accept (invented for the tests).
pub const TEST_TOKEN: &str = "e2e-token-0123456789abcdef";

/// A tokens file (written once per test process) naming [`TEST_CALLER`] with [`TEST_TOKEN`].
pub fn test_tokens_file() -> &'static std::path::Path {
    static FILE: std::sync::OnceLock<std::path::PathBuf> = std::sync::OnceLock::new();
    FILE.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("ratewell-e2e-tokens-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("tokens dir");
        let path = dir.join("tokens");
        std::fs::write(&path, format!("# test tokens\n{TEST_CALLER} {TEST_TOKEN}\n")).expect("tokens file");
        path
    })
}

/// Adds `authorization: Bearer <token>` to every request (nothing when `None`).
#[derive(Clone)]
pub struct Bearer(pub Option<tonic::metadata::MetadataValue<tonic::metadata::Ascii>>);

impl Bearer {
    /// The header for `token`, or none.
    pub fn new(token: Option<&str>) -> Self {
        Self(token.map(|t| format!("Bearer {t}").parse().expect("visible ASCII token")))
    }
}

impl tonic::service::Interceptor for Bearer {
    fn call(&mut self, mut request: tonic::Request<()>) -> Result<tonic::Request<()>, tonic::Status> {
        if let Some(header) = &self.0 {
            request.metadata_mut().insert("authorization", header.clone());
        }
        Ok(request)
    }
}

/// A client type whose calls carry a bearer token.
pub type WithToken = tonic::service::interceptor::InterceptedService<Channel, Bearer>;

/// A running server and a connected channel to it.
pub struct TestServer {
    addr: SocketAddr,
    channel: Channel,
    stop: Option<oneshot::Sender<()>>,
    task: Option<JoinHandle<Result<(), ServerError>>>,
}

impl TestServer {
    /// A server with the default configuration (embedded demo dataset only).
    pub async fn start() -> Self {
        Self::start_with(test_config()).await
    }

    /// A server with `config`; returns once health checking reports SERVING. Panics (failing
    /// the test) if the server stops before that, with its error.
    pub async fn start_with(config: Config) -> Self {
        match Self::try_start(config).await {
            Ok(server) => server,
            Err(e) => panic!("server failed to start: {e}"),
        }
    }

    /// As [`Self::start_with`], but returns the server's error if it stops before serving
    /// (for tests of start-up failures).
    pub async fn try_start(config: Config) -> Result<Self, ServerError> {
        Self::try_start_via(config, |addr| {
            Endpoint::from_shared(format!("http://{addr}"))
                .expect("a valid loopback URL")
                .connect_lazy()
        })
        .await
    }

    /// As [`Self::try_start`], with the shared channel made by `connect` from the listening
    /// address (a TLS channel, say).
    pub async fn try_start_via(
        config: Config,
        connect: impl FnOnce(SocketAddr) -> Channel,
    ) -> Result<Self, ServerError> {
        let listener = TcpListener::bind(SocketAddr::from(([127, 0, 0, 1], 0)))
            .await
            .expect("bind 127.0.0.1:0");
        let addr = listener.local_addr().expect("local address of the listener");
        let (stop, stopped) = oneshot::channel::<()>();
        let task = tokio::spawn(server::run(listener, config, async move {
            let _ = stopped.await;
        }));
        let channel = connect(addr);
        let mut server = Self {
            addr,
            channel,
            stop: Some(stop),
            task: Some(task),
        };
        server.wait_serving().await?;
        Ok(server)
    }

    /// A server over an engine built here from `config`, returned beside it so a test can
    /// read the server's own accounting (table bytes, cache statistics).
    pub async fn start_sharing_engine(config: Config) -> (Self, Engine) {
        let listener = TcpListener::bind(SocketAddr::from(([127, 0, 0, 1], 0)))
            .await
            .expect("bind 127.0.0.1:0");
        let addr = listener.local_addr().expect("local address of the listener");
        let engine_config = config.clone();
        let engine = tokio::task::spawn_blocking(move || server::build_engine(&engine_config))
            .await
            .expect("engine build did not panic")
            .expect("engine builds");
        let (stop, stopped) = oneshot::channel::<()>();
        let task = tokio::spawn(server::serve(
            listener,
            config,
            engine.clone(),
            async move {
                let _ = stopped.await;
            },
            Instant::now(),
        ));
        let channel = Endpoint::from_shared(format!("http://{addr}"))
            .expect("a valid loopback URL")
            .connect_lazy();
        let mut server = Self {
            addr,
            channel,
            stop: Some(stop),
            task: Some(task),
        };
        if let Err(e) = server.wait_serving().await {
            panic!("server failed to start: {e}");
        }
        (server, engine)
    }

    /// Polls standard health checking until the server reports SERVING (a health answer is
    /// the readiness signal; the pause between attempts only paces retries of a refused one).
    async fn wait_serving(&mut self) -> Result<(), ServerError> {
        let started = Instant::now();
        loop {
            if self.task.as_ref().is_some_and(JoinHandle::is_finished) {
                let task = self.task.take().expect("task present");
                return match task.await {
                    Ok(Ok(())) => panic!("server stopped cleanly before serving"),
                    Ok(Err(e)) => Err(e),
                    Err(join) => panic!("server task failed: {join}"),
                };
            }
            let answer = self
                .health()
                .check(HealthCheckRequest {
                    service: String::new(),
                })
                .await;
            if let Ok(r) = answer
                && r.into_inner().status == ServingStatus::Serving as i32
            {
                return Ok(());
            }
            assert!(
                started.elapsed() < START_TIMEOUT,
                "server did not report SERVING within {START_TIMEOUT:?}"
            );
            tokio::time::sleep(Duration::from_millis(20)).await;
        }
    }

    /// The listening address.
    pub fn addr(&self) -> SocketAddr {
        self.addr
    }

    /// "http://127.0.0.1:PORT".
    pub fn url(&self) -> String {
        format!("http://{}", self.addr)
    }

    /// The shared channel (cheap to clone).
    pub fn channel(&self) -> Channel {
        self.channel.clone()
    }

    /// Rates client with the server's message limit.
    pub fn rates(&self) -> RatesClient<Channel> {
        RatesClient::new(self.channel())
            .max_decoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
            .max_encoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
    }

    /// A LookupRatesStream fed by the returned sender (room for `buffer` waiting messages),
    /// with the stream of its answers.
    pub async fn open_lookup_stream(
        &self,
        buffer: usize,
    ) -> (
        tokio::sync::mpsc::Sender<ratewell_proto::pb::LookupRatesRequest>,
        tonic::Streaming<ratewell_proto::pb::LookupRatesResponse>,
    ) {
        let (tx, rx) = tokio::sync::mpsc::channel(buffer);
        let answers = self
            .rates()
            .lookup_rates_stream(tokio_stream::wrappers::ReceiverStream::new(rx))
            .await
            .expect("stream opened")
            .into_inner();
        (tx, answers)
    }

    /// Catalogue client.
    pub fn catalogue(&self) -> CatalogueClient<Channel> {
        CatalogueClient::new(self.channel())
            .max_decoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
            .max_encoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
    }

    /// Populations client.
    pub fn populations(&self) -> PopulationsClient<Channel> {
        PopulationsClient::new(self.channel())
            .max_decoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
            .max_encoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
    }

    /// Consistency client.
    pub fn consistency(&self) -> ConsistencyClient<Channel> {
        ConsistencyClient::new(self.channel())
            .max_decoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
            .max_encoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
    }

    /// Admin client carrying [`TEST_TOKEN`].
    pub fn admin(&self) -> AdminClient<WithToken> {
        self.admin_with(Some(TEST_TOKEN))
    }

    /// Admin client carrying `token` (or no `authorization` header).
    pub fn admin_with(&self, token: Option<&str>) -> AdminClient<WithToken> {
        AdminClient::with_interceptor(self.channel(), Bearer::new(token))
    }

    /// Benchmark-only Transport client.
    pub fn transport(&self) -> TransportClient<Channel> {
        TransportClient::new(self.channel())
    }

    /// Standard health checking client.
    pub fn health(&self) -> HealthClient<Channel> {
        HealthClient::new(self.channel())
    }

    /// Resolves the server's shutdown future (health turns NOT_SERVING, drain, graceful stop)
    /// without waiting for the end.
    pub fn begin_shutdown(&mut self) {
        if let Some(stop) = self.stop.take() {
            let _ = stop.send(());
        }
    }

    /// Awaits the end of `run` after [`Self::begin_shutdown`] (or triggers it first).
    pub async fn wait_stopped(mut self) -> Result<(), ServerError> {
        self.begin_shutdown();
        let task = self.task.take().expect("server task present");
        task.await.expect("server task did not panic")
    }

    /// Shuts the server down and awaits the end of `run`.
    pub async fn shutdown(self) -> Result<(), ServerError> {
        self.wait_stopped().await
    }
}

impl Drop for TestServer {
    fn drop(&mut self) {
        // A test that ends without shutting down still stops its server.
        self.begin_shutdown();
    }
}
