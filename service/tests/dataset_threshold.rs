//! Threshold rules of collision strengths on incident energies: the transition energy itself
//! (also when written in another unit, up to conversion rounding) is the threshold, E_f = 0;
//! anything clearly below it is refused naming file, line and field.

use ratewell_service::dataset::{CollisionData, load_dataset_from_texts, units::cm1_to_ry};

const MANIFEST: &str =
    "format = 1\nid = \"t\"\nversion = \"1.0.0\"\ndescription = \"d\"\nprovenance = \"p\"\n";

fn species(first_incident_ry: f64) -> String {
    format!(
        "[species]\nname = \"Th II\"\nelement = \"Th\"\nnuclear_charge = 90\nion_charge = 1\nsource = \"test\"\n\
         [[level]]\nindex = 1\nlabel = \"g\"\nweight = 1\nenergy = 0.0\nenergy_unit = \"cm-1\"\nsource = \"test\"\n\
         [[level]]\nindex = 2\nlabel = \"u\"\nweight = 3\nenergy = 12345.6\nenergy_unit = \"cm-1\"\nsource = \"test\"\n\
         [[collision]]\nupper = 2\nlower = 1\ntype = \"forbidden\"\nenergies = [{first_incident_ry:?}, 0.5, 1.0]\n\
         energy_unit = \"Ry\"\nenergy_kind = \"incident\"\nomega = [0.3, 0.35, 0.4]\nsource = \"test\"\n"
    )
}

fn first_scattered(first_incident_ry: f64) -> Result<f64, String> {
    let text = species(first_incident_ry);
    let data = load_dataset_from_texts(&[("dataset.toml", MANIFEST), ("th.toml", &text)])
        .map_err(|e| e.to_string())?;
    match &data.species[0].collisions[0].data {
        CollisionData::StrengthTable {
            scattered_energies_ry,
            ..
        } => Ok(scattered_energies_ry[0]),
        other => panic!("not a strength table: {other:?}"),
    }
}

#[test]
fn the_transition_energy_is_the_threshold_even_after_rounding() {
    // common practice, no source: a value written in another unit carries rounding of about
    // 1e-16 relative; 1e-12 below counts as the threshold, 1e-6 below is refused.
    let threshold = cm1_to_ry(12345.6);
    assert_eq!(first_scattered(threshold), Ok(0.0));
    assert_eq!(first_scattered(threshold * (1.0 - 1e-12)), Ok(0.0));
    let above = first_scattered(threshold * (1.0 + 1e-6)).unwrap();
    assert!(
        above > 0.0 && (above / (threshold * 1e-6) - 1.0).abs() < 1e-6,
        "{above}"
    );
    let refused = first_scattered(threshold * (1.0 - 1e-6)).unwrap_err();
    for words in [
        "th.toml:",
        "collision[0].energies[0]",
        "below the excitation threshold",
    ] {
        assert!(refused.contains(words), "{words:?} not in {refused}");
    }
}
