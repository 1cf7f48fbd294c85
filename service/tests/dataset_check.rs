//! `ratewell-server --check-dataset DIR`: a folder that loads is summarised with its hash and
//! warned about what looks wrong; one that does not is refused with every problem located, and
//! the exit status says which.

use std::path::{Path, PathBuf};
use std::process::Command;

fn check(dir: &Path) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ratewell-server"))
        .arg("--check-dataset")
        .arg(dir)
        .env_remove("RATEWELL_CONFIG")
        .output()
        .expect("the server binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
    )
}

/// A copy of the demo dataset in a fresh temporary folder, with `edit` applied to mk-iii.toml.
fn demo_copy(label: &str, edit: impl Fn(String) -> String) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo");
    let dir = std::env::temp_dir().join(format!("ratewell-check-{label}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp folder");
    for name in ["dataset.toml", "mk-ii.toml", "mk-iii.toml"] {
        let text = std::fs::read_to_string(src.join(name)).expect("demo file");
        let text = if name == "mk-iii.toml" { edit(text) } else { text };
        std::fs::write(dir.join(name), text).expect("copy");
    }
    dir
}

#[test]
fn the_demo_loads_and_its_invented_element_is_named() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo");
    let (code, out) = check(&dir);
    assert_eq!(code, 0, "{out}");
    assert!(out.starts_with("ok: "), "{out}");
    assert!(out.contains("dataset demo version 1.0.0, content hash "), "{out}");
    // Mockium (Z = 150) is invented: the check says so for both species.
    assert!(
        out.contains("warning: species Mk III: nuclear_charge = 150 is beyond the known elements"),
        "{out}"
    );
}

#[test]
fn a_symbol_that_is_not_the_element_of_its_charge_is_warned_about() {
    // Z = 8 is oxygen (any periodic table; common practice, no source).
    let dir = demo_copy("symbol", |t| {
        t.replace("name = \"Mk III\"", "name = \"Fe III\"")
            .replace("element = \"Mk\"", "element = \"Fe\"")
            .replace("nuclear_charge = 150", "nuclear_charge = 8")
    });
    let (code, out) = check(&dir);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("warning: species Fe III: element \"Fe\" does not match nuclear_charge = 8 (element O)"),
        "{out}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_folder_that_does_not_load_is_refused_with_every_problem_located() {
    let dir = demo_copy("broken", |t| t.replacen("weight = 1", "weight = -1", 1));
    let (code, out) = check(&dir);
    assert_eq!(code, 1, "{out}");
    assert!(out.starts_with("refused: "), "{out}");
    // file:line: field: message, as the loader reports it.
    let located = out
        .lines()
        .find(|l| l.contains("mk-iii.toml:") && l.contains("weight"));
    assert!(located.is_some(), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_radiative_pair_without_collision_data_is_warned_about() {
    // Drop the collision block of 2-1 (the first [[collision]] block of the demo's Mk III).
    let dir = demo_copy("radiative", |t| {
        let start = t
            .find("[[collision]]\nupper = 2\nlower = 1\n")
            .expect("the 2-1 block");
        let end = start + 1 + t[start + 1..].find("[[").expect("a later block");
        format!("{}{}", &t[..start], &t[end..])
    });
    let (code, out) = check(&dir);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("warning: species Mk III: transition 2-1 has radiative data but no collision data"),
        "{out}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_critical_density_far_outside_the_tested_densities_is_warned_about() {
    // An A value written in the wrong unit (1e18 times too large): the level's critical density
    // (sum of A over sum of downward q; common practice, no source) moves far above the
    // 1 to 1e20 cm^-3 that population solves are tested for.
    let dir = demo_copy("density", |t| {
        t.replacen("a_per_s = 1.9e-3", "a_per_s = 1.9e15", 1)
    });
    let (code, out) = check(&dir);
    assert_eq!(code, 0, "{out}");
    let warned: Vec<&str> = out.lines().filter(|l| l.contains("critical density")).collect();
    assert_eq!(warned.len(), 1, "{out}");
    assert!(
        warned[0].starts_with("warning: species Mk III: level ")
            && warned[0].contains("at 10000 K, more than 1e3 times above the 1e0 to 1e20 cm^-3"),
        "{out}"
    );
    let _ = std::fs::remove_dir_all(&dir);
    // Published data and the demo as shipped: no such warning.
    for folder in ["data/demo", "tests/data/real-ions"] {
        let (code, out) = check(&Path::new(env!("CARGO_MANIFEST_DIR")).join(folder));
        assert_eq!(code, 0, "{out}");
        assert!(!out.contains("critical density"), "{folder}: {out}");
    }
}
