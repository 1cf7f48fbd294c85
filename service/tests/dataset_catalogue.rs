//! The demo datasets and the catalogue: embedded and on-disk copies agree, versions differ,
//! folders load, lookups find what they should.

use ratewell_service::engine::{Engine, EngineConfig, Selector};
use std::path::{Path, PathBuf};

use ratewell_service::dataset::{
    CollisionData, EstimateMethod, TransitionType, demo_dataset, find_dataset_dirs, load_folder,
};

fn data_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("data")
}

#[test]
fn embedded_demo_equals_the_demo_folder() {
    let embedded = demo_dataset().expect("embedded demo loads");
    let on_disk = load_folder(&data_dir().join("demo")).expect("demo folder loads");
    assert_eq!(embedded, on_disk);
    assert_eq!(embedded.id, "demo");
    assert_eq!(embedded.version, "1.0.0");
    assert!(embedded.description.contains("INVENTED"));
}

#[test]
fn demo_has_the_promised_shape() {
    let d = demo_dataset().expect("demo loads");
    let names: Vec<&str> = d.species.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["Mk II", "Mk III"]);
    let small = d.species("Mk III").expect("Mk III");
    let large = d.species("Mk II").expect("Mk II");
    assert_eq!(small.levels.len(), 5);
    assert!(large.levels.len() >= 30, "{}", large.levels.len());
    for s in &d.species {
        assert!(s.source.contains("INVENTED"), "{}", s.name);
        // levels are numbered 1..=N and stored in that order
        for (pos, level) in s.levels.iter().enumerate() {
            assert_eq!(level.index as usize, pos + 1);
            assert_eq!(s.level_position(level.index), Some(pos));
        }
        assert!(
            s.radiative
                .windows(2)
                .all(|w| (w[0].upper, w[0].lower) < (w[1].upper, w[1].lower))
        );
        assert!(
            s.collisions
                .windows(2)
                .all(|w| (w[0].upper, w[0].lower) < (w[1].upper, w[1].lower))
        );
    }
    // all three kinds of collision data and both approximation methods occur
    let all: Vec<&CollisionData> = d
        .species
        .iter()
        .flat_map(|s| s.collisions.iter().map(|c| &c.data))
        .collect();
    assert!(
        all.iter()
            .any(|c| matches!(c, CollisionData::EffectiveTable { .. }))
    );
    assert!(
        all.iter()
            .any(|c| matches!(c, CollisionData::StrengthTable { .. }))
    );
    assert!(
        all.iter()
            .any(|c| matches!(c, CollisionData::Estimate(EstimateMethod::VanRegemorter { .. })))
    );
    assert!(
        all.iter()
            .any(|c| matches!(c, CollisionData::Estimate(EstimateMethod::CoulombFocusing { .. })))
    );
    // magnitudes promised for the invented data
    for s in &d.species {
        for r in &s.radiative {
            assert!(
                (1e-3..=1e9).contains(&r.a_per_s),
                "{} {}->{} A = {}",
                s.name,
                r.upper,
                r.lower,
                r.a_per_s
            );
        }
        for l in &s.levels {
            assert!(
                l.energy_cm1 <= 1.0e5,
                "{} level {} at {}",
                s.name,
                l.index,
                l.energy_cm1
            );
        }
        for c in &s.collisions {
            if let CollisionData::EffectiveTable { upsilon, .. } = &c.data {
                assert!(
                    upsilon.iter().all(|u| (0.01..=10.0).contains(u)),
                    "{} {}-{}",
                    s.name,
                    c.upper,
                    c.lower
                );
            }
        }
    }
}

#[test]
fn lookups_find_levels_and_transitions() {
    let d = demo_dataset().expect("demo loads");
    let s = d.species("Mk III").expect("Mk III");
    assert!(d.species("Mk IV").is_none());
    assert_eq!(s.level(4).map(|l| l.label.as_str()), Some("4p2 1D2"));
    assert!(s.level(0).is_none() && s.level(6).is_none());
    assert_eq!(s.level_position(1), Some(0));
    assert_eq!(s.level_position(0), None);
    assert_eq!(s.radiative_transition(4, 3).map(|r| r.a_per_s), Some(1.27));
    assert!(s.radiative_transition(3, 4).is_none());
    assert_eq!(
        s.collisional_transition(4, 3).map(|c| c.kind),
        Some(TransitionType::SpinChange)
    );
    assert_eq!(s.transition_energy_cm1(4, 1), Some(16830.2));
    assert_eq!(s.spectroscopic_charge(), 3);
    // Van Regemorter: 5 -> 2 takes f from the radiative line, 5 -> 3 gives its own
    match &s.collisional_transition(5, 2).map(|c| &c.data) {
        Some(CollisionData::Estimate(EstimateMethod::VanRegemorter {
            oscillator_strength,
            from_radiative,
        })) => {
            assert_eq!(*oscillator_strength, 0.1373);
            assert!(*from_radiative);
        }
        other => panic!("{other:?}"),
    }
    match &s.collisional_transition(5, 3).map(|c| &c.data) {
        Some(CollisionData::Estimate(EstimateMethod::VanRegemorter {
            oscillator_strength,
            from_radiative,
        })) => {
            assert_eq!(*oscillator_strength, 0.09546);
            assert!(!*from_radiative);
        }
        other => panic!("{other:?}"),
    }
    assert!(
        s.collisional_transition(5, 4)
            .is_some_and(|c| c.data.is_approximate())
    );
    assert!(
        s.collisional_transition(2, 1)
            .is_some_and(|c| !c.data.is_approximate())
    );
    // the default Coulomb-focusing strength is 1
    assert_eq!(
        s.collisional_transition(5, 4).map(|c| &c.data),
        Some(&CollisionData::Estimate(EstimateMethod::CoulombFocusing {
            strength: 1.0
        }))
    );
    assert_eq!(TransitionType::WeakAllowed.burgess_tully_number(), 4);
}

#[test]
fn the_two_demo_versions_differ_in_hash_and_in_a_few_numbers() {
    let v1 = load_folder(&data_dir().join("demo")).expect("v1");
    let v2 = load_folder(&data_dir().join("demo-v2")).expect("v2");
    assert_eq!((v1.id.as_str(), v2.id.as_str()), ("demo", "demo"));
    assert_eq!((v1.version.as_str(), v2.version.as_str()), ("1.0.0", "1.1.0"));
    assert_ne!(v1.content_hash, v2.content_hash);
    let (a, b) = (v1.species("Mk III").expect("a"), v2.species("Mk III").expect("b"));
    assert_eq!(a.levels.len(), b.levels.len());
    assert_ne!(a.level(4).map(|l| l.energy_cm1), b.level(4).map(|l| l.energy_cm1));
    assert_eq!(a.level(5), b.level(5));
    assert_ne!(a.radiative_transition(4, 3), b.radiative_transition(4, 3));
    assert_eq!(a.radiative_transition(4, 2), b.radiative_transition(4, 2));
}

#[test]
fn the_data_folder_holds_both_demo_versions_and_the_newest_is_selected() {
    let dirs = find_dataset_dirs(&data_dir()).expect("readable");
    assert_eq!(dirs.len(), 2, "{dirs:?}");
    let engine = Engine::new(EngineConfig::default());
    for dir in &dirs {
        engine.load_path(dir).expect("loads");
    }
    let newest = engine
        .select(&Selector {
            id: "demo".into(),
            version: None,
            expected_hash: None,
        })
        .unwrap();
    assert_eq!(newest.stamp.version, "1.1.0");
    let v1 = engine
        .select(&Selector {
            id: "demo".into(),
            version: Some("1.0.0".into()),
            expected_hash: None,
        })
        .unwrap();
    // the embedded copy is the same dataset as the 1.0.0 folder
    assert_eq!(v1.stamp.content_hash, demo_dataset().unwrap().content_hash);
    assert!(
        engine
            .select(&Selector {
                id: "demo".into(),
                version: Some("2.0.0".into()),
                expected_hash: None
            })
            .is_err()
    );
}

#[test]
fn newest_compares_versions_as_numbers() {
    let engine = Engine::new(EngineConfig::default());
    for version in ["1.9.0", "1.10.0", "1.2.3"] {
        let mut d = demo_dataset().expect("demo");
        d.version = version.to_string();
        engine.install(d).expect("distinct versions");
    }
    let newest = engine
        .select(&Selector {
            id: "demo".into(),
            version: None,
            expected_hash: None,
        })
        .unwrap();
    assert_eq!(newest.stamp.version, "1.10.0");
    let order: Vec<String> = engine
        .datasets()
        .iter()
        .map(|d| d.stamp.version.clone())
        .collect();
    assert_eq!(order, ["1.2.3", "1.9.0", "1.10.0"]);
}

#[test]
fn the_reference_ions_folder_loads() {
    let d = load_folder(&Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/real-ions")).expect("loads");
    assert_eq!(d.id, "reference-ions");
    let names: Vec<&str> = d.species.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["O II", "O III", "S II"]);
    assert!(d.species.iter().all(|s| s.levels.len() == 5));
    // every block cites a source that says the value was recalled without the text at hand
    for s in &d.species {
        let sources = s
            .levels
            .iter()
            .map(|l| &l.source)
            .chain(s.radiative.iter().map(|r| &r.source))
            .chain(
                s.collisions
                    .iter()
                    .filter(|c| !c.data.is_approximate())
                    .map(|c| &c.source),
            );
        for src in sources {
            assert!(src.contains("from memory"), "{}: {src}", s.name);
        }
    }
}
