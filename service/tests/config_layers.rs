//! The four configuration layers of `ratewell-server` (defaults, file, environment, flags),
//! read back with `--print-config`: for a boolean and a number, each layer sets the value and
//! switches it both ways over the layer below. Precedence is the documented one (our own
//! contract; common practice, no source).

use std::path::PathBuf;
use std::process::Command;

/// The effective settings printed by the server for `env` and `args`.
fn printed(env: &[(&str, &str)], args: &[&str]) -> toml::Table {
    let mut command = Command::new(env!("CARGO_BIN_EXE_ratewell-server"));
    for (k, _) in std::env::vars().filter(|(k, _)| k.starts_with("RATEWELL_")) {
        command.env_remove(k);
    }
    let out = command
        .envs(env.iter().copied())
        .args(args)
        .arg("--print-config")
        .output()
        .expect("the server binary runs");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{args:?} {env:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    text.parse()
        .unwrap_or_else(|e| panic!("printed settings are TOML: {e}\n{text}"))
}

fn file(label: &str, text: &str) -> PathBuf {
    let path = std::env::temp_dir().join(format!("ratewell-layers-{label}-{}.toml", std::process::id()));
    std::fs::write(&path, text).expect("write the config file");
    path
}

fn setting(t: &toml::Table, key: &str) -> String {
    t.get(key).map(|v| v.to_string()).unwrap_or_default()
}

#[test]
fn each_layer_sets_a_boolean_and_a_number_both_ways() {
    // Defaults.
    let t = printed(&[], &[]);
    assert_eq!(setting(&t, "json_logs"), "false");
    assert_eq!(setting(&t, "max_in_flight"), "256");
    // The file, switching the boolean on (and, in a second file, off again over nothing).
    let on = file("on", "json_logs = true\nmax_in_flight = 7\n");
    let off = file("off", "json_logs = false\nmax_in_flight = 300\n");
    let on_arg = ["--config", on.to_str().unwrap()];
    let off_arg = ["--config", off.to_str().unwrap()];
    let t = printed(&[], &on_arg);
    assert_eq!(
        (setting(&t, "json_logs"), setting(&t, "max_in_flight")),
        ("true".into(), "7".into())
    );
    let t = printed(&[], &off_arg);
    assert_eq!(
        (setting(&t, "json_logs"), setting(&t, "max_in_flight")),
        ("false".into(), "300".into())
    );
    // The environment over the file, both ways; RATEWELL_CONFIG names the file too.
    let t = printed(
        &[("RATEWELL_JSON_LOGS", "false"), ("RATEWELL_MAX_IN_FLIGHT", "5")],
        &on_arg,
    );
    assert_eq!(
        (setting(&t, "json_logs"), setting(&t, "max_in_flight")),
        ("false".into(), "5".into())
    );
    let t = printed(
        &[
            ("RATEWELL_JSON_LOGS", "true"),
            ("RATEWELL_CONFIG", off.to_str().unwrap()),
        ],
        &[],
    );
    assert_eq!(
        (setting(&t, "json_logs"), setting(&t, "max_in_flight")),
        ("true".into(), "300".into())
    );
    // Flags over the environment, both ways.
    let t = printed(
        &[("RATEWELL_JSON_LOGS", "true"), ("RATEWELL_MAX_IN_FLIGHT", "5")],
        &[&on_arg[..], &["--json-logs", "false", "--max-in-flight", "3"]].concat(),
    );
    assert_eq!(
        (setting(&t, "json_logs"), setting(&t, "max_in_flight")),
        ("false".into(), "3".into())
    );
    let t = printed(
        &[("RATEWELL_JSON_LOGS", "false")],
        &[&off_arg[..], &["--json-logs"]].concat(),
    );
    assert_eq!(setting(&t, "json_logs"), "true");
    // A limit (in the file's [limits] table) from each layer.
    let limit = file("limit", "[limits]\nmax_species = 4\n");
    let limit_arg = ["--config", limit.to_str().unwrap()];
    let species = |t: &toml::Table| t["limits"]["max_species"].to_string();
    assert_eq!(species(&printed(&[], &limit_arg)), "4");
    assert_eq!(
        species(&printed(&[("RATEWELL_MAX_SPECIES", "9")], &limit_arg)),
        "9"
    );
    assert_eq!(
        species(&printed(
            &[("RATEWELL_MAX_SPECIES", "9")],
            &[&limit_arg[..], &["--max-species", "2"]].concat()
        )),
        "2"
    );
    for path in [on, off, limit] {
        let _ = std::fs::remove_file(path);
    }
}
