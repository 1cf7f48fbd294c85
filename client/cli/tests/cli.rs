//! The `ratewell` command-line tool run as a process against the in-test fake server.

#[path = "../../tests/common/mod.rs"]
mod common;

use common::{HASH_A, HASH_B, start_in_background};
use std::process::{Command, Output};

fn ratewell(server: &str, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ratewell"))
        .arg("--server")
        .arg(server)
        .args(args)
        .env_remove("RATEWELL_SERVER")
        .output()
        .expect("the ratewell binary runs")
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

#[test]
fn rates_show_the_stamp_and_agree_locally_and_remotely() {
    let server = start_in_background(HASH_A);
    let remote = ratewell(&server.url(), &["rates", "X", "--temperatures", "5000,10000"]);
    assert!(remote.status.success(), "{}", text(&remote.stderr));
    let out = text(&remote.stdout);
    // The dataset was not named: the server's only dataset is used, and named in the output.
    assert!(
        out.contains(&format!("dataset demo version 1.0.0  content hash {HASH_A}")),
        "{out}"
    );
    assert!(out.contains("looked up on the server"), "{out}");
    assert!(out.contains("caution: 3-2: approximate"), "{out}");
    let local = ratewell(
        &server.url(),
        &[
            "--dataset",
            "demo",
            "rates",
            "X",
            "--temperatures",
            "5000,10000",
            "--local",
        ],
    );
    assert!(local.status.success(), "{}", text(&local.stderr));
    let body = |s: &str| s.lines().skip(2).map(str::to_string).collect::<Vec<_>>();
    // Same rule on both sides (the contract): the printed tables are identical.
    let local_out = text(&local.stdout);
    assert_eq!(body(&out).len(), body(&local_out).len());
    assert_eq!(body(&out)[..7], body(&local_out)[..7]);
}

#[test]
fn json_output_parses_and_carries_the_stamp() {
    let server = start_in_background(HASH_A);
    let out = ratewell(
        &server.url(),
        &[
            "--json",
            "rates",
            "X",
            "--temperatures",
            "1",
            "--unit",
            "eV",
            "--transition",
            "2-1",
        ],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["stamp"]["content_hash"], HASH_A);
    assert_eq!(v["transitions"][0]["transition"], "2-1");
    let d = ratewell(&server.url(), &["--json", "datasets"]);
    let v: serde_json::Value = serde_json::from_slice(&d.stdout).unwrap();
    assert_eq!(v["datasets"][0]["species"][0], "X");
}

#[test]
fn bad_arguments_exit_2_naming_argument_value_and_range() {
    let server = start_in_background(HASH_A);
    let out = ratewell(&server.url(), &["rates", "X", "--temperatures", "5000,-3"]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        text(&out.stderr).trim(),
        "error: --temperatures: temperatures[1] = -3 K: must be finite and > 0"
    );
    let out = ratewell(
        &server.url(),
        &["rates", "X", "--temperatures", "5000", "--unit", "F"],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("must be one of K, eV"),
        "{}",
        text(&out.stderr)
    );
    let out = ratewell(&server.url(), &["--pin-hash", "xyz", "datasets"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("pin-hash = \"xyz\": must be 64 hexadecimal digits"));
    // Outside the grid: a usage mistake (exit 2), with the flag that allows it.
    let out = ratewell(&server.url(), &["rates", "X", "--temperatures", "5e7"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("OutOfRange"), "{}", text(&out.stderr));
    assert!(
        text(&out.stderr).contains("hint: add --extrapolate"),
        "{}",
        text(&out.stderr)
    );
    let out = ratewell(&server.url(), &["rates", "X", "--temperatures", "5e7", "--local"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("hint: add --extrapolate"),
        "{}",
        text(&out.stderr)
    );
    // Credentials and TLS settings are checked before anything is sent.
    let out = ratewell(&server.url(), &["--token-file", "/nonexistent/token", "datasets"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).starts_with("error: --token-file: token_file = /nonexistent/token: cannot be read"),
        "{}",
        text(&out.stderr)
    );
    let out = ratewell(
        &server.url(),
        &["--tls-ca-file", "/nonexistent/ca.pem", "datasets"],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("tls.ca_file = /nonexistent/ca.pem"),
        "{}",
        text(&out.stderr)
    );
}

#[test]
fn a_token_from_the_environment_is_read_and_never_echoed() {
    // A token that cannot travel in a header is refused by the tool itself, naming only its
    // length: proof that it was read. (That the library sends a good one is tested against the
    // real server in the end-to-end tests.)
    let server = start_in_background(HASH_A);
    let out = Command::new(env!("CARGO_BIN_EXE_ratewell"))
        .args(["--server", &server.url(), "datasets"])
        .env_remove("RATEWELL_SERVER")
        .env("RATEWELL_TOKEN", "has a space")
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(err.contains("token = (11 characters, not shown)"), "{err}");
    assert!(!err.contains("has a space"), "{err}");
    let ok = Command::new(env!("CARGO_BIN_EXE_ratewell"))
        .args(["--server", &server.url(), "datasets"])
        .env_remove("RATEWELL_SERVER")
        .env("RATEWELL_TOKEN", "fine-token")
        .output()
        .expect("runs");
    assert!(ok.status.success(), "{}", text(&ok.stderr));
}

#[test]
fn a_pinned_hash_that_differs_exits_3() {
    let server = start_in_background(HASH_B);
    let out = ratewell(
        &server.url(),
        &[
            "--dataset",
            "demo",
            "--pin-hash",
            HASH_A,
            "export",
            "X",
            "--format",
            "csv",
        ],
    );
    assert_eq!(out.status.code(), Some(3), "{}", text(&out.stderr));
    assert!(text(&out.stderr).contains(HASH_A), "{}", text(&out.stderr));
    assert!(out.stdout.is_empty());
}

#[test]
fn export_health_species_and_populations_run() {
    let server = start_in_background(HASH_A);
    let dir = std::env::temp_dir().join(format!("ratewell-cli-test-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("x.csv");
    let out = ratewell(
        &server.url(),
        &[
            "export",
            "X",
            "--format",
            "csv",
            "--output",
            file.to_str().unwrap(),
        ],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let csv = std::fs::read_to_string(&file).unwrap();
    assert!(csv.starts_with("species,upper,lower,temperature_k,"), "{csv}");
    assert!(
        csv.lines()
            .nth(1)
            .is_some_and(|l| l.contains(&format!(",demo,1.0.0,{HASH_A},"))),
        "{csv}"
    );
    // 3 tables x 31 knots + the header row.
    assert_eq!(csv.lines().count(), 3 * 31 + 1);
    std::fs::remove_dir_all(&dir).unwrap();

    let out = ratewell(&server.url(), &["health"]);
    assert!(out.status.success());
    assert!(text(&out.stdout).contains("serving"));

    let out = ratewell(&server.url(), &["species", "X"]);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    assert!(
        s.contains("levels") && s.contains("3-2") && s.contains(HASH_A),
        "{s}"
    );

    let out = ratewell(
        &server.url(),
        &[
            "populations",
            "X",
            "--temperatures",
            "1e4,2e4,3e4",
            "--densities",
            "1e2,1e4",
            "--grid",
            "--chunk",
            "1",
        ],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    assert!(s.contains(&HASH_A.to_string()), "{s}");
    // 3 x 2 grid points, then one critical-density row per temperature.
    let rows = s
        .lines()
        .filter(|l| ["10000", "20000", "30000"].iter().any(|t| l.starts_with(t)))
        .count();
    assert_eq!(rows, 6 + 3, "{s}");
}

#[test]
fn a_dead_server_is_a_clear_failure() {
    let dead = common::dead_address();
    let out = ratewell(&dead, &["--timeout", "2", "health"]);
    assert_eq!(out.status.code(), Some(1));
    let err = text(&out.stderr);
    assert!(err.contains("not serving"), "{err}");
    // Said as what it is, with the address tried and a hint.
    assert!(err.contains(&format!("no server answers at {dead}")), "{err}");
    assert!(err.contains("ratewell-server --listen"), "{err}");
}

#[test]
fn save_tables_writes_a_table_file_that_loads_with_no_server() {
    let server = start_in_background(HASH_A);
    let dir = std::env::temp_dir().join(format!("ratewell-cli-save-{}", std::process::id()));
    let out = ratewell(
        &server.url(),
        &["save-tables", "X", "--output-dir", dir.to_str().unwrap()],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let printed = text(&out.stdout);
    assert!(
        printed.contains(&format!("content hash     {HASH_A}")),
        "{printed}"
    );
    let path = printed
        .lines()
        .next()
        .and_then(|l| l.split(" to ").nth(1))
        .expect("the first line names the file");
    let loaded = ratewell_client::LocalTables::load(std::path::Path::new(path)).expect("loads");
    assert_eq!(loaded.stamp().content_hash, HASH_A);
    assert!(printed.contains(loaded.digest()), "{printed}");
    std::fs::remove_dir_all(&dir).unwrap();
}
