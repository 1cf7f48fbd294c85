//! One test per validation rule of the dataset format: each feeds a small file with one fault
//! and asserts that a problem names the file, the line the fault is on and the field.
//! The expected line is found by searching the faulty text itself, so the check is on the
//! loader's line numbers, not on a number copied into the test.

use std::path::{Path, PathBuf};

use ratewell_service::dataset::{
    DatasetError, Problem, find_dataset_dirs, load_dataset_from_texts, load_folder,
};

const MANIFEST: &str = r#"format = 1
id = "fixture"
version = "1.0.0"
description = "validation fixture"
provenance = "invented numbers for tests"
"#;

/// A valid species file (invented numbers) that each test breaks in one place.
const GOOD: &str = r#"# test fixture: invented numbers
[species]
name = "Zz II"
element = "Zz"
nuclear_charge = 30
ion_charge = 1
source = "test fixture"

[units]
energy = "cm-1"
temperature = "K"
collision_energy = "Ry"

[sources]
fx = "test fixture, invented numbers"

[[level]]
index = 1
label = "ground"
weight = 2
energy = 0.0
source = "@fx"

[[level]]
index = 2
label = "first"
weight = 4
energy = 1000.0
source = "@fx"

[[level]]
index = 3
label = "second"
weight = 6
energy = 50000.0
source = "@fx"

[[radiative]]
upper = 2
lower = 1
a_per_s = 0.01
source = "@fx"

[[radiative]]
upper = 3
lower = 1
a_per_s = 1.0e8
oscillator_strength = 0.2
source = "@fx"

[[collision]]
upper = 2
lower = 1
type = "forbidden"
temperatures = [1000.0, 10000.0, 100000.0]
upsilon = [0.5, 0.6, 0.7]
source = "@fx"

[[collision]]
upper = 3
lower = 2
type = "forbidden"
energies = [0.5, 1.0, 2.0]
energy_kind = "incident"
omega = [0.1, 0.2, 0.3]
source = "@fx"

[[collision]]
upper = 3
lower = 1
type = "allowed"
estimate = "van-regemorter"
source = "@fx"
"#;

const FILE: &str = "zz-ii.toml";

fn load(species: &str) -> Result<ratewell_service::dataset::Dataset, DatasetError> {
    load_dataset_from_texts(&[("dataset.toml", MANIFEST), (FILE, species)])
}

/// The problems of a species text that must fail.
fn problems_of(species: &str) -> Vec<Problem> {
    match load(species) {
        Ok(_) => panic!("expected the file to be rejected:\n{species}"),
        Err(DatasetError::Invalid { problems }) => problems,
        Err(other) => panic!("expected Invalid, got {other}"),
    }
}

/// Replace the unique occurrence of `from` in GOOD.
fn edit(from: &str, to: &str) -> String {
    assert_eq!(
        GOOD.matches(from).count(),
        1,
        "fixture edit target {from:?} must be unique"
    );
    GOOD.replacen(from, to, 1)
}

/// 1-based line of the first line of the unique occurrence of `needle` in `text`.
fn line_of(text: &str, needle: &str) -> usize {
    assert_eq!(
        text.matches(needle).count(),
        1,
        "needle {needle:?} must be unique"
    );
    let at = text.find(needle).unwrap_or(0);
    text[..at].matches('\n').count() + 1
}

/// Assert a problem with this file, line and field exists whose message has all `words`.
fn assert_problem(problems: &[Problem], file: &str, line: Option<usize>, field: &str, words: &[&str]) {
    let found = problems.iter().any(|p| {
        p.file == file && p.line == line && p.field == field && words.iter().all(|w| p.message.contains(w))
    });
    assert!(
        found,
        "no problem {file}:{line:?}: {field}: (with {words:?}) among:\n{}",
        problems
            .iter()
            .map(|p| p.to_string())
            .collect::<Vec<_>>()
            .join("\n")
    );
}

#[test]
fn the_fixture_itself_is_valid() {
    // common practice, no source: a fault-injection fixture must load cleanly when unbroken
    let d = load(GOOD).expect("fixture must load");
    assert_eq!(d.species.len(), 1);
    assert_eq!(d.species[0].levels.len(), 3);
}

#[test]
fn toml_syntax_error_names_its_line() {
    let text = edit("upsilon = [0.5, 0.6, 0.7]", "upsilon = [0.5, 0.6, 0.7");
    let p = problems_of(&text);
    // the parser notices the unclosed array at the next line break or key
    assert_eq!(p.len(), 1);
    assert_eq!(p[0].field, "(syntax)");
    assert!(p[0].message.contains("not valid TOML"), "{}", p[0]);
    let line = p[0].line.expect("syntax errors carry a line");
    let at = line_of(&text, "upsilon = [0.5, 0.6, 0.7");
    assert!(
        line == at || line == at + 1,
        "syntax error at line {line}, fault on line {at}"
    );
}

#[test]
fn unknown_level_index() {
    let text = edit(
        "upper = 2\nlower = 1\na_per_s = 0.01",
        "upper = 7\nlower = 1\na_per_s = 0.01",
    );
    let line = line_of(&text, "upper = 7");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0].upper",
        &["got 7", "1..=3"],
    );
}

#[test]
fn duplicate_level_index() {
    let text = edit("index = 3", "index = 2");
    let line = line_of(&text, "label = \"second\"") - 1;
    let first = line_of(&text, "label = \"first\"") - 1;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "level[2].index",
        &["got 2 again", &format!("line {first}")],
    );
}

#[test]
fn gap_in_level_indices() {
    let text = edit("index = 3", "index = 4");
    let line = line_of(&text, "index = 4");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "level.index",
        &["1..=3", "missing: 3"],
    );
}

#[test]
fn duplicate_radiative_transition() {
    let text = format!("{GOOD}\n[[radiative]]\nupper = 2\nlower = 1\na_per_s = 0.02\nsource = \"@fx\"\n");
    let line = line_of(&text, "a_per_s = 0.02") - 3;
    let first = line_of(&text, "a_per_s = 0.01") - 3;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[2]",
        &["2 -> 1 again", &format!("line {first}")],
    );
}

#[test]
fn duplicate_collision() {
    let text = format!(
        "{GOOD}\n[[collision]]\nupper = 2\nlower = 1\ntype = \"forbidden\"\nestimate = \"coulomb-focusing\"\nsource = \"@fx\"\n"
    );
    let line = line_of(&text, "estimate = \"coulomb-focusing\"") - 4;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[3]",
        &["2 - 1 again"],
    );
}

#[test]
fn weight_must_be_positive() {
    for bad in ["0", "-4"] {
        let text = edit("weight = 4", &format!("weight = {bad}"));
        let line = line_of(&text, &format!("weight = {bad}"));
        assert_problem(
            &problems_of(&text),
            FILE,
            Some(line),
            "level[1].weight",
            &["got", "must be finite and > 0"],
        );
    }
}

#[test]
fn a_value_must_be_positive_and_finite() {
    for bad in ["-0.01", "nan", "inf", "0.0"] {
        let text = edit("a_per_s = 0.01", &format!("a_per_s = {bad}"));
        let line = line_of(&text, &format!("a_per_s = {bad}"));
        assert_problem(
            &problems_of(&text),
            FILE,
            Some(line),
            "radiative[0].a_per_s",
            &["s^-1", "must be finite and > 0"],
        );
    }
}

#[test]
fn level_energy_must_be_non_negative_and_finite() {
    for bad in ["-1000.0", "inf", "nan"] {
        let text = edit("energy = 1000.0", &format!("energy = {bad}"));
        let line = line_of(&text, &format!("energy = {bad}"));
        assert_problem(
            &problems_of(&text),
            FILE,
            Some(line),
            "level[1].energy",
            &["cm-1", "must be finite and >= 0"],
        );
    }
}

#[test]
fn upsilon_must_be_positive() {
    let text = edit("upsilon = [0.5, 0.6, 0.7]", "upsilon = [0.5, -0.6, 0.7]");
    let line = line_of(&text, "upsilon = [0.5, -0.6");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[0].upsilon[1]",
        &["got -0.6", "> 0"],
    );
}

#[test]
fn omega_must_be_non_negative() {
    let text = edit("omega = [0.1, 0.2, 0.3]", "omega = [0.1, 0.2, -0.3]");
    let line = line_of(&text, "omega = [0.1, 0.2, -0.3]");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].omega[2]",
        &["got -0.3", ">= 0"],
    );
}

#[test]
fn temperature_must_be_positive() {
    let text = edit(
        "temperatures = [1000.0, 10000.0, 100000.0]",
        "temperatures = [-5.0, 10000.0, 100000.0]",
    );
    let line = line_of(&text, "temperatures = [-5.0");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[0].temperatures[0]",
        &["got -5 K", "> 0"],
    );
}

#[test]
fn temperatures_must_increase_strictly() {
    for bad in ["[1000.0, 100000.0, 10000.0]", "[1000.0, 10000.0, 10000.0]"] {
        let text = edit(
            "temperatures = [1000.0, 10000.0, 100000.0]",
            &format!("temperatures = {bad}"),
        );
        let line = line_of(&text, &format!("temperatures = {bad}"));
        assert_problem(
            &problems_of(&text),
            FILE,
            Some(line),
            "collision[0].temperatures[2]",
            &["strictly increasing", "collision[0].temperatures[1]"],
        );
    }
}

#[test]
fn energies_must_increase_strictly() {
    let text = edit("energies = [0.5, 1.0, 2.0]", "energies = [0.5, 2.0, 1.0]");
    let line = line_of(&text, "energies = [0.5, 2.0, 1.0]");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].energies[2]",
        &["strictly increasing"],
    );
}

#[test]
fn table_lengths_must_match() {
    let text = edit("upsilon = [0.5, 0.6, 0.7]", "upsilon = [0.5, 0.6]");
    let line = line_of(&text, "upsilon = [0.5, 0.6]");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[0].upsilon",
        &["got 2 values for 3 points"],
    );
}

#[test]
fn empty_table_is_rejected() {
    let text = edit("upsilon = [0.5, 0.6, 0.7]", "upsilon = []").replacen(
        "temperatures = [1000.0, 10000.0, 100000.0]",
        "temperatures = []",
        1,
    );
    let line = line_of(&text, "temperatures = []");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[0].temperatures",
        &["empty table"],
    );
}

#[test]
fn upper_level_must_lie_above_lower() {
    let text = edit(
        "upper = 2\nlower = 1\na_per_s = 0.01",
        "upper = 1\nlower = 2\na_per_s = 0.01",
    );
    let line = line_of(&text, "upper = 1\nlower = 2");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0].upper",
        &["not above lower level 2"],
    );
}

#[test]
fn a_transition_needs_two_different_levels() {
    let text = edit(
        "upper = 2\nlower = 1\na_per_s = 0.01",
        "upper = 2\nlower = 2\na_per_s = 0.01",
    );
    let line = line_of(&text, "upper = 2\nlower = 2") - 1;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0]",
        &["upper = lower = 2"],
    );
}

#[test]
fn missing_source_is_rejected() {
    let text = edit(
        "label = \"first\"\nweight = 4\nenergy = 1000.0\nsource = \"@fx\"\n",
        "label = \"first\"\nweight = 4\nenergy = 1000.0\n",
    );
    let header = line_of(&text, "label = \"first\"") - 2;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(header),
        "level[1].source",
        &["missing", "`source`"],
    );
}

#[test]
fn empty_or_unknown_source_is_rejected() {
    let text = edit(
        "a_per_s = 0.01\nsource = \"@fx\"",
        "a_per_s = 0.01\nsource = \"@nope\"",
    );
    let line = line_of(&text, "source = \"@nope\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0].source",
        &["no key \"nope\"", "known: fx"],
    );

    let text = edit(
        "a_per_s = 0.01\nsource = \"@fx\"",
        "a_per_s = 0.01\nsource = \"  \"",
    );
    let line = line_of(&text, "source = \"  \"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0].source",
        &["empty"],
    );
}

#[test]
fn van_regemorter_needs_an_oscillator_strength() {
    let text = edit("oscillator_strength = 0.2\n", "");
    let line = line_of(&text, "estimate = \"van-regemorter\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[2].estimate",
        &["needs an oscillator strength", "3 -> 1"],
    );
}

#[test]
fn van_regemorter_is_for_allowed_lines() {
    let text = edit("type = \"allowed\"", "type = \"forbidden\"\n");
    let line = line_of(&text, "type = \"forbidden\"\n\n");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[2].type",
        &["allowed lines"],
    );
}

#[test]
fn unknown_estimate_method_and_type() {
    let text = edit("estimate = \"van-regemorter\"", "estimate = \"guess\"");
    let line = line_of(&text, "estimate = \"guess\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[2].estimate",
        &["\"guess\"", "coulomb-focusing"],
    );

    let text = edit("type = \"allowed\"", "type = \"dipole\"");
    let line = line_of(&text, "type = \"dipole\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[2].type",
        &["\"dipole\"", "weak-allowed"],
    );
}

#[test]
fn unknown_units_are_rejected() {
    let text = edit("energy = \"cm-1\"", "energy = \"cm^-1\"");
    let line = line_of(&text, "energy = \"cm^-1\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "units.energy",
        &["\"cm^-1\"", "\"eV\""],
    );

    let text = edit(
        "upsilon = [0.5, 0.6, 0.7]",
        "upsilon = [0.5, 0.6, 0.7]\ntemperature_unit = \"C\"",
    );
    let line = line_of(&text, "temperature_unit = \"C\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[0].temperature_unit",
        &["\"C\"", "\"K\""],
    );
}

#[test]
fn a_unit_must_be_given_somewhere() {
    let text = edit("energy = \"cm-1\"\n", "");
    let problems = problems_of(&text);
    let line = line_of(&text, "energy = 1000.0");
    assert_problem(
        &problems,
        FILE,
        Some(line),
        "level[1].energy_unit",
        &["no energy unit", "[units]"],
    );
    // one problem per level: all three are reported, not only the first
    assert_eq!(
        problems
            .iter()
            .filter(|p| p.message.contains("no energy unit"))
            .count(),
        3
    );
}

#[test]
fn incident_energy_below_threshold_is_rejected() {
    // threshold of 3 - 2 is 49000 cm-1 = 0.4465 Ry (CODATA R_inf)
    let text = edit("energies = [0.5, 1.0, 2.0]", "energies = [0.3, 1.0, 2.0]");
    let line = line_of(&text, "energies = [0.3, 1.0, 2.0]");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].energies[0]",
        &["below the excitation threshold", "0.446"],
    );
}

#[test]
fn energy_kind_is_required_and_checked() {
    let text = edit("energy_kind = \"incident\"", "energy_kind = \"outgoing\"");
    let line = line_of(&text, "energy_kind = \"outgoing\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].energy_kind",
        &["\"incident\" or \"scattered\""],
    );

    let text = edit("energy_kind = \"incident\"\n", "");
    let line = line_of(&text, "energies = [0.5, 1.0, 2.0]");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].energies",
        &["needs `energy_kind`"],
    );
}

#[test]
fn exactly_one_data_form() {
    let text = edit("estimate = \"van-regemorter\"\n", "");
    let line = line_of(&text, "type = \"allowed\"") - 3;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[2]",
        &["no collision data"],
    );

    let text = edit(
        "omega = [0.1, 0.2, 0.3]",
        "omega = [0.1, 0.2, 0.3]\nupsilon = [1.0, 1.0, 1.0]",
    );
    let line = line_of(&text, "energies = [0.5, 1.0, 2.0]") - 4;
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1]",
        &["upsilon and omega", "only one"],
    );
}

#[test]
fn keys_of_another_data_form_are_rejected() {
    let text = edit(
        "omega = [0.1, 0.2, 0.3]",
        "omega = [0.1, 0.2, 0.3]\ntemperature_unit = \"K\"",
    );
    let line = line_of(&text, "temperature_unit = \"K\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "collision[1].temperature_unit",
        &["does not belong", "`omega`"],
    );
}

#[test]
fn wrong_value_type_is_rejected() {
    let text = edit("weight = 4", "weight = \"four\"");
    let line = line_of(&text, "weight = \"four\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "level[1].weight",
        &["\"four\"", "a string", "must be a number"],
    );

    let text = edit("index = 2", "index = 2.0");
    let line = line_of(&text, "index = 2.0");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "level[1].index",
        &["must be a whole number"],
    );
}

#[test]
fn unknown_keys_are_rejected() {
    let text = edit("weight = 4", "wieght = 4");
    let problems = problems_of(&text);
    let line = line_of(&text, "wieght = 4");
    assert_problem(
        &problems,
        FILE,
        Some(line),
        "level[1].wieght",
        &["unknown key `wieght`", "weight"],
    );
    // the missing `weight` is reported too, at the block header
    let header = line_of(&text, "label = \"first\"") - 2;
    assert_problem(&problems, FILE, Some(header), "level[1].weight", &["missing"]);
}

#[test]
fn species_name_must_match_element_and_charge() {
    let text = edit("name = \"Zz II\"", "name = \"Zz III\"");
    let line = line_of(&text, "name = \"Zz III\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "species.name",
        &["\"Zz II\""],
    );

    let text = edit("ion_charge = 1", "ion_charge = 30");
    let line = line_of(&text, "ion_charge = 30");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "species.ion_charge",
        &["between 0 and 29"],
    );

    let text = edit("element = \"Zz\"", "element = \"zz\"");
    let line = line_of(&text, "element = \"zz\"");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "species.element",
        &["element symbol"],
    );
}

#[test]
fn negative_relative_uncertainty_is_rejected() {
    let text = edit("a_per_s = 0.01", "a_per_s = 0.01\nrelative_uncertainty = -0.1");
    let line = line_of(&text, "relative_uncertainty = -0.1");
    assert_problem(
        &problems_of(&text),
        FILE,
        Some(line),
        "radiative[0].relative_uncertainty",
        &[">= 0"],
    );
}

#[test]
fn every_problem_of_a_file_is_reported() {
    let text = edit("weight = 4", "weight = -1")
        .replacen("a_per_s = 0.01", "a_per_s = -3", 1)
        .replacen("upsilon = [0.5, 0.6, 0.7]", "upsilon = [0.5, 0.6, 0.0]", 1);
    let problems = problems_of(&text);
    assert_eq!(problems.len(), 3, "{problems:?}");
    let lines: Vec<usize> = problems.iter().filter_map(|p| p.line).collect();
    assert_eq!(
        lines,
        vec![
            line_of(&text, "weight = -1"),
            line_of(&text, "a_per_s = -3"),
            line_of(&text, "upsilon = [0.5, 0.6, 0.0]")
        ]
    );
}

#[test]
fn display_lists_file_line_field_message() {
    let text = edit("weight = 4", "weight = 0");
    let err = load(&text).expect_err("must fail");
    let line = line_of(&text, "weight = 0");
    let shown = err.to_string();
    assert!(
        shown.contains(&format!(
            "{FILE}:{line}: level[1].weight: got 0, must be finite and > 0"
        )),
        "{shown}"
    );
}

#[test]
fn missing_manifest_is_reported() {
    match load_dataset_from_texts(&[(FILE, GOOD)]) {
        Err(DatasetError::MissingManifest { .. }) => {}
        other => panic!("expected MissingManifest, got {other:?}"),
    }
}

fn manifest_problems(manifest: &str) -> Vec<Problem> {
    match load_dataset_from_texts(&[("dataset.toml", manifest), (FILE, GOOD)]) {
        Err(DatasetError::Invalid { problems }) => problems,
        other => panic!("expected Invalid, got {other:?}"),
    }
}

#[test]
fn manifest_id_and_version_are_checked() {
    let m = MANIFEST.replace("id = \"fixture\"", "id = \"Bad Id\"");
    assert_problem(
        &manifest_problems(&m),
        "dataset.toml",
        Some(2),
        "id",
        &["\"Bad Id\"", "a-z"],
    );
    for bad in ["1.0", "1.0.0-beta", "01.0.0", "v1.0.0", ""] {
        let m = MANIFEST.replace("version = \"1.0.0\"", &format!("version = \"{bad}\""));
        assert_problem(
            &manifest_problems(&m),
            "dataset.toml",
            Some(3),
            "version",
            &["MAJOR.MINOR.PATCH"],
        );
    }
    let m = MANIFEST.replace("format = 1", "format = 2");
    assert_problem(
        &manifest_problems(&m),
        "dataset.toml",
        Some(1),
        "format",
        &["format 1 only"],
    );
    let m = MANIFEST.replace("description = \"validation fixture\"\n", "");
    assert_problem(
        &manifest_problems(&m),
        "dataset.toml",
        Some(1),
        "description",
        &["missing"],
    );
}

#[test]
fn manifest_species_files_are_checked() {
    let m = format!("{MANIFEST}species_files = [\"zz-ii.toml\", \"absent.toml\", \"../up.toml\"]\n");
    let problems = manifest_problems(&m);
    assert_problem(
        &problems,
        "dataset.toml",
        Some(6),
        "species_files[1]",
        &["no such file"],
    );
    assert_problem(
        &problems,
        "dataset.toml",
        Some(6),
        "species_files[2]",
        &["not a path"],
    );
}

#[test]
fn duplicate_species_across_files() {
    let problems =
        match load_dataset_from_texts(&[("dataset.toml", MANIFEST), ("a.toml", GOOD), ("b.toml", GOOD)]) {
            Err(DatasetError::Invalid { problems }) => problems,
            other => panic!("expected Invalid, got {other:?}"),
        };
    let line = line_of(GOOD, "name = \"Zz II\"");
    assert_problem(
        &problems,
        "b.toml",
        Some(line),
        "species.name",
        &["again", &format!("a.toml:{line}")],
    );
}

fn bad_dir(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/bad")
        .join(name)
}

#[test]
fn on_disk_problems_name_the_file_path() {
    let dir = bad_dir("broken-species");
    let err = load_folder(&dir).expect_err("fixture is broken on purpose");
    let problems = err.problems();
    let file = format!("{}/ab-iv.toml", dir.display());
    // tests/data/bad/broken-species/ab-iv.toml: line 24 has weight = 0, line 31 an unknown unit
    assert!(
        problems
            .iter()
            .any(|p| p.file == file && p.line == Some(24) && p.field == "level[1].weight"),
        "{err}"
    );
    assert!(
        problems
            .iter()
            .any(|p| p.file == file && p.line == Some(31) && p.field == "level[2].energy_unit"),
        "{err}"
    );
}

#[test]
fn on_disk_missing_manifest_and_folder() {
    match load_folder(&bad_dir("no-manifest")) {
        Err(DatasetError::MissingManifest { location }) => {
            assert!(location.ends_with("no-manifest"), "{location}")
        }
        other => panic!("expected MissingManifest, got {other:?}"),
    }
    match load_folder(&bad_dir("does-not-exist")) {
        Err(DatasetError::Io { path, .. }) => assert!(path.ends_with("does-not-exist")),
        other => panic!("expected Io, got {other:?}"),
    }
}

#[test]
fn a_data_folder_with_bad_datasets_fails_listing_each() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/bad");
    // no-manifest/ holds no manifest, so only the two folders with one count as datasets
    let dirs = find_dataset_dirs(&root).expect("readable");
    assert_eq!(dirs.len(), 2, "{dirs:?}");
    let texts: Vec<String> = dirs
        .iter()
        .map(|d| {
            load_folder(d)
                .expect_err("every fixture folder is broken")
                .to_string()
        })
        .collect();
    let text = texts.join("\n");
    assert!(text.contains("bad-manifest/dataset.toml:3: version"), "{text}");
    assert!(
        text.contains("broken-species/ab-iv.toml:24: level[1].weight"),
        "{text}"
    );
}
