//! The ratewell server binary (see [`ratewell_service::binary`]).

fn main() -> std::process::ExitCode {
    ratewell_service::binary::main()
}
