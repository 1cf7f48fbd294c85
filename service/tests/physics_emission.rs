//! Line emission: wavelengths, emissivities, ratios, power and critical densities.

use ratewell_service::physics::constants::{PLANCK_J_S, SPEED_OF_LIGHT_M_S};
use ratewell_service::physics::emission::{
    critical_densities_cm3, line_emissions, line_emissivity_w_per_ion, line_powers_into, line_ratio,
    line_terms, radiated_power_w_per_ion, w_to_erg_s,
};
use ratewell_service::physics::populations::{CollisionalRate, RadiativeRate};
use ratewell_service::physics::units;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn vacuum_wavelengths_of_known_lines() {
    // NIST Atomic Spectra Database (from memory): H I 2p 2P3/2 at 82259.2865 cm^-1 and
    // 2P1/2 at 82258.9206 cm^-1 give the Lyman alpha pair at 1215.668 and 1215.674 A (vacuum)
    let lya = units::vacuum_wavelength_angstrom_from_cm1(82_259.286_5);
    assert!((lya - 1215.668).abs() < 0.001, "{lya}");
    let lya = units::vacuum_wavelength_angstrom_from_cm1(82_258.920_6);
    assert!((lya - 1215.674).abs() < 0.001, "{lya}");
    // NIST ASD (from memory): [O III] 1D2 at 20273.27 cm^-1, 3P2 at 306.17 cm^-1:
    // the 5007 line is 5008.24 A in vacuum
    let o3 = units::vacuum_wavelength_angstrom_from_cm1(20_273.27 - 306.17);
    assert!((o3 - 5008.24).abs() < 0.01, "{o3}");
    assert!((units::vacuum_wavelength_nm_from_cm1(20_273.27 - 306.17) - o3 / 10.0).abs() < 1e-12);
    // CODATA 2018: h c = 1.239 841 984e-6 eV m, so 1 eV <-> 12398.41984 A
    assert!((units::vacuum_wavelength_angstrom_from_ev(1.0) - 12_398.419_84).abs() < 1e-4);
    assert!(rel(units::vacuum_wavelength_nm_from_ev(2.0), 619.920_992) < 1e-8);
}

#[test]
fn emissivity_is_population_times_a_times_photon_energy() {
    // Osterbrock & Ferland 2006, eq. 3.29 (from memory): j = n_2 A_21 h nu_21 per ion
    let (n2, a, sigma_cm1) = (3.2e-3, 0.021, 19_967.1);
    let w = line_emissivity_w_per_ion(n2, a, sigma_cm1).unwrap();
    let h_nu = PLANCK_J_S * SPEED_OF_LIGHT_M_S * sigma_cm1 * 100.0;
    assert!(rel(w, n2 * a * h_nu) < 1e-15);
    // 1 W = 1e7 erg s^-1 (SI definition of the erg)
    assert_eq!(w_to_erg_s(1.0), 1.0e7);
    assert!(line_emissivity_w_per_ion(n2, a, 0.0).is_err());
}

#[test]
fn lines_ratios_and_power_add_up() {
    // common practice, no source: power is the sum of line emissivities
    let energies = [0.0, 113.2, 306.2, 20_273.3];
    let fractions = [0.6, 0.25, 0.1, 0.05];
    let rad = [
        RadiativeRate {
            upper: 3,
            lower: 2,
            a_s: 2.0e-2,
        },
        RadiativeRate {
            upper: 3,
            lower: 1,
            a_s: 6.8e-3,
        },
        RadiativeRate {
            upper: 2,
            lower: 1,
            a_s: 9.8e-5,
        },
        RadiativeRate {
            upper: 1,
            lower: 0,
            a_s: 2.6e-5,
        },
    ];
    let lines = line_emissions(&fractions, &energies, &rad).unwrap();
    assert_eq!(lines.len(), 4);
    let sum: f64 = lines.iter().map(|l| l.emissivity_w_per_ion).sum();
    assert!(rel(radiated_power_w_per_ion(&lines), sum) < 1e-15);
    for l in &lines {
        assert!(rel(l.emissivity_erg_s_per_ion, l.emissivity_w_per_ion * 1.0e7) < 1e-15);
        assert!(rel(l.wavelength_vacuum_angstrom * l.delta_e_cm1, 1.0e8) < 1e-15);
    }
    // two lines from one upper level: ratio = A1 nu1 / (A2 nu2)
    let ratio = line_ratio(lines[0].emissivity_w_per_ion, lines[1].emissivity_w_per_ion).unwrap();
    let expected = (2.0e-2 * (20_273.3 - 306.2)) / (6.8e-3 * (20_273.3 - 113.2));
    assert!(rel(ratio, expected) < 1e-14);
    assert!(line_ratio(1.0, 0.0).is_err());
    // a transition going "up" in energy is refused with the field named
    let bad = [RadiativeRate {
        upper: 0,
        lower: 3,
        a_s: 1.0,
    }];
    let err = line_emissions(&fractions, &energies, &bad).unwrap_err();
    assert!(err.to_string().starts_with("radiative[0] energy difference"));
}

#[test]
fn critical_density_is_decay_over_collisional_de_excitation() {
    // Downward-only critical density (common practice, no source):
    // n_c(i) = sum_(j<i) A_ij / sum_(j<i) q_ij
    let rad = [
        RadiativeRate {
            upper: 2,
            lower: 0,
            a_s: 4.0e-3,
        },
        RadiativeRate {
            upper: 2,
            lower: 1,
            a_s: 1.0e-2,
        },
        RadiativeRate {
            upper: 1,
            lower: 0,
            a_s: 2.0e-2,
        },
    ];
    let coll = [
        CollisionalRate {
            upper: 1,
            lower: 0,
            excitation_cm3_s: 1.0e-9,
            deexcitation_cm3_s: 3.0e-8,
        },
        CollisionalRate {
            upper: 2,
            lower: 0,
            excitation_cm3_s: 2.0e-10,
            deexcitation_cm3_s: 5.0e-9,
        },
        CollisionalRate {
            upper: 2,
            lower: 1,
            excitation_cm3_s: 4.0e-9,
            deexcitation_cm3_s: 7.0e-9,
        },
    ];
    let nc = critical_densities_cm3(3, &rad, &coll).unwrap();
    assert_eq!(nc[0], Some(0.0));
    // level 1 is de-excited to 0 only; its excitation to 2 (4e-9) does not count
    assert!(rel(nc[1].unwrap(), 2.0e-2 / 3.0e-8) < 1e-15);
    assert!(rel(nc[2].unwrap(), 1.4e-2 / (5.0e-9 + 7.0e-9)) < 1e-15);
    assert_eq!(critical_densities_cm3(2, &rad[2..], &[]).unwrap()[1], None);
}

#[test]
fn precomputed_line_terms_give_the_same_emissivities() {
    // Osterbrock & Ferland 2006, eq. 3.29 (from memory): j = n_u A h nu per ion; the terms
    // hold A h nu once per species so a solve only multiplies by n_u.
    let energies = [0.0, 113.2, 306.2, 20_273.3];
    let fractions = [0.6, 0.25, 0.1, 0.05];
    let rad = [
        RadiativeRate {
            upper: 3,
            lower: 2,
            a_s: 2.0e-2,
        },
        RadiativeRate {
            upper: 2,
            lower: 0,
            a_s: 3.0e-11,
        },
    ];
    let terms = line_terms(&energies, &rad).unwrap();
    for (t, r) in terms.iter().zip(&rad) {
        let dn = energies[r.upper] - energies[r.lower];
        let direct = line_emissivity_w_per_ion(fractions[r.upper], r.a_s, dn).unwrap();
        assert!(rel(t.emissivity_w_per_ion(&fractions), direct) < 1e-15);
        assert!(
            rel(
                t.wavelength_vacuum_angstrom,
                units::vacuum_wavelength_angstrom_from_cm1(dn)
            ) < 1e-15
        );
    }
    // Bad inputs are refused naming the field: a level out of range, E_upper <= E_lower.
    let out_of_range = [RadiativeRate {
        upper: 4,
        lower: 0,
        a_s: 1.0,
    }];
    let e = line_terms(&energies, &out_of_range).unwrap_err().to_string();
    assert!(e.contains("radiative[0].upper"), "{e}");
    let inverted = [RadiativeRate {
        upper: 0,
        lower: 3,
        a_s: 1.0,
    }];
    let e = line_terms(&energies, &inverted).unwrap_err().to_string();
    assert!(e.contains("radiative[0] energy difference"), "{e}");
}

/// Sum with Neumaier's compensation (Neumaier 1974, ZAMM 54, 39; from memory): an independent
/// summation whose error does not grow with the number of terms.
fn compensated_sum(values: &[f64]) -> f64 {
    let (mut sum, mut carry) = (0.0f64, 0.0f64);
    for &v in values {
        let t = sum + v;
        carry += if sum.abs() >= v.abs() {
            (sum - t) + v
        } else {
            (v - t) + sum
        };
        sum = t;
    }
    sum + carry
}

#[test]
fn line_powers_are_each_term_their_sum_and_the_strongest() {
    // 30 levels, every pair radiatively connected: 435 lines (not a multiple of the four
    // partial sums), with A values and populations over many decades.
    let n = 30;
    let energies: Vec<f64> = (0..n)
        .map(|j| 1_000.0 * j as f64 * (1.0 + 0.01 * j as f64))
        .collect();
    let fractions: Vec<f64> = (0..n).map(|j| 10f64.powf(-0.3 * j as f64) / 3.0).collect();
    let rad: Vec<RadiativeRate> = (1..n)
        .flat_map(|u| (0..u).map(move |l| (u, l)))
        .map(|(u, l)| RadiativeRate {
            upper: u,
            lower: l,
            a_s: 10f64.powf(-3.0 + ((u * 7 + l * 3) % 11) as f64),
        })
        .collect();
    let terms = line_terms(&energies, &rad).unwrap();
    let mut powers = vec![f64::NAN; 3];
    let summary = line_powers_into(&terms, &fractions, &mut powers);
    assert_eq!(powers.len(), terms.len());
    for (p, t) in powers.iter().zip(&terms) {
        assert_eq!(p.to_bits(), t.emissivity_w_per_ion(&fractions).to_bits());
    }
    // Recursive summation of positive terms errs by at most (k - 1) u of the sum for k terms
    // per partial sum (Higham 2002, Accuracy and Stability of Numerical Algorithms, eq. 4.4;
    // from memory): k = 109 here, so 1.3e-14; checked at 2e-14.
    let exact = compensated_sum(&powers);
    assert!(
        rel(summary.total_w, exact) < 2e-14,
        "{} vs {exact}",
        summary.total_w
    );
    let strongest = powers.iter().copied().fold(0.0, f64::max);
    assert_eq!(summary.strongest_w, strongest);
    // A fixed order: the same inputs give the same bits.
    let again = line_powers_into(&terms, &fractions, &mut powers);
    assert_eq!(again.total_w.to_bits(), summary.total_w.to_bits());
    // No lines: nothing radiated.
    let none = line_powers_into(&[], &fractions, &mut powers);
    assert!(powers.is_empty());
    assert_eq!((none.total_w, none.strongest_w), (0.0, 0.0));
}
