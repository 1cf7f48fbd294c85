//! `compare`: two datasets on one server (the server's Consistency service), or one dataset
//! on two servers (tables fetched from both and compared here on the first one's grid).

use crate::args::CompareArgs;
use crate::context::Context;
use crate::error::CliError;
use crate::output::{Table, json_text, sig, stamp_json, stamp_line};
use ratewell_client::{Client, DatasetRef, LocalComparison, compare_tables, pb, stamp_label};
use serde_json::json;
use std::collections::BTreeSet;

/// One compared transition.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Row {
    species: String,
    transition: String,
    max_relative_difference: f64,
    at_temperature_k: f64,
}

/// A comparison in the form printed by both modes.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Report {
    mode: &'static str,
    first: pb::DatasetStamp,
    second: pb::DatasetStamp,
    rows: Vec<Row>,
    only_in_first: Vec<String>,
    only_in_second: Vec<String>,
    mismatches: Vec<String>,
    /// Species whose fetched table sets were compared bit for bit (two servers only), and
    /// those whose table-set digests differ.
    table_sets_compared: usize,
    table_sets_differ: Vec<String>,
}

/// What the stamps and table-set digests say, in plain words: the first thing a reader of a
/// two-server comparison needs (the largest difference alone hides a last-bit disagreement).
fn verdict(r: &Report) -> String {
    let same_content = r.first.content_hash == r.second.content_hash;
    let same_tables =
        same_content && r.first.tables_digest == r.second.tables_digest && r.table_sets_differ.is_empty();
    if same_tables {
        if r.table_sets_compared > 0 {
            format!(
                "identical tables: same content hash and tables digest, and the {} table set(s) fetched are equal bit for bit",
                r.table_sets_compared
            )
        } else {
            "identical tables: same content hash and tables digest".to_string()
        }
    } else if same_content {
        format!(
            "TABLES DIFFER although the dataset content is the same: tables digest {} vs {}{}; \
             the servers built different tables from the same data (another build or release), \
             so their answers can differ in the last bits",
            r.first.tables_digest,
            r.second.tables_digest,
            if r.table_sets_differ.is_empty() {
                String::new()
            } else {
                format!("; table sets differ for {}", r.table_sets_differ.join(", "))
            }
        )
    } else {
        "different datasets: the content hashes differ".to_string()
    }
}

/// `compare`.
pub(crate) async fn run(ctx: &Context, a: &CompareArgs) -> Result<String, CliError> {
    let report = match &a.second_server {
        None => on_one_server(ctx, a).await?,
        Some(url) => on_two_servers(ctx, a, url).await?,
    };
    Ok(if ctx.json {
        as_json(&report)
    } else {
        as_text(&report)
    })
}

async fn on_one_server(ctx: &Context, a: &CompareArgs) -> Result<Report, CliError> {
    let r = ctx
        .client
        .compare_datasets(&a.first, &a.second, &a.species, None)
        .await?;
    Ok(Report {
        mode: "compared by the server (Consistency service)",
        first: r.first.unwrap_or_default(),
        second: r.second.unwrap_or_default(),
        rows: r
            .differences
            .into_iter()
            .map(|d| {
                let k = d.key.unwrap_or_default();
                Row {
                    species: d.species,
                    transition: format!("{}-{}", k.upper, k.lower),
                    max_relative_difference: d.max_relative_difference,
                    at_temperature_k: d.at_temperature_k,
                }
            })
            .collect(),
        only_in_first: r.only_in_first,
        only_in_second: r.only_in_second,
        mismatches: r.level_mismatches,
        table_sets_compared: 0,
        table_sets_differ: Vec::new(),
    })
}

/// Species of a dataset (matching version when one is given) in a server's catalogue.
fn species_of(sets: &[pb::DatasetSummary], d: &DatasetRef) -> BTreeSet<String> {
    sets.iter()
        .filter(|s| {
            s.stamp
                .as_ref()
                .is_some_and(|st| st.id == d.id() && d.version().is_none_or(|v| v == st.version))
        })
        .flat_map(|s| s.species.iter().cloned())
        .collect()
}

async fn on_two_servers(ctx: &Context, a: &CompareArgs, url: &str) -> Result<Report, CliError> {
    // The same credentials, TLS and waiting as the first server.
    let config = ctx.client.config().clone().with_endpoints(vec![url.to_string()]);
    config
        .validate()
        .map_err(|e| CliError::argument("--second-server", e))?;
    let first = ctx.client.with_dataset(a.first.clone());
    let second = Client::new(config)?.with_dataset(a.second.clone());
    let species: Vec<String> = if a.species.is_empty() {
        let s1 = species_of(&first.list_datasets().await?, &a.first);
        let s2 = species_of(&second.list_datasets().await?, &a.second);
        s1.intersection(&s2).cloned().collect()
    } else {
        a.species.clone()
    };
    if species.is_empty() {
        return Err(CliError::argument(
            "--species",
            format!(
                "not given, and {} and {} (on {url}) have no species in common",
                a.first, a.second
            ),
        ));
    }
    let mut comparisons: Vec<LocalComparison> = Vec::new();
    let mut differ = Vec::new();
    for s in &species {
        let t1 = first.fetch_tables(s, None).await?;
        let t2 = second.fetch_tables(s, None).await?;
        if t1.digest() != t2.digest() {
            differ.push(s.clone());
        }
        comparisons.push(compare_tables(&t1, &t2)?);
    }
    let mut report = local_report(comparisons);
    report.table_sets_compared = species.len();
    report.table_sets_differ = differ;
    Ok(report)
}

pub(crate) fn local_report(comparisons: Vec<LocalComparison>) -> Report {
    let first = comparisons.first().map(|c| c.first.clone()).unwrap_or_default();
    let second = comparisons.first().map(|c| c.second.clone()).unwrap_or_default();
    let mut r = Report {
        mode: "tables fetched from both servers, compared here on the first one's grid",
        first,
        second,
        rows: Vec::new(),
        only_in_first: Vec::new(),
        only_in_second: Vec::new(),
        mismatches: Vec::new(),
        table_sets_compared: 0,
        table_sets_differ: Vec::new(),
    };
    for c in comparisons {
        let sp = &c.species;
        r.rows.extend(c.differences.iter().map(|d| Row {
            species: sp.clone(),
            transition: d.transition.to_string(),
            max_relative_difference: d.max_relative_difference,
            at_temperature_k: d.at_temperature_k,
        }));
        r.only_in_first
            .extend(c.only_in_first.iter().map(|t| format!("{sp} {t}")));
        r.only_in_second
            .extend(c.only_in_second.iter().map(|t| format!("{sp} {t}")));
        r.mismatches
            .extend(c.header_mismatches.iter().map(|m| format!("{sp} {m}")));
    }
    r
}

pub(crate) fn as_text(r: &Report) -> String {
    let mut out = format!(
        "first:  {}second: {}",
        stamp_line(&r.first),
        stamp_line(&r.second)
    );
    out.push_str(&format!("{}\n", verdict(r)));
    out.push_str(&format!("{}\n", summary(r)));
    // Only what changed: a transition whose rates are equal at every temperature is counted
    // in the summary, not listed.
    let changed: Vec<&Row> = r
        .rows
        .iter()
        .filter(|x| x.max_relative_difference != 0.0)
        .collect();
    if !changed.is_empty() {
        out.push_str(&format!(
            "{}; relative difference of the de-excitation rate coefficient, max over temperature\n",
            r.mode
        ));
        let mut t = Table::new(&["SPECIES", "TRANSITION", "MAX_REL_DIFF", "AT_T_K"]);
        for row in changed {
            t.row(vec![
                row.species.clone(),
                row.transition.clone(),
                format!("{:.3e}", row.max_relative_difference),
                sig(row.at_temperature_k, 6),
            ]);
        }
        out.push_str(&t.render());
    }
    for (label, list) in [
        (format!("only in {}", stamp_label(&r.first)), &r.only_in_first),
        (format!("only in {}", stamp_label(&r.second)), &r.only_in_second),
        ("levels or weights differ".to_string(), &r.mismatches),
    ] {
        if !list.is_empty() {
            out.push_str(&format!("{label}: {}\n", list.join(", ")));
        }
    }
    out
}

/// One line: how many compared transitions differ and by how much at most, and what is in one
/// dataset only.
pub(crate) fn summary(r: &Report) -> String {
    let changed = r.rows.iter().filter(|x| x.max_relative_difference != 0.0).count();
    let worst = r
        .rows
        .iter()
        .max_by(|a, b| a.max_relative_difference.total_cmp(&b.max_relative_difference));
    let mut line = match worst {
        Some(w) if changed > 0 => format!(
            "summary: {changed} of {} transition(s) differ, largest {:.3e} ({} {} at {} K)",
            r.rows.len(),
            w.max_relative_difference,
            w.species,
            w.transition,
            sig(w.at_temperature_k, 6)
        ),
        _ => format!(
            "summary: no rate differs over the {} transition(s) compared",
            r.rows.len()
        ),
    };
    for (n, what) in [
        (r.only_in_first.len(), "only in the first"),
        (r.only_in_second.len(), "only in the second"),
        (r.mismatches.len(), "with different levels or weights"),
    ] {
        if n > 0 {
            line.push_str(&format!("; {n} {what}"));
        }
    }
    line
}

pub(crate) fn as_json(r: &Report) -> String {
    let rows: Vec<_> = r
        .rows
        .iter()
        .map(|x| {
            json!({
                "species": x.species, "transition": x.transition,
                "max_relative_difference": x.max_relative_difference,
                "at_temperature_k": x.at_temperature_k,
            })
        })
        .collect();
    json_text(&json!({
        "mode": r.mode,
        "first": stamp_json(&r.first),
        "second": stamp_json(&r.second),
        "differences": rows,
        "only_in_first": r.only_in_first,
        "only_in_second": r.only_in_second,
        "level_mismatches": r.mismatches,
        "verdict": verdict(r),
        "summary": summary(r),
        "same_content": r.first.content_hash == r.second.content_hash,
        "same_tables_digest": r.first.tables_digest == r.second.tables_digest,
        "table_sets_compared": r.table_sets_compared,
        "table_sets_differ": r.table_sets_differ,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_client::{TableDifference, Transition};

    fn stamp(v: &str, h: char) -> pb::DatasetStamp {
        pb::DatasetStamp {
            id: "demo".into(),
            version: v.into(),
            content_hash: h.to_string().repeat(64),
            ..Default::default()
        }
    }

    #[test]
    fn a_local_report_shows_both_hashes_and_each_difference() {
        let c = LocalComparison {
            species: "X".into(),
            first: stamp("1.0.0", 'a'),
            second: stamp("1.1.0", 'b'),
            differences: vec![TableDifference {
                transition: Transition { upper: 2, lower: 1 },
                max_relative_difference: 0.0909,
                at_temperature_k: 1e4,
            }],
            only_in_first: vec![Transition { upper: 3, lower: 2 }],
            only_in_second: vec![],
            header_mismatches: vec![],
            temperature_count: 61,
        };
        let text = as_text(&local_report(vec![c]));
        assert!(
            text.contains(&"a".repeat(64)) && text.contains(&"b".repeat(64)),
            "{text}"
        );
        assert!(
            text.contains("X        2-1             9.090e-2   10000"),
            "{text}"
        );
        assert!(text.contains("only in demo@1.0.0: X 3-2"), "{text}");
        assert!(
            text.contains("summary: 1 of 1 transition(s) differ, largest 9.090e-2 (X 2-1 at 10000 K); 1 only in the first"),
            "{text}"
        );
    }

    #[test]
    fn catalogue_species_follow_id_and_version() {
        let sets = vec![
            pb::DatasetSummary {
                stamp: Some(stamp("1.0.0", 'a')),
                species: vec!["X".into()],
                ..Default::default()
            },
            pb::DatasetSummary {
                stamp: Some(stamp("1.1.0", 'b')),
                species: vec!["X".into(), "Y".into()],
                ..Default::default()
            },
        ];
        let v1: DatasetRef = "demo@1.0.0".parse().unwrap();
        assert_eq!(species_of(&sets, &v1).len(), 1);
        let any: DatasetRef = "demo".parse().unwrap();
        assert_eq!(species_of(&sets, &any).len(), 2);
    }
}

#[cfg(test)]
mod verdict_tests {
    use super::*;

    fn report(first: (&str, &str), second: (&str, &str), differ: &[&str]) -> Report {
        let stamp = |(h, d): (&str, &str)| pb::DatasetStamp {
            id: "demo".into(),
            version: "1.0.0".into(),
            content_hash: h.repeat(64),
            tables_digest: d.repeat(64),
        };
        Report {
            mode: "test",
            first: stamp(first),
            second: stamp(second),
            rows: Vec::new(),
            only_in_first: Vec::new(),
            only_in_second: Vec::new(),
            mismatches: Vec::new(),
            table_sets_compared: 2,
            table_sets_differ: differ.iter().map(|s| s.to_string()).collect(),
        }
    }

    // The case a largest-difference figure alone hid: same data, tables built differently.
    #[test]
    fn a_comparison_says_plainly_when_tables_differ_for_the_same_data() {
        let same = verdict(&report(("a", "1"), ("a", "1"), &[]));
        assert!(same.starts_with("identical tables"), "{same}");
        assert!(
            same.contains("2 table set(s) fetched are equal bit for bit"),
            "{same}"
        );
        let rebuilt = verdict(&report(("a", "1"), ("a", "2"), &["Mk II"]));
        assert!(
            rebuilt.starts_with("TABLES DIFFER although the dataset content is the same"),
            "{rebuilt}"
        );
        assert!(
            rebuilt.contains(&"1".repeat(64)) && rebuilt.contains(&"2".repeat(64)),
            "{rebuilt}"
        );
        assert!(rebuilt.contains("table sets differ for Mk II"), "{rebuilt}");
        // Equal digests but a table set that differs (a server answering with other tables than
        // its digest says) is not called identical either.
        let odd = verdict(&report(("a", "1"), ("a", "1"), &["Mk III"]));
        assert!(odd.starts_with("TABLES DIFFER"), "{odd}");
        let other = verdict(&report(("a", "1"), ("b", "1"), &[]));
        assert_eq!(other, "different datasets: the content hashes differ");
        let text = as_text(&report(("a", "1"), ("a", "2"), &[]));
        assert!(
            text.lines()
                .nth(2)
                .is_some_and(|l| l.starts_with("TABLES DIFFER")),
            "{text}"
        );
    }
}
