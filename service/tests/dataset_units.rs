//! Unit conversion of dataset values against CODATA 2018 recommended values.

use approx::assert_relative_eq;
use ratewell_service::dataset::{CollisionData, EnergyUnit, TemperatureUnit, demo_dataset, units};

#[test]
fn energy_units_match_codata() {
    // CODATA 2018: 1 eV = 8065.543937... cm^-1 (hc = 1.239841984e-6 eV m, exact in SI)
    assert_relative_eq!(
        EnergyUnit::ElectronVolt.to_cm1(1.0),
        8_065.543_937,
        max_relative = 1e-10
    );
    // CODATA 2018: R_inf = 10 973 731.568 160 m^-1
    assert_relative_eq!(
        EnergyUnit::Rydberg.to_cm1(1.0),
        109_737.315_681_60,
        max_relative = 1e-12
    );
    // CODATA 2018: 1 J = 5.034 116 567e24 m^-1
    assert_relative_eq!(
        EnergyUnit::Joule.to_cm1(1.0),
        5.034_116_567e22,
        max_relative = 1e-9
    );
    // CODATA 2018: Rydberg energy 13.605 693 122 994 eV
    assert_relative_eq!(
        EnergyUnit::ElectronVolt.to_ry(13.605_693_122_994),
        1.0,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        EnergyUnit::InverseCm.to_ry(109_737.315_681_60),
        1.0,
        max_relative = 1e-12
    );
    // the canonical units pass through bit for bit
    assert_eq!(
        EnergyUnit::InverseCm.to_cm1(1520.4).to_bits(),
        1520.4f64.to_bits()
    );
    assert_eq!(EnergyUnit::Rydberg.to_ry(0.14).to_bits(), 0.14f64.to_bits());
    assert_eq!(TemperatureUnit::Kelvin.to_k(1.0e4).to_bits(), 1.0e4f64.to_bits());
}

#[test]
fn temperature_units_match_codata() {
    // CODATA 2018: 1 eV / k = 11 604.518 12 K; second radiation constant c2 = 1.438 776 877e-2 m K
    assert_relative_eq!(
        TemperatureUnit::ElectronVolt.to_k(1.0),
        11_604.518_12,
        max_relative = 1e-9
    );
    assert_relative_eq!(units::cm1_to_k(1.0), 1.438_776_877, max_relative = 1e-9);
}

#[test]
fn spellings_round_trip() {
    for unit in [
        EnergyUnit::InverseCm,
        EnergyUnit::ElectronVolt,
        EnergyUnit::Joule,
        EnergyUnit::Rydberg,
    ] {
        assert_eq!(EnergyUnit::parse(unit.as_str()), Some(unit));
    }
    for unit in [TemperatureUnit::Kelvin, TemperatureUnit::ElectronVolt] {
        assert_eq!(TemperatureUnit::parse(unit.as_str()), Some(unit));
    }
    assert_eq!(EnergyUnit::parse("ev"), None);
    assert_eq!(EnergyUnit::parse("cm^-1"), None);
}

#[test]
fn loaded_values_are_in_canonical_units() {
    let d = demo_dataset().expect("demo loads");
    let s = d.species("Mk III").expect("Mk III");
    // level 5 is written as 12.2027 eV; 1 eV = 8065.543937 cm^-1 (CODATA 2018)
    let l5 = s.level(5).expect("level 5");
    assert_relative_eq!(l5.energy_cm1, 12.2027 * 8_065.543_937, max_relative = 1e-10);
    assert_relative_eq!(l5.energy_k, l5.energy_cm1 * 1.438_776_877, max_relative = 1e-9);
    // 4 - 1 temperatures are written in eV: [0.5, 1, 2, 5] eV, 1 eV / k = 11604.51812 K
    match &s.collisional_transition(4, 1).expect("4-1").data {
        CollisionData::EffectiveTable { temperatures_k, .. } => {
            for (t, ev) in temperatures_k.iter().zip([0.5, 1.0, 2.0, 5.0]) {
                assert_relative_eq!(*t, ev * 11_604.518_12, max_relative = 1e-9);
            }
        }
        other => panic!("{other:?}"),
    }
    // 4 - 2 energies are incident, in Ry: E_f = E_i - (16830.2 - 1520.4) cm^-1 / R_inf
    match &s.collisional_transition(4, 2).expect("4-2").data {
        CollisionData::StrengthTable {
            scattered_energies_ry,
            ..
        } => {
            let threshold = (16830.2 - 1520.4) / 109_737.315_681_60;
            for (e, incident) in scattered_energies_ry.iter().zip([0.14, 0.2, 0.3, 0.5, 1.0, 2.0]) {
                assert_relative_eq!(*e, incident - threshold, max_relative = 1e-10);
            }
            assert!(scattered_energies_ry[0] > 0.0 && scattered_energies_ry[0] < 1e-3);
        }
        other => panic!("{other:?}"),
    }
    // 5 - 1 energies are scattered, in eV: 1 Ry = 13.605693122994 eV
    match &s.collisional_transition(5, 1).expect("5-1").data {
        CollisionData::StrengthTable {
            scattered_energies_ry,
            ..
        } => {
            for (e, ev) in scattered_energies_ry
                .iter()
                .zip([0.0, 1.0, 3.0, 10.0, 30.0, 100.0])
            {
                assert_relative_eq!(*e, ev / 13.605_693_122_994, max_relative = 1e-10);
            }
        }
        other => panic!("{other:?}"),
    }
}
