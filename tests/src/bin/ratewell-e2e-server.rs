//! The server process, built inside the end-to-end crate so its tests can start, signal and
//! kill real server processes (`env!("CARGO_BIN_EXE_ratewell-e2e-server")`). It is
//! `ratewell-server` exactly: both call [`ratewell_service::binary::main`].

fn main() -> std::process::ExitCode {
    ratewell_service::binary::main()
}
