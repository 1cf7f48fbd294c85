//! `load`: load or reload a dataset folder of the server's data folder (Admin; needs a token).

use crate::context::Context;
use crate::error::CliError;
use crate::output::{json_text, stamp_json, stamp_line};
use ratewell_client::pb;
use serde_json::json;

/// `load FOLDER`.
pub(crate) async fn run(ctx: &Context, folder: &str) -> Result<String, CliError> {
    let answer = ctx.client.load_dataset(folder).await?;
    Ok(if ctx.json {
        as_json(folder, &answer)
    } else {
        as_text(folder, &answer)
    })
}

fn as_text(folder: &str, a: &pb::LoadDatasetResponse) -> String {
    let mut out = format!(
        "loaded folder {folder:?}: {} species, {} tables built in {:.2} s\n",
        a.species_count, a.table_count, a.precompute_seconds
    );
    if let Some(stamp) = &a.stamp {
        out.push_str(&format!("now serving: {}", stamp_line(stamp)));
    }
    match &a.replaced {
        Some(old) => out.push_str(&format!("replaced:    {}", stamp_line(old))),
        None => out.push_str("replaced:    nothing (a new dataset version)\n"),
    }
    out
}

fn as_json(folder: &str, a: &pb::LoadDatasetResponse) -> String {
    json_text(&json!({
        "folder": folder,
        "stamp": a.stamp.as_ref().map(stamp_json),
        "replaced": a.replaced.as_ref().map(stamp_json),
        "species_count": a.species_count,
        "table_count": a.table_count,
        "precompute_seconds": a.precompute_seconds,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_answer_names_what_is_served_now_and_what_it_replaced() {
        let stamp = |v: &str, c: char| pb::DatasetStamp {
            id: "demo".into(),
            version: v.into(),
            content_hash: c.to_string().repeat(64),
            tables_digest: String::new(),
        };
        let a = pb::LoadDatasetResponse {
            stamp: Some(stamp("1.1.0", 'b')),
            replaced: Some(stamp("1.1.0", 'a')),
            species_count: 2,
            table_count: 571,
            precompute_seconds: 0.25,
        };
        let text = as_text("demo-v2", &a);
        assert!(
            text.starts_with("loaded folder \"demo-v2\": 2 species, 571 tables built in 0.25 s\n"),
            "{text}"
        );
        assert!(text.contains(&format!(
            "now serving: dataset demo version 1.1.0  content hash {}",
            "b".repeat(64)
        )));
        assert!(text.contains(&format!(
            "replaced:    dataset demo version 1.1.0  content hash {}",
            "a".repeat(64)
        )));
        let v: serde_json::Value = serde_json::from_str(&as_json("demo-v2", &a)).unwrap();
        assert_eq!(v["replaced"]["content_hash"], "a".repeat(64));
    }
}
