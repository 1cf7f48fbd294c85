//! `save-tables`: a species' tables fetched and written as a table file (named by dataset,
//! species, content hash and table-set digest), for copying onto nodes with no route to the
//! server; every client language loads it with no server and gets the server's bits.

use crate::args::SaveTablesArgs;
use crate::context::Context;
use crate::error::CliError;
use crate::output::{json_text, stamp_json};
use serde_json::json;

/// `save-tables`.
pub(crate) async fn run(ctx: &Context, a: &SaveTablesArgs) -> Result<String, CliError> {
    let client = ctx.dataset_client().await?;
    let tables = client.fetch_tables(&a.species, None).await?;
    let path = tables.save(&a.output_dir)?;
    if ctx.json {
        return Ok(json_text(&json!({
            "path": path.display().to_string(),
            "species": tables.species(),
            "tables": tables.tables().len(),
            "table_set_digest": tables.digest(),
            "stamp": stamp_json(tables.stamp()),
        })));
    }
    let s = tables.stamp();
    Ok(format!(
        "wrote {} tables of {} to {}\ndataset {} version {}\ncontent hash     {}\ntable-set digest {}\n",
        tables.tables().len(),
        tables.species(),
        path.display(),
        s.id,
        s.version,
        s.content_hash,
        tables.digest()
    ))
}
