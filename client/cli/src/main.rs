//! `ratewell`: the command-line tool of the ratewell client library. Thin: parse the
//! arguments, run one command on a small runtime, print its output, map errors to exit codes.

mod args;
mod commands;
mod context;
mod error;
mod output;

use clap::Parser;
use std::io::Write;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match args::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(u8::try_from(e.exit_code()).unwrap_or(2));
        }
    };
    let runtime = match tokio::runtime::Builder::new_current_thread().enable_all().build() {
        Ok(rt) => rt,
        Err(e) => {
            eprintln!("error: cannot start the runtime: {e}");
            return ExitCode::from(1);
        }
    };
    match runtime.block_on(commands::run(&cli)) {
        Ok(text) => {
            let mut out = std::io::stdout().lock();
            // A closed pipe (e.g. `| head`) is not an error worth reporting.
            let _ = out.write_all(text.as_bytes()).and_then(|()| out.flush());
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("error: {e}");
            if let Some(hint) = e.hint() {
                eprintln!("hint: {hint}");
            }
            ExitCode::from(e.exit_code())
        }
    }
}
