//! The server process behind the `ratewell-server` binary: parse configuration, set up logs,
//! bind, serve until SIGINT or SIGTERM.

use crate::config::{Config, Flags};
use crate::log_escape::Escaping;
use crate::server;
use clap::Parser;
use std::process::ExitCode;
use std::time::Duration;
use tracing_subscriber::EnvFilter;

/// The whole server process: configuration from flags, file and environment, logs, bind,
/// serve until SIGINT or SIGTERM. `ratewell-server` is this function; the end-to-end tests build
/// a copy of it to test the process (signals, exit within the grace period).
pub fn main() -> ExitCode {
    crate::memory::tune_allocator();
    let flags = Flags::parse();
    let config = match Config::resolve(&flags) {
        Ok(c) => c,
        Err(e) => {
            eprintln!("ratewell-server: {e}");
            return ExitCode::from(2);
        }
    };
    let filter = EnvFilter::try_from_default_env().unwrap_or_else(|_| EnvFilter::new("info"));
    // Every event stays one line whatever a logged value holds (see `log_escape`).
    let writer = Escaping(std::io::stdout);
    if config.json_logs {
        tracing_subscriber::fmt()
            .with_env_filter(filter)
            .with_writer(writer)
            .json()
            .init();
    } else {
        tracing_subscriber::fmt()
            .with_env_filter(filter)
            .with_writer(writer)
            .with_ansi(false)
            .init();
    }
    let runtime = match tokio::runtime::Builder::new_multi_thread().enable_all().build() {
        Ok(r) => r,
        Err(e) => {
            eprintln!("ratewell-server: cannot start the async runtime: {e}");
            return ExitCode::FAILURE;
        }
    };
    let code = runtime.block_on(async move {
        let listener = match tokio::net::TcpListener::bind(config.listen).await {
            Ok(l) => l,
            Err(e) => {
                tracing::error!(listen = %config.listen, error = %e, "cannot bind");
                return ExitCode::FAILURE;
            }
        };
        match server::run(listener, config, shutdown_signal()).await {
            Ok(()) => ExitCode::SUCCESS,
            Err(e) => {
                tracing::error!(error = %e, "server stopped with an error");
                ExitCode::FAILURE
            }
        }
    });
    // Dropping the runtime would wait for every blocking task. Work cut at shutdown stops at
    // its next check of the stop flag anyway; this bounds the wait whatever it is doing, so
    // the process exits within the shutdown grace plus this margin.
    runtime.shutdown_timeout(EXIT_MARGIN);
    code
}

/// Longest wait, after serving has stopped, for blocking work still running.
const EXIT_MARGIN: Duration = Duration::from_millis(250);

/// Resolves on SIGINT (Ctrl-C) or, on Unix, SIGTERM.
async fn shutdown_signal() {
    let ctrl_c = async {
        let _ = tokio::signal::ctrl_c().await;
    };
    #[cfg(unix)]
    let term = async {
        match tokio::signal::unix::signal(tokio::signal::unix::SignalKind::terminate()) {
            Ok(mut s) => {
                s.recv().await;
            }
            Err(_) => std::future::pending::<()>().await,
        }
    };
    #[cfg(not(unix))]
    let term = std::future::pending::<()>();
    tokio::select! {
        () = ctrl_c => tracing::info!("SIGINT received"),
        () = term => tracing::info!("SIGTERM received"),
    }
}
