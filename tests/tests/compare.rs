//! CompareDatasets end to end: demo 1.0.0 against 1.1.0. What changed is worked out here from
//! the two folders' TOML text (service/data/demo and service/data/demo-v2), independently of
//! the server: transitions whose inputs are identical must show a difference of exactly 0,
//! transitions whose effective collision strengths were edited must show at least the edit's
//! relative size, and levels with an edited weight or energy must be listed.

use ratewell_e2e::dataset_text::{SpeciesText, species_files, upsilon_table};
use ratewell_e2e::requests::{MK_III, assert_status, key, refused, selector};
use ratewell_e2e::{TempDataDir, TestServer, test_config};
use ratewell_proto::pb;
use std::collections::BTreeSet;
use tonic::Code;

const OLD: &str = "service/data/demo";
const NEW: &str = "service/data/demo-v2";

/// Whether a temperature is a knot of the default grid (10^(1 + 0.05 i) K).
fn on_default_grid(t_k: f64) -> bool {
    let steps = (t_k.log10() - 1.0) * 20.0;
    (steps - steps.round()).abs() < 1e-9
}

/// An effective-collision-strength table edited between the versions, same temperatures.
struct Edit {
    species: String,
    upper: u32,
    lower: u32,
    temperatures_k: Vec<f64>,
    /// (temperature, |dU| / max(U)) at each edited temperature.
    changes: Vec<(f64, f64)>,
}

/// The edited tables, found by comparing the two folders' text.
fn edits() -> Vec<Edit> {
    let mut out = Vec::new();
    for file in species_files(OLD) {
        let (old, new) = (SpeciesText::read(OLD, &file), SpeciesText::read(NEW, &file));
        for (pair, inputs) in old.inputs() {
            let (Some((t1, u1)), Some((t2, u2))) = (
                upsilon_table(inputs.collision),
                upsilon_table(new.collision(pair.0, pair.1)),
            ) else {
                continue;
            };
            if t1 != t2 || u1 == u2 || old.level(pair.0) != new.level(pair.0) {
                continue;
            }
            let changes = t1
                .iter()
                .zip(u1.iter().zip(&u2))
                .filter(|(_, (a, b))| a != b)
                .map(|(&t, (a, b))| (t, (b - a).abs() / a.abs().max(b.abs())))
                .collect();
            out.push(Edit {
                species: old.name.clone(),
                upper: pair.0,
                lower: pair.1,
                temperatures_k: t1,
                changes,
            });
        }
    }
    out
}

async fn server_with_both_versions(data: &TempDataDir) -> TestServer {
    data.add_demo_v2("demo-v2");
    let config = ratewell_service::config::Config {
        data_dir: Some(data.path().to_path_buf()),
        ..test_config()
    };
    TestServer::start_with(config).await
}

fn find<'a>(
    answer: &'a pb::CompareDatasetsResponse,
    species: &str,
    upper: u32,
    lower: u32,
) -> &'a pb::TransitionDifference {
    answer
        .differences
        .iter()
        .find(|d| d.species == species && d.key == Some(key(upper, lower)))
        .unwrap_or_else(|| panic!("{species} {upper}-{lower} compared"))
}

fn compare(first: &str, second: &str, species: &[&str]) -> pb::CompareDatasetsRequest {
    pb::CompareDatasetsRequest {
        first: Some(selector("demo", first)),
        second: Some(selector("demo", second)),
        species: species.iter().map(|s| s.to_string()).collect(),
        grid: None,
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn versions_differ_exactly_where_their_files_differ() {
    let data = TempDataDir::new("compare");
    let server = server_with_both_versions(&data).await;
    let answer = server
        .consistency()
        .compare_datasets(compare("1.0.0", "1.1.0", &[]))
        .await
        .expect("compare")
        .into_inner();
    assert_eq!(answer.first.as_ref().expect("first").version, "1.0.0");
    assert_eq!(answer.second.as_ref().expect("second").version, "1.1.0");
    assert!(answer.only_in_first.is_empty() && answer.only_in_second.is_empty());

    let mut expected_levels = BTreeSet::new();
    let (mut identical, mut transitions) = (0, 0);
    for file in species_files(OLD) {
        let old = SpeciesText::read(OLD, &file);
        let new = SpeciesText::read(NEW, &file);
        expected_levels.extend(old.edited_levels(&new));
        let (old_inputs, new_inputs) = (old.inputs(), new.inputs());
        assert_eq!(
            old_inputs.keys().collect::<Vec<_>>(),
            new_inputs.keys().collect::<Vec<_>>()
        );
        transitions += old_inputs.len();
        for (pair, inputs) in &old_inputs {
            let d = find(&answer, &old.name, pair.0, pair.1);
            assert!(d.max_relative_difference.is_finite() && d.max_relative_difference >= 0.0);
            if *inputs == new_inputs[pair] {
                // Same data in, same table out: exactly no difference.
                assert_eq!(d.max_relative_difference, 0.0, "{} {pair:?}", old.name);
                identical += 1;
            }
        }
    }
    assert_eq!(answer.differences.len(), transitions, "every shared transition");
    assert!(
        identical * 10 > transitions * 8,
        "most transitions are untouched ({identical})"
    );
    let listed: BTreeSet<String> = answer.level_mismatches.iter().cloned().collect();
    assert_eq!(listed, expected_levels);
    assert!(!expected_levels.is_empty(), "the versions edit some levels");

    // Edited effective collision strengths: q_ul is proportional to Upsilon (Osterbrock &
    // Ferland 2006, eq. 3.20), so where an edited source temperature is a knot of the default
    // grid the largest relative difference is at least the edit's |dU| / max(U) there.
    let edits = edits();
    assert!(
        edits.len() >= 2,
        "the versions edit effective collision strengths"
    );
    for e in &edits {
        let d = find(&answer, &e.species, e.upper, e.lower);
        for &(t, change) in e.changes.iter().filter(|(t, _)| on_default_grid(*t)) {
            assert!(
                d.max_relative_difference >= change * (1.0 - 1e-9),
                "{} {}-{}: {} < {change} at {t} K",
                e.species,
                e.upper,
                e.lower,
                d.max_relative_difference
            );
        }
    }
    // Compared only on the source data's own temperature range (a grid of default-grid knots
    // inside it), a single edited value shows where it was made.
    for e in edits
        .iter()
        .filter(|e| e.changes.len() == 1 && on_default_grid(e.changes[0].0))
    {
        let first = e.temperatures_k[0];
        let last = e.temperatures_k[e.temperatures_k.len() - 1];
        let mut req = compare("1.0.0", "1.1.0", &[e.species.as_str()]);
        req.grid = Some(pb::GridSpec {
            t_min_k: 10f64.powf(((first.log10() - 1.0) * 20.0 - 1e-9).ceil() / 20.0 + 1.0),
            t_max_k: 10f64.powf(((last.log10() - 1.0) * 20.0 + 1e-9).floor() / 20.0 + 1.0),
            points_per_decade: 20,
        });
        let inside = server
            .consistency()
            .compare_datasets(req)
            .await
            .expect("compare on the source range")
            .into_inner();
        let d = find(&inside, &e.species, e.upper, e.lower);
        let (t, change) = e.changes[0];
        assert!(d.max_relative_difference >= change * (1.0 - 1e-9));
        approx::assert_relative_eq!(d.at_temperature_k, t, max_relative = 1e-9);
    }
    // Largest difference first.
    assert!(
        answer
            .differences
            .windows(2)
            .all(|w| w[0].max_relative_difference >= w[1].max_relative_difference)
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_version_compared_with_itself_has_no_differences() {
    let data = TempDataDir::new("compare-self");
    let server = server_with_both_versions(&data).await;
    let answer = server
        .consistency()
        .compare_datasets(compare("1.1.0", "1.1.0", &[MK_III]))
        .await
        .expect("compare")
        .into_inner();
    assert_eq!(answer.differences.len(), 10, "only the species asked for");
    assert!(
        answer
            .differences
            .iter()
            .all(|d| d.max_relative_difference == 0.0)
    );
    assert!(answer.level_mismatches.is_empty());
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn unknown_species_or_dataset_are_refused() {
    let data = TempDataDir::new("compare-bad");
    let server = server_with_both_versions(&data).await;
    let status = refused(
        server
            .consistency()
            .compare_datasets(compare("1.0.0", "1.1.0", &["Mk IX"]))
            .await,
    );
    assert_status(
        &status,
        Code::InvalidArgument,
        &["species[0]", "\"Mk IX\"", "must be a species of both datasets"],
    );
    let status = refused(
        server
            .consistency()
            .compare_datasets(compare("1.0.0", "7.0.0", &[]))
            .await,
    );
    assert_status(&status, Code::NotFound, &["demo@7.0.0", "not loaded"]);
    let mut req = compare("1.0.0", "1.1.0", &[]);
    req.second = None;
    let status = refused(server.consistency().compare_datasets(req).await);
    assert_status(&status, Code::InvalidArgument, &["second", "must name a dataset"]);
}
