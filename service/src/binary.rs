//! The server process behind the `ratewell-server` binary: parse configuration, set up logs,
//! bind, serve until SIGINT or SIGTERM.

use crate::config::{Config, ConfigError};
use crate::log_escape::Escaping;
use crate::server;
use std::process::ExitCode;
use std::time::Duration;
use tracing_subscriber::EnvFilter;

/// The whole server process: configuration from flags, file and environment, logs, bind,
/// serve until SIGINT or SIGTERM. `ratewell-server` is this function; the end-to-end tests build
/// a copy of it to test the process (signals, exit within the grace period).
pub fn main() -> ExitCode {
    crate::memory::tune_allocator();
    let (flags, config) = match Config::from_args(std::env::args_os()) {
        Ok(c) => c,
        // Help, the version, and usage mistakes: clap prints them and picks the exit status.
        Err(ConfigError::Usage(e)) => e.exit(),
        Err(e) => {
            eprintln!("ratewell-server: {e}");
            return ExitCode::from(2);
        }
    };
    if flags.print_config {
        print!("{}", config.to_toml());
        return ExitCode::SUCCESS;
    }
    if let Some(dir) = &flags.check_dataset {
        let (report, loads) = check_dataset(dir, &config.limits);
        print!("{report}");
        return if loads {
            ExitCode::SUCCESS
        } else {
            ExitCode::FAILURE
        };
    }
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

/// Critical-density warnings of a dataset that loaded (`engine::density_check`); a dataset the
/// engine refuses to install or solve is reported as a warning too, since the check command's
/// own loader accepted it.
fn density_warnings(
    dataset: crate::dataset::model::Dataset,
    limits: &crate::limits::Limits,
) -> Vec<crate::dataset::check::Warning> {
    use crate::engine::{Engine, EngineConfig, Selector};
    let engine = Engine::new(EngineConfig {
        limits: *limits,
        ..EngineConfig::default()
    });
    let selector = Selector::newest(dataset.id.clone());
    let problem = |message: String| {
        vec![crate::dataset::check::Warning {
            species: "(all)".into(),
            message,
        }]
    };
    if let Err(e) = engine.install(dataset) {
        return problem(format!("the dataset loads but does not install: {e}"));
    }
    engine
        .critical_density_warnings(&selector)
        .unwrap_or_else(|e| problem(format!("critical densities could not be computed: {e}")))
}

/// `--check-dataset DIR`: the report to print and whether the folder loads.
pub fn check_dataset(dir: &std::path::Path, limits: &crate::limits::Limits) -> (String, bool) {
    use crate::dataset::{catalogue::load_folder_limited, check::warnings, error::DatasetError};
    match load_folder_limited(dir, limits) {
        Ok(d) => {
            let levels: usize = d.species.iter().map(|s| s.levels.len()).sum();
            let collisions: usize = d.species.iter().map(|s| s.collisions.len()).sum();
            let mut out = format!(
                "ok: {} loads: dataset {} version {}, content hash {}\n    {} species, {levels} levels, {collisions} collisional transitions\n",
                dir.display(),
                d.id,
                d.version,
                d.content_hash,
                d.species.len()
            );
            let mut found = warnings(&d);
            found.extend(density_warnings(d, limits));
            for w in &found {
                out.push_str(&format!("warning: {w}\n"));
            }
            out.push_str(&format!("{} warning(s)\n", found.len()));
            (out, true)
        }
        Err(DatasetError::Invalid { problems }) => {
            let mut out = format!(
                "refused: {} does not load: {} problem(s)\n",
                dir.display(),
                problems.len()
            );
            for p in &problems {
                out.push_str(&format!("{p}\n"));
            }
            (out, false)
        }
        Err(other) => (format!("refused: {}: {other}\n", dir.display()), false),
    }
}
