//! One module per subcommand; each returns the text to print.

mod catalogue;
mod compare;
mod export;
mod health;
mod load;
mod populations;
mod rates;
mod table_file;

use crate::args::{Cli, Command};
use crate::context::Context;
use crate::error::CliError;

/// Runs the chosen subcommand.
pub(crate) async fn run(cli: &Cli) -> Result<String, CliError> {
    let ctx = Context::new(cli)?;
    match &cli.command {
        Command::Datasets => catalogue::datasets(&ctx).await,
        Command::Species(a) => catalogue::species(&ctx, a).await,
        Command::Rates(a) => rates::run(&ctx, a).await,
        Command::Populations(a) => populations::run(&ctx, a).await,
        Command::Compare(a) => compare::run(&ctx, a).await,
        Command::Export(a) => export::run(&ctx, a).await,
        Command::SaveTables(a) => table_file::run(&ctx, a).await,
        Command::Health => health::run(&ctx).await,
        Command::Load { folder } => load::run(&ctx, folder).await,
    }
}
