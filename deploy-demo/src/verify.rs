//! `verify`: read several jobs' summaries and say whether they all used one dataset content
//! hash and computed identical numbers (equal checksums), with no local-versus-server
//! difference in any of them.

use crate::error::JobError;
use crate::summary::Summary;
use ratewell_client::short_hash;
use std::fmt::Write;
use std::path::Path;

/// The outcome: a printable report and whether every check passed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Verdict {
    /// One line per job, then the reasons for a failure, then PASS or FAIL.
    pub(crate) report: String,
    /// Whether every check passed.
    pub(crate) pass: bool,
}

/// Reads one summary file.
pub(crate) fn read_summary(path: &Path) -> Result<Summary, JobError> {
    let file_error = |message: String| JobError::File {
        path: path.display().to_string(),
        message,
    };
    let text = std::fs::read_to_string(path).map_err(|e| file_error(format!("cannot read: {e}")))?;
    serde_json::from_str(&text).map_err(|e| file_error(format!("not a job summary: {e}")))
}

/// Compares the summaries (named by their files).
pub(crate) fn verify(summaries: &[(String, Summary)]) -> Verdict {
    let mut report = String::new();
    let mut problems = Vec::new();
    // Jobs that read a table file made no server calls: then only the locally evaluated rates
    // (the same for every job) are compared, and the table-set digests must agree.
    let offline = |s: &Summary| s.tables_source.starts_with("table file");
    let any_offline = summaries.iter().any(|(_, s)| offline(s));
    let compared = |s: &Summary| {
        if any_offline {
            s.checksum.local_rates.clone()
        } else {
            s.checksum.all.clone()
        }
    };
    let _ = writeln!(
        report,
        "{:<16} {:<12} {:<14} {:<14} {:>10} {:>7} {:>11}",
        "JOB",
        "DATASET",
        "CONTENT_HASH",
        if any_offline { "LOCAL_RATES" } else { "CHECKSUM" },
        "NUMBERS",
        "SOLVES",
        "BITS_DIFFER"
    );
    for (_, s) in summaries {
        let _ = writeln!(
            report,
            "{:<16} {:<12} {:<14} {:<14} {:>10} {:>7} {:>11}",
            s.job_id,
            format!("{}@{}", s.dataset.id, s.dataset.version),
            short_hash(&s.dataset.content_hash),
            short_hash(&compared(s)),
            s.checksum.values,
            s.solves.len(),
            s.server_check.bit_mismatches
        );
    }
    let Some((first_file, first)) = summaries.first() else {
        return Verdict {
            report: "FAIL: no job summaries given\n".into(),
            pass: false,
        };
    };
    for (file, s) in summaries {
        if s.dataset.content_hash != first.dataset.content_hash {
            problems.push(format!(
                "{file}: job {} used dataset hash {}, but {first_file} (job {}) used {}",
                s.job_id, s.dataset.content_hash, first.job_id, first.dataset.content_hash
            ));
        } else if s.table_set_digest != first.table_set_digest {
            problems.push(format!(
                "{file}: job {} evaluated tables with digest {}, but {first_file} (job {}) used {}",
                s.job_id, s.table_set_digest, first.job_id, first.table_set_digest
            ));
        } else if compared(s) != compared(first) {
            problems.push(format!(
                "{file}: job {} computed different numbers (checksum {}, {} numbers) from {first_file} \
                 (job {}: checksum {}, {} numbers)",
                s.job_id,
                compared(s),
                s.checksum.values,
                first.job_id,
                compared(first),
                first.checksum.values
            ));
        }
        if s.server_check.bit_mismatches != 0 {
            problems.push(format!(
                "{file}: job {}: {} of {} local values differ from the server's lookup",
                s.job_id, s.server_check.bit_mismatches, s.server_check.values_compared
            ));
        }
        if s.server_check.values_compared == 0 && !offline(s) {
            problems.push(format!(
                "{file}: job {}: no local value was checked against the server",
                s.job_id
            ));
        }
    }
    let pass = problems.is_empty();
    for p in &problems {
        let _ = writeln!(report, "  {p}");
    }
    if pass {
        let _ = writeln!(
            report,
            "PASS: {} jobs used dataset {}@{} (content hash {}, table-set digest {}) and computed \
             identical numbers ({} {}; {} values checked bit for bit against the server; {} jobs \
             read a table file)",
            summaries.len(),
            first.dataset.id,
            first.dataset.version,
            first.dataset.content_hash,
            short_hash(&first.table_set_digest),
            if any_offline {
                "local-rates checksum"
            } else {
                "checksum"
            },
            compared(first),
            summaries
                .iter()
                .map(|(_, s)| s.server_check.values_compared)
                .sum::<u64>(),
            summaries.iter().filter(|(_, s)| offline(s)).count()
        );
    } else {
        let _ = writeln!(
            report,
            "FAIL: {} problem(s) in {} summaries",
            problems.len(),
            summaries.len()
        );
    }
    Verdict { report, pass }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::summary::*;

    /// A summary with invented numbers.
    fn summary(job: &str, hash: &str, checksum: &str) -> Summary {
        Summary {
            job_id: job.into(),
            note: INVENTED_NOTE.into(),
            server: "http://127.0.0.1:1".into(),
            tables_source: "server http://127.0.0.1:1".into(),
            table_set_digest: "d".repeat(64),
            dataset: DatasetInfo {
                id: "demo".into(),
                version: "1.0.0".into(),
                content_hash: hash.into(),
                pinned_content_hash: None,
            },
            species: "Mk II".into(),
            track: TrackInfo {
                steps: 2,
                solve_every: 1,
                t_start_k: 2.0e5,
                t_end_k: 5.0e3,
                ne_start_cm3: 1.0e8,
                ne_end_cm3: 4.0e9,
            },
            local: LocalInfo {
                transitions: 1,
                rate_values: 4,
                approximate: 0,
                beyond_source: 0,
                ground_excitation_start_per_s: 1.0,
                ground_excitation_end_per_s: 0.5,
            },
            solves: vec![],
            server_check: CheckInfo {
                lookups: 2,
                values_compared: 6,
                bit_mismatches: 0,
            },
            checksum: ChecksumInfo {
                method: "m".into(),
                local_rates: "a".into(),
                server_solves: "b".into(),
                all: checksum.into(),
                values: 10,
            },
            timing: TimingInfo {
                fetch_s: 0.1,
                local_evaluation_s: 0.1,
                server_calls_s: 0.1,
                total_s: 0.3,
            },
            cautions: vec![],
        }
    }

    fn named(list: Vec<Summary>) -> Vec<(String, Summary)> {
        list.into_iter()
            .enumerate()
            .map(|(i, s)| (format!("job-{i}.json"), s))
            .collect()
    }

    #[test]
    fn identical_jobs_pass_and_each_kind_of_difference_fails() {
        let h1 = "1".repeat(64);
        let h2 = "2".repeat(64);
        let same = named(vec![summary("a", &h1, "c1"), summary("b", &h1, "c1")]);
        let v = verify(&same);
        assert!(v.pass, "{}", v.report);
        assert!(
            v.report.contains("PASS: 2 jobs used dataset demo@1.0.0"),
            "{}",
            v.report
        );

        let other_hash = named(vec![summary("a", &h1, "c1"), summary("b", &h2, "c1")]);
        let v = verify(&other_hash);
        assert!(!v.pass);
        assert!(v.report.contains("job b used dataset hash 2222"), "{}", v.report);

        let other_numbers = named(vec![summary("a", &h1, "c1"), summary("b", &h1, "c2")]);
        let v = verify(&other_numbers);
        assert!(!v.pass);
        assert!(
            v.report.contains("job b computed different numbers"),
            "{}",
            v.report
        );

        let mut differing = summary("a", &h1, "c1");
        differing.server_check.bit_mismatches = 1;
        let v = verify(&named(vec![differing]));
        assert!(!v.pass);
        assert!(v.report.contains("1 of 6 local values differ"), "{}", v.report);

        assert!(!verify(&[]).pass);
    }

    // Jobs on nodes with no route to the server read a table file: they are compared on the
    // locally evaluated rates and the table-set digest, and need no server check.
    #[test]
    fn table_file_jobs_are_compared_on_local_rates_and_digest() {
        let h1 = "1".repeat(64);
        let mut offline = summary("b", &h1, "other-all");
        offline.tables_source = "table file /shared/Mk-II.rwtables".into();
        offline.solves.clear();
        offline.server_check = CheckInfo {
            lookups: 0,
            values_compared: 0,
            bit_mismatches: 0,
        };
        let v = verify(&named(vec![summary("a", &h1, "c1"), offline.clone()]));
        assert!(v.pass, "{}", v.report);
        assert!(v.report.contains("local-rates checksum"), "{}", v.report);
        assert!(v.report.contains("1 jobs read a table file"), "{}", v.report);

        let mut other_rates = offline.clone();
        other_rates.checksum.local_rates = "z".into();
        let v = verify(&named(vec![summary("a", &h1, "c1"), other_rates]));
        assert!(
            !v.pass && v.report.contains("job b computed different numbers"),
            "{}",
            v.report
        );

        let mut other_tables = offline;
        other_tables.table_set_digest = "e".repeat(64);
        let v = verify(&named(vec![summary("a", &h1, "c1"), other_tables]));
        assert!(
            !v.pass && v.report.contains("evaluated tables with digest eeee"),
            "{}",
            v.report
        );
    }

    #[test]
    fn summaries_round_trip_through_json_and_bad_files_are_named() {
        let s = summary("a", &"1".repeat(64), "c1");
        let text = serde_json::to_string_pretty(&s).unwrap();
        assert_eq!(serde_json::from_str::<Summary>(&text).unwrap(), s);
        let e = read_summary(Path::new("/nonexistent/job.json"))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("/nonexistent/job.json: cannot read"), "{e}");
    }
}
